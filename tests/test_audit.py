"""The basis audit: verdicts, the figures behind them, and the report directory."""

import json

import pytest

import relbasis
from relbasis.audit import audit, closure, sum_rule
from relbasis.constants import C
from relbasis.cli import main
from relbasis.outputs import MANIFEST
from conftest import solve_cached


def audited(**sections):
    return audit(solve_cached(**sections))


def test_plain_bspline_basis_fails_with_the_spurious_roots_named():
    """Same splines for P and Q, Dirichlet wall: one spurious root per kappa > 0 at the 1s, 2p3/2, ...
    levels (W. R. Johnson, S. A. Blundell, J. Sapirstein, Phys. Rev. A 37, 307 (1988))."""
    result = audited(ion={"Z": 54, "nucleus": "point"}, basis={"balance": "none"})
    assert result.verdict == "fail"
    check = result.check("spurious-roots")
    assert check.status == "fail" and check.value >= 4
    for kappa in ("+1", "+2", "+3", "+4"):
        assert f"kappa {kappa}:" in check.detail
    assert any("use balance = \"dkb\"" in a for a in result.advice)


@pytest.mark.parametrize("Z,model", [(1, "point"), (54, "point"), (92, "point"), (82, "fermi"), (118, "fermi")])
def test_default_dkb_basis_passes(Z, model):
    result = audited(ion={"Z": Z, "nucleus": model})
    assert result.verdict == "pass", [(c.name, c.status, c.value) for c in result.checks if c.status != "pass"]


def test_bag_wall_with_plain_splines_reports_the_remaining_spurious_roots():
    """Bag wall P(R) = -Q(R) with the same splines for P and Q: what relbasis finds (docs/audit.md):
    each kappa > 0 still has one spurious root next to the -kappa level with n = kappa, now shifted
    off it (so it is caught by its balance residual, not as a duplicate), and the audit fails."""
    result = audited(ion={"Z": 92, "nucleus": "point"}, basis={"balance": "none", "wall": "bag"})
    assert result.verdict == "fail"
    spur = [s for s in result.states if s["branch"] == "spurious"]
    assert sorted({s["kappa"] for s in spur}) == [1, 2, 3, 4]
    assert all("kinetic-balance-residual" in s["flags"] for s in spur)


def test_unbalanced_gaussians_fail_and_rkb_passes():
    """Unbalanced Gaussians: intruders named; RKB passes (kinetic-balance literature:
    R. E. Stanton, S. Havriliak, J. Chem. Phys. 81, 1910 (1984), from memory)."""
    bad = audited(ion={"Z": 54, "nucleus": "gauss"}, basis={"family": "gaussian", "balance": "none", "size": 50})
    assert bad.verdict == "fail" and bad.check("spurious-roots").status == "fail"
    assert "kappa +1:" in bad.check("spurious-roots").detail
    good = audited(ion={"Z": 54, "nucleus": "gauss"}, basis={"family": "gaussian", "balance": "rkb", "size": 50})
    assert good.verdict == "pass", [(c.name, c.status, c.value) for c in good.checks if c.status != "pass"]


def test_closure_needs_the_negative_branch():
    """1s of Z = 92, default DKB basis: closure of r holds to 1e-8 with the negative-energy roots
    and misses about 2.7e-2 without them (completeness relation of the Dirac spectrum, common practice)."""
    sol = solve_cached(ion={"Z": 92, "nucleus": "point"})
    with_neg, without = closure(sol, -1, 1)
    assert abs(with_neg) < 1e-8
    assert 1e-2 < without < 5e-2


def test_virial_relation_per_state():
    """Coulomb field: E = c^2 int (P^2 - Q^2) dr (Fock 1930; Shabaev, J. Phys. B 24, 4479 (1991), from
    memory) holds to 1e-6 for bound states n <= 3 of the default basis; the intruders of the
    unbalanced basis miss it by orders of magnitude.  (Its duplicate of 1s1/2 in kappa = +1 obeys
    the relation like the level it mirrors: the balance residual and the duplicate check catch it.)"""
    good = audited(ion={"Z": 54, "nucleus": "point"})
    vir = [s["virial"] for s in good.states if s["branch"] == "bound" and s["n"] <= 3]
    assert len(vir) >= 9 and max(vir) < 1e-6
    bad = audited(ion={"Z": 54, "nucleus": "point"}, basis={"balance": "none"})
    intruders = [s["virial"] for s in bad.states if s["branch"] == "spurious" and "duplicate-level" not in s["flags"]]
    bound = [s["virial"] for s in bad.states if s["branch"] == "bound" and s["n"] <= 3]
    assert len(intruders) >= 4 and max(intruders) > 1e6 * max(bound)


def test_oscillator_strength_sum_rule():
    """Dirac theory: the dipole oscillator strengths from a state sum to zero over positive and
    negative roots together; the positive ones alone give 1 in the nonrelativistic limit
    (Thomas–Reiche–Kuhn; Levinger, Rustgi, Okamoto, Phys. Rev. 106, 1191 (1957), from memory)."""
    low = sum_rule(solve_cached(ion={"Z": 1, "nucleus": "point"}), -1, 1)
    assert low["positive"] == pytest.approx(1.0, abs=1e-4)
    assert abs(low["all"]) < 1e-6
    high = sum_rule(solve_cached(ion={"Z": 54, "nucleus": "point"}), -1, 1)
    assert abs(high["all"]) < 1e-7 and high["negative"] < -0.5


def test_audit_json_contract_and_report(tmp_path, capsys):
    code = main(["audit", "--z", "26", "--nucleus", "point", "--json"])
    doc = json.loads(capsys.readouterr().out)
    assert code == 0 and doc["verdict"] in ("pass", "warn", "fail")
    for c in doc["checks"]:
        assert set(c) == {"name", "status", "value", "threshold", "detail"}
        assert c["status"] in ("pass", "warn", "fail")
    assert isinstance(doc["advice"], list)
    report = tmp_path / "rep"
    assert main(["audit", "--z", "26", "--kappas", "-1,1,-2", "--report", str(report)]) == 0
    capsys.readouterr()
    assert {p.name for p in report.iterdir()} == {"audit.json", "spectrum.png", "convergence.png", MANIFEST}
    for png in ("spectrum.png", "convergence.png"):
        assert (report / png).read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    stamp = (report / "audit.json").stat().st_mtime_ns
    assert main(["audit", "--z", "26", "--report", str(report)]) == 2
    err = capsys.readouterr().err
    assert "already holds" in err and "--force" in err and len(err.strip().splitlines()) == 1
    assert (report / "audit.json").stat().st_mtime_ns == stamp  # untouched
    assert main(["audit", "--z", "26", "--kappas", "-1", "--report", str(report), "--force"]) == 0
    assert json.loads((report / "audit.json").read_text())["basis"]["functions"] == {"-1": 193}


@pytest.mark.parametrize("argv,needle", [
    (["audit", "--z", "26", "--max-n", "0"], "--max-n"),
    (["audit", "--z", "26", "--target", "-1"], "--target"),
    (["audit", "--z", "26", "--wall", "soft"], "basis.wall"),
    (["audit", "--z", "-2"], "ion.Z"),
])
def test_audit_bad_input(capsys, argv, needle):
    assert main(argv) == 2
    err = capsys.readouterr().err
    assert len(err.strip().splitlines()) == 1 and needle in err


def test_intruders_in_the_positive_continuum_are_reported():
    """Free particle, DKB, bag wall, R = 0.01 bohr: kappa = +1 has one root (eps ~ 110247 hartree)
    between the second and third exact bag levels whose balance residual stands out by orders of
    magnitude (docs/audit.md); the audit names it."""
    result = audited(ion={"Z": 0}, basis={"r_max": 0.01, "wall": "bag"}, solve={"kappas": [-1, 1]})
    check = result.check("continuum-outliers")
    assert check.status == "fail" and "kappa +1: eps = 1102" in check.detail


# --- labels a practitioner can trust: audit verdicts and advice ------------------------------


def test_audit_z118_point_nucleus_passes(capsys):
    """Z = 118, point nucleus, default basis: every level good to 1e-10 (Bethe & Salpeter §14),
    and the kinetic-balance figure with the Coulomb factor g stays finite (it diverged at
    Z alpha = sqrt(3)/2 in the plain form)."""
    assert main(["audit", "--z", "118", "--nucleus", "point", "--strict"]) == 0
    out = capsys.readouterr().out
    assert "verdict: pass" in out


def test_exact_1s_passes_the_kinetic_balance_check_at_every_z():
    """The figure ||Q - g D+P/2c|| / ||Q|| of the exact point-nucleus 1s (Bethe & Salpeter §14:
    Q = -sqrt((1-gamma)/(1+gamma)) P, P ~ r^gamma e^(-Zr)) stays below the audit threshold up to Z = 136."""
    from mpmath import mp, mpf, quad, sqrt, exp, inf

    mp.dps = 30
    for Z in (1, 92, 118, 125, 136):
        g_ = sqrt(1 - (mpf(Z) / C) ** 2)
        a = Z / (2 * mpf(C) ** 2)

        def f(r, p):
            P = r**g_ * exp(-Z * r)
            Q = -sqrt((1 - g_) / (1 + g_)) * P
            DP = ((g_ - 1) / r - Z) * P
            g = r / (r + a)
            return (Q - g * DP / (2 * C)) ** 2 if p else Q**2

        fig = float(sqrt(quad(lambda r: f(r, 1), [0, a, 1 / mpf(Z), inf]) / quad(lambda r: f(r, 0), [0, 1 / mpf(Z), inf])))
        assert fig < max(0.5, 3 * (Z / C) ** 2), (Z, fig)


def test_audit_of_a_cavity_far_too_wide_fails_and_names_r_max(capsys):
    assert main(["audit", "--z", "92", "--nucleus", "point", "--r-max", "1e6", "--strict"]) == 3
    out = capsys.readouterr().out
    assert "verdict: fail" in out
    assert any(line.startswith("advice: lower r_max") for line in out.splitlines())


def test_audit_of_a_small_cavity_advises_r_max_and_of_a_small_basis_advises_size(capsys):
    small = audited(ion={"Z": 92, "nucleus": "point"}, basis={"r_max": 0.5})
    assert small.verdict == "fail" and any(a.startswith("raise r_max") for a in small.advice)
    coarse = audited(ion={"Z": 92, "nucleus": "point"}, basis={"size": 50})
    assert coarse.verdict == "fail" and any(a.startswith("raise size") for a in coarse.advice)
    assert not any("r_max" in a for a in coarse.advice)


def test_audit_names_a_dived_level():
    result = audited(ion={"Z": 170, "A": 430, "nucleus": "sphere"}, solve={"kappas": [-1, 1]})
    assert result.check("dived-levels").status == "warn"
    assert "1s1/2" in result.check("dived-levels").detail
    assert any("1s1/2 has dived" in a for a in result.advice)


def test_audit_uses_the_solution_speed_of_light():
    """A solution made with c = 1e4 is audited with that c: no false kinetic-balance failure."""
    sol = relbasis.solve(ion={"Z": 10, "nucleus": "point"}, solve={"kappas": [-1, 1, -2]}, c=1e4)
    result = audit(sol)
    assert result.check("kinetic-balance").status == "pass"
    assert result.verdict == "pass", [(c.name, c.status) for c in result.checks if c.status != "pass"]


def test_audit_of_a_finite_nucleus_at_large_c_compares_with_the_same_c():
    """The convergence check solves a larger basis with the solution's own c (it used 1/alpha:
    a false difference of order (Z alpha)^2)."""
    sol = relbasis.solve(ion={"Z": 50, "nucleus": "fermi"}, solve={"kappas": [-1, 1]}, c=1e4)
    check = {c.name: c for c in audit(sol).checks}["convergence"]
    assert check.status == "pass" and check.value < 1e-10


# --- the audit as a list of checks -------------------------------------------------------------


CHECK_ORDER = ["spurious-roots", "continuum-outliers", "node-count", "level-confidence", "dived-levels",
               "balance-residual", "kinetic-balance", "kinetic-balance-negative", "small-weight", "wall-fraction",
               "origin-fraction", "virial", "closure", "closure-without-negative", "sum-rule", "overlap-condition",
               "convergence"]


@pytest.mark.parametrize("model", ["point", "fermi"])
def test_audit_at_large_c_passes_whether_given_c_or_a_solution(model):
    """c = 1e4 (nonrelativistic limit, docs/nonrelativistic.md): audit(config, c=...) solves with that c,
    gives the same document as audit(solve(config, c=...)), and both pass (they used to report a
    false kinetic-balance failure when judged with 1/alpha)."""
    cfg = {"ion": {"Z": 30, "nucleus": model}, "basis": {"size": 80}, "solve": {"kappas": [-1, 1, -2]}}
    given_c = audit(cfg, c=1e4, max_n=3)
    given_solution = audit(relbasis.solve(cfg, c=1e4), max_n=3)
    assert given_c.solution.c == 1e4
    for result in (given_c, given_solution):
        assert result.verdict == "pass", [(c.name, c.status, c.value) for c in result.checks if c.status != "pass"]
    assert given_c.to_dict() == given_solution.to_dict()
    assert given_c.to_dict()["constants"]["c_used"] == 1e4


def test_audit_runs_the_check_list_in_order():
    from relbasis.checks import CHECKS, Outcome

    result = audited(ion={"Z": 30, "nucleus": "point"}, basis={"size": 40}, solve={"kappas": [-1]})
    assert [c.name for c in result.checks] == CHECK_ORDER
    assert [c["name"] for c in result.to_dict()["checks"]] == CHECK_ORDER
    assert all(callable(run) for run in CHECKS) and len(CHECKS) == len(CHECK_ORDER) - 1  # closure gives two
    finite = audited(ion={"Z": 30, "nucleus": "fermi"}, basis={"size": 40}, solve={"kappas": [-1]})
    assert [c.name for c in finite.checks] == [n for n in CHECK_ORDER if n != "virial"]  # Coulomb field only
    assert isinstance(Outcome(()), Outcome)


def test_audit_refuses_bad_arguments_in_one_line():
    sol = solve_cached(ion={"Z": 30, "nucleus": "point"}, basis={"size": 40}, solve={"kappas": [-1]})
    for kwargs, needle in [({"ion": {"Z": 3}}, "ion"), ({"c": 1e4}, "c = 10000.0"), ({"max_n": 0}, "max_n"),
                           ({"target": -1.0}, "target")]:
        with pytest.raises(relbasis.InputError) as err:
            audit(sol, **kwargs)
        assert needle in str(err.value) and "\n" not in str(err.value)
    with pytest.raises(relbasis.InputError, match="no check 'virial'.*convergence"):
        audited(ion={"Z": 30, "nucleus": "fermi"}, basis={"size": 40}, solve={"kappas": [-1]}).check("virial")


def test_closure_and_sum_rule_name_a_missing_state():
    from relbasis.errors import MissingLevelError

    sol = solve_cached(ion={"Z": 92, "nucleus": "point"})
    for call, needle in [(lambda: closure(sol, -1, 40), "n = 40 for kappa = -1"),
                         (lambda: closure(sol, -7, 7), "kappa = -7"),
                         (lambda: sum_rule(sol, -1, 40), "n = 40 for kappa = -1")]:
        with pytest.raises(MissingLevelError) as err:
            call()
        message = str(err.value)
        assert isinstance(err.value, relbasis.InputError) and "\n" not in message
        assert needle in message and ("levels present: 1, 2" in message or "solved: -1, +1" in message)


def test_balance_residual_is_one_function_for_spectrum_and_audit():
    """The spectrum's balance residual (kinetic-balance-residual flag) and the audit's figures come
    from spectrum.balance_residual: recomputed from the solution, the same numbers."""
    from relbasis.spectrum import balance_residual

    sol = solve_cached(ion={"Z": 92, "nucleus": "point"})
    r, w = sol.grid
    V = sol.nucleus.potential(r)
    for kappa in (-1, 2):
        spec = sol[kappa]
        idx = spec.indices("bound")
        P, Q, DP = sol.sample(kappa, idx, "PQD")
        assert balance_residual(Q, DP, spec.energies[idx], V, w, sol.c) == pytest.approx(
            spec.balance_residual[idx], rel=1e-9)


def test_audit_modules_do_not_branch_on_the_family():
    """The audit asks the family registry (relbasis/families.py) for what differs between families."""
    import pathlib
    import re

    root = pathlib.Path(relbasis.__file__).parent
    for name in ("audit.py", "checks.py", "measures.py"):
        text = (root / name).read_text(encoding="utf-8")
        for pattern in (r"family\s*==", r"\.table\b", r"\.splines\b", r"gauss_grid", r"\"bspline\"",
                        r"\"gaussian\"", r"\.exponents\b"):
            assert not re.search(pattern, text), (name, pattern)
