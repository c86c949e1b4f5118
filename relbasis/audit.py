"""Diagnose a basis before a production run: per-root figures, whole-basis checks, a verdict.

``audit(config)`` solves the basis (or takes a :class:`~relbasis.solver.Solution`), builds the
per-root figures once (:func:`relbasis.measures.per_state`), runs every check of
:data:`relbasis.checks.CHECKS` in order, and collects their results and advice into an
:class:`Audit` whose verdict is the worst status.  The figures live in :mod:`relbasis.measures`,
the checks with their thresholds and advice in :mod:`relbasis.checks`; docs/audit.md gives
every threshold with its figure and source.  Every figure and threshold uses the solution's
own speed of light (``Solution.c``).
"""

from __future__ import annotations

import numbers
from dataclasses import dataclass, field, replace

import numpy as np

from .version import __version__
from .checks import CHECKS, CONFIDENCE_FLAGS, FALLBACK_ADVICE, STATUSES, Check, Context, Outcome, spread
from .errors import InputError
from .families import family_of
from .measures import (audited_levels, audited_scope, balance_factor, closure, comparison_size, continuum_outliers, coulomb_reference,
                       level_errors, per_state, resized, sum_rule)
from .solver import Solution, as_config, solve

__all__ = ["Audit", "Check", "audit", "balance_factor", "closure", "comparison_size", "continuum_outliers",
           "convergence_series", "per_state", "sum_rule"]


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
        """The check called ``name``; an :class:`~relbasis.errors.InputError` naming the checks
        this audit ran if there is none (``virial`` runs for a point nucleus only)."""
        for c in self.checks:
            if c.name == name:
                return c
        raise InputError(f"no check {name!r} in this audit (checks: {', '.join(c.name for c in self.checks)})")

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


def convergence_series(result: Audit, sizes=None) -> dict:
    """Errors of the bound levels n <= max_n for a range of sizes (for the report's picture).

    Reference: the exact levels for a point nucleus, else the basis of
    :func:`~relbasis.measures.comparison_size` of the audited one.
    """
    sol = result.solution
    b = sol.config.basis
    minimum = family_of(sol.config).minimum_size(b)
    sizes = sizes or [s for s in range(b.size - 40, b.size + 1, 10) if s >= minimum]
    reference = None if coulomb_reference(sol) else resized(sol, comparison_size(b.size))
    series = {}
    for size in sizes:
        other = sol if size == b.size else resized(sol, size)
        if other is None:
            continue
        for label, err in level_errors(other, result.max_n, reference).items():
            series.setdefault(label, []).append((size, err))
    return series


def _audited(config, c, overrides) -> Solution:
    """The solution to audit: ``config`` itself, or solved from it with ``c`` and ``overrides``."""
    if not isinstance(config, Solution):
        return solve(as_config(config, **overrides), c=c)
    if overrides:
        raise InputError(f"audit: {', '.join(overrides)} given with a Solution, which is already solved: "
                         "pass them with a config instead")
    if c is not None and c != config.c:
        raise InputError(f"audit: c = {c!r} given with a Solution solved with c = {config.c!r}: "
                         "pass c with a config, or leave it out")
    return config


def audit(config=None, *, max_n: int = 5, target: float = 1e-8, c: float | None = None, **overrides) -> Audit:
    """Solve the basis of ``config`` and run every check of :data:`relbasis.checks.CHECKS`.

    Parameters
    ----------
    config
        A :class:`~relbasis.solver.Solution` (audited as it is), or anything
        :func:`~relbasis.solver.solve` accepts (a Config, a mapping, a TOML path, None).
    max_n
        The checks judge the bound states with n <= max_n (at least 1).
    target
        The relative accuracy wanted of those levels (level-confidence, convergence).
    c
        Speed of light of the solve (default 1/alpha); with a Solution, its own ``c`` is used.
    **overrides
        Section-qualified settings for the solve, e.g. ``ion={"Z": 92}``.

    Returns
    -------
    Audit
        The checks in order, the advice, the per-state figures and the verdict.
    """
    if isinstance(max_n, bool) or not isinstance(max_n, numbers.Integral) or max_n < 1:
        raise InputError(f"max_n = {max_n!r}: give a whole number of at least 1")
    if isinstance(target, bool) or not isinstance(target, numbers.Real) or not (0 < target < np.inf):
        raise InputError(f"target = {target!r}: give a positive relative accuracy, e.g. 1e-8")
    sol = _audited(config, c, overrides)
    family = family_of(sol.config)
    rows = tuple(per_state(sol, max_n))
    levels = audited_levels(sol, max_n)
    focus = tuple(s for s in rows if s["branch"] == "bound" and (s["kappa"], s["n"]) in levels)
    context = Context(sol, family, rows, focus, max_n, target, spread(sol, family), (), levels,
                      audited_scope(sol, max_n))
    checks, advice, conv = [], [], {}
    for run in CHECKS:
        outcome = run(replace(context, advice=tuple(advice)))
        checks.extend(outcome.checks)
        advice.extend(outcome.advice)
        conv.update(outcome.convergence)
    if not advice and any(ch.status != "pass" for ch in checks):
        advice.append(FALLBACK_ADVICE)
    return Audit(sol, tuple(checks), tuple(advice), rows, conv, max_n, target)
