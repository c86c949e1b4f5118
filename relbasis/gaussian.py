"""Radial Gaussian functions, their algebra under d/dr and 1/r, and closed-form integrals.

Every function here is a *polynomial Gaussian*

    f(r) = sum_p c_p r^p exp(-zeta r^2),

stored as an exponent per function and a coefficient table over the powers p.  Applying d/dr
(p r^(p-1) - 2 zeta r^(p+1)) or kappa/r keeps that form, so the large and small components of
all the balance schemes (none, RKB, DKB) and their derivative terms are polynomial Gaussians,
and every matrix element reduces to the moments

    M(n, a)  = int_0^inf r^n e^(-a r^2) dr = Gamma((n+1)/2) / (2 a^((n+1)/2)),
    C(n, a)  = int_0^inf r^(n-1) e^(-a r^2) dr = M(n-1, a)              (point nucleus, -Z/r),
    G(n, a, eta) = int_0^inf r^(n-1) erf(sqrt(eta) r) e^(-a r^2) dr      (Gaussian nucleus),

(I. S. Gradshteyn, I. M. Ryzhik, *Table of Integrals*, 3.326 and 6.286, from memory).  For the
Gaussian nucleus, with m = n - 1, b^2 = eta and x = b^2/a,

    G = (b / sqrt(pi)) Gamma((m+2)/2) a^(-(m+2)/2) (1+x)^(-1/2) 2F1(1/2, (1-m)/2; 3/2; x/(1+x)),

from erf(br) = (2br/sqrt(pi)) 1F1(1/2; 3/2; -b^2 r^2) integrated term by term and Pfaff's
transformation; for odd m the 2F1 is a polynomial.  Sphere and Fermi nuclei are integrated on
a Gauss–Legendre grid (:func:`radial_grid`) built for the exponents at hand.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
from scipy.special import gammaln, hyp2f1

from .errors import InputError


def even_tempered(size: int, exponent_min: float, exponent_max: float) -> np.ndarray:
    """zeta_i = zeta_min (zeta_max/zeta_min)^(i/(size-1)), i = 0..size-1 (ascending)."""
    if int(size) != size or size < 2:
        raise InputError(f"basis.size = {size!r}: need at least 2 Gaussians")
    if not (np.isfinite(exponent_min) and exponent_min > 0):
        raise InputError(f"basis.exponent_min = {exponent_min!r}: must be a positive number (bohr^-2)")
    if not (np.isfinite(exponent_max) and exponent_max > exponent_min):
        raise InputError(f"basis.exponent_max = {exponent_max!r}: must exceed basis.exponent_min = {exponent_min!r}")
    return exponent_min * (exponent_max / exponent_min) ** (np.arange(size) / (size - 1))


@dataclass(frozen=True)
class GaussPoly:
    """Functions f_i(r) = sum_p coef[i, p] r^p exp(-exps[i] r^2), one per row."""

    exps: np.ndarray
    coef: np.ndarray = field(repr=False)

    @classmethod
    def monomial(cls, exps: np.ndarray, power: int) -> "GaussPoly":
        """r^power exp(-zeta_i r^2) for every exponent."""
        coef = np.zeros((len(exps), power + 1))
        coef[:, power] = 1.0
        return cls(np.asarray(exps, dtype=float), coef)

    @classmethod
    def zeros_like(cls, other: "GaussPoly") -> "GaussPoly":
        return cls(other.exps, np.zeros((len(other.exps), 1)))

    def _pad(self, width: int) -> np.ndarray:
        out = np.zeros((self.coef.shape[0], width))
        out[:, : self.coef.shape[1]] = self.coef
        return out

    def __add__(self, other: "GaussPoly") -> "GaussPoly":
        w = max(self.coef.shape[1], other.coef.shape[1])
        return GaussPoly(self.exps, self._pad(w) + other._pad(w))

    def scale(self, factor: float) -> "GaussPoly":
        return GaussPoly(self.exps, self.coef * factor)

    def derivative(self) -> "GaussPoly":
        """d/dr: r^p e^(-z r^2) -> p r^(p-1) e^(-z r^2) - 2 z r^(p+1) e^(-z r^2)."""
        c = self.coef
        width = c.shape[1]
        out = np.zeros((c.shape[0], width + 1))
        out[:, : width - 1] += (c * np.arange(width))[:, 1:]
        out[:, 1:] += -2.0 * self.exps[:, None] * c
        return GaussPoly(self.exps, out)

    def over_r(self) -> "GaussPoly":
        """f/r; the functions must vanish at the origin (no r^0 term)."""
        if not np.any(self.coef):
            return self
        if np.any(np.abs(self.coef[:, 0]) > 0):
            raise ValueError("f/r of a function that is non-zero at the origin")
        return GaussPoly(self.exps, self.coef[:, 1:] if self.coef.shape[1] > 1 else np.zeros((len(self.exps), 1)))

    def values(self, r: np.ndarray) -> np.ndarray:
        """f_i(r_k) as a (len(r), n) array."""
        r = np.asarray(r, dtype=float)[:, None]
        powers = r ** np.arange(self.coef.shape[1])[None, :]  # (k, p)
        return (powers @ self.coef.T) * np.exp(-r * r * self.exps[None, :])


# ----------------------------------------------------------------------------- moments


def moment(n: np.ndarray, a: np.ndarray) -> np.ndarray:
    """M(n, a) = int_0^inf r^n e^(-a r^2) dr = Gamma((n+1)/2) / (2 a^((n+1)/2)), n > -1."""
    n = np.asarray(n, dtype=float)
    return 0.5 * np.exp(gammaln((n + 1) / 2) - (n + 1) / 2 * np.log(a))


def gauss_nucleus_moment(n: np.ndarray, a: np.ndarray, eta: float) -> np.ndarray:
    """G(n, a, eta) = int_0^inf r^(n-1) erf(sqrt(eta) r) e^(-a r^2) dr (closed form, see module)."""
    m = np.asarray(n, dtype=float) - 1
    b = np.sqrt(eta)
    x = eta / a
    pref = b / np.sqrt(np.pi) * np.exp(gammaln((m + 2) / 2) - (m + 2) / 2 * np.log(a))
    return pref / np.sqrt(1 + x) * hyp2f1(0.5, (1 - m) / 2, 1.5, x / (1 + x))


def _pair_table(A: GaussPoly, B: GaussPoly, kernel) -> np.ndarray:
    """sum_{p,q} A[i,p] B[j,q] kernel(p+q, zeta_i + zeta_j): the (nA, nB) integral matrix."""
    a = A.exps[:, None] + B.exps[None, :]
    out = np.zeros(a.shape)
    for p in np.flatnonzero(np.any(A.coef != 0, axis=0)):
        for q in np.flatnonzero(np.any(B.coef != 0, axis=0)):
            out += np.outer(A.coef[:, p], B.coef[:, q]) * kernel(p + q, a)
    return out


def overlap(A: GaussPoly, B: GaussPoly) -> np.ndarray:
    """int_0^inf A_i(r) B_j(r) dr."""
    return _pair_table(A, B, moment)


def coulomb(A: GaussPoly, B: GaussPoly, Z: float) -> np.ndarray:
    """int_0^inf A_i (-Z/r) B_j dr (point nucleus)."""
    return -Z * _pair_table(A, B, lambda n, a: moment(n - 1, a))


def gauss_nucleus(A: GaussPoly, B: GaussPoly, Z: float, eta: float) -> np.ndarray:
    """int_0^inf A_i (-Z erf(sqrt(eta) r)/r) B_j dr (Gaussian nucleus of exponent eta)."""
    return -Z * _pair_table(A, B, lambda n, a: gauss_nucleus_moment(n, a, eta))


# ----------------------------------------------------------------------------- grid


def radial_grid(exponents: np.ndarray, breaks=(), nq: int = 16, panels_per_decade: int = 6):
    """Gauss–Legendre points and weights on [0, r_far] for products of these Gaussians.

    Panels are geometric between r_lo = 1e-3/sqrt(zeta_max) and r_far = 9/sqrt(2 zeta_min)
    (where the widest product Gaussian has fallen to e^-81), with one panel [0, r_lo] and the
    given break points (a sphere's edge) as panel ends.  Smooth integrands then converge to
    rounding with 16 points a panel (tested against scipy.integrate.quad).
    """
    zmax, zmin = float(np.max(exponents)), float(np.min(exponents))
    r_lo = 1e-3 / np.sqrt(zmax)
    r_far = 9.0 / np.sqrt(2.0 * zmin)
    decades = np.log10(r_far / r_lo)
    edges = np.geomspace(r_lo, r_far, max(int(np.ceil(decades * panels_per_decade)), 2) + 1)
    extra = [b for b in breaks if b is not None and 0 < b < r_far]
    edges = np.unique(np.concatenate([[0.0], edges, extra]))
    xg, wg = np.polynomial.legendre.leggauss(nq)
    a, b = edges[:-1], edges[1:]
    r = (0.5 * (a + b))[:, None] + (0.5 * (b - a))[:, None] * xg[None, :]
    w = (0.5 * (b - a))[:, None] * wg[None, :]
    return r.ravel(), w.ravel()
