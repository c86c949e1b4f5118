"""Valid ranges of the numeric config keys (docs/config.md) and the guard against non-finite results.

Every refusal is one line naming the key, the value and the valid range, from Python and from
the command line (exit status 2), and it comes before any matrix is built.  Settings the rest
of the suite and the docs rely on (c up to 1e10, Z up to 175 with a finite nucleus, the tiny
default r_min of a point nucleus near Z = 137, r_max = 1e6) stay accepted.
"""

import math
from dataclasses import replace

import numpy as np
import pytest

import relbasis
from relbasis import config as cfgmod, solver
from relbasis.cli import main
from relbasis.dirac import DiracBasis
from relbasis.dirac_gaussian import GaussianDiracBasis
from relbasis.errors import InputError
from relbasis.finite import NonFiniteError

GAUSS = {"family": "gaussian"}

REFUSED = [
    # (sections for relbasis.solve, c, words the one-line message must hold)
    ({"ion": {"Z": 92}, "basis": {"r_min": 1e-300}}, None, ["basis.r_min = 1e-300", "valid 1e-17 <= r_min"]),
    ({"ion": {"Z": 92}, "basis": {"r_max": 1e300}}, None, ["basis.r_max = 1e+300", "r_max <= 1e+08 bohr"]),
    ({"ion": {"Z": 92}, "basis": {"r_scale": 1e-40}}, None, ["basis.r_scale = 1e-40", "valid"]),
    ({"ion": {"Z": 92}, "basis": {"r_min": 1e-16}}, 1e5, ["basis.r_min = 1e-16", "for c = 100000", "20 c/r_min"]),
    ({"ion": {"Z": 1e-7, "nucleus": "point"}}, None, ["basis.r_max = 2.5e+09", "the default for Z = 1e-07"]),
    ({"ion": {"Z": 92}, "basis": {"r_min": 0.9999999, "r_max": 1.0}}, None, ["neighbouring knots", "valid spacing"]),
    ({"ion": {"Z": 92}, "basis": {"knots": []}}, None, ["basis.knots", "at least 3", "got 0"]),
    ({"ion": {"Z": 92}, "basis": {"knots": [0.0, 1e-30, 1.0]}}, None, ["basis.knots[] = 1e-30", "first non-zero"]),
    ({"ion": {"Z": 92}, "basis": {"knots": [0.0, 1.0, 1.0 + 1e-9, 2.0]}}, None, ["basis.knots", "valid spacing >= 1e-06"]),
    ({"ion": {"Z": 92}, "basis": {"size": 20000}}, None, ["basis.size = 20000", "at most 2000", "GB of memory"]),
    ({"ion": {"Z": 92, "nucleus": "gauss"}, "basis": {**GAUSS, "exponent_max": 1e30}}, None,
     ["basis.exponent_max = 1e+30", "valid 1e-16 <= exponent_max <= 1e+16 bohr^-2"]),
    ({"ion": {"Z": 92, "nucleus": "gauss"}, "basis": {**GAUSS, "exponent_min": 1e-30}}, None,
     ["basis.exponent_min = 1e-30", "valid"]),
    ({"ion": {"Z": 92, "nucleus": "gauss"}, "basis": {**GAUSS, "exponents": [1.0, 1e30]}}, None,
     ["basis.exponents[] = 1e+30", "valid"]),
    ({"ion": {"Z": 92, "nucleus": "gauss"}, "basis": {**GAUSS, "exponents": []}}, None,
     ["basis.exponents", "at least two", "got 0"]),
    ({"ion": {"Z": 92, "nucleus": "gauss"}, "basis": GAUSS, "solve": {"kappas": [-50]}}, None,
     ["kappa = -50", "valid |kappa| <= 30"]),
    ({"ion": {"Z": 2000}}, None, ["ion.Z = 2000", "valid 0 <= Z <= 1000"]),
    ({"ion": {"Z": 92, "A": 5000}}, None, ["ion.A = 5000", "valid 1 <= A <= 3000"]),
    ({"ion": {"Z": 92, "rms_radius_fm": 1e-6}}, None, ["ion.rms_radius_fm = 1e-06", "valid 0.001 <= rms_radius_fm"]),
    ({"ion": {"Z": 92, "rms_radius_fm": 1e6}}, None, ["ion.rms_radius_fm = 1e+06", "<= 1000 fm"]),
    ({"ion": {"Z": 92}, "basis": {"overlap_threshold": 1e-300}}, None,
     ["basis.overlap_threshold = 1e-300", "valid 1e-15 <= overlap_threshold < 0.01"]),
    ({"ion": {"Z": 92}, "solve": {"kappas": [-1, 101]}}, None, ["kappa = 101", "valid 1 <= |kappa| <= 100"]),
    ({"ion": {"Z": 10}}, 1e20, ["c = 1e+20", "1 < c <= 1e+10"]),
    ({"ion": {"Z": 10}}, 0.5, ["c = 0.5", "1 < c"]),
    ({"ion": {"Z": 10}}, math.nan, ["c = nan"]),
]


def _ids():
    return [f"{i}-{'-'.join(w for w in words[0].split()[:1])}" for i, (_, _, words) in enumerate(REFUSED)]


@pytest.mark.parametrize("sections,c,words", REFUSED, ids=_ids())
def test_python_refuses_on_one_line(sections, c, words):
    with pytest.raises(InputError) as info:
        relbasis.solve(None, c=c, **sections)
    msg = str(info.value)
    assert "\n" not in msg and msg
    for w in words:
        assert w in msg, msg


CLI_REFUSED = [
    (["--r-min", "1e-300"], "basis.r_min = 1e-300"),
    (["--r-max", "1e300"], "basis.r_max = 1e+300"),
    (["--r-scale", "1e-300"], "basis.r_scale = 1e-300"),
    (["--size", "20000"], "basis.size = 20000"),
    (["--family", "gaussian", "--exponent-max", "1e30"], "basis.exponent_max = 1e+30"),
    (["--family", "gaussian", "--exponent-min", "1e-300"], "basis.exponent_min = 1e-300"),
    (["--overlap-threshold", "1e-300"], "basis.overlap_threshold = 1e-300"),
    (["--rms-radius", "1e9"], "ion.rms_radius_fm = 1e+09"),
    (["--a", "100000"], "ion.A = 100000"),
    (["--kappas", "-1,500"], "kappa = 500"),
]


@pytest.mark.parametrize("command", ["levels", "audit"])
@pytest.mark.parametrize("flags,needle", CLI_REFUSED, ids=[f[0][-2] + f[0][-1] for f in CLI_REFUSED])
def test_cli_refuses_with_exit_2_and_one_line(capsys, command, flags, needle):
    rc = main([command, "--z", "92", *flags])
    out, err = capsys.readouterr()
    assert rc == 2 and out == ""
    assert err.startswith("error: ") and err.count("\n") == 1 and "Traceback" not in err
    assert needle in err and ("valid" in err or "at most" in err)


def test_cli_z_out_of_range(capsys):
    assert main(["levels", "--z", "5000"]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "ion.Z = 5000" in err


ACCEPTED = [
    # (sections, c): settings the rest of the suite, the docs and the critical-charge search use
    ({"ion": {"Z": 10, "nucleus": "point"}}, 1e4),
    ({"ion": {"Z": 1, "nucleus": "point"}}, 1e10),
    ({"ion": {"Z": 136.9, "nucleus": "point"}}, None),  # default r_min ~1e-13 bohr
    ({"ion": {"Z": 175, "nucleus": "sphere", "rms_radius_fm": 7.0}}, None),
    ({"ion": {"Z": 1000, "A": 2500}}, None),
    ({"ion": {"Z": 0}, "basis": {"r_max": 5.0}}, None),
    ({"ion": {"Z": 92}, "basis": {"r_max": 1e6}}, None),
    ({"ion": {"Z": 1, "nucleus": "point"}, "basis": {"r_min": 1e-12}}, None),
    ({"ion": {"Z": 1, "nucleus": "point"}, "basis": {"r_min": 1e-17, "size": 300}}, None),
    ({"ion": {"Z": 92}, "basis": {"size": 2000}}, None),
    ({"ion": {"Z": 92}, "basis": {"overlap_threshold": 1e-14}}, None),
    ({"ion": {"Z": 1}, "solve": {"kappas": [-100, 100]}}, None),
    ({"ion": {"Z": 92, "nucleus": "gauss"}, "basis": {**GAUSS, "exponent_min": 1e-3, "exponent_max": 1e9}}, None),
    ({"ion": {"Z": 92, "nucleus": "gauss"}, "basis": {**GAUSS, "exponent_min": 2.0, "exponent_max": 1e16}}, None),
    ({"ion": {"Z": 92, "nucleus": "gauss"}, "basis": GAUSS, "solve": {"kappas": [-30, 30]}}, None),
    ({"ion": {"Z": 92, "rms_radius_fm": 0.01, "nucleus": "sphere"}}, None),
    ({"ion": {"Z": 92}, "basis": {"knots": [0.0, 1e-6, 1e-4, 1e-2, 0.1, 0.5, 1.0, 2.0, 3.0, 4.0, 5.0, 6.0, 8.0]}}, None),
]


@pytest.mark.parametrize("sections,c", ACCEPTED)
def test_legitimate_settings_pass_the_checks(sections, c):
    """resolve (the defaults and the numerics check) accepts them; no solve needed."""
    cfg, _ = cfgmod.resolve(solver.as_config(None, **sections), relbasis.constants.C if c is None else c)
    assert cfg.basis.size >= 2


def test_the_refusal_names_the_default_when_the_user_gave_none():
    with pytest.raises(InputError, match=r"basis.r_max = 2.5e\+09: valid .* \(the default for Z = 1e-07; give basis.r_max\)"):
        cfgmod.resolve(solver.as_config(None, ion={"Z": 1e-7, "nucleus": "point"}))


def test_levels_with_tiny_r_min_never_prints_nan(capsys):
    """Before the ranges, --r-min 1e-300 printed 172 NaN energies and exited 0."""
    assert main(["levels", "--z", "92", "--r-min", "1e-300"]) == 2
    out, err = capsys.readouterr()
    assert out == "" and "nan" not in err.lower()


# ----------------------------------------------------------------------------- non-finite guard

SMALL = {"ion": {"Z": 10}, "basis": {"size": 20}, "solve": {"kappas": [-1]}}


def _poison(method, where):
    def poisoned(self, *args, **kwargs):
        H, S = method(self, *args, **kwargs)
        H, S = H.copy(), S.copy()
        (H if where == "H" else S)[1, 1] = np.nan if where == "H" else np.inf
        return H, S
    return poisoned


@pytest.mark.parametrize("where,name", [("H", "Hamiltonian"), ("S", "overlap matrix")])
def test_nan_in_assembled_bspline_matrices_is_named(monkeypatch, where, name):
    monkeypatch.setattr(DiracBasis, "kinetic_and_overlap", _poison(DiracBasis.kinetic_and_overlap, where))
    with pytest.raises(NonFiniteError) as info:
        relbasis.solve(None, **SMALL)
    msg = str(info.value)
    assert "\n" not in msg
    assert f"the {name} of kappa -1 has 1 non-finite entries" in msg and "r_min = " in msg and "docs/config.md" in msg


def test_nan_in_assembled_gaussian_matrices_is_named(monkeypatch):
    monkeypatch.setattr(GaussianDiracBasis, "kinetic_and_overlap", _poison(GaussianDiracBasis.kinetic_and_overlap, "H"))
    with pytest.raises(NonFiniteError, match="Hamiltonian of kappa -1 .* Gaussian exponents"):
        relbasis.solve(ion={"Z": 10, "nucleus": "gauss"}, basis={"family": "gaussian", "size": 12},
                       solve={"kappas": [-1]})


@pytest.mark.parametrize("field", ["energies", "vectors", "error"])
def test_non_finite_roots_after_the_eigen_solve_are_named(monkeypatch, field):
    original = solver.final_roots

    def poisoned(*args, **kwargs):
        system, moved = original(*args, **kwargs)
        value = getattr(system, field).copy()
        value.flat[0] = np.inf
        return replace(system, **{field: value}), moved

    monkeypatch.setattr(solver, "final_roots", poisoned)
    with pytest.raises(NonFiniteError, match="eigen-solve of kappa -1 gave 1 non-finite"):
        relbasis.solve(None, **SMALL)


def test_non_finite_result_on_the_command_line_is_one_line(monkeypatch, capsys):
    monkeypatch.setattr(DiracBasis, "kinetic_and_overlap", _poison(DiracBasis.kinetic_and_overlap, "H"))
    rc = main(["levels", "--z", "10", "--size", "20", "--kappas", "-1"])
    out, err = capsys.readouterr()
    assert rc == 2 and out == "" and err.count("\n") == 1 and "non-finite" in err
