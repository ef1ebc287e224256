"""Field-accurate line tables: closed forms times a field correction, checked on held-out rows.

Every distinct line geometry of a study gets its width, impedance, effective Dk and loss at the
accuracy of a converged 2-D field solution of its **real layered cross-section** (each film, adhesive
and cover its own dielectric band; :mod:`strainline.optimizer.search.fieldsolve`), without
field-solving every row:

1. the closed forms (composite Dk) give every row a first width;
2. field solves of a space-filling sample of the table's distinct cross-sections give the ratio
   field / closed form of the impedance, the effective Dk and the loss tangent;
3. that ratio is interpolated over the table's normalised geometry (thin-plate-spline radial basis
   functions with a linear trend, :class:`scipy.interpolate.RBFInterpolator`) and every row's
   width re-solved for the corrected impedance (closed form times correction);
4. a held-out set of rows, never used in the fit, is field-solved at its corrected width; the
   largest relative miss is the correction's held-out error. While it exceeds
   :data:`GOAL_PCT` (at most :data:`MAX_ROUNDS` times), the held-out rows join the fit and a new
   held-out set is drawn (the rows farthest from every fitted point first, then random ones);
5. after the search, every row the front uses is field-solved directly at its own width and the
   search repeated until the front stands on direct solves only
   (:mod:`strainline.optimizer.search.fieldrefine`). The correction decides where the search
   looks; direct solves decide what it reports.

A table with few distinct cross-sections ends with every one of them solved at its own corrected
width (the correction then interpolates exact values). This is a multi-fidelity (closed form +
field) surrogate; the method and its held-out error are reported in ``front.json``.

Loss at field accuracy: the dielectric loss is pi sqrt(eps_eff) tan_eff / lambda0 with the field's
energy-weighted loss tangent; the conductor loss is the closed form's Wheeler incremental-inductance
value scaled by sqrt(eps_eff,field / eps_eff,closed form) (the same relative wall derivative of the
air impedance, the field's Z0 and Z_air: a stated first-order transfer, not a field loss solve).
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from strainline.optimizer.search.fieldcorrection import (  # noqa: F401 - re-exported
    Correction,
    corrected_widths,
    features,
    field_impedance,
    fit_correction,
)
from strainline.optimizer.search.fieldsolve import (
    PAIR_KINDS,
    Section,
    SolveStats,
    solve_sections,
)

#: Tables with at most this many distinct cross-sections are field-solved directly, row by row.
DIRECT_MAX = 24
#: The held-out error the correction must reach, percent of the impedance.
GOAL_PCT = 0.25
#: Fitted points of the first round, held-out points per round, most held-out rounds. The
#: correction guides the search; the rows of the front are then field-solved directly
#: (:mod:`strainline.optimizer.search.fieldrefine`), so its budget stays small.
N_START = 24
N_HOLDOUT = 12
MAX_ROUNDS = 2
STRIP_KINDS = ("stripline", "coupled-stripline")


@dataclass
class FieldInfo:
    """How the field values of a table were obtained (reported in ``front.json``)."""

    method: str = ""
    rows: int = 0
    distinct_sections: int = 0
    field_solves: int = 0
    cached: int = 0
    fitted_points: int = 0
    rounds: int = 0
    holdout_max_error_pct: float = math.nan
    holdout_history_pct: list[float] = field(default_factory=list)
    solver_estimate_max_pct: float = math.nan
    seconds: float = 0.0
    backend: str = "serial"
    workers: int = 1
    goal_met: bool = False
    direct_rows: int = 0
    direct_solves: int = 0
    searches: int = 1
    front_rows_direct: bool = False


def sections_of(kind: str, rows: np.ndarray, width_m: np.ndarray, g, bands: dict[str, np.ndarray]
                ) -> list[Section]:
    """The real layered :class:`Section` of table rows ``rows`` at widths ``width_m``."""
    out = []
    bt, bd, bf = bands["below_t"], bands["below_dk"], bands["below_df"]
    at, ad, af = bands["above_t"], bands["above_dk"], bands["above_df"]
    t = np.broadcast_to(np.asarray(g.thickness_m, float), bt.shape[:1])
    s = np.broadcast_to(np.asarray(g.gap_m, float), bt.shape[:1])
    for r, w in zip(rows, width_m):
        below = tuple((float(a), float(e), float(d)) for a, e, d in zip(bt[r], bd[r], bf[r]) if a > 0)
        above = tuple((float(a), float(e), float(d)) for a, e, d in zip(at[r], ad[r], af[r]) if a > 0)
        out.append(Section(kind, float(w), float(t[r]), float(s[r]), below, above,
                           (float(bands["fill_dk"][r]), float(bands["fill_df"][r])), True))
    return out


def distinct_rows(kind: str, g, bands: dict[str, np.ndarray]) -> tuple[np.ndarray, np.ndarray]:
    """(first row of each distinct cross-section, inverse map row -> distinct index)."""
    parts = [np.asarray(np.broadcast_to(g.thickness_m, bands["fill_dk"].shape), float)[:, None],
             np.nan_to_num(np.asarray(np.broadcast_to(g.gap_m, bands["fill_dk"].shape), float))[:, None],
             bands["below_t"], bands["below_dk"], bands["below_df"], bands["above_t"],
             bands["above_dk"], bands["above_df"], bands["fill_dk"][:, None], bands["fill_df"][:, None]]
    key = np.round(np.concatenate(parts, axis=1), 12)
    _, first, inv = np.unique(key, axis=0, return_index=True, return_inverse=True)
    return first, inv.reshape(-1)


def _farthest(Xn: np.ndarray, chosen: np.ndarray, count: int) -> list[int]:
    """Greedy farthest-point picks (indices into Xn) away from ``chosen`` rows."""
    if count <= 0 or Xn.shape[0] == 0:
        return []
    if chosen.size:
        d = np.min(((Xn[:, None, :] - Xn[chosen][None, :, :]) ** 2).sum(-1), axis=1)
    else:
        d = ((Xn - Xn.mean(axis=0)) ** 2).sum(-1) + 1e-12
        d[:] = d.max() - d + 1e-12         # start from the most central point
    picks: list[int] = []
    for _ in range(min(count, Xn.shape[0])):
        i = int(np.argmax(d))
        if d[i] <= 0:
            break
        picks.append(i)
        d = np.minimum(d, ((Xn - Xn[i]) ** 2).sum(-1))
    return picks


def _lean(closed_form):
    """The closed form's impedance-only path when it has one (no loss: the width solves need Z)."""
    return getattr(closed_form, "z", closed_form)


def _ln_ratio(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    return np.log((np.asarray(a, float) + 1e-12) / (np.asarray(b, float) + 1e-12))


def field_values(kind: str, g, bands: dict[str, np.ndarray], target: float, wlo: np.ndarray,
                 whi: np.ndarray, width_cf: np.ndarray, closed_form, *, workers: int | None = None,
                 dask_address: str | None = None, cache=None, seed: int = 0,
                 goal_pct: float = GOAL_PCT) -> tuple[dict[str, np.ndarray], FieldInfo, Correction]:
    """Field-accurate width, impedance, eps_eff and loss tangent of every table row.

    Parameters
    ----------
    kind : str
        Line type.
    g : LineGeometry
        Composite (closed-form) geometry of every row (n rows).
    bands : dict
        The real layered section of every row: ``below_t``, ``below_dk``, ``below_df`` (n, k) from
        the plane up, ``above_t``, ``above_dk``, ``above_df`` (n, k) from the trace up, ``fill_dk``,
        ``fill_df`` (n,).
    target : float
        Target impedance, ohm (pairs: differential).
    wlo, whi : ndarray (n,)
        Width range, m.
    width_cf : ndarray (n,)
        The closed-form width of every row, m (the start).
    closed_form : callable
        ``closed_form(rows, width_m) -> dict`` with ``z``, ``eps``, ``tan`` arrays: the closed forms
        of table rows ``rows`` at those widths.
    workers, dask_address, cache, seed
        Where the field solves run (see :func:`solve_sections`); seed of the random held-out picks.
    goal_pct : float
        Held-out error to reach, percent.

    Returns
    -------
    values : dict
        ``width_m``, ``ok`` (the corrected target was reached in range), ``r`` (n, 3) the
        ln-corrections of Z, eps_eff and tan_eff at ``width_m``.
    info : FieldInfo
    correction : Correction
        The fitted correction (reusable: feed it :func:`features` of perturbed rows).
    """
    import time

    t0 = time.perf_counter()
    stats = SolveStats()
    first, inv = distinct_rows(kind, g, bands)
    U = first.size
    gU = g.broadcast(inv.size).take(first)
    bU = {k: v[first] for k, v in bands.items()}
    lo_w, hi_w = wlo[first], np.maximum(whi[first], wlo[first] * (1 + 1e-9))
    w = np.clip(np.where(np.isfinite(width_cf[first]), width_cf[first], lo_w), lo_w, hi_w)
    feats_all = np.concatenate([features(kind, lo_w, gU, bU), features(kind, hi_w, gU, bU)])
    rng = np.random.default_rng(seed)
    X: list[np.ndarray] = []
    Y: list[np.ndarray] = []
    solved_w: dict[int, list[float]] = {}
    est_max = 0.0

    def run(us: list[int], widths: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        nonlocal est_max
        res = solve_sections(sections_of(kind, first[us], widths, g.broadcast(inv.size), bands),
                             workers=workers, dask_address=dask_address, cache=cache, stats=stats)
        cf = closed_form(first[us], widths)
        fz = np.array([r["z"] for r in res])
        fe = np.array([r["eps"] for r in res])
        ft = np.array([0.0 if not math.isfinite(r["tan"]) else r["tan"] for r in res])
        est_max = max([est_max] + [r["est"] for r in res if math.isfinite(r["est"])])
        good = np.isfinite(fz) & np.isfinite(cf["z"])
        y = np.stack([_ln_ratio(fz, cf["z"]), _ln_ratio(fe, cf["eps"]), _ln_ratio(ft, cf["tan"])], axis=1)
        for u, wi in zip(np.asarray(us)[good], widths[good]):
            solved_w.setdefault(int(u), []).append(float(wi))
        X.append(features(kind, widths[good], gU.take(np.asarray(us)[good]),
                          {k: v[np.asarray(us)[good]] for k, v in bU.items()}))
        Y.append(y[good])
        return fz, good

    corr0 = fit_correction(feats_all, feats_all[:1], np.zeros((1, 3)))
    start = _farthest(corr0.scale(features(kind, w, gU, bU)), np.array([], np.int64), min(U, N_START))
    run(start, w[start])
    info = FieldInfo(rows=int(inv.size), distinct_sections=int(U))
    ok = np.zeros(U, bool)
    corr = corr0
    while True:
        corr = fit_correction(feats_all, np.concatenate(X), np.concatenate(Y))
        w, ok = corrected_widths(kind, corr, gU, bU, target, lo_w, hi_w, w,
                                 lambda ww, rows=first: _lean(closed_form)(rows, ww))
        if info.rounds >= MAX_ROUNDS or (info.goal_met and info.rounds > 0):
            break
        fresh = [u for u in range(U) if not any(abs(w[u] / x - 1) < 1e-4 for x in solved_w.get(u, []))]
        if not fresh:
            info.goal_met = bool(not info.holdout_history_pct or info.holdout_history_pct[-1] <= goal_pct)
            break
        Xn_f = corr.scale(features(kind, w[fresh], gU.take(np.asarray(fresh)),
                                   {k: v[fresh] for k, v in bU.items()}))
        Xn_t = corr.scale(np.concatenate(X))
        both = np.concatenate([Xn_t, Xn_f])
        far = _farthest(both, np.arange(Xn_t.shape[0]), N_HOLDOUT // 2)
        picks = [fresh[i - Xn_t.shape[0]] for i in far if i >= Xn_t.shape[0]]
        rest = [u for u in fresh if u not in picks]
        if rest:
            picks += [int(u) for u in rng.choice(rest, size=min(len(rest), N_HOLDOUT - len(picks)), replace=False)]
        picks = sorted(set(picks))
        r_p = corr(features(kind, w[picks], gU.take(np.asarray(picks)), {k: v[picks] for k, v in bU.items()}))
        z_pred = _lean(closed_form)(first[picks], w[picks])["z"] * np.exp(r_p[:, 0])
        fz, good = run(picks, w[picks])
        err = float(np.max(np.abs(fz[good] / z_pred[good] - 1))) * 100 if good.any() else math.inf
        info.holdout_history_pct.append(err)
        info.rounds += 1
        info.goal_met = err <= goal_pct
    info.holdout_max_error_pct = info.holdout_history_pct[-1] if info.holdout_history_pct else 0.0
    r = corr(features(kind, w, gU, bU))
    info.method = ("closed form x field correction (thin-plate-spline RBF over normalised geometry), "
                   "layered 2-D field solutions, held-out check")
    info.field_solves = stats.solved
    info.cached = stats.cached
    info.fitted_points = int(sum(len(v) for v in solved_w.values()))
    info.solver_estimate_max_pct = est_max
    info.backend, info.workers = stats.backend, stats.workers
    info.seconds = time.perf_counter() - t0
    return {"width_m": w[inv], "ok": ok[inv], "r": r[inv]}, info, corr


__all__ = [
    "GOAL_PCT",
    "PAIR_KINDS",
    "Correction",
    "FieldInfo",
    "SolveStats",
    "distinct_rows",
    "features",
    "field_values",
    "fit_correction",
    "sections_of",
    "solve_sections",
]
