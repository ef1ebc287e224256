"""Bilinear finite elements for the 2-D Laplace equation on a graded tensor mesh.

This is the numerical core of :mod:`strainline.models.fields`: a rectangular domain cut by a
tensor (rectilinear) mesh whose lines pass through every conductor edge and dielectric interface,
a permittivity per cell, conductors held at fixed potentials, and symmetry or ground walls on the
four sides. The electrostatic energy of the solution gives the capacitance per unit length.

Method
------
Galerkin finite elements with bilinear (Q1) shape functions on rectangles; the element stiffness of
a cell of size ``dx`` x ``dy`` and relative permittivity ``eps`` is

.. math::

    K_e = \\varepsilon \\left[\\frac{dy}{6\\,dx} A + \\frac{dx}{6\\,dy} B\\right],

with the standard 4 x 4 matrices A, B (node order (0,0), (1,0), (1,1), (0,1); e.g. Zienkiewicz,
Taylor & Zhu, *The Finite Element Method: Its Basis and Fundamentals*, 7th ed., 2013, ch. 6).
Dirichlet nodes (conductors, grounded walls) are eliminated and the reduced system is solved with
a sparse LU factorisation (:func:`scipy.sparse.linalg.splu`). Neumann walls (magnetic walls,
symmetry planes of a single line or an even mode) need no treatment: they are natural.

By the Dirichlet principle the discrete energy is never below the exact one when every conductor
boundary lies on mesh lines, so the capacitance converges from above as the mesh is refined.

Units: coordinates in metres; the capacitance returned is relative (multiply by epsilon_0 for F/m).
This module is pure numpy/scipy.
"""
from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Literal

import numpy as np
import scipy.sparse as sp
from scipy.sparse.linalg import splu

Wall = Literal["electric", "magnetic"]

# Q1 element stiffness pieces, node order (0,0), (1,0), (1,1), (0,1).
_A = np.array([[2, -2, -1, 1], [-2, 2, 1, -1], [-1, 1, 2, -2], [1, -1, -2, 2]], float) / 6.0
_B = np.array([[2, 1, -1, -2], [1, 2, -2, -1], [-1, -2, 2, 1], [-2, -1, 1, 2]], float) / 6.0


def graded_points(keys: Sequence[float], h_min: float, ratio: float, h_max: float,
                  coarse_ends: bool = True) -> np.ndarray:
    """Mesh coordinates through every key coordinate, graded geometrically away from each key.

    Parameters
    ----------
    keys : sequence of float
        Coordinates that must be mesh lines (edges, interfaces, domain ends), m. Sorted and
        de-duplicated here.
    h_min : float
        Cell size next to every key coordinate, m.
    ratio : float
        Growth factor of neighbouring cells (> 1).
    h_max : float
        Largest cell size, m.
    coarse_ends : bool
        The outermost keys (far walls) get no refinement: cells grow from the inner keys only.

    Returns
    -------
    numpy.ndarray
        Strictly increasing coordinates, m, starting and ending at the outermost keys.
    """
    k = np.unique(np.asarray(keys, dtype=float))
    tol = 1e-9 * max(float(np.ptp(k)), 1e-30)
    k = k[np.concatenate(([True], np.diff(k) > tol))]
    out = [k[:1]]
    last_i = k.size - 2
    for i, (a, b) in enumerate(zip(k[:-1], k[1:])):
        length = b - a
        grow_left = not (coarse_ends and i == 0 and last_i > 0)
        grow_right = not (coarse_ends and i == last_i and last_i > 0)
        n_sides = int(grow_left) + int(grow_right)
        grown: list[float] = []
        h = h_min
        covered = 0.0
        while True:
            step = min(h, h_max)
            if covered + n_sides * step >= length:
                break
            grown.append(step)
            covered += n_sides * step
            h *= ratio
        rest = length - covered
        # no sliver in the middle: give back grown cells until the remainder is a fair cell
        while grown and rest < 0.5 * grown[-1]:
            covered -= n_sides * grown.pop()
            rest = length - covered
            h /= ratio
        # fill the remainder with equal cells no larger than the next grown cell
        last = min(h, h_max)
        n_mid = max(1, int(np.ceil(rest / last - 1e-9)))
        mid = [rest / n_mid] * n_mid
        left = grown if grow_left else []
        right = grown[::-1] if grow_right else []
        sizes = np.array(left + mid + right)
        pts = a + np.cumsum(sizes)
        pts[-1] = b
        out.append(pts)
    return np.concatenate(out)


def bisect(points: np.ndarray, times: int) -> np.ndarray:
    """Split every interval of ``points`` into ``2**times`` equal parts (nested refinement)."""
    p = np.asarray(points, dtype=float)
    for _ in range(times):
        mid = 0.5 * (p[:-1] + p[1:])
        q = np.empty(p.size + mid.size)
        q[0::2] = p
        q[1::2] = mid
        p = q
    return p


@dataclass(frozen=True)
class Box:
    """An axis-aligned rectangle [x0, x1] x [y0, y1] in metres with a value (Dk or potential)."""

    x0: float
    x1: float
    y0: float
    y1: float
    value: float


@dataclass(frozen=True)
class Problem:
    """A discretised cross-section ready to solve.

    Parameters
    ----------
    x, y : numpy.ndarray
        Mesh coordinates, m (strictly increasing).
    dielectrics : tuple of Box
        Regions of relative permittivity, painted in order over a background of 1 (later boxes
        win). ``value`` is the Dk.
    conductors : tuple of Box
        Conductors; ``value`` is the potential (V). Zero-thickness conductors (y0 == y1) are
        allowed. Their edges must lie on mesh lines.
    walls : dict
        Boundary of each side ``"left"``, ``"right"``, ``"bottom"``, ``"top"``: ``"electric"``
        (grounded, potential 0) or ``"magnetic"`` (zero normal field: symmetry plane).
    loss_tangents : tuple of float
        Loss tangent of each dielectric box (same order; empty = lossless). Gives the
        energy-weighted loss tangent of the solution (:attr:`Solution.tan_eff`).
    """

    x: np.ndarray
    y: np.ndarray
    dielectrics: tuple[Box, ...]
    conductors: tuple[Box, ...]
    walls: dict[str, Wall]
    loss_tangents: tuple[float, ...] = ()


def _cell_eps(p: Problem, air: bool, loss: bool = False) -> np.ndarray:
    """Cell permittivity (``loss``: permittivity times loss tangent, air cells 0)."""
    xc = 0.5 * (p.x[:-1] + p.x[1:])
    yc = 0.5 * (p.y[:-1] + p.y[1:])
    eps = np.zeros((yc.size, xc.size)) if loss else np.ones((yc.size, xc.size))
    if air:
        return eps
    tans = p.loss_tangents if loss else (1.0,) * len(p.dielectrics)
    for b, tan in zip(p.dielectrics, tans):
        mx = (xc > b.x0) & (xc < b.x1)
        my = (yc > b.y0) & (yc < b.y1)
        eps[np.ix_(my, mx)] = b.value * tan
    return eps


def _stiffness(p: Problem, eps: np.ndarray) -> sp.csr_matrix:
    nx, ny = p.x.size, p.y.size
    dx = np.diff(p.x)[None, :]
    dy = np.diff(p.y)[:, None]
    ax = (eps * dy / dx).ravel()
    by = (eps * dx / dy).ravel()
    j, i = np.meshgrid(np.arange(ny - 1), np.arange(nx - 1), indexing="ij")
    n0 = (j * nx + i).ravel()
    nodes = np.stack([n0, n0 + 1, n0 + 1 + nx, n0 + nx], axis=1)  # (cells, 4)
    vals = ax[:, None, None] * _A[None] + by[:, None, None] * _B[None]  # (cells, 4, 4)
    rows = np.broadcast_to(nodes[:, :, None], vals.shape).ravel()
    cols = np.broadcast_to(nodes[:, None, :], vals.shape).ravel()
    return sp.csr_matrix((vals.ravel(), (rows, cols)), shape=(nx * ny, nx * ny))


def _dirichlet(p: Problem) -> tuple[np.ndarray, np.ndarray]:
    """Mask of Dirichlet nodes and their potentials (flattened, row = y index)."""
    nx, ny = p.x.size, p.y.size
    fixed = np.zeros((ny, nx), bool)
    value = np.zeros((ny, nx))
    span = max(p.x[-1] - p.x[0], p.y[-1] - p.y[0])
    tol = 1e-9 * span
    if p.walls["left"] == "electric":
        fixed[:, 0] = True
    if p.walls["right"] == "electric":
        fixed[:, -1] = True
    if p.walls["bottom"] == "electric":
        fixed[0, :] = True
    if p.walls["top"] == "electric":
        fixed[-1, :] = True
    for c in p.conductors:
        mx = (p.x >= c.x0 - tol) & (p.x <= c.x1 + tol)
        my = (p.y >= c.y0 - tol) & (p.y <= c.y1 + tol)
        m = np.ix_(my, mx)
        fixed[m] = True
        value[m] = c.value
    return fixed.ravel(), value.ravel()


@dataclass(frozen=True)
class Solution:
    """Relative capacitances (multiply by epsilon_0 for F/m) of one discretised cross-section.

    ``c_rel`` with the dielectrics, ``c_air_rel`` with every Dk set to 1; ``nodes`` the mesh size.
    The capacitance is the energy phi^T K phi of the solution with the conductors at their
    potentials, i.e. 2 W / V^2 for a single driven conductor at 1 V.
    """

    c_rel: float
    c_air_rel: float
    nodes: int
    tan_eff: float = float("nan")


def solve(p: Problem, with_air: bool = True) -> Solution:
    """Solve the cross-section with its dielectrics and (optionally) in air on the same mesh.

    Parameters
    ----------
    p : Problem
        The discretised cross-section.
    with_air : bool
        Also solve with every Dk set to 1 (needed for Z0 and eps_eff).

    Returns
    -------
    Solution
        With ``loss_tangents`` given, ``tan_eff`` is the electric-energy-weighted loss tangent
        sum_i W_i tan d_i / W of the solution with the dielectrics: the dielectric power loss
        (omega/2) integral eps'' |E|^2 over omega times twice the stored electric energy, the
        perturbational loss of a low-loss line (D. M. Pozar, *Microwave Engineering*, 4th ed.,
        Wiley 2012, sections 1.3 and 2.7; section numbers from memory).
    """
    fixed, value = _dirichlet(p)
    free = ~fixed
    out = []
    tan_eff = float("nan")
    for air in ((False, True) if with_air else (False,)):
        k = _stiffness(p, _cell_eps(p, air))
        kff = k[free][:, free].tocsc()
        rhs = -(k[free][:, fixed] @ value[fixed])
        phi = value.copy()
        phi[free] = splu(kff, permc_spec="MMD_AT_PLUS_A").solve(rhs)
        out.append(float(phi @ (k @ phi)))
        if not air and p.loss_tangents:
            kl = _stiffness(p, _cell_eps(p, False, loss=True))
            tan_eff = float(phi @ (kl @ phi)) / out[0]
    return Solution(out[0], out[-1] if with_air else float("nan"), int(free.sum()), tan_eff)
