"""Critical charge: the nuclear charge at which a bound level reaches the negative continuum.

A level (n, kappa) of a one-electron ion with a finite nucleus falls as Z grows and reaches
the lower threshold eps = -2c^2 (binding energy; total energy E = -mc^2) at the critical
charge Z_cr; beyond it the state dives into the negative-energy continuum and is no longer
a bound state (W. Pieper, W. Greiner, Z. Phys. 218, 327 (1969); Ya. B. Zeldovich,
V. S. Popov, Sov. Phys. Usp. 14, 673 (1972), from memory).  A point nucleus has no such Z:
its levels end at Z alpha = |kappa| (Z = 137.04 for kappa = -1), where eps = -c^2 or
above, before the threshold.

Method.  For a trial Z the package's B-spline DKB solver (:func:`relbasis.solve`, one
symmetry kappa) gives every root; the level is the root of the gap -2c^2 < eps < 0 whose
large component P has n - l - 1 nodes (Bethe & Salpeter 1957, §14), not the label counter.
The nuclear radius follows Z through a mass rule A(Z) and R_rms = 0.836 A^(1/3) + 0.570 fm
(:func:`relbasis.nucleus.rms_radius_of_mass_fm`; A need not be an integer).  The root of

    f(Z) = eps_(n,kappa)(Z) + 2c^2

is bracketed from below by secant steps from Z = |kappa| c (where every level of a finite
nucleus is still in the gap) and found by Brent's method (scipy.optimize.brentq).  In the
finite cavity the eigenvalue goes on smoothly below -2c^2 for a while (until it meets the top
of the discretised negative continuum, a few hundred hartree lower at Z ~ 170): there it is
found as the root with n - l - 1 nodes and a large-component weight int P^2 dr >=
CONTINUATION_P_WEIGHT (measured 0.3 in Z above Z_cr, sphere, A = 2.5 Z: the continuum roots
nearby at most 0.05, some with the same node count; the dived 1s, 2p1/2, 2s, 2p3/2 0.38 to
0.75).  Where no such root exists the point counts as "dived" by its sign alone, which keeps
Brent's bracket valid.  The root found must be a smooth zero crossing (checked on both sides,
:func:`_verified_slope`), or PhysicsRangeError is raised instead of a number.

Threshold tail.  At E = -mc^2 the radial equations far out give P'' = (2Z/r) P, so the bound
solution decays like exp(-sqrt(8 Z r)) (derived from the equations; docs/critical.md): the
cavity r_max = 150/Z leaves exp(-34.6) at the wall; with 90 splines the Z_cr found with
r_max = 40/Z, 60/Z and 150/Z agree to 1e-11, and 300/Z (the same splines spread thinner) to
1.4e-10 (measured, docs/critical.md), so the package's default cavity (250/Z, 100 splines) is
kept.

Uncertainty.  The search is repeated with a larger basis (CHECK_SIZE_STEP more splines and
CHECK_CAVITY_FACTOR times the cavity); the uncertainty is the difference plus the root
tolerance XTOL of each of the two searches.
"""

from __future__ import annotations

import math
import numbers
import time
from dataclasses import asdict, dataclass

import numpy as np
from scipy import optimize

from . import constants
from .version import __version__
from .config import DEFAULT_CAVITY, DEFAULT_SIZE, MAX_SIZE
from .constants import C
from .eigen import Eigensystem, refine
from .errors import InputError, PhysicsRangeError
from .nucleus import MODELS, RADIUS_RULE, rms_radius_of_mass_fm
from .solver import solve
from .spectrum import count_nodes, orbital_label
from .validate import is_real, suggest

DEFAULT_A_PER_Z = 2.5
"""Default mass rule A = 2.5 Z.  The element table (relbasis.elements) stops at Z = 118, below
every critical charge (Z_cr > |kappa| c >= 137); its heaviest entries have A/Z = 2.49..2.57
(Z = 100..118), and A = 2.5 Z is the rule of the critical-charge literature (from memory)."""

XTOL = 1e-10
"""Absolute tolerance of the root in Z (brentq)."""

CHECK_SIZE_STEP = 40
CHECK_CAVITY_FACTOR = 2.0
"""The check basis: this many more splines and this factor on the cavity radius."""

CONTINUATION_P_WEIGHT = 0.1
"""Least int P^2 dr of a root below -2c^2 taken as the continued level (see module docstring)."""

CONTINUATION_ROOTS = 10
"""Roots just below -2c^2 examined for the continued level."""

Z_SEARCH_LIMIT = 2000.0
"""Give up (PhysicsRangeError) if the level is still in the gap at this charge."""

BASIS_KEYS = ("size", "order", "r_min", "r_max", "r_scale", "knots", "quadrature")
"""basis overrides accepted (B-spline family with dual kinetic balance only)."""

DEFAULT_R_MAX_TIMES_Z = DEFAULT_CAVITY
"""The package's default cavity r_max = DEFAULT_CAVITY/Z (relbasis.config.resolve)."""

CAVEAT = ("one electron, the stated nuclear charge distribution and radius rule, a fixed nucleus; "
          "no QED (vacuum polarisation, self-energy) and no electron screening")

METHOD = ("B-spline DKB eigenvalue of kappa, level tracked by the node count of P (n - l - 1) and "
          "continued below -2c^2 in the cavity; Brent root of eps(Z) + 2c^2 = 0; uncertainty from a "
          "larger basis and cavity")


# ----------------------------------------------------------------------------- inputs


@dataclass(frozen=True)
class MassRule:
    """A(Z) with its description; ``__call__`` validates every value it returns."""

    text: str
    a_per_z: float | None = None
    fixed: float | None = None
    function: object = None

    def __call__(self, Z: float) -> float:
        if self.a_per_z is not None:
            A = self.a_per_z * Z
        elif self.fixed is not None:
            A = self.fixed
        else:
            try:
                A = self.function(Z)
            except Exception as err:  # a user's callable: report whatever it raised in one line
                msg = " ".join(str(err).split())
                raise InputError(f"mass_number({Z:.10g}) raised {type(err).__name__}: {msg}; "
                                 "give a function of Z returning the mass number") from None
        if not is_real(A) or not math.isfinite(A) or A <= 0:
            raise InputError(f"mass_number({Z:.10g}) = {A!r}: must be a finite number > 0 (mass number)")
        if A < Z:
            given = f"mass_number = {A:g} (fixed A)" if self.fixed is not None else f"mass_number({Z:.10g}) = {float(A):.10g}"
            raise InputError(f"{given} is below Z = {Z:.10g} reached by the search: the mass number counts the "
                             "protons too (e.g. A = 2.5 Z)")
        return float(A)


def mass_rule(mass_number=None) -> MassRule:
    """The mass rule of ``mass_number``: None (A = 2.5 Z, see DEFAULT_A_PER_Z), a number (fixed A)
    or a callable of the real charge Z."""
    if mass_number is None:
        return MassRule(f"A = {DEFAULT_A_PER_Z:g} Z (default; the element table stops at Z = 118)",
                        a_per_z=DEFAULT_A_PER_Z)
    if callable(mass_number):
        name = getattr(mass_number, "__name__", type(mass_number).__name__)
        return MassRule(f"A = {name}(Z) (given function)", function=mass_number)
    if not is_real(mass_number) or not math.isfinite(mass_number) or mass_number <= 0:
        raise InputError(f"mass_number = {mass_number!r}: give a number > 0 (fixed A), a function of Z, "
                         "or None (A = 2.5 Z)")
    return MassRule(f"A = {float(mass_number):g} (fixed)", fixed=float(mass_number))


def per_z_rule(a_per_z: float) -> MassRule:
    """A = a_per_z * Z (the command line's --a-per-z)."""
    if not is_real(a_per_z) or not math.isfinite(a_per_z) \
            or a_per_z < 1:
        raise InputError(f"a_per_z = {a_per_z!r}: must be a number >= 1 (A >= Z), e.g. 2.5")
    return MassRule(f"A = {float(a_per_z):g} Z", a_per_z=float(a_per_z))


def _check_level(n, kappa) -> tuple[int, int]:
    if isinstance(kappa, bool) or not isinstance(kappa, numbers.Integral) or kappa == 0:
        raise InputError(f"kappa = {kappa!r}: must be a non-zero integer (-1 for s1/2, +1 for p1/2, -2 for p3/2, ...)")
    kappa = int(kappa)
    l = kappa if kappa > 0 else -kappa - 1
    if isinstance(n, bool) or not isinstance(n, numbers.Integral) or n < l + 1:
        raise InputError(f"n = {n!r}: must be an integer >= {l + 1} for kappa = {kappa} (l = {l})")
    return int(n), kappa


def _check_model(nucleus) -> str:
    if nucleus == "point":
        raise InputError("nucleus = 'point' has no critical charge: its levels end at Z alpha = |kappa| "
                         f"(Z = {C:.2f} for |kappa| = 1) above eps = -2c^2; choose 'sphere', 'gauss' or 'fermi'")
    finite = tuple(m for m in MODELS if m != "point")
    if not isinstance(nucleus, str) or nucleus not in finite:
        hint = suggest(nucleus.lower(), finite, cutoff=0.6) if isinstance(nucleus, str) else ""
        raise InputError(f"nucleus = {nucleus!r}: valid are {', '.join(repr(m) for m in finite)}{hint}")
    return nucleus


def _check_basis(basis) -> dict:
    if basis is None:
        return {}
    if not isinstance(basis, dict):
        raise InputError(f"basis = {basis!r}: give a mapping of [basis] keys, e.g. {{'size': 120}}")
    wrong = [k for k in basis if k not in BASIS_KEYS]
    if wrong:
        raise InputError(f"basis.{wrong[0]}: not used by critical_charge (B-spline DKB); valid keys: {', '.join(BASIS_KEYS)}")
    if isinstance(basis.get("knots"), (list, tuple)):
        raise InputError("basis.knots: explicit breakpoints cannot follow Z; use 'log-linear' or 'exponential'")
    return {k: v for k, v in basis.items() if v is not None}


# ----------------------------------------------------------------------------- result


@dataclass(frozen=True)
class CriticalCharge:
    """The critical charge of one level for one nuclear model and mass rule."""

    Z: float  # critical charge
    uncertainty: float  # in units of Z: basis and cavity check plus root tolerances
    n: int
    kappa: int
    label: str  # e.g. "1s1/2"
    nucleus: str  # sphere | gauss | fermi
    mass_rule: str  # which A(Z) was used, in words
    A: float  # mass number at Z_cr (from the rule; need not be an integer)
    rms_radius_fm: float  # at Z_cr
    radius_rule: str
    slope: float  # d eps/dZ at Z_cr along the mass rule, hartree per unit charge
    Z_check: float  # the same search in the check basis
    basis: dict  # resolved primary basis at Z_cr
    check_basis: dict  # resolved check basis at Z_cr
    root_tolerance: float
    evaluations: int  # solves in both searches
    seconds: float
    method: str = METHOD
    caveat: str = CAVEAT

    @property
    def threshold_hartree(self) -> float:
        """The binding energy the level reaches at Z_cr: -2c^2."""
        return -2.0 * C * C

    def to_dict(self) -> dict:
        """JSON-ready record (the `relbasis critical --json` document)."""
        out = {"relbasis": __version__, "constants": constants.as_dict()}
        out.update(asdict(self))
        out["threshold_hartree"] = self.threshold_hartree
        return out


# ----------------------------------------------------------------------------- tracking


@dataclass(frozen=True)
class _Point:
    Z: float
    f: float | None  # eps + 2c^2 of the level (hartree); None: dived, no continued root found
    basis: dict


class _Search:
    """Evaluations of f(Z) in one basis, cached by Z."""

    def __init__(self, n, kappa, model, rule, basis, cavity_factor, size_step, bar):
        self.n, self.kappa, self.model, self.rule = n, kappa, model, rule
        self.nodes = n - (kappa if kappa > 0 else -kappa - 1) - 1
        self.basis, self.cavity_factor, self.size_step = basis, cavity_factor, size_step
        self.cache: dict[float, _Point] = {}
        self.bar = bar

    def basis_at(self, Z: float) -> dict:
        b = dict(self.basis)
        if self.size_step:
            b["size"] = min(b.get("size", DEFAULT_SIZE["bspline"]) + self.size_step, MAX_SIZE)
        if self.cavity_factor != 1.0:
            b["r_max"] = self.cavity_factor * b.get("r_max", DEFAULT_R_MAX_TIMES_Z / Z)
        return b

    def ion(self, Z: float) -> dict:
        return {"Z": Z, "nucleus": self.model, "rms_radius_fm": rms_radius_of_mass_fm(self.rule(Z))}

    def __call__(self, Z: float) -> _Point:
        Z = float(Z)
        if Z in self.cache:
            return self.cache[Z]
        sol = solve(ion=self.ion(Z), basis=self.basis_at(Z), solve={"kappas": [self.kappa]})
        point = _Point(Z, _level_offset(sol, self.kappa, self.nodes), sol.config.to_dict()["basis"])
        self.cache[Z] = point
        if self.bar is not None:
            self.bar.set_postfix_str(f"Z = {Z:.10g}", refresh=False)
            self.bar.update(1)
        return point

    def g(self, Z: float) -> float:
        """f for brentq: a dived point without a continued root counts as far below (-c^2)."""
        f = self(Z).f
        return -C * C if f is None else f


def _level_offset(sol, kappa: int, nodes: int) -> float | None:
    """eps + 2c^2 of the root with ``nodes`` nodes of P: in the gap, else continued below -2c^2."""
    spec = sol[kappa]
    e = spec.energies
    two_c2 = 2.0 * C * C
    gap = np.flatnonzero((e > -two_c2) & (e < 0) & (spec.nodes == nodes))
    if gap.size:
        i = gap[np.argmin(spec.balance_residual[gap])]  # one physical level; a flagged intruder has a large residual
        return float(e[i] + two_c2)
    below = np.flatnonzero(e <= -two_c2)[-CONTINUATION_ROOTS:]
    if below.size == 0:
        return None
    P, Q = sol.sample(kappa, below, "PQ")
    w = sol.grid[1]
    weight = (w @ P**2) / (w @ (P**2 + Q**2))
    ok = (count_nodes(P, w) == nodes) & (weight >= CONTINUATION_P_WEIGHT)
    if not ok.any():
        return None
    i = below[ok][np.argmax(weight[ok])]
    return float(_refined(sol, kappa, i) + two_c2)


def _refined(sol, kappa: int, i: int) -> float:
    """Root i refined by inverse iteration (solve() refines only the gap -2c^2 < eps < 0)."""
    basis, spec = sol.bases[kappa], sol[kappa]
    H, S = basis.matrices(sol.table, sol.nucleus.potential(sol.table.r))
    system = Eigensystem(spec.energies.copy(), spec.vectors.copy(), np.zeros(len(spec), dtype=bool))
    out = refine(system, H, S, np.array([i]), basis.band_order())
    j = np.flatnonzero(out.refined)
    return float(out.energies[j[0]]) if j.size else float(spec.energies[i])


def _bracket_from_below(search: _Search, Z0: float) -> tuple[float, float]:
    """(lo, hi) with f(lo) > 0 and hi dived, by secant steps upward from Z0."""
    a = search(Z0)
    if a.f is None or a.f <= 0:
        raise PhysicsRangeError(f"{orbital_label(search.n, search.kappa)} is not in the gap at Z = {Z0:.6g}: "
                                "the search starts there and needs the level bound; try a larger basis (basis.size)")
    b = search(Z0 + 0.05 * Z0)
    while b.f is not None and b.f > 0:
        slope = (b.f - a.f) / (b.Z - a.Z)
        step = -b.f / slope if slope < 0 else 0.1 * b.Z
        # concave eps(Z): the secant from below overshoots a little, which brackets the root
        Z_new = b.Z + min(max(step * 1.02, 1e-3), 0.3 * b.Z)
        if Z_new > Z_SEARCH_LIMIT:
            raise PhysicsRangeError(f"{orbital_label(search.n, search.kappa)} is still above eps = -2c^2 at "
                                    f"Z = {b.Z:.6g}; no critical charge below {Z_SEARCH_LIMIT:g}")
        a, b = b, search(Z_new)
    return a.Z, b.Z


def _root(search: _Search, lo: float, hi: float) -> float:
    return optimize.brentq(search.g, lo, hi, xtol=XTOL, rtol=4 * np.finfo(float).eps, maxiter=200)


def _bracket_near(search: _Search, Z: float) -> tuple[float, float]:
    """A bracket around a known estimate Z for another basis (widened until f changes sign)."""
    d = 1e-4
    while d < 0.1 * Z:
        lo, hi = search(Z - d), search(Z + d)
        if lo.f is not None and lo.f > 0 and (hi.f is None or hi.f < 0):
            return lo.Z, hi.Z
        d *= 10
    raise PhysicsRangeError(f"the check basis finds no critical charge within 10 % of Z = {Z:.8g}")


def _verified_slope(search: _Search, Z: float, h: float = 1e-3) -> float:
    """d eps/dZ at the root Z by central differences, after checking that Z is a smooth zero crossing.

    The level must be found on both sides (in the gap at Z - h, continued below -2c^2 at Z + h)
    with f(Z - h) > 0 > f(Z + h), the two one-sided slopes must agree to 1 % (the curvature of
    eps(Z) changes them by about 3e-5 here), and no evaluation below Z may have lost the level
    or above Z have found it in the gap.  Otherwise the node tracking has failed somewhere
    (e.g. a level mistaken for another) and PhysicsRangeError is raised rather than a number.
    """
    down, mid, up = search(Z - h).f, search(Z).f, search(Z + h).f
    label = orbital_label(search.n, search.kappa)
    bad = [p.Z for p in search.cache.values()
           if (p.Z < Z - XTOL and (p.f is None or p.f <= 0)) or (p.Z > Z + XTOL and p.f is not None and p.f > 0)]
    smooth = down is not None and up is not None and mid is not None and down > 0 > up
    if smooth:
        s1, s2 = (mid - down) / h, (up - mid) / h
        smooth = abs(s1 - s2) <= 0.01 * abs(s1 + s2) / 2
    if bad or not smooth:
        where = f"; inconsistent at Z = {', '.join(f'{z:.8g}' for z in sorted(bad)[:3])}" if bad else ""
        raise PhysicsRangeError(f"{label}: no smooth zero crossing of eps + 2c^2 found near Z = {Z:.10g} "
                                f"(the node tracking lost the level{where}); try a larger basis (basis.size)")
    return (up - down) / (2 * h)


# ----------------------------------------------------------------------------- entry point


def critical_charge(nucleus: str = "fermi", mass_number=None, n: int = 1, kappa: int = -1, *,
                    basis: dict | None = None, progress: bool = False, rule: MassRule | None = None) -> CriticalCharge:
    """Critical charge Z_cr of the level (n, kappa): where its binding energy reaches -2c^2.

    ``nucleus``: 'sphere', 'gauss' or 'fermi' (a point nucleus has none: InputError).
    ``mass_number``: None for A = 2.5 Z (DEFAULT_A_PER_Z), a number (fixed A), or a callable of
    the real charge Z returning A (need not be an integer); the rms radius is
    0.836 A^(1/3) + 0.570 fm.  ``basis``: [basis] overrides of the primary basis (BASIS_KEYS);
    the check basis has CHECK_SIZE_STEP more splines and CHECK_CAVITY_FACTOR times the cavity.
    ``progress`` shows a tqdm bar of the solves.  ``rule`` (a :class:`MassRule`) replaces
    ``mass_number`` (the command line's --a-per-z).  See the module docstring for the method.

    Parameters
    ----------
    nucleus : {'sphere', 'gauss', 'fermi'}
        The finite nuclear model.
    mass_number : None, float or callable
        A = 2.5 Z (None), a fixed A, or a function of the real charge Z returning A.
    n, kappa : int
        The level: n >= l + 1, kappa = -(l+1) or +l (default 1s1/2).
    basis : dict, optional
        [basis] keys of the primary basis (BASIS_KEYS), e.g. ``{"size": 120}``.
    progress : bool
        A progress bar of the solves on stderr.
    rule : MassRule, optional
        Replaces ``mass_number`` (see :func:`per_z_rule`).

    Returns
    -------
    CriticalCharge
        Z_cr, its check in a larger basis, the slope d eps / dZ there and the settings used.

    Raises
    ------
    InputError
        A bad argument, or a level that has no critical charge in the searched range.
    """
    t0 = time.perf_counter()
    n, kappa = _check_level(n, kappa)
    model = _check_model(nucleus)
    rule = rule if rule is not None else mass_rule(mass_number)
    overrides = _check_basis(basis)
    bar = None
    if progress:
        from tqdm import tqdm

        bar = tqdm(desc=f"critical charge {orbital_label(n, kappa)}", unit="solve", leave=False)
    try:
        main = _Search(n, kappa, model, rule, overrides, 1.0, 0, bar)
        lo, hi = _bracket_from_below(main, abs(kappa) * C)
        Z = _root(main, lo, hi)
        slope = _verified_slope(main, Z)
        check = _Search(n, kappa, model, rule, overrides, CHECK_CAVITY_FACTOR, CHECK_SIZE_STEP, bar)
        Z_check = _root(check, *_bracket_near(check, Z))
        _verified_slope(check, Z_check)
        main_basis, check_basis = main(Z).basis, check(Z_check).basis
    finally:
        if bar is not None:
            bar.close()
    A = rule(Z)
    return CriticalCharge(
        Z=float(Z), uncertainty=float(abs(Z_check - Z) + 2 * XTOL), n=n, kappa=kappa, label=orbital_label(n, kappa),
        nucleus=model, mass_rule=rule.text, A=A, rms_radius_fm=rms_radius_of_mass_fm(A), radius_rule=RADIUS_RULE,
        slope=float(slope), Z_check=float(Z_check), basis=main_basis, check_basis=check_basis, root_tolerance=XTOL,
        evaluations=len(main.cache) + len(check.cache), seconds=time.perf_counter() - t0)
