"""Column layout of the stack template (:mod:`.space`) and the decoded batch record.

Columns run top to bottom: top cover (film, adhesive), then copper 1, gap 1, copper 2, ... copper N,
then the bottom cover (adhesive, film). A gap is three columns ``[adhesive, film, adhesive]`` in a
bonded bend region and seven ``[cover adhesive, cover film, adhesive, film, adhesive, cover film,
cover adhesive]`` in an unbonded one (:mod:`.leaves`).
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np


def cu_col(i: int, width: int = 3) -> int:
    """Column of copper layer ``i`` (0-based, top to bottom); ``width`` columns per gap (3 bonded, 7 unbonded)."""
    return 2 + (width + 1) * i


def gap_cols(g: int, width: int = 3) -> tuple[int, int, int]:
    """Columns (adhesive above, film, adhesive below) of gap ``g`` (between copper g and g+1)."""
    c = cu_col(g, width) + 1 + (2 if width == 7 else 0)
    return c, c + 1, c + 2


def cover_cols(g: int, width: int = 7) -> tuple[int, int, int, int]:
    """Unbonded layout: (adhesive, film) of the cover under copper g, (film, adhesive) of the cover
    over copper g+1, at gap ``g``."""
    c = cu_col(g, width) + 1
    return c, c + 1, c + 5, c + 6


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
    fill_material: np.ndarray        # (n, L) int code of the fill of copper columns (-2 air; -3 elsewhere)
    buildable: np.ndarray            # (n,) bool: the leaf grouping can be built (always True when bonded)
    signal: np.ndarray               # (n,) copper index of the line
    cu_opt: np.ndarray               # (n, N) copper option index
    film_opt: np.ndarray             # (n, N-1)
    adh_opt: np.ndarray              # (n, N-1)
    place: np.ndarray                # (n, N-1)
    cover_top: np.ndarray            # (n,)
    cover_bot: np.ndarray            # (n,)
    gap_opt: np.ndarray              # (n,)
    cov_val: np.ndarray              # (n, N) copper coverage per copper layer



def option_arrays(sp: Any) -> dict[str, np.ndarray]:
    """The option tables of a space as arrays (SI), for the batch decoder and the line tables."""
    from strainline.models.stackup import FLOWING_FAMILIES

    return {
        "cover_tf": np.array([c[2] for c in sp.cover_opts]),
        "cover_mf": np.array([c[1] for c in sp.cover_opts], np.int64),
        "cover_ta": np.array([c[4] for c in sp.cover_opts]),
        "cover_ma": np.array([c[3] for c in sp.cover_opts], np.int64),
        "cu_t": np.array([c[2] for c in sp.cu_opts]),
        "cu_E": np.array([f.modulus_pa for f in sp.foils]),
        "cu_nu": np.array([f.poisson for f in sp.foils]),
        "cu_Su": np.array([f.tensile_strength_pa for f in sp.foils]),
        "cu_Df": np.array([f.fatigue_ductility for f in sp.foils]),
        "cu_rq": np.array([f.roughness_rq_m for f in sp.foils]),
        "cu_sigma": np.array([f.conductivity_s_per_m for f in sp.foils]),
        "film_t": np.array([f[1] for f in sp.film_opts]),
        "film_m": np.array([f[0] for f in sp.film_opts], np.int64),
        "adh_t": np.array([a[1] for a in sp.adh_opts]),
        "adh_m": np.array([a[0] for a in sp.adh_opts], np.int64),
        "mat_E": np.array([m.modulus_pa for m in sp.materials] or [0.0]),
        "mat_nu": np.array([m.poisson for m in sp.materials] or [0.0]),
        "mat_dk": np.array([m.dk for m in sp.materials] or [1.0]),
        "mat_df": np.array([m.df for m in sp.materials] or [0.0]),
        "mat_adhesive": np.array([m.family == "adhesive" for m in sp.materials] or [False]),
        "mat_flows": np.array([m.family in FLOWING_FAMILIES for m in sp.materials] or [False]),
        "mat_elong": np.array([m.elongation for m in sp.materials] or [np.inf]),
        "mat_glass": np.array([m.glass for m in sp.materials] or [False]),
        "mat_rmin": np.array([m.min_radius_m for m in sp.materials] or [0.0]),
        "leaf_mask": np.array(sp.leaf_opts, bool).reshape(len(sp.leaf_opts), max(sp.n_cu - 1, 0)),
    }


__all__ = ["Decoded", "cu_col", "gap_cols", "cover_cols", "option_arrays"]
