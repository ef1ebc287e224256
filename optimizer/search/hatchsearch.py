"""The search pays for hatched reference planes: the width a line needs over its hatch.

With ``stack.ground_hatch`` a candidate may reference a hatched plane. Over the hatch the line's
impedance is its solid-plane impedance times the hatch factor ``f`` (3-D field solution,
:mod:`strainline.models.hatch`, or the study's coupon-calibrated ``line.hatch_correction``), so
the trace must be wider to meet the target. For every table row and hatch option this module
solves that width,

.. math:: Z_{cf}(w_h)\\, e^{r} = Z_{target} / f,

with the row's closed form ``Z_cf`` and its field correction ``e^r`` (the table's
``r_field``), and the constraint column ``hatch_width`` asks that ``w_h`` lies in the study's
width range (a candidate over a solid plane always passes it).

The factor is solved in 3-D at three rows of each hatch option (thinnest, median and thickest
dielectric under the trace, at their solid-plane widths) and interpolated in log height; it is
taken as independent of the width between the solid-plane and the hatched width (first order).
Loss and pair spacing keep their solid-plane values.
"""
from __future__ import annotations

import hashlib
from typing import Any

import numpy as np


def _key(tb: Any) -> Any:
    """The table's state: its set_rows count when it has one (cheap), else a hash of its rows."""
    if hasattr(tb, "version"):
        return (id(tb), tb.version)
    r = tb.r_field if tb.r_field is not None else np.zeros(1)
    return hashlib.sha1(np.ascontiguousarray(tb.width_m).tobytes() + np.ascontiguousarray(r).tobytes()).hexdigest()


#: Rows per hatch option solved in 3-D for the search's factor (at distinct heights; the rest are
#: interpolated in log height).
REPRESENTATIVES = 7


def hatch_rows(pb: Any) -> dict[str, np.ndarray]:
    """Per hatch option (fills ``fills`` (K,)): factor ``f`` (K, rows), width over the hatch ``w``
    (K, rows) and constraint ``g`` (K, rows); recomputed when the table changes."""
    got = getattr(pb, "_hatch_cache", None)
    tb = pb.table
    if got is not None and got[0] == _key(tb):
        return got[1]
    from strainline.models.lines import solve_width
    from strainline.optimizer.search.fieldcache import FieldCache
    from strainline.optimizer.search.hatchline import (
        cached_hatch_solve,
        candidate_geometry,
    )

    study = pb.space.study
    hatches = study.stack.ground_hatch
    n = tb.n_rows
    h = np.asarray(tb.height_m, float)
    # representative rows at distinct heights spanning the table, in increasing height (np.interp
    # needs increasing abscissae; the factor depends mostly on the height over the hatch)
    order = np.argsort(h, kind="stable")
    hs = h[order]
    first = np.flatnonzero(np.concatenate([[True], np.diff(hs) > 0]))      # first row of each height
    pick = first[np.unique(np.linspace(0, first.size - 1, min(REPRESENTATIVES, first.size)).round().astype(int))]
    reps = order[pick]
    calibrated = study.line.hatch_correction
    fills, F, W, G = [], [], [], []
    cache = FieldCache()
    try:
        for pitch, width, angle in hatches:
            fills.append(1.0 - (1.0 - width / pitch) ** 2)
            if calibrated is not None:
                f = np.full(n, float(calibrated))
            elif study.line.type == "coplanar":      # not modelled over a hatch (stated in the finding)
                f = np.ones(n)
            else:
                # the factor is taken as independent of the width (module notes), so the 3-D solves
                # of the representative rows are kept when a field refinement moves their widths
                kept = pb.__dict__.setdefault("_hatch_factors", {})
                fr = kept.get((pitch, width, angle))
                if fr is None:
                    fr = []
                    for r in reps:
                        geom, hatch, below = candidate_geometry(study, tb, int(r), pitch, width, angle, False)
                        fr.append(cached_hatch_solve(study.line.type, geom, hatch, cache, layers_below=below).ratio)
                    kept[(pitch, width, angle)] = fr
                lh = np.log(h[reps])
                if np.ptp(lh) > 0:
                    f = np.exp(np.interp(np.log(h), lh, np.log(fr)))
                else:
                    f = np.full(n, float(np.mean(fr)))
            corr = np.exp(tb.r_field[:, 0]) if tb.r_field is not None else np.ones(n)
            target = study.line.target_ohm / (f * corr)
            whi = np.maximum(tb.width_hi_m, tb.width_lo_m * (1 + 1e-9))
            w, ok = solve_width(study.line.type, target, tb.geometry, tb.width_lo_m * 0.5, whi * 4.0)
            ok = np.asarray(ok, bool) & np.isfinite(w)
            g = np.where(ok, np.maximum((tb.width_lo_m - w) / tb.width_lo_m, (w - tb.width_hi_m) / tb.width_hi_m),
                         1.0)
            F.append(f)
            W.append(np.where(ok, w, np.nan))
            G.append(g)
    finally:
        cache.close()
    out = {"fills": np.array(fills), "f": np.array(F), "w": np.array(W), "g": np.array(G)}
    pb._hatch_cache = (_key(tb), out)
    return out


def reference_coverage(space: Any, slots: dict[str, np.ndarray]) -> np.ndarray:
    """Copper fill of each candidate's sparsest reference plane (1 = solid), (n,)."""
    cov = slots["cov_val"]
    sig = slots["signal"]
    n_cu = cov.shape[1]
    idx = np.arange(cov.shape[0])
    strip = space.study.line.type in ("stripline", "coupled-stripline")
    below = np.clip(sig - 1, 0, n_cu - 1)
    above = np.clip(sig + 1, 0, n_cu - 1)
    if strip:
        return np.minimum(cov[idx, below], cov[idx, above])
    plane = np.where(sig == 0, above, below)
    return cov[idx, plane]


def hatch_width_constraint(pb: Any, slots: dict[str, np.ndarray], row: np.ndarray) -> np.ndarray:
    """Constraint column ``hatch_width``: the width over the candidate's hatch lies in the range
    (``<= 0``); -1 for a solid reference plane."""
    t = hatch_rows(pb)
    ref = reference_coverage(pb.space, slots)
    g = np.full(row.shape[0], -1.0)
    for k, fill in enumerate(t["fills"]):
        m = np.abs(ref - fill) < 1e-6
        if m.any():
            g[m] = t["g"][k][row[m]]
    return g
