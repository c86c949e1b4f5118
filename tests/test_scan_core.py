"""Convergence scans of a Dirac–Hartree–Fock core: [base.electrons] in every unit and its key,
the core's figures in the results store, the total energy's convergence in the analysis."""

import csv
import json

import pytest

from relbasis import solve
from relbasis.cli import main
from relbasis.errors import InputError
from relbasis.scan import plan_from_dict, scan, units

BERYLLIUM = {"ion": {"Z": 4, "nucleus": "point"}, "electrons": {"core": "[He] 2s2"}}
PLAN = {"base": {**BERYLLIUM, "solve": {"kappas": [-1]}}, "axes": {"basis.size": [40, 60]},
        "track": {"states": ["2s1/2"], "target": 1e-6}}


def _records(out):
    return [json.loads(line) for line in (out / "results.jsonl").read_text().splitlines()]


def test_core_scan_records_resumes_and_keys_the_core(tmp_path):
    out = tmp_path / "be"
    first = scan(plan_from_dict(PLAN), out, jobs=2, progress=False)
    assert first.computed == 2
    records = {r["config"]["basis"]["size"]: r for r in _records(out)}
    for size, rec in records.items():
        direct = solve(None, ion=BERYLLIUM["ion"], electrons=BERYLLIUM["electrons"], basis={"size": size},
                       solve={"kappas": [-1]}).scf
        figures = rec["scf"]
        assert figures["total_energy_hartree"] == pytest.approx(direct.total_energy, rel=1e-12, abs=0)
        assert figures["orbitals"] == pytest.approx(direct.orbitals, rel=1e-12, abs=0)
        assert figures["iterations"] == direct.iterations and figures["converged"] is True
        assert rec["levels"]["2s1/2"] == pytest.approx(direct.orbitals["2s1/2"], rel=1e-12, abs=0)
    core = first.summary["core"]
    small, large = core["rows"]
    assert large["is_reference"] and small["relative_change"] == {"basis.size": None}
    e40, e60 = (records[s]["scf"]["total_energy_hartree"] for s in (40, 60))
    assert large["relative_change"]["basis.size"] == pytest.approx(abs(e60 / e40 - 1), rel=1e-12)
    assert small["relative_error"] == pytest.approx(abs(e40 / e60 - 1), rel=1e-12)
    # the levels of a mean field are not compared with the one-electron formula
    assert first.summary["references"][0]["states"]["2s1/2"]["source"].startswith("largest basis")
    with open(out / "convergence.csv", newline="", encoding="utf-8") as fh:
        rows = [r for r in csv.DictReader(fh) if r["state"] == "total energy"]
    assert [float(r["energy_hartree"]) for r in rows] == [e40, e60]
    assert (out / "error_total_energy.png").is_file()

    assert scan(plan_from_dict(PLAN), out, jobs=2, progress=False).computed == 0
    # the same core spelt another way is the same unit; a changed core is a new one
    respelt = {**PLAN, "base": {**PLAN["base"], "electrons": {"core": "2s2 1s2"}}}
    assert scan(plan_from_dict(respelt), out, progress=False).computed == 0
    ion = {**PLAN, "base": {**PLAN["base"], "electrons": {"core": "[He]"}}}
    changed = scan(plan_from_dict(ion), out, jobs=2, progress=False)
    assert changed.computed == 2
    assert {u.key for u in units(plan_from_dict(ion))}.isdisjoint(u.key for u in units(plan_from_dict(PLAN)))


def test_bare_nucleus_records_have_no_core(tmp_path):
    bare = {"base": {"ion": {"Z": 4, "nucleus": "point"}}, "axes": {"basis.size": [30]},
            "track": {"states": ["1s1/2"]}}
    result = scan(plan_from_dict(bare), tmp_path, progress=False)
    assert "scf" not in _records(tmp_path)[0] and "core" not in result.summary
    assert not (tmp_path / "error_total_energy.png").exists()


@pytest.mark.parametrize("electrons,needle", [
    ({"core": "[Hx]"}, "base.electrons.core"),
    ({"cor": "[He]"}, "base.electrons.cor"),
    ({"core": "[Ne]"}, "more than Z = 4"),
    ("[He]", "[base.electrons]"),
])
def test_bad_core_is_one_line_naming_the_plan_key(electrons, needle):
    with pytest.raises(InputError) as err:
        plan_from_dict({**PLAN, "base": {**PLAN["base"], "electrons": electrons}})
    assert needle in str(err.value) and "\n" not in str(err.value)


def test_exact_reference_is_refused_with_a_core():
    with pytest.raises(InputError, match="reference = 'exact'"):
        plan_from_dict({**PLAN, "track": {**PLAN["track"], "reference": "exact"}})


def test_core_scan_from_the_command_line(tmp_path, capsys):
    plan = tmp_path / "plan.toml"
    plan.write_text('[base.ion]\nZ = 4\nnucleus = "point"\n[base.electrons]\ncore = "[He] 2s2"\n'
                    '[axes]\n"basis.size" = [40]\n[track]\nstates = ["2s1/2"]\n')
    assert main(["scan", str(plan), "--out", str(tmp_path / "out"), "--quiet"]) == 0
    assert "total energy of the core" in capsys.readouterr().out
    plan.write_text(plan.read_text().replace("[He] 2s2", "[He] 2s3"))
    assert main(["scan", str(plan), "--out", str(tmp_path / "out"), "--quiet"]) == 2
    assert "base.electrons.core" in capsys.readouterr().err
