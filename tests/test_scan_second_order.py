"""Convergence scans of a second-order energy: [track] second_order in the plan, the energy in
each unit's record and in its key, its convergence table and recommendation in the analysis."""

import csv
import hashlib
import json

import pytest

from relbasis import second_order, solve
from relbasis.errors import InputError
from relbasis.perturbation import L_MAX_LIMIT, kappas_through
from relbasis.scan import RECORD_FORMAT, plan_from_dict, scan, summary_table, units
from relbasis.version import __version__

HELIUM = {"ion": {"Z": 2, "nucleus": "point"}}
PLAN = {"base": HELIUM, "axes": {"basis.size": [30, 40]}, "track": {"second_order": 2}}
FIELDS = {"kind", "energy_hartree", "extrapolated_hartree", "uncertainty_hartree", "increments_hartree", "l_max", "flags"}


def _records(out):
    return [json.loads(line) for line in (out / "results.jsonl").read_text().splitlines()]


@pytest.mark.parametrize("track,needle", [
    ({"second_order": -1}, "track.second_order = -1"),
    ({"second_order": L_MAX_LIMIT + 1}, f"0 <= l_max <= {L_MAX_LIMIT}"),
    ({"second_order": 2.0}, "track.second_order = 2.0"),
    ({"second_order": True}, "track.second_order = True"),
    ({"second_order": "6"}, "track.second_order = '6'"),
    ({"second_order": 2, "second_order_target": 0}, "track.second_order_target = 0"),
    ({"second_order": 2, "second_order_target": 2.0}, "absolute accuracy in hartree"),
    ({"second_order": 2, "second_order_target": "1e-6"}, "track.second_order_target"),
    ({"states": ["1s1/2"], "second_order_target": 1e-6}, "needs track.second_order"),
    ({"second_ordr": 2}, "did you mean 'second_order'"),
    ({"target": 1e-9}, "second_order = L_MAX"),
])
def test_bad_second_order_tracks_are_one_line_errors(track, needle):
    with pytest.raises(InputError) as err:
        plan_from_dict({**PLAN, "track": track})
    assert needle in str(err.value) and "\n" not in str(err.value)


def test_units_solve_every_kappa_through_l_max_and_key_it():
    plain = {"base": HELIUM, "axes": {"basis.size": [30]}, "track": {"states": ["2p3/2"]}}
    old, = units(plan_from_dict(plain))
    text = json.dumps({"relbasis": __version__, "format": RECORD_FORMAT, "config": old.config}, sort_keys=True)
    assert old.key == hashlib.sha256(text.encode()).hexdigest()[:24]  # plans without the track keep their keys
    with_so = plan_from_dict({**plain, "track": {"states": ["2p3/2"], "second_order": 1}})
    assert with_so.kappas() == kappas_through(1) and with_so.kappas() == (-1, 1, -2)
    # the same kappas as the plain plan's max_n = 2, yet another key: the record must carry the energy
    by_n = plan_from_dict({**plain, "track": {"max_n": 2}})
    l1 = plan_from_dict({**plain, "track": {"max_n": 2, "second_order": 1}})
    l2 = plan_from_dict({**plain, "track": {"max_n": 2, "second_order": 2}})
    (a,), (b,), (c,) = units(by_n), units(l1), units(l2)
    assert a.config == b.config and len({a.key, b.key, c.key}) == 3
    assert plan_from_dict(PLAN).kappas() == kappas_through(2) and plan_from_dict(PLAN).to_dict()["track"]["second_order"] == 2
    assert "second_order" not in by_n.to_dict()["track"]


def test_second_order_scan_records_summary_and_resume(tmp_path):
    out = tmp_path / "he"
    result = scan(plan_from_dict(PLAN), out, jobs=2, progress=False)
    assert result.computed == 2
    records = {r["config"]["basis"]["size"]: r for r in _records(out)}
    for size, rec in records.items():
        direct = second_order(solve(dict(HELIUM, basis={"size": size}, solve={"kappas": list(kappas_through(2))})), 2)
        so = rec["second_order"]
        assert set(so) == FIELDS and so["kind"] == "pair" and so["l_max"] == 2
        assert so["energy_hartree"] == pytest.approx(direct.energy, rel=1e-12, abs=0)
        assert so["extrapolated_hartree"] == pytest.approx(direct.extrapolated, rel=1e-12, abs=0)
        assert so["increments_hartree"] == pytest.approx(list(direct.increments), rel=1e-12, abs=0)
    summary = json.loads((out / "summary.json").read_text())
    assert {"relbasis", "plan", "target", "units", "finished", "references", "states", "recommended"} <= set(summary)
    assert summary["states"] == {}
    block = summary["second_order"]
    small, large = block["rows"]
    e30, e40 = (records[s]["second_order"]["extrapolated_hartree"] for s in (30, 40))
    assert large["is_reference"] and block["references"][0]["size"] == 40
    assert small["difference_hartree"] == pytest.approx(abs(e30 - e40), rel=1e-12)
    assert large["change_hartree"] == {"basis.size": pytest.approx(abs(e40 - e30), rel=1e-12)}
    assert small["change_hartree"] == {"basis.size": None}
    # 1.7e-2 hartree apart at sizes 30/40: no recommendation at 1e-6; it says the reference still moves
    assert block["recommended"] is None and summary["recommended"] is None
    assert any("still moves" in n for n in block["notes"])
    text = summary_table(result.summary)
    assert "second-order energy (pair; l_max = 2" in text and "reference" in text
    with open(out / "convergence.csv", newline="", encoding="utf-8") as fh:
        rows = [r for r in csv.DictReader(fh) if r["state"] == "second-order energy"]
    assert [float(r["energy_hartree"]) for r in rows] == [e30, e40]

    # a generous target recommends the smaller basis (the reference is no evidence for itself)
    loose = {**PLAN, "track": {"second_order": 2, "second_order_target": 0.05}}
    again = scan(plan_from_dict(loose), out, progress=False)
    assert again.computed == 0  # the target is not part of the key
    assert again.summary["second_order"]["recommended"] == {"basis": {"size": 30}, "size": 30, "reference_settled": True,
                                                            "worst_difference_hartree": pytest.approx(abs(e30 - e40))}
    assert again.summary["recommended"] == {"basis": {"size": 30}, "size": 30, "worst_relative_error": None}

    # interrupted: one whole record and a torn line left; the rerun computes only the missing unit
    lines = (out / "results.jsonl").read_text().splitlines()
    (out / "results.jsonl").write_text(lines[0] + "\n" + lines[1][: len(lines[1]) // 2])
    resumed = scan(plan_from_dict(PLAN), out, progress=False)
    assert resumed.computed == 1
    assert resumed.summary["second_order"] == json.loads(json.dumps(result.summary["second_order"]))

    # a plan without the track, or with another l_max, does not take these records for its own
    plain = {**PLAN, "track": {"states": ["1s1/2"], "target": 1e-6}}
    assert scan(plan_from_dict(plain), out, progress=False).computed == 2
    assert scan(plan_from_dict({**PLAN, "track": {"second_order": 3}}), out, progress=False).computed == 2
    assert scan(plan_from_dict(PLAN), out, progress=False).computed == 0


def test_core_scan_records_a_basis_that_cannot_carry_the_sum(tmp_path):
    """He 1s2 core: 30 B-splines (default cavity) do not resolve the mean field's 1s, 40 do."""
    plan = {"base": {**HELIUM, "electrons": {"core": "1s2"}}, "axes": {"basis.size": [30, 40]},
            "track": {"second_order": 1, "states": ["1s1/2"]}}
    result = scan(plan_from_dict(plan), tmp_path, progress=False)
    records = {r["config"]["basis"]["size"]: r for r in _records(tmp_path)}
    assert set(records[30]["second_order"]) == {"l_max", "error"}
    assert "does not resolve 1s1/2" in records[30]["second_order"]["error"]
    assert records[40]["second_order"]["kind"] == "core" and "scf" in records[40]
    block = result.summary["second_order"]
    assert block["kinds"] == ["core"] and block["recommended"] is None
    failed = next(r for r in block["rows"] if r["size"] == 30)
    assert failed["extrapolated_hartree"] is None and failed["error"]
    assert any("no second-order energy for {'basis.size': 30}" in n for n in block["notes"])
    assert "no sum (see notes)" in summary_table(result.summary)
    assert scan(plan_from_dict(plan), tmp_path, progress=False).computed == 0  # the verdict is stored, not retried
