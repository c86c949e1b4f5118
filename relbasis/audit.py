"""Diagnose a basis before a production run: per-root figures, whole-basis checks, a verdict.

Every check is a number with a threshold (docs/audit.md gives the physics and the sources):

per root (bound states with n <= max_n unless said otherwise)
    node count of P against n - l - 1; the exact balance residual
    ||Q - c D+P/(2c^2 + eps - V)|| / ||Q||; the kinetic-balance residual
    ||Q - D+P/2c|| / ||Q|| (and its mirror ||P - D-Q/2c|| / ||P|| for the negative-energy roots
    next to -2c^2), which measures how far the state is from the nonrelativistic relation,
    of order (Z alpha)^2; the small-component weight against (Z alpha / n)^2 / 4; the share of
    the norm in the last three knot intervals (wall-bound) and the first three (origin-bound);
    for a point nucleus the virial relation E = c^2 int (P^2 - Q^2) dr (V. Fock 1930;
    V. M. Shabaev, J. Phys. B 24, 4479 (1991), from memory), i.e. eps = -2c^2 int Q^2 dr;
whole basis
    closure of r within each symmetry, 1 - sum_n |<a|r|n>|^2 / <a|r^2|a>, with and without the
    negative branch; the dipole oscillator-strength sum over positive, negative and all roots
    (in the Dirac theory the total vanishes and the negative-energy states are needed:
    J. S. Levinger, M. L. Rustgi, K. Okamoto, Phys. Rev. 106, 1191 (1957), from memory);
    the overlap condition number and the functions dropped; convergence of the bound levels
    against the exact Dirac–Coulomb value or, without one, a basis 10 functions larger.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import scipy.linalg as sl

from .version import __version__
from .vocabulary import orbital_l
from .angular import dipole_partners, reduced_c
from .config import DEFAULT_CAVITY, MAX_SIZE
from .solver import Solution, as_config, solve

STATUSES = ("pass", "warn", "fail")


@dataclass(frozen=True)
class Check:
    name: str
    status: str
    value: float | None
    threshold: float | None
    detail: str

    def to_dict(self) -> dict:
        return {"name": self.name, "status": self.status, "value": _num(self.value),
                "threshold": _num(self.threshold), "detail": self.detail}


@dataclass(frozen=True)
class Audit:
    """The checks, the verdict and the advice for one basis, with the per-state figures."""

    solution: Solution = field(repr=False)
    checks: tuple[Check, ...]
    advice: tuple[str, ...]
    states: tuple[dict, ...] = field(repr=False)
    convergence: dict = field(default_factory=dict, repr=False)
    max_n: int = 5
    target: float = 1e-8

    @property
    def verdict(self) -> str:
        statuses = {c.status for c in self.checks}
        return "fail" if "fail" in statuses else "warn" if "warn" in statuses else "pass"

    def check(self, name: str) -> Check:
        return next(c for c in self.checks if c.name == name)

    def to_dict(self) -> dict:
        """The audit JSON document (a contract: verdict, checks, advice, ...)."""
        doc = self.solution.to_dict()
        return {
            "relbasis": __version__,
            "verdict": self.verdict,
            "checks": [c.to_dict() for c in self.checks],
            "advice": list(self.advice),
            "constants": doc["constants"],
            "ion": doc["ion"],
            "basis": doc["basis"],
            "per_state": [dict(s) for s in self.states],
        }


def _num(x):
    if x is None:
        return None
    x = float(x)
    return x if np.isfinite(x) else None


def _grade(value: float, warn: float, fail: float) -> str:
    if value is None or not np.isfinite(value):
        return "fail"
    return "pass" if value <= warn else "warn" if value <= fail else "fail"


# ----------------------------------------------------------------------------- per root


def _edge_fractions(sol: Solution, w: np.ndarray, P: np.ndarray, Q: np.ndarray):
    """Share of the norm in the first and the last three knot intervals (B-splines), or inside
    the tightest / beyond the widest Gaussian (Gaussians)."""
    dens = w[:, None] * (P * P + Q * Q)
    total = dens.sum(axis=0)
    r = sol.grid[0]
    if sol.table is not None:
        nq = sol.table.r.shape[1]
        first, last = dens[: 3 * nq].sum(axis=0), dens[-3 * nq:].sum(axis=0)
    else:
        ex = sol.bases[sol.kappas[0]].exponents
        first = dens[r < 1 / np.sqrt(ex.max())].sum(axis=0)
        last = dens[r > 3 / np.sqrt(ex.min())].sum(axis=0)
    return first / total, last / total


def per_state(sol: Solution, max_n: int) -> list[dict]:
    """Per-root figures for every root in the bound-state window (bound or spurious)."""
    r, w = sol.grid
    c = sol.c
    Zalpha = sol.nucleus.Z / c
    coulomb = sol.nucleus.model == "point" and sol.nucleus.Z > 0
    g = balance_factor(sol)
    rows = []
    for kappa in sol.kappas:
        spec = sol[kappa]
        idx = np.flatnonzero(np.isin(np.array(spec.branches), ("bound", "spurious")))
        if idx.size == 0:
            continue
        P, Q, DP = sol.sample(kappa, idx, "PQD")
        wq = w @ (Q * Q)
        kb = np.sqrt(w @ (Q - g[:, None] * DP / (2 * c)) ** 2) / np.sqrt(np.maximum(wq, 1e-300))
        origin, wall = _edge_fractions(sol, w, P, Q)
        l = orbital_l(kappa)
        for j, i in enumerate(idx):
            eps = float(spec.energies[i])
            n = spec.n[i]
            row = {
                "kappa": kappa, "n": n, "label": spec.labels[i], "branch": spec.branches[i],
                "energy_hartree": eps, "flags": list(spec.flags[i]),
                "nodes": int(spec.nodes[i]), "nodes_expected": None if n is None else n - l - 1,
                "balance_residual": _num(spec.balance_residual[i]),
                "kinetic_balance_residual": _num(kb[j]),
                "small_weight": float(wq[j]),
                "small_weight_expected": None if n is None else (Zalpha / n) ** 2 / 4,
                "origin_fraction": float(origin[j]), "wall_fraction": float(wall[j]),
                "virial": None,
                "error_estimate": _num(spec.error_estimate[i]) if spec.error_estimate is not None else None,
            }
            if coulomb:
                row["virial"] = abs(-2 * c * c * wq[j] - eps) / (eps + c * c)
            rows.append(row)
    return rows


def balance_factor(sol: Solution) -> np.ndarray:
    """g(r) = 2c^2 / (2c^2 - V(r)) of the nucleus on the solution's grid (r / (r + Z/2c^2) for a
    point nucleus; 1 where |V| << 2c^2).

    The kinetic-balance figure compares Q with g D+P / 2c, the zero-energy relation of the radial
    equation, not with the plain D+P / 2c.  For the exact point-nucleus 1s,
    Q = -sqrt((1 - gamma)/(1 + gamma)) P and D+P = ((gamma - 1)/r - Z) P, so the plain difference
    Q - D+P/2c carries the term (1 - gamma) P / (2 c r) ~ r^(gamma - 1), whose norm integral
    int r^(2 gamma - 2) dr diverges once gamma <= 1/2, i.e. Z alpha >= sqrt(3)/2 (Z >= 118.7);
    with g the singular parts cancel and the exact 1s passes at every Z < 137 (tested).  For a
    finite nucleus V(0) = -1.5 Z/R exceeds 2c^2 from Z ~ 100 on, and the same factor keeps the
    figure of physical states of order (Z alpha)^2 up to Z = 170 (docs/audit.md).
    """
    r = sol.grid[0]
    V = sol.nucleus.potential(r)
    two_c2 = 2 * sol.c * sol.c
    return two_c2 / (two_c2 - V)


def continuum_outliers(sol: Solution, count: int = 20) -> list[tuple[int, float, float]]:
    """Roots among the lowest ``count`` positive ones of each kappa whose exact balance residual
    ||Q - c D+P/(2c^2 + eps - V)|| / ||Q|| stands out: above 0.1 and above 1000 times the
    median of those roots (well-represented continuum states measure 1e-12..1e-6, an intruder
    O(1..100): a free particle in a bag, DKB, kappa = +1, R = 0.01 bohr).  (kappa, eps, residual)."""
    r, w = sol.grid
    V = sol.nucleus.potential(r)
    c = sol.c
    out = []
    for kappa in sol.kappas:
        idx = sol[kappa].indices("positive")[:count]
        if idx.size < 3:
            continue
        P, Q, DP = sol.sample(kappa, idx, "PQD")
        e = sol[kappa].energies[idx][None, :]
        res = np.sqrt(w @ (Q - c * DP / (2 * c * c + e - V[:, None])) ** 2) / np.sqrt(np.maximum(w @ Q**2, 1e-300))
        typical = np.median(res)
        for i, x in zip(idx, res):
            if x > max(0.1, 1e3 * typical):
                out.append((kappa, float(sol[kappa].energies[i]), float(x)))
    return out


def _negative_mirror(sol: Solution, count: int = 10) -> float:
    """Largest ||P - D-Q/2c|| / ||P|| among the negative-energy roots next to -2c^2."""
    r, w = sol.grid
    worst = 0.0
    for kappa in sol.kappas:
        neg = sol[kappa].indices("negative")[-count:]
        if neg.size == 0:
            continue
        P, DQ = sol.sample(kappa, neg, "PM")
        res = np.sqrt(w @ (P - DQ / (2 * sol.c)) ** 2) / np.sqrt(np.maximum(w @ (P * P), 1e-300))
        worst = max(worst, float(res.max()))
    return worst


# ----------------------------------------------------------------------------- whole basis


def closure(sol: Solution, kappa: int, n: int) -> tuple[float, float]:
    """Deficit of sum_n |<a|r|n>|^2 against <a|r^2|a> within kappa, with and without negative roots."""
    spec = sol[kappa]
    a = next(i for i, m in enumerate(spec.n) if m == n)
    r, w = sol.grid
    P, Q = sol.sample(kappa, None, "PQ")
    pa, qa = P[:, a], Q[:, a]
    rad = (w * r * pa) @ P + (w * r * qa) @ Q
    r2 = w @ (r * r * (pa * pa + qa * qa))
    neg = np.array([b == "negative" for b in spec.branches])
    total = np.sum(rad**2)
    return float(1 - total / r2), float(1 - np.sum(rad[~neg] ** 2) / r2)


def sum_rule(sol: Solution, kappa: int, n: int) -> dict | None:
    """Dipole oscillator strengths from state (n, kappa), summed over positive, negative, all roots.

    f_ab = (2/3) (E_b - E_a) |<kappa_b||C^1||kappa_a>|^2 / (2 j_a + 1) R_ab^2 with the length-form
    radial integral R_ab = int (P_a P_b + Q_a Q_b) r dr.  None if a partner symmetry is missing.
    """
    partners = dipole_partners(kappa)
    if any(k not in sol.spectra for k in partners):
        return None
    spec = sol[kappa]
    a = next(i for i, m in enumerate(spec.n) if m == n)
    r, w = sol.grid
    Pa, Qa = (x[:, 0] for x in sol.sample(kappa, [a], "PQ"))
    ja = 2 * abs(kappa)  # 2j + 1
    out = {"positive": 0.0, "negative": 0.0}
    for kb in partners:
        sb = sol[kb]
        P, Q = sol.sample(kb, None, "PQ")
        R = (w * r * Pa) @ P + (w * r * Qa) @ Q
        ang = reduced_c(1, kb, kappa) ** 2 / ja
        f = (2 / 3) * (sb.energies - spec.energies[a]) * ang * R**2
        neg = np.array([b == "negative" for b in sb.branches])
        out["positive"] += float(f[~neg].sum())
        out["negative"] += float(f[neg].sum())
    out["all"] = out["positive"] + out["negative"]
    return out


def _condition(sol: Solution) -> float:
    """Largest condition number of the diagonally scaled overlap over the symmetries.

    The Gaussian path always knows it (canonical orthogonalisation computes it); for B-splines
    the overlap is assembled again and its eigenvalues computed here.
    """
    worst = 0.0
    for kappa in sol.kappas:
        cond = sol.condition.get(kappa, float("nan"))
        if not np.isfinite(cond) and sol.table is not None:
            _, S = sol.bases[kappa].matrices(sol.table, np.zeros_like(sol.table.r))
            d = 1 / np.sqrt(np.diag(S))
            s = sl.eigvalsh(S * d[:, None] * d[None, :])
            cond = s[-1] / s[0] if s[0] > 0 else float("inf")
        worst = max(worst, cond)
    return worst


def _level_errors(sol: Solution, max_n: int, reference: Solution | None) -> dict:
    """Relative error of each bound level n <= max_n against exact values or a reference basis."""
    out = {}
    for kappa in sol.kappas:
        spec = sol[kappa]
        for e, n, lab in zip(spec.energies, spec.n, spec.labels):
            if n is None or n > max_n:
                continue
            ref = sol.exact(kappa, n)
            if ref is None and reference is not None:
                ref = _level_of(reference[kappa], n)
            if ref is not None:
                out[lab] = abs(e / ref - 1)
    return out


def _level_of(spec, n: int) -> float | None:
    """The energy of level n in a spectrum, flagged or not (None if absent): for comparisons."""
    return next((float(e) for e, m in zip(spec.energies, spec.n) if m == n), None)


def _resized(sol: Solution, size: int) -> Solution | None:
    """The same basis settings with another size (None for explicit knots or exponents)."""
    cfg = sol.config.to_dict()
    if isinstance(cfg["basis"].get("knots"), list) or cfg["basis"].get("exponents") is not None:
        return None
    if size > MAX_SIZE:
        return None
    cfg["basis"]["size"] = size
    return solve(cfg, c=sol.c, allow_large=True)  # the audited basis itself passed the work limits


def comparison_size(size: int) -> int:
    """The size the convergence check compares with: 10 more, or 10 fewer at the size cap."""
    return size + 10 if size + 10 <= MAX_SIZE else size - 10


def convergence_series(result: "Audit", sizes=None) -> dict:
    """Errors of the bound levels n <= max_n for a range of sizes (for the report's picture).

    Reference: the exact levels for a point nucleus, else the basis 10 larger than the audited one.
    """
    sol = result.solution
    b = sol.config.basis
    minimum = (b.order + 4) if b.family == "bspline" else 6
    sizes = sizes or [s for s in range(b.size - 40, b.size + 1, 10) if s >= minimum]
    reference = None if (sol.nucleus.model == "point" and sol.nucleus.Z > 0) else _resized(sol, comparison_size(b.size))
    series = {}
    for size in sizes:
        other = sol if size == b.size else _resized(sol, size)
        if other is None:
            continue
        for label, err in _level_errors(other, result.max_n, reference).items():
            series.setdefault(label, []).append((size, err))
    return series


# ----------------------------------------------------------------------------- the audit


CONFIDENCE_FLAGS = ("unconverged", "cavity-limited", "nodes-disagree", "precision-limited")


def _confidence_check(sol: Solution, rows: list[dict], max_n: int, advice: list[str], target: float) -> Check:
    """Levels n <= max_n whose error estimate or node count withdraws the claim of accuracy,
    with advice that names the setting which fixes each kind (docs/audit.md)."""
    b = sol.config.basis
    low = [s for s in rows if s["branch"] == "bound" and s["n"] is not None and s["n"] <= max_n]
    missing = [(k, n) for k in sol.kappas for n in range(orbital_l(k) + 1, max_n + 1)
               if n not in sol[k].n]
    def kinds_of(s):  # what withdraws the claim for this level, judged against the audit's target
        out = {f for f in s["flags"] if f in ("nodes-disagree", "precision-limited")}
        if not (s["error_estimate"] is not None and s["error_estimate"] <= target):
            out |= {f for f in s["flags"] if f in ("unconverged", "cavity-limited")} or {"unconverged"}
        return out

    bad = [dict(s, flags=sorted(kinds_of(s))) for s in low if kinds_of(s)]
    kinds = {f for s in bad for f in s["flags"]}
    detail = ", ".join(f"{s['label']}: {'/'.join(f for f in s['flags'] if f in CONFIDENCE_FLAGS)}" for s in bad[:8])
    if missing:
        detail = (detail + "; " if detail else "") + f"{len(missing)} levels n <= {max_n} not found"
    worst = max((s["error_estimate"] or 0.0 for s in low), default=0.0)
    if not bad and not missing:
        return Check("level-confidence", "pass", worst, target,
                     f"every level n <= {max_n} has an estimated error below the target {target:.0e} "
                     f"(worst {worst:.1e}) and the node count its n asks for")
    spread = _spread(sol)
    if b.family == "bspline" and spread and ("nodes-disagree" in kinds or missing):
        advice.append(f"lower r_max to {_default_cavity(sol):.4g} bohr (the default for this ion): with r_max = "
                      f"{b.r_max:.3g} bohr the knots are spread too thin for the levels n <= {max_n}, whose labels "
                      "and energies the basis cannot hold")
    elif "cavity-limited" in kinds:
        fix = (f"raise r_max to {1.5 * b.r_max:.4g} bohr" if b.family == "bspline"
               else f"lower exponent_min to {b.exponent_min / 10 if b.exponent_min else 0:.3g}")
        names = ", ".join(s["label"] for s in bad if "cavity-limited" in s["flags"])[:120]
        advice.append(f"{fix}: the cavity shifts {names} beyond the target {target:.0e}")
    size_bound = [s["label"] for s in bad if "cavity-limited" not in s["flags"]
                  and ({"unconverged", "nodes-disagree"} & set(s["flags"]))]
    if (size_bound or (missing and "cavity-limited" not in kinds)) and not spread:
        names = ", ".join(size_bound)
        advice.append(f"raise size to {b.size + max(20, b.size // 4)}: "
                      + (f"{names[:120]} not converged in size" if names else f"levels n <= {max_n} missing"))
    return Check("level-confidence", "fail", float(len(bad) + len(missing)), target, detail)


def _spread(sol: Solution) -> bool:
    """A B-spline cavity more than 20 times the default: knots too thin for the inner levels."""
    b = sol.config.basis
    return (b.family == "bspline" and not isinstance(b.knots, tuple) and sol.nucleus.Z > 0
            and b.r_max > 20 * _default_cavity(sol))


def _default_cavity(sol: Solution) -> float:
    return DEFAULT_CAVITY / float(sol.nucleus.Z)


def audit(config=None, *, max_n: int = 5, target: float = 1e-8, **overrides) -> Audit:
    """Solve the basis of ``config`` and run every check (see module docstring)."""
    sol = config if isinstance(config, Solution) else solve(as_config(config, **overrides))
    cfg = sol.config
    checks, advice = [], []
    rows = per_state(sol, max_n)
    focus = [s for s in rows if s["branch"] == "bound" and s["n"] is not None and s["n"] <= max_n]

    # spurious roots
    spur = [s for s in rows if s["branch"] == "spurious"]
    by_kappa = {}
    for s in spur:
        by_kappa.setdefault(s["kappa"], []).append(s)
    detail = "; ".join(f"kappa {k:+d}: " + ", ".join(f"{s['energy_hartree']:.6g} ({'/'.join(s['flags'])})" for s in v)
                       for k, v in sorted(by_kappa.items())) or "none"
    checks.append(Check("spurious-roots", "fail" if spur else "pass", float(len(spur)), 0.0, detail))
    if spur:
        fix = "dkb" if cfg.basis.family == "bspline" else "rkb or dkb"
        if cfg.basis.balance in ("none",):
            advice.append(f"use balance = \"{fix}\": {len(spur)} spurious roots in kappa = "
                          + ", ".join(f"{k:+d}" for k in sorted(by_kappa)))
        elif not _spread(sol):  # a cavity far too wide gets its own advice (level-confidence)
            advice.append(f"{len(spur)} spurious roots in kappa = " + ", ".join(f"{k:+d}" for k in sorted(by_kappa))
                          + ": refine the grid near the origin (smaller r_min) or raise size")

    # intruders in the low positive continuum
    outliers = continuum_outliers(sol)
    checks.append(Check("continuum-outliers", "fail" if outliers else "pass", float(len(outliers)), 0.0,
                        "; ".join(f"kappa {k:+d}: eps = {e:.6g} (balance residual {x:.2g})" for k, e, x in outliers)
                        or "none among the lowest 20 positive roots of each kappa"))
    if outliers:
        advice.append("roots in the positive continuum fit no physical state (" + ", ".join(
            f"kappa {k:+d} at {e:.6g}" for k, e, _ in outliers[:4]) + "): change the wall or the balance scheme")

    # node count
    bad_nodes = [s for s in focus if s["nodes"] != s["nodes_expected"]]
    checks.append(Check("node-count", "warn" if bad_nodes else "pass", float(len(bad_nodes)), 0.0,
                        ", ".join(f"{s['label']}: {s['nodes']} nodes" for s in bad_nodes) or
                        f"all {len(focus)} bound states n <= {max_n} have n - l - 1 nodes"))

    # confidence of the levels n <= max_n (the error estimate of the spectrum) and dived levels
    checks.append(_confidence_check(sol, rows, max_n, advice, target))
    dived = [(k, sol[k].labels[i], float(sol[k].energies[i])) for k in sol.kappas for i in range(len(sol[k]))
             if "dived" in sol[k].flags[i]]
    checks.append(Check("dived-levels", "warn" if dived else "pass", float(len(dived)), 0.0,
                        "; ".join(f"{lab} (kappa {k:+d}) at eps = {e:.6g} hartree, below -2c^2" for k, lab, e in dived)
                        or "no level below -2c^2"))
    for k, lab, e in dived:
        advice.append(f"{lab} has dived into the negative continuum (eps = {e:.6g} hartree < -2c^2 = "
                      f"{-2 * sol.c ** 2:.6g}): the charge exceeds the critical charge of this level (see `relbasis "
                      f"critical`); it is listed with the negative branch, the levels above keep their own n")

    # balance
    br = max((s["balance_residual"] or 0.0) for s in focus) if focus else 0.0
    checks.append(Check("balance-residual", _grade(br, 1e-2, 0.1), br, 1e-2,
                        "||Q - c D+P/(2c^2 + eps - V)|| / ||Q||, worst bound state n <= %d" % max_n))
    kb = max((s["kinetic_balance_residual"] or 0.0) for s in focus) if focus else 0.0
    za2 = (sol.nucleus.Z / sol.c) ** 2
    checks.append(Check("kinetic-balance", _grade(kb, max(0.5, 3 * za2), 2.0), kb, max(0.5, 3 * za2),
                        f"||Q - g D+P/2c|| / ||Q|| with g = 2c^2/(2c^2 - V(r)), worst "
                        f"bound state; of order (Z alpha)^2 = {za2:.3g} for physical states"))
    mirror = _negative_mirror(sol)
    checks.append(Check("kinetic-balance-negative", _grade(mirror, 5.0, 100.0), mirror, 5.0,
                        "||P - D-Q/2c|| / ||P||, worst of the 10 negative-energy roots next to -2c^2 per kappa "
                        "(RKB balances only the positive branch: a few units there)"))

    # small-component weight
    ratios = [s["small_weight"] / max(s["small_weight_expected"], 1e-300) for s in focus if sol.nucleus.Z > 0]
    sw = max(ratios) if ratios else 0.0
    checks.append(Check("small-weight", _grade(sw, 5.0, 50.0), sw, 5.0,
                        "int Q^2 / ((Z alpha / n)^2 / 4), worst bound state n <= %d" % max_n))

    # wall and origin
    wall = max((s["wall_fraction"] for s in focus), default=0.0)
    where = ("in the last three knot intervals" if cfg.basis.family == "bspline"
             else "beyond 3/sqrt(zeta_min), the reach of the most diffuse Gaussian")
    checks.append(Check("wall-fraction", _grade(wall, 1e-8, 1e-4), wall, 1e-8,
                        f"share of the norm {where}, worst bound state n <= {max_n}"))
    if wall > 1e-8 and any(a.startswith("raise r_max") for a in advice):
        pass  # the level-confidence advice already names the cavity
    elif wall > 1e-8 and cfg.basis.family == "bspline":
        advice.append(f"raise r_max to {2 * cfg.basis.r_max:.3g} bohr: the bound states n <= {max_n} reach the wall "
                      f"(norm share {wall:.1e})")
    elif wall > 1e-8:
        zmin = min(sol.bases[sol.kappas[0]].exponents)
        advice.append(f"lower exponent_min to {zmin / 10:.3g}: the bound states n <= {max_n} reach beyond the most "
                      f"diffuse Gaussian (norm share {wall:.1e} beyond 3/sqrt(zeta_min))")
    origin = max((s["origin_fraction"] for s in rows), default=0.0)
    where = ("in the first three knot intervals" if cfg.basis.family == "bspline"
             else "inside 1/sqrt(zeta_max), the reach of the tightest Gaussian")
    checks.append(Check("origin-fraction", _grade(origin, 1e-3, 1e-1), origin, 1e-3,
                        f"share of the norm {where}, worst root in the bound window"))

    # virial (Coulomb field only)
    if sol.nucleus.model == "point" and sol.nucleus.Z > 0:
        vir = [s for s in focus if s["n"] <= 3]
        v = max((s["virial"] for s in vir), default=0.0)
        sv = [f"{s['energy_hartree']:.6g}: {s['virial']:.1e}" for s in rows if s["branch"] == "spurious"]
        checks.append(Check("virial", _grade(v, 1e-6, 1e-4), v, 1e-6,
                            "|c^2 int(P^2 - Q^2) - E| / E, worst bound state n <= 3"
                            + (f"; spurious roots: {', '.join(sv[:4])}" if sv else "")))

    # closure and sum rule for the lowest state of each symmetry with n <= max_n
    with_neg, without_neg, cl_detail = 0.0, 0.0, []
    for kappa in sol.kappas:
        spec = sol[kappa]
        ns = [n for n in spec.n if n is not None and n <= max_n]
        for n in ns:
            a, b = closure(sol, kappa, n)
            with_neg, without_neg = max(with_neg, abs(a)), max(without_neg, abs(b))
            if n == min(ns):
                cl_detail.append(f"{spec.labels[spec.n.index(n)]}: {abs(a):.1e} / {abs(b):.1e}")
    checks.append(Check("closure", _grade(with_neg, 1e-5, 1e-3), with_neg, 1e-5,
                        "1 - sum_n |<a|r|n>|^2 / <a|r^2|a> over all roots, worst bound state n <= %d; lowest states "
                        "(with / without the negative branch): %s" % (max_n, ", ".join(cl_detail))))
    checks.append(Check("closure-without-negative", "pass", without_neg, None,
                        "the same sum without the negative-energy roots: what a basis without them would miss "
                        "(keep them in sums over intermediate states)"))
    ground = min(((k, sol[k].n[i], sol[k].energies[i]) for k in sol.kappas for i in sol[k].indices("bound")
                  if sol[k].n[i] is not None), key=lambda kne: kne[2], default=None)
    ground = ground[:2] if ground else None
    rule = sum_rule(sol, *ground) if ground else None
    if rule is None:
        checks.append(Check("sum-rule", "pass", None, None,
                            "dipole sum rule not evaluated: solve the partner symmetries of the ground state too"))
    else:
        checks.append(Check("sum-rule", _grade(abs(rule["all"]), 1e-4, 1e-2), abs(rule["all"]), 1e-4,
                            f"oscillator strengths from the lowest level: positive {rule['positive']:.10f}, "
                            f"negative {rule['negative']:.10f}, all {rule['all']:.2e} (0 for a complete set)"))

    # overlap
    cond = _condition(sol)
    dropped = sum(sol.dropped.values())
    checks.append(Check("overlap-condition", "warn" if (cond > 1e12 or dropped) else "pass", cond, 1e12,
                        f"condition number of the scaled overlap (worst kappa); {dropped} functions dropped by "
                        "canonical orthogonalisation"))

    # convergence
    reference = None
    point = sol.nucleus.model == "point" and sol.nucleus.Z > 0
    conv = {}
    other_size = comparison_size(cfg.basis.size)
    if not point:
        reference = _resized(sol, other_size)
    errs = _level_errors(sol, max_n, reference)
    worst = max(errs.values(), default=0.0)
    against = "the exact Dirac–Coulomb levels" if point else f"a basis of size {other_size}"
    status = _grade(worst, target, 1e-6) if errs or sol.nucleus.Z == 0 else "fail"
    checks.append(Check("convergence", status, worst, target,
                        f"worst relative change of the bound levels n <= {max_n} against {against}"
                        + ("" if errs or sol.nucleus.Z == 0 else "; no level n <= max_n found to compare")))
    conv["levels"] = errs
    cavity_bound = any("cavity-limited" in r["flags"] for r in focus) or _spread(sol)
    if worst > target and not cavity_bound and not any(a.startswith("raise size") for a in advice):
        advice.append(f"raise size to {cfg.basis.size + 20}: bound levels n <= {max_n} differ by {worst:.1e} "
                      f"from {against} (target {target:g})")
    if not advice and any(c.status != "pass" for c in checks):
        advice.append("see the checks marked warn or fail")
    return Audit(sol, tuple(checks), tuple(advice), tuple(rows), conv, max_n, target)
