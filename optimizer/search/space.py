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

Decision variables are integers ``0 <= x_k < n_k``; a candidate index in ``[0, prod n_k)`` is their
mixed-radix number (first variable fastest), which the exhaustive search enumerates in chunks.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np

from strainline.models.units import UM
from strainline.optimizer.inputs.study import GAP_KINDS, NONE, Study

#: Copper-column index of copper layer i and the three gap columns of gap g (see module docstring).
PLACEMENTS: tuple[str, ...] = ("below", "above", "both")


def cu_col(i: int) -> int:
    """Column of copper layer ``i`` (0-based, top to bottom)."""
    return 2 + 4 * i


def gap_cols(g: int) -> tuple[int, int, int]:
    """Columns (adhesive above, film, adhesive below) of gap ``g`` (between copper g and g+1)."""
    return 3 + 4 * g, 4 + 4 * g, 5 + 4 * g


@dataclass(frozen=True)
class Material:
    """Per-material constants used by the batch decoder (SI)."""

    name: str
    family: str
    modulus_pa: float
    poisson: float
    dk: float
    df: float


@dataclass(frozen=True)
class Variable:
    """One integer decision variable: ``name``, number of values ``size``, value labels."""

    name: str
    size: int
    labels: tuple[str, ...]


@dataclass
class Decoded:
    """A decoded batch (struct of arrays; a row is a candidate, columns are layer positions)."""

    thickness_m: np.ndarray          # (n, L)
    modulus_pa: np.ndarray           # (n, L) effective (after coverage; plane strain if asked); 0 air
    raw_modulus_pa: np.ndarray       # (n, L) material modulus before coverage
    poisson: np.ndarray              # (n, L)
    dk: np.ndarray                   # (n, L) nan for copper
    df: np.ndarray                   # (n, L)
    material: np.ndarray             # (n, L) int code into Space.materials (-1 copper, -2 air, -3 empty)
    coverage: np.ndarray             # (n, L) copper coverage (1 elsewhere)
    fill_modulus_pa: np.ndarray      # (n, L) fill of copper columns (nan elsewhere)
    leaf: np.ndarray                 # (n, L) int
    is_air: np.ndarray               # (n, L) bool
    signal: np.ndarray               # (n,) copper index of the line
    cu_opt: np.ndarray               # (n, N) copper option index
    film_opt: np.ndarray             # (n, N-1)
    adh_opt: np.ndarray              # (n, N-1)
    place: np.ndarray                # (n, N-1)
    cover_top: np.ndarray            # (n,)
    cover_bot: np.ndarray            # (n,)
    gap_opt: np.ndarray              # (n,)
    cov_val: np.ndarray              # (n, N) copper coverage per copper layer


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
    variables: list[Variable] = field(default_factory=list)
    foils: list[Any] = field(default_factory=list)           # CopperFoil per cu option
    # option tables as arrays (filled in by build_space)
    arr: dict[str, np.ndarray] = field(default_factory=dict)
    blocks: dict[str, np.ndarray] = field(default_factory=dict)

    @property
    def _col(self) -> dict[str, int]:
        return {v.name: k for k, v in enumerate(self.variables)}

    @property
    def n_layers(self) -> int:
        return 4 * self.n_cu + 1

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
        m[[cu_col(i) for i in range(self.n_cu)]] = True
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
                    signal=signal, gap_opt=gap_opt, cov_val=cov_val.T)

    def decode(self, x: np.ndarray) -> Decoded:
        """Decode variable vectors (n, n_var) into (n, L) layer arrays."""
        s = self.slots(x)
        n = s["signal"].shape[0]
        N, L = self.n_cu, self.n_layers
        a = self.arr
        t = np.zeros((n, L))
        mat = np.full((n, L), -3, np.int64)   # -3 = empty position
        # covers: columns 0,1 (film, adhesive) top; L-2, L-1 (adhesive, film) bottom
        for (cf, ca), c in (((0, 1), s["cover_top"]), ((L - 1, L - 2), s["cover_bot"])):
            t[:, cf] = a["cover_tf"][c]
            mat[:, cf] = a["cover_mf"][c]
            t[:, ca] = a["cover_ta"][c]
            mat[:, ca] = a["cover_ma"][c]
        for i in range(N):
            t[:, cu_col(i)] = a["cu_t"][s["cu"][:, i]]
            mat[:, cu_col(i)] = -1
        for g in range(N - 1):
            ca, cf, cb = gap_cols(g)
            ta = a["adh_t"][s["adh"][:, g]]
            ma = a["adh_m"][s["adh"][:, g]]
            p = s["place"][:, g]
            t[:, cf] = a["film_t"][s["film"][:, g]]
            mat[:, cf] = a["film_m"][s["film"][:, g]]
            t[:, ca] = np.where(p >= 1, ta, 0.0)
            t[:, cb] = np.where(p != 1, ta, 0.0)
            mat[:, ca] = ma
            mat[:, cb] = ma
        mat = np.where((t > 0) | (mat == -1), mat, -3)
        # material constants by code (pad index for -1/-3)
        E_tab, nu_tab, dk_tab, df_tab = a["mat_E"], a["mat_nu"], a["mat_dk"], a["mat_df"]
        m_safe = np.where(mat >= 0, mat, 0)
        E = np.where(mat >= 0, E_tab[m_safe], 0.0)
        nu = np.where(mat >= 0, nu_tab[m_safe], 0.0)
        dk = np.where(mat >= 0, dk_tab[m_safe], np.nan)
        df = np.where(mat >= 0, df_tab[m_safe], np.nan)
        coverage = np.ones((n, L))
        fill = np.full((n, L), np.nan)
        fill_nu = np.zeros((n, L))
        is_adh = a["mat_adhesive"][m_safe] & (mat >= 0)
        for i in range(N):
            c = cu_col(i)
            E[:, c] = a["cu_E"][s["cu"][:, i]]
            nu[:, c] = a["cu_nu"][s["cu"][:, i]]
            coverage[:, c] = s["cov_val"][:, i]
            # nearest non-empty neighbour above / below (covers: film behind adhesive; gaps: film)
            up = [1, 0] if i == 0 else list(gap_cols(i - 1))[::-1][:2]
            dn = [L - 2, L - 1] if i == N - 1 else list(gap_cols(i))[:2]
            nb = []
            for cols in (up, dn):
                first = np.where(t[:, cols[0]] > 0, cols[0], cols[1])
                ok = t[np.arange(n), first] > 0
                nb.append((first, ok))
            (ua, uok), (da, dok) = nb
            rows = np.arange(n)
            u_adh = uok & is_adh[rows, ua]
            d_adh = dok & is_adh[rows, da]
            pick = np.where(u_adh, ua, np.where(d_adh, da, np.where(uok, ua, da)))
            has = uok | dok
            fill[:, c] = np.where(has, E[rows, pick], 0.0)
            fill_nu[:, c] = np.where(has, nu[rows, pick], 0.0)
        raw_E = E.copy()
        if self.study.bend.plane_strain:
            E = E / (1.0 - nu**2)
            fill_eff = fill / (1.0 - fill_nu**2)
        else:
            fill_eff = fill
        cu_mask = self.is_copper_col
        E_eff = np.where(cu_mask, coverage * E + (1.0 - coverage) * np.nan_to_num(fill_eff), E)
        # unbonded bend region: gaps not bordering the signal layer become air gaps
        is_air = np.zeros((n, L), bool)
        leaf = np.zeros((n, L), np.int64)
        if self.study.bend.region == "unbonded" and N > 1:
            is_air, leaf = self._leaves(s["signal"])
            E_eff = np.where(is_air, 0.0, E_eff)
            mat = np.where(is_air & (t > 0), -2, mat)
        return Decoded(
            thickness_m=t, modulus_pa=E_eff, raw_modulus_pa=raw_E, poisson=nu, dk=dk, df=df,
            material=mat, coverage=coverage, fill_modulus_pa=np.where(cu_mask, fill, np.nan),
            leaf=leaf, is_air=is_air, signal=s["signal"], cu_opt=s["cu"], film_opt=s["film"],
            adh_opt=s["adh"], place=s["place"], cover_top=s["cover_top"], cover_bot=s["cover_bot"],
            gap_opt=s["gap_opt"], cov_val=s["cov_val"],
        )

    def mechanics(self, x: np.ndarray, slots: dict[str, np.ndarray] | None = None
                  ) -> tuple[np.ndarray, np.ndarray, np.ndarray | None, dict[str, np.ndarray]]:
        """Fast decode of what the bend model needs: thickness (n, L), effective modulus (n, L), leaf.

        Equal to ``decode(x).thickness_m``, ``.modulus_pa`` and ``.leaf`` (a test checks), built from
        per-option column blocks gathered once per slot instead of per material field.

        Returns
        -------
        thickness_m, modulus_pa : ndarray, (n, L)
        leaf : ndarray of int (n, L), or None for a bonded bend region
        slots : dict
            The per-slot option indices (:meth:`slots`).
        """
        s = self.slots(x) if slots is None else slots
        b = self.blocks
        N, L = self.n_cu, self.n_layers
        n = s["signal"].shape[0]
        # built layer-major (L, n) so every write is contiguous; returned as (n, L) Fortran-order
        # views, which the bend model also reduces faster than C-order arrays
        tT = np.empty((L, n))
        eT = np.empty((L, n))
        ct, cb = s["cover_top"], s["cover_bot"]
        take = np.take
        tT[0:2] = take(b["cov_tT"], ct, axis=1)
        eT[0:2] = take(b["cov_ET"], ct, axis=1)
        tT[L - 2:] = take(b["cov_tT_rev"], cb, axis=1)
        eT[L - 2:] = take(b["cov_ET_rev"], cb, axis=1)
        n_adh = len(self.adh_opts)
        gcode = [(s["film"][:, g] * n_adh + s["adh"][:, g]) * 3 + s["place"][:, g] for g in range(N - 1)]
        for g in range(N - 1):
            c = 3 + 4 * g
            tT[c:c + 3] = take(b["gap_tT"], gcode[g], axis=1)
            eT[c:c + 3] = take(b["gap_ET"], gcode[g], axis=1)
        # copper: Voigt mix with the fill picked by the neighbours (one table gather per layer)
        n_cov = len(self.cover_opts)
        fill_flat = b["fill"].ravel()
        n_col = b["fill"].shape[1]
        for i in range(N):
            c = 2 + 4 * i
            up = ct if i == 0 else n_cov + gcode[i - 1]
            dn = cb if i == N - 1 else n_cov + gcode[i]
            fill = take(fill_flat, up * n_col + dn)
            cov = s["cov_val"][:, i]
            k = s["cu"][:, i]
            tT[c] = take(b["cu_t"], k)
            eT[c] = cov * (take(b["cu_E"], k) - fill) + fill
        t, e = tT.T, eT.T
        leaf = None
        if self.study.bend.region == "unbonded" and N > 1:
            is_air, leaf = self._leaves(s["signal"])
            e = np.where(is_air, 0.0, e)
        return t, e, leaf, s

    def _leaves(self, sig: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Air-gap mask and leaf ids (n, L): gaps not bordering the signal layer are unbonded."""
        n, L = sig.shape[0], self.n_layers
        is_air = np.zeros((n, L), bool)
        leaf = np.zeros((n, L), np.int64)
        k = np.zeros(n, np.int64)
        prev = np.zeros(n, bool)
        for c in range(L):
            g = (c - 3) // 4 if (3 <= c < L - 2 and c % 4 != 2) else -1
            air = (g != sig - 1) & (g != sig) if g >= 0 else np.zeros(n, bool)
            k = k + (air & ~prev) + (~air & prev)
            is_air[:, c] = air
            leaf[:, c] = k
            prev = air
        return is_air, leaf

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
    st = study.stack
    N = st.copper_layers
    materials: list[Material] = []
    mat_index: dict[str, int] = {}

    def mat(name: str) -> int:
        if name not in mat_index:
            d = catalog.dielectrics[name]
            mat_index[name] = len(materials)
            materials.append(Material(name, d.family, d.modulus_pa, d.poisson, d.dk, d.df))
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
    if st.signal_layer is not None:
        s0 = st.signal_layer - 1
        if s0 not in allowed:
            from strainline.optimizer.errors import StudyError
            where = "an outer" if kind not in ("stripline", "coupled-stripline") else "an inner"
            raise StudyError(
                f"{st.signal_layer} cannot carry a {kind} line; it must be {where} copper layer, one of "
                f"[{', '.join(str(a + 1) for a in allowed)}]",
                f"{study.source}: stack.signal_layer" if study.source else "stack.signal_layer")
        sig_opts: tuple[int, ...] = (s0,)
    else:
        sig_opts = tuple(sorted(set(allowed)))

    sp = Space(study, N, materials, mat_index, cover_opts, cu_opts, film_opts, adh_opts, place_opts,
               tuple(st.ground_coverage), gap_opts, sig_opts, foils=foils)
    # variables
    V: list[Variable] = []
    half_cu = (N + 1) // 2 if st.symmetric else N
    half_gap = N // 2 if st.symmetric else N - 1
    cu_labels = tuple(f"{w} {f}" for w, f, _ in cu_opts)
    film_labels = tuple(f"{materials[m].name} {_fmt_um(tm)}" for m, tm in film_opts)
    adh_labels = tuple(NONE if m < 0 else f"{materials[m].name} {_fmt_um(tm)}" for m, tm in adh_opts)
    if len(sig_opts) > 1:
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
    if len(sp.cov_opts) > 1:
        n_cov_vars = (N + 1) // 2 if st.symmetric else N - 1
        for j in range(n_cov_vars):
            V.append(Variable(f"coverage[{j}]", len(sp.cov_opts), tuple(f"{c:g}" for c in sp.cov_opts)))
    if len(gap_opts) > 1:
        V.append(Variable("line_gap", len(gap_opts), tuple(_fmt_um(g) for g in gap_opts)))
    sp.variables = [v for v in V if v.size >= 1]
    # option arrays
    sp.arr = {
        "cover_tf": np.array([c[2] for c in cover_opts]),
        "cover_mf": np.array([c[1] for c in cover_opts], np.int64),
        "cover_ta": np.array([c[4] for c in cover_opts]),
        "cover_ma": np.array([c[3] for c in cover_opts], np.int64),
        "cu_t": np.array([c[2] for c in cu_opts]),
        "cu_E": np.array([f.modulus_pa for f in foils]),
        "cu_nu": np.array([f.poisson for f in foils]),
        "cu_Su": np.array([f.tensile_strength_pa for f in foils]),
        "cu_Df": np.array([f.fatigue_ductility for f in foils]),
        "cu_rq": np.array([f.roughness_rq_m for f in foils]),
        "cu_sigma": np.array([f.conductivity_s_per_m for f in foils]),
        "film_t": np.array([f[1] for f in film_opts]),
        "film_m": np.array([f[0] for f in film_opts], np.int64),
        "adh_t": np.array([a[1] for a in adh_opts]),
        "adh_m": np.array([a[0] for a in adh_opts], np.int64),
        "mat_E": np.array([m.modulus_pa for m in materials] or [0.0]),
        "mat_nu": np.array([m.poisson for m in materials] or [0.0]),
        "mat_dk": np.array([m.dk for m in materials] or [1.0]),
        "mat_df": np.array([m.df for m in materials] or [0.0]),
        "mat_adhesive": np.array([m.family == "adhesive" for m in materials] or [False]),
    }
    sp.blocks = _blocks(sp)
    return sp


def _blocks(sp: Space) -> dict[str, np.ndarray]:
    """Per-option column blocks for :meth:`Space.mechanics` (plane-strain moduli if asked)."""
    a = sp.arr
    ps = sp.study.bend.plane_strain

    def E_of(m: np.ndarray) -> np.ndarray:
        ms = np.where(m >= 0, m, 0)
        e = a["mat_E"][ms] / ((1.0 - a["mat_nu"][ms] ** 2) if ps else 1.0)
        return np.where(m >= 0, e, 0.0)

    def adh_of(m: np.ndarray) -> np.ndarray:
        return (m >= 0) & a["mat_adhesive"][np.where(m >= 0, m, 0)]

    # covers: columns (film, adhesive) as seen from the top; the copper side is the adhesive
    tf, ta, mf, ma = a["cover_tf"], a["cover_ta"], a["cover_mf"], a["cover_ma"]
    cov_t = np.stack([tf, ta], axis=1)
    cov_E = np.stack([E_of(mf), E_of(ma)], axis=1)
    near_adh = ta > 0
    cov_fE = np.where(near_adh, E_of(ma), np.where(tf > 0, E_of(mf), 0.0))
    cov_fadh = np.where(near_adh, adh_of(ma), adh_of(mf) & (tf > 0))
    cov_fok = (ta > 0) | (tf > 0)
    # gaps: combined code (film * n_adh + adh) * 3 + placement -> columns (adh above, film, adh below)
    nf, na = len(sp.film_opts), len(sp.adh_opts)
    f_i, a_i, p_i = np.meshgrid(np.arange(nf), np.arange(na), np.arange(3), indexing="ij")
    f_i, a_i, p_i = f_i.ravel(), a_i.ravel(), p_i.ravel()
    gtf, gmf = a["film_t"][f_i], a["film_m"][f_i]
    gta, gma = a["adh_t"][a_i], a["adh_m"][a_i]
    gta = np.where(gma >= 0, gta, 0.0)
    t_up = np.where(p_i >= 1, gta, 0.0)
    t_dn = np.where(p_i != 1, gta, 0.0)
    gap_t = np.stack([t_up, gtf, t_dn], axis=1)
    Ea, Ef = E_of(gma), E_of(gmf)
    gap_E = np.stack([np.where(t_up > 0, Ea, 0.0), Ef, np.where(t_dn > 0, Ea, 0.0)], axis=1)
    # fill of a copper layer from its two neighbours: rows = neighbour above (cover options, then gap
    # codes seen from below), columns = neighbour below (cover options, then gap codes seen from
    # above). Rule of resolve_fills: adjacent adhesive above, else below, else dielectric above,
    # else below, else air (0).
    ue = np.concatenate([cov_fE, np.where(t_dn > 0, Ea, Ef)])
    ua = np.concatenate([cov_fadh, (t_dn > 0) & adh_of(gma)])
    uok = np.concatenate([cov_fok, np.ones(len(gtf), bool)])
    de = np.concatenate([cov_fE, np.where(t_up > 0, Ea, Ef)])
    da = np.concatenate([cov_fadh, (t_up > 0) & adh_of(gma)])
    dok = uok.copy()
    UE, DE = ue[:, None], de[None, :]
    UA, DA, UOK, DOK = (ua & uok)[:, None], (da & dok)[None, :], uok[:, None], dok[None, :]
    fill = np.where(UA, UE, np.where(DA, DE, np.where(UOK, UE, np.where(DOK, DE, 0.0))))
    return {
        "fill": np.ascontiguousarray(np.broadcast_to(fill, (len(ue), len(de)))),
        "cov_t_rev": cov_t[:, ::-1].copy(), "cov_E_rev": cov_E[:, ::-1].copy(),
        "cov_tT": np.ascontiguousarray(cov_t.T), "cov_ET": np.ascontiguousarray(cov_E.T),
        "cov_tT_rev": np.ascontiguousarray(cov_t[:, ::-1].T), "cov_ET_rev": np.ascontiguousarray(cov_E[:, ::-1].T),
        "gap_tT": np.ascontiguousarray(gap_t.T), "gap_ET": np.ascontiguousarray(gap_E.T),
        "cov_t": cov_t, "cov_E": cov_E, "cov_fE": cov_fE, "cov_fadh": cov_fadh, "cov_fok": cov_fok,
        "cu_t": a["cu_t"], "cu_E": a["cu_E"] / ((1.0 - a["cu_nu"] ** 2) if ps else 1.0),
        "gap_t": gap_t, "gap_E": gap_E,
        "gap_upE": np.where(t_up > 0, Ea, Ef), "gap_upadh": (t_up > 0) & adh_of(gma),
        "gap_dnE": np.where(t_dn > 0, Ea, Ef), "gap_dnadh": (t_dn > 0) & adh_of(gma),
    }


__all__ = ["Space", "Decoded", "Variable", "build_space", "cu_col", "gap_cols"]
