"""How far a computed level can be trusted: an error estimate from the basis itself.

Two figures are made for every labelled level, both relative to |eps|:

``resolution``
    |eps_N - eps_N'| / |eps_N|, the change of the level between the basis and a reduced one
    (:func:`reduced_config`: about a tenth fewer functions; for a point nucleus the first knot
    further out; Gaussians lose their most diffuse exponent).  The
    levels of a basis converge (exponentially for B-splines, docs/convergence.md), so the change
    is an upper estimate of the error of the larger basis; it misses only what both bases share,
    the cavity.
``cavity``
    The shift a cavity wall at r = R gives a level whose free-space function decays as
    P0 ~ exp(-k r) outside the outer turning point, k = sqrt(-eps (2 + eps/c^2)):
    Delta eps ~ k P0(R)^2.  (From Green's identity for the nonrelativistic radial equation with
    u(R) = 0: Delta E = -u0(R) u'(R) / (2 int u0 u), with u'(R) ~ -2k u0(R); common practice.)
    P0(R) is extrapolated from the computed P two decay lengths inside the wall, using the local
    decay rate there (so that the power-law factor of a Coulomb tail is kept).  A level whose
    outer turning point lies within two decay lengths of the wall fills the cavity: the estimate
    is then 1.

A level whose estimate exceeds :data:`CONFIDENCE_THRESHOLD` gets the flag ``unconverged`` or
``cavity-limited`` (docs/spectrum.md has the calibration against exact Dirac–Coulomb levels).
"""

from __future__ import annotations

import numpy as np

from .vocabulary import orbital_l
from .families import ORIGIN_FACTOR, family_of, reduction  # noqa: F401  (ORIGIN_FACTOR, reduction: public here too)

CONFIDENCE_THRESHOLD = 1e-9
"""Largest estimated relative error of a level printed as plainly bound.  For B-splines the
estimate is 0.8 to 3 times the true error (docs/spectrum.md, calibration table), so plainly
bound levels are within about 1e-9 of the exact level of the stated model; for Gaussians it can
fall short up to 25 times (plainly bound rows measured up to 1.4e-9)."""


def reduced_config(config):
    """The resolved config of the reduced basis (None where none can be made): the family's
    own rule (:meth:`relbasis.families.BasisFamily.reduced`)."""
    return family_of(config).reduced(config)


def judge(eps: float, reference: float | None, cavity: float) -> tuple[float, list[str]]:
    """The estimate of one level and the flags it earns.

    ``reference`` is the level in the reduced basis (inf: the reduced basis lacks it; None: no
    comparison asked for, as in the reduced solve itself); ``cavity`` the relative cavity shift.
    """
    flags = []
    resolution = 0.0
    if reference is not None:
        resolution = abs(eps - reference) / abs(eps) if np.isfinite(reference) else np.inf
        if not resolution <= CONFIDENCE_THRESHOLD:
            flags.append("unconverged")
    if not cavity <= CONFIDENCE_THRESHOLD:
        flags.append("cavity-limited")
    return max(resolution, cavity), flags


def cavity_estimate(energies: np.ndarray, P: np.ndarray, r: np.ndarray, w: np.ndarray, V: np.ndarray,
                    kappa: int, wall: float, c: float) -> np.ndarray:
    """Relative shift of each level by the cavity wall at ``wall`` (see the module docstring).

    ``P`` (grid x levels) holds the normalised large components on the ascending grid ``r``
    with potential ``V``.
    """
    eps = np.asarray(energies, dtype=float)
    k = np.sqrt(np.maximum(-eps * (2 + eps / (c * c)), 1e-300))
    l = orbital_l(kappa)
    out = np.ones(eps.size)
    centrifugal = l * (l + 1) / (2 * r * r)
    for j in range(eps.size):
        r_e = wall - 2.0 / k[j]
        allowed = eps[j] - V - centrifugal > 0
        turning = r[allowed].max() if np.any(allowed) else 0.0
        if r_e <= turning or r_e - 1.0 / k[j] <= r[0]:
            continue  # the level fills the cavity: estimate 1
        p_e = abs(np.interp(r_e, r, P[:, j]))
        p_in = abs(np.interp(r_e - 1.0 / k[j], r, P[:, j]))
        ratio = min(p_e / p_in, 1.0) if p_in > 0 else np.exp(-1.0)
        p_wall = p_e * ratio**2 / (1 - np.exp(-4.0))
        out[j] = k[j] * p_wall**2 / abs(eps[j])
    return out
