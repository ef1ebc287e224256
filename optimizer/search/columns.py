"""Column layout of the stack template (:mod:`.space`) and the decoded batch record.

Columns run top to bottom: top cover (film, adhesive), then copper 1, gap 1, copper 2, ... copper N,
then the bottom cover (adhesive, film). A gap is three columns ``[adhesive, film, adhesive]`` in a
bonded bend region and seven ``[cover adhesive, cover film, adhesive, film, adhesive, cover film,
cover adhesive]`` in an unbonded one (:mod:`.leaves`).
"""
from __future__ import annotations

from dataclasses import dataclass

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



__all__ = ["Decoded", "cu_col", "gap_cols", "cover_cols"]
