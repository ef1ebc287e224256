"""Node-based finite differences for the 3-D Laplace equation on a rectilinear mesh.

The numerical core of :mod:`strainline.models.hatch`: potentials at the nodes of a tensor mesh
``x`` x ``y`` x ``z``, a relative permittivity per cell, conductors given as fixed-potential nodes
(any shape, e.g. a hatched plane), grounded walls where asked and symmetry walls (zero normal
field) elsewhere. The electrostatic energy of the solution gives the capacitance.

Method
------
Seven-point stencil: node ``n`` and its axis neighbour ``m`` share an edge of conductance

.. math:: g_{nm} = \\frac{1}{\\ell_{nm}} \\sum_{c \\ni nm} \\varepsilon_c \\frac{A_c}{4},

summed over the (up to four) cells ``c`` that share the edge, ``A_c`` the cell's face area
normal to the edge and ``l`` the edge length (box-integration or finite-volume method, e.g.
S. Selberherr, *Analysis and Simulation of Semiconductor Devices*, Springer 1984, sec. 6.1).
The quadratic form :math:`E(\\phi) = \\sum g_{nm}(\\phi_n - \\phi_m)^2` is the mean of the exact
energies of the piecewise-linear interpolant of ``phi`` on two mirror-image Kuhn (path-simplex)
tetrahedralisations of each cell: a path simplex couples only the nodes joined by its three
axis-parallel edges, with weights 2/6, 1/6, 1/6, 2/6 of ``eps A / l`` for the four parallel
edges of a cell, and the mirror image 1/6, 2/6, 2/6, 1/6 (the classical link between the 7-point
stencil and linear tetrahedra, e.g. Zienkiewicz, Taylor & Zhu, *The Finite Element Method: Its
Basis and Fundamentals*, 7th ed., 2013). The scheme is therefore conforming in that mean sense:
for conductors made of mesh nodes, the discrete capacitance is never below the exact capacitance
of the same (node-resolved) conductors (Dirichlet principle), and it falls as the mesh is refined.

Fixed nodes are eliminated; the reduced matrix is a symmetric M-matrix, solved by conjugate
gradients preconditioned with Ruge-Stueben algebraic multigrid (:mod:`pyamg`; J. W. Ruge,
K. Stueben, "Algebraic multigrid", in *Multigrid Methods*, SIAM 1987, pp. 73-130). Assembly is
vectorised: the matrix is built from its seven diagonals, no loop over cells.

Units: coordinates in metres; capacitances are relative (multiply by epsilon_0 for F) and
belong to the meshed box. Pure numpy/scipy/pyamg.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp

#: Relative residual at which the conjugate gradients stop (the energy error is of its square).
CG_TOL = 1e-9


@dataclass(frozen=True)
class Mesh3:
    """A rectilinear mesh and its cell permittivity.

    Parameters
    ----------
    x, y, z : numpy.ndarray
        Strictly increasing node coordinates, m.
    eps_y : numpy.ndarray
        Relative permittivity of each cell layer in y, shape ``(y.size - 1,)`` (the dielectric
        here varies only through the thickness).
    """

    x: np.ndarray
    y: np.ndarray
    z: np.ndarray
    eps_y: np.ndarray

    @property
    def shape(self) -> tuple[int, int, int]:
        """Node counts ``(nz, ny, nx)`` (node index ``(k * ny + j) * nx + i``)."""
        return self.z.size, self.y.size, self.x.size


def _pair_sum(a: np.ndarray, axes: tuple[int, int]) -> np.ndarray:
    """Sum of ``a`` over the (up to) four cells around each edge: zero-pad the two axes, add shifts."""
    pad = [(0, 0)] * a.ndim
    for ax in axes:
        pad[ax] = (1, 1)
    p = np.pad(a, pad)
    sl = [slice(None)] * a.ndim

    def s(ax0: slice, ax1: slice) -> np.ndarray:
        q = list(sl)
        q[axes[0]] = ax0
        q[axes[1]] = ax1
        return p[tuple(q)]

    lo, hi = slice(None, -1), slice(1, None)
    return s(lo, lo) + s(hi, lo) + s(lo, hi) + s(hi, hi)


def stiffness(mesh: Mesh3, air: bool = False) -> sp.csr_matrix:
    """Seven-point stiffness matrix of the whole mesh (natural walls everywhere).

    Parameters
    ----------
    mesh : Mesh3
        The mesh and its permittivity.
    air : bool
        Use a permittivity of 1 in every cell (for the air capacitance).

    Returns
    -------
    scipy.sparse.csr_matrix
        Symmetric, shape ``(N, N)`` with ``N = nz * ny * nx``; relative (times epsilon_0 = F).
    """
    nz, ny, nx = mesh.shape
    dx, dy, dz = np.diff(mesh.x), np.diff(mesh.y), np.diff(mesh.z)
    eps = np.ones(ny - 1) if air else np.asarray(mesh.eps_y, dtype=float)
    # cell weights eps * (face area) / 4 for each edge direction, shape (nz-1, ny-1, nx-1)
    ey = eps[None, :, None]
    wx = ey * dy[None, :, None] * dz[:, None, None] / 4.0
    wy = ey * dx[None, None, :] * dz[:, None, None] / 4.0
    wz = ey * dx[None, None, :] * dy[None, :, None] / 4.0
    wx = np.broadcast_to(wx, (nz - 1, ny - 1, nx - 1))
    wy = np.broadcast_to(wy, (nz - 1, ny - 1, nx - 1))
    wz = np.broadcast_to(wz, (nz - 1, ny - 1, nx - 1))
    gx = _pair_sum(wx, (0, 1)) / dx[None, None, :]          # (nz, ny, nx-1)
    gy = _pair_sum(wy, (0, 2)) / dy[None, :, None]          # (nz, ny-1, nx)
    gz = _pair_sum(wz, (1, 2)) / dz[:, None, None]          # (nz-1, ny, nx)
    diag = np.zeros((nz, ny, nx))
    diag[:, :, :-1] += gx
    diag[:, :, 1:] += gx
    diag[:, :-1, :] += gy
    diag[:, 1:, :] += gy
    diag[:-1] += gz
    diag[1:] += gz
    n = nz * ny * nx
    ox = np.pad(gx, ((0, 0), (0, 0), (0, 1))).ravel()[:-1]
    oy = np.pad(gy, ((0, 0), (0, 1), (0, 0))).ravel()[:-nx]
    oz = gz.ravel()
    return sp.diags([diag.ravel(), -ox, -ox, -oy, -oy, -oz, -oz],
                    [0, 1, -1, nx, -nx, nx * ny, -nx * ny], shape=(n, n), format="csr")


@dataclass(frozen=True)
class Solution3:
    """Relative capacitances of the meshed box (multiply by epsilon_0 for F).

    ``c_rel`` with the dielectrics, ``c_air_rel`` with every cell in air; ``unknowns`` the free
    nodes; ``iterations`` the conjugate-gradient steps of the two solves.
    """

    c_rel: float
    c_air_rel: float
    unknowns: int
    iterations: tuple[int, int]


def _dot(a: np.ndarray, b: np.ndarray) -> float:
    """Inner product without BLAS threads (einsum's own loop; BLAS ddot spins on a loaded host)."""
    return float(np.einsum("i,i->", a, b))


def pcg(a: sp.csr_matrix, b: np.ndarray, precond, x0: np.ndarray, tol: float = CG_TOL,
        maxiter: int = 400) -> tuple[np.ndarray, int, float]:
    """Preconditioned conjugate gradients (Hestenes & Stiefel 1952; e.g. Y. Saad, *Iterative
    Methods for Sparse Linear Systems*, 2nd ed., SIAM 2003, Alg. 9.1).

    Returns the solution, the iterations and the final relative residual ||r|| / ||b||.
    """
    x = x0.copy()
    r = b - a @ x
    nb = math.sqrt(_dot(b, b)) or 1.0
    z = precond(r)
    p = z.copy()
    rz = _dot(r, z)
    for it in range(1, maxiter + 1):
        ap = a @ p
        alpha = rz / _dot(p, ap)
        x += alpha * p
        r -= alpha * ap
        res = math.sqrt(_dot(r, r)) / nb
        if res <= tol:
            return x, it, res
        z = precond(r)
        rz_new = _dot(r, z)
        p *= rz_new / rz
        p += z
        rz = rz_new
    return x, maxiter, res


def _vcycle(ml):
    """One V-cycle of a pyamg hierarchy as a preconditioner (zero start).

    The same cycle as pyamg's own (pre-smoothing, coarse correction, post-smoothing), without the
    residual norms its ``solve`` computes on every call.
    """
    levels = ml.levels

    def cycle(lvl: int, b: np.ndarray) -> np.ndarray:
        lev = levels[lvl]
        if lvl == len(levels) - 1:
            return ml.coarse_solver(lev.A, b)
        x = np.zeros_like(b)
        lev.presmoother(lev.A, x, b)
        r = b - lev.A @ x
        x += lev.P @ cycle(lvl + 1, lev.R @ r)
        lev.postsmoother(lev.A, x, b)
        return x

    return lambda b: cycle(0, b)


def _solve_one(k: sp.csr_matrix, fixed: np.ndarray, value: np.ndarray) -> tuple[float, int]:
    import pyamg  # local: only the 3-D solver needs it

    free = ~fixed
    vd = np.where(fixed, value, 0.0)
    rhs = -(k @ vd)[free]
    kff = k[free][:, free].tocsr()
    ml = pyamg.ruge_stuben_solver(kff, max_coarse=400, coarse_solver="splu")
    x, its, res = pcg(kff, rhs, _vcycle(ml), rhs / kff.diagonal())
    if res > CG_TOL:
        raise RuntimeError(f"3-D field solve did not converge (relative residual {res:.1e})")
    phi = vd.copy()
    phi[free] = x
    return float(phi @ (k @ phi)), its


def solve3(mesh: Mesh3, fixed: np.ndarray, value: np.ndarray) -> Solution3:
    """Solve with the dielectrics and in air; the capacitance is the energy phi^T K phi.

    Parameters
    ----------
    mesh : Mesh3
        The mesh.
    fixed : numpy.ndarray of bool, shape ``(N,)``
        Nodes held at a fixed potential (conductors, grounded walls).
    value : numpy.ndarray, shape ``(N,)``
        Their potentials, V (1 on the driven conductor, 0 on grounds).

    Returns
    -------
    Solution3
        ``phi^T K phi`` is 2 W / V^2: the capacitance of a single driven conductor at 1 V against
        the grounded ones.

    Raises
    ------
    RuntimeError
        When the iteration does not reach its tolerance.
    """
    c, it1 = _solve_one(stiffness(mesh), fixed, value)
    ca, it2 = _solve_one(stiffness(mesh, air=True), fixed, value)
    return Solution3(c, ca, int((~fixed).sum()), (it1, it2))


def stiffness2(x: np.ndarray, y: np.ndarray, eps_y: np.ndarray) -> sp.csr_matrix:
    """Five-point stiffness per unit length of a cross-section (the z-invariant case).

    The same box-integration weights as :func:`stiffness` with no variation along z: a 3-D mesh
    of length L along z and a z-uniform potential has energy L times this one's.
    """
    ny, nx = y.size, x.size
    dx, dy = np.diff(x), np.diff(y)
    eps = np.asarray(eps_y, dtype=float)[:, None]
    wx = np.broadcast_to(eps * dy[:, None] / 2.0, (ny - 1, nx - 1))
    wy = np.broadcast_to(eps * dx[None, :] / 2.0, (ny - 1, nx - 1))
    gx = (np.pad(wx, ((1, 0), (0, 0))) + np.pad(wx, ((0, 1), (0, 0)))) / dx[None, :]   # (ny, nx-1)
    gy = (np.pad(wy, ((0, 0), (1, 0))) + np.pad(wy, ((0, 0), (0, 1)))) / dy[:, None]   # (ny-1, nx)
    diag = np.zeros((ny, nx))
    diag[:, :-1] += gx
    diag[:, 1:] += gx
    diag[:-1] += gy
    diag[1:] += gy
    n = nx * ny
    ox = np.pad(gx, ((0, 0), (0, 1))).ravel()[:-1]
    oy = gy.ravel()
    return sp.diags([diag.ravel(), -ox, -ox, -oy, -oy], [0, 1, -1, nx, -nx], shape=(n, n),
                    format="csr")


def solve2(x: np.ndarray, y: np.ndarray, eps_y: np.ndarray, fixed: np.ndarray,
           value: np.ndarray) -> tuple[float, float]:
    """Relative capacitances per unit length (dielectric, air) of a z-invariant cross-section.

    Sparse LU (2-D fill-in is small). ``fixed`` / ``value`` have shape ``(ny * nx,)``.
    """
    from scipy.sparse.linalg import splu

    free = ~fixed
    vd = np.where(fixed, value, 0.0)
    out = []
    for eps in (eps_y, np.ones_like(eps_y)):
        k = stiffness2(x, y, eps)
        kff = k[free][:, free].tocsc()
        phi = vd.copy()
        phi[free] = splu(kff, permc_spec="MMD_AT_PLUS_A").solve(-(k @ vd)[free])
        out.append(float(phi @ (k @ phi)))
    return out[0], out[1]
