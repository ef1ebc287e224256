"""A 2-D quasi-static field solver for transmission-line cross-sections (pure numpy/scipy).

:func:`field_solve` gives Z0 and eps_eff (pairs: odd/even/differential/common-mode figures) of one
cross-section described by the closed forms' geometry record, with a mesh-convergence error
estimate; :func:`field_solve_width` solves the width for a target impedance. The finite-element
core is in :mod:`strainline.models.fields.grid`.
"""
from strainline.models.fields.crosssection import (
    FIELD_KINDS,
    FieldResult,
    WidthSolution,
    field_solve,
    field_solve_width,
    richardson,
)

__all__ = [
    "FIELD_KINDS", "FieldResult", "WidthSolution", "field_solve", "field_solve_width", "richardson",
]
