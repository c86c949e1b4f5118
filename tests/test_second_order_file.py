"""scripts/second_order_from_file.py: the second-order energies rebuilt from an exported basis
file alone (numpy, h5py, scipy.special.zeta; no relbasis import) agree with
``relbasis.second_order`` to 1e-12 relative: the energy, every partial-wave increment, the
extrapolated value and its uncertainty (docs/file-format.md, "Second-order sums from the file
alone").  Bad files and options: one line on stderr, exit status 2.
"""

import importlib.util
import json
import subprocess
import sys
from pathlib import Path

import h5py
import pytest

import relbasis

ROOT = Path(__file__).resolve().parent.parent
SCRIPT = ROOT / "scripts" / "second_order_from_file.py"
TOL = 1e-12  # relative; or 1e-15 hartree absolute, whichever is looser

PAIR = {"ion": {"Z": 2, "nucleus": "point"}, "basis": {"size": 40}, "solve": {"kappas": [-1, 1, -2, 2, -3, 3, -4]}}
CORE = {"ion": {"Z": 4, "nucleus": "point"}, "electrons": {"core": "1s1/2 2s1/2"}, "basis": {"size": 40},
        "solve": {"kappas": [-1, 1, -2, 2, -3]}}
VALENCE = {"ion": {"Z": 3}, "electrons": {"core": "1s1/2", "valence": "2s1/2"}, "basis": {"size": 40},
           "solve": {"kappas": [-1, 1, -2, 2, -3]}}


@pytest.fixture(scope="module")
def script():
    spec = importlib.util.spec_from_file_location("second_order_from_file", SCRIPT)
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


@pytest.fixture(scope="module")
def pair_solution():
    return relbasis.solve(PAIR, c=1e6)  # near the nonrelativistic limit, where E2 is known


def _close(got: float, want: float) -> bool:
    return abs(got - want) <= max(TOL * abs(want), 1e-15)


def _agrees(result: dict, ref) -> None:
    assert result["kind"] == ref.kind and result["l_max"] == ref.l_max
    assert len(result["increments_hartree"]) == len(ref.increments)
    pairs = [("energy", result["energy_hartree"], ref.energy),
             ("extrapolated", result["extrapolated_hartree"], ref.extrapolated),
             ("uncertainty", result["uncertainty_hartree"], ref.uncertainty)]
    pairs += [(f"increment L={L}", g, w) for L, (g, w) in enumerate(zip(result["increments_hartree"], ref.increments))]
    bad = [(name, g, w) for name, g, w in pairs if not _close(g, w)]
    assert not bad, bad


@pytest.mark.parametrize("suffix", [".h5", ".npz"])
def test_pair_of_the_bare_nucleus(script, pair_solution, tmp_path, suffix):
    path = relbasis.export(pair_solution, tmp_path / f"pair{suffix}")
    ref = relbasis.second_order(pair_solution, l_max=3)
    _agrees(script.second_order(script.load(path), 3), ref)


def test_pair_with_the_negative_branch(script, pair_solution, tmp_path):
    path = relbasis.export(pair_solution, tmp_path / "pair.h5")
    ref = relbasis.second_order(pair_solution, l_max=3, negative_branch=True)
    got = script.second_order(script.load(path), 3, negative_branch=True)
    _agrees(got, ref)
    assert any(n.startswith("brown-ravenhall") for n in got["notes"]) == ("brown-ravenhall" in ref.flags)


def test_closed_core(script, tmp_path):
    sol = relbasis.solve(CORE)
    path = relbasis.export(sol, tmp_path / "be.h5")
    ref = relbasis.second_order(sol, l_max=2)
    assert ref.kind == "core"
    _agrees(script.second_order(script.load(path), 2), ref)


@pytest.mark.parametrize("suffix", [".h5", ".npz"])
def test_valence_electron(script, tmp_path, suffix):
    sol = relbasis.solve(VALENCE)
    path = relbasis.export(sol, tmp_path / f"li{suffix}")
    for l_max in (1, 2):
        ref = relbasis.second_order(sol, l_max=l_max)
        assert ref.kind == "valence"
        _agrees(script.second_order(script.load(path), l_max), ref)


def test_command_line_json(pair_solution, tmp_path):
    """The script as a user runs it: a JSON object with the documented keys."""
    path = relbasis.export(pair_solution, tmp_path / "pair.h5")
    out = subprocess.run([sys.executable, str(SCRIPT), str(path), "--l-max", "3", "--json"],
                         capture_output=True, text=True, timeout=60)
    assert out.returncode == 0, out.stderr
    got = json.loads(out.stdout)
    assert set(got) == {"energy_hartree", "extrapolated_hartree", "uncertainty_hartree", "increments_hartree",
                        "l_max", "kind", "notes"}
    _agrees(got, relbasis.second_order(pair_solution, l_max=3))


def _refused(script, capsys, argv, words):
    assert script.main(argv) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "Traceback" not in err, err
    for w in words:
        assert w in err, err


def test_l_max_beyond_the_file(script, pair_solution, tmp_path, capsys):
    path = relbasis.export(pair_solution, tmp_path / "pair.h5")
    _refused(script, capsys, [str(path), "--l-max", "4"], ["--l-max 4", "kappa [4, -5]", "--l-max <= 3"])


def test_bad_files(script, pair_solution, tmp_path, capsys):
    foreign = tmp_path / "foreign.h5"
    with h5py.File(foreign, "w") as f:
        f["x"] = 1.0
    _refused(script, capsys, [str(foreign)], ["not a relbasis basis file"])
    _refused(script, capsys, [str(tmp_path / "missing.h5")], ["no such file"])
    text = tmp_path / "text.h5"
    text.write_text("not a basis\n")
    _refused(script, capsys, [str(text)], ["not an HDF5 file"])
    newer = relbasis.export(pair_solution, tmp_path / "newer.h5")
    with h5py.File(newer, "a") as f:
        f.attrs["layout_version"] = 9
    _refused(script, capsys, [str(newer)], ["layout_version 9"])
    gridded = relbasis.export(pair_solution, tmp_path / "gridded.h5", grid=[0.1, 0.5, 1.0, 2.0])
    _refused(script, capsys, [str(gridded), "--l-max", "0"], ["grid/r is not the quadrature"])
    _refused(script, capsys, [str(newer), "--l-max", "x"], ["--l-max"])


def test_bad_file_from_the_shell(tmp_path):
    """A subprocess sees exit status 2 and one line, no traceback."""
    foreign = tmp_path / "foreign.h5"
    with h5py.File(foreign, "w") as f:
        f["x"] = 1.0
    out = subprocess.run([sys.executable, str(SCRIPT), str(foreign)], capture_output=True, text=True, timeout=60)
    assert out.returncode == 2 and out.stderr.count("\n") == 1 and "Traceback" not in out.stderr, out.stderr
