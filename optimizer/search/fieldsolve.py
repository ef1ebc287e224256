"""Field solves of real layered line cross-sections, in parallel and through the disk cache.

A :class:`Section` is one line cross-section as built: every film, adhesive and cover its own
dielectric band with its Dk and loss tangent (not the series-composite Dk of the closed forms), the
band beside the trace, the copper thickness, the gap. :func:`solve_sections` field-solves a list of
them (:func:`strainline.models.fields.field_solve`) on every core (``concurrent.futures`` processes),
or on a Dask cluster, after looking each one up in the disk cache
(:mod:`strainline.optimizer.search.fieldcache`).
"""
from __future__ import annotations

import math
import os
import time
from collections.abc import Sequence
from concurrent.futures import ProcessPoolExecutor
from dataclasses import dataclass, field
from typing import Any

from strainline.optimizer.search.fieldcache import FieldCache, point_key

#: Mesh settings of the line-table solves (base cells across the smallest feature, nested meshes).
CELLS_PER_FEATURE = 1.5
LEVELS = 3
PAIR_KINDS = ("coupled-microstrip", "coupled-stripline")

Band = tuple[float, float, float]      # (thickness m, Dk, Df)


@dataclass(frozen=True)
class Section:
    """One real layered cross-section (SI).

    ``below``: bands from the reference plane up to the trace; ``above``: bands from the trace's top
    face up (stripline: to the second plane; outer lines: the cover, air above); ``fill``: (Dk, Df)
    beside the trace. Pairs: ``gap_m`` edge to edge; coplanar: the slot.
    """

    kind: str
    width_m: float
    thickness_m: float
    gap_m: float
    below: tuple[Band, ...]
    above: tuple[Band, ...]
    fill: tuple[float, float]
    bottom_ground: bool = True

    def payload(self) -> dict[str, Any]:
        """Plain description (the cache key and the worker's input)."""
        return {"kind": self.kind, "w": self.width_m, "t": self.thickness_m,
                "s": self.gap_m if math.isfinite(self.gap_m) else None,
                "below": [list(b) for b in self.below], "above": [list(b) for b in self.above],
                "fill": list(self.fill), "bg": bool(self.bottom_ground),
                "cpf": CELLS_PER_FEATURE, "levels": LEVELS}


def solve_section(payload: dict[str, Any]) -> dict[str, float]:
    """Field-solve one :meth:`Section.payload` (runs in a worker; never raises).

    Returns ``z`` (Z0, pairs Z_diff), ``eps`` (pairs: odd mode), ``tan`` (energy-weighted loss
    tangent, ``nan`` if lossless), ``est`` (grid convergence index, percent), ``s`` (seconds); on a
    cross-section the solver rejects, ``z`` is ``nan`` and ``error`` says why.
    """
    from strainline.models.fields import field_solve
    from strainline.models.lines import LineGeometry

    t0 = time.perf_counter()
    kind = payload["kind"]
    below = [tuple(b) for b in payload["below"]]
    above = [tuple(b) for b in payload["above"]]
    h = sum(b[0] for b in below)
    s = payload["s"] if payload["s"] is not None else math.nan
    geom = LineGeometry(width_m=payload["w"], height_m=h, thickness_m=payload["t"], er=below[-1][1] if below else 1.0,
                        gap_m=s, bottom_ground=payload["bg"])
    out = {"z": math.nan, "eps": math.nan, "tan": math.nan, "est": math.nan}
    try:
        r = field_solve(kind, geom, cells_per_feature=payload["cpf"], levels=payload["levels"],
                        isolated_line=False, even_mode=False, layers_below=below, layers_above=above,
                        fill=tuple(payload["fill"]))
        out.update(z=r.target_ohm, eps=r.eps_eff, tan=r.tan_eff, est=r.error_estimate_pct)
    except ValueError as exc:
        out["error"] = str(exc)
    out["s"] = time.perf_counter() - t0
    return out


@dataclass
class SolveStats:
    """What a table build asked of the field solver."""

    requested: int = 0
    solved: int = 0
    cached: int = 0
    seconds: float = 0.0
    backend: str = "serial"
    workers: int = 1
    cache_path: str | None = None
    notes: list[str] = field(default_factory=list)


def default_workers() -> int:
    """Every core (``os.cpu_count()``), at least 1."""
    return max(1, os.cpu_count() or 1)


def solve_sections(sections: Sequence[Section], *, workers: int | None = None,
                   dask_address: str | None = None, cache: FieldCache | None = None,
                   stats: SolveStats | None = None) -> list[dict[str, float]]:
    """Field-solve every section (cached ones are read, the rest solved and stored).

    Parameters
    ----------
    sections : sequence of Section
    workers : int, optional
        Local processes (default every core); 1 = in this process.
    dask_address : str, optional
        Scheduler of a Dask cluster (``tcp://host:port``); the solves run there.
    cache : FieldCache, optional
        Disk cache (None: no cache).
    stats : SolveStats, optional
        Counters updated in place.

    Returns
    -------
    list of dict
        One :func:`solve_section` record per section, in order.
    """
    stats = stats if stats is not None else SolveStats()
    payloads = [s.payload() for s in sections]
    keys = [point_key(p) for p in payloads]
    found = cache.get_many(keys) if cache is not None else {}
    todo: dict[str, dict] = {}
    for k, p in zip(keys, payloads):
        if k not in found and k not in todo:
            todo[k] = p
    stats.requested += len(sections)
    stats.cached += sum(1 for k in keys if k in found)
    t0 = time.perf_counter()
    if todo:
        items = list(todo.items())
        work = [p for _, p in items]
        if dask_address:
            results = _run_dask(work, dask_address)
            stats.backend = "dask"
        else:
            n = default_workers() if workers is None else max(1, int(workers))
            n = min(n, len(work))
            stats.workers = max(stats.workers, n)
            if n > 1 and len(work) >= 4:
                stats.backend = "processes"
                with ProcessPoolExecutor(max_workers=n) as pool:
                    results = list(pool.map(solve_section, work, chunksize=max(1, len(work) // (4 * n))))
            else:
                results = [solve_section(p) for p in work]
        new = {k: r for (k, _), r in zip(items, results)}
        stats.solved += len(new)
        if cache is not None:
            cache.put_many({k: r for k, r in new.items() if "error" not in r})
        found.update(new)
    stats.seconds += time.perf_counter() - t0
    return [found[k] for k in keys]


def _run_dask(work: list[dict], address: str) -> list[dict]:
    from strainline.optimizer.search.cluster import connect

    client = connect(address)
    try:
        return client.gather(client.map(solve_section, work, pure=False))
    finally:
        client.close()


__all__ = [
    "CELLS_PER_FEATURE",
    "LEVELS",
    "Section",
    "SolveStats",
    "default_workers",
    "solve_section",
    "solve_sections",
]
