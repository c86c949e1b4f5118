"""The public API reads the same from every door: mappings, spec objects, one-line errors."""

from __future__ import annotations

import numpy as np
import pytest

import relbasis
from relbasis import BasisSpec, InputError, IonSpec, SolveSpec
from relbasis.errors import MissingLevelError, option
from relbasis.scan import scan
from relbasis import validate, vocabulary

SMALL = dict(ion={"Z": 10, "nucleus": "point"}, basis={"size": 30}, solve={"kappas": [-1, 1]})


def test_solution_and_basis_file_read_like_the_same_mapping(solved, tmp_path):
    sol = solved(**SMALL)
    assert list(sol) == [-1, 1] and len(sol) == 2 and -1 in sol and 2 not in sol
    assert [sol[k].kappa for k in sol] == [-1, 1]
    back = relbasis.load(relbasis.export(sol, tmp_path / "b.h5"))
    assert list(back) == list(sol) and len(back) == len(sol) and 1 in back and 2 not in back
    with pytest.raises(MissingLevelError, match=r"kappa = 5 .*\[-1, 1\]"):
        sol[5]
    with pytest.raises(MissingLevelError, match=r"kappa = 0 .*\[-1, 1\]"):
        back[0]


def test_spec_objects_are_accepted_where_mappings_are(solved):
    by_spec = relbasis.solve(ion=IonSpec(Z=10, nucleus="point"), basis=BasisSpec(size=30),
                             solve=SolveSpec(kappas=(-1, 1)))
    by_dict = solved(**SMALL)
    assert by_spec.config == by_dict.config
    np.testing.assert_array_equal(by_spec[-1].energies, by_dict[-1].energies)


@pytest.mark.parametrize("call", [
    lambda: relbasis.solve(42),
    lambda: relbasis.solve([1, 2]),
    lambda: relbasis.solve(ion=5),
    lambda: relbasis.load(3.5),
    lambda: relbasis.load_config(None),
    lambda: relbasis.config_from_dict(3),
    lambda: relbasis.export(None, "x.h5"),
    lambda: scan(42, progress=False),
    lambda: relbasis.critical_charge(3.5),
    lambda: relbasis.critical_charge("fermi", n="a"),
], ids=["solve-int", "solve-list", "solve-ion-int", "load-float", "load_config-None", "from_dict-int",
        "export-None", "scan-int", "critical-nucleus", "critical-n"])
def test_wrong_types_are_one_line_input_errors(call, tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    with pytest.raises(InputError) as err:
        call()
    assert "\n" not in str(err.value)


@pytest.mark.parametrize("kwargs,needle", [
    ({"path": 3}, "not int"),
    ({"blocks": 5}, "blocks = 5"),
    ({"blocks": ("slater",), "slater": [5]}, "slater item 5"),
    ({"blocks": ("slater",), "slater": [(0, 5)]}, "four state labels"),
    ({"blocks": ("slater",), "slater": [(True, ("1s1/2",) * 4)]}, "k >= 0"),
])
def test_export_arguments_of_the_wrong_shape_are_input_errors(solved, tmp_path, kwargs, needle):
    kwargs = {"path": tmp_path / "b.h5", **kwargs}
    with pytest.raises(InputError, match=needle):
        relbasis.export(solved(**SMALL), **kwargs)
    assert list(tmp_path.iterdir()) == []


def test_slater_integrals_may_be_given_as_text(solved, tmp_path):
    sol = solved(**SMALL)
    text = relbasis.export(sol, tmp_path / "t.h5", blocks=("slater",), slater=["0:1s1/2,1s1/2,1s1/2,1s1/2"])
    pair = relbasis.export(sol, tmp_path / "p.h5", blocks=("slater",), slater=[(0, ("1s1/2",) * 4)])
    a, b = relbasis.load(text).integrals, relbasis.load(pair).integrals
    assert a.keys() == b.keys() and "slater/value" in a
    np.testing.assert_array_equal(a["slater/value"], b["slater/value"])


def test_sampling_a_kappa_that_was_not_solved_is_an_input_error(solved):
    with pytest.raises(MissingLevelError, match="kappa = 5"):
        solved(**SMALL).sample(5)


def test_scan_into_a_non_path_is_an_input_error():
    with pytest.raises(InputError, match="out: give a path"):
        scan({"base": {"ion": {"Z": 10}}, "axes": {"basis.size": [20]}, "track": {"max_n": 1}}, 5, progress=False)


def test_scan_accepts_a_mapping(tmp_path):
    plan = {"base": {"ion": {"Z": 10, "nucleus": "point"}, "solve": {"kappas": [-1]}},
            "axes": {"basis.size": [20, 24]}, "track": {"states": ["1s1/2"]}}
    result = scan(plan, tmp_path / "out", progress=False)
    assert result.summary["units"] == result.summary["finished"] == 2
    assert result.summary["plan"]["axes"] == {"basis.size": [20, 24]}
    with pytest.raises(InputError, match=r"\[axes\]"):
        scan({"base": {"ion": {"Z": 10}}}, tmp_path / "other", progress=False)


def test_settings_are_named_in_both_forms():
    assert option("force=True", "--force") == "force=True / --force"


def test_vocabulary_round_trips_labels():
    for kappa in (-1, 1, -2, 2, -3, 3, -4, 4, -7, 7):
        l, j2 = vocabulary.orbital_l(kappa), vocabulary.j_twice(kappa)
        assert vocabulary.kappa_of(l, j2) == kappa
        n = l + 1
        assert vocabulary.parse_label(vocabulary.orbital_label(n, kappa)) == (n, kappa)
    assert vocabulary.orbital_label(2, -2) == "2p3/2" and vocabulary.orbital_label(2, 1) == "2p1/2"
    with pytest.raises(InputError):
        vocabulary.kappa_of(0, 1 - 2)


def test_old_names_still_import():
    from relbasis.analytic import j_twice, orbital_l
    from relbasis.bspline import KNOT_KINDS
    from relbasis.config import BALANCES, FAMILIES, KEYS
    from relbasis.dirac import WALLS
    from relbasis.dirac_gaussian import BALANCES as GAUSSIAN
    from relbasis.nucleus import MODELS, RADIUS_CHOICES
    from relbasis.spectrum import orbital_label

    assert orbital_l is vocabulary.orbital_l and j_twice is vocabulary.j_twice
    assert orbital_label is vocabulary.orbital_label and KNOT_KINDS is vocabulary.KNOT_KINDS
    assert (BALANCES, GAUSSIAN, WALLS, FAMILIES) == (vocabulary.BALANCES, vocabulary.GAUSSIAN_BALANCES,
                                                      vocabulary.WALLS, vocabulary.FAMILIES)
    assert MODELS is vocabulary.MODELS and RADIUS_CHOICES is vocabulary.RADIUS_CHOICES
    assert "size" in KEYS["basis"] and relbasis.__version__ == relbasis.version.__version__


def test_validation_helpers():
    assert validate.real("x", 2) == 2.0 and validate.integer("n", 3.0, 1) == 3
    assert validate.within("x", 5.0, 0, 10) == 5.0
    for bad in (lambda: validate.real("x", True), lambda: validate.real("x", float("nan")),
                lambda: validate.integer("n", 0, 1), lambda: validate.within("x", 11.0, 0, 10),
                lambda: validate.choice("k", "fermy", ("fermi", "gauss"))):
        with pytest.raises(InputError):
            bad()
    with pytest.raises(InputError, match="did you mean 'fermi'"):
        validate.choice("k", "fermy", ("fermi", "gauss"))


def test_threads_give_the_same_spectra_to_the_bit():
    """Symmetries solved side by side (threads) and one after another agree exactly; a bad
    thread count is a one-line input error (docs/performance.md, Threads)."""
    kw = dict(ion={"Z": 26, "nucleus": "point"}, basis={"size": 40}, solve={"kappas": [-1, 1, -2, 2]})
    one, two = relbasis.solve(None, threads=1, **kw), relbasis.solve(None, threads=2, **kw)
    for kappa in one:
        a, b = one[kappa], two[kappa]
        assert np.array_equal(a.energies, b.energies) and np.array_equal(a.vectors, b.vectors)
        assert (a.n, a.branches, a.flags) == (b.n, b.branches, b.flags)
        assert np.array_equal(a.error_estimate, b.error_estimate, equal_nan=True)
    for bad in (0, -1, 1.5, True):
        with pytest.raises(InputError, match="threads"):
            relbasis.solve(None, threads=bad, **kw)
