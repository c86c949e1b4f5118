"""The Hamiltonian as a sum of named terms: a toy local term whose effect is exact, a nonlocal
term given by its matrix, in both basis families, recorded in the JSON document and the file."""

from __future__ import annotations

import numpy as np
import pytest

import relbasis
from relbasis.errors import InputError
from relbasis.hamiltonian import LocalTerm, NonlocalTerm

BASES = {
    "bspline": {"size": 40},
    "gaussian": {"family": "gaussian", "size": 24, "balance": "rkb"},
}
SHIFT = -0.375  # hartree


@pytest.mark.parametrize("family", sorted(BASES))
def test_a_constant_local_term_shifts_every_root_exactly(family):
    """V = const adds const x S to H, so every root of the pencil moves by exactly const
    (common practice: the spectrum of H + aS is that of H shifted by a)."""
    config = {"ion": {"Z": 20, "nucleus": "gauss"}, "basis": BASES[family], "solve": {"kappas": [-1, 2]}}
    plain = relbasis.solve(config)
    shifted = relbasis.solve(config, terms=[LocalTerm("shift", lambda r: np.full_like(r, SHIFT))])
    for kappa in plain.kappas:
        a, b = plain[kappa].energies, shifted[kappa].energies
        bound = np.abs(a) < 1e4  # the continuum roots are large; compare those in the gap closely
        assert np.allclose(b[bound] - a[bound], SHIFT, rtol=0, atol=1e-9)
        low = [i for i, n in enumerate(plain[kappa].n) if n is not None and n <= 4]  # well below the shifted edge
        assert [plain[kappa].labels[i] for i in low] == [shifted[kappa].labels[i] for i in low]
    assert shifted.terms == ("kinetic", "rest-mass", "nucleus", "shift")
    assert shifted.to_dict()["hamiltonian"] == ["kinetic", "rest-mass", "nucleus", "shift"]


def test_a_nonlocal_term_given_by_its_matrix():
    """A multiple of the overlap given as a nonlocal matrix does what the local constant does."""
    config = {"ion": {"Z": 20, "nucleus": "gauss"}, "basis": {"size": 40}, "solve": {"kappas": [-1]}}

    def overlap_times(sampled):
        P, Q, w = sampled.dense("P"), sampled.dense("Q"), sampled.w[:, None]
        return SHIFT * (P.T @ (w * P) + Q.T @ (w * Q))

    plain = relbasis.solve(config)
    other = relbasis.solve(config, terms=[NonlocalTerm("shift-as-matrix", overlap_times)])
    gap = np.abs(plain[-1].energies) < 1e4
    assert np.allclose(other[-1].energies[gap] - plain[-1].energies[gap], SHIFT, atol=1e-9)


def test_the_exported_file_records_the_terms(tmp_path):
    sol = relbasis.solve(ion={"Z": 10, "nucleus": "point"}, basis={"size": 30}, solve={"kappas": [-1]},
                         terms=[LocalTerm("shift", lambda r: np.full_like(r, SHIFT))])
    relbasis.export(sol, tmp_path / "b.h5")
    assert relbasis.load(tmp_path / "b.h5").attrs["hamiltonian_terms"] == '["kinetic", "rest-mass", "nucleus", "shift"]'


@pytest.mark.parametrize("terms, says", [
    ([42], "not a Hamiltonian term"),
    ([LocalTerm("nucleus", np.zeros_like)], "taken"),
    ([LocalTerm("a", np.zeros_like), LocalTerm("a", np.zeros_like)], "taken"),
])
def test_bad_terms_are_one_line(terms, says):
    with pytest.raises(InputError, match=says):
        relbasis.solve(ion={"Z": 10}, basis={"size": 30}, solve={"kappas": [-1]}, terms=terms)
