"""Nuclear charge distributions and the potentials V(r) they make (hartree; r in bohr).

Four models, all with total charge Z and, except the point, a given rms charge radius R_rms:

``point``   rho = Z delta(r);                          V = -Z/r.
``sphere``  uniform ball of radius R = sqrt(5/3) R_rms; V = -Z/(2R) (3 - r^2/R^2) for r <= R,
            -Z/r outside.
``gauss``   rho = Z (eta/pi)^(3/2) exp(-eta r^2), eta = 3/(2 R_rms^2);  V = -Z erf(sqrt(eta) r)/r.
``fermi``   rho = rho0 / (1 + exp((r - c)/a)), skin thickness t = 4 a ln 3 = 2.30 fm (common
            practice), half-density radius c >= 0 fixed by the rms radius.

The sphere radius and the Gauss exponent follow from the definition <r^2> = R_rms^2
(elementary).  Every potential solves Poisson's equation for its density,

    V(r) = -(4 pi / r) int_0^r rho(r') r'^2 dr' - 4 pi int_r^inf rho(r') r' dr',      (*)

and tends to -Z/r far out.  The default rms radius is R_rms = 0.836 A^(1/3) + 0.570 fm
(W. R. Johnson, G. Soff, At. Data Nucl. Data Tables 33, 405 (1985), from memory), with the
default A from :mod:`relbasis.elements`; ``radius = "measured"`` takes the measured radius of
the nuclide (Z, A) from I. Angeli, K. P. Marinova, At. Data Nucl. Data Tables 99, 69 (2013)
instead (:mod:`relbasis.radii`, an optional extra).  Every nucleus records where its radius
came from (``rms_radius_source``), and the output prints it.

Z = 0 means "no nucleus" (a free particle): V = 0 and rho = 0 for every model.
"""

from __future__ import annotations

import math
import numbers
from dataclasses import dataclass, field

import numpy as np
from scipy import optimize, special

from relbasis.constants import BOHR_FM, FM_BOHR
from relbasis.elements import Z_MAX, default_mass_number
from relbasis.errors import InputError, PhysicsRangeError
from relbasis.validate import is_real, suggest

from relbasis.vocabulary import MODELS, RADIUS_CHOICES  # noqa: F401  (the config vocabulary)

# Where a nucleus's rms radius came from, as the output states it (Nucleus.rms_radius_source).
FORMULA_SOURCE = ("formula 0.836 A^(1/3) + 0.570 fm, W. R. Johnson, G. Soff, "
                  "At. Data Nucl. Data Tables 33, 405 (1985)")
USER_SOURCE = "user value, rms_radius_fm"
NO_RADIUS_SOURCE = "none (point nucleus)"
NO_NUCLEUS_SOURCE = "none (no nucleus, Z = 0)"

FERMI_SKIN_THICKNESS_FM: float = 2.30
"""Fermi skin thickness t (10 % to 90 % fall of the density), common practice."""

FERMI_A_FM: float = FERMI_SKIN_THICKNESS_FM / (4.0 * math.log(3.0))
"""Fermi diffuseness a = t / (4 ln 3) in fm (about 0.5234 fm)."""

FERMI_MIN_RMS_FM: float = FERMI_A_FM * math.sqrt(15.0 * special.zeta(5.0) / special.zeta(3.0))
"""Smallest rms radius of the Fermi shape with t = 2.30 fm, reached at c = 0 (about 1.8827 fm).

<r^2> = a^2 * 4! F_4(c/a) / (2! F_2(c/a)) with the complete Fermi–Dirac integrals
F_j(x) = -Li_{j+1}(-e^x); at c = 0, F_j(0) = eta(j+1) = (1 - 2^-j) zeta(j+1), so
<r^2> = 12 a^2 eta(5)/eta(3) = 15 a^2 zeta(5)/zeta(3) (derivation from the definition)."""

# The Fermi function 1/(1+exp(s-x)) (s = r/a, x = c/a) has its poles at s = x + i pi (2k+1):
# all on the line Re s = x, at distance pi from the real axis.  Gauss–Legendre panels of
# width 0.5 next to s = x, growing by a quarter of their distance from x, keep every pole
# outside a Bernstein ellipse of parameter >= 12, so 12 nodes give ~1e-25 per panel.
_GL_NODES, _GL_WEIGHTS = np.polynomial.legendre.leggauss(12)
_PANEL_W0 = 0.5
_PANEL_GROWTH = 0.25
# The density is cut at s = x + 60: the charge beyond, ~exp(-60) (s^2 + 2s + 2), and even the
# fourth moment beyond, ~exp(-60) s^4, are below 1e-18 of the totals, so V = -Z/r exactly there.
_FERMI_CUT = 60.0


RADIUS_RULE = "R_rms = 0.836 A^(1/3) + 0.570 fm"
"""The default radius formula in words (printed by outputs that apply it)."""


def default_rms_radius_fm(A: int) -> float:
    """Default rms charge radius (fm) for mass number A: R_rms = 0.836 A^(1/3) + 0.570.

    Source: W. R. Johnson, G. Soff, At. Data Nucl. Data Tables 33, 405 (1985) (from memory);
    the fit was made for A > 9, lighter nuclei get an extrapolation.
    """
    return rms_radius_of_mass_fm(_check_A(A))


def rms_radius_of_mass_fm(A: float) -> float:
    """The formula of :func:`default_rms_radius_fm` for any real A > 0 (no integer check).

    For mass numbers that follow a smooth rule of a real-valued Z, such as A = 2.5 Z in the
    critical-charge search (:mod:`relbasis.critical`), where A is generally not an integer.
    """
    if not is_real(A) or not (math.isfinite(A) and A > 0):
        raise InputError(f"A = {A!r} must be a finite number > 0 (mass number)")
    return 0.836 * A ** (1.0 / 3.0) + 0.570


# --------------------------------------------------------------------------- validation


def _check_Z(Z) -> float:
    if not is_real(Z):
        raise InputError(f"Z = {Z!r} must be a number (nuclear charge, >= 0)")
    Z = float(Z)
    if not math.isfinite(Z) or Z < 0:
        raise InputError(f"Z = {Z:g} must be finite and >= 0 (0 means no nucleus)")
    return Z


def _check_model(model) -> str:
    if isinstance(model, str) and model in MODELS:
        return model
    hint = suggest(model.lower(), MODELS, cutoff=0.6) if isinstance(model, str) else ""
    raise InputError(f"nucleus = {model!r} is not a nucleus model; valid: {', '.join(MODELS)}{hint}")


def _check_A(A) -> int:
    ok = not isinstance(A, bool) and (
        isinstance(A, numbers.Integral) or (isinstance(A, numbers.Real) and float(A).is_integer())
    )
    if not ok or A < 1:
        raise InputError(f"A = {A!r} must be a positive integer (mass number)")
    return int(A)


def _check_rms(rms) -> float:
    if not is_real(rms):
        raise InputError(f"rms_radius_fm = {rms!r} must be a number (fm)")
    rms = float(rms)
    if not math.isfinite(rms) or rms <= 0:
        raise InputError(f"rms_radius_fm = {rms:g} must be finite and > 0 (fm)")
    return rms


def _check_radius_choice(radius) -> str | None:
    if radius is None or (isinstance(radius, str) and radius in RADIUS_CHOICES):
        return radius
    hint = (suggest(radius.lower(), RADIUS_CHOICES, cutoff=0.6) if isinstance(radius, str) else "") \
        or " (a radius in fm goes in rms_radius_fm)"
    raise InputError(f"radius = {radius!r}: valid are 'formula', 'measured'{hint}")


def _check_r(r) -> np.ndarray:
    r = np.asarray(r, dtype=float)
    if not np.all(r >= 0):  # also catches NaN
        bad = r[~(r >= 0)].flat[0]
        raise InputError(f"radius r = {bad:g} bohr: the potential and density need r >= 0")
    return r


# --------------------------------------------------------------------------- Fermi shape


def _fermi(s: np.ndarray, x: float) -> np.ndarray:
    """1/(1+exp(s-x)) without overflow (expit is accurate in both tails)."""
    return special.expit(x - s)


def _fermi_edges(x: float) -> np.ndarray:
    """Panel edges on [0, x + cut] in s = r/a, dense at s = x and growing geometrically away."""
    reach = max(x, _FERMI_CUT)
    k = np.arange(int(math.log1p(_PANEL_GROWTH * reach / _PANEL_W0) / math.log1p(_PANEL_GROWTH)) + 2)
    d = _PANEL_W0 * ((1 + _PANEL_GROWTH) ** k - 1) / _PANEL_GROWTH  # d_{k+1} = w0 + (1+g) d_k
    up = x + d[d < _FERMI_CUT]
    down = x - d[1:][d[1:] < x]
    return np.unique(np.concatenate([[0.0], down, up, [x + _FERMI_CUT]]))


def _panel_integrals(edges: np.ndarray, x: float, powers: tuple[int, ...]) -> list[np.ndarray]:
    """int f(s) s^p ds over each panel, for each power p (Gauss–Legendre, vectorised)."""
    lo, hi = edges[:-1, None], edges[1:, None]
    s = lo + (hi - lo) * (1 + _GL_NODES) / 2
    fw = _fermi(s, x) * _GL_WEIGHTS * (hi - lo) / 2
    return [np.sum(fw * s**p, axis=1) for p in powers]


def _fermi_mean_r2(x: float) -> float:
    """<s^2> of the Fermi shape with half-density point x (in units of a^2)."""
    m2, m4 = (math.fsum(m) for m in _panel_integrals(_fermi_edges(x), x, (2, 4)))
    return m4 / m2


def _solve_fermi_x(rms_fm: float) -> float:
    """x = c/a such that the Fermi shape with a = FERMI_A_FM has rms radius rms_fm (c >= 0)."""
    target = (rms_fm / FERMI_A_FM) ** 2
    g = lambda x: _fermi_mean_r2(x) - target  # noqa: E731
    if g(0.0) >= 0.0:  # at the minimum to rounding
        return 0.0
    # <r^2> = (3/5) c^2 + (7/5) pi^2 a^2 + O(exp(-c/a)) > (3/5) c^2, so c < sqrt(5/3) R_rms.
    hi = math.sqrt(5.0 / 3.0 * target) + 1.0
    return optimize.brentq(g, 0.0, hi, xtol=1e-300, rtol=4 * np.finfo(float).eps, maxiter=200)


class _FermiTables:
    """Cumulative Poisson integrals of the Fermi shape at the panel edges, in units of a.

    J2(s) = int_0^s f u^2 du and J1(s) = int_s^cut f u du; (*) becomes
    V(r) = -Z/(a J2(cut)) [J2(s)/s + J1(s)],  s = r/a.
    Between edges the partial panels are done with the same Gauss–Legendre rule, so every
    radius costs 2 x 12 evaluations of f, whatever the order and spacing of the radii.
    """

    def __init__(self, x: float):
        self.x = x
        self.edges = _fermi_edges(x)
        p2, p1 = _panel_integrals(self.edges, x, (2, 1))
        n = len(p2)
        # Compensated prefix and suffix sums: every term is positive, so V keeps full precision.
        self.J2 = np.array([math.fsum(p2[:j]) for j in range(n + 1)])
        self.J1 = np.array([math.fsum(p1[j:]) for j in range(n + 1)])
        self.cut = self.edges[-1]

    def potential_over_scale(self, s: np.ndarray) -> np.ndarray:
        """J2(s)/s + J1(s) for 0 <= s < cut (1-d array)."""
        k = np.clip(np.searchsorted(self.edges, s, side="right") - 1, 0, len(self.edges) - 2)
        lo, hi = self.edges[k][:, None], self.edges[k + 1][:, None]
        t = 0.5 * (1 + _GL_NODES)
        sv = s[:, None]
        u2 = lo + (sv - lo) * t  # nodes on [lo, s]
        u1 = sv + (hi - sv) * t  # nodes on [s, hi]
        j2 = self.J2[k] + (s - lo[:, 0]) / 2 * ((_fermi(u2, self.x) * u2**2) @ _GL_WEIGHTS)
        j1 = self.J1[k + 1] + (hi[:, 0] - s) / 2 * ((_fermi(u1, self.x) * u1) @ _GL_WEIGHTS)
        with np.errstate(invalid="ignore", divide="ignore"):
            inner = np.where(s > 0, j2 / s, 0.0)
        return inner + j1


# --------------------------------------------------------------------------- the nucleus


@dataclass(frozen=True)
class Nucleus:
    """A nuclear charge distribution and its potential.

    Build it with :func:`make_nucleus` (or directly: the same defaults and checks apply).
    ``A`` defaults to the element table, ``rms_radius_fm`` to 0.836 A^(1/3) + 0.570 fm, or with
    ``radius = "measured"`` to the measured radius of (Z, A) (Angeli and Marinova 2013); the
    point model has ``rms_radius_fm = None``.  ``rms_radius_kind`` is "formula", "measured",
    "user" (rms_radius_fm given) or None (no radius), ``rms_radius_source`` the one-line text
    the output prints (with the reference), ``rms_radius_uncertainty_fm`` the uncertainty of a
    measured radius (else None).  Derived parameters (bohr) are filled in:
    ``sphere_radius_bohr`` (sphere), ``gauss_exponent`` (eta in bohr^-2, gauss),
    ``fermi_c_bohr`` and ``fermi_a_bohr`` (fermi); the others are None.  With Z = 0 there is
    no charge and no derived parameter.
    """

    Z: float
    model: str = "fermi"
    A: int | None = None
    rms_radius_fm: float | None = None
    radius: str | None = None  # None: the formula
    rms_radius_kind: str | None = field(init=False, default=None)
    rms_radius_source: str = field(init=False, default=NO_RADIUS_SOURCE)
    rms_radius_uncertainty_fm: float | None = field(init=False, default=None)
    sphere_radius_bohr: float | None = field(init=False, default=None)
    gauss_exponent: float | None = field(init=False, default=None)
    fermi_c_bohr: float | None = field(init=False, default=None)
    fermi_a_bohr: float | None = field(init=False, default=None)

    def __post_init__(self):
        set_ = lambda name, value: object.__setattr__(self, name, value)  # noqa: E731 (frozen)
        Z = _check_Z(self.Z)
        model = _check_model(self.model)
        A = None if self.A is None else _check_A(self.A)
        rms = None if self.rms_radius_fm is None else _check_rms(self.rms_radius_fm)
        choice = _check_radius_choice(self.radius)
        integral_Z = Z.is_integer()
        if A is not None and integral_Z and A < Z:
            raise InputError(f"A = {A} is below Z = {Z:g}: the mass number counts the protons too")
        if model == "point" and rms is not None:
            raise InputError(f"rms_radius_fm = {rms:g} given with nucleus = 'point', which has no size; "
                             "drop it or choose 'sphere', 'gauss' or 'fermi'")
        if choice is not None and rms is not None:
            raise InputError(f"rms_radius_fm = {rms:g} and radius = {choice!r} both say where the rms radius "
                             "comes from: drop one of them")
        if choice is not None and (model == "point" or Z == 0):
            why = "Z = 0 has no nucleus" if Z == 0 else "nucleus = 'point' has no size"
            raise InputError(f"radius = {choice!r} given, but {why}; drop it or choose a finite nucleus "
                             "('sphere', 'gauss' or 'fermi')")
        finite = model != "point" and Z > 0
        needs_A = finite and rms is None
        # A from the table: recorded for output whenever the table has Z, and required (with
        # the table's InputError outside 1..118) when the default radius needs it.
        A_given = A is not None
        if A is None and integral_Z and Z >= 1 and (needs_A or Z <= Z_MAX):
            A = default_mass_number(int(Z))
        kind, source, unc = (None, NO_NUCLEUS_SOURCE if Z == 0 else NO_RADIUS_SOURCE, None)
        if rms is not None:
            kind, source = "user", USER_SOURCE
        if needs_A:
            if A is None:
                raise InputError(
                    f"no default mass number for non-integer Z = {Z:g}: give A or rms_radius_fm in [ion]"
                )
            if choice == "measured":
                if not integral_Z:
                    raise InputError(f"radius = 'measured' needs a whole Z (a nuclide), not Z = {Z:g}; "
                                     "give rms_radius_fm or radius = 'formula'")
                rms, unc, source = _measured(int(Z), A, A_given)
                kind = "measured"
                rms_note = f" ({source})"
            else:
                rms, kind, source = default_rms_radius_fm(A), "formula", FORMULA_SOURCE
                rms_note = f" (the default 0.836 A^(1/3) + 0.570 fm for A = {A})"
        else:
            rms_note = ""
        set_("Z", Z)
        set_("model", model)
        set_("A", A)
        set_("rms_radius_fm", rms)
        set_("radius", choice)
        set_("rms_radius_kind", kind)
        set_("rms_radius_source", source)
        set_("rms_radius_uncertainty_fm", unc)
        if not finite:
            return
        r_bohr = rms * FM_BOHR
        if model == "sphere":
            set_("sphere_radius_bohr", math.sqrt(5.0 / 3.0) * r_bohr)
        elif model == "gauss":
            set_("gauss_exponent", 1.5 / r_bohr**2)
        else:
            if rms < FERMI_MIN_RMS_FM:
                raise InputError(
                    f"rms_radius_fm = {rms:g}{rms_note} is below {FERMI_MIN_RMS_FM:.5f} fm, the smallest "
                    f"rms radius a Fermi nucleus with skin thickness {FERMI_SKIN_THICKNESS_FM:.2f} fm can have (c = 0): "
                    "use nucleus = 'sphere' or 'gauss' for this light nucleus"
                )
            x = _solve_fermi_x(rms)
            a = FERMI_A_FM * FM_BOHR
            set_("fermi_a_bohr", a)
            set_("fermi_c_bohr", x * a)
            object.__setattr__(self, "_fermi_tables", _FermiTables(x))

    # ------------------------------------------------------------------ physics

    def potential(self, r) -> np.ndarray:
        """V(r) in hartree at radii r (bohr, >= 0, any shape); finite at r = 0 for finite models.

        point:  -Z/r (-inf at r = 0).
        sphere: -Z/(2R)(3 - r^2/R^2) for r <= R, -Z/r beyond.
        gauss:  -Z erf(sqrt(eta) r)/r, with erf(y)/y from its Taylor series for y < 0.01
                (2/sqrt(pi) sum_n (-y^2)^n / (n! (2n+1)), terms to y^10, error < 1e-25).
        fermi:  Poisson integral (*) by composite Gauss–Legendre quadrature (see _FermiTables);
                exactly -Z/r beyond c + 60 a, where the density is below exp(-60) rho0.
        """
        r = _check_r(r)
        Z = self.Z
        if Z == 0:
            return np.zeros_like(r)
        with np.errstate(divide="ignore"):
            coulomb = -Z / r
        if self.model == "point":
            return coulomb
        if self.model == "sphere":
            R = self.sphere_radius_bohr
            return np.where(r <= R, -Z / (2 * R) * (3 - (r / R) ** 2), coulomb)
        if self.model == "gauss":
            b = math.sqrt(self.gauss_exponent)
            y = b * r
            y2 = y * y
            series = sum((-y2) ** n / (math.factorial(n) * (2 * n + 1)) for n in range(5, -1, -1))
            with np.errstate(invalid="ignore", divide="ignore"):
                ratio = np.where(y < 0.01, 2 / math.sqrt(math.pi) * series, special.erf(y) / y)
            return -Z * b * ratio
        # fermi
        tables: _FermiTables = self._fermi_tables
        a = self.fermi_a_bohr
        s = (r / a).ravel()
        inside = s < tables.cut
        V = coulomb.ravel().copy()
        V[inside] = -Z / (a * tables.J2[-1]) * tables.potential_over_scale(s[inside])
        return V.reshape(r.shape)

    def charge_density(self, r) -> np.ndarray:
        """rho(r) (charge per bohr^3), normalised so that 4 pi int rho r^2 dr = Z.

        sphere: 3Z/(4 pi R^3) for r <= R, else 0;  gauss: Z (eta/pi)^(3/2) exp(-eta r^2);
        fermi: Z/(4 pi a^3 J2) / (1 + exp((r-c)/a)) with J2 = int_0^inf f s^2 ds from the same
        quadrature as the potential.  Zero everywhere for Z = 0.  A point nucleus is Z delta(r),
        which no array of values represents: it raises PhysicsRangeError.
        """
        r = _check_r(r)
        if self.Z == 0:
            return np.zeros_like(r)
        if self.model == "point":
            raise PhysicsRangeError("nucleus = 'point' has no charge density function (it is Z delta(r)); "
                                    "choose 'sphere', 'gauss' or 'fermi'")
        if self.model == "sphere":
            R = self.sphere_radius_bohr
            return np.where(r <= R, 3 * self.Z / (4 * math.pi * R**3), 0.0)
        if self.model == "gauss":
            eta = self.gauss_exponent
            return self.Z * (eta / math.pi) ** 1.5 * np.exp(-eta * r * r)
        tables: _FermiTables = self._fermi_tables
        a = self.fermi_a_bohr
        rho0 = self.Z / (4 * math.pi * a**3 * tables.J2[-1])
        return rho0 * _fermi(r / a, tables.x)

    @property
    def radius_bohr(self) -> float:
        """Edge radius for placing a knot: sphere R, fermi c, gauss sqrt(5/3) R_rms; 0 for point or Z = 0."""
        if self.sphere_radius_bohr is not None:
            return self.sphere_radius_bohr
        if self.fermi_c_bohr is not None:
            return self.fermi_c_bohr
        if self.gauss_exponent is not None:
            return math.sqrt(5.0 / 3.0) * self.rms_radius_fm * FM_BOHR
        return 0.0

    def to_dict(self) -> dict:
        """JSON-ready record: Z, A, nucleus, rms_radius_fm, where the radius came from, and the
        model's parameters in fm."""
        out = {
            "Z": int(self.Z) if self.Z.is_integer() else self.Z,
            "A": self.A,
            "nucleus": self.model,
            "rms_radius_fm": self.rms_radius_fm,
            "rms_radius_source": self.rms_radius_source,
            "rms_radius_kind": self.rms_radius_kind,
            "rms_radius_uncertainty_fm": self.rms_radius_uncertainty_fm,
        }
        if self.sphere_radius_bohr is not None:
            out["sphere_radius_fm"] = self.sphere_radius_bohr * BOHR_FM
        if self.gauss_exponent is not None:
            out["gauss_exponent_per_fm2"] = self.gauss_exponent * FM_BOHR**2
        if self.fermi_c_bohr is not None:
            out["fermi_c_fm"] = self.fermi_c_bohr * BOHR_FM
            out["fermi_a_fm"] = FERMI_A_FM
            out["fermi_t_fm"] = FERMI_SKIN_THICKNESS_FM
        return out


def _measured(Z: int, A: int, A_given: bool) -> tuple[float, float, str]:
    """(rms radius, uncertainty, source text) of (Z, A) from the measured table."""
    from . import radii
    from .elements import symbol

    m = radii.measured_radius(Z, A)
    sym = symbol(Z)
    which = f"{A}{sym}" if A_given else f"{A}{sym} (default A of {sym})"
    return m.rms_radius_fm, m.uncertainty_fm, (
        f"measured, {which}, uncertainty {m.uncertainty_fm:.4f} fm, {radii.TABLE_REFERENCE}")


def make_nucleus(Z, model: str = "fermi", A: int | None = None, rms_radius_fm: float | None = None,
                 radius: str | None = None) -> Nucleus:
    """Validated :class:`Nucleus`; A defaults to the element table, R_rms to 0.836 A^(1/3) + 0.570 fm
    (or, with ``radius = "measured"``, to the measured radius of (Z, A), :mod:`relbasis.radii`).

    InputError (one line, naming the key) for Z < 0 or not finite, an unknown model, A not a
    positive integer or below Z, rms_radius_fm not finite and > 0, an rms radius with the point
    model, no A for Z outside 1..118 (or non-integer Z) with a finite model and no radius, and
    a Fermi rms radius below FERMI_MIN_RMS_FM (about 1.88 fm: e.g. hydrogen with its default
    1.406 fm), where 'sphere' or 'gauss' must be used.  With ``radius``: a value other than
    "formula" or "measured", a radius given as well as rms_radius_fm, a point nucleus or Z = 0,
    the optional extra not installed, or a nuclide not in the measured table.
    """
    return Nucleus(Z=Z, model=model, A=A, rms_radius_fm=rms_radius_fm, radius=radius)
