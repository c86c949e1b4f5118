"""B-spline radial basis: knot sequences, vectorised evaluation and Gauss–Legendre tables.

A B-spline basis of order ``k`` (polynomial degree ``k - 1``) on ``[0, r_max]`` is fixed by a
non-decreasing knot sequence ``t_0 <= t_1 <= ... <= t_{N+k-1}`` with ``k``-fold knots at both
ends.  The ``N = len(t) - k`` splines obey the Cox–de Boor recursion

    B_{i,1}(x) = 1 if t_i <= x < t_{i+1} else 0,
    B_{i,k}(x) = (x - t_i)/(t_{i+k-1} - t_i) B_{i,k-1}(x)
               + (t_{i+k} - x)/(t_{i+k} - t_{i+1}) B_{i+1,k-1}(x),

and their derivatives follow from

    B'_{i,k}(x) = (k-1) [B_{i,k-1}(x)/(t_{i+k-1} - t_i) - B_{i+1,k-1}(x)/(t_{i+k} - t_{i+1})]

(C. de Boor, *A Practical Guide to Splines*, Springer 1978, ch. IX and X).  On a knot interval
``[t_m, t_{m+1})`` exactly ``k`` splines, ``B_{m-k+1} .. B_m``, are non-zero; everything here is
evaluated in that local form, for all points at once.

Radial use follows W. R. Johnson, S. A. Blundell, J. Sapirstein, Phys. Rev. A 37, 307 (1988):
a first non-zero knot ``r_min`` close to the origin, knots spreading out to the cavity wall.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import cached_property, lru_cache

import numpy as np
from scipy.optimize import brentq

from .errors import InputError

from .vocabulary import KNOT_KINDS  # noqa: E402,F401  (the config vocabulary)


def _validate(size: int, order: int, r_min: float, r_max: float) -> None:
    if int(order) != order or order < 2:
        raise InputError(f"basis.order = {order!r}: must be an integer >= 2 (polynomial degree + 1)")
    if int(size) != size or size < order + 2:
        raise InputError(
            f"basis.size = {size!r} is too small for basis.order = {order}: need size >= order + 2 = {order + 2}"
        )
    if not (np.isfinite(r_min) and r_min > 0):
        raise InputError(f"basis.r_min = {r_min!r}: must be a positive number of bohr")
    if not (np.isfinite(r_max) and r_max > r_min):
        raise InputError(f"basis.r_max = {r_max!r}: must be larger than basis.r_min = {r_min!r}")


def _pad(breakpoints: np.ndarray, order: int) -> np.ndarray:
    """Full knot sequence: k-fold knots at 0 and at r_max around the inner breakpoints."""
    inner = breakpoints[1:-1]
    return np.concatenate([np.zeros(order), inner, np.full(order, breakpoints[-1])])


def exponential_knots(size: int, order: int, r_min: float, r_max: float) -> np.ndarray:
    """Knots t = 0 (k-fold), r_min * (r_max/r_min)^(j/M) for j = 0..M, r_max (k-fold).

    ``M = size - order + 1`` is fixed by the number of splines: ``N = len(t) - k = size``.
    Returns the full knot sequence, ``size + order`` entries.
    """
    _validate(size, order, r_min, r_max)
    m = size - order + 1
    inner = r_min * (r_max / r_min) ** (np.arange(m) / (m - 1))
    return _pad(np.concatenate([[0.0], inner]), order)


def log_linear_knots(size: int, order: int, r_min: float, r_max: float, r_scale: float | None = None) -> np.ndarray:
    """Knots uniform in s(r) = ln(r / r_min) + r / r_scale, from r_min to r_max.

    Near the origin the spacing grows geometrically (resolving r^gamma and the nucleus); beyond
    ``r_scale`` it tends to the constant ``r_scale * ds``, which keeps outer, oscillating
    high-n orbitals resolved where a purely exponential sequence becomes too sparse.  The
    default ``r_scale = r_max / 10`` puts roughly half of the knots below ``r_max/10``.
    """
    _validate(size, order, r_min, r_max)
    if r_scale is None:
        r_scale = r_max / 10.0
    if not (np.isfinite(r_scale) and r_scale > 0):
        raise InputError(f"basis.r_scale = {r_scale!r}: must be a positive number of bohr")
    return _log_linear(int(size), int(order), float(r_min), float(r_max), float(r_scale)).copy()


@lru_cache(maxsize=64)
def _log_linear(size: int, order: int, r_min: float, r_max: float, r_scale: float) -> np.ndarray:
    """The knots of :func:`log_linear_knots`, kept for the next solve of the same basis (the
    scalar root finding took about 2 % of a default solve; scans, audits and critical-charge
    searches solve the same sequence many times).  Read-only: callers get a copy."""
    m = size - order + 1

    def s(u: float) -> float:  # u = ln r
        return u - np.log(r_min) + np.exp(u) / r_scale

    lo, hi = np.log(r_min), np.log(r_max)
    targets = np.linspace(s(lo), s(hi), m)
    inner = np.empty(m)
    inner[0], inner[-1] = r_min, r_max
    for j in range(1, m - 1):  # m solves of a monotone scalar equation, once per basis
        inner[j] = np.exp(brentq(lambda u: s(u) - targets[j], lo, hi, xtol=1e-14, rtol=1e-15))
    out = _pad(np.concatenate([[0.0], inner]), order)
    out.setflags(write=False)
    return out


def knots_from_breakpoints(breakpoints, order: int) -> np.ndarray:
    """Full knot sequence from user breakpoints 0 = x_0 < x_1 < ... < x_M = r_max."""
    x = np.asarray(breakpoints, dtype=float)
    if x.ndim != 1 or x.size < 3:
        raise InputError("basis.knots: give at least three breakpoints 0 = x0 < x1 < ... < r_max")
    if x[0] != 0.0:
        x = np.concatenate([[0.0], x])
    if not np.all(np.isfinite(x)) or np.any(np.diff(x) <= 0):
        raise InputError("basis.knots: breakpoints must be finite and strictly increasing from 0")
    return _pad(x, order)


@dataclass(frozen=True)
class QuadratureTable:
    """Gauss–Legendre points on every non-empty knot interval, with the local spline values.

    Attributes
    ----------
    r, w : (n_int, nq) arrays
        Abscissae and weights; ``sum(w * f(r))`` integrates ``f`` over ``[0, r_max]`` exactly
        for piecewise polynomials of degree ``2 nq - 1`` on the knot intervals.
    first : (n_int,) int array
        Index of the first of the ``k`` splines that are non-zero on each interval.
    values : (3, n_int, nq, k) array
        ``values[d, m, q, j]`` is the d-th derivative of spline ``first[m] + j`` at ``r[m, q]``.
    """

    r: np.ndarray
    w: np.ndarray
    first: np.ndarray
    values: np.ndarray = field(repr=False)


@dataclass(frozen=True)
class BSplineBasis:
    """The ``N = len(knots) - order`` B-splines of the given order on a knot sequence."""

    knots: np.ndarray = field(repr=False)
    order: int

    def __post_init__(self) -> None:
        t = np.asarray(self.knots, dtype=float)
        k = self.order
        if t.ndim != 1 or t.size < 2 * k + 1 or np.any(np.diff(t) < 0):
            raise InputError("basis.knots: need a non-decreasing sequence with at least 2*order + 1 knots")
        object.__setattr__(self, "knots", t)

    @property
    def size(self) -> int:
        return self.knots.size - self.order

    @property
    def r_max(self) -> float:
        return float(self.knots[-1])

    @cached_property
    def intervals(self) -> np.ndarray:
        """Indices m of the non-empty knot intervals [t_m, t_{m+1})."""
        t = self.knots
        m = np.arange(self.order - 1, self.size)
        return m[t[m + 1] > t[m]]

    @cached_property
    def breakpoints(self) -> np.ndarray:
        """The distinct knots 0 = x_0 < ... < x_M = r_max."""
        return np.unique(self.knots)

    def locate(self, x: np.ndarray) -> np.ndarray:
        """Interval index m with t_m <= x < t_{m+1} (the last interval is closed at r_max)."""
        t, k = self.knots, self.order
        m = np.searchsorted(t, x, side="right") - 1
        return np.clip(m, k - 1, self.size - 1)

    def local(self, x: np.ndarray, m: np.ndarray, nderiv: int = 2) -> np.ndarray:
        """Derivatives 0..nderiv of the k splines B_{m-k+1..m} at x, shape (nderiv+1, len(x), k).

        Vectorised de Boor triangle.  Writing one step of the recursion as
        ``B_{i,j+1} = w_i B_{i,j} + (1 - w_{i+1}) B_{i+1,j}`` with the linear weights
        ``w_i(x) = (x - t_i)/(t_{i+j} - t_i)``, the product rule carries the derivatives along:
        ``B^(d)_{i,j+1} = w_i B^(d)_{i,j} + (1 - w_{i+1}) B^(d)_{i+1,j}
        + d [w_i' B^(d-1)_{i,j} - w_{i+1}' B^(d-1)_{i+1,j}]``, since ``w'' = 0``.
        """
        t, k = self.knots, self.order
        x = np.asarray(x, dtype=float).ravel()
        m = np.asarray(m).ravel()
        b = np.zeros((nderiv + 1, x.size, 1))
        b[0] = 1.0
        for j in range(1, k):
            # the j splines of order j on [t_m, t_{m+1}) -> the j+1 splines of order j+1
            left = t[m[:, None] + 1 - np.arange(j, 0, -1)[None, :]]  # t_{m+1-j} .. t_m
            right = t[m[:, None] + np.arange(1, j + 1)[None, :]]  # t_{m+1} .. t_{m+j}
            inv = 1.0 / (right - left)
            down = (right - x[:, None]) * inv  # 1 - w_{i+1}: weight into spline i
            up = (x[:, None] - left) * inv  # w_i: weight into spline i+1
            nb = np.zeros((nderiv + 1, x.size, j + 1))
            nb[:, :, :j] += down * b
            nb[:, :, 1:] += up * b
            for d in range(1, nderiv + 1):
                nb[d, :, :j] -= d * inv * b[d - 1]
                nb[d, :, 1:] += d * inv * b[d - 1]
            b = nb
        return b

    def evaluate(self, x, nderiv: int = 0) -> np.ndarray:
        """Dense values of all N splines (or their derivatives) at x: shape (nderiv+1, len(x), N)."""
        x = np.atleast_1d(np.asarray(x, dtype=float))
        if np.any(x < 0) or np.any(x > self.r_max):
            raise InputError(f"radii must lie in [0, r_max = {self.r_max:g}] bohr")
        m = self.locate(x)
        loc = self.local(x, m, nderiv)
        out = np.zeros((nderiv + 1, x.size, self.size))
        cols = m[:, None] - self.order + 1 + np.arange(self.order)[None, :]
        rows = np.broadcast_to(np.arange(x.size)[:, None], cols.shape)
        out[:, rows, cols] = loc
        return out

    def quadrature(self, nq: int) -> QuadratureTable:
        """Gauss–Legendre table with nq points on every non-empty knot interval."""
        xg, wg = np.polynomial.legendre.leggauss(nq)
        m = self.intervals
        a, b = self.knots[m], self.knots[m + 1]
        half = 0.5 * (b - a)
        r = (0.5 * (a + b))[:, None] + half[:, None] * xg[None, :]
        w = half[:, None] * wg[None, :]
        loc = self.local(r.ravel(), np.repeat(m, nq), 2)
        values = loc.reshape(3, m.size, nq, self.order)
        return QuadratureTable(r=r, w=w, first=m - self.order + 1, values=values)
