"""Critical charge: the package's search against an independent shooting calculation at threshold.

The reference (tests/shooting.py, threshold_charge) integrates the radial Dirac equations at
eps = -2c^2 with scipy.integrate.solve_ivp and finds the Z at which an outward and an inward
solution with n - l - 1 nodes of P match; it uses no package code.  The potential and the
radius rule are written here again: a uniform sphere of rms radius
0.836 A^(1/3) + 0.570 fm (W. R. Johnson, G. Soff, At. Data Nucl. Data Tables 33, 405 (1985),
from memory), A = 2.5 Z, radius sqrt(5/3) R_rms (elementary).  The Gaussian and Fermi
models are compared in scripts/critical_charge_table.py (docs/critical.md has the figures).
"""

import functools
import json
import math

import numpy as np
import pytest
from scipy.constants import fine_structure

import relbasis
from relbasis.cli import main
from relbasis.errors import InputError
from relbasis.nucleus import default_rms_radius_fm, rms_radius_of_mass_fm
from shooting import threshold_charge

C = 1.0 / fine_structure
FM = 1.0 / 52917.7210544  # one femtometre in bohr (CODATA 2022 Bohr radius 52917.7210544 fm)


def sphere_radius(Z):
    return math.sqrt(5.0 / 3.0) * (0.836 * (2.5 * Z) ** (1.0 / 3.0) + 0.570) * FM


def sphere_potential(Z):
    """Uniformly charged sphere: V = -Z/(2R) (3 - r^2/R^2) inside, -Z/r outside (elementary)."""
    R = sphere_radius(Z)

    def V(r):
        r = np.asarray(r, dtype=float)
        return np.where(r < R, -Z / (2.0 * R) * (3.0 - (r / R) ** 2), -Z / np.maximum(r, R))

    return V


@functools.lru_cache(maxsize=None)
def sphere_1s():
    return relbasis.critical_charge(nucleus="sphere", mass_number=lambda Z: 2.5 * Z, n=1, kappa=-1)


def test_sphere_1s_matches_threshold_shooting():
    res = sphere_1s()
    # the bracket only saves shooting steps: threshold_charge checks that it holds the root
    ref = threshold_charge(sphere_potential, -1, 1, c=C, bracket=(res.Z - 1e-4, res.Z + 1e-4),
                           r_break_of=sphere_radius)
    assert abs(res.Z - ref) < 1e-6
    assert abs(res.Z - ref) <= 10 * res.uncertainty  # the stated uncertainty is honest (measured 4e-12)
    assert res.uncertainty < 1e-8


def test_result_fields():
    res = sphere_1s()
    assert res.label == "1s1/2" and (res.n, res.kappa) == (1, -1) and res.nucleus == "sphere"
    assert res.A == pytest.approx(2.5 * res.Z, rel=1e-15) and not float(res.A).is_integer()
    assert res.rms_radius_fm == pytest.approx(0.836 * res.A ** (1 / 3) + 0.570, rel=1e-14)
    assert "0.836" in res.radius_rule and "(Z)" in res.mass_rule
    assert res.threshold_hartree == pytest.approx(-2 * C * C, rel=1e-15)
    # the level falls with Z: about -1160 hartree per unit charge at Z_cr (measured)
    assert -2000 < res.slope < -500
    assert res.basis["size"] == 100 and res.check_basis["size"] == 140
    assert res.check_basis["r_max"] == pytest.approx(2 * res.basis["r_max"], rel=1e-12)
    assert "no QED" in res.caveat
    doc = json.loads(json.dumps(res.to_dict()))
    assert doc["Z"] == res.Z and doc["uncertainty"] == res.uncertainty


def test_default_call_uses_fermi_and_the_stated_mass_rule():
    res = relbasis.critical_charge()
    assert res.nucleus == "fermi" and res.label == "1s1/2"
    assert res.mass_rule.startswith("A = 2.5 Z (default")
    assert res.A == pytest.approx(2.5 * res.Z, rel=1e-15)
    # the literature puts 1s diving near Z = 169-173 for realistic radii (from memory)
    assert 168 < res.Z < 174
    assert res.seconds < 30


def test_fixed_mass_number_is_accepted():
    res = relbasis.critical_charge("gauss", 430.5, basis={"size": 60})
    assert res.A == 430.5 and res.mass_rule == "A = 430.5 (fixed)"
    assert 168 < res.Z < 174


def test_radius_formula_takes_real_mass_numbers():
    assert rms_radius_of_mass_fm(238) == default_rms_radius_fm(238)
    assert rms_radius_of_mass_fm(423.5) == pytest.approx(0.836 * 423.5 ** (1 / 3) + 0.570, rel=1e-15)
    for bad in (0, -1.0, float("nan"), "238", True):
        with pytest.raises(InputError):
            rms_radius_of_mass_fm(bad)


def _raises(Z):
    return 1 / 0


@pytest.mark.parametrize("kwargs,key", [
    ({"nucleus": "point"}, "point"),
    ({"nucleus": "fermy"}, "did you mean 'fermi'"),
    ({"nucleus": 3}, "nucleus"),
    ({"n": 0}, "n = 0"),
    ({"n": 1.5}, "n = 1.5"),
    ({"n": True}, "n = True"),
    ({"n": 1, "kappa": 1}, "kappa = 1"),
    ({"kappa": 0}, "kappa = 0"),
    ({"kappa": -1.0}, "kappa = -1.0"),
    ({"mass_number": "abc"}, "mass_number"),
    ({"mass_number": -5}, "mass_number"),
    ({"mass_number": True}, "mass_number"),
    ({"mass_number": float("inf")}, "mass_number"),
    ({"mass_number": lambda Z: "abc"}, "mass_number"),
    ({"mass_number": lambda Z: float("nan")}, "mass_number"),
    ({"mass_number": lambda Z: -1.0}, "mass_number"),
    ({"mass_number": lambda Z: None}, "mass_number"),
    ({"mass_number": lambda Z: 100}, "below Z"),
    ({"mass_number": _raises}, "ZeroDivisionError"),
    ({"basis": {"family": "gaussian"}}, "basis.family"),
    ({"basis": {"knots": [0.0, 1.0, 2.0]}}, "basis.knots"),
    ({"basis": "big"}, "basis"),
    ({"basis": {"size": 5}}, "basis.size"),
])
def test_bad_input_is_one_line(kwargs, key):
    with pytest.raises(InputError) as err:
        relbasis.critical_charge(**kwargs)
    msg = str(err.value)
    assert key in msg and "\n" not in msg


def test_cli_json(capsys):
    code = main(["critical", "--nucleus", "sphere", "--a-per-z", "2.5", "--json", "--quiet"])
    out, err = capsys.readouterr()
    assert code == 0 and err == ""
    doc = json.loads(out)
    assert set(doc) >= {"relbasis", "constants", "Z", "uncertainty", "n", "kappa", "label", "nucleus",
                        "mass_rule", "A", "rms_radius_fm", "radius_rule", "slope", "basis", "check_basis",
                        "method", "caveat", "threshold_hartree"}
    assert doc["Z"] == pytest.approx(sphere_1s().Z, abs=1e-9) and doc["mass_rule"] == "A = 2.5 Z"


@pytest.mark.parametrize("argv", [
    ["--nucleus", "point"], ["--n", "0"], ["--kappa", "0"], ["--a-per-z", "0.5"], ["--a", "-3"],
    ["--a", "300", "--a-per-z", "2"], ["--nucleus", "fermy"], ["--kappa", "x"], ["--size", "5"],
])
def test_cli_bad_input_exits_2(capsys, argv):
    code = main(["critical", "--quiet", *argv])
    out, err = capsys.readouterr()
    assert code == 2 and out == ""
    assert err.startswith("error: ") and err.count("\n") == 1
