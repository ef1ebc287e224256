"""Unit conversions and physical constants (SI inside, units in names at the edges).

The electromagnetic constants are literals, so importing this module costs nothing (no
:mod:`scipy.constants`): the speed of light is exact by the 2019 SI definition of the metre
(BIPM, The International System of Units, 9th ed., 2019); the vacuum permeability and permittivity
are the CODATA 2022 recommended values (Mohr, Newell, Taylor & Tiesinga, NIST 2024; the values
scipy.constants carries), no longer exact since the 2019 SI redefinition.
"""
from __future__ import annotations

import math

#: Speed of light in vacuum, m/s (exact, SI 2019).
C0: float = 299792458.0
#: Vacuum permeability, H/m (CODATA 2022: 1.25663706127(20)e-6).
MU0: float = 1.25663706127e-06
#: Vacuum permittivity, F/m (CODATA 2022: 8.8541878188(14)e-12).
EPS0: float = 8.8541878188e-12
#: Free-space wave impedance sqrt(mu0/eps0), ohm (376.730...).
ETA0: float = math.sqrt(MU0 / EPS0)

#: Length conversions to metres.
UM: float = 1e-6
MM: float = 1e-3
MIL: float = 25.4e-6
INCH: float = 25.4e-3

#: Frequency and stress conversions to SI.
GHZ: float = 1e9
GPA: float = 1e9
MPA: float = 1e6

#: Neper to decibel: 20*log10(e).
NP_TO_DB: float = 20.0 / math.log(10.0)

#: Resistivity of annealed copper at 20 degC (IEC 60028 standard annealed copper), ohm*m.
RHO_COPPER: float = 1.7241e-8
#: Conductivity of annealed copper at 20 degC, S/m.
SIGMA_COPPER: float = 1.0 / RHO_COPPER

#: Copper foil area weight: 1 oz/ft^2 = 305.152 g/m^2 (avoirdupois ounce over a square foot).
OZ_PER_FT2_G_PER_M2: float = 28.349523125 / 0.09290304
#: Density of wrought copper, g/cm^3 (typical, from memory).
COPPER_DENSITY_G_CM3: float = 8.93


def oz_to_um(weight_oz: float, density_g_cm3: float = COPPER_DENSITY_G_CM3) -> float:
    """Foil thickness in micrometres from its area weight in oz/ft^2.

    t = m'' / rho, with m'' = weight * 305.152 g/m^2 and rho in g/cm^3 (so t in um).
    """
    return weight_oz * OZ_PER_FT2_G_PER_M2 / density_g_cm3


def um_to_oz(thickness_um: float, density_g_cm3: float = COPPER_DENSITY_G_CM3) -> float:
    """Inverse of :func:`oz_to_um`."""
    return thickness_um * density_g_cm3 / OZ_PER_FT2_G_PER_M2
