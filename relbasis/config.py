"""Run configuration: the TOML file (or mapping) documented in docs/config.md, validated, with defaults resolved.

```toml
[ion]
Z = 92                 # nuclear charge (required)
A = 238                # mass number (optional; a default per element otherwise)
nucleus = "fermi"      # "point" | "sphere" | "gauss" | "fermi"
rms_radius_fm = 5.86   # optional; otherwise 0.836 A^(1/3) + 0.570 fm
radius = "formula"     # "formula" | "measured" (Angeli and Marinova 2013; without rms_radius_fm)

[basis]
family = "bspline"
size = 100             # B-splines spanned by the knots, before boundary conditions
order = 10             # polynomial degree + 1
r_min = 1e-6           # first non-zero knot (bohr)
r_max = 40.0           # cavity radius (bohr)
r_scale = 0.2          # log-linear knots: where the spacing turns from geometric to even (bohr)
knots = "log-linear"   # "log-linear" | "exponential" | [explicit breakpoints in bohr]
balance = "dkb"        # "none" | "dkb"
quadrature = 14        # Gauss–Legendre points per knot interval

[solve]
kappas = [-1, 1, -2, 2, -3, 3, -4, 4]

[electrons]            # optional: a mean-field model (relbasis.electrons); absent: the bare nucleus
core = "[Rn]"          # closed subshells (86 electrons)
valence = "7s1/2"      # optional: one electron outside the core (U5+ with Z = 92)
```

Every key is checked: an unknown key names the likely intended one, a wrong type or a value out
of range names the key and what is valid.  Defaults that depend on the ion (r_min, r_max,
r_scale) are filled in by :func:`resolve`, so that a user who gives only Z gets the accuracy
the test-suite checks (relative 1e-11 on point-nucleus levels with n <= 4 up to Z = 100).
"""

from __future__ import annotations

import math
import numbers
import tomllib
import warnings

import numpy as np
from dataclasses import asdict, dataclass, field, replace
from pathlib import Path

from typing import TYPE_CHECKING

from . import validate
from .constants import C, FM_BOHR
from .electrons import KEYS as ELECTRON_KEYS, Electrons, parse_electrons
from .errors import ConfigError, InputError
from .outputs import checked_path, read_input
from .validate import suggest
from .vocabulary import BALANCES_OF, DEFAULT_SIZES, FAMILIES, KEY_STYLES, KNOT_KINDS, MODELS, RADIUS_CHOICES, WALLS, orbital_l
from .vocabulary import BALANCES, GAUSSIAN_BALANCES  # noqa: F401  (public here too, as before)

if TYPE_CHECKING:  # annotations only; resolving a config imports nucleus inside the functions that need it
    from .nucleus import Nucleus

DEFAULT_SIZE = DEFAULT_SIZES  # per family (relbasis.vocabulary)
DEFAULT_CAVITY = 250.0
"""Default cavity radius times Z (bohr): r_max = 250/Z with the default 100 splines holds the
point-nucleus levels n <= 7 of |kappa| <= 4 to 2e-12 (Z <= 100) and 1e-10 (Z = 118); the
earlier 150/Z (90 splines) left n = 6 at 1e-8 and n = 7 at 1e-5 (docs/convergence.md)."""
ATOM_CAVITY = 55.0
"""Default cavity (bohr) of a config with electrons, divided by the charge an outer electron sees
(Z - N_core for a valence electron, Z - N + 1 for the outermost core electron).  Measured with
the default 100 exponential knots (docs/dhf.md): Cs [Xe] 6s passes the audit at 55 bohr (the
6s holds 3e-6 of its norm in the last three knot intervals at 40 bohr, 3e-8 at 50); at 60 bohr
the knots grow too wide for the n = 9 pseudo-state, whose nodes they no longer resolve."""


def default_cavity(Z: float, electrons=None) -> float:
    """The default r_max (bohr): 250/Z for one electron, ATOM_CAVITY / (charge seen) with a core."""
    if electrons is None:
        return DEFAULT_CAVITY / Z
    seen = Z - electrons.core_electrons + (0 if electrons.valence is not None else 1)
    return max(ATOM_CAVITY / max(seen, 1.0), DEFAULT_CAVITY / Z)


DEFAULT_ORDER = 10
GAUSS_ZMAX_CORE = 1e6  # x Z^2
GAUSS_ZMAX_NUCLEUS = 3.0  # / R_rms^2
MAX_SIZE = 2000
MAX_ORDER = 20
DEFAULT_KAPPAS = (-1, 1, -2, 2, -3, 3, -4, 4)

# Valid ranges of the numeric keys; docs/config.md derives each (a table: key, range, why).
Z_MAX = 1000
"""Largest nuclear charge: the critical-charge search of every level with |kappa| <= 7 starts
below it (at Z = |kappa| c <= 959); at Z = 3000 no level of kappa = -1 or -8 is bound (measured)."""
A_MAX = 3000
"""Largest mass number: the rule A = 2.5 Z of the critical-charge search at Z_MAX, with margin."""
RMS_MIN_FM, RMS_MAX_FM = 1e-3, 1e3
"""rms charge radius (fm): three orders below the proton (0.84 fm), and above the 12 fm of an
A = 2500 nucleus; beyond, a nucleus is numerically a point or larger than any K shell."""
LENGTH_MIN, LENGTH_MAX = 1e-17, 1e8
"""Shortest (r_min, r_scale, first knot) and longest (r_max) length of a B-spline basis (bohr)."""
ROOT_MAX, ROOT_FACTOR = 1e21, 20.0
"""The largest root of H is about ROOT_FACTOR c / r_min hartree (measured 15..20); it must stay
below ROOT_MAX, four orders under the 2e25 at which the levels were still measured right (a
bound level was lost at 2e27)."""
KNOT_SPACING_MIN = 1e-6
"""Smallest spacing of neighbouring knots relative to r: spline values lose EPS/spacing."""
EXPONENT_MIN, EXPONENT_MAX = 1e-16, 1e16
"""Gaussian exponents (bohr^-2): widths from 1e8 bohr (LENGTH_MAX) down to 1e-8 bohr."""
MOMENT_LOG_MAX = 600.0
"""Gaussian overlap integrals int r^n exp(-2 zeta r^2) dr must lie within e^(+-600) (doubles: e^709)."""
KAPPA_MAX = 100
"""Largest |kappa| (l <= 100): partial-wave expansions are carried to a few tens."""
THRESHOLD_MIN, THRESHOLD_MAX = 1e-15, 1e-2
"""overlap_threshold: below ~5 machine epsilons the kept combinations are rounding noise."""


@dataclass(frozen=True)
class IonSpec:
    """The one-electron ion: nuclear charge and model.  ``nucleus=None`` means the default.

    ``radius``: where the rms radius comes from when ``rms_radius_fm`` is not given, "formula"
    (None: the default) or "measured"; a resolved config has it None and the radius itself in
    ``rms_radius_fm`` (its source is in the nucleus record, ``Nucleus.rms_radius_source``).
    """

    Z: float
    A: int | None = None
    nucleus: str | None = None
    rms_radius_fm: float | None = None
    radius: str | None = None


@dataclass(frozen=True)
class BasisSpec:
    """Basis settings; None means "choose from the ion" (see :func:`resolve`)."""

    family: str = "bspline"
    size: int | None = None
    order: int | None = None
    r_min: float | None = None
    r_max: float | None = None
    r_scale: float | None = None
    knots: str | tuple[float, ...] | None = None
    balance: str = "dkb"
    wall: str | None = None
    quadrature: int | None = None
    exponent_min: float | None = None
    exponent_max: float | None = None
    exponents: tuple[float, ...] | None = None
    overlap_threshold: float | None = None


@dataclass(frozen=True)
class SolveSpec:
    kappas: tuple[int, ...] = DEFAULT_KAPPAS


@dataclass(frozen=True)
class Config:
    ion: IonSpec
    basis: BasisSpec = field(default_factory=BasisSpec)
    solve: SolveSpec = field(default_factory=SolveSpec)
    electrons: Electrons | None = None
    """The electrons of a mean-field model ([electrons]); None: the bare nucleus, one electron."""

    def to_dict(self) -> dict:
        """Plain mapping (TOML/JSON-ready; None entries dropped; [electrons] only when set)."""
        out = {}
        for name in ("ion", "basis", "solve"):
            sec = {k: (list(v) if isinstance(v, tuple) else v) for k, v in asdict(getattr(self, name)).items()}
            out[name] = {k: v for k, v in sec.items() if v is not None}
        if self.electrons is not None:
            out["electrons"] = self.electrons.to_dict()
        return out


# ----------------------------------------------------------------------------- validation

_SECTIONS = {"ion": IonSpec, "basis": BasisSpec, "solve": SolveSpec, "electrons": Electrons}
KEYS = {name: ELECTRON_KEYS if cls is Electrons else tuple(cls.__dataclass_fields__) for name, cls in _SECTIONS.items()}
"""Valid keys of each section, e.g. ``KEYS["basis"]`` ([electrons]: its TOML keys, relbasis.electrons.KEYS)."""
_KEYS = KEYS  # the former private name
_suggest = suggest  # the former private name (now relbasis.validate.suggest)


def _real(key: str, value, *, positive: bool = True) -> float:
    return validate.real(key, value, positive=positive, error=ConfigError)


def _within(key: str, value: float, lo: float, hi: float, unit: str = "", why: str = "", *,
            lo_open: bool = False, hi_open: bool = False) -> float:
    """value if lo <= value <= hi (strict where open), else a one-line ConfigError with the range."""
    return validate.within(key, value, lo, hi, unit, why, lo_open=lo_open, hi_open=hi_open, error=ConfigError)


def _integer(key: str, value, minimum: int) -> int:
    return validate.integer(key, value, minimum, error=ConfigError)


def _choice(key: str, value, options) -> str:
    return validate.choice(key, value, options, error=ConfigError)


def _kappas(value) -> tuple[int, ...]:
    if isinstance(value, (str, bytes)) or not hasattr(value, "__iter__"):
        raise ConfigError(f"solve.kappas = {value!r}: must be a list of non-zero integers, e.g. [-1, 1, -2]")
    out = []
    for k in value:
        if isinstance(k, bool) or not isinstance(k, numbers.Integral) or k == 0:
            raise ConfigError(f"solve.kappas: {k!r} is not a valid kappa (a non-zero integer: -(l+1) or +l)")
        if abs(k) > KAPPA_MAX:
            raise ConfigError(f"solve.kappas: kappa = {k}: valid 1 <= |kappa| <= {KAPPA_MAX} (l <= {KAPPA_MAX})")
        if int(k) not in out:
            out.append(int(k))
    if not out:
        raise ConfigError("solve.kappas is empty: give at least one non-zero integer")
    return tuple(out)


def _check_ion(d: dict) -> IonSpec:
    if "Z" not in d:
        raise ConfigError("ion.Z is missing: the nuclear charge is required (e.g. Z = 92)")
    Z = d["Z"]
    if not validate.is_real(Z) or not math.isfinite(float(Z)) or Z < 0:
        raise ConfigError(f"ion.Z = {Z!r}: must be a number >= 0 (0: a free particle in the cavity)")
    _within("ion.Z", float(Z), 0, Z_MAX, why="0: a free particle in the cavity")
    A = None if d.get("A") is None else _integer("ion.A", d["A"], 1)
    if A is not None:
        _within("ion.A", A, 1, A_MAX, why="mass number")
    nucleus = None if d.get("nucleus") is None else _choice("ion.nucleus", d["nucleus"], MODELS)
    rms = None if d.get("rms_radius_fm") is None else _real("ion.rms_radius_fm", d["rms_radius_fm"])
    if rms is not None:
        _within("ion.rms_radius_fm", rms, RMS_MIN_FM, RMS_MAX_FM, "fm", "the proton has 0.84 fm")
    radius = d.get("radius")
    if radius is not None and radius not in RADIUS_CHOICES:
        hint = suggest(radius, RADIUS_CHOICES) or " (a radius in fm goes in ion.rms_radius_fm)"
        raise ConfigError(f"ion.radius = {radius!r}: valid are 'formula', 'measured'{hint}")
    if radius is not None and rms is not None:
        raise ConfigError(f"ion.rms_radius_fm = {rms:g} and ion.radius = {radius!r} both say where the rms "
                          "radius comes from: drop one of them")
    return IonSpec(float(Z) if not float(Z).is_integer() else int(Z), A, nucleus, rms, radius)


_BSPLINE_ONLY = ("order", "r_min", "r_max", "r_scale", "knots", "quadrature", "wall")
_GAUSSIAN_ONLY = ("exponent_min", "exponent_max", "exponents")


def _check_basis(d: dict) -> BasisSpec:
    b = BasisSpec()
    kw = {}
    family = _choice("basis.family", d["family"], tuple(KEY_STYLES)) if "family" in d else b.family
    kw["family"] = family
    knots_style = KEY_STYLES[family] == "knots"
    wrong = [k for k in (_GAUSSIAN_ONLY if knots_style else _BSPLINE_ONLY) if d.get(k) is not None]
    if wrong:
        other = ", ".join(repr(f) for f, st in KEY_STYLES.items() if st != KEY_STYLES[family])
        raise ConfigError(f"basis.{wrong[0]} applies to family = {other}, not {family!r}")
    balances = BALANCES_OF[family]
    if "balance" in d:
        kw["balance"] = _choice("basis.balance", d["balance"], balances)
    if d.get("wall") is not None:
        kw["wall"] = _choice("basis.wall", d["wall"], WALLS)
    if d.get("size") is not None:
        kw["size"] = _integer("basis.size", d["size"], 2)
    if d.get("overlap_threshold") is not None:
        thr = _real("basis.overlap_threshold", d["overlap_threshold"])
        kw["overlap_threshold"] = _within("basis.overlap_threshold", thr, THRESHOLD_MIN, THRESHOLD_MAX,
                                          why="typical 1e-12..1e-8; below, rounding noise is kept", hi_open=True)
    if not knots_style:
        return replace(b, **kw, **_check_exponents(d, kw.get("size")))
    order = _integer("basis.order", d["order"], 2) if d.get("order") is not None else DEFAULT_ORDER
    if order > MAX_ORDER:
        raise ConfigError(f"basis.order = {order}: at most {MAX_ORDER} (rounding grows with the degree)")
    size = kw.get("size", DEFAULT_SIZE["bspline"])
    if size < order + 4:
        raise ConfigError(f"basis.size = {size} is too small for basis.order = {order}: need size >= order + 4 = {order + 4}")
    kw["order"] = order
    for key in ("r_min", "r_max", "r_scale"):
        if d.get(key) is not None:
            kw[key] = _length(f"basis.{key}", _real(f"basis.{key}", d[key]))
    if kw.get("r_min") is not None and kw.get("r_max") is not None and kw["r_min"] >= kw["r_max"]:
        raise ConfigError(f"basis.r_min = {kw['r_min']:g} must be smaller than basis.r_max = {kw['r_max']:g}")
    if "knots" in d:
        knots = d["knots"]
        if isinstance(knots, str):
            kw["knots"] = _choice("basis.knots", knots, KNOT_KINDS)
        elif isinstance(knots, (list, tuple)):
            kw["knots"] = _breakpoints(knots, order)
        else:
            raise ConfigError(f"basis.knots = {knots!r}: give 'log-linear', 'exponential' or a list of breakpoints (bohr)")
    if d.get("quadrature") is not None:
        kw["quadrature"] = _integer("basis.quadrature", d["quadrature"], 2)
        if kw["quadrature"] > 64:
            raise ConfigError(f"basis.quadrature = {kw['quadrature']}: at most 64 points per knot interval")
    return replace(b, **kw)


def _length(key: str, value: float) -> float:
    return _within(key, value, LENGTH_MIN, LENGTH_MAX, "bohr", "double precision and the size of atoms")


def _breakpoints(knots, order: int) -> tuple[float, ...]:
    """Explicit breakpoints: >= 0, strictly increasing, at least 3, inside the length range and
    apart by KNOT_SPACING_MIN relative to r; no more than MAX_SIZE splines."""
    pts = tuple(_real("basis.knots[]", x, positive=False) for x in knots)
    if len(pts) < 3 or any(b2 <= a2 for a2, b2 in zip(pts, pts[1:])) or pts[0] < 0:
        raise ConfigError(f"basis.knots: explicit breakpoints must be >= 0 and strictly increasing, at least 3 "
                          f"(got {len(pts)})")
    first = pts[1] if pts[0] == 0 else pts[0]
    _within("basis.knots[]", first, LENGTH_MIN, LENGTH_MAX, "bohr", "the first non-zero breakpoint")
    _within("basis.knots[]", pts[-1], LENGTH_MIN, LENGTH_MAX, "bohr", "the last breakpoint, the cavity radius")
    x = np.asarray(pts)
    rel = np.diff(x) / x[1:]
    j = int(np.argmin(rel))
    if rel[j] < KNOT_SPACING_MIN:
        raise ConfigError(f"basis.knots: breakpoints {x[j]:.17g} and {x[j + 1]:.17g} are {rel[j]:.1e} apart "
                          f"relative to r; valid spacing >= {KNOT_SPACING_MIN:g} (spline values lose digits)")
    size = len(pts) - 1 + order - 1
    if size > MAX_SIZE:
        raise ConfigError(f"basis.knots: {len(pts)} breakpoints span {size} splines of order {order}; "
                          f"at most {MAX_SIZE} (dense matrices of 2 x size rows)")
    return pts


def _check_exponents(d: dict, size) -> dict:
    kw = {}
    if d.get("exponents") is not None:
        ex = d["exponents"]
        if isinstance(ex, (str, bytes)) or not hasattr(ex, "__iter__"):
            raise ConfigError(f"basis.exponents = {ex!r}: give a list of positive numbers (bohr^-2)")
        vals = tuple(sorted(_exponent("basis.exponents[]", _real("basis.exponents[]", x)) for x in ex))
        if len(vals) < 2 or len(set(vals)) != len(vals):
            raise ConfigError(f"basis.exponents: give at least two distinct positive exponents (got {len(vals)})")
        if size is not None and size != len(vals):
            raise ConfigError(f"basis.size = {size} disagrees with the {len(vals)} basis.exponents given; drop one of them")
        if len(vals) > MAX_SIZE:
            raise ConfigError(f"basis.exponents: {len(vals)} given, at most {MAX_SIZE} exponents")
        if d.get("exponent_min") is not None or d.get("exponent_max") is not None:
            raise ConfigError("basis.exponents is given: drop basis.exponent_min and basis.exponent_max")
        kw["exponents"] = vals
        kw["size"] = len(vals)
        return kw
    for key in ("exponent_min", "exponent_max"):
        if d.get(key) is not None:
            kw[key] = _exponent(f"basis.{key}", _real(f"basis.{key}", d[key]))
    if "exponent_min" in kw and "exponent_max" in kw and kw["exponent_min"] >= kw["exponent_max"]:
        raise ConfigError(f"basis.exponent_min = {kw['exponent_min']:g} must be smaller than basis.exponent_max = {kw['exponent_max']:g}")
    return kw


def _exponent(key: str, value: float) -> float:
    return _within(key, value, EXPONENT_MIN, EXPONENT_MAX, "bohr^-2", "widths 1e-8..1e8 bohr")


def _check_size(basis: BasisSpec, kappas: int) -> None:
    """size within 2..MAX_SIZE; beyond the cap the message carries the estimate of the work."""
    if basis.size is not None and basis.size > MAX_SIZE:
        from .budget import size_estimate

        est = size_estimate(basis.size, kappas)
        raise ConfigError(f"basis.size = {basis.size}: at most {MAX_SIZE} functions (dense matrices of 2 x size "
                          f"rows); this one would take {est.text()}")


def from_dict(data: dict) -> Config:
    """Validated :class:`Config` from a mapping shaped like the TOML file.

    Parameters
    ----------
    data : dict
        ``{"ion": {...}, "basis": {...}, "solve": {...}, "electrons": {...}}`` with the keys of
        docs/config.md (``Config.to_dict()`` gives one back; [electrons] is checked against ion.Z).

    Returns
    -------
    Config
        The validated config (ion-dependent defaults still None; see :func:`resolve`).

    Raises
    ------
    ConfigError
        One line naming the unknown or bad key and what would be valid (a "did you mean").
    """
    if not isinstance(data, dict):
        raise ConfigError(f"config must be a mapping of sections, got {type(data).__name__}")
    for name, sec in data.items():
        if name not in _SECTIONS:
            raise ConfigError(f"unknown section [{name}]{suggest(name, _SECTIONS)}; valid: "
                              + ", ".join(f"[{s}]" for s in _SECTIONS))
        if not isinstance(sec, dict):
            raise ConfigError(f"[{name}] must be a table of keys, got {sec!r}")
        for key in sec:
            if key not in KEYS[name]:
                valid = ", ".join(KEYS[name])
                raise ConfigError(f"unknown key {name}.{key}{suggest(key, KEYS[name])}; valid in [{name}]: {valid}")
    if "ion" not in data:
        raise ConfigError("section [ion] is missing: at least Z is required")
    ion = _check_ion(data["ion"])
    basis = _check_basis(data.get("basis", {}))
    solve = SolveSpec(_kappas(data["solve"]["kappas"])) if "kappas" in data.get("solve", {}) else SolveSpec()
    _check_size(basis, len(solve.kappas))
    electrons = parse_electrons(data["electrons"], ion.Z) if "electrons" in data else None
    return Config(ion, basis, solve, electrons)


def load(path) -> Config:
    """Validated :class:`Config` from a TOML file (docs/config.md).

    Parameters
    ----------
    path : str or os.PathLike
        The TOML file, with sections [ion], [basis], [solve] and [electrons].

    Returns
    -------
    Config
        The validated config; defaults that depend on the ion stay None until :func:`resolve`.

    Raises
    ------
    InputError
        One line naming the file and what is wrong with it (missing, not TOML, a bad key or value).
    """
    return from_dict(read_toml(path))


def read_toml(path) -> dict:
    """The keys of a TOML config file as written (not yet validated; :func:`from_dict` does that)."""
    p = checked_path(path, "config file")
    text = read_input(p, "config file")
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as err:
        raise InputError(f"config file {str(p)!r} is not valid TOML: {err}") from None


# ----------------------------------------------------------------------------- defaults


def default_nucleus(ion: IonSpec) -> str:
    """Fermi where the Fermi shape can reach the rms radius, otherwise Gauss (lightest nuclei)."""
    if ion.nucleus is not None:
        return ion.nucleus
    if ion.Z == 0:
        return "point"  # no nucleus at all: V = 0
    # Function-level import: config is a leaf of the import graph (tests/test_import_graph.py);
    # only resolving a config into a nucleus needs the nucleus module.
    from .nucleus import FERMI_MIN_RMS_FM, make_nucleus

    rms = ion.rms_radius_fm
    if rms is None:  # the radius the ion will get: formula or measured, default A or given
        try:
            rms = make_nucleus(ion.Z, "sphere", ion.A, None, ion.radius).rms_radius_fm
        except InputError:
            return "fermi"  # let make_nucleus report what is missing
    return "fermi" if rms >= FERMI_MIN_RMS_FM else "gauss"


def nucleus_of(ion: IonSpec) -> Nucleus:
    """The nucleus record of an ion (the default model filled in)."""
    from .nucleus import make_nucleus  # see default_nucleus: config stays a leaf module

    return make_nucleus(ion.Z, default_nucleus(ion), ion.A, ion.rms_radius_fm, ion.radius)


def resolve(config: Config, c: float = C) -> tuple[Config, Nucleus]:
    """The config with every ion-dependent default filled in, and the nucleus it describes.

    ``c`` is the speed of light the solve will use (1/alpha unless a check of the
    nonrelativistic limit replaces it); every default that depends on Z alpha uses Z/c.
    Defaults (measured with the test-suite's checks against the exact Dirac–Coulomb levels):
    r_max = 250/Z (n <= 7 converged to 1e-11, DEFAULT_CAVITY); r_scale = 20/Z (capped at r_max/2);
    r_min = 10^(-6 - 5(1 - gamma))/Z for a point nucleus, gamma = sqrt(1 - (Z/c)^2), since the
    r^gamma behaviour at the origin needs knots ever closer in as gamma falls (Z = 118: 3e-9/Z;
    c -> infinity: 1e-6/Z); r_min = R/10 for a finite nucleus of edge radius R, where the
    orbitals are analytic at 0; quadrature = order + 4 points per knot interval.  r_max and
    r_scale follow the nonrelativistic extent of the orbitals and do not depend on c.
    The result is checked against what double precision can represent (:func:`check_numerics`).
    """
    out, nuc = _resolve(config, c)
    check_numerics(out, c, config.basis, Z=float(config.ion.Z))
    return out, nuc


def check_numerics(config: Config, c: float = C, given: BasisSpec | None = None, Z: float | None = None) -> None:
    """A resolved basis against the ranges double precision can represent (docs/config.md).

    B-splines: r_min, r_max and r_scale in [LENGTH_MIN, LENGTH_MAX]; the largest root of H,
    about ROOT_FACTOR c / r_min, below ROOT_MAX; neighbouring generated knots at least
    KNOT_SPACING_MIN apart relative to r.  Gaussians: exponents in [EXPONENT_MIN, EXPONENT_MAX]
    and the overlap integrals of every requested symmetry within e^(+-MOMENT_LOG_MAX).
    ``given`` (the basis as the user wrote it) tells a default from a given value in messages.
    """
    b = config.basis
    given = b if given is None else given

    def note(key: str) -> str:
        if getattr(given, key, None) is not None:
            return ""
        if isinstance(b.knots, tuple) and key in ("r_min", "r_max"):
            return "set by basis.knots"
        return f"the default for Z = {Z:g}; give basis.{key}" if Z is not None else f"the default; give basis.{key}"

    if KEY_STYLES[b.family] == "exponents":
        _check_gaussian_numerics(config, note)
        return
    for key in ("r_min", "r_max", "r_scale"):
        value = getattr(b, key)
        if value is not None:
            _within(f"basis.{key}", value, LENGTH_MIN, LENGTH_MAX, "bohr",
                    note(key) or "double precision and the size of atoms")
    floor = ROOT_FACTOR * c / ROOT_MAX
    if b.r_min < floor:
        why = note("r_min")
        raise ConfigError(f"basis.r_min = {b.r_min:g}{' (' + why + ')' if why else ''}: valid r_min >= {floor:.2g} "
                          f"bohr for c = {c:g} (the largest root of H, about {ROOT_FACTOR:g} c/r_min = "
                          f"{ROOT_FACTOR * c / b.r_min:.1e} hartree, must stay below {ROOT_MAX:.0e} in double precision)")
    if isinstance(b.knots, tuple):
        return  # explicit breakpoints: checked as given (_breakpoints)
    m = b.size - b.order + 1
    rho = b.r_max / b.r_min
    if b.knots == "exponential":
        spacing = -math.expm1(-math.log(rho) / (m - 1))
    else:
        ds = (math.log(rho) + (b.r_max - b.r_min) / b.r_scale) / (m - 1)
        spacing = ds / (1.0 + b.r_max / b.r_scale)
    if spacing < KNOT_SPACING_MIN:
        raise ConfigError(f"basis.r_min = {b.r_min:g} and basis.r_max = {b.r_max:g} bohr with {b.size} splines: "
                          f"neighbouring knots {spacing:.1e} apart relative to r; valid spacing >= "
                          f"{KNOT_SPACING_MIN:g} (spline values lose digits): widen r_max/r_min or use fewer splines")


def _log_moment(n: float, a: float) -> float:
    """ln of int_0^inf r^n exp(-a r^2) dr = Gamma((n+1)/2) / (2 a^((n+1)/2))."""
    return math.lgamma((n + 1) / 2) - (n + 1) / 2 * math.log(a) - math.log(2.0)


def _moments_fit(l_large: int, l_small: int, zmin: float, zmax: float) -> bool:
    """Whether every overlap integral of a symmetry (powers r^(2 min(l)) .. r^(2 max(l) + 4),
    exponents 2 zeta_min .. 2 zeta_max) is representable with margin."""
    lo, hi = 2 * min(l_large, l_small), 2 * max(l_large, l_small) + 4
    return all(abs(_log_moment(n, 2 * z)) <= MOMENT_LOG_MAX for n in (lo, hi) for z in (zmin, zmax))


def _check_gaussian_numerics(config: Config, note) -> None:

    b = config.basis
    if b.exponents is not None:
        zmin, zmax = min(b.exponents), max(b.exponents)
    else:
        zmin = _within("basis.exponent_min", b.exponent_min, EXPONENT_MIN, EXPONENT_MAX, "bohr^-2",
                       note("exponent_min") or "widths 1e-8..1e8 bohr")
        zmax = _within("basis.exponent_max", b.exponent_max, EXPONENT_MIN, EXPONENT_MAX, "bohr^-2",
                       note("exponent_max") or "widths 1e-8..1e8 bohr")
    for kappa in config.solve.kappas:
        if not _moments_fit(orbital_l(kappa), orbital_l(-kappa), zmin, zmax):
            top = max((k for k in range(1, KAPPA_MAX + 1)
                       if _moments_fit(k, k + 1, zmin, zmax) and _moments_fit(k - 1, k, zmin, zmax)), default=0)
            raise ConfigError(f"solve.kappas: kappa = {kappa} with Gaussian exponents {zmin:.3g}..{zmax:.3g} bohr^-2: "
                              f"the overlap integrals of r^{orbital_l(kappa) + 1} exp(-zeta r^2) fall outside double "
                              f"precision; valid |kappa| <= {top} for these exponents (or narrow the exponent range)")


def _resolve(config: Config, c: float = C) -> tuple[Config, Nucleus]:
    """The resolved config and nucleus before the numerics check (see :func:`resolve`)."""
    nuc = nucleus_of(config.ion)
    Z = float(config.ion.Z)
    b = config.basis
    if nuc.model == "point" and Z / c >= 1:
        what = "Z*alpha" if c == C else "Z/c"
        raise InputError(
            f"Z = {Z:g} gives {what} = {Z / c:.4f} >= 1: a point nucleus has no 1s solution; use a finite nucleus (ion.nucleus = 'fermi')"
        )
    if nuc.model == "point" and Z * C / c > POINT_Z_SAFE and KEY_STYLES[b.family] == "knots":
        warnings.warn(point_accuracy_warning(Z * C / c), AccuracyWarning, stacklevel=3)
    ion = replace(config.ion, Z=config.ion.Z, A=nuc.A, nucleus=nuc.model, rms_radius_fm=nuc.rms_radius_fm,
                  radius=None)  # the radius itself is filled in; where it came from: nuc.rms_radius_source
    if KEY_STYLES[b.family] == "exponents":
        if Z == 0:
            raise InputError("ion.Z = 0 (a free particle) needs the B-spline family and basis.r_max (the cavity radius)")
        return Config(ion, _resolve_gaussian(b, nuc, c), config.solve, config.electrons), nuc
    if isinstance(b.knots, tuple):
        # explicit breakpoints fix the basis: report it as it is (size, first knot, wall)
        quad = b.quadrature if b.quadrature is not None else b.order + 4
        size = len(b.knots) - 1 + b.order - 1
        if b.size is not None and b.size != size:
            raise InputError(f"basis.size = {b.size} disagrees with the {size} splines that basis.knots "
                             f"({len(b.knots)} breakpoints, order {b.order}) span; drop basis.size")
        for key in ("r_min", "r_max", "r_scale"):
            if getattr(b, key) is not None:
                raise InputError(f"basis.{key} does not apply with explicit basis.knots (the breakpoints fix the grid); drop it")
        wall = b.wall if b.wall is not None else "dirichlet"
        basis = replace(b, size=size, r_min=b.knots[1], r_max=b.knots[-1], quadrature=quad, wall=wall)
        return Config(ion, basis, config.solve, config.electrons), nuc
    if Z == 0 and b.r_max is None and not isinstance(b.knots, tuple):
        raise InputError("ion.Z = 0 (a free particle) needs basis.r_max, the cavity radius in bohr")
    r_max = b.r_max if b.r_max is not None else default_cavity(Z, config.electrons)
    if b.r_min is not None:
        r_min = b.r_min
    elif Z == 0:
        r_min = 1e-3 * r_max  # smooth spherical-Bessel functions: no structure near the origin
    elif nuc.model == "point":
        gamma = math.sqrt(1.0 - (Z / c) ** 2)
        r_min = 10.0 ** (-6.0 - 5.0 * (1.0 - gamma)) / Z
    else:
        r_min = nuc.radius_bohr / 10.0
    if r_min >= r_max:
        raise InputError(f"basis.r_min = {r_min:g} bohr must be smaller than basis.r_max = {r_max:g} bohr")
    if b.r_scale is not None:
        r_scale = b.r_scale
    else:
        r_scale = r_max / 20 if Z == 0 else min(20.0 / Z, r_max / 2)
    quad = b.quadrature if b.quadrature is not None else b.order + 4
    size = b.size if b.size is not None else DEFAULT_SIZE["bspline"]
    # an atom's cavity is tens of bohr: log-linear knots at 20/Z then leave the nucleus
    # under-resolved (levels off by 1e3 hartree at Z = 55, r_max = 40); exponential knots hold
    # the one-electron levels to 1e-11 there (measured; docs/dhf.md)
    knots = b.knots if b.knots is not None else ("exponential" if config.electrons is not None else "log-linear")
    wall = b.wall if b.wall is not None else "dirichlet"
    basis = replace(b, size=size, r_min=r_min, r_max=r_max, r_scale=r_scale, quadrature=quad, knots=knots, wall=wall)
    return Config(ion, basis, config.solve, config.electrons), nuc


POINT_Z_SAFE = 118
"""Above this Z a point nucleus is solved only with a warning: P ~ r^gamma with gamma -> 0."""
_POINT_ACCURACY = ((118, 1e-10), (120, 2e-10), (125, 3e-9), (130, 1e-7), (134, 1e-5), (136, 4e-4), (137, 1e-2))
"""Worst relative error of the levels n <= 5, |kappa| <= 4 of a point nucleus with the default basis,
measured against the exact Dirac–Coulomb levels (scripts/label_sweep.py)."""


class AccuracyWarning(UserWarning):
    """The requested model is solved, but the default basis cannot reach its usual accuracy."""


def point_accuracy_warning(Z: float) -> str:
    """The warning text for a point nucleus beyond Z = 118, with the accuracy to expect."""
    zs, errs = zip(*_POINT_ACCURACY)
    expected = 10 ** float(np.interp(Z, zs, np.log10(errs)))
    gamma = math.sqrt(max(1.0 - (Z / C) ** 2, 0.0))
    return (f"point nucleus with Z = {Z:g} (gamma(1s) = {gamma:.3f}): the default basis reaches only about "
            f"{expected:.0e} relative for s1/2 and p1/2 levels (1e-10 up to Z = 118); the levels beyond the "
            f"estimate threshold are flagged 'unconverged'; a finite nucleus (ion.nucleus = 'fermi') keeps 1e-10")


def default_exponent_range(Z: float, nucleus: Nucleus, balance: str = "dkb", c: float = C) -> tuple[float, float]:
    """Even-tempered range for Gaussians (bohr^-2), chosen by the scans in docs/gaussian.md.

    zeta_max = min(1e6 Z^2, 3/R_rms^2): tight enough for the relativistic region near the
    nucleus and no tighter than the nucleus needs (a point nucleus has only the first bound).
    zeta_min = 1e-3 Z^2 keeps the n = 3 levels (extent ~ n^2/Z) for DKB.  RKB (and the
    unbalanced set) get zeta_min = 10^(-3 - 2 (Z/92)^2) Z^2: for kappa > 0 every RKB small
    function D+G obeys int r^kappa D+G dr = 0, a constraint the exact small component does not
    obey and that only very diffuse functions can offset; at Z = 92 the 2p1/2 level stalls at
    -2.5e-7 with zeta_min = 1e-3 Z^2 and reaches -3e-9 with 1e-5 Z^2 (40 functions).  The
    constraint is a relativistic effect, so the exponent of the RKB factor goes with (Z/c)^2:
    (Z/92)^2 at c = 1/alpha, nearly 0 for c >> 1/alpha (nonrelativistic-limit checks).
    """
    zc = (Z / c) / (92.0 / C)  # = Z/92 at the physical c
    factor = 1e-3 if balance == "dkb" else 10.0 ** (-3.0 - 2.0 * zc**2)
    zmin = factor * Z * Z
    zmax = GAUSS_ZMAX_CORE * Z * Z
    if nucleus.model != "point":
        zmax = min(zmax, GAUSS_ZMAX_NUCLEUS / (nucleus.rms_radius_fm * FM_BOHR) ** 2)
    return zmin, zmax


def _resolve_gaussian(b: BasisSpec, nuc: Nucleus, c: float = C) -> BasisSpec:
    if b.exponents is not None:
        return replace(b, order=None, knots=None, size=len(b.exponents))
    lo, hi = default_exponent_range(float(nuc.Z), nuc, b.balance, c)
    zmin = b.exponent_min if b.exponent_min is not None else lo
    zmax = b.exponent_max if b.exponent_max is not None else hi
    if zmin >= zmax:
        raise InputError(f"basis.exponent_min = {zmin:g} must be smaller than basis.exponent_max = {zmax:g}")
    size = b.size if b.size is not None else DEFAULT_SIZE.get(b.family, DEFAULT_SIZE["gaussian"])
    return replace(b, order=None, knots=None, size=size, exponent_min=zmin, exponent_max=zmax)
