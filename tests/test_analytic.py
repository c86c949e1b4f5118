"""The exact Dirac–Coulomb reference against an independent arbitrary-precision evaluation.

Source of the formulas: Sommerfeld–Darwin–Gordon formula; Bethe & Salpeter, Quantum Mechanics
of One- and Two-Electron Atoms (1957), §14.  mpmath evaluates the textbook form
c^2 (s^(-1/2) - 1) with 50 digits, where double precision would cancel.
"""

import mpmath as mp
import numpy as np
import pytest
from scipy.integrate import quad

from relbasis.analytic import dirac_coulomb_energy, expectation_1s, gamma_1s, radial_1s
from relbasis.constants import C
from relbasis.errors import InputError, PhysicsRangeError


def exact_mp(Z, n, kappa):
    with mp.workdps(50):
        c = mp.mpf(repr(C))
        za = mp.mpf(Z) / c
        g = mp.sqrt(kappa * kappa - za * za)
        s = 1 + (za / (n - abs(kappa) + g)) ** 2
        return float(c * c * (1 / mp.sqrt(s) - 1))


@pytest.mark.parametrize("Z", [1, 2, 10, 54, 92, 118, 136])
@pytest.mark.parametrize("n,kappa", [(1, -1), (2, -1), (2, 1), (2, -2), (3, 2), (3, -3), (5, 4), (5, -5), (9, -1)])
def test_energy_matches_mpmath(Z, n, kappa):
    """Sommerfeld–Darwin–Gordon formula (Bethe & Salpeter 1957 §14), rearranged vs mpmath."""
    assert dirac_coulomb_energy(Z, n, kappa) == pytest.approx(exact_mp(Z, n, kappa), rel=4e-15)


def test_hydrogen_fine_structure_split():
    """2p3/2 - 2p1/2 of hydrogen ~ 4.53e-5 eV (fact of the trade, common practice; 0.5 %)."""
    from relbasis.constants import HARTREE_EV

    split = (dirac_coulomb_energy(1, 2, -2) - dirac_coulomb_energy(1, 2, 1)) * HARTREE_EV
    assert split == pytest.approx(4.53e-5, rel=5e-3)


def test_degeneracy_of_partner_symmetries():
    """Dirac–Coulomb levels depend on n and |kappa| only (Bethe & Salpeter 1957 §14)."""
    assert dirac_coulomb_energy(92, 2, -1) == dirac_coulomb_energy(92, 2, 1)
    assert dirac_coulomb_energy(50, 4, -3) == dirac_coulomb_energy(50, 4, 3)


@pytest.mark.parametrize("Z", [1, 40, 92])
def test_1s_functions_normalised_and_solve_the_equations(Z):
    """1s: P ∝ sqrt(1+g) r^g e^-Zr, Q ∝ -sqrt(1-g) r^g e^-Zr (Bethe & Salpeter 1957 §14)."""
    norm = quad(lambda r: sum(f**2 for f in radial_1s(r, Z)), 0, 80 / Z, limit=400, points=[1 / Z, 10 / Z])[0]
    assert norm == pytest.approx(1.0, rel=1e-10)
    # radial equations P' = -kappa/r P + (eps - V + 2c^2)/c Q with kappa = -1, V = -Z/r
    eps = dirac_coulomb_energy(Z, 1, -1)
    r = np.geomspace(1e-3 / Z, 10 / Z, 50)
    h = 1e-6 * r
    dP = (radial_1s(r + h, Z)[0] - radial_1s(r - h, Z)[0]) / (2 * h)
    P, Q = radial_1s(r, Z)
    rhs = P / r + (eps + Z / r + 2 * C * C) / C * Q
    np.testing.assert_allclose(dP, rhs, rtol=1e-6)


@pytest.mark.parametrize("s", [-1.5, -1, 1, 2, 3])
@pytest.mark.parametrize("Z", [1, 82])
def test_expectation_values_by_quadrature(Z, s):
    """<r^s> = Gamma(2g+1+s) / (Gamma(2g+1) (2Z)^s) against scipy.integrate.quad of P^2+Q^2."""
    want = quad(lambda r: r**s * sum(f**2 for f in radial_1s(r, Z)), 0, 80 / Z, limit=400, points=[1 / Z, 10 / Z])[0]
    assert expectation_1s(Z, s) == pytest.approx(want, rel=1e-8)


def test_small_component_weight():
    """Weight of Q in 1s is (1 - gamma)/2 (follows from the 1s functions, Bethe & Salpeter 1957 §14)."""
    Z = 92
    g = gamma_1s(Z)
    w = quad(lambda r: radial_1s(r, Z)[1] ** 2, 0, 80 / Z, limit=400, points=[1 / Z, 10 / Z])[0]
    assert w == pytest.approx((1 - g) / 2, rel=1e-9)


@pytest.mark.parametrize("Z,n,kappa", [(137.1, 1, -1), (300, 2, -2), (-1, 1, -1), (10, 0, -1), (10, 1, 1), (10, 2, 0)])
def test_bad_arguments(Z, n, kappa):
    with pytest.raises(InputError):
        dirac_coulomb_energy(Z, n, kappa)


def test_point_nucleus_beyond_z_alpha_one_names_finite_nucleus():
    with pytest.raises(PhysicsRangeError, match="finite nucleus"):
        dirac_coulomb_energy(140, 1, -1)
