"""The registry of basis families: one object per family that says what differs between them.

Everything downstream of the solver (confidence, audit, export, cli) asks the family object of
a resolved config, ``family_of(config)``, instead of branching on the family's name; a new
family adds a subclass here and its own basis module, and touches nothing else.

A family object is stateless: its methods take the resolved :class:`~relbasis.config.BasisSpec`
(``spec``) and, where needed, the quadrature grid (r, w) of a solution.
"""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np


ORIGIN_FACTOR = 4.0
"""For a point nucleus the reduced B-spline basis also starts its knots this much further out, so
that an error from too coarse a grid at the origin (P ~ r^gamma, gamma small at high Z) shows in
the estimate."""


def reduction(size: int) -> int:
    """Functions dropped for the reduced B-spline basis: a tenth of the size, at least 4."""
    return max(4, size // 10)


class BasisFamily:
    """What the code downstream needs to know about a family (subclasses fill it in)."""

    name: str = ""
    has_wall: bool = False
    """True if the functions end at a cavity wall r_max (the cavity-limited levels move with it)."""
    balance_advice: str = "dkb"
    """The balance to suggest when the spectrum has spurious roots."""
    edge_words: tuple[str, str] = ("", "")
    """How :meth:`edge_fractions` measures (near the origin, far out), for the audit's text."""
    always_orthogonalised: bool = False
    """True if canonical orthogonalisation always runs (the tables then say what it dropped)."""

    def describe(self, spec) -> str:
        """The basis in words, for the header of the tables: "bspline, 100 splines of order 10, ..."."""
        raise NotImplementedError

    def wall(self, spec) -> float | None:
        """The cavity radius (bohr), None for a family without a wall."""
        return None

    def quadrature_points(self, spec) -> int:
        """Radial quadrature points of a resolved basis (for the work estimates)."""
        raise NotImplementedError

    def minimum_size(self, spec) -> int:
        """Fewest functions per component that make a sensible basis of this family."""
        raise NotImplementedError

    def resizable(self, spec) -> bool:
        """True if ``size`` alone defines the set (no explicit knots or exponents)."""
        raise NotImplementedError

    def reduced(self, config):
        """The resolved config of the reduced basis of the error estimate, or None."""
        raise NotImplementedError

    def edge_fractions(self, spec, r: np.ndarray, dens: np.ndarray, exponents=None):
        """Share of the norm density ``dens`` (grid points x roots, weights applied) near the
        origin and far out, as the family measures its reach: (first, last) per root."""
        raise NotImplementedError

    def cavity_fix(self, spec, factor: float = 1.5) -> str:
        """Advice that gives the far-out states more room."""
        raise NotImplementedError

    def widened(self, spec, factor: float):
        """(basis spec, words) with the reach widened by ``factor`` in length, or None where the
        basis is given explicitly (relbasis.completeness)."""
        raise NotImplementedError

    def read_layout(self, attrs: dict, reading) -> tuple[str, int | None]:
        """(wall, order) of an exported file's root attributes, checked (``reading``: the
        reader's helpers; raise ``reading.Damaged`` with what is wrong)."""
        return "dirichlet", None

    def read_set(self, reading, attrs: dict, layout, grid):
        """From an exported file: a function (kappa, group name) -> the per-kappa basis that the
        stored coefficients belong to, every entry checked through ``reading``."""
        raise NotImplementedError

    def build_set(self, config, nucleus, c: float):
        """The per-solve set of this family: ``grid`` (r, w), ``wall_radius`` (None without a
        wall), ``threshold``, ``build(kappa)`` -> per-kappa basis, ``sample(basis)``,
        ``node_matrix(basis, sampled)``, ``band_order(basis)``, ``cause()``."""
    # --- for the audit (relbasis.measures, relbasis.checks)

    def exponents_of(self, solution):
        """The exponents of the solution's basis that :meth:`edge_fractions` needs (None if none)."""
        return None

    def overlap_condition(self, solution, kappa: int) -> float:
        """Condition number of the diagonally scaled overlap of symmetry ``kappa``, as the solve
        recorded it (NaN where it made none)."""
        return solution.condition.get(kappa, float("nan"))

    def reach_advice(self, spec, exponents, max_n: int, share: float) -> str:
        """Advice when the bound states n <= max_n reach beyond the basis (norm share ``share``
        measured by :meth:`edge_fractions`)."""
        raise NotImplementedError


class BSplineFamily(BasisFamily):
    """B-splines on a knot sequence in [0, r_max]: a hard wall at the cavity radius."""

    name = "bspline"
    has_wall = True
    balance_advice = "dkb"
    edge_words = ("in the first three knot intervals", "in the last three knot intervals")

    def minimum_size(self, spec) -> int:
        return int(spec.order) + 4

    def describe(self, spec) -> str:
        knots = spec.knots if isinstance(spec.knots, str) else "given"
        return (f"bspline, {spec.size} splines of order {spec.order}, {knots} knots r_min = {spec.r_min:.3g}, "
                f"r_max = {spec.r_max:.4g} bohr, balance = {spec.balance}, wall = {spec.wall}")

    def wall(self, spec) -> float | None:
        return float(spec.r_max)

    def quadrature_points(self, spec) -> int:
        if isinstance(spec.knots, tuple):
            intervals = len(spec.knots) - 1
        else:
            intervals = int(spec.size) - int(spec.order) + 1  # surface breakpoints replace others (build_splines)
        return intervals * int(spec.quadrature)

    def resizable(self, spec) -> bool:
        return not isinstance(spec.knots, tuple)

    def reduced(self, config):
        """``size`` lowered by :func:`reduction` (same knot rule, r_min, r_max, order); for a point
        nucleus the first knot also moves out by ORIGIN_FACTOR; explicit breakpoints: every fifth
        interior breakpoint removed."""
        b = config.basis
        if isinstance(b.knots, tuple):
            pts = list(b.knots)
            inner = pts[1:-1]
            keep = [x for j, x in enumerate(inner) if j % 5 != 2]
            if len(keep) == len(inner) or len(keep) < 1:
                return None
            knots = (pts[0], *keep, pts[-1])
            size = len(knots) - 1 + b.order - 1
            if size < b.order + 4:
                return None
            return replace(config, basis=replace(b, knots=knots, size=size))
        size = b.size - reduction(b.size)
        if size < b.order + 4:
            return None
        r_min = b.r_min
        if config.ion.nucleus == "point" and float(config.ion.Z) > 0:
            r_min = min(b.r_min * ORIGIN_FACTOR, b.r_max / 1e3)  # a point nucleus: r^gamma needs the first knot
        return replace(config, basis=replace(b, size=size, r_min=r_min))

    def edge_fractions(self, spec, r, dens, exponents=None):
        nq = int(spec.quadrature)
        return dens[: 3 * nq].sum(axis=0), dens[-3 * nq:].sum(axis=0)

    def cavity_fix(self, spec, factor: float = 1.5) -> str:
        return f"raise r_max to {factor * spec.r_max:.4g} bohr"

    def widened(self, spec, factor: float):
        if isinstance(spec.knots, tuple):
            return None
        return replace(spec, r_max=factor * spec.r_max), f"basis.r_max = {factor * spec.r_max:.4g}"

    def read_layout(self, attrs, reading):
        from .config import MAX_ORDER
        from .vocabulary import WALLS

        wall = attrs.get("wall", "")
        wall = "dirichlet" if isinstance(wall, str) and wall == "" else wall
        if not isinstance(wall, str) or wall not in WALLS:
            raise reading.Damaged(f"has wall = {reading.show(wall)}; valid are {', '.join(WALLS)}")
        order = attrs.get("order")
        if not reading.is_int(order) or not 2 <= order <= MAX_ORDER:
            raise reading.Damaged(f"has order = {reading.show(order)}: expected a B-spline order, an integer from 2 "
                                  f"to {MAX_ORDER}")
        return wall, order

    def read_set(self, reading, attrs, layout, grid):
        """The knots (checked: enough, non-decreasing, no knot more than order times, from 0),
        then per kappa the recorded function families and their spline indices."""
        from .bspline import BSplineBasis
        from .dirac import FAMILY_KINDS, DiracBasis, Family

        order = layout.order
        t = reading.finite("basis/knots", reading.array("basis/knots", "f", (None,), "(splines + order,)"))
        if t.size < 2 * order + 1:
            raise reading.Damaged(f"entry 'basis/knots' has {t.size} knots, fewer than 2 * order + 1 = {2 * order + 1}")
        reading.first("basis/knots", np.diff(t) < 0, "decreases", "expected a non-decreasing knot sequence")
        reading.first("basis/knots", t[order:] <= t[:-order], f"repeats a knot more than order = {order} times")
        if t[0] < 0:
            raise reading.Damaged(f"entry 'basis/knots' starts at {t[0]:g} < 0")
        splines = BSplineBasis(t, order)
        if grid[-1] > splines.r_max:
            raise reading.Damaged(f"entry 'grid/r' reaches {grid[-1]:g} bohr, beyond the last knot "
                                  f"r_max = {splines.r_max:g}")

        def rebuild(kappa: int, g: str):
            kinds = reading.array(f"{g}/family_kinds", "s", (None,), "(families,)")
            expected = FAMILY_KINDS[layout.balance]
            if tuple(kinds) != expected:
                raise reading.Damaged(f"entry '{g}/family_kinds' is {reading.show(list(kinds))}, expected "
                                      f"{list(expected)} for balance {layout.balance!r}")
            radius = attrs.get(f"{g}/balance_radius", 0.0)
            if not (reading.finite_real(radius) and radius >= 0):
                raise reading.Damaged(f"has {g}/balance_radius = {reading.show(radius)}: expected a finite length "
                                      ">= 0 (bohr)")
            fams = []
            for i, kind in enumerate(kinds):
                name = f"{g}/family_{i}_splines"
                idx = reading.array(name, "i", (None,), "(functions,)")
                if idx.size == 0 or idx.min() < 0 or idx.max() >= splines.size or np.any(np.diff(idx) <= 0):
                    raise reading.Damaged(f"entry {name!r} must hold increasing spline indices from 0 to "
                                          f"{splines.size - 1}")
                fams.append(Family(str(kind), idx.astype(np.int64), float(radius)))
            return DiracBasis(splines, kappa, layout.balance, layout.c, tuple(fams), layout.wall)

        return rebuild

    def build_set(self, config, nucleus, c: float):
        """What a solve of a resolved config shares across symmetries (:class:`relbasis.dirac.SplineSet`)."""
        from .dirac import SplineSet, build_splines

        b = config.basis
        splines = build_splines(config, nucleus)
        return SplineSet(splines, splines.quadrature(b.quadrature), splines.quadrature(1), b.balance, c,
                         float(nucleus.Z) if nucleus.model == "point" else 0.0, b.wall, b.overlap_threshold)
    def overlap_condition(self, solution, kappa: int) -> float:
        """The recorded figure, or (where the solve made none) the overlap assembled again from
        the solution's Gauss–Legendre table and its eigenvalues computed here."""
        cond = solution.condition.get(kappa, float("nan"))
        if not np.isfinite(cond):
            import scipy.linalg as sl

            table = solution.table
            _, S = solution.bases[kappa].matrices(table, np.zeros_like(table.r))
            d = 1 / np.sqrt(np.diag(S))
            s = sl.eigvalsh(S * d[:, None] * d[None, :])
            cond = s[-1] / s[0] if s[0] > 0 else float("inf")
        return cond

    def reach_advice(self, spec, exponents, max_n: int, share: float) -> str:
        return (f"raise r_max to {2 * spec.r_max:.3g} bohr: the bound states n <= {max_n} reach the wall "
                f"(norm share {share:.1e})")


class GaussianFamily(BasisFamily):
    """Gaussians r^(l+1) exp(-zeta r^2) of given or even-tempered exponents: no wall; the most
    diffuse exponent sets the reach, the tightest the resolution near the nucleus."""

    name = "gaussian"
    has_wall = False
    balance_advice = "rkb or dkb"
    edge_words = ("inside 1/sqrt(zeta_max), the reach of the tightest Gaussian",
                  "beyond 3/sqrt(zeta_min), the reach of the most diffuse Gaussian")

    always_orthogonalised = True

    def minimum_size(self, spec) -> int:
        return 6

    def describe(self, spec) -> str:
        if spec.exponents is not None:
            rng = f"given exponents {min(spec.exponents):.3g}..{max(spec.exponents):.3g}"
        else:
            rng = f"even-tempered exponents {spec.exponent_min:.3g}..{spec.exponent_max:.3g}"
        return f"gaussian, {spec.size} functions per component, {rng} bohr^-2, balance = {spec.balance}"

    def quadrature_points(self, spec) -> int:
        lo = min(spec.exponents) if spec.exponents is not None else float(spec.exponent_min)
        hi = max(spec.exponents) if spec.exponents is not None else float(spec.exponent_max)
        decades = max(math.log10(9.0 / math.sqrt(2.0 * lo) / (1e-3 / math.sqrt(hi))), 1.0)
        return int(16 * (6 * decades + 8))  # 6 panels a decade, 16 points each (gaussian.radial_grid)

    def resizable(self, spec) -> bool:
        return spec.exponents is None

    def reduced(self, config):
        """Even-tempered sets lose their most diffuse exponent and two functions (a point
        nucleus also its tightest); explicit exponents lose every fifth one."""
        b = config.basis
        if b.exponents is not None:
            ex = [x for j, x in enumerate(b.exponents) if j % 5 != 2]
            if len(ex) < 4 or len(ex) == len(b.exponents):
                return None
            return replace(config, basis=replace(b, exponents=tuple(ex), size=len(ex)))
        if b.size < 6:
            return None
        ratio = (b.exponent_max / b.exponent_min) ** (1.0 / (b.size - 1))
        # the set without its most diffuse and its tightest member: what either end holds shows (the
        # diffuse end for Rydberg levels and RKB kappa > 0, the tight end for the origin of a point nucleus)
        # (two fewer functions over the remaining range, so that the spacing coarsens too); the tight
        # end is cut only for a point nucleus, whose r^gamma origin no Gaussian set resolves
        point = config.ion.nucleus == "point"
        size = b.size - (3 if point else 2)
        return replace(config, basis=replace(b, size=size, exponent_min=b.exponent_min * ratio,
                                             exponent_max=b.exponent_max / ratio if point else b.exponent_max))

    def edge_fractions(self, spec, r, dens, exponents=None):
        ex = np.asarray(exponents if exponents is not None else spec.exponents, dtype=float)
        first = dens[r < 1 / np.sqrt(ex.max())].sum(axis=0)
        last = dens[r > 3 / np.sqrt(ex.min())].sum(axis=0)
        return first, last

    def cavity_fix(self, spec, factor: float = 10.0) -> str:
        zmin = spec.exponent_min if spec.exponents is None else min(spec.exponents)
        return f"lower exponent_min to {zmin / factor:.3g}"

    def widened(self, spec, factor: float):
        """The reach of the most diffuse Gaussian goes as zeta_min^(-1/2)."""
        if spec.exponents is not None:
            return None
        zmin = spec.exponent_min / factor**2
        return replace(spec, exponent_min=zmin), f"basis.exponent_min = {zmin:.4g}"

    def read_set(self, reading, attrs, layout, grid):
        """The exponents (checked: finite, positive, not empty); every kappa follows from them."""
        from .dirac_gaussian import GaussianDiracBasis

        exps = reading.finite("basis/exponents", reading.array("basis/exponents", "f", (None,), "(Gaussians,)"))
        reading.first("basis/exponents", ~(exps > 0), "holds an exponent <= 0", "expected positive exponents (bohr^-2)")
        if exps.size == 0:
            raise reading.Damaged("entry 'basis/exponents' is empty")
        return lambda kappa, g: GaussianDiracBasis.build(exps, kappa, layout.balance, layout.c)

    def build_set(self, config, nucleus, c: float):
        """What a solve of a resolved config shares across symmetries (:class:`relbasis.dirac_gaussian.GaussianSet`)."""
        from .dirac_gaussian import GaussianDiracBasis, GaussianSet
        from .eigen import DEFAULT_THRESHOLD
        from .gaussian import even_tempered

        b = config.basis
        exps = (np.asarray(b.exponents, dtype=float) if b.exponents is not None
                else even_tempered(b.size, b.exponent_min, b.exponent_max))
        grid = GaussianDiracBasis.build(exps, -1, b.balance, c).grid(nucleus)
        threshold = b.overlap_threshold if b.overlap_threshold is not None else DEFAULT_THRESHOLD
        return GaussianSet(exps, grid, b.balance, c, threshold)
    def exponents_of(self, solution):
        return solution.bases[solution.kappas[0]].exponents

    def reach_advice(self, spec, exponents, max_n: int, share: float) -> str:
        return (f"lower exponent_min to {min(exponents) / 10:.3g}: the bound states n <= {max_n} reach beyond "
                f"the most diffuse Gaussian (norm share {share:.1e} beyond 3/sqrt(zeta_min))")


REGISTRY: dict[str, BasisFamily] = {f.name: f for f in (BSplineFamily(), GaussianFamily())}
"""Every family by its config name (``[basis] family``)."""


def family_of(config_or_spec) -> BasisFamily:
    """The family object of a config, a basis spec or a family name."""
    name = config_or_spec if isinstance(config_or_spec, str) else getattr(
        getattr(config_or_spec, "basis", config_or_spec), "family")
    return REGISTRY[name]
