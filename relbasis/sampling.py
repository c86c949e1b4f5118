"""Basis functions sampled on a quadrature: the one naming scheme for their components.

Every family hands the solver its functions of one kappa on its own quadrature as an object with
``r`` and ``w`` (points and weights, flat), ``size`` (functions), ``dense(name)`` (points x
functions) and ``evaluate(coefficients, names)`` (the components of the combinations).  The
components are named P, Q, DP = D+P and DQ = D-Q, with D+- = d/dr +- kappa/r; the one-letter codes
"P", "Q", "D", "M" are accepted as a string for brevity.  B-splines keep a local, per-interval form
(:class:`relbasis.dirac.LocalChannels`); families with dense functions use :class:`DenseChannels`.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

COMPONENTS = ("P", "Q", "DP", "DQ")
"""The names of the sampled components: P, Q, D+P and D-Q (D+- = d/dr +- kappa/r)."""
_LETTERS = {"P": "P", "Q": "Q", "D": "DP", "M": "DQ"}


def channel_names(channels) -> tuple[str, ...]:
    """("P", "DP", ...) from names, or from a string of the one-letter codes "PQDM"."""
    if isinstance(channels, str):
        if channels in COMPONENTS:
            return (channels,)
        return tuple(_LETTERS[ch] for ch in channels)
    return tuple(channels)


@dataclass(frozen=True)
class DenseChannels:
    """P, Q, D+P, D-Q of every basis function at the points r (weights w): (points, size) each."""

    r: np.ndarray
    w: np.ndarray
    P: np.ndarray = field(repr=False)
    Q: np.ndarray = field(repr=False)
    DP: np.ndarray = field(repr=False)
    DQ: np.ndarray = field(repr=False)
    kappa: int | None = None  # the symmetry of the functions
    panel_points: int | None = None  # quadrature points per panel of r (None: not a panel grid)

    @property
    def size(self) -> int:
        return self.P.shape[1]

    def project(self, fP: np.ndarray, fQ: np.ndarray) -> np.ndarray:
        """int (P_i fP + Q_i fQ) dr for every function i and every column of fP, fQ (given at
        the points r, (points, m)): (size, m)."""
        return (self.P * self.w[:, None]).T @ fP + (self.Q * self.w[:, None]).T @ fQ

    def dense(self, channel: str, size: int | None = None) -> np.ndarray:
        return getattr(self, channel_names(channel)[0])

    def evaluate(self, coefficients: np.ndarray, channels=("P", "Q", "DP")) -> tuple[np.ndarray, ...]:
        return tuple(getattr(self, ch) @ coefficients for ch in channel_names(channels))
