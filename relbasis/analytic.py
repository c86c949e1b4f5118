"""Exact Dirac–Coulomb results for a point nucleus: the reference the solver is checked against.

Energies follow the Sommerfeld–Darwin–Gordon formula (H. A. Bethe, E. E. Salpeter, *Quantum
Mechanics of One- and Two-Electron Atoms*, 1957, §14):

    E = c^2 [1 + (Z alpha / (n - |kappa| + gamma))^2]^(-1/2),   gamma = sqrt(kappa^2 - (Z alpha)^2).

The binding energy eps = E - c^2 is evaluated as

    eps = -c^2 x^2 / (sqrt(1 + x^2) (1 + sqrt(1 + x^2))),   x = Z alpha / (n - |kappa| + gamma),

which is algebraically identical but keeps its digits at low Z, where c^2 (s^(-1/2) - 1) would
lose them to cancellation.  The 1s functions (same source) are

    P = N sqrt(1 + gamma) r^gamma e^(-Z r),  Q = -N sqrt(1 - gamma) r^gamma e^(-Z r),
    N^2 = (2Z)^(2 gamma + 1) / (2 Gamma(2 gamma + 1)),   gamma = sqrt(1 - (Z alpha)^2),

with <r^s> = Gamma(2 gamma + 1 + s) / (Gamma(2 gamma + 1) (2Z)^s).
"""

from __future__ import annotations

import numpy as np
from scipy.special import gammaln

from .constants import ALPHA, C
from .errors import InputError, PhysicsRangeError
from .vocabulary import j_twice, orbital_l  # noqa: F401  (defined in the vocabulary; public here too)


def _check(Z: float, n: int, kappa: int) -> None:
    if int(kappa) != kappa or kappa == 0:
        raise InputError(f"kappa = {kappa!r}: must be a non-zero integer")
    if int(n) != n or n < 1:
        raise InputError(f"n = {n!r}: must be a positive integer")
    if n < orbital_l(kappa) + 1:
        raise InputError(f"n = {n} is too small for kappa = {kappa}: need n >= l + 1 = {orbital_l(kappa) + 1}")
    if not (np.isfinite(Z) and Z > 0):
        raise InputError(f"Z = {Z!r}: must be a positive number")
    if Z * ALPHA >= abs(kappa) or (abs(kappa) == 1 and Z * ALPHA >= 1):
        raise PhysicsRangeError(
            f"Z = {Z:g} gives Z*alpha = {Z * ALPHA:.4f} >= |kappa|: no point-nucleus solution; use a finite nucleus"
        )


def dirac_coulomb_energy(Z: float, n: int, kappa: int, c: float = C) -> float:
    """Binding energy eps = E - c^2 (hartree) of the point-nucleus level (n, kappa)."""
    _check(Z, n, kappa)
    za = Z / c
    gamma = np.sqrt(kappa * kappa - za * za)
    x = za / (n - abs(kappa) + gamma)
    root = np.sqrt(1.0 + x * x)
    return float(-(c * c) * x * x / (root * (1.0 + root)))


def gamma_1s(Z: float, c: float = C) -> float:
    """gamma = sqrt(1 - (Z alpha)^2) of the 1s state."""
    _check(Z, 1, -1)
    za = Z / c
    return float(np.sqrt(1.0 - za * za))


def radial_1s(r, Z: float, c: float = C):
    """Normalised point-nucleus 1s functions (P, Q) at radii r (bohr)."""
    g = gamma_1s(Z, c)
    r = np.asarray(r, dtype=float)
    log_norm = 0.5 * ((2 * g + 1) * np.log(2 * Z) - np.log(2.0) - gammaln(2 * g + 1))
    with np.errstate(divide="ignore"):
        base = np.exp(log_norm + g * np.log(r) - Z * r)
    return np.sqrt(1 + g) * base, -np.sqrt(1 - g) * base


def expectation_1s(Z: float, s: float, c: float = C) -> float:
    """<r^s> of the point-nucleus 1s state, Gamma(2g+1+s) / (Gamma(2g+1) (2Z)^s), s > -2g-1."""
    g = gamma_1s(Z, c)
    if not s > -2 * g - 1:
        raise InputError(f"s = {s!r}: <r^s> of 1s diverges for s <= -2 gamma - 1 = {-2 * g - 1:.6f}")
    return float(np.exp(gammaln(2 * g + 1 + s) - gammaln(2 * g + 1) - s * np.log(2 * Z)))
