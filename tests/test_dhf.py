"""Dirac–Hartree–Fock: the closed-shell core, its frozen-core spectrum and their identities."""

import json

import numpy as np
import pytest

import relbasis
from relbasis import scf
from relbasis.cli import main
from relbasis.errors import InputError
from relbasis.integrals import slater
from relbasis.angular import reduced_c

C_NR = 1e6  # the nonrelativistic limit by the speed-of-light switch: (alpha c)^-2 ~ 2e-8 of the relativistic shift


def mean_field(Z, core, valence=None, c=None, kappas=None, nucleus="point", **basis):
    electrons = {"core": core} | ({"valence": valence} if valence else {})
    sections = {"ion": {"Z": Z, "nucleus": nucleus}, "electrons": electrons}
    if kappas:
        sections["solve"] = {"kappas": kappas}
    if basis:
        sections["basis"] = basis
    return relbasis.solve(sections, c=c)


@pytest.fixture(scope="module")
def neon():
    return mean_field(10, "[Ne]", kappas=[-1, 1, -2, 2])


@pytest.fixture(scope="module")
def sodium():
    return mean_field(11, "[Ne]", valence="3s1/2", kappas=[-1, 1, -2])


def test_helium_relativistic_total_energy():
    """He, point nucleus: -2.8618133 hartree (literature value, from memory; +-2e-7)."""
    sol = mean_field(2, "1s1/2", kappas=[-1])
    assert sol.scf.converged
    assert sol.scf.total_energy == pytest.approx(-2.8618133, abs=2e-7)


@pytest.mark.parametrize("Z, core, limit", [
    (2, "[He]", -2.861679996),     # Bunge, Barrientos, Bunge, At. Data Nucl. Data Tables 53, 113 (1993), from memory
    (4, "[He] 2s2", -14.573023168),
    (10, "[Ne]", -128.547098109),
])
def test_nonrelativistic_limit_matches_the_hartree_fock_limit(Z, core, limit):
    """c -> infinity: the published nonrelativistic Hartree–Fock limits (Bunge et al. 1993;
    C. Froese Fischer, The Hartree–Fock Method for Atoms, 1977; from memory), to 1e-8 relative."""
    sol = mean_field(Z, core, c=C_NR, kappas=[-1])
    assert sol.scf.total_energy == pytest.approx(limit, rel=1e-8)


@pytest.mark.parametrize("Z, core, limit", [
    (12, "[Ne] 3s2", -199.614636425),  # Bunge, Barrientos, Bunge 1993, from memory
    (18, "[Ar]", -526.817512803),
])
def test_nonrelativistic_limit_of_heavier_closed_shells(Z, core, limit):
    """c = 1e7 (the relativistic shift falls as c^-2): the published Hartree–Fock limits within
    1e-6 hartree (Bunge et al. 1993; Froese Fischer 1977; from memory)."""
    assert mean_field(Z, core, c=1e7, kappas=[-1]).scf.total_energy == pytest.approx(limit, abs=1e-6)


def test_core_orbitals_reappear_in_the_frozen_core_spectrum(neon):
    """Identity: every core orbital is a root of its symmetry's frozen-core spectrum, marked occupied."""
    states = neon.states()
    occupied = {s["label"]: s["energy_hartree"] for s in states if s.get("occupied")}
    assert set(occupied) == set(neon.scf.orbitals)
    for label, energy in neon.scf.orbitals.items():
        assert occupied[label] == pytest.approx(energy, rel=1e-12)


def test_occupied_virtual_block_of_the_fock_matrix_vanishes(neon):
    """Identity: <v|F|a> = 0 for the converged core (F built from the same orbitals, 1e-9)."""
    from relbasis import hamiltonian

    fset = neon.family_set
    terms = (hamiltonian.nucleus_term(neon.nucleus), *neon.scf.terms())
    for kappa in (-1, 1, -2):
        basis = fset.build(kappa)
        sampled = fset.sample(basis)
        F, S = hamiltonian.assemble(basis, sampled, terms)
        spec = neon[kappa]
        occ = [i for i, s in enumerate(spec.labels) if s in neon.scf.orbitals]
        virt = [i for i in range(spec.energies.size) if i not in occ and spec.energies[i] > -neon.c**2]
        block = spec.vectors[:, virt].T @ F @ spec.vectors[:, occ]
        assert np.max(np.abs(block)) < 1e-9


def test_koopmans_in_the_frozen_core(sodium):
    """E(core + 3s) - E(core) with the core frozen equals the 3s orbital energy (Koopmans; Johnson
    2007, ch. 3): the difference from Slater integrals of the exported orbitals, to 1e-10."""
    sol = sodium
    mf = sol.scf
    k3s = -1
    i_v = list(sol[k3s].labels).index("3s1/2")
    eps_v = float(sol[k3s].energies[i_v])
    # <v|h|v>: the one-electron part of the frozen-core Hamiltonian without the core's terms
    from relbasis import hamiltonian

    fset = sol.family_set
    basis = fset.build(k3s)
    sampled = fset.sample(basis)
    h, _ = hamiltonian.assemble(basis, sampled, (hamiltonian.nucleus_term(sol.nucleus),))
    cv = sol[k3s].vectors[:, i_v]
    one_body = cv @ h @ cv
    pair = 0.0
    for o in mf.core:
        i_a = list(sol[o.kappa].labels).index(o.label)
        a, v = (o.kappa, i_a), (k3s, i_v)
        pair += o.occupancy * slater(sol, 0, v, a, v, a)
        for k in range(0, 4):
            coef = reduced_c(k, k3s, o.kappa) ** 2 / 2.0
            if coef:
                pair -= coef * slater(sol, k, v, a, a, v)
    assert one_body + pair == pytest.approx(eps_v, rel=1e-10)


def test_valence_level_is_the_lowest_unoccupied_root(sodium):
    """V^(N-1): the 3s of Na is the first root above the core, labelled 3s1/2, not occupied."""
    spec = sodium[-1]
    bound = [(l, e) for l, e, b in zip(spec.labels, spec.energies, spec.branches) if b == "bound"]
    labels = [l for l, _ in bound]
    assert labels[:3] == ["1s1/2", "2s1/2", "3s1/2"]
    assert dict(bound)["3s1/2"] == pytest.approx(-0.18203, abs=2e-5)  # Na 3s, DHF (from memory)
    doc = {s["label"]: s for s in sodium.states()}
    assert "occupied" not in doc["3s1/2"] and doc["2s1/2"]["occupied"] is True


def test_virial_ratio_in_the_nonrelativistic_limit():
    """-V/T = 2 for a Hartree–Fock atom (the virial theorem; common practice), 1e-7, Ne at c = 1e6."""
    sol = mean_field(10, "[Ne]", c=C_NR, kappas=[-1])
    mf = sol.scf
    T = 0.0
    fset = sol.family_set
    for o in mf.core:
        basis = mf.bases[o.kappa]
        T_mat, _ = basis.kinetic_and_overlap(fset.sample(basis))
        T += o.occupancy * (o.coefficients @ T_mat @ o.coefficients)
    V = mf.total_energy - T
    assert -V / T == pytest.approx(2.0, abs=1e-7)


def test_result_does_not_depend_on_the_starting_guess():
    """The screened Thomas–Fermi start and the bare nucleus give the same core (1e-11 relative)."""
    from relbasis.config import resolve
    from relbasis.solver import as_config

    cfg, nuc = resolve(as_config({"ion": {"Z": 4, "nucleus": "point"}, "electrons": {"core": "[He] 2s2"}}))
    a = scf.run(cfg, nuc, relbasis.constants.C, guess="thomas-fermi", progress=False)
    b = scf.run(cfg, nuc, relbasis.constants.C, guess="nucleus", progress=False)
    assert a.total_energy == pytest.approx(b.total_energy, rel=1e-11)
    for label in a.orbitals:
        assert a.orbitals[label] == pytest.approx(b.orbitals[label], rel=1e-10)


def test_levels_json_carries_the_scf_object(tmp_path, capsys):
    """The JSON contract: a top-level "scf" object and occupied core states."""
    cfg = tmp_path / "na.toml"
    cfg.write_text('[ion]\nZ = 11\n[electrons]\ncore = "[Ne]"\nvalence = "3s1/2"\n[solve]\nkappas = [-1, 1, -2]\n')
    assert main(["levels", str(cfg), "--json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    assert set(doc["scf"]) >= {"total_energy_hartree", "orbitals", "iterations", "converged"}
    assert doc["scf"]["converged"] is True
    assert set(doc["scf"]["orbitals"]) == {"1s1/2", "2s1/2", "2p1/2", "2p3/2"}
    occupied = {s["label"] for s in doc["states"] if s.get("occupied")}
    assert occupied == {"1s1/2", "2s1/2", "2p1/2", "2p3/2"}
    assert any(s["label"] == "3s1/2" for s in doc["states"])
    assert all("exact_hartree" not in s for s in doc["states"])  # no hydrogenic "exact" value with a core


def test_bare_nucleus_solution_has_no_scf():
    assert relbasis.solve(None, ion={"Z": 10}, solve={"kappas": [-1]}).scf is None


def test_gaussian_family_gives_the_same_core():
    """The mean field runs through the one basis interface: Gaussians (rkb) and B-splines (dkb)
    agree on Ne (Fermi nucleus) to 1e-8 relative in the total and 1e-6 in every orbital energy."""
    sections = {"ion": {"Z": 10}, "electrons": {"core": "[Ne]"}, "solve": {"kappas": [-1, 1, -2]}}
    splines = relbasis.solve(sections).scf
    gauss = relbasis.solve(sections | {"basis": {"family": "gaussian"}}).scf
    assert gauss.total_energy == pytest.approx(splines.total_energy, rel=1e-8)
    for label, energy in splines.orbitals.items():
        assert gauss.orbitals[label] == pytest.approx(energy, rel=1e-6)


def test_non_converging_run_is_one_line():
    from relbasis.config import resolve
    from relbasis.solver import as_config

    cfg, nuc = resolve(as_config({"ion": {"Z": 10, "nucleus": "point"}, "electrons": {"core": "[Ne]"}}))
    with pytest.raises(scf.ConvergenceError) as err:
        scf.run(cfg, nuc, relbasis.constants.C, max_iterations=3, progress=False)
    assert "\n" not in str(err.value) and "did not converge" in str(err.value)
