"""Roots whose digits are lost to rounding: the ``precision-limited`` flag, and the continuum edge.

The eigensolver (:mod:`relbasis.eigen`) gives every root an estimate of its rounding error
(``Eigensystem.error``, hartree): machine epsilon times the largest |root| for roots taken from
the full solve, much less for the roots recomputed by shift and invert or refined by inverse
iteration.  The largest roots grow as c/r_min and 2c^2, so with c far above 1/alpha (checks of
the nonrelativistic limit) some roots keep only a few digits.  Two rules follow:

* A root whose estimated relative error ``error / max(|eps|, gap)`` exceeds
  :data:`RELATIVE_LIMIT` (gap: the distance to its nearest neighbour) gets the flag
  ``precision-limited``, whatever its branch; its branch and label are kept.  With the default bases and c = 1/alpha
  no root does.
* *The continuum edge.*  The roots at the top of the negative continuum lie within
  (pi/r_max)^2/2 ~ 2e-4 Z^2 hartree below eps = -2c^2, which is closer than the spacing of
  doubles at 2c^2 (2.4e-4 at c = 1e6, 4 at c = 1e8) and than eigh's error there (0.02 at
  c = 1e6): they can come out at or above -2c^2, where they would be taken for roots of the
  bound-state window.  A root at or above the edge by less than EDGE_MARGIN times its error
  estimate whose small component holds most of its norm (negative-energy character: the
  large component dominates every state of positive energy) is put at the largest double
  below -2c^2 and flagged.  For V <= 0 (every nuclear model here) the negative-energy roots
  lie below -2c^2, so this is the representable value nearest to the computed one on the side
  the physics requires; its error is still the stated estimate.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np

from .eigen import Eigensystem

FLAG = "precision-limited"
RELATIVE_LIMIT = 1e-9
"""Largest estimated relative rounding error of a root left unflagged: the accuracy the bound
levels are checked to at large c.  With c = 1/alpha the bound levels of the default bases
estimate at 1e-15; the separated roots whose estimate exceeds a tenth of the limit (9e-10 was the
largest, a continuum root of Z = 118) are refined by inverse iteration (:data:`POLISH_SHARE`),
after which the largest ratio measured is 1.3e-10 (Gaussians, Z = 1)."""
POLISH_SHARE = 0.1
"""Separated roots whose estimate exceeds this share of the limit are refined by inverse iteration."""
EDGE_MARGIN = 1e4
"""Roots within this many error estimates above -2c^2 are examined for negative-energy character.
At the edge, where the negative-continuum roots crowd within rounding of each other, eigh's
error exceeded its estimate by 6.4 (Z = 1, kappa = -3, c = 1e6) and by 850 (Z = 1, kappa = -1,
c = 1e7); the character test decides, the margin only keeps it away from genuine deep roots
(at c = 1/alpha it is 7e-3 hartree for Z = 1 and 10 hartree for Z = 92, on a gap of 2c^2)."""
ISOLATION = 1e4
"""A root is refined by inverse iteration from the full solve only if its neighbours are this many
error estimates away; with the Kato–Temple estimate |r|^2/gap that is |r| < gap/100, so that
one step shrinks the error of the vector a hundredfold (the refined root's estimate is then
computed afresh from its own residual)."""
SMALL_SHARE = 0.5
"""Share of the norm in the small component Q above which a root has negative-energy character."""


def near_edge(system: Eigensystem, floor: float) -> np.ndarray:
    """Indices of the roots at or above ``floor`` (-2c^2) by less than EDGE_MARGIN error estimates."""
    e, err = system.energies, system.error
    if err is None:
        return np.zeros(0, dtype=int)
    return np.flatnonzero((e >= floor) & (e <= floor + EDGE_MARGIN * err))


def settle_edge(system: Eigensystem, floor: float, small_share: np.ndarray, which: np.ndarray
                ) -> tuple[Eigensystem, np.ndarray]:
    """Put the edge roots ``which`` with negative-energy character just below ``floor``.

    ``small_share`` holds int Q^2 / int (P^2 + Q^2) of the roots ``which``.  Returns the
    re-sorted system and a mask (in its order) of the roots that were moved.
    """
    moved = np.zeros(system.energies.size, dtype=bool)
    moved[np.asarray(which, dtype=int)[np.asarray(small_share) > SMALL_SHARE]] = True
    if not moved.any():
        return system, moved
    energies = system.energies.copy()
    error = system.error.copy()
    below = np.nextafter(floor, -np.inf)
    error[moved] = np.maximum(error[moved], energies[moved] - below)  # at least the distance moved
    energies[moved] = below
    order = np.argsort(energies, kind="stable")
    error = error[order]
    out = replace(system, energies=energies[order], vectors=system.vectors[:, order],
                  refined=system.refined[order], error=error)
    return out, moved[order]


def _gaps(e: np.ndarray) -> np.ndarray:
    """Distance of each root (ascending) to its nearest neighbour."""
    if e.size < 2:
        return np.full(e.size, np.inf)
    gaps = np.diff(e)
    return np.minimum(np.concatenate([[np.inf], gaps]), np.concatenate([gaps, [np.inf]]))


def lost(system: Eigensystem, share: float = 1.0) -> np.ndarray:
    """Mask of the roots whose estimated relative error exceeds ``share`` x :data:`RELATIVE_LIMIT`.

    Relative to the larger of |eps| and the distance to the nearest other root: roots enter
    sums over states through differences with other roots, and a root of the positive
    continuum just above 0 (|eps| ~ 1e-3 Z^2) is not less precise for being near 0.
    """
    if system.error is None:
        return np.zeros(system.energies.size, dtype=bool)
    e = system.energies
    gap = _gaps(e)
    scale = np.maximum(np.abs(e), np.where(np.isfinite(gap), gap, 0.0))
    with np.errstate(divide="ignore", invalid="ignore"):
        return ~(system.error <= share * RELATIVE_LIMIT * scale)


def isolated(system: Eigensystem) -> np.ndarray:
    """Mask of the roots whose neighbours are ISOLATION error estimates away or more: inverse
    iteration from them converges to them (and not to a neighbour) in one step."""
    if system.error is None:
        return np.ones(system.energies.size, dtype=bool)
    return _gaps(system.energies) > ISOLATION * system.error


def precision_flags(system: Eigensystem, moved: np.ndarray | None = None) -> dict[int, str]:
    """Root index -> ``precision-limited`` for the roots of :data:`RELATIVE_LIMIT` and the edge."""
    mask = lost(system)
    if moved is not None:
        mask |= moved
    return {int(i): FLAG for i in np.flatnonzero(mask)}


def with_flags(spec, extra: dict[int, str]):
    """The spectrum with the flags ``extra`` appended to its roots; branches and labels unchanged.

    (Passed through ``classify(external=...)`` they would turn bound states into spurious roots
    and shift the n of every level above them: a precision-limited level is still that level.)
    """
    if not extra:
        return spec
    flags = tuple(f + (extra[i],) if i in extra and extra[i] not in f else f for i, f in enumerate(spec.flags))
    return replace(spec, flags=flags)
