"""Conductor-backed coplanar closed form: thickness, thin substrates, the microstrip bound.

Outside references: the field solver (checked against the exact coplanar conformal map and Cohn's
exact stripline in tests/test_fields.py) for the measured deviation band, and capacitance
monotonicity for the bound (adding grounded conductors never lowers a capacitance: Dirichlet
principle, e.g. W. R. Smythe, Static and Dynamic Electricity, 3rd ed., 1968, ch. 2, from memory).
The README's coplanar accuracy row is this test's band.
"""
from __future__ import annotations

import numpy as np
import pytest
from strainline.models.fields import field_solve
from strainline.models.lines import LineGeometry, evaluate_line
from strainline.models.lines.coplanar import coplanar
from strainline.models.lines.microstrip import microstrip

UM = 1e-6

# (w, s, h, t, cover) um on a Dk 3.4 substrate, cover Dk 3.5: flex-thin conductor-backed lines
CASES = [
    (100, 75, 25, 12, 0), (100, 75, 25, 0, 0), (200, 100, 50, 12, 0), (90, 75, 50, 12, 0),
    (400, 100, 100, 18, 0), (150, 200, 37.5, 9, 0),
    (100, 75, 25, 12, 37), (200, 150, 50, 12, 37), (150, 200, 37.5, 9, 60),
]


@pytest.mark.parametrize("w, s, h, t, c", CASES)
def test_backed_coplanar_within_its_measured_band_of_the_field_solution(w, s, h, t, c):
    g = LineGeometry(width_m=w * UM, gap_m=s * UM, height_m=h * UM, thickness_m=t * UM, er=3.4,
                     cover_m=c * UM, cover_er=3.5)
    field = field_solve("coplanar", g, cells_per_feature=1.5).z0_ohm
    closed = float(evaluate_line("coplanar", g).z0_ohm)
    dev = 100 * (closed / field - 1)
    # the band the README and the findings state: -2.6 ... +3.8 % (before this change: +2.9 ... +13 %)
    assert -3.0 <= dev <= 4.0, dev


def test_published_backed_form_runs_high_on_thin_flex_substrates():
    # The as-published combination (Ghione & Naldi 1983 + the unbacked thickness correction of Gupta
    # et al. 1996) against the field solution: +10 % at w/s/h/t = 100/75/25/12 um, which is why the
    # default form changed.
    g = LineGeometry(width_m=100 * UM, gap_m=75 * UM, height_m=25 * UM, thickness_m=12 * UM, er=3.4)
    field = field_solve("coplanar", g, cells_per_feature=1.5).z0_ohm
    old = float(coplanar(100 * UM, 75 * UM, 25 * UM, 12 * UM, 3.4, True, backed_model="published")[0])
    assert 100 * (old / field - 1) > 8.0


def test_backed_coplanar_never_above_the_microstrip_of_the_same_strip():
    # Capacitance monotonicity: side grounds only add capacitance, with and without the dielectric.
    rng = np.random.default_rng(5)
    n = 400
    w = rng.uniform(40, 500, n) * UM
    s = rng.uniform(40, 300, n) * UM
    h = rng.uniform(12, 150, n) * UM
    t = np.full(n, 12 * UM)
    er = rng.uniform(2.8, 4.0, n)
    cov = rng.choice([0.0, 25.0, 60.0], n) * UM
    z_cpw, _ = coplanar(w, s, h, t, er, True, cov, 3.5)
    z_ms, _ = microstrip(w, h, t, er, cov, 3.5)
    assert np.all(z_cpw <= z_ms * (1 + 1e-12))


def test_thicker_copper_lowers_the_backed_impedance():
    # Physical direction (thicker slot walls add capacitance; the field solution drops 9 % from 0 to
    # 19.5 um on flex substrates): the published combination rose instead.
    t = np.array([0.0, 6.0, 12.0, 18.0, 24.0]) * UM
    z, _ = coplanar(120 * UM, 100 * UM, 75 * UM, t, 3.3, True)
    assert np.all(np.diff(z) < 0)
