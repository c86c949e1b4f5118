"""A scan plan is validated as a whole before its first unit runs (relbasis.scan.check_units).

Every unit -- the axis values merged into the base -- goes through the config validation, the
defaults and their numerics check, and the work estimate; a bad value in the middle of an axis is
one line naming the axis, the value and the problem, and nothing has been computed.
"""

import pytest

from relbasis import scan as scanmod
from relbasis.cli import main
from relbasis.errors import InputError
from relbasis.scan import plan_from_dict


def _plan(axes, base=None):
    return {"base": base or {"ion": {"Z": 30}}, "axes": axes, "track": {"max_n": 2, "target": 1e-8}}


@pytest.mark.parametrize("axes,start", [
    ({"basis.r_min": [1e-6, 1e-300, 1e-5]}, "axes.'basis.r_min' = 1e-300 (unit 2 of 3): basis.r_min = 1e-300: valid"),
    ({"basis.r_max": [10.0, 1e300, 20.0], "basis.size": [40, 50]},
     "axes.'basis.r_max' = 1e+300 (unit 3 of 6): basis.r_max = 1e+300: valid"),
    ({"ion.Z": [10, 5000, 20]}, "axes.'ion.Z' = 5000 (unit 2 of 3): ion.Z = 5000: valid 0 <= Z <= 1000"),
    ({"basis.size": [40, 20000, 60]}, "axes.'basis.size' = 20000 (unit 2 of 3): basis.size = 20000: at most 2000"),
    ({"basis.order": [7, 40, 8]}, "axes.'basis.order' = 40 (unit 2 of 3): basis.order = 40: at most 20"),
    ({"ion.rms_radius_fm": [3.0, 1e-9, 4.0]}, "axes.'ion.rms_radius_fm' = 1e-09 (unit 2 of 3)"),
])
def test_bad_value_in_the_middle_of_an_axis(axes, start):
    with pytest.raises(InputError) as info:
        plan_from_dict(_plan(axes))
    msg = str(info.value)
    assert "\n" not in msg and msg.startswith(start), msg


def test_a_problem_that_names_no_axis_lists_the_unit():
    """The mass number below Z is the nucleus's complaint; the unit is named by its settings."""
    with pytest.raises(InputError) as info:
        plan_from_dict(_plan({"ion.A": [70, 20, 80]}))
    msg = str(info.value)
    assert msg.startswith("scan unit 2 of 3 (ion.A = 20): ") and "below Z = 30" in msg


def test_a_default_out_of_range_in_one_unit():
    """Z = 1e-7 with a point nucleus gives the default r_max = 2.5e9 bohr, beyond the range."""
    with pytest.raises(InputError, match=r"^scan unit 2 of 2 \(ion.Z = 1e-07\): basis.r_max = 2.5e\+09.*the default for Z = 1e-07"):
        plan_from_dict(_plan({"ion.Z": [10, 1e-7]}, base={"ion": {"nucleus": "point"}}))


def test_nothing_runs_when_a_unit_is_bad(tmp_path, monkeypatch, capsys):
    ran = []
    monkeypatch.setattr(scanmod.run, "run_unit", lambda config: ran.append(config))
    plan = tmp_path / "plan.toml"
    plan.write_text('[base.ion]\nZ = 30\n[axes]\n"basis.r_min" = [1e-6, 1e-7, 1e-300]\n[track]\nmax_n = 2\n')
    rc = main(["scan", str(plan), "--out", str(tmp_path / "out"), "--quiet"])
    err = capsys.readouterr().err
    assert rc == 2 and err.count("\n") == 1 and "axes.'basis.r_min' = 1e-300 (unit 3 of 3)" in err
    assert ran == [] and not (tmp_path / "out").exists()


def test_a_good_plan_still_validates_quickly():
    import time

    t0 = time.perf_counter()
    plan = plan_from_dict(_plan({"ion.Z": [10, 30, 50, 70, 90], "basis.size": [40, 60, 80, 100],
                                 "basis.order": [7, 9]}, base={"ion": {"nucleus": "fermi"}}))
    assert len(scanmod.units(plan)) == 40
    assert time.perf_counter() - t0 < 3.0


@pytest.mark.parametrize("axes, says", [
    ({"basis.size": {"from": 30, "to": 1_000_000_000, "step": 1}}, "at most"),
    ({"basis.size": {"from": 30, "to": 130}, "basis.order": {"from": 5, "to": 15},
      "basis.r_max": {"from": 20, "to": 40}}, "units"),
    ({"basis.r_max": {"from": 20.0, "to": float("inf"), "step": 1.0}}, "finite"),
])
def test_a_plan_too_large_is_refused_before_it_is_expanded(axes, says):
    """A range of a billion values is refused from its bounds, in well under a second."""
    import time

    from relbasis.scan import plan_from_dict

    t0 = time.perf_counter()
    with pytest.raises(InputError, match=says):
        plan_from_dict({"base": {"ion": {"Z": 10, "nucleus": "point"}}, "axes": axes,
                        "track": {"states": ["1s1/2"]}})
    assert time.perf_counter() - t0 < 1.0
