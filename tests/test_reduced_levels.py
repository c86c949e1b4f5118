"""The reduced levels of the error estimate found by inverse iteration (relbasis.solver.ReducedBasis,
relbasis.eigen.roots_near) against the reduced basis solved whole: the same levels, and the
whole solve wherever a check fails.  Internal consistency; no outside figure."""

import numpy as np

from relbasis import eigen
from relbasis.confidence import reduced_config
from relbasis.config import resolve
from relbasis.constants import C
from relbasis.families import family_of
from relbasis.hamiltonian import nucleus_term
from relbasis.solver import ReducedBasis, as_config, solve_symmetry


def _sets(**sections):
    cfg, nuc = resolve(as_config(None, **sections))
    small = reduced_config(cfg)
    return (family_of(cfg).build_set(cfg, nuc, C), family_of(small).build_set(small, nuc, C),
            (nucleus_term(nuc),))


def _levels(spec):
    return {n: float(e) for n, e, b in zip(spec.n, spec.energies, spec.branches) if n is not None and b == "bound"}


def test_levels_by_inverse_iteration_are_those_of_the_whole_reduced_solve():
    """Z = 92 Fermi nucleus, kappa = -1 and -4: every level of the full basis finds its reduced
    counterpart, and the error estimate |eps - eps_reduced| / |eps| made with it agrees with the
    one made with the whole reduced solve within 10 % (or both are below 1e-12, rounding)."""
    fset, rset, terms = _sets(ion={"Z": 92})
    for kappa in (-1, -4):
        wanted = _levels(solve_symmetry(fset, kappa, terms, None, {})[1])
        whole = _levels(solve_symmetry(rset, kappa, terms, None, None, levels_only=True)[1])
        found = ReducedBasis(rset, kappa, terms).levels(wanted, None)
        assert found is not None and set(found) == set(wanted)
        for n, e in found.items():
            ours, before = (abs(wanted[n] - x) / abs(wanted[n]) for x in (e, whole[n]))
            assert max(ours, before) < 1e-12 or abs(ours / before - 1) < 0.1, (kappa, n, ours, before)


def test_a_level_whose_nearest_reduced_root_is_another_is_refused():
    """A 40-spline basis at Z = 10: the reduced root nearest some full level has the wrong node
    count, so the levels are refused (None) and the caller solves the reduced basis whole."""
    fset, rset, terms = _sets(ion={"Z": 10}, basis={"size": 40})
    wanted = _levels(solve_symmetry(fset, -1, terms, None, {})[1])
    assert ReducedBasis(rset, -1, terms).levels(wanted, None) is None


def test_roots_near_finds_the_root_next_to_each_shift():
    """A diagonal pencil (H = diag(1..6), S = I): shifts just off 2 and 5 give 2 and 5; the flat
    start has a component along every root (common practice of inverse iteration)."""
    H, S = np.diag(np.arange(1.0, 7.0)), np.eye(6)
    eps, vectors, settled = eigen.roots_near(H, S, [2.0 + 1e-3, 5.0 - 1e-3])
    assert settled.all()
    assert np.allclose(eps, [2.0, 5.0], rtol=0, atol=1e-12)
    assert np.allclose(np.abs(vectors[[1, 4], [0, 1]]), 1.0, atol=1e-6)


def test_roots_near_refuses_an_indefinite_overlap():
    """S with a positive diagonal but a negative eigenvalue (1 - 0.9 sqrt 2) is no metric: None,
    and the reduced basis is solved whole."""
    S = np.eye(3) + 0.9 * (np.eye(3, k=1) + np.eye(3, k=-1))
    assert eigen.roots_near(np.eye(3), S, [0.5]) is None
