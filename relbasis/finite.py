"""A NaN or an infinity in a result is an error that names its cause, never a printed level.

The checks run where the numbers are made: on H and S as soon as they are assembled, and on the
roots, vectors and rounding-error estimates after the eigen-solve (:mod:`relbasis.solver`).
The config ranges (docs/config.md) keep bases inside what double precision represents; these
checks are the last line behind them (a new combination, a library fault).
"""

from __future__ import annotations

import numpy as np

from .errors import InputError


class NonFiniteError(InputError):
    """A matrix or result of a solve holds NaN or inf; the message names the symmetry and the basis."""


def _bad(a) -> int:
    return 0 if a is None else int(np.size(a) - np.count_nonzero(np.isfinite(a)))


def check_matrices(kappa: int, H: np.ndarray, S: np.ndarray, cause: str) -> None:
    """Raise :class:`NonFiniteError` if H or S of symmetry kappa has a NaN or inf entry."""
    for name, M in (("Hamiltonian", H), ("overlap matrix", S)):
        n = _bad(M)
        if n:
            raise NonFiniteError(f"the {name} of kappa {kappa:+d} has {n} non-finite entries: {cause}")


def check_roots(kappa: int, energies, vectors, error, cause: str) -> None:
    """Raise :class:`NonFiniteError` if a root, a vector entry or a rounding estimate is NaN or inf."""
    for name, a in (("roots", energies), ("eigenvectors", vectors), ("rounding-error estimates", error)):
        n = _bad(a)
        if n:
            raise NonFiniteError(f"the eigen-solve of kappa {kappa:+d} gave {n} non-finite {name}: {cause}")
