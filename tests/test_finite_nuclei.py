"""Finite nuclei: levels against an independent shooting solution of the radial ODEs.

No closed form exists for extended nuclei; tests/shooting.py integrates the radial Dirac
equations directly with scipy.integrate.solve_ivp and matches inward and outward solutions
(an independent method, the natural check of finite-nucleus levels where no closed form exists).
"""

import pytest

from conftest import solve_cached
from relbasis.analytic import dirac_coulomb_energy
from relbasis.constants import C, FM_BOHR
from shooting import dirac_level

STATES = [(1, -1), (2, -1), (2, 1)]


@pytest.mark.parametrize("model", ["sphere", "gauss", "fermi"])
@pytest.mark.parametrize("Z", [82, 92])
def test_levels_match_shooting_to_1e9(Z, model):
    """1s, 2s, 2p1/2 of the default basis vs scipy.integrate.solve_ivp shooting, relative 1e-9."""
    sol = solve_cached(ion={"Z": Z, "nucleus": model}, solve={"kappas": [-1, 1]})
    nuc = sol.nucleus
    r_break = nuc.sphere_radius_bohr if model == "sphere" else None
    for n, kappa in STATES:
        ref = dirac_level(nuc.potential, kappa, n, c=C, Z=Z, r_break=r_break)
        assert abs(sol[kappa].level(n) / ref - 1) < 1e-9, (n, kappa)


@pytest.mark.parametrize("Z,model", [(1, "sphere"), (1, "gauss"), (2, "sphere"), (2, "gauss"), (2, "fermi")])
@pytest.mark.parametrize("n", [1, 2])
def test_finite_size_shift_of_light_ions(Z, model, n):
    """ns shift = (2/3) Z^4 <r^2> / n^3 (first-order perturbation theory, common practice), 0.5 %.

    the formula is 0.06 % off at Z = 1 (relativistic terms grow like (Z alpha)^2)."""
    sol = solve_cached(ion={"Z": Z, "nucleus": model}, solve={"kappas": [-1]})
    r2 = (sol.nucleus.rms_radius_fm * FM_BOHR) ** 2
    shift = sol[-1].level(n) - dirac_coulomb_energy(Z, n, -1)
    assert shift == pytest.approx(2 / 3 * Z**4 * r2 / n**3, rel=5e-3)


def test_finite_nuclei_flag_nothing():
    """DKB with a finite nucleus: no spurious root of |kappa| <= 4 (Shabaev et al., PRL 93, 130405
    (2004)), and the default cavity holds every level n <= 7 without a flag."""
    for Z, model in [(1, "gauss"), (26, "sphere"), (54, "fermi"), (92, "fermi"), (118, "fermi")]:
        sol = solve_cached(ion={"Z": Z, "nucleus": model})
        for kappa in sol.kappas:
            spec = sol[kappa]
            assert "spurious" not in spec.branches, (Z, model, kappa)
            assert not any(f for f, n in zip(spec.flags, spec.n) if n is not None and n <= 7), (Z, model, kappa)
