"""The search problem: one vectorized evaluation of a batch of integer-coded candidates.

Pipeline per batch (a row is a candidate, no per-candidate Python loop):

1. decode the integer choices into per-slot option codes (:meth:`Space.slots`);
2. copper strains: the fast path (:meth:`Problem.copper_strains`) stacks per-option group sums
   (thickness, sum E t, first moment of each cover, gap and copper layer) and evaluates only the
   copper faces -- the same transformed-section model and exact strain as
   :func:`strainline.models.bending.bend_strains`, which the general path runs on the decoded
   (n, L) layer arrays (:meth:`Space.mechanics`) and a test compares to 1e-12;
3. the line: every distinct line geometry is solved **once** (:class:`LineTable`: signal position
   and copper, the dielectric builds next to the trace, the cover, the gap); a candidate gathers its row;
4. objectives and normalized inequality constraints ``g <= 0`` (pymoo convention).
Several bend zones (``study.bends``): step 2 and the mechanical constraints run once per zone (a
loop over the few zones, vectorized over the candidates); each strain, life and material column is
the worst zone's, so it holds only when every zone holds. The strain and life objectives read the
zone ``strain_bend`` names, else the worst zone (:func:`.zones.zone_pick`).
Row blocks of :data:`BLOCK` keep the temporaries in cache; line columns are precomputed per row.

Several lines (``study.lines``): one table per line, the worst line's columns (:mod:`.multiline`).

Constraint columns (each is a relative excess over its limit, so 0.1 means 10 % over):

``impedance``      |Z/Z_target - 1| / nominal_error - 1 after the width solve (clamped to the range);
``width_range``    the fabricator's minimum trace for the signal copper against the maximum width;
``gap_space``      pairs and coplanar: the fabricator's minimum space against the gap;
``equation_range`` +1 when an impedance equation was used outside its stated validity range;
``total_thickness``, ``peak_strain``, ``signal_strain``, ``loss``: the study limits;
``fatigue_life``   the largest copper strain range over the range Engelmaier's equation allows for
                   the required cycles (equivalent to cycles >= required: life is monotone in range);
``material_strain``, ``cover_radius``, ``cover``, ``glass``, ``leaves``: :mod:`.constraints`.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np

from strainline.models.bending import bend_strains
from strainline.models.fatigue import engelmaier_cycles, engelmaier_strain_range, strain_range
from strainline.models.units import MM, UM
from strainline.optimizer.search import constraints as material
from strainline.optimizer.search import kernel as _kernel
from strainline.optimizer.search import multiline as _ml
from strainline.optimizer.search.evaluation import Evaluation, quantize  # noqa: F401 - re-exported
from strainline.optimizer.search.faststrain import copper_strains as _copper_strains, fast_tables
from strainline.optimizer.search.space import Space
from strainline.optimizer.inputs.study import GAP_KINDS, OBJECTIVE_KEYS, OBJECTIVE_RESOLUTION
from strainline.optimizer.inputs.study_spec import required_cycles
from strainline.optimizer.search.zones import zone_pick
from strainline.optimizer.search.linetable import OUTER_KINDS, LineTable, build_line_table, composite_df  # noqa: F401

#: Rows per block of :meth:`Problem.evaluate` and :meth:`Problem.copper_strains`: small enough for
#: the temporaries to stay in cache (measured with benchmarks/bench_solver.py: batches of 8192 run
#: 10-40 % faster than one pass over 65536 rows).
BLOCK = 8192


@dataclass
class Problem:
    """A study's evaluator: integer vectors (n, n_var) -> objectives and constraints."""

    space: Space
    table: LineTable
    objectives: tuple[str, ...]
    constraint_names: list[str] = field(default_factory=list)
    #: Per bend zone: per copper option, the strain range allowed for the zone's life limit (None:
    #: the zone has no life limit); None when no zone has one.
    allowed_range: list | None = None
    fast: dict[str, np.ndarray] | None = None  # per-option block sums and per-row line figures (:func:`_fast_tables`)
    #: Unused (earlier interface): an unbonded region always takes the layer path (leaf axes).
    fast_unbonded: bool = False
    #: The catalog the table was built with (fabrication tolerances for the impedance yield).
    catalog: Any = None
    #: The bend zone being evaluated (set during :meth:`evaluate`; None = ``study.bend``).
    zone: Any = None
    #: Several lines: one line problem per line (:mod:`.multiline`); None for a one-line study.
    lines: list | None = None

    def _rows(self, slots: dict[str, np.ndarray]) -> np.ndarray:
        """Line-table row per candidate: (n,), or (n, K) with several lines."""
        return _ml.line_rows(self, slots) if self.lines else self.table.index(slots)

    def _rows_ok(self, rows: np.ndarray) -> np.ndarray:
        return _ml.line_ok(self, rows) if self.lines else self.line_ok(rows)

    def _line_g(self, rows: np.ndarray, slots: dict[str, np.ndarray] | None = None) -> dict[str, np.ndarray]:
        return _ml.line_constraints(self, rows, slots) if self.lines else self._line_constraints(rows)

    @property
    def n_var(self) -> int:
        return len(self.space.variables)

    @property
    def n_obj(self) -> int:
        return len(self.objectives)

    @property
    def n_con(self) -> int:
        return len(self.constraint_names)

    def strains(self, thickness_m: np.ndarray, modulus_pa: np.ndarray, leaf: np.ndarray | None):
        """Bend strains of a batch (:func:`strainline.models.bending.bend_strains`)."""
        b = getattr(self, "zone", None) or self.space.study.bend     # the bend zone being evaluated
        return bend_strains(thickness_m, modulus_pa, b.inner_radius_mm * MM,
                            inside_bottom=(b.inside == "bottom"), leaf=leaf)

    def line_ok(self, row: np.ndarray) -> np.ndarray:
        """True where a table row meets every line constraint (impedance, width, gap, validity)."""
        if self.fast is not None:
            return self.fast["line_ok"].take(row, mode="clip")     # rows are valid by construction
        return self._line_ok_direct(row)

    def _line_ok_direct(self, row: np.ndarray) -> np.ndarray:
        tb, study = self.table, self.space.study
        ok = (tb.rel_err[row] <= study.line.tolerance) & (tb.width_lo_m[row] <= tb.width_hi_m[row]) & tb.in_range[row]
        if study.line.type in GAP_KINDS:
            ok &= tb.gap_m[row] >= tb.min_space_m[row]
        return ok

    def evaluate(self, x: np.ndarray, want_cycles: bool = False, prune: bool = False) -> Evaluation:
        """Evaluate a batch of integer vectors (n, n_var); one vectorized pass.

        With ``prune`` the bend model runs only for candidates whose line meets every line
        constraint (the cheap ones, from the table); the others keep their line constraint values
        and get 0 in the mechanical constraint columns and nan objectives (they are infeasible
        either way, so the exact front is unchanged).

        ``x`` must lie on the grid of the space (``0 <= x_k < n_k``; :meth:`Space.repair` puts
        real vectors there): option codes derived from it index the precomputed tables unchecked.
        """
        x = np.asarray(x, np.int64)
        n = x.shape[0]
        if n > BLOCK:
            # row blocks whose temporaries stay in cache (every row is independent)
            out: Evaluation | None = None
            for a in range(0, n, BLOCK):
                e = self.evaluate(x[a:a + BLOCK], want_cycles, prune)
                if out is None:
                    out = Evaluation(
                        np.empty((n, self.n_obj), order="F"), np.empty((n, self.n_con), order="F"),
                        np.empty(n), np.empty(n), np.empty(n), np.empty(n, np.int64),
                        None if e.cycles is None else np.empty(n))
                sl = slice(a, a + BLOCK)
                out.F[sl], out.G[sl] = e.F, e.G
                out.peak_strain[sl], out.signal_strain[sl] = e.peak_strain, e.signal_strain
                out.total_thickness_m[sl], out.line_row[sl] = e.total_thickness_m, e.line_row
                if out.cycles is not None:
                    out.cycles[sl] = e.cycles
                for key in ("zone_peak", "zone_signal", "zone_cycles", "line_rows"):
                    v = getattr(e, key)
                    if v is not None:
                        if getattr(out, key) is None:
                            setattr(out, key, np.empty((n, v.shape[1]), v.dtype))
                        getattr(out, key)[sl] = v
            return out
        if prune:
            slots = self.space.slots(x)
            rows = self._rows(slots)
            ok = self._rows_ok(rows)
            # pruning pays only when a good share of the batch fails on its line
            if ok.mean() <= 0.7:
                sub = {k: v[ok] for k, v in slots.items()}
                full = self._evaluate(x[ok], want_cycles, sub) if ok.any() else None
                n = x.shape[0]
                F = np.full((n, self.n_obj), np.nan, order="F")
                G = np.zeros((n, self.n_con), order="F")
                row = rows[:, 0] if self.lines else rows
                lim = self._line_g(rows)
                for k, c in enumerate(self.constraint_names):
                    if c in lim:
                        G[:, k] = lim[c]
                pk = np.full(n, np.nan)
                out = Evaluation(F, G, pk, pk.copy(), pk.copy(), row, None if not want_cycles else pk.copy(),
                                 line_rows=rows if self.lines else None)
                if full is not None:
                    out.F[ok], out.G[ok] = full.F, full.G
                    out.peak_strain[ok], out.signal_strain[ok] = full.peak_strain, full.signal_strain
                    out.total_thickness_m[ok] = full.total_thickness_m
                    if want_cycles:
                        out.cycles[ok] = full.cycles
                return out
            e = self._evaluate(x, want_cycles, slots)
            if not ok.all():
                # the same result as the pruned branch, whatever share of the block passes: a
                # line-failing row keeps only its line columns (counts do not depend on the split)
                bad = ~ok
                e.F[bad] = np.nan
                lim = self._line_g(rows[bad])
                for k, c in enumerate(self.constraint_names):
                    e.G[bad, k] = lim[c] if c in lim else 0.0
            return e
        return self._evaluate(x, want_cycles)

    def _line_constraints(self, row: np.ndarray) -> dict[str, np.ndarray]:
        if self.fast is not None:
            return {c: self.fast["line_g_" + c].take(row, mode="clip") for c in self.fast["line_g_names"]}
        return self._line_constraints_direct(row)

    def _line_constraints_direct(self, row: np.ndarray) -> dict[str, np.ndarray]:
        tb, study = self.table, self.space.study
        out = {
            "impedance": tb.rel_err[row] / study.line.nominal_error - 1.0,
            "width_range": (tb.width_lo_m[row] - tb.width_hi_m[row]) / tb.width_hi_m[row],
            "equation_range": np.where(tb.in_range[row], -1.0, 1.0),
        }
        if study.line.type in GAP_KINDS:
            out["gap_space"] = (tb.min_space_m[row] - tb.gap_m[row]) / tb.min_space_m[row]
        if study.limits.min_yield_pct is not None:
            out["yield"] = 1.0 - 100.0 * self.row_yield().yield_frac[row] / study.limits.min_yield_pct
        return out

    def row_yield(self) -> Any:
        """Impedance yield of every line-table row (:mod:`.yieldcalc`), recomputed when the table's
        widths or corrections change (the field refinement updates rows)."""
        from strainline.optimizer.search.hatchsearch import _key
        from strainline.optimizer.search.yieldcalc import table_yield

        tb = self.table
        h = _key(tb)                 # the table's set_rows count
        got = getattr(self, "_yield_cache", None)
        if got is None or got[0] != h:
            got = (h, table_yield(tb, self.space, self.catalog, seed=int(self.space.study.search.seed)))
            self._yield_cache = got
        return got[1]

    def _evaluate(self, x: np.ndarray, want_cycles: bool = False,
                  slots: dict[str, np.ndarray] | None = None) -> Evaluation:
        sp, study = self.space, self.space.study
        n = x.shape[0]
        fast = self.fast is not None and not sp.unbonded
        use_kernel = _kernel.enabled()         # compiled mechanics (:mod:`.kernel`), equal to 1e-12
        if fast or use_kernel:
            slots = sp.slots(x) if slots is None else slots
        else:
            t, e, leaf, slots = sp.mechanics(x, slots)
            cols = [sp.cu_col(i) for i in range(sp.n_cu)]
        signal, cu_opt = slots["signal"], slots["cu"]
        need_cycles = want_cycles or "life" in self.objectives
        zones = study.bends
        zp, zs, zc = np.empty((n, len(zones))), np.empty((n, len(zones))), np.full((n, len(zones)), np.inf)
        mat_g: dict[str, np.ndarray] = {}
        fatigue = None
        # one pass per bend zone (a handful), vectorized over the candidates
        for z, zone in enumerate(zones):
            self.zone = zone
            try:
                if use_kernel:
                    total, cu_peak, ratio = _kernel.zone_mechanics(self, slots, zone)
                elif fast:
                    total, cu_peak, ratio = self.copper_strains(slots, dielectric=True)
                else:
                    bs = self.strains(t, e, leaf)
                    cu_peak = np.maximum(np.abs(bs.strain_top[:, cols]), np.abs(bs.strain_bottom[:, cols]))  # (n, N)
                    total = t.sum(axis=1)
                    ratio = material.strain_ratio(sp, slots, bs.strain_top, bs.strain_bottom)
                for c, v in material.material_constraints(self, slots, total, ratio).items():
                    mat_g[c] = v if c not in mat_g else np.maximum(mat_g[c], v)
            finally:
                self.zone = None
            zp[:, z] = cu_peak.max(axis=1)
            if self.lines:
                zs[:, z] = _ml.signal_peak(cu_peak, slots)
            elif len(sp.sig_opts) == 1:
                zs[:, z] = cu_peak[:, sp.sig_opts[0]]
            elif len(sp.sig_opts) == 2:
                s0, s1 = sp.sig_opts
                zs[:, z] = np.where(signal == s0, cu_peak[:, s0], cu_peak[:, s1])
            else:
                zs[:, z] = np.choose(signal, [cu_peak[:, i] for i in range(sp.n_cu)])
            if need_cycles:
                a = sp.arr
                rng = strain_range(cu_peak, zone.motion)
                zc[:, z] = engelmaier_cycles(rng, a["cu_Df"][cu_opt], a["cu_Su"][cu_opt], a["cu_E"][cu_opt]).min(axis=1)
            allowed = self.allowed_range[z] if self.allowed_range is not None else None
            if allowed is not None and "fatigue_life" in self.constraint_names:
                # largest copper strain range over its allowed range, column by column
                for i in range(sp.n_cu):
                    r_i = strain_range(cu_peak[:, i], zone.motion)
                    r_i /= allowed.take(cu_opt[:, i], mode="clip")
                    fatigue = r_i if fatigue is None else np.maximum(fatigue, r_i, out=fatigue)
        peak, sig, cycles = zone_pick(study, zp, zs, zc if need_cycles else None)
        rows = self._rows(slots)
        row = rows[:, 0] if self.lines else rows
        tb = self.table
        F = np.empty((n, self.n_obj), order="F")   # columns contiguous
        for k, o in enumerate(self.objectives):
            if o == "peak_strain":
                F[:, k] = peak * 100.0
            elif o == "signal_strain":
                F[:, k] = sig * 100.0
            elif o == "thickness":
                F[:, k] = total / UM
            elif o == "loss":
                F[:, k] = _ml.loss_column(self, rows, False) if self.lines else tb.loss_db_per_m[row]
            elif o == "life":
                F[:, k] = -np.log10(np.maximum(cycles, 1e-300))
            elif o == "yield":
                F[:, k] = _ml.yield_shortfall(self, rows) if self.lines else \
                    100.0 * (1.0 - self.row_yield().yield_frac[row])
        lim = study.limits
        G = np.empty((n, self.n_con), order="F")
        line_g = self._line_g(rows, slots)
        for k, c in enumerate(self.constraint_names):
            if c in line_g:
                G[:, k] = line_g[c]
            elif c in mat_g:
                G[:, k] = mat_g[c]
            elif c == "total_thickness":
                G[:, k] = total / (lim.total_thickness_um * UM) - 1.0
            elif c == "peak_strain":       # the limit holds in every zone
                G[:, k] = zp.max(axis=1) * 100.0 / lim.peak_strain_pct - 1.0
            elif c == "signal_strain":
                G[:, k] = zs.max(axis=1) * 100.0 / lim.signal_strain_pct - 1.0
            elif c == "loss":
                G[:, k] = tb.loss_db_per_m[row] / lim.loss_db_per_m - 1.0
            elif c == "hatch_width":
                from strainline.optimizer.search.hatchsearch import hatch_width_constraint
                G[:, k] = hatch_width_constraint(self, slots, row)
            elif c == "fatigue_life":
                G[:, k] = fatigue - 1.0
        # feasible rows (the only ones a front keeps) are rounded, so equal designs merge
        feas = np.flatnonzero(np.all(G <= 0, axis=1)) if self.n_con else np.arange(n)
        if self.fast is not None:
            # the loss column comes quantized per table row (quantize is elementwise)
            q = [k for k, o in enumerate(self.objectives) if o != "loss"]
            F[np.ix_(feas, q)] = quantize(F[np.ix_(feas, q)], self.resolution[q])
            for k, o in enumerate(self.objectives):
                if o == "loss":
                    F[:, k] = _ml.loss_column(self, rows, True) if self.lines else \
                        self.fast["loss_q"].take(row, mode="clip")
        else:
            F[feas] = quantize(F[feas], self.resolution)
        return Evaluation(F, G, peak, sig, total, row, cycles, zp, zs, zc if need_cycles else None,
                          rows if self.lines else None)

    def copper_strains(self, slots: dict[str, np.ndarray], axis: bool = False, dielectric: bool = False):
        """Total thickness and peak strain of every copper layer from group sums
        (:func:`.faststrain.copper_strains`; equal to ``bend_strains`` on the decoded layers)."""
        return _copper_strains(self, slots, axis, dielectric)

    def objective_keys(self) -> list[str]:
        return [OBJECTIVE_KEYS[o] for o in self.objectives]

    @property
    def resolution(self) -> np.ndarray:
        """Grid of each objective column (:data:`OBJECTIVE_RESOLUTION`), in the column's unit."""
        return np.array([OBJECTIVE_RESOLUTION[o] for o in self.objectives], float)


def _line_names(study: Any) -> list[str]:
    names = ["impedance", "width_range"]
    if study.line.type in GAP_KINDS:
        names.append("gap_space")
    names.append("equation_range")
    return names


def build_problem(space: Space, catalog) -> Problem:
    """The evaluator of a study: builds the line table(s) and the constraint list."""
    study = space.study
    subs = None
    if space.multi:
        # one line problem per line, on the line's view of the space (:mod:`.multiline`)
        def one(view: Space) -> Problem:
            sub = Problem(view, build_line_table(view, catalog), (), _line_names(view.study)
                          + (["yield"] if study.limits.min_yield_pct is not None else []))
            sub.catalog = catalog
            sub.fast = _fast_tables(sub)
            return sub
        subs = _ml.line_problems(space, one)
        table = subs[0].table
        names = _ml.names(subs)
    else:
        table = build_line_table(space, catalog)
        names = _line_names(study)
    lim = study.limits
    allowed = None
    for key, cname in (("total_thickness_um", "total_thickness"), ("peak_strain_pct", "peak_strain"),
                       ("signal_strain_pct", "signal_strain"), ("loss_db_per_m", "loss")):
        if getattr(lim, key) is not None:
            names.append(cname)
    need = [required_cycles(study, z) for z in study.bends]
    if any(c is not None for c in need):
        a = space.arr
        allowed = [None if c is None else engelmaier_strain_range(c, a["cu_Df"], a["cu_Su"], a["cu_E"])
                   for c in need]
        names.append("fatigue_life")
    if lim.min_yield_pct is not None and "yield" not in names:
        names.append("yield")
    if study.stack.ground_hatch:
        names.append("hatch_width")
    names += material.names(space)
    pb = Problem(space, table, tuple(study.objectives), names, allowed)
    pb.catalog = catalog
    pb.lines = subs
    pb.fast = _fast_tables(pb)
    return pb


def _fast_tables(pb: Problem) -> dict:
    """Per-option group sums for :meth:`Problem.copper_strains` and per-row line figures."""
    out = fast_tables(pb.space)
    if pb.lines:        # several lines: each line problem holds its own per-row figures
        return out
    rows = np.arange(pb.table.n_rows)
    g = pb._line_constraints_direct(rows)
    out["line_g_names"] = list(g)
    for c, v in g.items():
        out["line_g_" + c] = np.ascontiguousarray(v, dtype=float)
    out["line_ok"] = pb._line_ok_direct(rows)
    out["loss_q"] = quantize(pb.table.loss_db_per_m, OBJECTIVE_RESOLUTION["loss"])
    return out


#: Human wording of each constraint for the "nothing feasible" message (:mod:`.constraints`).
CONSTRAINT_TEXT = material.CONSTRAINT_TEXT
