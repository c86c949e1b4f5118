"""The figures the audit judges: per-root rows and whole-basis sums, computed from a Solution.

Nothing here grades or advises (that is :mod:`relbasis.checks`); every figure uses the
solution's own speed of light ``sol.c`` and asks the family registry
(:func:`relbasis.families.family_of`) wherever the two basis families measure differently.

per root (bound states with n <= max_n unless said otherwise)
    node count of P against n - l - 1; the exact balance residual
    ||Q - c D+P/(2c^2 + eps - V)|| / ||Q|| (:func:`relbasis.spectrum.balance_residual`); the
    kinetic-balance residual ||Q - g D+P/2c|| / ||Q|| (and its mirror ||P - D-Q/2c|| / ||P|| for
    the negative-energy roots next to -2c^2), which measures how far the state is from the
    nonrelativistic relation, of order (Z alpha)^2; the small-component weight against
    (Z alpha / n)^2 / 4; the share of the norm near the origin and far out, as the family
    measures its reach; for a point nucleus the virial relation E = c^2 int (P^2 - Q^2) dr
    (V. Fock 1930; V. M. Shabaev, J. Phys. B 24, 4479 (1991), from memory), i.e.
    eps = -2c^2 int Q^2 dr;
whole basis
    closure of r within each symmetry, 1 - sum_n |<a|r|n>|^2 / <a|r^2|a>, with and without the
    negative branch; the dipole oscillator-strength sum over positive, negative and all roots
    (in the Dirac theory the total vanishes and the negative-energy states are needed:
    J. S. Levinger, M. L. Rustgi, K. Okamoto, Phys. Rev. 106, 1191 (1957), from memory);
    the overlap condition number; the relative errors of the bound levels against the exact
    Dirac–Coulomb value or a basis of another size.
"""

from __future__ import annotations

import numpy as np

from .vocabulary import orbital_l
from .angular import dipole_partners, reduced_c
from .config import MAX_SIZE
from .errors import MissingLevelError
from .families import family_of
from .solver import Solution, solve
from .spectrum import balance_residual

OUTLIER_COUNT = 20
"""Positive roots per kappa (the lowest) examined for intruders in the continuum."""
OUTLIER_FLOOR = 0.1
"""An intruder's exact balance residual exceeds this ...  (well-represented continuum states
measure 1e-12..1e-6, an intruder O(1..100): a free particle in a bag, DKB, kappa = +1,
R = 0.01 bohr; docs/audit.md)"""
OUTLIER_RATIO = 1e3
"""... and this many times the median of the roots examined."""
MIRROR_COUNT = 10
"""Negative-energy roots per kappa (the ones next to -2c^2) whose mirrored relation is measured."""
COMPARISON_STEP = 10
"""The convergence check compares with a basis this many functions larger (smaller at the cap)."""


def finite_or_none(x):
    """A float for JSON, None for a missing or non-finite figure."""
    if x is None:
        return None
    x = float(x)
    return x if np.isfinite(x) else None


def edge_fractions(sol: Solution, w: np.ndarray, P: np.ndarray, Q: np.ndarray):
    """Share of the norm near the origin and far out, per root, as the family measures its reach
    (B-splines: the first and the last three knot intervals; Gaussians: inside the tightest and
    beyond the widest Gaussian; :meth:`relbasis.families.BasisFamily.edge_fractions`)."""
    family = family_of(sol.config)
    dens = w[:, None] * (P * P + Q * Q)
    total = dens.sum(axis=0)
    first, last = family.edge_fractions(sol.config.basis, sol.grid[0], dens, family.exponents_of(sol))
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
        origin, wall = edge_fractions(sol, w, P, Q)
        l = orbital_l(kappa)
        for j, i in enumerate(idx):
            eps = float(spec.energies[i])
            n = spec.n[i]
            row = {
                "kappa": kappa, "n": n, "label": spec.labels[i], "branch": spec.branches[i],
                "energy_hartree": eps, "flags": list(spec.flags[i]),
                "nodes": int(spec.nodes[i]), "nodes_expected": None if n is None else n - l - 1,
                "balance_residual": finite_or_none(spec.balance_residual[i]),
                "kinetic_balance_residual": finite_or_none(kb[j]),
                "small_weight": float(wq[j]),
                "small_weight_expected": None if n is None else (Zalpha / n) ** 2 / 4,
                "origin_fraction": float(origin[j]), "wall_fraction": float(wall[j]),
                "virial": None,
                "error_estimate": (finite_or_none(spec.error_estimate[i])
                                   if spec.error_estimate is not None else None),
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


def continuum_outliers(sol: Solution, count: int = OUTLIER_COUNT) -> list[tuple[int, float, float]]:
    """Roots among the lowest ``count`` positive ones of each kappa whose exact balance residual
    ||Q - c D+P/(2c^2 + eps - V)|| / ||Q|| (:func:`relbasis.spectrum.balance_residual`) stands
    out: above OUTLIER_FLOOR and above OUTLIER_RATIO times the median of those roots.
    Returns (kappa, eps, residual) for each."""
    r, w = sol.grid
    V = sol.nucleus.potential(r)
    out = []
    for kappa in sol.kappas:
        idx = sol[kappa].indices("positive")[:count]
        if idx.size < 3:
            continue
        P, Q, DP = sol.sample(kappa, idx, "PQD")
        res = balance_residual(Q, DP, sol[kappa].energies[idx], V, w, sol.c)
        typical = np.median(res)
        for i, x in zip(idx, res):
            if x > max(OUTLIER_FLOOR, OUTLIER_RATIO * typical):
                out.append((kappa, float(sol[kappa].energies[i]), float(x)))
    return out


def negative_mirror(sol: Solution, count: int = MIRROR_COUNT) -> float:
    """Largest ||P - D-Q/2c|| / ||P|| among the ``count`` negative-energy roots next to -2c^2
    of each kappa (0 if there are none)."""
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


def root_of(sol: Solution, kappa: int, n: int, what: str) -> int:
    """Index of the root labelled n in symmetry kappa, or a one-line MissingLevelError naming the
    state and what the solution holds (``what`` names the caller)."""
    if kappa not in sol.spectra:
        raise MissingLevelError(f"{what}: no symmetry kappa = {kappa} in this solution "
                                f"(solved: {', '.join(f'{k:+d}' for k in sol.kappas)})")
    spec = sol[kappa]
    for i, m in enumerate(spec.n):
        if m == n:
            return i
    raise MissingLevelError(f"{what}: no level n = {n} for kappa = {kappa} in this basis "
                            f"(levels present: {', '.join(str(m) for m in spec.n if m is not None) or 'none'})")


def closure(sol: Solution, kappa: int, n: int) -> tuple[float, float]:
    """Deficit of sum_n |<a|r|n>|^2 against <a|r^2|a> within kappa, with and without negative roots.

    A state (n, kappa) the solution does not hold raises :class:`~relbasis.errors.MissingLevelError`.
    """
    a = root_of(sol, kappa, n, "closure")
    spec = sol[kappa]
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
    radial integral R_ab = int (P_a P_b + Q_a Q_b) r dr.  None if a partner symmetry is missing;
    a missing state raises :class:`~relbasis.errors.MissingLevelError`.
    """
    partners = dipole_partners(kappa)
    if any(k not in sol.spectra for k in partners):
        return None
    a = root_of(sol, kappa, n, "sum_rule")
    spec = sol[kappa]
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


def overlap_condition(sol: Solution) -> float:
    """Largest condition number of the diagonally scaled overlap over the symmetries
    (:meth:`relbasis.families.BasisFamily.overlap_condition`; a symmetry without a figure is
    skipped)."""
    family = family_of(sol.config)
    worst = 0.0
    for kappa in sol.kappas:
        worst = max(worst, family.overlap_condition(sol, kappa))
    return worst


def audited_levels(sol: Solution, max_n: int) -> frozenset:
    """(kappa, n) of the levels an audit judges: every n <= max_n of the solved kappas for one
    electron; with a mean-field core, the core orbitals and the valence level of the solved
    kappas (the levels the model is about; the other bound roots of the frozen core are the
    cavity's discrete pseudo-states, part of the basis but no claim on a Rydberg series)."""
    if sol.scf is None:
        return frozenset((k, n) for k in sol.kappas for n in range(orbital_l(k) + 1, max_n + 1))
    wanted = {(o.kappa, o.n) for o in sol.scf.core}
    valence = sol.config.electrons.valence
    if valence is not None:
        wanted.add((valence.kappa, valence.n))
    return frozenset((k, n) for k, n in wanted if k in sol.kappas)


def audited_scope(sol: Solution, max_n: int) -> str:
    """How the audit's details name the judged levels."""
    return f"n <= {max_n}" if sol.scf is None else "of the core and valence"


def level_errors(sol: Solution, max_n: int, reference: Solution | None, levels=None) -> dict:
    """Relative error of each bound level n <= max_n (or of the (kappa, n) in ``levels``) against
    exact values or a reference basis."""
    out = {}
    for kappa in sol.kappas:
        spec = sol[kappa]
        for e, n, lab in zip(spec.energies, spec.n, spec.labels):
            if n is None or (n > max_n if levels is None else (kappa, n) not in levels):
                continue
            ref = sol.exact(kappa, n)
            if ref is None and reference is not None:
                ref = level_of(reference[kappa], n)
            if ref is not None:
                out[lab] = abs(e / ref - 1)
    return out


def level_of(spec, n: int) -> float | None:
    """The energy of level n in a spectrum, flagged or not (None if absent): for comparisons."""
    return next((float(e) for e, m in zip(spec.energies, spec.n) if m == n), None)


def resized(sol: Solution, size: int) -> Solution | None:
    """The same basis settings with another size, solved with the solution's own c (None for
    explicit knots or exponents, or beyond the size cap)."""
    if not family_of(sol.config).resizable(sol.config.basis):
        return None
    if size > MAX_SIZE:
        return None
    cfg = sol.config.to_dict()
    cfg["basis"]["size"] = size
    return solve(cfg, c=sol.c, allow_large=True)  # the audited basis itself passed the work limits


def comparison_size(size: int) -> int:
    """The size the convergence check compares with: COMPARISON_STEP more, or as many fewer at
    the size cap."""
    return size + COMPARISON_STEP if size + COMPARISON_STEP <= MAX_SIZE else size - COMPARISON_STEP


def coulomb_reference(sol: Solution) -> bool:
    """True when the exact Dirac–Coulomb levels are the reference (point nucleus, Z > 0)."""
    return sol.nucleus.model == "point" and sol.nucleus.Z > 0
