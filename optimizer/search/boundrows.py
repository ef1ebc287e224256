"""Node bounds of the line tables and of unbonded regions (used by :class:`.boundstrain.NodeModel`).

A node fixes the slow digits and leaves the fast variables free; the enumerated variables
(``signal_layer``, ``line_layers``, ``leaves``) are set by the caller, one value at a time. Every
quantity here is a rigorous bound over all completions of the node (the brute-force enumeration in
tests/test_bounds.py is the reference):

* **line rows** -- a line's table row is a mixed-radix number of slot options
  (:meth:`.linetable.LineTable.index`); over a node the free slots run over their whole axis, so the
  least quantized loss and "some reachable row meets every line constraint (and the loss limit)"
  come from the table reduced (min / any) over those axes (:class:`RowBounds`).
* **several lines** (``problem.lines``, :mod:`.multiline`) -- every line has its own table, read
  through its view of the slots (:func:`.linelayers.view_slots`: its layer, its pair gap). The
  problem's line columns are the worst line's, so a candidate is line-feasible only when every
  line is: the node fails when for *some* line no reachable row of that line passes. The loss
  objective is the worst (or the ``loss_line``) line's quantized loss, ``max_k loss_k``; since
  ``min_x max_k loss_k(x) >= max_k min_x loss_k(x)``, the largest of the per-line least losses is a
  lower bound. The ``hatch_width`` column (it reads the slots, not only the row) is left out: a
  relaxation, the bound stays valid.
* **unbonded thickness** -- the total of an unbonded candidate (:func:`.faststrain.copper_strains`,
  :func:`.mechanics.mechanics`, the compiled ``_rows_groups``) is the bonded stack (the air gap,
  the left-out bond adhesive, keeps its thickness) plus, at every leaf boundary ``g``, the cover
  build the new leaf face receives: the top cover build when the film stays up, the bottom one
  when it goes down (:func:`.leaves.leaf_state`: up when ``place == 0``, or ``place == 2`` with
  the upper copper alone in its leaf). With the grouping set, the bound adds to the bonded bound
  the least reachable such build per boundary (of the known side when the placement is fixed).
* **leaf buildability** (constraint ``leaves``) -- with the grouping set, a boundary next to a
  copper that carries a line, or in a gap whose adhesive is fixed to one without a bond ply, makes
  every completion unbuildable (:func:`.leaves.leaf_state`); such a node is infeasible.
"""
from __future__ import annotations

from typing import Any

import numpy as np

from strainline.optimizer.inputs.study import OBJECTIVE_RESOLUTION
from strainline.optimizer.search.evaluation import quantize
from strainline.optimizer.search.linelayers import view_slots
from strainline.optimizer.search.linetable import _digit


class RowBounds:
    """Per-row loss and pass flags of one line table, reduced over the free slots of a node.

    Parameters
    ----------
    pb : Problem
        A one-line problem: the study's (one line) or one line problem of a multi-line study.
    loss_lim : float or None
        The study's loss limit, dB/m (a row over it fails).
    gap_key : object
        The free-set key of this line's pair-gap slot.
    """

    def __init__(self, pb: Any, loss_lim: float | None, gap_key: Any) -> None:
        tb = self.tb = pb.table
        rows = np.arange(tb.n_rows)
        ok = np.ones(tb.n_rows, bool)
        for v in pb._line_constraints(rows).values():
            ok &= np.asarray(v) <= 0
        loss = np.asarray(tb.loss_db_per_m, float)
        if loss_lim is not None:
            ok &= loss / loss_lim - 1.0 <= 0
        self.ok = ok
        self.loss = (pb.fast["loss_q"] if pb.fast is not None and "loss_q" in pb.fast
                     else quantize(loss, OBJECTIVE_RESOLUTION["loss"]))
        self.gap_key = gap_key
        self._cache: dict = {}

    def _key(self, slot: str, col: int) -> Any:
        if slot in ("cu", "film", "adh", "place"):
            return (slot, col)
        if slot == "cover":
            return "cover_top" if col == 0 else "cover_bot"
        return self.gap_key

    def __call__(self, slots: dict, free: set) -> tuple[np.ndarray, np.ndarray]:
        """Least quantized loss and 'some reachable row passes' of every node (``slots`` hold the
        fixed digits; free ones are ignored)."""
        tb = self.tb
        sig = slots["signal"]
        n = sig.shape[0]
        loss, ok = np.full(n, np.inf), np.zeros(n, bool)
        for s, dims in tb.dims.items():
            sel = np.flatnonzero(sig == s)
            if not len(sel):
                continue
            fr = tuple(self._key(sl, c) in free for sl, c, _ in dims)
            if (s, fr) not in self._cache:
                shape = tuple(size for _, _, size in dims)[::-1]
                off = tb.offset[s]
                cnt = int(np.prod(shape)) if shape else 1
                L = self.loss[off:off + cnt].reshape(shape)
                K = self.ok[off:off + cnt].reshape(shape)
                axes = tuple(len(dims) - 1 - j for j, f_ in enumerate(fr) if f_)
                self._cache[(s, fr)] = (L.min(axis=axes, keepdims=True).ravel() if axes else L.ravel(),
                                        K.any(axis=axes, keepdims=True).ravel() if axes else K.ravel())
            Lr, Kr = self._cache[(s, fr)]
            idx = np.zeros(len(sel), np.int64)
            stride = 1
            sub = {k: v[sel] for k, v in slots.items()}
            for (sl, c, size), f_ in zip(dims, fr):
                if not f_:
                    idx += _digit(sub, sl, c, tb.place_lut) * stride
                    stride *= size
            loss[sel], ok[sel] = Lr[idx], Kr[idx]
        return loss, ok


class LineBounds:
    """Line-table bounds of a node for one-line and multi-line problems (module docstring)."""

    def __init__(self, problem: Any) -> None:
        study = problem.space.study
        lim = study.limits.loss_db_per_m if "loss" in problem.constraint_names else None
        if problem.lines:
            self.multi = True
            self.tabs = [RowBounds(sub, lim, ("gap_opt", k)) for k, sub in enumerate(problem.lines)]
            name = study.loss_line
            self.loss_lines = [k for k, sub in enumerate(problem.lines)
                               if name is None or sub.space.study.line.name == name]
        else:
            self.multi = False
            self.tabs = [RowBounds(problem, lim, "gap_opt")]
            self.loss_lines = [0]

    def __call__(self, slots: dict, free: set) -> tuple[np.ndarray, np.ndarray]:
        """Lower bound of the loss objective (quantized, dB/m) and 'some completion may meet every
        line' per node, for one value of the enumerated variables."""
        n = slots["signal"].shape[0]
        loss, ok = np.full(n, -np.inf), np.ones(n, bool)
        for k, tab in enumerate(self.tabs):
            lk, okk = tab(view_slots(slots, k) if self.multi else slots, free)
            ok &= okk
            if k in self.loss_lines:
                np.maximum(loss, lk, out=loss)
        return loss, ok


def unbonded_extra(space: Any, slots: dict, free: set, ct_lo: np.ndarray, cb_lo: np.ndarray) -> np.ndarray:
    """Least thickness (m) the leaf boundaries add to the bonded stack, per node, with the grouping
    (``slots["leaves"]``) set: per boundary the least reachable top (``ct_lo``) or bottom
    (``cb_lo``) cover build, of the film's side where the placement fixes it."""
    mask = space.arr["leaf_mask"][slots["leaves"]]                 # (n, G)
    G = mask.shape[1]
    out = np.zeros(mask.shape[0])
    for g in range(G):
        b = mask[:, g]
        if not b.any():
            continue
        both = np.minimum(ct_lo, cb_lo)
        if ("place", g) in free:
            e = both
        else:
            p = slots["place"][:, g]
            alone = mask[:, g - 1] if g > 0 else np.ones(mask.shape[0], bool)
            up = (p == 0) | ((p == 2) & alone)
            e = np.where(up, ct_lo, cb_lo)
        out += np.where(b, e, 0.0)
    return out


def leaves_buildable(space: Any, slots: dict, free: set) -> np.ndarray:
    """False where every completion of the node is unbuildable (:func:`.leaves.leaf_state`): a
    boundary next to a line's copper, or in a gap whose adhesive is fixed to one without a bond."""
    mask = space.arr["leaf_mask"][slots["leaves"]]
    n, G = mask.shape
    ok = np.ones(n, bool)
    sigs = list(slots["signals"].T) if "signals" in slots else [slots["signal"]]
    adh_m, adh_t = space.arr["adh_m"], space.arr["adh_t"]
    for g in range(G):
        b = mask[:, g]
        for sig in sigs:
            ok &= ~(b & ((sig == g) | (sig == g + 1)))
        if ("adh", g) not in free:
            a = slots["adh"][:, g]
            ok &= ~(b & ~((adh_m[a] >= 0) & (adh_t[a] > 0)))
    return ok


__all__ = ["LineBounds", "RowBounds", "leaves_buildable", "unbonded_extra"]
