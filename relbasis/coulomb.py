"""Hartree's Y^k functions on a panel quadrature, vectorised over many pair densities.

For a pair density rho(r) (e.g. P_a P_b + Q_a Q_b of two radial orbitals) the multipole
potential of order k, times r, is

    Y^k(r) = r int_0^inf rho(s) r_<^k / r_>^(k+1) ds
           = r^(-k) int_0^r s^k rho(s) ds  +  r^(k+1) int_r^inf s^(-k-1) rho(s) ds

(D. R. Hartree, *The Calculation of Atomic Structures*, Wiley 1957; W. R. Johnson, *Atomic
Structure Theory*, Springer 2007, ch. 3), and the Slater integral is
R^k(ac, bd) = int rho_ac(r) Y^k_bd(r) / r dr.

Every basis family samples its functions on panels of ``nq`` Gauss–Legendre points (the knot
intervals of the B-splines, the panels of the Gaussian grid).  The partial integrals
int_0^{r_i} f at the points are computed panel by panel: whole panels by the Gauss rule, the
part of the current panel through the polynomial interpolating f at the panel's nq points (a
spectral integration matrix; common practice of spectral collocation, e.g. L. N. Trefethen,
*Spectral Methods in MATLAB*, SIAM 2000, from memory).  Everything is a matrix product over the
columns of f, so one call handles all the pair densities of one orbital with a whole basis.
"""

from __future__ import annotations

from functools import lru_cache

import numpy as np


@lru_cache(maxsize=None)
def integration_matrix(nq: int) -> np.ndarray:
    """A (nq x nq): (A f)_i = int_{-1}^{x_i} p(x) dx for the polynomial p through (x_j, f_j),
    x the Gauss–Legendre nodes on [-1, 1].

    With V the Legendre–Vandermonde matrix and int_{-1}^x P_n = (P_{n+1} - P_{n-1}) / (2n + 1)
    (x + 1 for n = 0), A = W V^-1 where W holds those antiderivatives at the nodes.
    """
    x, _ = np.polynomial.legendre.leggauss(nq)
    V = np.polynomial.legendre.legvander(x, nq - 1)
    W = np.zeros((nq, nq))
    for n in range(nq):
        coef = np.zeros(nq + 1)
        if n == 0:
            coef[:2] = 1.0
        else:
            coef[n + 1], coef[n - 1] = 1.0 / (2 * n + 1), -1.0 / (2 * n + 1)
        W[:, n] = np.polynomial.legendre.legval(x, coef)
    A = np.linalg.solve(V.T, W.T).T  # W V^-1
    A.setflags(write=False)
    return A


def cumulative(w: np.ndarray, f: np.ndarray, nq: int) -> np.ndarray:
    """int_0^{r_i} f(s) ds at every point of the panel grid, for every column of f.

    ``w`` are the quadrature weights (panels of nq points, ascending); ``f`` is (points,) or
    (points, m).  Returns an array of f's shape.
    """
    f = np.asarray(f, dtype=float)
    flat = f.reshape(f.shape[0], -1)
    panels = flat.shape[0] // nq
    F = flat.reshape(panels, nq, -1)
    wp = w.reshape(panels, nq)
    half = wp.sum(axis=1)[:, None, None] / 2.0  # half panel widths (the Gauss weights sum to 2)
    # one matrix product for all panels and columns (BLAS), not a batch of small ones
    partial = np.tensordot(integration_matrix(nq), F, axes=([1], [1])).transpose(1, 0, 2) * half
    whole = np.einsum("pq,pqm->pm", wp, F)
    before = np.cumsum(whole, axis=0) - whole  # the panels before each one
    return (partial + before[:, None, :]).reshape(f.shape)


@lru_cache(maxsize=None)
def origin_panel_kernel(k: int, nq: int, points: int = 240) -> np.ndarray:
    """W (nq x nq): int_0^1 l_j(t) K(t_i, t) dt on the reference panel [0, 1], with l_j the
    Lagrange polynomials of the nq Gauss–Legendre nodes t_i and K(r, s) = (s/r)^k for s < r,
    (r/s)^(k+1) for s > r, the kernel of Y^k(r) = int rho(s) K(r, s) ds.

    K is homogeneous of degree 0, so the first panel [0, b] of any grid needs only b W.  The
    part s < t_i is a polynomial of degree nq - 1 + k, integrated exactly by Gauss–Legendre; the
    part s > t_i is integrated in u = ln(t / t_i), where it is a smooth bounded function
    (l_j(t_i e^u) e^(-k u) t_i), by ``points`` Gauss–Legendre points (converged to rounding:
    240 and 480 points agree to 5e-15 of entries of size 0.05..0.1, for k <= 25).
    """
    x, _ = np.polynomial.legendre.leggauss(nq)
    t = (x + 1.0) / 2.0
    bary = (-1.0) ** np.arange(nq) * np.sqrt((1 - x * x) * np.polynomial.legendre.leggauss(nq)[1])

    def lagrange(s):  # (len(s), nq): l_j(s), barycentric (Berrut–Trefethen), s never a node here
        d = s[:, None] - t[None, :]
        terms = bary[None, :] / d
        return terms / terms.sum(axis=1, keepdims=True)

    m = nq + k // 2 + 2
    xa, wa = np.polynomial.legendre.leggauss(m)
    xu, wu = np.polynomial.legendre.leggauss(points)
    W = np.zeros((nq, nq))
    for i, ti in enumerate(t):
        s = ti * (xa + 1.0) / 2.0
        W[i] += (wa * ti / 2.0 * (s / ti) ** k) @ lagrange(s)
        top = np.log(1.0 / ti)
        u = top * (xu + 1.0) / 2.0
        W[i] += (wu * top / 2.0 * np.exp(-k * u) * ti) @ lagrange(ti * np.exp(u))
    W.setflags(write=False)
    return W


def yk(r: np.ndarray, w: np.ndarray, rho: np.ndarray, k: int, nq: int) -> np.ndarray:
    """Y^k(r) of every column of ``rho`` at the grid points (module docstring).

    ``rho`` is (points,) or (points, m), given on the panel grid r with weights w.  The outer
    integral runs from the right end, the inner from the origin: both of smooth integrands
    (s^k rho and s^(-k-1) rho), and neither a difference of large numbers.

    A first panel that starts at the origin is done differently: there s^(-k-1) rho is singular
    and s^k rho varies by (b / r_1)^k ~ 200^k across the panel, so interpolating either one
    loses everything for k >~ 4 (Y^8 off by 30 times the norm of rho at the first points).
    There rho itself is interpolated and integrated against the exact kernel
    (:func:`origin_panel_kernel`), which keeps |Y^k| <= int |rho| as it must be.
    """
    rho = np.asarray(rho, dtype=float)
    col = rho.reshape(rho.shape[0], -1)
    rk = r**k
    inner = cumulative(w, col * rk[:, None], nq)
    g = col / (rk * r)[:, None]
    # int_r^inf from the right (the grid reversed is again a panel grid of Gauss nodes): the total
    # minus the partial integral would cancel catastrophically far out, where r^(k+1) then
    # multiplies the rounding of a large total (1e-16 of 1e12 for a function near the origin)
    outer = cumulative(w[::-1], g[::-1], nq)[::-1]
    out = inner / rk[:, None] + outer * (rk * r)[:, None]
    width = float(np.sum(w[:nq]))
    x0 = np.polynomial.legendre.leggauss(nq)[0][0]
    start = r[0] - (1.0 + x0) * width / 2.0  # left end of the first panel
    if col.shape[0] > nq and abs(start) <= 1e-12 * width:
        beyond = np.sum(w[nq:, None] * g[nq:], axis=0)  # int_b^inf s^(-k-1) rho
        out[:nq] = width * (origin_panel_kernel(k, nq) @ col[:nq]) + (rk[:nq] * r[:nq])[:, None] * beyond[None, :]
    return out.reshape(rho.shape)


def interpolate(r_grid: np.ndarray, values: np.ndarray, nq: int, r: np.ndarray, beyond: float) -> np.ndarray:
    """A function known at the points of a panel grid, at other radii r, panel by panel.

    Inside a panel: the polynomial through its nq Gauss–Legendre points, in barycentric form
    (J.-P. Berrut, L. N. Trefethen, SIAM Rev. 46, 501 (2004)); the panel ends follow from the
    nodes (an affine map of [-1, 1]).  Beyond the last panel the constant ``beyond``.
    """
    r = np.asarray(r, dtype=float)
    pts = r_grid.reshape(-1, nq)
    vals = np.asarray(values, dtype=float).reshape(-1, nq)
    x, wq = np.polynomial.legendre.leggauss(nq)
    bary = (-1.0) ** np.arange(nq) * np.sqrt((1 - x * x) * wq)  # barycentric weights of Gauss nodes
    scale = (pts[:, -1] - pts[:, 0]) / (x[-1] - x[0])  # half widths
    ends = pts[:, 0] + (1.0 - x[0]) * scale
    panel = np.minimum(np.searchsorted(ends, r), pts.shape[0] - 1)
    t = x[0] + (r - pts[panel, 0]) / scale[panel]
    diff = t[:, None] - x[None, :]
    exact = diff == 0.0
    diff[exact] = 1.0
    terms = bary[None, :] / diff
    out = (terms * vals[panel]).sum(axis=1) / terms.sum(axis=1)
    hit = exact.any(axis=1)
    out[hit] = vals[panel[hit]][exact[hit]]
    out[r > ends[-1]] = beyond
    return out
