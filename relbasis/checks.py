"""The audit's checks: one small function per check, each with its named thresholds and advice.

A check is a function ``(Context) -> Outcome``: it reads the shared figures of the context
(the solution, its family object, the per-root rows of :func:`relbasis.measures.per_state`),
grades them against the thresholds below and returns its :class:`Check` results (usually one)
with the advice lines that name the setting to change.  :data:`CHECKS` lists them in the order
of the audit's output and JSON document (a contract: names, order, values, thresholds, details
and advice texts).  docs/audit.md gives every threshold with its figure and the physics behind
it; the figures quoted beside the constants are measured there.

Grading: a figure passes at or below its warn threshold, warns at or below its fail threshold,
and fails above it (or when it is missing or not finite); the threshold reported is the warn
threshold.  Every check uses the solution's own speed of light (``Solution.c``).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Callable

import numpy as np

from .vocabulary import orbital_l
from .config import DEFAULT_CAVITY
from .families import BasisFamily
from .measures import (closure, comparison_size, continuum_outliers, coulomb_reference, finite_or_none,
                       level_errors, negative_mirror, overlap_condition, resized, sum_rule, MIRROR_COUNT,
                       OUTLIER_COUNT)
from .solver import Solution

STATUSES = ("pass", "warn", "fail")

# ----------------------------------------------------------------------------- thresholds

COUNT_ALLOWED = 0.0
"""Threshold of the counting checks (spurious-roots, continuum-outliers, node-count,
dived-levels): any root counted is reported."""
BALANCE_WARN, BALANCE_FAIL = 1e-2, 0.1
"""balance-residual: every bound state of the balanced default bases measures at most 1.3e-2
(spectrum.BALANCE_THRESHOLD, 0.1, is where a root of the gap is made spurious)."""
KINETIC_BALANCE_FLOOR, KINETIC_BALANCE_ZA2, KINETIC_BALANCE_FAIL = 0.5, 3.0, 2.0
"""kinetic-balance: warn above max(FLOOR, ZA2 (Z alpha)^2), fail above FAIL (physical states
differ from the relation by O((Z alpha)^2); the exact point-nucleus 1s stays below the warn
threshold up to Z = 136).  Where ZA2 (Z alpha)^2 > FAIL (Z > 112) a figure above the warn
threshold fails at once."""
MIRROR_WARN, MIRROR_FAIL = 5.0, 100.0
"""kinetic-balance-negative: unbalanced bases give 1e3, RKB (which balances only the positive
branch) a few units, DKB 1e-2."""
SMALL_WEIGHT_WARN, SMALL_WEIGHT_FAIL = 5.0, 50.0
"""small-weight: int Q^2 against (Z alpha / n)^2 / 4, the small-component weight of order
(Z alpha)^2 ((1 - gamma)/2 for 1s)."""
WALL_WARN, WALL_FAIL = 1e-8, 1e-4
"""wall-fraction: the norm share of a bound state far out (wall-bound states need more room;
the advice, twice r_max or a tenth of exponent_min, is the family's ``reach_advice``)."""
ORIGIN_WARN, ORIGIN_FAIL = 1e-3, 0.1
"""origin-fraction: roots bound to the origin are numerical artefacts."""
VIRIAL_WARN, VIRIAL_FAIL = 1e-6, 1e-4
"""virial (point nucleus): |c^2 int (P^2 - Q^2) - E| / E; the default basis gives 2e-12 at Z = 92."""
VIRIAL_MAX_N = 3
"""virial: judged on the bound states with n up to this."""
CLOSURE_WARN, CLOSURE_FAIL = 1e-5, 1e-3
"""closure: completeness of the finite spectrum (1.2e-11 for 1s of Z = 92, default basis)."""
SUM_RULE_WARN, SUM_RULE_FAIL = 1e-4, 1e-2
"""sum-rule: |sum f| over all roots (9.6e-10 for Z = 92, default basis)."""
CONDITION_WARN = 1e12
"""overlap-condition: condition number of the scaled overlap above which the check warns (so
does any function dropped by canonical orthogonalisation)."""
CONVERGENCE_FAIL = 1e-6
"""convergence: warn above the audit's target, fail above this."""
CONVERGENCE_SIZE_STEP = 20
"""convergence advice: raise size by this many functions."""
CONFIDENCE_SIZE_STEP, CONFIDENCE_SIZE_SHARE = 20, 4
"""level-confidence advice: raise size by max(STEP, size // SHARE)."""
SPREAD_FACTOR = 20.0
"""A B-spline cavity wider than this many times the default (DEFAULT_CAVITY / Z) spreads the
knots too thin for the inner levels (level-confidence advises the default instead)."""
CONFIDENCE_FLAGS = ("unconverged", "cavity-limited", "nodes-disagree", "precision-limited")
"""Flags that withdraw the claim of accuracy of a level (level-confidence names them)."""
FALLBACK_ADVICE = "see the checks marked warn or fail"
"""The advice when some check does not pass and none gave a line of its own."""

_LIST_STATES = 8  # states named in a detail
_LIST_WIDTH = 120  # characters of names in an advice line
_LIST_SHORT = 4  # roots named in an advice line or a remark


# ----------------------------------------------------------------------------- results


@dataclass(frozen=True)
class Check:
    """One graded figure: name, status (pass / warn / fail), value, threshold, detail."""

    name: str
    status: str
    value: float | None
    threshold: float | None
    detail: str

    def to_dict(self) -> dict:
        return {"name": self.name, "status": self.status, "value": finite_or_none(self.value),
                "threshold": finite_or_none(self.threshold), "detail": self.detail}


@dataclass(frozen=True)
class Context:
    """What every check reads, built once per audit.

    ``rows`` are the per-root figures (:func:`relbasis.measures.per_state`), ``focus`` the bound
    ones with n <= max_n; ``advice`` holds the advice of the checks before this one (two checks
    leave out advice that an earlier one already gave).
    """

    solution: Solution
    family: BasisFamily
    rows: tuple[dict, ...]
    focus: tuple[dict, ...]
    max_n: int
    target: float
    spread: bool
    advice: tuple[str, ...] = ()
    levels: frozenset = frozenset()  # (kappa, n) of the levels judged (relbasis.measures.audited_levels)
    scope: str = "n <= 5"  # how the details name them

    def judged(self, kappa: int, n) -> bool:
        return n is not None and (kappa, n) in self.levels


@dataclass(frozen=True)
class Outcome:
    """What one check function returns: its checks, its advice and (convergence) figures for
    :attr:`relbasis.audit.Audit.convergence`."""

    checks: tuple[Check, ...]
    advice: tuple[str, ...] = ()
    convergence: dict = field(default_factory=dict)


def grade(value: float | None, warn: float, fail: float) -> str:
    """pass at or below ``warn``, warn at or below ``fail``, else (or not finite) fail."""
    if value is None or not np.isfinite(value):
        return "fail"
    return "pass" if value <= warn else "warn" if value <= fail else "fail"


def default_cavity(sol: Solution) -> float:
    """The default cavity radius of the ion, DEFAULT_CAVITY / Z bohr."""
    return DEFAULT_CAVITY / float(sol.nucleus.Z)


def spread(sol: Solution, family: BasisFamily) -> bool:
    """A cavity wall set by size alone, more than SPREAD_FACTOR times the default: knots too thin
    for the inner levels."""
    b = sol.config.basis
    return (family.has_wall and family.resizable(b) and sol.nucleus.Z > 0
            and b.r_max > SPREAD_FACTOR * default_cavity(sol))


def _kappa_list(kappas) -> str:
    return ", ".join(f"{k:+d}" for k in sorted(kappas))


# ----------------------------------------------------------------------------- the checks


def spurious_roots(ctx: Context) -> Outcome:
    """spurious-roots: roots of the bound window marked spurious (fail if any).  Advice: a
    balanced basis if none is used, else a finer origin or a larger size."""
    sol = ctx.solution
    spur = [s for s in ctx.rows if s["branch"] == "spurious"]
    by_kappa: dict[int, list[dict]] = {}
    for s in spur:
        by_kappa.setdefault(s["kappa"], []).append(s)
    detail = "; ".join(f"kappa {k:+d}: " + ", ".join(f"{s['energy_hartree']:.6g} ({'/'.join(s['flags'])})" for s in v)
                       for k, v in sorted(by_kappa.items())) or "none"
    check = Check("spurious-roots", "fail" if spur else "pass", float(len(spur)), COUNT_ALLOWED, detail)
    advice = []
    if spur:
        if sol.config.basis.balance in ("none",):
            advice.append(f"use balance = \"{ctx.family.balance_advice}\": {len(spur)} spurious roots in kappa = "
                          + _kappa_list(by_kappa))
        elif not ctx.spread:  # a cavity far too wide gets its own advice (level-confidence)
            advice.append(f"{len(spur)} spurious roots in kappa = " + _kappa_list(by_kappa)
                          + ": refine the grid near the origin (smaller r_min) or raise size")
    return Outcome((check,), tuple(advice))


def continuum_outliers_check(ctx: Context) -> Outcome:
    """continuum-outliers: intruders among the lowest positive roots
    (:func:`relbasis.measures.continuum_outliers`; fail if any)."""
    outliers = continuum_outliers(ctx.solution)
    check = Check("continuum-outliers", "fail" if outliers else "pass", float(len(outliers)), COUNT_ALLOWED,
                  "; ".join(f"kappa {k:+d}: eps = {e:.6g} (balance residual {x:.2g})" for k, e, x in outliers)
                  or f"none among the lowest {OUTLIER_COUNT} positive roots of each kappa")
    advice = ()
    if outliers:
        advice = ("roots in the positive continuum fit no physical state (" + ", ".join(
            f"kappa {k:+d} at {e:.6g}" for k, e, _ in outliers[:_LIST_SHORT]) + "): change the wall or the balance scheme",)
    return Outcome((check,), advice)


def node_count(ctx: Context) -> Outcome:
    """node-count: bound states n <= max_n whose P has other than n - l - 1 nodes (warn if any)."""
    bad = [s for s in ctx.focus if s["nodes"] != s["nodes_expected"]]
    return Outcome((Check("node-count", "warn" if bad else "pass", float(len(bad)), COUNT_ALLOWED,
                          ", ".join(f"{s['label']}: {s['nodes']} nodes" for s in bad) or
                          f"all {len(ctx.focus)} bound states {ctx.scope} have n - l - 1 nodes"),))


def level_confidence(ctx: Context) -> Outcome:
    """level-confidence: levels n <= max_n whose error estimate (against the audit's target) or
    node count withdraws the claim of accuracy, and levels missing; the advice names the
    setting which fixes each kind (docs/audit.md)."""
    sol, family, max_n, target = ctx.solution, ctx.family, ctx.max_n, ctx.target
    b = sol.config.basis
    low = [s for s in ctx.rows if s["branch"] == "bound" and ctx.judged(s["kappa"], s["n"])]
    missing = sorted((k, n) for k, n in ctx.levels if n not in sol[k].n)

    def kinds_of(s):  # what withdraws the claim for this level, judged against the audit's target
        out = {f for f in s["flags"] if f in ("nodes-disagree", "precision-limited")}
        if not (s["error_estimate"] is not None and s["error_estimate"] <= target):
            out |= {f for f in s["flags"] if f in ("unconverged", "cavity-limited")} or {"unconverged"}
        return out

    bad = [dict(s, flags=sorted(kinds_of(s))) for s in low if kinds_of(s)]
    kinds = {f for s in bad for f in s["flags"]}
    detail = ", ".join(f"{s['label']}: {'/'.join(f for f in s['flags'] if f in CONFIDENCE_FLAGS)}"
                       for s in bad[:_LIST_STATES])
    if missing:
        detail = (detail + "; " if detail else "") + f"{len(missing)} levels {ctx.scope} not found"
    worst = max((s["error_estimate"] or 0.0 for s in low), default=0.0)
    if not bad and not missing:
        return Outcome((Check("level-confidence", "pass", worst, target,
                              f"every level {ctx.scope} has an estimated error below the target {target:.0e} "
                              f"(worst {worst:.1e}) and the node count its n asks for"),))
    advice = []
    if ctx.spread and ("nodes-disagree" in kinds or missing):
        advice.append(f"lower r_max to {default_cavity(sol):.4g} bohr (the default for this ion): with r_max = "
                      f"{b.r_max:.3g} bohr the knots are spread too thin for the levels {ctx.scope}, whose labels "
                      "and energies the basis cannot hold")
    elif "cavity-limited" in kinds:
        names = ", ".join(s["label"] for s in bad if "cavity-limited" in s["flags"])[:_LIST_WIDTH]
        advice.append(f"{family.cavity_fix(b)}: the cavity shifts {names} beyond the target {target:.0e}")
    size_bound = [s["label"] for s in bad if "cavity-limited" not in s["flags"]
                  and ({"unconverged", "nodes-disagree"} & set(s["flags"]))]
    if (size_bound or (missing and "cavity-limited" not in kinds)) and not ctx.spread:
        names = ", ".join(size_bound)
        advice.append(f"raise size to {b.size + max(CONFIDENCE_SIZE_STEP, b.size // CONFIDENCE_SIZE_SHARE)}: "
                      + (f"{names[:_LIST_WIDTH]} not converged in size" if names else f"levels {ctx.scope} missing"))
    return Outcome((Check("level-confidence", "fail", float(len(bad) + len(missing)), target, detail),),
                   tuple(advice))


def dived_levels(ctx: Context) -> Outcome:
    """dived-levels: levels listed below -2c^2 with the flag ``dived`` (warn if any; one advice
    line per level)."""
    sol = ctx.solution
    dived = [(k, sol[k].labels[i], float(sol[k].energies[i])) for k in sol.kappas for i in range(len(sol[k]))
             if "dived" in sol[k].flags[i]]
    check = Check("dived-levels", "warn" if dived else "pass", float(len(dived)), COUNT_ALLOWED,
                  "; ".join(f"{lab} (kappa {k:+d}) at eps = {e:.6g} hartree, below -2c^2" for k, lab, e in dived)
                  or "no level below -2c^2")
    advice = tuple(f"{lab} has dived into the negative continuum (eps = {e:.6g} hartree < -2c^2 = "
                   f"{-2 * sol.c ** 2:.6g}): the charge exceeds the critical charge of this level (see `relbasis "
                   f"critical`); it is listed with the negative branch, the levels above keep their own n"
                   for k, lab, e in dived)
    return Outcome((check,), advice)


def balance_residual_check(ctx: Context) -> Outcome:
    """balance-residual: worst exact balance residual of the bound states n <= max_n."""
    br = max((s["balance_residual"] or 0.0) for s in ctx.focus) if ctx.focus else 0.0
    return Outcome((Check("balance-residual", grade(br, BALANCE_WARN, BALANCE_FAIL), br, BALANCE_WARN,
                          "||Q - c D+P/(2c^2 + eps - V)|| / ||Q||, worst bound state %s" % ctx.scope),))


def kinetic_balance(ctx: Context) -> Outcome:
    """kinetic-balance: worst ||Q - g D+P/2c|| / ||Q|| of the bound states n <= max_n, with the
    threshold scaled by (Z alpha)^2 of the solution's own c."""
    sol = ctx.solution
    kb = max((s["kinetic_balance_residual"] or 0.0) for s in ctx.focus) if ctx.focus else 0.0
    za2 = (sol.nucleus.Z / sol.c) ** 2
    warn = max(KINETIC_BALANCE_FLOOR, KINETIC_BALANCE_ZA2 * za2)
    return Outcome((Check("kinetic-balance", grade(kb, warn, KINETIC_BALANCE_FAIL), kb, warn,
                          f"||Q - g D+P/2c|| / ||Q|| with g = 2c^2/(2c^2 - V(r)), worst "
                          f"bound state; of order (Z alpha)^2 = {za2:.3g} for physical states"),))


def kinetic_balance_negative(ctx: Context) -> Outcome:
    """kinetic-balance-negative: worst ||P - D-Q/2c|| / ||P|| of the negative roots next to -2c^2."""
    mirror = negative_mirror(ctx.solution)
    return Outcome((Check("kinetic-balance-negative", grade(mirror, MIRROR_WARN, MIRROR_FAIL), mirror, MIRROR_WARN,
                          f"||P - D-Q/2c|| / ||P||, worst of the {MIRROR_COUNT} negative-energy roots next to -2c^2 "
                          "per kappa (RKB balances only the positive branch: a few units there)"),))


def small_weight(ctx: Context) -> Outcome:
    """small-weight: worst int Q^2 / ((Z alpha / n)^2 / 4) of the bound states n <= max_n."""
    ratios = [s["small_weight"] / max(s["small_weight_expected"], 1e-300) for s in ctx.focus
              if ctx.solution.nucleus.Z > 0]
    sw = max(ratios) if ratios else 0.0
    return Outcome((Check("small-weight", grade(sw, SMALL_WEIGHT_WARN, SMALL_WEIGHT_FAIL), sw, SMALL_WEIGHT_WARN,
                          "int Q^2 / ((Z alpha / n)^2 / 4), worst bound state %s" % ctx.scope),))


def wall_fraction(ctx: Context) -> Outcome:
    """wall-fraction: worst norm share far out (as the family measures it) of the bound states
    n <= max_n.  Advice: more room, unless level-confidence already named the cavity."""
    family, max_n = ctx.family, ctx.max_n
    wall = max((s["wall_fraction"] for s in ctx.focus), default=0.0)
    check = Check("wall-fraction", grade(wall, WALL_WARN, WALL_FAIL), wall, WALL_WARN,
                  f"share of the norm {family.edge_words[1]}, worst bound state {ctx.scope}")
    advice = ()
    if wall > WALL_WARN and not any(a.startswith("raise r_max") for a in ctx.advice):
        sol = ctx.solution
        advice = (family.reach_advice(sol.config.basis, family.exponents_of(sol), max_n, wall),)
    return Outcome((check,), advice)


def origin_fraction(ctx: Context) -> Outcome:
    """origin-fraction: worst norm share near the origin of any root in the bound window."""
    origin = max((s["origin_fraction"] for s in ctx.rows), default=0.0)
    return Outcome((Check("origin-fraction", grade(origin, ORIGIN_WARN, ORIGIN_FAIL), origin, ORIGIN_WARN,
                          f"share of the norm {ctx.family.edge_words[0]}, worst root in the bound window"),))


def virial(ctx: Context) -> Outcome:
    """virial (point nucleus, Z > 0 only): worst |c^2 int (P^2 - Q^2) - E| / E of the bound
    states n <= VIRIAL_MAX_N; the spurious roots' figures in the detail."""
    sol = ctx.solution
    if not (sol.nucleus.model == "point" and sol.nucleus.Z > 0):
        return Outcome(())
    v = max((s["virial"] for s in ctx.focus if s["n"] <= VIRIAL_MAX_N), default=0.0)
    sv = [f"{s['energy_hartree']:.6g}: {s['virial']:.1e}" for s in ctx.rows if s["branch"] == "spurious"]
    return Outcome((Check("virial", grade(v, VIRIAL_WARN, VIRIAL_FAIL), v, VIRIAL_WARN,
                          f"|c^2 int(P^2 - Q^2) - E| / E, worst bound state n <= {VIRIAL_MAX_N}"
                          + (f"; spurious roots: {', '.join(sv[:_LIST_SHORT])}" if sv else "")),))


def closure_check(ctx: Context) -> Outcome:
    """closure: worst deficit of the closure of r (all roots) over the levels n <= max_n;
    closure-without-negative: the same without the negative roots (a figure, always pass)."""
    sol, max_n = ctx.solution, ctx.max_n
    with_neg, without_neg, lowest = 0.0, 0.0, []
    for kappa in sol.kappas:
        spec = sol[kappa]
        ns = [n for n in spec.n if ctx.judged(kappa, n)]
        for n in ns:
            a, b = closure(sol, kappa, n)
            with_neg, without_neg = max(with_neg, abs(a)), max(without_neg, abs(b))
            if n == min(ns):
                lowest.append(f"{spec.labels[spec.n.index(n)]}: {abs(a):.1e} / {abs(b):.1e}")
    return Outcome((
        Check("closure", grade(with_neg, CLOSURE_WARN, CLOSURE_FAIL), with_neg, CLOSURE_WARN,
              "1 - sum_n |<a|r|n>|^2 / <a|r^2|a> over all roots, worst bound state %s; lowest states "
              "(with / without the negative branch): %s" % (ctx.scope, ", ".join(lowest))),
        Check("closure-without-negative", "pass", without_neg, None,
              "the same sum without the negative-energy roots: what a basis without them would miss "
              "(keep them in sums over intermediate states)"),
    ))


def sum_rule_check(ctx: Context) -> Outcome:
    """sum-rule: |sum f| over all roots of the dipole oscillator strengths from the lowest bound
    level (a pass without a figure when a partner symmetry is not solved)."""
    sol = ctx.solution
    if sol.scf is not None:  # the Thomas–Reiche–Kuhn rule needs a local potential: exchange breaks it
        return Outcome((Check("sum-rule", "pass", None, None,
                              "dipole sum rule not evaluated: the nonlocal exchange of the core breaks the "
                              "Thomas–Reiche–Kuhn rule (it holds for local potentials only)"),))
    ground = min(((k, sol[k].n[i], sol[k].energies[i]) for k in sol.kappas for i in sol[k].indices("bound")
                  if sol[k].n[i] is not None), key=lambda kne: kne[2], default=None)
    rule = sum_rule(sol, *ground[:2]) if ground else None
    if rule is None:
        return Outcome((Check("sum-rule", "pass", None, None,
                              "dipole sum rule not evaluated: solve the partner symmetries of the ground state too"),))
    return Outcome((Check("sum-rule", grade(abs(rule["all"]), SUM_RULE_WARN, SUM_RULE_FAIL), abs(rule["all"]),
                          SUM_RULE_WARN,
                          f"oscillator strengths from the lowest level: positive {rule['positive']:.10f}, "
                          f"negative {rule['negative']:.10f}, all {rule['all']:.2e} (0 for a complete set)"),))


def overlap_condition_check(ctx: Context) -> Outcome:
    """overlap-condition: worst condition number of the scaled overlap and the functions
    dropped (warn above CONDITION_WARN or if any was dropped)."""
    sol = ctx.solution
    cond = overlap_condition(sol)
    dropped = sum(sol.dropped.values())
    return Outcome((Check("overlap-condition", "warn" if (cond > CONDITION_WARN or dropped) else "pass", cond,
                          CONDITION_WARN,
                          f"condition number of the scaled overlap (worst kappa); {dropped} functions dropped by "
                          "canonical orthogonalisation"),))


def convergence(ctx: Context) -> Outcome:
    """convergence: worst relative change of the bound levels n <= max_n against the exact
    Dirac–Coulomb levels (point nucleus) or a basis of another size (comparison_size), solved
    with the solution's own c.  Advice: a larger size, unless the cavity limits the levels or an
    earlier check already advised the size."""
    sol, max_n, target = ctx.solution, ctx.max_n, ctx.target
    b = sol.config.basis
    point = coulomb_reference(sol)
    other_size = comparison_size(b.size)
    reference = None if point else resized(sol, other_size)
    errs = level_errors(sol, max_n, reference, ctx.levels)
    worst = max(errs.values(), default=0.0)
    against = "the exact Dirac–Coulomb levels" if point else f"a basis of size {other_size}"
    found = bool(errs) or sol.nucleus.Z == 0
    check = Check("convergence", grade(worst, target, CONVERGENCE_FAIL) if found else "fail", worst, target,
                  f"worst relative change of the bound levels {ctx.scope} against {against}"
                  + ("" if found else f"; no level {ctx.scope} found to compare"))
    advice = ()
    cavity_bound = any("cavity-limited" in r["flags"] for r in ctx.focus) or ctx.spread
    if worst > target and not cavity_bound and not any(a.startswith("raise size") for a in ctx.advice):
        advice = (f"raise size to {b.size + CONVERGENCE_SIZE_STEP}: bound levels {ctx.scope} differ by "
                  f"{worst:.1e} from {against} (target {target:g})",)
    return Outcome((check,), advice, {"levels": errs})


CHECKS: tuple[Callable[[Context], Outcome], ...] = (
    spurious_roots,
    continuum_outliers_check,
    node_count,
    level_confidence,
    dived_levels,
    balance_residual_check,
    kinetic_balance,
    kinetic_balance_negative,
    small_weight,
    wall_fraction,
    origin_fraction,
    virial,
    closure_check,
    sum_rule_check,
    overlap_condition_check,
    convergence,
)
"""Every check, in the order of the audit's output (a new check: a function above and an entry
here; its thresholds as named constants, with their figures in docs/audit.md)."""
