"""Second-order Coulomb energies summed over the basis (relbasis.second_order).

Outside references: E2 = -0.157666429 hartree of the 1s^2 pair in the 1/Z expansion (C. W.
Scherr, R. E. Knight, Rev. Mod. Phys. 35, 436 (1963), from memory); the second-order
(Møller–Plesset) correlation energy of helium with the Hartree–Fock reference, -0.0373774
hartree (literature value, from memory); the (L + 1/2)^-4 law of the partial-wave increments
(C. Schwartz, Phys. Rev. 126, 1015 (1962), from memory); 6j symbols against Edmonds' special
value and orthogonality (A. R. Edmonds, *Angular Momentum in Quantum Mechanics*, 1957, eqs.
6.3.2 and 6.2.9, from memory).
"""

from __future__ import annotations

import itertools
import warnings

import numpy as np
import pytest

import relbasis
from relbasis import perturbation as pt
from relbasis.angular import reduced_c, wigner_3j_doubled, wigner_6j_doubled
from relbasis.errors import InputError
from relbasis.vocabulary import j_twice

SCHERR_KNIGHT = -0.157666429
HELIUM_MP2 = -0.0373774
NR = 1e6  # speed of light for the nonrelativistic limit (corrections ~ (Z/c)^2 ~ 4e-12)


def _solve(cfg, l_max, c=None):
    cfg = dict(cfg, solve={"kappas": list(pt.kappas_through(l_max))})
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return relbasis.solve(cfg, c=c, progress=False)


@pytest.fixture(scope="module")
def pair_nr():
    """The 1s^2 pair of Z = 2, nonrelativistic, in a basis fine enough for 1e-7."""
    sol = _solve({"ion": {"Z": 2, "nucleus": "point"}, "basis": {"size": 150, "r_max": 10.0}}, 8, NR)
    return pt.second_order(sol, l_max=8)


# --- angular algebra ---------------------------------------------------------------------

@pytest.mark.parametrize("a2,b2,c2", [(1, 1, 0), (2, 2, 2), (3, 5, 4), (7, 3, 6), (9, 9, 10)])
def test_6j_with_a_zero_equals_edmonds_closed_form(a2, b2, c2):
    """{a b c; b a 0} = (-1)^(a+b+c) / sqrt((2a+1)(2b+1)) (Edmonds 6.3.2, from memory)."""
    expected = (-1) ** ((a2 + b2 + c2) // 2) / np.sqrt((a2 + 1) * (b2 + 1))
    assert wigner_6j_doubled(a2, b2, c2, b2, a2, 0) == pytest.approx(expected, rel=1e-14)


@pytest.mark.parametrize("a2,b2,c2,d2", [(1, 3, 3, 1), (3, 3, 5, 5), (4, 2, 6, 4), (5, 7, 3, 9)])
def test_6j_orthogonality(a2, b2, c2, d2):
    """sum_x (2x+1)(2f+1) {a b x; c d f} {a b x; c d f'} = delta_ff' (Edmonds 6.2.9, from memory)."""
    xs = [x for x in range(0, 40) if (a2 + b2 + x) % 2 == 0]
    fs = [f for f in range(0, 40) if (a2 + d2 + f) % 2 == 0 and (b2 + c2 + f) % 2 == 0
          and abs(b2 - c2) <= f <= b2 + c2 and abs(a2 - d2) <= f <= a2 + d2]
    assert len(fs) >= 2
    for f, g in itertools.product(fs, fs):
        s = sum((x + 1) * (f + 1) * wigner_6j_doubled(a2, b2, x, c2, d2, f) * wigner_6j_doubled(a2, b2, x, c2, d2, g)
                for x in xs)
        assert s == pytest.approx(1.0 if f == g else 0.0, abs=1e-13)


def test_6j_symmetry_under_column_permutation_and_row_swap():
    args = (5, 3, 4, 7, 9, 6)
    v = wigner_6j_doubled(*args)
    assert v != 0.0
    a, b, c, d, e, f = args
    assert wigner_6j_doubled(b, a, c, e, d, f) == pytest.approx(v, rel=1e-14)
    assert wigner_6j_doubled(a, c, b, d, f, e) == pytest.approx(v, rel=1e-14)
    assert wigner_6j_doubled(d, e, c, a, b, f) == pytest.approx(v, rel=1e-14)


def _c_element(ka, ma, k, q, kb, mb):
    """<ka ma|C^k_q|kb mb> (Wigner–Eckart, m doubled, q an integer)."""
    ja, jb = j_twice(ka), j_twice(kb)
    phase = -1.0 if ((ja - ma) // 2) % 2 else 1.0
    return phase * wigner_3j_doubled(ja, 2 * k, jb, -ma, 2 * q, mb) * reduced_c(k, ka, kb)


def _g(ks, R, spins):
    """<ij|1/r12|kl> summed explicitly over the multipole components (1/r12 = sum_k r<^k/r>^(k+1)
    sum_q (-1)^q C^k_-q(1) C^k_q(2)) for radial integrals R[k]."""
    (ki, mi), (kj, mj), (kk, mk), (kl, ml) = spins
    return sum(R[k] * (-1) ** q * _c_element(ki, mi, k, -q, kk, mk) * _c_element(kj, mj, k, q, kl, ml)
               for k in ks for q in range(-k, k + 1))


@pytest.mark.parametrize("km,kn,ka,kb", [(-1, -1, -1, -1), (1, -1, 1, -1), (-2, 1, -1, 2), (2, -3, 1, 3),
                                         (-2, -2, 1, 1), (3, -2, -2, 2), (1, 2, -2, -1)])
def test_pair_angular_equals_the_explicit_sum_over_magnetic_numbers(km, kn, ka, kb):
    """sum over every m of g_mnab^2 - g_mnab g_nmab, with random radial integrals R^k(mnab) and
    R^k(nmab), against the closed form of pair_angular (3j orthogonality and the 6j contraction)."""
    rng = np.random.default_rng(abs(km * 1000 + kn * 100 + ka * 10 + kb))
    ks = range(0, 8)
    R1 = {k: rng.normal() for k in ks}  # R^k(mnab)
    R2 = {k: rng.normal() for k in ks}  # R^k(nmab)
    ms = [range(-j_twice(x), j_twice(x) + 1, 2) for x in (km, kn, ka, kb)]
    explicit = 0.0
    for mm, mn, ma, mb in itertools.product(*ms):
        direct = _g(ks, R1, [(km, mm), (kn, mn), (ka, ma), (kb, mb)])
        swapped = _g(ks, R2, [(kn, mn), (km, mm), (ka, ma), (kb, mb)])
        explicit += direct * direct - direct * swapped
    d, x = pt.pair_angular(km, kn, ka, kb)
    closed = sum(v * R1[k] ** 2 for k, v in d.items()) + sum(v * R1[k] * R2[kp] for (k, kp), v in x.items())
    assert closed == pytest.approx(explicit, rel=1e-12, abs=1e-14)


# --- extrapolation -----------------------------------------------------------------------

def test_extrapolation_is_exact_for_the_law_it_fits():
    L = np.arange(0, 9)
    d = -0.07 * (L + 0.5) ** -4.0 + 0.02 * (L + 0.5) ** -5.0 - 0.01 * (L + 0.5) ** -6.0
    ex = pt.extrapolate(d)
    Lt = np.arange(9, 200000)
    true_tail = np.sum(-0.07 * (Lt + 0.5) ** -4.0 + 0.02 * (Lt + 0.5) ** -5.0 - 0.01 * (Lt + 0.5) ** -6.0)
    assert ex.tail == pytest.approx(true_tail, rel=1e-9)
    assert ex.powers == (4, 5, 6)


def test_extrapolation_without_enough_increments_says_so():
    ex = pt.extrapolate([-0.1, -0.01, -0.002])
    assert ex.tail == 0.0 and ex.powers == () and ex.uncertainty > 0


# --- the 1s^2 pair -----------------------------------------------------------------------

def test_pair_nonrelativistic_equals_scherr_knight(pair_nr):
    """E2 = -0.157666429 (Scherr–Knight, from memory) within 1e-6 after the l-extrapolation."""
    assert pair_nr.kind == "pair"
    assert abs(pair_nr.extrapolated - SCHERR_KNIGHT) < 1e-6
    assert pair_nr.uncertainty < 2e-6
    assert pair_nr.energy == pytest.approx(sum(pair_nr.increments), abs=1e-15)


def test_pair_s_limit_and_increments_follow_the_schwartz_law(pair_nr):
    """The s-wave part is -0.1253338 (common practice: the s-limit of the 1/Z coefficient, from
    memory); d_L (L + 1/2)^4 levels off (Schwartz: d_L ~ (L + 1/2)^-4)."""
    d = np.array(pair_nr.increments)
    assert d[0] == pytest.approx(-0.1253338, abs=2e-7)
    assert np.all(d < 0) and np.all(np.diff(np.abs(d)) < 0)
    scaled = -d * (np.arange(d.size) + 0.5) ** 4
    assert abs(scaled[8] / scaled[6] - 1) < 0.05
    assert 3.7 < pair_nr.exponent < 4.3


def test_pair_is_independent_of_z_in_the_nonrelativistic_limit():
    """E2 of the 1/Z expansion does not depend on Z: the same basis scaled by 1/Z gives it."""
    e = [pt.second_order(_solve({"ion": {"Z": Z, "nucleus": "point"}, "basis": {"size": 60, "r_max": 10.0 / Z}},
                                2, NR), l_max=2).energy for Z in (2, 30)]
    assert e[0] == pytest.approx(e[1], rel=1e-8)


def test_relativistic_pair_tends_to_the_nonrelativistic_one_as_z_alpha_squared():
    """E2(Z) - E2(c -> inf) grows like (Z alpha)^2 at small Z: the ratio at Z = 20 and 10 is ~4."""
    def e2(Z, c=None):
        sol = _solve({"ion": {"Z": Z, "nucleus": "point"}, "basis": {"size": 60, "r_max": 10.0 / Z}}, 2, c)
        return pt.second_order(sol, l_max=2).energy
    nr = e2(10, NR)
    ratio = (e2(20) - nr) / (e2(10) - nr)
    assert ratio == pytest.approx(4.0, rel=0.1)


def test_negative_branch_is_reported_apart_and_flagged_for_the_brown_ravenhall_degeneracy():
    sol = _solve({"ion": {"Z": 60, "nucleus": "point"}, "basis": {"size": 50}}, 1)
    plain = pt.second_order(sol, l_max=1)
    full = pt.second_order(sol, l_max=1, negative_branch=True)
    assert plain.negative == 0.0 and not plain.negative_branch
    assert full.negative_branch and full.negative != 0.0
    assert full.parts["both_negative"] > 0  # denominators ~ +4c^2
    assert full.energy == pytest.approx(plain.energy + full.negative, rel=1e-10)
    assert "brown-ravenhall" in full.flags and "brown-ravenhall" not in plain.flags


# --- closed core and valence -------------------------------------------------------------

def test_helium_hartree_fock_reference_second_order():
    """He, HF reference, c -> inf: -0.0373774 (from memory, +-2e-6)."""
    sol = _solve({"ion": {"Z": 2, "nucleus": "point"}, "electrons": {"core": "1s1/2"},
                  "basis": {"size": 150, "r_max": 20.0}}, 8, NR)
    res = pt.second_order(sol, l_max=8)
    assert res.kind == "core"
    assert abs(res.extrapolated - HELIUM_MP2) < 2e-6


def test_valence_sodium_3s():
    """Na 3s in V^(N-1): the DHF level -0.18203 moves down by about 0.006 hartree at second order
    (common practice: second order brings the alkali levels close to experiment, -0.18886 for
    Na 3s, from memory); the blocked core pairs count with the opposite sign."""
    sol = _solve({"ion": {"Z": 11}, "electrons": {"core": "[Ne]", "valence": "3s1/2"}}, 3)
    res = pt.second_order(sol, l_max=3)
    assert res.kind == "valence" and res.reference == "3s1/2"
    assert -0.0065 < res.energy < -0.0050
    assert res.parts["core_excitations"] < 0 < res.parts["blocked_core_pairs"]
    assert res.energy == pytest.approx(res.parts["core_excitations"] + res.parts["blocked_core_pairs"], rel=1e-12)


# --- input -------------------------------------------------------------------------------

@pytest.mark.parametrize("bad", [-1, 31, 2.5, True, "3"])
def test_bad_l_max_is_one_line_input_error(bad):
    with pytest.raises(InputError, match="l_max"):
        pt.second_order({"ion": {"Z": 2}}, l_max=bad)


def test_solution_without_the_kappas_of_l_max_is_refused():
    sol = _solve({"ion": {"Z": 2, "nucleus": "point"}, "basis": {"size": 40}}, 1)
    with pytest.raises(InputError, match="l_max = 2.*lacks kappa"):
        pt.second_order(sol, l_max=2)


def test_to_dict_has_the_contract_numbers(pair_nr):
    d = pair_nr.to_dict()
    for key in ("energy_hartree", "extrapolated_hartree", "uncertainty_hartree", "increments_hartree", "l_max"):
        assert key in d
    assert len(d["increments_hartree"]) == 9


# --- completeness verdict and the command line -----------------------------------------

def test_completeness_verdict_names_the_setting_to_change():
    from relbasis.completeness import completeness

    res = completeness({"ion": {"Z": 2, "nucleus": "point"}, "basis": {"size": 40}}, l_max=3, c=NR, target=1e-9,
                       progress=False)
    assert res.verdict == "incomplete"
    assert [v.name for v in res.variations] == ["size", "reach"]
    assert res.variations[0].setting == "basis.size = 60"
    assert any(a.startswith("partial waves") for a in res.advice)
    assert any(a.startswith("size") for a in res.advice)
    assert res.error >= abs(res.variations[0].change)


def test_completeness_passes_a_fine_basis_at_a_loose_target():
    from relbasis.completeness import completeness

    res = completeness({"ion": {"Z": 2, "nucleus": "point"}, "basis": {"size": 60, "r_max": 10.0}}, l_max=4, c=NR,
                       target=1e-3, progress=False)
    assert res.verdict == "complete" and res.error < 1e-3


def test_cli_second_order_table_and_json(capsys):
    from relbasis.cli import main
    import json

    assert main(["second-order", "--z", "4", "--nucleus", "point", "--size", "40", "--l-max", "2"]) == 0
    out = capsys.readouterr().out
    assert "1s^2 pair" in out and "extrapolated" in out and "validate before use" in out
    assert main(["second-order", "--z", "4", "--nucleus", "point", "--size", "40", "--l-max", "2", "--json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    assert doc["second_order"]["kind"] == "pair" and len(doc["second_order"]["increments_hartree"]) == 3


@pytest.mark.parametrize("argv,needle", [(["--l-max", "-1"], "--l-max"), (["--check", "--target", "0"], "--target")])
def test_cli_second_order_bad_flags_exit_2(capsys, argv, needle):
    from relbasis.cli import main

    assert main(["second-order", "--z", "4", "--size", "40"] + argv) == 2
    err = capsys.readouterr().err
    assert needle in err and len(err.strip().splitlines()) == 1


def test_core_orbitals_are_taken_by_place_and_a_mislabelled_one_is_refused():
    """Be in 30 splines: the 1s root is labelled 2s1/2 (flagged nodes-disagree).  The JSON marks
    the lowest two bound roots occupied, as the mean field took them by count, and the second-order
    sum refuses the basis rather than summing with a wrong reference orbital."""
    sol = _solve({"ion": {"Z": 4, "nucleus": "point"}, "electrons": {"core": "1s1/2 2s1/2"},
                  "basis": {"size": 30}}, 1)
    spec = sol[-1]
    bound = [i for i, b in enumerate(spec.branches) if b == "bound"]
    assert sol.core_roots() == {(-1, 1): bound[0], (-1, 2): bound[1]}
    occupied = [s for s in sol.states() if s.get("occupied")]
    assert [s["energy_hartree"] for s in occupied] == [float(spec.energies[i]) for i in bound[:2]]
    if spec.n[bound[0]] != 1:  # this basis mislabels the 1s: the sum must refuse it
        assert "nodes-disagree" in spec.flags[bound[0]]
        with pytest.raises(InputError, match="does not resolve 1s1/2"):
            pt.second_order(sol, l_max=1)
