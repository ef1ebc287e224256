"""Drive the fused range kernel (:mod:`.fused`) from a study problem.

:func:`fused_plan` flattens what :meth:`Problem.evaluate` reads -- the slot rules of
:meth:`Space.slots`, each line table's row layout and per-row columns, the group sums of the bend
model, the zones and the limits -- into the arrays the kernel takes (cached on the problem, rebuilt
when a line table changes). :func:`range_archive` enumerates index pieces with it into an
:class:`~.archive.Archive`: the kernel counts the violations of the candidates it decides and hands
every other candidate (possibly feasible, near a limit, or possibly among the nearest infeasible)
to :meth:`Problem.evaluate`, so the archive is the one the general path builds (front, counts,
nearest list and sample). A study the kernel does not cover gets None and the general path runs.
"""
from __future__ import annotations

from typing import Any

import numpy as np

from strainline.models.units import MM, UM
from strainline.optimizer.search import fused as fz
from strainline.optimizer.search import kernel as _kernel
from strainline.optimizer.search.archive import Archive
from strainline.optimizer.search.exhaustive import _digits

#: Candidates per kernel call (the progress step) and most candidates handed back per call.
STEP = 1 << 20
CAP = 1 << 15
#: Fewest candidates a default evaluator enumerates with the kernel: its first compilation on a
#: new machine takes some 20 s (then it loads from numba's disk cache in about a second), which a
#: smaller enumeration would not win back.
MIN_CANDIDATES = 20_000_000

_KIND = {"total_thickness": fz.THICK, "peak_strain": fz.PEAK, "signal_strain": fz.SIG, "fatigue_life": fz.FAT,
         "material_strain": fz.MAT, "cover_radius": fz.CRAD, "cover": fz.COVER, "glass": fz.GLASS,
         "leaves": fz.LEAVES, "hatch_width": fz.HATCH}


def _key(problem: Any) -> tuple:
    from strainline.optimizer.search.hatchsearch import _key as table_key
    subs = problem.lines or [problem]
    return tuple((id(p.fast), table_key(p.table)) for p in subs) + (id(problem.fast),)


def _slot_rules(sp: Any) -> tuple:
    """Per slot of the kernel's slot vector ``[cu (N), film, adh, place (N-1 each), cover top,
    cover bottom, leaves]``: its variable (-1: a constant), constant, and look-up offset (-1: none)."""
    study, N = sp.study, sp.n_cu
    G = max(N - 1, 0)
    sym = study.stack.symmetric
    col = {v.name: k for k, v in enumerate(sp.variables)}
    svar, sconst, slut, lut = [], [], [], []

    def add(var: int, const: int = 0, table: list[int] | None = None) -> None:
        svar.append(var)
        sconst.append(const)
        slut.append(-1 if table is None else len(lut))
        lut.extend(table or [])

    for i in range(N):
        add(col.get(f"copper[{min(i, N - 1 - i) if sym else i}]", -1))
    for name in ("film", "adhesive"):
        for g in range(G):
            add(col.get(f"{name}[{min(g, N - 2 - g) if sym else g}]", -1))
    place_tab = [int(p) for p in sp.place_opts]
    for g in range(G):
        src = min(g, N - 2 - g) if sym else g
        mirror = sym and g != src
        if sym and g == N - 2 - g:
            add(-1, 2)                                   # the middle gap of a symmetric stack
            continue
        k = col.get(f"placement[{src}]")
        flip = [(p if p == 2 else 1 - p) if mirror else p for p in place_tab]
        if k is None:
            add(-1, flip[0])
        else:
            add(k, 0, flip)
    top = col.get("cover[top]", -1)
    add(top)
    add(top if sym else col.get("cover[bottom]", -1))
    add(col.get("leaves", -1))
    i64 = lambda v: np.asarray(v, np.int64)          # noqa: E731
    return i64(svar), i64(sconst), i64(slut), i64(lut if lut else [0])


def _coverage(sp: Any) -> tuple:
    """The line-placement variable, its signal-layer table (M, K), the pair-gap variable of each
    line, and the coverage rule: mode 1 reads a table (M, N) by that variable (several lines),
    mode 0 the per-signal selection ``covsel`` (N, N) of coverage variables (-2: the signal's own
    coverage, -1: the first option)."""
    study, N = sp.study, sp.n_cu
    col = {v.name: k for k, v in enumerate(sp.variables)}
    if sp.multi:
        return (col.get("line_layers", -1), np.asarray(sp.line_sig, np.int64),
                np.asarray([col.get(f"gap[{ln.name}]", -1) for ln in study.lines], np.int64), 1,
                np.full((N, N), -2, np.int64), np.ascontiguousarray(sp.line_cov, dtype=float))
    covsel = np.full((N, N), -2, np.int64)
    sym = study.stack.symmetric
    for s in range(N):
        for i in range(N):
            if i == s or N == 1:
                continue
            j = min(i, N - 1 - i) if sym else (i if i < s else i - 1)
            covsel[s, i] = col.get(f"coverage[{j}]", -1)
    return (col.get("signal_layer", -1), np.asarray(sp.sig_opts, np.int64)[:, None],
            np.asarray([col.get("line_gap", -1)], np.int64), 0, covsel, np.zeros((1, N)))


def _rows_layout(sp: Any, subs: list) -> tuple | None:
    """Each line table's row layout (:meth:`LineTable.index`) as arrays over (line, signal layer)."""
    N, G = sp.n_cu, max(sp.n_cu - 1, 0)
    pos = {"cu": 0, "film": N, "adh": N + G, "place": N + 2 * G}
    K = len(subs)
    D = max(1, max(len(p.table.dims) for p in subs))
    J = max([1] + [len(d) for p in subs for d in p.table.dims.values()])
    rdim = np.zeros((K, N), np.int64)
    rpos = np.zeros((K, D, J), np.int64)
    rlut = np.zeros((K, D, J), np.bool_)
    rstride = np.zeros((K, D, J), np.int64)
    roff = np.zeros((K, D), np.int64)
    rnd = np.zeros((K, D), np.int64)
    lut = np.asarray(subs[0].table.place_lut, np.int64)
    for k, p in enumerate(subs):
        tb = p.table
        if not np.array_equal(np.asarray(tb.place_lut, np.int64), lut):
            return None
        for d, (s, dims) in enumerate(tb.dims.items()):
            if d == 0:
                rdim[k, :] = 0                           # a layer without its own layout reads the first
            rdim[k, s] = d
            roff[k, d] = tb.offset[s]
            rnd[k, d] = len(dims)
            stride = 1
            for j, (slot, colno, size) in enumerate(dims):
                if slot == "cover":
                    rpos[k, d, j] = 3 * G + N + (0 if colno == 0 else 1)
                elif slot in pos:
                    rpos[k, d, j] = pos[slot] + colno
                    rlut[k, d, j] = slot == "place"
                else:
                    rpos[k, d, j] = -1                   # the line's pair gap
                rstride[k, d, j] = stride
                stride *= size
    return rdim, rpos, rlut, rstride, roff, rnd, lut


def fused_plan(problem: Any) -> dict | None:
    """The kernel's arguments for ``problem`` (``args``) and the per-row violations of the line
    columns (cached), or None when the kernel does not cover the study."""
    if not _kernel.enabled() or fz.run_range is None:
        return None
    key = _key(problem)
    got = problem.__dict__.get("_fused_plan")
    if got is not None and got[0] == key:
        return got[1]
    plan = _build(problem)
    problem.__dict__["_fused_plan"] = (key, plan)
    return plan


def _build(problem: Any) -> dict | None:
    from strainline.optimizer.search import constraints as material
    from strainline.optimizer.search.hatchsearch import hatch_rows

    sp, study = problem.space, problem.space.study
    if problem.fast is None or sp.size >= 2 ** 62:
        return None
    subs = list(problem.lines) if problem.lines else [problem]
    if any(p.fast is None or "line_ok" not in p.fast for p in subs):
        return None
    layout = _rows_layout(sp, subs)
    if layout is None:
        return None
    names = list(problem.constraint_names)
    lim = study.limits
    rowbase = np.cumsum([0] + [p.table.n_rows for p in subs])[:-1].astype(np.int64)
    n_rows = sum(p.table.n_rows for p in subs)
    line_ok = np.concatenate([np.asarray(p.fast["line_ok"], np.bool_) for p in subs])
    kind = []
    RT = np.zeros((max(len(names), 1), n_rows))
    for ci, c in enumerate(names):
        if c in _KIND:
            kind.append(_KIND[c])
            continue
        per, kept = [], True
        for p in subs:
            if c in p.fast["line_g_names"]:
                per.append(np.asarray(p.fast["line_g_" + c], float))
            elif c == "loss" and lim.loss_db_per_m is not None:
                per.append(p.table.loss_db_per_m / lim.loss_db_per_m - 1.0)
                kept = bool(problem.lines)             # one line: the loss column is a bend-model column
            else:
                per.append(np.full(p.table.n_rows, -np.inf))
        if all(np.all(v == -np.inf) for v in per):
            return None                                # a column the kernel does not know
        kind.append(fz.LINE if kept else fz.ROW)
        RT[ci] = np.concatenate(per)
    # one line: per row, whether a line column is at its limit and the line columns' total violation
    lcols = np.asarray([c for c, k in enumerate(kind) if k in (fz.LINE, fz.ROW)], np.int64)
    keep = [c for c, k in enumerate(kind) if k == fz.LINE]
    ramb = np.zeros(n_rows, np.bool_)
    rcv = np.zeros(n_rows)
    for c in keep:
        ramb |= np.abs(RT[c]) <= fz.EPS
        rcv = rcv + np.maximum(RT[c], 0.0)
    hfill = np.zeros(0)
    HW = np.zeros((1, n_rows))
    strip = np.asarray([p.space.study.line.type in ("stripline", "coupled-stripline") for p in subs], np.bool_)
    if "hatch_width" in names:
        tabs = [hatch_rows(p) for p in subs]
        hfill = np.asarray(tabs[0]["fills"], float)
        if any(not np.array_equal(np.asarray(t["fills"], float), hfill) for t in tabs):
            return None
        HW = np.ascontiguousarray(np.concatenate([np.stack([np.asarray(g, float) for g in t["g"]]) for t in tabs],
                                                 axis=1)) if len(hfill) else HW
    svar, sconst, slut, lut = _slot_rules(sp)
    sigvar, lsigtab, lgapvar, covmode, covsel, lcovtab = _coverage(sp)
    # per variable: the slots it sets, and whether it moves a line or a coverage
    nv = len(sp.variables)
    vdep = [[p for p in range(len(svar)) if svar[p] == v] for v in range(nv)]
    vptr = np.cumsum([0] + [len(d) for d in vdep]).astype(np.int64)
    vline = np.zeros(nv, np.bool_)
    for v in [int(sigvar), *lgapvar.tolist(), *covsel[covsel >= 0].tolist()]:
        if v >= 0:
            vline[v] = True
    t = _kernel._tables(problem)
    zones = study.bends
    zallow = np.ones((len(zones), len(sp.cu_opts)))
    zhas = np.zeros(len(zones), np.bool_)
    for z in range(len(zones)):
        al = problem.allowed_range[z] if problem.allowed_range is not None else None
        if al is not None and "fatigue_life" in names:
            zallow[z] = al
            zhas[z] = True
    # strain-range factor of each zone: 1 flat-to-bent, 2 reversed (fatigue.strain_range)
    zfac = np.asarray([1.0 if z.motion == "flat-to-bent" else 2.0 for z in zones])
    b, a = sp.blocks, sp.arr
    f64 = lambda v: np.ascontiguousarray(v, dtype=float)       # noqa: E731
    kind = np.asarray(kind, np.int64)
    args = (
        svar, sconst, slut, lut, np.asarray(sum(vdep, []) or [0], np.int64), vptr, vline, np.int64(sigvar),
        np.ascontiguousarray(lsigtab), lgapvar, np.int64(covmode), covsel, lcovtab, f64(sp.cov_opts), float(study.stack.signal_coverage), *layout, rowbase, line_ok, RT, lcols, ramb, rcv,
        HW, hfill,
        strip, kind, bool(sp.unbonded), (*t["groups"], t["bonded"][-1]), np.int64(len(sp.adh_opts)), np.int64(len(sp.cover_opts)),
        bool(t["stiff"]),
        f64([float(z.inner_radius_mm * MM) for z in zones]), np.asarray([z.inside == "bottom" for z in zones]),
        zfac, zallow, zhas,
        np.asarray([material._needs_cover(study, z) for z in zones]), np.asarray([z.use == "dynamic" for z in zones]),
        float(lim.total_thickness_um * UM) if lim.total_thickness_um is not None else 1.0,
        float(lim.peak_strain_pct) if lim.peak_strain_pct is not None else 1.0,
        float(lim.signal_strain_pct) if lim.signal_strain_pct is not None else 1.0,
        float(material.elongation_fraction(study)), f64(material._cover_rmin(sp)),
        np.asarray(b["cov_bare"], np.bool_), np.asarray(b["cov_glass"], np.bool_), np.asarray(b["gap_glass"], np.bool_),
        float(material.GLASS_INSTALL_RATIO), np.asarray(a["adh_m"], np.int64), f64(a["adh_t"]),
    )
    # the failing-line counts per row: which line column each row violates
    return {"args": args, "row_viol": (RT[kind == fz.LINE] > 0.0).astype(np.int64), "line": kind == fz.LINE,
            "n_rows": n_rows, "line_ok": line_ok}


def warm(problem: Any) -> bool:
    """Compile (or load from numba's disk cache) the kernel for ``problem`` by running it on one
    candidate; False when the kernel does not cover the study."""
    plan = fused_plan(problem)
    if plan is None:
        return False
    C = len(problem.constraint_names)
    one = np.zeros(1, np.int64)
    fz.run_range(one, one + 1, np.zeros(2, np.int64), np.asarray(problem.space.sizes, np.int64), *plan["args"],
                 np.full(0, np.inf), np.empty(CAP, np.int64), np.zeros(C, np.int64), np.zeros(plan["n_rows"], np.int64),
                 np.zeros(3, np.int64), np.int64(1))
    return True


def range_archive(problem: Any, evaluate: Any, sizes: np.ndarray, n_obj: int, pieces: list[tuple[int, int]],
                  progress: Any = None, archive: Archive | None = None) -> Archive | None:
    """Enumerate the increasing, disjoint index ``pieces`` with the fused kernel into ``archive``.

    ``evaluate(x) -> (F, G)`` is the pruning evaluation of ``problem`` and ``evaluate.exact`` its
    full one (:class:`~.parallel.ProblemEvaluator`): the candidates the kernel hands back go through
    them and :meth:`Archive.add` as in the general enumeration. Returns None (nothing done) when
    the kernel does not cover the study."""
    plan = fused_plan(problem)
    if plan is None:
        return None
    sizes = np.asarray(sizes, np.int64)
    arch = archive if archive is not None else Archive(n_obj, sizes.size)
    pieces = [(int(a), int(b)) for a, b in pieces if b > a]
    if not pieces:
        return arch
    starts = np.asarray([p[0] for p in pieces], np.int64)
    stops = np.asarray([p[1] for p in pieces], np.int64)
    C = len(problem.constraint_names)
    emit = np.empty(CAP, np.int64)
    state = np.zeros(3, np.int64)
    pos = np.asarray([0, starts[0]], np.int64)
    refine = getattr(evaluate, "exact", None)
    while pos[0] < len(pieces):
        nk = max(int(arch.near_k), 0)
        topk = np.full(nk, np.inf)
        have = np.asarray(arch.nearest_cv, float)[:nk]
        topk[:len(have)] = have
        counts = np.zeros(C, np.int64)
        hist = np.zeros(plan["n_rows"], np.int64)
        done = fz.run_range(starts, stops, pos, sizes, *plan["args"], topk, emit, counts, hist, state,
                            np.int64(STEP))
        if hist.any():                                # failing lines counted per table row
            counts[plan["line"]] += plan["row_viol"] @ hist
        n = int(state[2])
        pos = state[:2].copy()
        if n:
            idx = emit[:n].copy()
            x = _digits(idx, sizes)
            F, G = evaluate(x)
            arch.add(x, F, G, index=idx, refine=refine)
        arch.seen += int(done) - n
        if C:
            arch.violated = counts if arch.violated is None else arch.violated + counts
        if progress is not None and done:
            progress(int(done))
    return arch


__all__ = ["fused_plan", "range_archive", "warm", "STEP", "CAP", "MIN_CANDIDATES"]
