"""A free particle (Z = 0, V = 0) in a spherical cavity with the bag wall P(R) = -Q(R).

Exact levels: P = r j_l(kr) and, from the first radial equation with V = 0,
Q = c D+P/(E + c^2) = -c k r j_{l+1}(kr)/(E + c^2) for kappa < 0 and +c k r j_{l-1}(kr)/(E + c^2)
for kappa > 0 (spherical-Bessel recurrences, common practice), E = sqrt(c^2 k^2 + c^4).  The bag
condition P(R) = -Q(R) is then a scalar equation in k, solved here with scipy.special.spherical_jn
and brentq (the derivation and the sign are in docs/audit.md).
"""

import numpy as np
import pytest
from scipy.optimize import brentq
from scipy.special import spherical_jn

from conftest import solve_cached
from relbasis.constants import C


def bag_levels(kappa: int, R: float, count: int) -> np.ndarray:
    """Lowest positive-energy binding energies eps = E - c^2 with P(R) = -Q(R)."""
    l = kappa if kappa > 0 else -kappa - 1
    lq, sq = (l + 1, -1.0) if kappa < 0 else (l - 1, 1.0)

    def f(k):  # P(R) + Q(R), divided by R
        E = np.sqrt((k * C) ** 2 + C**4)
        return spherical_jn(l, k * R) + sq * C * k / (E + C * C) * spherical_jn(lq, k * R)

    ks = np.linspace(1e-6 / R, (count + 3) * np.pi / R + 10 / R, 40000)
    vals = f(ks)
    roots = [brentq(f, a, b, xtol=1e-13 / R, rtol=1e-15, maxiter=200)
             for a, b, fa, fb in zip(ks[:-1], ks[1:], vals[:-1], vals[1:]) if fa * fb < 0]
    x = np.array(roots[:count]) / C
    return C * C * x * x / (np.sqrt(1 + x * x) + 1)


@pytest.mark.parametrize("R", [1.0, 0.01])
@pytest.mark.parametrize("kappa", [-1, 1])
def test_bag_levels_match_spherical_bessel_roots(R, kappa):
    """Lowest five positive-energy levels, same splines for P and Q, bag wall: relative 1e-8."""
    sol = solve_cached(ion={"Z": 0}, basis={"r_max": R, "wall": "bag", "balance": "none"}, solve={"kappas": [kappa]})
    eps = sol[kappa].energies
    got = eps[eps > 0][:5]
    np.testing.assert_allclose(got, bag_levels(kappa, R, 5), rtol=1e-8)


@pytest.mark.parametrize("R", [1.0, 0.01])
def test_dkb_with_bag_wall_kappa_minus_one(R):
    """DKB with the bag wall reproduces the same levels for kappa = -1 (relative 1e-8)."""
    sol = solve_cached(ion={"Z": 0}, basis={"r_max": R, "wall": "bag"}, solve={"kappas": [-1]})
    eps = sol[-1].energies
    np.testing.assert_allclose(eps[eps > 0][:5], bag_levels(-1, R, 5), rtol=1e-8)


def test_free_particle_needs_a_cavity_radius():
    import relbasis
    from relbasis.errors import InputError

    with pytest.raises(InputError, match="r_max"):
        relbasis.solve(ion={"Z": 0})
