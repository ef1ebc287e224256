"""Lines over hatched (cross-hatched) reference planes: a 3-D quasi-static field solver.

* :class:`Hatch`, :func:`hatch_fill`, :func:`hatch_width_for_fill`: the copper pattern and its fill;
* :func:`hatch_solve`: Z0, eps_eff, C, C_a and the hatch factor over one period of the hatch;
* :func:`hatch_solve_width`: trace width for a target impedance over the hatch;
* :func:`no_plane_impedance`: the same line with the plane removed (the upper bound);
* :func:`bragg_frequency_hz`, :func:`quasi_static_limit_hz`: where the quasi-static picture ends.

Method, sources and limits: :mod:`strainline.models.hatch.solver`.
"""
from strainline.models.hatch.geometry import (
    HATCH_ANGLES,
    HATCH_POSITIONS,
    Hatch,
    hatch_fill,
    hatch_width_for_fill,
)
from strainline.models.hatch.section import (
    HATCH_KINDS,
    HatchResult,
    bragg_frequency_hz,
    quasi_static_limit_hz,
)
from strainline.models.hatch.solver import (
    SOLVER_VERSION,
    HatchWidth,
    hatch_solve,
    hatch_solve_width,
    no_plane_impedance,
)

__all__ = [
    "HATCH_ANGLES",
    "HATCH_KINDS",
    "HATCH_POSITIONS",
    "SOLVER_VERSION",
    "Hatch",
    "HatchResult",
    "HatchWidth",
    "bragg_frequency_hz",
    "hatch_fill",
    "hatch_solve",
    "hatch_solve_width",
    "hatch_width_for_fill",
    "no_plane_impedance",
    "quasi_static_limit_hz",
]
