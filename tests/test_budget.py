"""Work estimates and limits (relbasis.budget, docs/performance.md) and the progress decision.

Refusals come at once, before any matrix or grid is allocated: the figures are arithmetic on
the resolved config.  The limits are lowered with monkeypatch where a test needs a job beyond
them, so that nothing large is ever run here.
"""

import io
import json
import time

import numpy as np
import pytest

import relbasis
from relbasis import budget
from relbasis.budget import BudgetError, Estimate
from relbasis.cli import main
from relbasis.config import resolve
from relbasis.errors import InputError
from relbasis.solver import as_config


def _timed(argv, capsys):
    t0 = time.perf_counter()
    rc = main(argv)
    seconds = time.perf_counter() - t0
    out, err = capsys.readouterr()
    return rc, out, err, seconds


def test_size_20000_is_refused_at_once_with_the_estimate(capsys):
    rc, out, err, seconds = _timed(["levels", "--z", "92", "--size", "20000"], capsys)
    assert rc == 2 and out == "" and err.count("\n") == 1
    assert seconds < 0.5, seconds
    assert "basis.size = 20000" in err and "GB of memory" in err and "for 8 symmetries" in err
    assert "at most 2000" in err


def test_export_grid_of_a_billion_points_is_refused_at_once(tmp_path, capsys):
    """--grid 1e-6:1:1000000000 grew until the kernel killed it (101 s, exit 137)."""
    target = tmp_path / "big.h5"
    rc, out, err, seconds = _timed(["export", "--z", "92", "--out", str(target), "--grid", "1e-6:1:1000000000"], capsys)
    assert rc == 2 and out == "" and err.count("\n") == 1
    assert seconds < 0.5, seconds
    assert "1000000000 points x 200 roots x 2 components x 8 bytes in each of 8 symmetries" in err
    assert "TB" in err and "cannot run here" in err
    assert list(tmp_path.iterdir()) == []


def test_export_grid_beyond_the_file_limit_needs_allow_large(tmp_path, capsys):
    """A grid that fits in memory but makes a file over the limit: refused with the flag to add."""
    rc, _, err, seconds = _timed(["export", "--z", "92", "--out", str(tmp_path / "a.h5"),
                                  "--grid", "1e-6:1:100000"], capsys)
    assert rc == 2 and seconds < 0.5
    assert "a file of about 2.6 GB" in err and "the limit is" in err and "add --allow-large to go on" in err


@pytest.mark.parametrize("grid,needle", [("1e-6:1e300:10", "beyond the cavity"), ("1e-6:inf:10", "finite radii"),
                                         ("0:1:10", "0 < R_MIN"), ("1e-6:1:1", "COUNT"), ("1e-6:1:2.5", "COUNT"),
                                         ("1:2", "R_MIN:R_MAX:COUNT")])
def test_export_grid_is_checked_before_the_solve(tmp_path, capsys, grid, needle):
    rc, _, err, seconds = _timed(["export", "--z", "92", "--out", str(tmp_path / "a.h5"), "--grid", grid], capsys)
    assert rc == 2 and err.count("\n") == 1 and needle in err and seconds < 0.5


def test_allow_large_lets_a_job_beyond_the_limits_through(tmp_path, capsys, monkeypatch):
    monkeypatch.setattr(budget, "FILE_LIMIT", 1000.0)
    argv = ["export", "--z", "10", "--size", "20", "--kappas", "-1", "--out", str(tmp_path / "s.h5")]
    assert main(argv) == 2
    assert "a 1 kB file" in capsys.readouterr().err and not (tmp_path / "s.h5").exists()
    assert main(argv + ["--allow-large"]) == 0
    assert (tmp_path / "s.h5").is_file()


def test_python_solve_beyond_the_time_limit(monkeypatch):
    monkeypatch.setattr(budget, "TIME_LIMIT", 1e-6)
    with pytest.raises(BudgetError) as info:
        relbasis.solve(ion={"Z": 10}, basis={"size": 20}, solve={"kappas": [-1, 1]})
    msg = str(info.value)
    assert "\n" not in msg and "for 2 symmetries" in msg and "allow_large=True" in msg
    sol = relbasis.solve(ion={"Z": 10}, basis={"size": 20}, solve={"kappas": [-1, 1]}, allow_large=True)
    assert sol.kappas == (-1, 1)


def test_beyond_the_machine_memory_even_allow_large_is_refused(monkeypatch):
    monkeypatch.setattr(budget, "machine_memory", lambda: 1e6)
    with pytest.raises(BudgetError, match="this machine has 1 MB of memory, so it cannot run here"):
        relbasis.solve(ion={"Z": 10}, basis={"size": 60}, solve={"kappas": [-1]}, allow_large=True)


def test_scan_refuses_a_unit_beyond_the_limits(monkeypatch):
    from relbasis.scan import plan_from_dict

    monkeypatch.setattr(budget, "TIME_LIMIT", 60.0)
    plan = {"base": {"ion": {"Z": 50}}, "axes": {"basis.size": [40, 2000, 60]}, "track": {"max_n": 2}}
    with pytest.raises(InputError) as info:
        plan_from_dict(plan)
    msg = str(info.value)
    assert "\n" not in msg and msg.startswith("axes.'basis.size' = 2000 (unit 2 of 3): basis.size = 2000: about ")
    assert "--allow-large" in msg
    assert len(plan_from_dict(plan, allow_large=True).axes) == 1


def _config(**sections):
    return resolve(as_config(None, **sections))[0]


def test_estimates_follow_the_model():
    """Memory 8 n^2 (12 + 2.3 k) bytes; time cubic in n; the export file from its arrays."""
    cfg = _config(ion={"Z": 92}, basis={"size": 2000})
    est = budget.solve_estimate(cfg)
    assert est.rows == 4000 and est.symmetries == 8
    assert est.memory == pytest.approx(8 * 4000**2 * (12 + 2.3 * 8))
    assert 10 * 60 < est.seconds < budget.TIME_LIMIT  # runs without --allow-large, with a progress bar
    small = budget.solve_estimate(_config(ion={"Z": 92}))
    assert small.seconds < budget.PROGRESS_SECONDS  # the default solve shows no bar
    ex = budget.export_estimate(cfg, 1000, ("dipole",))
    assert ex.file_bytes > 8 * 8 * 4000 * (4000 + 2 * 1000)


def test_export_file_estimate_is_close_to_the_file(tmp_path):
    """The file-size estimate of a small export against the file written (HDF5)."""
    from relbasis.writer import export

    sol = relbasis.solve(ion={"Z": 20}, basis={"size": 30}, solve={"kappas": [-1, 1, -2]})
    est = budget.export_estimate(sol.config, None, ("dipole", "hyperfine"))
    path = export(sol, tmp_path / "b.h5", blocks=("dipole", "hyperfine"))
    assert est.file_bytes == pytest.approx(path.stat().st_size, rel=0.3)


class _Terminal(io.StringIO):
    def isatty(self):
        return True


@pytest.mark.parametrize("seconds,progress,tty,shown", [
    (20.0, None, True, True),     # long work at a terminal
    (20.0, None, False, False),   # long work, stderr redirected
    (0.5, None, True, False),     # short work
    (0.5, True, False, True),     # asked for
    (20.0, False, True, False),   # refused
])
def test_progress_decision(seconds, progress, tty, shown):
    stream = _Terminal() if tty else io.StringIO()
    assert budget.show_progress(Estimate(1e6, seconds, 8, 100), progress, stream) is shown


def test_size_2000_shows_progress_at_a_terminal():
    """The acceptance case: `levels --size 2000` is estimated well above the 2 s threshold."""
    est = budget.solve_estimate(_config(ion={"Z": 92}, basis={"size": 2000}))
    assert budget.show_progress(est, None, _Terminal())


def test_progress_bar_per_symmetry_on_stderr_never_in_json(monkeypatch, capsys):
    """A monkeypatched estimate stands in for a long solve; the bar goes to stderr (a terminal),
    the JSON on stdout stays parseable."""
    monkeypatch.setattr(budget, "solve_estimate", lambda cfg: Estimate(1e6, 20.0, len(cfg.solve.kappas), 40))
    terminal = _Terminal()
    monkeypatch.setattr("sys.stderr", terminal)
    assert main(["levels", "--z", "10", "--size", "20", "--kappas", "-1,1", "--json"]) == 0
    out = capsys.readouterr().out
    assert json.loads(out)["states"]
    bar = terminal.getvalue()
    assert "solving" in bar and "symmetry" in bar and "kappa +1" in bar and "4/4" in bar
    quiet = _Terminal()
    monkeypatch.setattr("sys.stderr", quiet)
    assert main(["levels", "--z", "10", "--size", "20", "--kappas", "-1", "--no-progress"]) == 0
    assert quiet.getvalue() == ""


def test_progress_when_asked_even_without_a_terminal(capsys):
    relbasis.solve(ion={"Z": 10}, basis={"size": 20}, solve={"kappas": [-1]}, progress=True)
    assert "solving" in capsys.readouterr().err
    relbasis.solve(ion={"Z": 10}, basis={"size": 20}, solve={"kappas": [-1]})
    assert capsys.readouterr().err == ""


def test_texts():
    assert budget.size_text(2.5e13) == "25 TB" and budget.size_text(737e6) == "737 MB"
    assert budget.time_text(3 * 3600) == "3 h" and budget.time_text(0.2) == "under a second"
    assert Estimate(25e9, 3 * 3600, 8, 40000).text() == "about 25 GB of memory and 3 h for 8 symmetries"


@pytest.mark.parametrize("grid, says", [
    ([], "at least two"),
    ([1.0], "at least two"),
    ([[0.1, 0.2], [0.3, 0.4]], "flat"),
    ([0.1, float("nan"), 1.0], "finite"),
    ([0.0, 0.5, 1.0], "positive"),
    ([0.5, 0.2, 1.0], "increasing"),
    ([0.1, 1e6], "beyond the cavity"),
    (["a", "b"], "numbers"),
])
def test_python_export_checks_its_grid(tmp_path, grid, says):
    """relbasis.export(sol, path, grid=...) refuses a bad grid in one line, before writing."""
    import relbasis

    sol = relbasis.solve(ion={"Z": 10, "nucleus": "point"}, basis={"size": 30}, solve={"kappas": [-1]})
    with pytest.raises(InputError, match=says):
        relbasis.export(sol, tmp_path / "b.h5", grid=grid)
    assert not list(tmp_path.iterdir())


def test_python_export_refuses_a_huge_grid_at_once(tmp_path):
    import relbasis
    from relbasis.budget import BudgetError

    sol = relbasis.solve(ion={"Z": 10, "nucleus": "point"}, basis={"size": 30}, solve={"kappas": [-1]})

    with pytest.raises(BudgetError, match="allow_large"):  # 3e6 radii x 53 roots x 2 x 8 bytes = 2.5 GB
        relbasis.export(sol, tmp_path / "b.h5", grid=np.geomspace(1e-6, 1.0, 3_000_000))
    assert not list(tmp_path.iterdir())
