"""The command line: tables, JSON, and one-line errors with exit status 2 for bad input."""

import json
import subprocess
import sys

import pytest

from relbasis.cli import main


def run(capsys, *argv):
    code = main(list(argv))
    out, err = capsys.readouterr()
    return code, out, err


def test_levels_table_for_a_point_nucleus(capsys):
    code, out, err = run(capsys, "levels", "--z", "54", "--nucleus", "point", "--kappas", "-1,1")
    assert code == 0 and err == ""
    assert "1s1/2" in out and "2p1/2" in out and "rel. error" in out
    assert "no QED" in out and "CODATA" in out


def test_levels_without_config_solves_the_demo_ion(capsys):
    code, out, _ = run(capsys, "levels", "--kappas", "-1")
    assert code == 0
    assert "Z = 82" in out and "fermi nucleus" in out


def test_all_lists_the_continua(capsys):
    _, short, _ = run(capsys, "levels", "--z", "10", "--kappas", "-1", "--size", "30")
    _, full, _ = run(capsys, "levels", "--z", "10", "--kappas", "-1", "--size", "30", "--all")
    assert "negative" not in short.split("roots:")[0].split("flags")[1]
    assert full.count("negative ") >= 20 and full.count("positive ") >= 10


def test_json_document_shape(capsys):
    code, out, _ = run(capsys, "levels", "--z", "92", "--json", "--kappas", "-1,1", "--size", "40")
    assert code == 0
    doc = json.loads(out)
    assert set(doc) >= {"relbasis", "constants", "ion", "basis", "states"}
    assert doc["constants"]["codata"] == "2022" and doc["constants"]["alpha"] == pytest.approx(0.0072973525643)
    assert doc["ion"]["Z"] == 92 and doc["ion"]["nucleus"] == "fermi"
    assert doc["basis"]["family"] == "bspline" and doc["basis"]["size"] == 40
    for st in doc["states"]:
        assert set(st) >= {"kappa", "n", "label", "branch", "energy_hartree", "flags"}
        assert st["branch"] in ("negative", "bound", "positive", "spurious")
    bound = [s for s in doc["states"] if s["branch"] == "bound"]
    assert bound[0]["label"] == "1s1/2" and bound[0]["n"] == 1


def test_config_file_and_flag_override(tmp_path, capsys):
    cfg = tmp_path / "ion.toml"
    cfg.write_text('[ion]\nZ = 26\nnucleus = "point"\n[basis]\nsize = 50\n[solve]\nkappas = [-1]\n')
    code, out, _ = run(capsys, "levels", str(cfg), "--size", "60", "--json")
    doc = json.loads(out)
    assert code == 0 and doc["basis"]["size"] == 60 and doc["ion"]["Z"] == 26


@pytest.mark.parametrize(
    "argv,needle",
    [
        (["levels", "--z", "0"], "ion.Z"),
        (["levels", "--z", "-3"], "ion.Z"),
        (["levels", "--z", "10", "--kappas", "0"], "kappa"),
        (["levels", "--z", "10", "--kappas", "1,x"], "--kappas"),
        (["levels", "--z", "10", "--size", "8", "--order", "8"], "basis.size"),
        (["levels", "--z", "10", "--r-min", "2", "--r-max", "1"], "r_min"),
        (["levels", "--z", "abc"], "--z"),
        (["levels", "--z", "10", "--nucleus", "fermy"], "fermi"),
        (["levels", "--z", "10", "--balance", "dbk"], "dkb"),
        (["levels", "missing.toml"], "not found"),
        (["levels", "--z", "140", "--nucleus", "point"], "finite nucleus"),
        (["levels", "--z", "1", "--nucleus", "fermi"], "sphere"),
        (["frobnicate"], "frobnicate"),
        ([], "command"),
    ],
)
def test_bad_input_is_one_line_with_status_2(capsys, argv, needle):
    code, out, err = run(capsys, *argv)
    assert code == 2
    assert out == ""
    lines = err.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("error: ")
    assert needle in lines[0]


@pytest.mark.parametrize(
    "text,needle",
    [
        ('[ion]\nZ = 10\nnucleus = "point"\n[basis]\nsise = 40\n', "did you mean 'size'"),
        ('[ion]\nZ = 10\n[bassis]\nsize = 40\n', "[basis]"),
        ('[ion]\nZ = "ten"\n', "ion.Z"),
        ('[ion]\nZ = 10\n[basis]\norder = 7.5\n', "basis.order"),
        ('[ion]\nZ = 10\n[basis]\nr_max = "far"\n', "basis.r_max"),
        ('[basis]\nsize = 40\n', "[ion]"),
        ('[ion]\nZ = 10\n[solve]\nkappas = []\n', "kappas"),
        ("[ion\nZ = 10\n", "TOML"),
    ],
)
def test_bad_config_files(tmp_path, capsys, text, needle):
    cfg = tmp_path / "bad.toml"
    cfg.write_text(text)
    code, out, err = run(capsys, "levels", str(cfg))
    assert code == 2 and out == ""
    assert len(err.strip().splitlines()) == 1 and needle in err


def test_module_entry_point_prints_json():
    """`python -m relbasis levels --z 92 --json` in a fresh interpreter gives valid JSON."""
    proc = subprocess.run([sys.executable, "-m", "relbasis", "levels", "--z", "92", "--json"],
                          capture_output=True, text=True, timeout=120)
    assert proc.returncode == 0, proc.stderr
    doc = json.loads(proc.stdout)
    assert len(doc["states"]) == sum(doc["basis"]["functions"].values())


def test_console_script_prints_json():
    """The installed `relbasis` command (skipped when the package is not installed)."""
    import shutil

    exe = shutil.which("relbasis")
    if exe is None:
        pytest.skip("the relbasis console script is not on PATH (package not installed)")
    proc = subprocess.run([exe, "levels", "--z", "92", "--json"], capture_output=True, text=True, timeout=120)
    assert proc.returncode == 0, proc.stderr
    assert json.loads(proc.stdout)["ion"]["Z"] == 92


@pytest.mark.parametrize("argv,needle", [(["levels", "--z", "10", "--size", "100000"], "at most"),
                                         (["levels", "--z", "10", "--order", "40"], "at most")])
def test_absurd_sizes_are_refused(capsys, argv, needle):
    code, _, err = run(capsys, *argv)
    assert code == 2 and needle in err


def test_gaussian_family_from_flags_and_from_toml(tmp_path, capsys):
    code, out, _ = run(capsys, "levels", "--family", "gaussian", "--z", "54", "--nucleus", "gauss",
                       "--balance", "rkb", "--kappas", "-1,1")
    assert code == 0 and "gaussian, 40 functions" in out and "dropped nothing" in out
    assert "1s1/2" in out and "2p1/2" in out
    cfg = tmp_path / "g.toml"
    cfg.write_text('[ion]\nZ = 54\nnucleus = "gauss"\n[basis]\nfamily = "gaussian"\nbalance = "dkb"\n'
                   'size = 30\nexponent_min = 2.0\nexponent_max = 1e8\n[solve]\nkappas = [-1]\n')
    code, out, _ = run(capsys, "levels", str(cfg), "--json")
    doc = json.loads(out)
    assert code == 0 and doc["basis"]["family"] == "gaussian" and doc["basis"]["size"] == 30
    assert doc["basis"]["exponent_max"] == 1e8 and doc["basis"]["dropped"] == {"-1": 0}
    assert doc["states"][len(doc["states"]) // 2]["label"] == "1s1/2"


@pytest.mark.parametrize(
    "argv,needle",
    [
        (["levels", "--z", "10", "--exponent-min", "1"], "applies to family = 'gaussian'"),
        (["levels", "--z", "10", "--family", "gaussian", "--order", "7"], "applies to family = 'bspline'"),
        (["levels", "--z", "10", "--balance", "rkb"], "basis.balance"),
        (["levels", "--z", "10", "--family", "gaussian", "--exponent-min", "5", "--exponent-max", "1"], "exponent_min"),
        (["levels", "--z", "10", "--family", "gaussian", "--overlap-threshold", "0.5"], "overlap_threshold"),
        (["levels", "--z", "10", "--family", "gausian"], "gaussian"),
    ],
)
def test_gaussian_input_errors(capsys, argv, needle):
    code, out, err = run(capsys, *argv)
    assert code == 2 and out == "" and len(err.strip().splitlines()) == 1
    assert needle in err


def test_a_family_flag_overrides_the_config_file_family(capsys):
    """--family gaussian on a B-spline config (the demo) meets no B-spline default of the file."""
    assert main(["levels", "--family", "gaussian", "--kappas", "-1"]) == 0
    assert "basis: gaussian" in capsys.readouterr().out
