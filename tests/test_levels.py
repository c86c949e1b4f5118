"""One-electron Dirac spectra in the default B-spline basis against the exact Dirac–Coulomb levels.

Reference: the Sommerfeld–Darwin–Gordon formula (Bethe & Salpeter, Quantum Mechanics of One-
and Two-Electron Atoms (1957), §14), evaluated by relbasis.analytic and checked there against
mpmath.
"""

import numpy as np
import pytest
from scipy.integrate import trapezoid  # numpy's own trapezoid needs numpy >= 2.0; the floor is 1.24

from conftest import solve_cached
from relbasis.analytic import dirac_coulomb_energy, orbital_l
from relbasis.constants import C

KAPPAS = (-1, 1, -2, 2, -3, 3, -4, 4)


def point(Z, **basis):
    return solve_cached(ion={"Z": Z, "nucleus": "point"}, basis=basis)


def _states(max_n=5):
    return [(n, k) for k in KAPPAS for n in range(orbital_l(k) + 1, max_n + 1)]


@pytest.mark.parametrize("Z", [1, 2, 10, 26, 54, 82, 92, 100])
def test_point_nucleus_levels_to_1e11(Z):
    """Every bound level n <= 5, |kappa| <= 4: 1e-11 (n <= 4) and 1e-10 (n = 5), Bethe & Salpeter §14."""
    sol = point(Z)
    for n, kappa in _states():
        err = abs(sol[kappa].level(n) / dirac_coulomb_energy(Z, n, kappa) - 1)
        assert err < (1e-11 if n <= 4 else 1e-10), (n, kappa, err)


def test_point_nucleus_levels_z118_to_1e9():
    """Z = 118, gamma(1s) = 0.375: 1e-9 for every level n <= 5, |kappa| <= 4 (Bethe & Salpeter §14)."""
    sol = point(118)
    for n, kappa in _states():
        assert abs(sol[kappa].level(n) / dirac_coulomb_energy(118, n, kappa) - 1) < 1e-9, (n, kappa)


def test_convergence_in_size_z92():
    """1s and 2p1/2 errors fall steadily from 30 to 70 splines at order 10 in the cavity 150/Z
    (docs/convergence.md); 20 splines do not yet hold a 1s (no root with P free of nodes)."""
    errs = []
    for size in (30, 40, 50, 60, 70):
        sol = solve_cached(ion={"Z": 92, "nucleus": "point"}, basis={"size": size, "r_max": 150 / 92},
                           solve={"kappas": [-1, 1]})
        errs.append([abs(sol[-1].level(1) / sol.exact(-1, 1) - 1), abs(sol[1].level(2) / sol.exact(1, 2) - 1)])
    errs = np.array(errs)
    assert np.all(np.diff(np.log10(errs), axis=0) < -0.5), errs  # each step at least 3x better
    assert errs[-1].max() < 1e-7


@pytest.mark.parametrize("Z", [1, 10, 54, 92])
def test_unbalanced_basis_has_the_known_spurious_root(Z):
    """Same splines for P and Q: for each kappa > 0 a root sits at the level of -kappa with n = kappa
    (1s for kappa = +1) — W. R. Johnson, S. A. Blundell, J. Sapirstein, Phys. Rev. A 37, 307 (1988).
    relbasis labels it spurious with its reasons and labels the rest as usual."""
    sol = point(Z, balance="none")
    for kappa in (1, 2, 3, 4):
        spec = sol[kappa]
        spurious = spec.indices("spurious")
        lone = dirac_coulomb_energy(Z, kappa, -kappa)  # 1s1/2, 2p3/2, 3d5/2, 4f7/2
        hits = [i for i in spurious if abs(spec.energies[i] / lone - 1) < 1e-6]
        assert len(hits) == 1, (kappa, spec.energies[spurious])
        assert {"kinetic-balance-residual", "duplicate-level"} <= set(spec.flags[hits[0]])
        # the physical series starts right after it, correctly labelled
        assert spec.labels[hits[0] + 1] == f"{kappa + 1}{'spdfg'[kappa]}{2 * kappa - 1}/2"
        assert abs(spec.level(kappa + 1) / dirac_coulomb_energy(Z, kappa + 1, kappa) - 1) < 1e-9
    for kappa in (-1, -2, -3, -4):
        assert sol[kappa].labels[sol[kappa].indices("bound")[0]].startswith(str(-kappa))


@pytest.mark.parametrize("Z", [1, 2, 10, 26, 54, 82, 92, 100, 118])
def test_dual_kinetic_balance_flags_nothing(Z):
    """With DKB no root of any kappa, |kappa| <= 4, is spurious (Shabaev et al., PRL 93, 130405
    (2004)), and the default cavity holds every level n <= 7 without a flag."""
    sol = point(Z)
    for kappa in KAPPAS:
        spec = sol[kappa]
        assert not any(f for f, n in zip(spec.flags, spec.n) if n is not None and n <= 7), (kappa, spec.flags)
        assert "spurious" not in spec.branches


@pytest.mark.parametrize("model", ["point", "fermi"])
@pytest.mark.parametrize("Z", [26, 92])
def test_every_root_once_and_the_dkb_split(Z, model):
    """Roots = rows of H; the negative branch holds exactly the lower-family functions.

    N splines; DKB removes B_0, B_{N-2}, B_{N-1}; B_1 stays in both families for a point
    nucleus, otherwise in 'upper' only for kappa = -1 and in 'lower' only for kappa = +1.
    So a point nucleus gives (N-3) negative + (N-3) others, a finite one (N-4 or N-3) each.
    """
    sol = solve_cached(ion={"Z": Z, "nucleus": model})
    N = sol.config.basis.size
    states = sol.states()
    assert len(states) == sum(sol.bases[k].size for k in sol.kappas)
    for kappa in sol.kappas:
        spec = sol[kappa]
        assert sorted(spec.energies) == list(spec.energies)
        n_neg = len(spec.indices("negative"))
        if model == "point":
            want_neg, want_rest = N - 3, N - 3
        else:
            want_neg = N - 3 if kappa == 1 else N - 4
            want_rest = N - 3 if kappa == -1 else N - 4
        assert n_neg == want_neg
        assert len(spec) - n_neg == want_rest
        assert np.all(spec.energies[spec.indices("negative")] < -2 * C * C)


def test_states_are_normalised_with_p_positive_near_origin():
    """∫(P² + Q²) dr = 1 and P > 0 at small r (the conventions of DEVELOPERS.md, common practice)."""
    sol = point(54)
    spec, basis = sol[-1], sol.bases[-1]
    r = np.geomspace(1e-6, basis.splines.r_max, 4000)
    P, Q = basis.components(r)[:2]
    for i in spec.indices("bound")[:4]:
        p, q = P @ spec.vectors[:, i], Q @ spec.vectors[:, i]
        assert trapezoid(p * p + q * q, r) == pytest.approx(1.0, rel=1e-4)
        assert p[np.argmax(np.abs(p) > 1e-3 * np.abs(p).max())] > 0


def test_beyond_z137_with_a_finite_nucleus():
    """Z = 140 (Z alpha > 1) works with a Fermi nucleus: the 1s total energy E = eps + c^2 is a small
    fraction of m c^2 (it reaches 0 near Z = 150 for extended nuclei, from memory) and no root is
    spurious."""
    sol = solve_cached(ion={"Z": 140, "A": 350, "nucleus": "fermi"}, solve={"kappas": [-1, 1]})
    e1s = sol[-1].level(1)
    assert 0 < e1s + C * C < 0.3 * C * C
    assert "spurious" not in sol[-1].branches + sol[1].branches
