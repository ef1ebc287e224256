"""The design space of a study: integer-coded choices <-> stackups, decoded in batch.

The stack family
----------------
A study with N copper layers searches stacks built from this template, top to bottom::

    top cover (film, adhesive)  |  Cu 1  |  gap 1  |  Cu 2  | ... |  Cu N  |  bottom cover (adhesive, film)

and every gap between two copper layers is ``[adhesive, film, adhesive]``: a dielectric film (or
adhesiveless core) with its bond adhesive below it, above it, or on both sides (``placement``;
a fixed order always uses both sides, the classic adhesive-based laminate; adhesive ``none`` gives
an adhesiveless build). Unused positions have zero thickness, so every candidate maps onto the same
``L = 4 N + 1`` columns and a batch is a set of (n, L) arrays (a row is a candidate).

One copper layer carries the line (``signal``); every other copper layer is a ground plane with a
coverage chosen from ``stack.ground_coverage`` (1 = solid, below 1 = hatched). A microstrip or
coplanar line sits on an outer copper layer under its cover, its plane being the adjacent copper; a
stripline sits on an inner copper layer between the two adjacent copper layers.

In a symmetric study only the top half is coded and the bottom half mirrors it (the middle gap of
an even number of gaps uses adhesive on both sides of its film).

Unbonded bend region: each gap widens to seven columns ``[cover adhesive, cover film, adhesive, film,
adhesive, cover film, cover adhesive]``; at a leaf boundary one adhesive becomes air and the copper
face that borders it takes the study's cover (:mod:`.leaves`). ``Space.cu_col`` and
``Space.gap_cols`` give the columns of either layout.

Decision variables are integers ``0 <= x_k < n_k``; a candidate index in ``[0, prod n_k)`` is their
mixed-radix number (first variable fastest), which the exhaustive search enumerates in chunks.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np

from strainline.models.units import UM
from strainline.optimizer.inputs.study import GAP_KINDS, NONE, Study
from strainline.optimizer.search.columns import Decoded, cover_cols, cu_col, gap_cols, option_arrays  # noqa: F401
from strainline.optimizer.search.leaves import label as leaf_label, leaf_options

#: Copper-column index of copper layer i and the three gap columns of gap g (see module docstring).
PLACEMENTS: tuple[str, ...] = ("below", "above", "both")


@dataclass(frozen=True)
class Material:
    """Per-material constants used by the batch decoder (SI)."""

    name: str
    family: str
    modulus_pa: float
    poisson: float
    dk: float
    df: float
    elongation: float = np.inf      # tensile elongation at break, fraction
    glass: bool = False             # woven-glass reinforced
    min_radius_m: float = 0.0       # minimum bend radius the catalog gives (0: none)


@dataclass(frozen=True)
class Variable:
    """One integer decision variable: ``name``, number of values ``size``, value labels."""

    name: str
    size: int
    labels: tuple[str, ...]


@dataclass
class Space:
    """The integer-coded design space of a study (see module docstring)."""

    study: Study
    n_cu: int
    materials: list[Material]
    mat_index: dict[str, int]
    cover_opts: list[tuple[str, int, float, int, float]]     # (label, film mat, t, adh mat, t); mat -3 none
    cu_opts: list[tuple[str, str, float]]                    # (weight key, foil key, thickness m)
    film_opts: list[tuple[int, float]]                       # (mat, t)
    adh_opts: list[tuple[int, float]]                        # (mat or -3 for none, t)
    place_opts: tuple[int, ...]
    cov_opts: tuple[float, ...]
    gap_opts: tuple[float, ...]                              # m; (nan,) when unused
    sig_opts: tuple[int, ...]
    leaf_opts: list[tuple[bool, ...]] = field(default_factory=list)   # boundary masks (:mod:`.leaves`)
    variables: list[Variable] = field(default_factory=list)
    foils: list[Any] = field(default_factory=list)           # CopperFoil per cu option
    # option tables as arrays (filled in by build_space)
    arr: dict[str, np.ndarray] = field(default_factory=dict)
    blocks: dict[str, np.ndarray] = field(default_factory=dict)
    #: Several lines (:mod:`.linelayers`): per ``line_layers`` option, the 0-based copper layer of each
    #: line (M, K) and the coverage of every copper layer (M, N); None for a one-line study.
    line_sig: np.ndarray | None = None
    line_cov: np.ndarray | None = None
    #: Several lines: the pair-gap options of each line, m ((nan,) for a line without a gap).
    line_gaps: list[tuple[float, ...]] = field(default_factory=list)

    @property
    def multi(self) -> bool:
        """True when the study holds several lines (one ``line_layers`` variable places them)."""
        return self.line_sig is not None

    @property
    def _col(self) -> dict[str, int]:
        return {v.name: k for k, v in enumerate(self.variables)}

    @property
    def unbonded(self) -> bool:
        """True for an unbonded bend region with more than one copper layer (seven-column gaps)."""
        return self.study.bend.region == "unbonded" and self.n_cu > 1

    @property
    def gap_width(self) -> int:
        return 7 if self.unbonded else 3

    def cu_col(self, i: int) -> int:
        return cu_col(i, self.gap_width)

    def gap_cols(self, g: int) -> tuple[int, int, int]:
        return gap_cols(g, self.gap_width)

    @property
    def n_layers(self) -> int:
        return 4 + self.n_cu + self.gap_width * (self.n_cu - 1)

    @property
    def sizes(self) -> np.ndarray:
        return np.array([v.size for v in self.variables], dtype=np.int64)

    @property
    def size(self) -> int:
        """Number of points of the space (exact Python integer)."""
        out = 1
        for v in self.variables:
            out *= v.size
        return out

    @property
    def is_copper_col(self) -> np.ndarray:
        m = np.zeros(self.n_layers, bool)
        m[[self.cu_col(i) for i in range(self.n_cu)]] = True
        return m

    # ------------------------------------------------------------------ encoding
    def index_to_x(self, index: np.ndarray) -> np.ndarray:
        """Mixed-radix digits (n, n_var) of candidate indices (first variable fastest)."""
        idx = np.asarray(index, dtype=np.int64).copy()
        out = np.empty((idx.size, len(self.variables)), dtype=np.int64, order="F")   # x.T contiguous
        for k, v in enumerate(self.variables):
            idx, out[:, k] = np.divmod(idx, v.size)
        return out

    def x_to_index(self, x: np.ndarray) -> np.ndarray:
        """Inverse of :meth:`index_to_x` (int64; only for spaces below 2**62)."""
        x = np.asarray(x, dtype=np.int64)
        idx = np.zeros(x.shape[0], dtype=np.int64)
        for k in range(len(self.variables) - 1, -1, -1):
            idx = idx * self.variables[k].size + x[:, k]
        return idx

    def repair(self, x: np.ndarray) -> np.ndarray:
        """Clip real or integer vectors onto the integer grid of the space."""
        x = np.rint(np.asarray(x, dtype=float)).astype(np.int64)
        return np.clip(x, 0, self.sizes - 1)

    # ------------------------------------------------------------------ decoding
    def slots(self, x: np.ndarray) -> dict[str, np.ndarray]:
        """Per-slot option indices of a batch of variable vectors (applies the symmetry)."""
        xt = np.ascontiguousarray(np.asarray(x, dtype=np.int64).T)    # one contiguous row per variable
        n = xt.shape[1]
        N = self.n_cu
        col = self._col
        zero = np.zeros(n, np.int64)

        def get(name: str) -> np.ndarray:
            k = col.get(name)
            return xt[k] if k is not None else zero

        sym = self.study.stack.symmetric
        G = max(N - 1, 0)
        # built layer-major ((N, n) C-order) so every write is contiguous; returned as (n, N)
        # Fortran-order views whose columns are contiguous for the per-layer readers
        cu = np.empty((N, n), np.int64)
        film = np.empty((G, n), np.int64)
        adh = np.empty((G, n), np.int64)
        place = np.empty((G, n), np.int64)
        place_tab = np.asarray(self.place_opts, np.int64)
        for i in range(N):
            cu[i] = get(f"copper[{min(i, N - 1 - i) if sym else i}]")
        for g in range(G):
            src = min(g, N - 2 - g) if sym else g
            film[g] = get(f"film[{src}]")
            adh[g] = get(f"adhesive[{src}]")
            if sym and g == N - 2 - g:
                place[g] = 2                       # the middle gap of a symmetric stack
                continue
            k = col.get(f"placement[{src}]")
            if k is None:
                p0 = int(place_tab[0])
                place[g] = (p0 if p0 == 2 else 1 - p0) if (sym and g != src) else p0
                continue
            p = np.take(place_tab, xt[k])
            if sym and g != src:
                p = np.where(p == 2, 2, 1 - p)     # mirrored gap: below <-> above
            place[g] = p
        cover_top = get("cover[top]")
        cover_bot = cover_top if sym else get("cover[bottom]")
        if self.line_sig is not None:
            # several lines: one variable places every line and sets every layer's coverage
            opt = get("line_layers")
            signals = self.line_sig[opt]                                  # (n, K)
            gap_opts = np.stack([get(f"gap[{ln.name}]") for ln in self.study.lines], axis=1)
            return dict(cu=cu.T, film=film.T, adh=adh.T, place=place.T, cover_top=cover_top, cover_bot=cover_bot,
                        signal=np.ascontiguousarray(signals[:, 0]), gap_opt=np.ascontiguousarray(gap_opts[:, 0]),
                        cov_val=self.line_cov[opt], leaves=get("leaves"), signals=signals, gap_opts=gap_opts)
        signal = np.take(np.asarray(self.sig_opts, np.int64), get("signal_layer"))
        gap_opt = get("line_gap")
        cov_tab = np.asarray(self.cov_opts, float)
        cov_val = np.empty((N, n))
        scov = self.study.stack.signal_coverage
        if sym:
            for i in range(N):
                cov_val[i] = np.take(cov_tab, get(f"coverage[{min(i, N - 1 - i)}]"))
            for i in range(N):
                np.copyto(cov_val[i], scov, where=signal == i)
        elif N == 1:
            cov_val[0] = scov
        else:
            # ground j counts the copper layers other than the signal, top to bottom: copper i is
            # ground i above the signal and ground i - 1 below it
            C = [np.take(cov_tab, get(f"coverage[{j}]")) for j in range(N - 1)]

            def value(i: int, s: int):
                return scov if i == s else (C[i] if i < s else C[i - 1])

            sig_opts = self.sig_opts
            first = signal == sig_opts[0] if len(sig_opts) > 1 else None
            for i in range(N):
                if len(sig_opts) == 1:
                    cov_val[i] = value(i, sig_opts[0])
                elif len(sig_opts) == 2:
                    np.copyto(cov_val[i], np.where(first, value(i, sig_opts[0]), value(i, sig_opts[1])))
                else:
                    cov_val[i] = value(i, sig_opts[-1])
                    for s_ in sig_opts[:-1]:
                        np.copyto(cov_val[i], value(i, s_), where=signal == s_)
        return dict(cu=cu.T, film=film.T, adh=adh.T, place=place.T, cover_top=cover_top, cover_bot=cover_bot,
                    signal=signal, gap_opt=gap_opt, cov_val=cov_val.T, leaves=get("leaves"))

    def decode(self, x: np.ndarray) -> Decoded:
        """Decode variable vectors (n, n_var) into (n, L) layer arrays (:func:`.mechanics.decode`)."""
        from strainline.optimizer.search.mechanics import decode
        return decode(self, x)

    def mechanics(self, x: np.ndarray, slots: dict[str, np.ndarray] | None = None):
        """Thickness, effective modulus and leaf ids (n, L) and the slots (:func:`.mechanics.mechanics`)."""
        from strainline.optimizer.search.mechanics import mechanics
        return mechanics(self, x, slots)


    def describe(self, x: np.ndarray) -> dict[str, str]:
        """Human-readable value of every variable of one candidate."""
        x = np.asarray(x, dtype=np.int64).ravel()
        return {v.name: v.labels[int(xi)] for v, xi in zip(self.variables, x)}


def _fmt_um(m: float) -> str:
    return f"{m / UM:g}um"


def build_space(study: Study, catalog: Any) -> Space:
    """Build the integer-coded space of ``study`` from the catalog.

    Parameters
    ----------
    study : Study
        A validated study.
    catalog : Catalog
        The material catalog (``strainline.optimizer.inputs.catalog.load_catalog``).
    """
    from strainline.optimizer.search.guard import apply_default_guard

    # the impedance yield is the default guard when the catalog knows the tolerances (:mod:`.guard`)
    study = apply_default_guard(study, catalog)
    st = study.stack
    N = st.copper_layers
    materials: list[Material] = []
    mat_index: dict[str, int] = {}

    def mat(name: str) -> int:
        if name not in mat_index:
            d = catalog.dielectrics[name]
            mat_index[name] = len(materials)
            materials.append(Material(name, d.family, d.modulus_pa, d.poisson, d.dk, d.df, d.elongation,
                                      d.glass_reinforced, float(getattr(d, "min_bend_radius_m", None) or 0.0)))
        return mat_index[name]

    # covers
    cover_opts: list[tuple[str, int, float, int, float]] = []
    for name in st.coverlay:
        if name == NONE:
            cover_opts.append((NONE, -3, 0.0, -3, 0.0))
        elif name in catalog.coverlays:
            cl = catalog.coverlays[name]
            for tf, ta in cl.builds_m:
                cover_opts.append((f"{name} {_fmt_um(tf)}/{_fmt_um(ta)}", mat(cl.film), tf, mat(cl.adhesive), ta))
        else:
            for tf in catalog.dielectrics[name].thicknesses_m:
                cover_opts.append((f"{name} {_fmt_um(tf)}", mat(name), tf, -3, 0.0))
    # copper
    cu_opts = []
    foils = []
    for w in st.copper_weights:
        for f in st.copper_types:
            cu_opts.append((w, f, catalog.weights[w].thickness_m))
            foils.append(catalog.foils[f])
    # gap films and adhesives
    film_opts = []
    for name in st.dielectric:
        ths = st.dielectric_thickness_um.get(name)
        ths_m = tuple(v * UM for v in ths) if ths else catalog.dielectrics[name].thicknesses_m
        film_opts += [(mat(name), tm) for tm in ths_m]
    adh_opts = []
    for name in st.adhesive:
        if name == NONE:
            adh_opts.append((-3, 0.0))
            continue
        ths = st.adhesive_thickness_um.get(name)
        ths_m = tuple(v * UM for v in ths) if ths else catalog.dielectrics[name].thicknesses_m
        adh_opts += [(mat(name), tm) for tm in ths_m]
    has_adh = any(m >= 0 for m, _ in adh_opts)
    place_opts: tuple[int, ...] = (0, 1, 2) if (st.order == "free" and has_adh) else (2,)
    gap_opts = tuple(g * UM for g in study.line.gap_um) if study.line.type in GAP_KINDS else (float("nan"),)
    # signal positions allowed for the line type
    kind = study.line.type
    if kind in ("stripline", "coupled-stripline"):
        allowed = tuple(range(1, N - 1))
    else:
        allowed = (0, N - 1) if N > 1 else (0,)
    fixed = study.line.layer if study.line.layer is not None else st.signal_layer
    if fixed is not None:
        s0 = fixed - 1
        if s0 not in allowed:
            from strainline.optimizer.errors import StudyError
            where = "an outer" if kind not in ("stripline", "coupled-stripline") else "an inner"
            raise StudyError(
                f"{fixed} cannot carry a {kind} line; it must be {where} copper layer, one of "
                f"[{', '.join(str(a + 1) for a in allowed)}]",
                f"{study.source}: stack.signal_layer" if study.source else "stack.signal_layer")
        sig_opts: tuple[int, ...] = (s0,)
    else:
        sig_opts = tuple(sorted(set(allowed)))
    line_sig = line_cov = None
    line_labels: list[str] = []
    if len(study.lines) > 1:
        from strainline.optimizer.search.linelayers import layer_options
        line_sig, line_cov, line_labels = layer_options(study, N, tuple(st.ground_coverage))
        sig_opts = tuple(sorted({int(v) for v in line_sig.ravel()}))

    sp = Space(study, N, materials, mat_index, cover_opts, cu_opts, film_opts, adh_opts, place_opts,
               tuple(st.ground_coverage), gap_opts, sig_opts, leaf_options(study, N, sig_opts), foils=foils,
               line_sig=line_sig, line_cov=line_cov,
               line_gaps=[tuple(g * UM for g in ln.gap_um) if ln.gap_um else (float("nan"),) for ln in study.lines])
    # variables
    V: list[Variable] = []
    half_cu = (N + 1) // 2 if st.symmetric else N
    half_gap = N // 2 if st.symmetric else N - 1
    cu_labels = tuple(f"{w} {f}" for w, f, _ in cu_opts)
    film_labels = tuple(f"{materials[m].name} {_fmt_um(tm)}" for m, tm in film_opts)
    adh_labels = tuple(NONE if m < 0 else f"{materials[m].name} {_fmt_um(tm)}" for m, tm in adh_opts)
    if line_sig is not None:
        if len(line_labels) > 1:
            V.append(Variable("line_layers", len(line_labels), tuple(line_labels)))
    elif len(sig_opts) > 1:
        V.append(Variable("signal_layer", len(sig_opts), tuple(f"copper {s + 1}" for s in sig_opts)))
    for i in range(half_cu):
        V.append(Variable(f"copper[{i}]", len(cu_opts), cu_labels))
    for g in range(half_gap):
        V.append(Variable(f"film[{g}]", len(film_opts), film_labels))
        V.append(Variable(f"adhesive[{g}]", len(adh_opts), adh_labels))
        middle = st.symmetric and g == N - 2 - g
        if len(place_opts) > 1 and not middle:
            V.append(Variable(f"placement[{g}]", len(place_opts), tuple(PLACEMENTS[p] for p in place_opts)))
    V.append(Variable("cover[top]", len(cover_opts), tuple(c[0] for c in cover_opts)))
    if not st.symmetric:
        V.append(Variable("cover[bottom]", len(cover_opts), tuple(c[0] for c in cover_opts)))
    if len(sp.cov_opts) > 1 and line_sig is None:
        n_cov_vars = (N + 1) // 2 if st.symmetric else N - 1
        for j in range(n_cov_vars):
            V.append(Variable(f"coverage[{j}]", len(sp.cov_opts), tuple(f"{c:g}" for c in sp.cov_opts)))
    if line_sig is not None:
        for ln, gaps in zip(study.lines, sp.line_gaps):
            if len(gaps) > 1:
                V.append(Variable(f"gap[{ln.name}]", len(gaps), tuple(_fmt_um(g) for g in gaps)))
    elif len(gap_opts) > 1:
        V.append(Variable("line_gap", len(gap_opts), tuple(_fmt_um(g) for g in gap_opts)))
    if len(sp.leaf_opts) > 1:
        V.append(Variable("leaves", len(sp.leaf_opts), tuple(leaf_label(m) for m in sp.leaf_opts)))
    sp.variables = [v for v in V if v.size >= 1]
    # option arrays
    sp.arr = option_arrays(sp)
    from strainline.optimizer.search.mechanics import blocks
    sp.blocks = blocks(sp)
    return sp


__all__ = ["Space", "Decoded", "Variable", "build_space", "cu_col", "gap_cols", "cover_cols"]
