"""Lower bounds over a node of the mixed-radix tree: every completion of a fixed prefix.

A *node* at level ``m`` fixes the slow digits ``x[m:]`` (its prefix ``q = index // P_m``,
``P_m = prod(sizes[:m])``) and leaves the ``m`` fast variables free. :meth:`NodeModel.bounds`
returns, for a batch of nodes, rigorous lower bounds over all ``P_m`` candidates of each node:

* **thickness** -- the sum of every group's thinnest option (exact minimum when no option is
  shared by two slots);
* **copper strains** (bonded regions) -- by interval arithmetic on the group sums of
  :mod:`.faststrain` (J. M. Gere and S. P. Timoshenko, *Mechanics of Materials*, composite beams:
  transformed section, ``y_NA = sum S_g c_g / sum S_g`` with ``S_g = sum E t`` and ``c_g`` the
  group's centroid; ``|eps| = max(|y_b - y_NA|, |y_t - y_NA|) / (R + y_NA)`` with the bottom face
  inside, ``/ (R + T - y_NA)`` with the top face inside). Each group (cover, gap, copper) gets an
  interval of thickness ``T``, stiffness ``S``, centroid above its bottom face ``r`` and below its
  top face ``T - r`` over the options its free variables allow. For copper ``i``,
  ``max(|y_b - y_NA|, |y_t - y_NA|) = |m_i - y_NA| + t_i / 2`` (``m_i`` its mid-plane) and
  ``m_i - y_NA = sum S_g (m_i - c_g) / sum S_g``: a weighted mean of the distances ``m_i - c_g``,
  which depend only on the groups between ``g`` and ``i``. Its minimum over a box of weights and
  values is exact by a threshold over the sorted values (a linear-fractional program over a box
  takes its optimum at a vertex where the weights below the optimum are at their upper end,
  Dinkelbach 1967). The denominator is at most ``R + T`` (``0 <= y_NA <= T``) for either face.
  Every strain bound is scaled by ``1 - 1e-9`` against rounding.
* **line rows** (one or several lines), **unbonded thickness** and **leaf buildability** --
  :mod:`.boundrows` (the least reachable loss and "some row of every line passes" from each line's
  table reduced over the free slots; the bonded thickness bound plus the cover builds the leaf
  boundaries add; groupings that put a boundary next to a line's copper).
* **copper strains** (unbonded regions) -- the same weighted-mean bound per leaf, each copper
  about its own leaf's axis, on the group list split at the leaf boundaries (:mod:`.boundleaf`).

The signal layer, ``line_layers`` and the leaf grouping (``leaves``) are enumerated: the bound of
a node is the least over their values. A slot shared by two variables of the node (a symmetric
stack's mirrored layers) is bounded as if they were independent -- a relaxation, still a valid
bound.
"""
from __future__ import annotations

import itertools
from typing import Any

import numpy as np

from strainline.models.fatigue import strain_range
from strainline.models.units import MM, UM
from strainline.optimizer.search.boundleaf import leaf_groups, leaf_strains, wmin as _wmin
from strainline.optimizer.search.boundrows import LineBounds, leaves_buildable, unbonded_extra
from strainline.optimizer.search.exhaustive import _digits
from strainline.optimizer.search.evaluation import quantize
from strainline.optimizer.inputs.study import OBJECTIVE_RESOLUTION

#: Relative safety of the strain and thickness bounds (the evaluation agrees with itself to 1e-12).
SAFE = 1.0 - 1e-9
_ENUM = ("signal_layer", "line_layers", "leaves")


def _deps(space: Any) -> dict[int, set] | None:
    """Slots each variable drives (the structure of :meth:`Space.slots`); None for an unknown name."""
    N = space.n_cu
    sym = space.study.stack.symmetric
    cu_src = [min(i, N - 1 - i) if sym else i for i in range(N)]
    gap_src = [min(g, N - 2 - g) if sym else g for g in range(N - 1)]
    out: dict[int, set] = {}
    for k, v in enumerate(space.variables):
        name = v.name
        base, _, arg = name.partition("[")
        arg = arg.rstrip("]")
        if name in _ENUM:
            out[k] = set()
        elif base == "copper":
            out[k] = {("cu", i) for i in range(N) if cu_src[i] == int(arg)}
        elif base in ("film", "adhesive", "placement"):
            key = {"film": "film", "adhesive": "adh", "placement": "place"}[base]
            out[k] = {(key, g) for g in range(N - 1) if gap_src[g] == int(arg)}
        elif name == "cover[top]":
            out[k] = {"cover_top", "cover_bot"} if sym else {"cover_top"}
        elif name == "cover[bottom]":
            out[k] = {"cover_bot"}
        elif base == "coverage":
            out[k] = {"cov"}
        elif name == "line_gap":
            out[k] = {"gap_opt"}
        elif base == "gap":                # several lines: line k's pair gap (:mod:`.boundrows`)
            names = [ln.name for ln in space.study.lines]
            out[k] = {("gap_opt", names.index(arg))} if arg in names else {"gap_opt"}
        else:
            return None
    return out


def _group_table(T: np.ndarray, S: np.ndarray, M: np.ndarray) -> dict[str, np.ndarray]:
    """Per option: T, S, centroid r = M / S and T - r (r, T - r are +-inf-masked where S = 0)."""
    pos = S > 0
    r = np.where(pos, M / np.where(pos, S, 1.0), np.nan)
    return {"T": T, "S": S, "r": r, "tr": T - r}


def _reduce(tab: dict[str, np.ndarray], axes: tuple[int, ...]) -> dict[str, np.ndarray]:
    """Least and largest of each quantity over ``axes`` (keepdims); centroids over S > 0 only."""
    out = {}
    for q, v in tab.items():
        lo = np.nanmin(np.where(np.isnan(v), np.inf, v), axis=axes, keepdims=True) if axes else v
        hi = np.nanmax(np.where(np.isnan(v), -np.inf, v), axis=axes, keepdims=True) if axes else v
        out[q + "_lo"], out[q + "_hi"] = lo, hi
    return out


class NodeModel:
    """Lower bounds over nodes of a study problem's space (see module docstring)."""

    def __init__(self, problem: Any) -> None:
        self.pb = problem
        sp = self.sp = problem.space
        self.sizes = np.asarray(sp.sizes, np.int64)
        self.names = [v.name for v in sp.variables]
        self.deps = _deps(sp)
        self.mech = self.deps is not None and not sp.unbonded and sp.n_cu >= 1
        self.rows = self.deps is not None
        self.unb = self.deps is not None and sp.unbonded
        b = sp.blocks
        from strainline.optimizer.search.faststrain import fast_tables
        f = problem.fast if problem.fast is not None else fast_tables(sp)
        self.n_adh = len(sp.adh_opts)
        self.n_film = len(sp.film_opts)
        self.ct = _group_table(f["ct_T"], f["ct_S"], f["ct_M"])
        self.cb = _group_table(f["cb_T"], f["cb_S"], f["cb_M"])
        self.gap = {q: v.reshape(self.n_film, self.n_adh, 3)
                    for q, v in _group_table(f["gap_T"], f["gap_S"], f["gap_M"]).items()}
        if sp.unbonded:     # the parts of a gap split at a leaf boundary (:mod:`.boundleaf`)
            zero = np.zeros_like(f["gap_tup"])
            self.parts = {k: {q: v.reshape(self.n_film, self.n_adh, 3) for q, v in _group_table(*tab).items()}
                          for k, tab in {"gapU": (f["gapU_T"], f["gapU_S"], f["gapU_M"]),
                                         "gapD": (f["gapD_T"], f["gapD_S"], f["gapD_M"]),
                                         "tup": (f["gap_tup"], zero, zero), "tdn": (f["gap_tdn"], zero, zero)}.items()}
        self.cu_t, self.cu_E = np.asarray(b["cu_t"], float), np.asarray(b["cu_E"], float)
        self.fill = np.asarray(b["fill"], float)
        self.fill_rng = (float(self.fill.min()), float(self.fill.max()))
        self.cov_rng = (float(min(sp.cov_opts)), float(max(sp.cov_opts))) if len(sp.cov_opts) else (1.0, 1.0)
        self.n_cov = len(sp.cover_opts)
        self._gap_cache: dict = {}
        self.zones = [(z.inner_radius_mm * MM, z.motion) for z in sp.study.bends]
        self.allowed = problem.allowed_range if "fatigue_life" in problem.constraint_names else None
        self.lines = LineBounds(problem) if self.rows else None

    # ------------------------------------------------------------------------- mechanics
    def _cover(self, tab: dict, code: np.ndarray, free: bool) -> dict:
        if free:
            return {k: np.full(code.shape, float(v.ravel()[0])) for k, v in _reduce(tab, (0,)).items()}
        return {q + s: np.take(v, code) for q, v in tab.items() for s in ("_lo", "_hi")}

    def _gap(self, film: np.ndarray, adh: np.ndarray, place: np.ndarray, fr: tuple[bool, bool, bool]) -> dict:
        return self.part("gap", film, adh, place, fr)

    def part(self, key: str, film: np.ndarray, adh: np.ndarray, place: np.ndarray,
             fr: tuple[bool, bool, bool]) -> dict:
        """Intervals of a gap table (``gap`` or a boundary part, :mod:`.boundleaf`) per node,
        over the free film, adhesive and placement axes ``fr``."""
        if (key, fr) not in self._gap_cache:
            tab = self.gap if key == "gap" else self.parts[key]
            self._gap_cache[(key, fr)] = _reduce(tab, tuple(a for a in range(3) if fr[a]))
        red = self._gap_cache[(key, fr)]
        i = [np.zeros_like(film) if fr[0] else film, np.zeros_like(adh) if fr[1] else adh,
             np.zeros_like(place) if fr[2] else place]
        return {k: v[i[0], i[1], i[2]] for k, v in red.items()}

    def _groups(self, slots: dict, free: set, wide: Any = ()) -> tuple[list, dict]:
        """Bottom-up group intervals: (T_lo, T_hi, S_lo, S_hi, r_lo, r_hi, tr_lo, tr_hi) and copper data."""
        N = self.sp.n_cu
        n = slots["signal"].shape[0]
        film, adh, place = slots["film"], slots["adh"], slots["place"]
        gfree = [tuple((k, g) in free for k in ("film", "adh", "place")) for g in range(N - 1)]
        gaps = [self._gap(film[:, g], adh[:, g], place[:, g], gfree[g]) for g in range(N - 1)]
        gcode = [(film[:, g] * self.n_adh + adh[:, g]) * 3 + place[:, g] + self.n_cov for g in range(N - 1)]
        ctf, cbf = "cover_top" in free, "cover_bot" in free
        ct = self._cover(self.ct, slots["cover_top"], ctf)
        cb = self._cover(self.cb, slots["cover_bot"], cbf)
        cu, cov = slots["cu"], slots["cov_val"]
        signals = slots["signals"] if "signals" in slots else slots["signal"][:, None]
        cus: dict[int, dict] = {}
        for i in range(N):
            if ("cu", i) in free:
                tl, th = np.full(n, self.cu_t.min()), np.full(n, self.cu_t.max())
                el, eh = np.full(n, self.cu_E.min()), np.full(n, self.cu_E.max())
            else:
                tl = th = self.cu_t[cu[:, i]]
                el = eh = self.cu_E[cu[:, i]]
            cl = ch = np.asarray(cov[:, i], float)
            if "cov" in free:
                is_sig = np.any(signals == i, axis=1)
                cl = np.where(is_sig, cl, np.minimum(cl, self.cov_rng[0]))
                ch = np.where(is_sig, ch, np.maximum(ch, self.cov_rng[1]))
            upf = ctf if i == 0 else any(gfree[i - 1])
            dnf = cbf if i == N - 1 else any(gfree[i])
            if upf or dnf or i in wide:       # wide: may face a leaf-face cover build (unbonded)
                fl, fh = np.full(n, self.fill_rng[0]), np.full(n, self.fill_rng[1])
            else:
                up = slots["cover_top"] if i == 0 else gcode[i - 1]
                dn = slots["cover_bot"] if i == N - 1 else gcode[i]
                fl = fh = self.fill[up, dn]
            # Voigt modulus cov E + (1 - cov) fill: multilinear, extremes at the box corners
            corners = [c * e + (1.0 - c) * f_ for c in (cl, ch) for e in (el, eh) for f_ in (fl, fh)]
            effl, effh = np.minimum.reduce(corners), np.maximum.reduce(corners)
            cus[i] = {"T_lo": tl, "T_hi": th, "S_lo": np.maximum(tl * effl, 0.0), "S_hi": th * effh,
                      "r_lo": 0.5 * tl, "r_hi": 0.5 * th, "tr_lo": 0.5 * tl, "tr_hi": 0.5 * th}
        groups = [cb]
        for i in range(N - 1, -1, -1):
            groups.append(cus[i])
            if i > 0:
                groups.append(gaps[i - 1])
        groups.append(ct)
        for g in groups:        # a group that may have no stiffness: its centroid does not matter
            for q in ("r", "tr"):
                bad = ~np.isfinite(g[q + "_lo"]) | ~np.isfinite(g[q + "_hi"])
                if bad.any():
                    g[q + "_lo"] = np.where(bad, 0.0, g[q + "_lo"])
                    g[q + "_hi"] = np.where(bad, 0.0, g[q + "_hi"])
        return groups, {"signals": signals, "cu": cu}

    def _strains(self, groups: list) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """Thickness interval and a lower bound of ``max(|y_b - y_NA|, |y_t - y_NA|)`` of every copper."""
        G = len(groups)
        N = self.sp.n_cu
        Tl = np.stack([g["T_lo"] for g in groups], axis=1)
        Th = np.stack([g["T_hi"] for g in groups], axis=1)
        Sl = np.stack([g["S_lo"] for g in groups], axis=1)
        Sh = np.stack([g["S_hi"] for g in groups], axis=1)
        z = np.zeros((Tl.shape[0], 1))
        Cl, Ch = np.concatenate([z, np.cumsum(Tl, axis=1)], axis=1), np.concatenate([z, np.cumsum(Th, axis=1)], axis=1)
        dist = np.empty((Tl.shape[0], N))
        for i in range(N):
            k = 1 + 2 * (N - 1 - i)
            half_l, half_h = 0.5 * Tl[:, k], 0.5 * Th[:, k]
            el, eh = np.zeros_like(Tl), np.zeros_like(Tl)
            for j in range(G):
                g = groups[j]
                if j < k:          # m_i - c_j = (T_j - r_j) + groups between + t_i / 2
                    el[:, j] = g["tr_lo"] + (Cl[:, k] - Cl[:, j + 1]) + half_l
                    eh[:, j] = g["tr_hi"] + (Ch[:, k] - Ch[:, j + 1]) + half_h
                elif j > k:        # m_i - c_j = -(t_i / 2 + groups between + r_j)
                    el[:, j] = -(half_h + (Ch[:, j] - Ch[:, k + 1]) + g["r_hi"])
                    eh[:, j] = -(half_l + (Cl[:, j] - Cl[:, k + 1]) + g["r_lo"])
            d_lo = _wmin(el, Sl, Sh)
            d_hi = -_wmin(-eh, Sl, Sh)
            gap_ = np.maximum(np.maximum(d_lo, -d_hi), 0.0)
            gap_[~np.isfinite(gap_)] = 0.0
            dist[:, i] = gap_ + half_l
        return Tl.sum(axis=1), Th.sum(axis=1), dist

    def _unbonded(self, slots: dict, free: set) -> tuple[np.ndarray, np.ndarray, np.ndarray, dict]:
        """Unbonded region, per leaf grouping of the nodes: the thickness lower bound (bonded
        groups plus the leaf-face cover builds, :func:`.boundrows.unbonded_extra`), a total
        thickness upper bound and the per-leaf copper distances (:mod:`.boundleaf`)."""
        N = self.sp.n_cu
        n = slots["signal"].shape[0]
        Tlo, Thi, dist = np.empty(n), np.empty(n), np.empty((n, N))
        lv = slots["leaves"]
        for v in np.unique(lv):
            sel = np.flatnonzero(lv == v)
            sub = {k: a[sel] for k, a in slots.items()}
            mask = tuple(bool(b) for b in self.sp.arr["leaf_mask"][v])
            wide = {i for i in range(N) if (i > 0 and mask[i - 1]) or (i < N - 1 and mask[i])}
            groups, _ = self._groups(sub, free, wide)
            T = np.sum([np.broadcast_to(g["T_lo"], (len(sel),)) for g in groups], axis=0)
            Tlo[sel] = T + unbonded_extra(self.sp, sub, free, groups[-1]["T_lo"], groups[0]["T_lo"])
            lg, leaf, pos = leaf_groups(self, sub, free, mask, groups)
            Thi[sel], dist[sel] = leaf_strains(lg, leaf, pos)
        signals = slots["signals"] if "signals" in slots else slots["signal"][:, None]
        return Tlo, Thi, dist, {"signals": signals, "cu": slots["cu"]}

    # ------------------------------------------------------------------------- public
    def free_slots(self, m: int) -> tuple[set, list[int]]:
        """Slots free at level ``m`` (first m variables free) and the enumerated variables."""
        free: set = set()
        enum = []
        for k in range(m):
            if self.names[k] in _ENUM:
                enum.append(k)
            else:
                free |= self.deps[k]
        return free, enum

    def bounds(self, m: int, q: np.ndarray) -> dict[str, np.ndarray]:
        """Lower bounds over the nodes ``q`` (prefixes) at level ``m``: ``thickness_m``,
        ``peak``/``signal`` per zone (n, Z) fractions, ``fatigue`` (largest range over allowed),
        ``loss`` (quantized, dB/m), ``line`` (False: for some line no row of the node meets it)
        and ``leaves`` (False: every completion has an unbuildable leaf grouping or fails ``line``;
        the enumerated variables are tested together with the line)."""
        q = np.asarray(q, np.int64)
        n = q.size
        free, enum = self.free_slots(m)
        Z = len(self.zones)
        out = {"thickness_m": np.full(n, np.inf), "peak": np.full((n, Z), np.inf),
               "signal": np.full((n, Z), np.inf), "fatigue": np.full(n, np.inf),
               "loss": np.full(n, np.inf), "line": np.zeros(n, bool), "leaves": np.zeros(n, bool)}
        if not self.unb:
            out["leaves"][:] = True
        x = np.zeros((n, self.sizes.size), np.int64, order="F")
        x[:, m:] = _digits(q, self.sizes[m:])
        for combo in itertools.product(*[range(int(self.sizes[k])) for k in enum]):
            for k, v in zip(enum, combo):
                x[:, k] = v
            slots = self.sp.slots(x)
            if self.rows:
                loss, ok = self.lines(slots, free)
                np.minimum(out["loss"], loss, out=out["loss"])
                out["line"] |= ok
            else:
                out["loss"][:] = -np.inf
                out["line"][:] = ok = True
            if self.unb:        # buildable with a row of every line passing, for this enumerated value
                out["leaves"] |= leaves_buildable(self.sp, slots, free) & ok
            if self.unb:
                Tlo, Thi, dist, cd = self._unbonded(slots, free)
            elif self.mech:
                groups, cd = self._groups(slots, free)
                Tlo, Thi, dist = self._strains(groups)
            else:
                for k in ("thickness_m", "peak", "signal", "fatigue"):
                    out[k][:] = 0.0
                continue
            np.minimum(out["thickness_m"], Tlo * SAFE, out=out["thickness_m"])
            sig = cd["signals"]
            fat = np.zeros(n)
            for z, (R, motion) in enumerate(self.zones):
                eps = dist / (R + Thi)[:, None] * SAFE            # (n, N)
                np.minimum(out["peak"][:, z], eps.max(axis=1), out=out["peak"][:, z])
                np.minimum(out["signal"][:, z], np.take_along_axis(eps, sig, axis=1).max(axis=1),
                           out=out["signal"][:, z])
                allowed = self.allowed[z] if self.allowed is not None else None
                if allowed is not None:
                    for i in range(self.sp.n_cu):
                        a_hi = np.full(n, np.max(allowed)) if ("cu", i) in free else allowed[cd["cu"][:, i]]
                        np.maximum(fat, strain_range(eps[:, i], motion) / a_hi, out=fat)
            np.minimum(out["fatigue"], fat, out=out["fatigue"])
        return out

    def objective_bounds(self, b: dict[str, np.ndarray]) -> np.ndarray:
        """Lower bounds of the objective columns (n, n_obj) in their quantized units (-inf: none)."""
        pb, study = self.pb, self.sp.study
        names = [z.name for z in study.bends]
        pick = names.index(study.strain_bend) if study.strain_bend is not None else None
        n = b["loss"].shape[0]
        F = np.full((n, pb.n_obj), -np.inf)
        for k, o in enumerate(pb.objectives):
            res = OBJECTIVE_RESOLUTION[o]
            if o in ("peak_strain", "signal_strain") and (self.mech or self.unb):
                v = b["peak" if o == "peak_strain" else "signal"]
                v = v[:, pick] if pick is not None else v.max(axis=1)
                F[:, k] = quantize(v * 100.0, res)
            elif o == "thickness" and (self.mech or self.unb):
                F[:, k] = quantize(b["thickness_m"] / UM, res)
            elif o == "loss" and self.rows:
                F[:, k] = b["loss"]
        return F
