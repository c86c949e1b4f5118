"""Run configuration: the TOML file (or mapping) of DESIGN.md, validated, with defaults resolved.

```toml
[ion]
Z = 92                 # nuclear charge (required)
A = 238                # mass number (optional; a default per element otherwise)
nucleus = "fermi"      # "point" | "sphere" | "gauss" | "fermi"
rms_radius_fm = 5.86   # optional; otherwise 0.836 A^(1/3) + 0.570 fm

[basis]
family = "bspline"
size = 90              # B-splines spanned by the knots, before boundary conditions
order = 10             # polynomial degree + 1
r_min = 1e-6           # first non-zero knot (bohr)
r_max = 40.0           # cavity radius (bohr)
r_scale = 0.2          # log-linear knots: where the spacing turns from geometric to even (bohr)
knots = "log-linear"   # "log-linear" | "exponential" | [explicit breakpoints in bohr]
balance = "dkb"        # "none" | "dkb"
quadrature = 14        # Gauss–Legendre points per knot interval

[solve]
kappas = [-1, 1, -2, 2, -3, 3, -4, 4]
```

Every key is checked: an unknown key names the likely intended one, a wrong type or a value out
of range names the key and what is valid.  Defaults that depend on the ion (r_min, r_max,
r_scale) are filled in by :func:`resolve`, so that a user who gives only Z gets the accuracy
the test-suite checks (relative 1e-11 on point-nucleus levels with n <= 4 up to Z = 100).
"""

from __future__ import annotations

import difflib
import math
import numbers
import tomllib
from dataclasses import asdict, dataclass, field, replace
from pathlib import Path

from .bspline import KNOT_KINDS
from .constants import C
from .dirac import BALANCES
from .errors import ConfigError, InputError
from .nucleus import FERMI_MIN_RMS_FM, MODELS, Nucleus, default_rms_radius_fm, make_nucleus

FAMILIES = ("bspline",)
MAX_SIZE = 2000
MAX_ORDER = 20
DEFAULT_KAPPAS = (-1, 1, -2, 2, -3, 3, -4, 4)


@dataclass(frozen=True)
class IonSpec:
    """The one-electron ion: nuclear charge and model.  ``nucleus=None`` means the default."""

    Z: float
    A: int | None = None
    nucleus: str | None = None
    rms_radius_fm: float | None = None


@dataclass(frozen=True)
class BasisSpec:
    """Basis settings; None means "choose from the ion" (see :func:`resolve`)."""

    family: str = "bspline"
    size: int = 90
    order: int = 10
    r_min: float | None = None
    r_max: float | None = None
    r_scale: float | None = None
    knots: str | tuple[float, ...] = "log-linear"
    balance: str = "dkb"
    quadrature: int | None = None


@dataclass(frozen=True)
class SolveSpec:
    kappas: tuple[int, ...] = DEFAULT_KAPPAS


@dataclass(frozen=True)
class Config:
    ion: IonSpec
    basis: BasisSpec = field(default_factory=BasisSpec)
    solve: SolveSpec = field(default_factory=SolveSpec)

    def to_dict(self) -> dict:
        """Plain mapping (TOML/JSON-ready; None entries dropped)."""
        out = {}
        for name in ("ion", "basis", "solve"):
            sec = {k: (list(v) if isinstance(v, tuple) else v) for k, v in asdict(getattr(self, name)).items()}
            out[name] = {k: v for k, v in sec.items() if v is not None}
        return out


# ----------------------------------------------------------------------------- validation

_SECTIONS = {"ion": IonSpec, "basis": BasisSpec, "solve": SolveSpec}
_KEYS = {name: tuple(f for f in cls.__dataclass_fields__) for name, cls in _SECTIONS.items()}


def _suggest(word: str, options) -> str:
    close = difflib.get_close_matches(str(word), list(options), n=1, cutoff=0.5)
    return f" (did you mean {close[0]!r}?)" if close else ""


def _real(key: str, value, *, positive: bool = True) -> float:
    if isinstance(value, bool) or not isinstance(value, numbers.Real):
        raise ConfigError(f"{key} = {value!r}: must be a number")
    value = float(value)
    if not math.isfinite(value) or (positive and value <= 0):
        raise ConfigError(f"{key} = {value!r}: must be a finite number{' > 0' if positive else ''}")
    return value


def _integer(key: str, value, minimum: int) -> int:
    if isinstance(value, bool) or not isinstance(value, numbers.Integral):
        if isinstance(value, float) and value.is_integer():
            value = int(value)
        else:
            raise ConfigError(f"{key} = {value!r}: must be an integer >= {minimum}")
    if value < minimum:
        raise ConfigError(f"{key} = {value!r}: must be an integer >= {minimum}")
    return int(value)


def _choice(key: str, value, options) -> str:
    if not isinstance(value, str) or value not in options:
        raise ConfigError(f"{key} = {value!r}: valid are {', '.join(repr(o) for o in options)}{_suggest(value, options)}")
    return value


def _kappas(value) -> tuple[int, ...]:
    if isinstance(value, (str, bytes)) or not hasattr(value, "__iter__"):
        raise ConfigError(f"solve.kappas = {value!r}: must be a list of non-zero integers, e.g. [-1, 1, -2]")
    out = []
    for k in value:
        if isinstance(k, bool) or not isinstance(k, numbers.Integral) or k == 0:
            raise ConfigError(f"solve.kappas: {k!r} is not a valid kappa (a non-zero integer: -(l+1) or +l)")
        if int(k) not in out:
            out.append(int(k))
    if not out:
        raise ConfigError("solve.kappas is empty: give at least one non-zero integer")
    return tuple(out)


def _check_ion(d: dict) -> IonSpec:
    if "Z" not in d:
        raise ConfigError("ion.Z is missing: the nuclear charge is required (e.g. Z = 92)")
    Z = d["Z"]
    if isinstance(Z, bool) or not isinstance(Z, numbers.Real) or not math.isfinite(float(Z)) or Z <= 0:
        raise ConfigError(f"ion.Z = {Z!r}: must be a number > 0")
    A = None if d.get("A") is None else _integer("ion.A", d["A"], 1)
    nucleus = None if d.get("nucleus") is None else _choice("ion.nucleus", d["nucleus"], MODELS)
    rms = None if d.get("rms_radius_fm") is None else _real("ion.rms_radius_fm", d["rms_radius_fm"])
    return IonSpec(float(Z) if not float(Z).is_integer() else int(Z), A, nucleus, rms)


def _check_basis(d: dict) -> BasisSpec:
    b = BasisSpec()
    kw = {}
    if "family" in d:
        fam = d["family"]
        if fam == "gaussian":
            raise ConfigError("basis.family = 'gaussian' is not available in this version; use 'bspline'")
        kw["family"] = _choice("basis.family", fam, FAMILIES)
    order = _integer("basis.order", d.get("order", b.order), 2)
    if order > MAX_ORDER:
        raise ConfigError(f"basis.order = {order}: at most {MAX_ORDER} (rounding grows with the degree)")
    size = _integer("basis.size", d.get("size", b.size), 1)
    if size > MAX_SIZE:
        raise ConfigError(f"basis.size = {size}: at most {MAX_SIZE} splines (dense matrices of 2 x size rows)")
    if size < order + 4:
        raise ConfigError(f"basis.size = {size} is too small for basis.order = {order}: need size >= order + 4 = {order + 4}")
    kw.update(order=order, size=size)
    for key in ("r_min", "r_max", "r_scale"):
        if d.get(key) is not None:
            kw[key] = _real(f"basis.{key}", d[key])
    if kw.get("r_min") is not None and kw.get("r_max") is not None and kw["r_min"] >= kw["r_max"]:
        raise ConfigError(f"basis.r_min = {kw['r_min']:g} must be smaller than basis.r_max = {kw['r_max']:g}")
    if "knots" in d:
        knots = d["knots"]
        if isinstance(knots, str):
            kw["knots"] = _choice("basis.knots", knots, KNOT_KINDS)
        elif isinstance(knots, (list, tuple)):
            pts = tuple(_real("basis.knots[]", x, positive=False) for x in knots)
            if len(pts) < 3 or any(b2 <= a2 for a2, b2 in zip(pts, pts[1:])) or pts[0] < 0:
                raise ConfigError("basis.knots: explicit breakpoints must be >= 0 and strictly increasing, at least 3")
            kw["knots"] = pts
        else:
            raise ConfigError(f"basis.knots = {knots!r}: give 'log-linear', 'exponential' or a list of breakpoints (bohr)")
    if "balance" in d:
        kw["balance"] = _choice("basis.balance", d["balance"], BALANCES)
    if d.get("quadrature") is not None:
        kw["quadrature"] = _integer("basis.quadrature", d["quadrature"], 2)
        if kw["quadrature"] > 64:
            raise ConfigError(f"basis.quadrature = {kw['quadrature']}: at most 64 points per knot interval")
    return replace(b, **kw)


def from_dict(data: dict) -> Config:
    """Validated :class:`Config` from a mapping shaped like the TOML file."""
    if not isinstance(data, dict):
        raise ConfigError(f"config must be a mapping of sections, got {type(data).__name__}")
    for name, sec in data.items():
        if name not in _SECTIONS:
            raise ConfigError(f"unknown section [{name}]{_suggest(name, _SECTIONS)}; valid: [ion], [basis], [solve]")
        if not isinstance(sec, dict):
            raise ConfigError(f"[{name}] must be a table of keys, got {sec!r}")
        for key in sec:
            if key not in _KEYS[name]:
                valid = ", ".join(_KEYS[name])
                raise ConfigError(f"unknown key {name}.{key}{_suggest(key, _KEYS[name])}; valid in [{name}]: {valid}")
    if "ion" not in data:
        raise ConfigError("section [ion] is missing: at least Z is required")
    ion = _check_ion(data["ion"])
    basis = _check_basis(data.get("basis", {}))
    solve = SolveSpec(_kappas(data["solve"]["kappas"])) if "kappas" in data.get("solve", {}) else SolveSpec()
    return Config(ion, basis, solve)


def load(path) -> Config:
    """Validated :class:`Config` from a TOML file."""
    p = Path(path)
    if not p.is_file():
        raise InputError(f"config file {str(p)!r} not found")
    try:
        data = tomllib.loads(p.read_text(encoding="utf-8"))
    except UnicodeDecodeError:
        raise InputError(f"config file {str(p)!r} is not UTF-8 text") from None
    except tomllib.TOMLDecodeError as err:
        raise InputError(f"config file {str(p)!r} is not valid TOML: {err}") from None
    return from_dict(data)


# ----------------------------------------------------------------------------- defaults


def default_nucleus(ion: IonSpec) -> str:
    """Fermi where the Fermi shape can reach the rms radius, otherwise Gauss (lightest nuclei)."""
    if ion.nucleus is not None:
        return ion.nucleus
    rms = ion.rms_radius_fm
    if rms is None and ion.A is not None:
        rms = default_rms_radius_fm(ion.A)
    if rms is None:
        try:
            rms = make_nucleus(ion.Z, "sphere", None, None).rms_radius_fm
        except InputError:
            return "fermi"  # let make_nucleus report what is missing
    return "fermi" if rms >= FERMI_MIN_RMS_FM else "gauss"


def nucleus_of(ion: IonSpec) -> Nucleus:
    return make_nucleus(ion.Z, default_nucleus(ion), ion.A, ion.rms_radius_fm)


def resolve(config: Config) -> tuple[Config, Nucleus]:
    """The config with every ion-dependent default filled in, and the nucleus it describes.

    Defaults (measured with the test-suite's checks against the exact Dirac–Coulomb levels):
    r_max = 150/Z (n = 5 converged to 1e-12); r_scale = 20/Z (capped at r_max/2);
    r_min = 10^(-6 - 5(1 - gamma))/Z for a point nucleus, gamma = sqrt(1 - (Z alpha)^2), since the
    r^gamma behaviour at the origin needs knots ever closer in as gamma falls (Z = 118: 3e-9/Z);
    r_min = R/10 for a finite nucleus of edge radius R, where the orbitals are analytic at 0;
    quadrature = order + 4 points per knot interval.
    """
    nuc = nucleus_of(config.ion)
    Z = float(config.ion.Z)
    b = config.basis
    if nuc.model == "point" and Z / C >= 1:
        raise InputError(
            f"Z = {Z:g} gives Z*alpha = {Z / C:.4f} >= 1: a point nucleus has no 1s solution; use a finite nucleus (ion.nucleus = 'fermi')"
        )
    r_max = b.r_max if b.r_max is not None else 150.0 / Z
    if b.r_min is not None:
        r_min = b.r_min
    elif nuc.model == "point":
        gamma = math.sqrt(1.0 - (Z / C) ** 2)
        r_min = 10.0 ** (-6.0 - 5.0 * (1.0 - gamma)) / Z
    else:
        r_min = nuc.radius_bohr / 10.0
    if r_min >= r_max:
        raise InputError(f"basis.r_min = {r_min:g} bohr must be smaller than basis.r_max = {r_max:g} bohr")
    r_scale = b.r_scale if b.r_scale is not None else min(20.0 / Z, r_max / 2)
    quad = b.quadrature if b.quadrature is not None else b.order + 4
    basis = replace(b, r_min=r_min, r_max=r_max, r_scale=r_scale, quadrature=quad)
    ion = replace(config.ion, Z=config.ion.Z, A=nuc.A, nucleus=nuc.model, rms_radius_fm=nuc.rms_radius_fm)
    return Config(ion, basis, config.solve), nuc
