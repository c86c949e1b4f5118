"""The names relbasis speaks in: kappa and its labels, and the words a config may use.

A leaf module (it imports nothing of relbasis but :mod:`relbasis.errors`), so that the config
validator, the solver, the spectrum and the scan share one spelling of each name.

kappa = -(l+1) for j = l+1/2 and kappa = +l for j = l-1/2 (common practice); the label of the
level (n, kappa) is n, the letter of l and 2j, e.g. ``1s1/2``, ``2p1/2`` (kappa = +1),
``2p3/2`` (kappa = -2).
"""

from __future__ import annotations

import re

from .errors import ConfigError

LETTERS = "spdfghiklmnoqrtuvwxyz"
"""Letters of l = 0, 1, 2, ... (spectroscopic notation; j is skipped after i, common practice)."""

# --- the words a config may use (docs/config.md); the modules that implement them re-export them
FAMILIES = ("bspline", "gaussian")
"""Basis families (``basis.family``)."""
BALANCES = ("none", "dkb")
"""Small-component constructions of the B-spline family (``basis.balance``)."""
GAUSSIAN_BALANCES = ("none", "rkb", "dkb")
"""Small-component constructions of the Gaussian family (``basis.balance``)."""
BALANCES_OF = {"bspline": BALANCES, "gaussian": GAUSSIAN_BALANCES}
"""Valid ``basis.balance`` per family."""
KEY_STYLES = {"bspline": "knots", "gaussian": "exponents"}
"""Which [basis] keys a family takes: "knots" (order, r_min, r_max, r_scale, knots, quadrature,
wall: functions on a knot grid in a cavity) or "exponents" (exponent_min, exponent_max,
exponents: functions of given decay rates, no wall).  The config validates and resolves a
family by its style; a new family registers here (:func:`register_family`) and in
:mod:`relbasis.families`."""


def register_family(name: str, style: str, balances: tuple[str, ...], default_size: int | None = None) -> None:
    """Make ``basis.family = name`` valid: its key style and balances (for a family added by
    a module or a test; the two built-in families are listed above)."""
    if style not in ("knots", "exponents"):
        raise ValueError(f"key style {style!r}: 'knots' or 'exponents'")
    KEY_STYLES[name] = style
    BALANCES_OF[name] = tuple(balances)
    if default_size is not None:
        DEFAULT_SIZES[name] = int(default_size)


def unregister_family(name: str) -> None:
    """Undo :func:`register_family` (the built-in families cannot be removed)."""
    if name in FAMILIES:
        raise ValueError(f"{name!r} is a built-in family")
    KEY_STYLES.pop(name, None)
    BALANCES_OF.pop(name, None)
    DEFAULT_SIZES.pop(name, None)


DEFAULT_SIZES = {"bspline": 100, "gaussian": 40}
"""Functions per component when ``basis.size`` is not given, per family."""
WALLS = ("dirichlet", "bag")
"""Boundary conditions at the cavity wall of the B-spline family (``basis.wall``)."""
KNOT_KINDS = ("exponential", "log-linear")
"""Knot sequences by name (``basis.knots``)."""
MODELS = ("point", "sphere", "gauss", "fermi")
"""Nuclear models, the values of the ``nucleus`` key."""
RADIUS_CHOICES = ("formula", "measured")
"""Where the rms radius comes from when ``rms_radius_fm`` is not given (the ``radius`` key)."""


def orbital_l(kappa: int) -> int:
    """Orbital angular momentum l of the large component: kappa = -(l+1) or +l."""
    return kappa if kappa > 0 else -kappa - 1


def j_twice(kappa: int) -> int:
    """2j = 2|kappa| - 1."""
    return 2 * abs(kappa) - 1


def kappa_of(l: int, j2: int) -> int:
    """kappa from l and 2j: -(l+1) for 2j = 2l+1, +l for 2j = 2l-1 (l > 0); else an InputError."""
    if j2 == 2 * l + 1:
        return -(l + 1)
    if j2 == 2 * l - 1 and l > 0:
        return l
    raise ConfigError(f"j = {j2}/2 is impossible for l = {l}: 2j must be 2l+1 or 2l-1 (l > 0)")


def orbital_label(n: int, kappa: int) -> str:
    """Spectroscopic label such as ``1s1/2`` or ``2p3/2``."""
    l = orbital_l(kappa)
    letter = LETTERS[l] if l < len(LETTERS) else f"[l={l}]"
    return f"{n}{letter}{j_twice(kappa)}/2"


_LABEL = re.compile(rf"^(\d+)([{LETTERS}])(\d+)/2$")


def parse_label(label: str, where: str = "label") -> tuple[int, int]:
    """'2p3/2' -> (n, kappa) = (2, -2); a one-line ConfigError naming ``where`` otherwise."""
    m = _LABEL.match(str(label).strip())
    if not m:
        raise ConfigError(f"{where}: {label!r} is not a state label such as '1s1/2' or '2p3/2'")
    n, l, j2 = int(m.group(1)), LETTERS.index(m.group(2)), int(m.group(3))
    if j2 == 2 * l + 1:
        kappa = -(l + 1)
    elif j2 == 2 * l - 1 and l > 0:
        kappa = l
    else:
        raise ConfigError(f"{where}: {label!r} has j = {j2}/2, impossible for l = {l}")
    if n < l + 1:
        raise ConfigError(f"{where}: {label!r} needs n >= l + 1 = {l + 1}")
    return n, kappa
