"""Convergence scans: plan validation, analysis, resuming after a kill, and the Dask path."""

import json
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

from relbasis.analytic import dirac_coulomb_energy
from relbasis.cli import main
from relbasis.errors import InputError
from relbasis.scan import fit_rate, plan_from_dict, scan, units
from relbasis.solver import solve

PLAN = {
    "base": {"ion": {"Z": 92, "nucleus": "point"}, "basis": {"balance": "dkb"}},
    "axes": {"basis.size": [40, 50, 60, 70, 80, 90]},
    "track": {"states": ["1s1/2", "2p3/2"], "target": 1e-9},
}


def test_recommendation_for_z92_against_the_exact_formula(tmp_path):
    """Smallest basis meeting 1e-9 on 1s1/2 and 2p3/2 of Z = 92 (point nucleus); checked by
    solving it again and comparing with the Dirac–Coulomb formula (Bethe & Salpeter 1957, §14)."""
    result = scan(plan_from_dict(PLAN), tmp_path / "out", progress=False)
    rec = result.summary["recommended"]
    assert rec is not None
    size = rec["size"]
    for n, kappa in [(1, -1), (2, -2)]:
        sol = solve(None, ion={"Z": 92, "nucleus": "point"}, basis={"size": size}, solve={"kappas": [kappa]})
        assert abs(sol[kappa].level(n) / dirac_coulomb_energy(92, n, kappa) - 1) <= 1e-9
    smaller = max(s for s in PLAN["axes"]["basis.size"] if s < size)
    sol = solve(None, ion={"Z": 92, "nucleus": "point"}, basis={"size": smaller}, solve={"kappas": [-1, -2]})
    worst = max(abs(sol[-1].level(1) / dirac_coulomb_energy(92, 1, -1) - 1),
                abs(sol[-2].level(2) / dirac_coulomb_energy(92, 2, -2) - 1))
    assert worst > 1e-9
    summary = json.loads((tmp_path / "out" / "summary.json").read_text())
    assert set(summary["states"]) == {"1s1/2", "2p3/2"} and summary["recommended"]["size"] == size
    for lab in ("1s1/2", "2p3/2"):
        assert len(summary["states"][lab]["rows"]) == 6
        assert summary["states"][lab]["rates"][0]["form"] in ("exponential", "power")
    assert (tmp_path / "out" / "convergence.csv").exists() and (tmp_path / "out" / "error_1s1_2.png").exists()


def test_changed_plan_reuses_what_still_matches(tmp_path):
    small = dict(PLAN, axes={"basis.size": [40, 50]})
    first = scan(plan_from_dict(small), tmp_path, progress=False)
    assert first.computed == 2
    again = scan(plan_from_dict(small), tmp_path, progress=False)
    assert again.computed == 0
    grown = dict(PLAN, axes={"basis.size": [40, 50, 60]})
    assert scan(plan_from_dict(grown), tmp_path, progress=False).computed == 1


def test_rate_fit_tells_exponential_from_power():
    sizes = [20, 30, 40, 50, 60]
    assert fit_rate(sizes, [10.0 ** (-0.2 * n) for n in sizes])["form"] == "exponential"
    assert fit_rate(sizes, [n ** -6.0 for n in sizes])["form"] == "power"
    assert fit_rate([20, 30], [1e-3, 1e-4]) is None


@pytest.mark.parametrize("data,needle", [
    ({**PLAN, "axes": {"basis.size": []}}, "empty"),
    ({**PLAN, "axes": {}}, "[axes]"),
    ({**PLAN, "axes": {"basis.sise": [40]}}, "did you mean 'size'"),
    ({**PLAN, "axes": {"size": [40]}}, "basis.KEY"),
    ({**PLAN, "track": {"states": ["1e1/2"]}}, "state label"),
    ({**PLAN, "track": {"states": ["1p1/2"]}}, "n >= l + 1"),
    ({**PLAN, "track": {"states": ["1s1/2"], "max_n": 3}}, "either"),
    ({**PLAN, "track": {"states": ["1s1/2"], "target": 2}}, "track.target"),
    ({**PLAN, "trak": {}}, "[trak]"),
    ({**PLAN, "track": {"states": ["1s1/2"], "precision": 1}}, "track.precision"),
    ({**PLAN, "axes": {"basis.size": [3]}}, "basis.size"),
])
def test_bad_plans_are_one_line_errors(data, needle):
    with pytest.raises(InputError) as err:
        plan_from_dict(data)
    assert needle in str(err.value) and "\n" not in str(err.value)


def _write_plan(path: Path, sizes, orders=(8, 9, 10)) -> Path:
    path.write_text(
        '[base.ion]\nZ = 54\nnucleus = "point"\n[base.basis]\nbalance = "dkb"\n[axes]\n'
        f'"basis.size" = {list(sizes)}\n"basis.order" = {list(orders)}\n'
        '[track]\nstates = ["1s1/2", "2p1/2", "3d5/2"]\ntarget = 1e-9\n')
    return path


def _lines(path: Path) -> int:
    return len(path.read_text().splitlines()) if path.exists() else 0


def test_killed_scan_resumes_and_computes_only_the_missing_units(tmp_path):
    """SIGKILL part-way, rerun: the same final tables, and only the missing units computed."""
    plan = _write_plan(tmp_path / "plan.toml", range(40, 125, 5))
    out = tmp_path / "killed"
    proc = subprocess.Popen([sys.executable, "-m", "relbasis", "scan", str(plan), "--out", str(out), "--jobs", "1",
                             "--quiet"], stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    deadline = time.time() + 120
    while _lines(out / "results.jsonl") < 6 and time.time() < deadline and proc.poll() is None:
        time.sleep(0.05)
    os.kill(proc.pid, signal.SIGKILL)
    proc.wait()
    finished = len({json.loads(line)["key"] for line in (out / "results.jsonl").read_text().splitlines()
                    if line.strip().endswith("}")})
    total = len(units(plan_from_dict(__import__("tomllib").loads(plan.read_text()))))
    assert 6 <= finished < total, "the scan must have been killed part-way"
    resumed = scan(plan, out, progress=False)
    assert resumed.total == total and resumed.computed == total - finished
    clean = scan(plan, tmp_path / "clean", progress=False)
    assert resumed.summary["states"] == clean.summary["states"]
    assert resumed.summary["recommended"] == clean.summary["recommended"]


def test_dask_cluster_gives_the_local_results(tmp_path):
    """A real dask.distributed LocalCluster on loopback, driven through --scheduler."""
    distributed = pytest.importorskip("distributed", reason="the 'cluster' extra (dask, distributed) is not installed")
    plan = _write_plan(tmp_path / "plan.toml", [40, 50, 60], orders=(9,))
    local = scan(plan, tmp_path / "local", progress=False)
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True, host="127.0.0.1",
                                  dashboard_address=None) as cluster:
        code = main(["scan", str(plan), "--out", str(tmp_path / "dask"), "--scheduler", cluster.scheduler_address,
                     "--quiet"])
    assert code == 0
    remote = json.loads((tmp_path / "dask" / "summary.json").read_text())
    assert remote["states"] == json.loads(json.dumps(local.summary["states"]))
    assert remote["finished"] == 3


def test_scan_cli_errors(tmp_path, capsys):
    assert main(["scan", str(tmp_path / "missing.toml")]) == 2
    assert "not found" in capsys.readouterr().err
    plan = _write_plan(tmp_path / "p.toml", [40])
    assert main(["scan", str(plan), "--jobs", "0"]) == 2
    assert "--jobs" in capsys.readouterr().err
