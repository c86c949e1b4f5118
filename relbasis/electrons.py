"""The electrons of a mean-field model: closed core subshells and at most one valence electron.

The ``[electrons]`` section of a config (docs/config.md) reads

```toml
[electrons]
core = "[Xe]"          # closed subshells: noble-gas shorthands and/or subshell tokens
valence = "6s1/2"      # optional: one electron outside the core; omit for a closed shell
```

Core tokens (whitespace-separated, in any order):

* a noble-gas shorthand ``[He] [Ne] [Ar] [Kr] [Xe] [Rn] [Og]`` (:data:`SHORTHANDS`);
* a relativistic subshell label ``2p3/2`` (the label grammar of :mod:`relbasis.vocabulary`),
  always full: 2j + 1 electrons; its occupation may be written out as ``2p3/2(4)``;
* a full nonrelativistic shell ``2p6``: n, the letter of l and 2(2l + 1), both subshells
  j = l +- 1/2 at once.

A closed subshell of angular momentum j holds 2j + 1 electrons, a full nl shell 2(2l + 1)
(common practice).  Every token must be closed, exist (n >= l + 1, j = l +- 1/2), appear once
(also through a shorthand), and the electrons must number at most Z.  The core is stored in
the canonical order n, then l, then j (:meth:`Subshell.order`), whatever order it was given in.
Nothing here computes a field: this module is the input side of the Dirac–Hartree–Fock model.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

from .errors import ConfigError
from .validate import suggest
from .vocabulary import LETTERS, j_twice, orbital_l, orbital_label, parse_label

KEYS = ("core", "valence")
"""Valid keys of ``[electrons]``."""

SHORTHANDS = {
    "[He]": "1s2",
    "[Ne]": "[He] 2s2 2p6",
    "[Ar]": "[Ne] 3s2 3p6",
    "[Kr]": "[Ar] 3d10 4s2 4p6",
    "[Xe]": "[Kr] 4d10 5s2 5p6",
    "[Rn]": "[Xe] 4f14 5d10 6s2 6p6",
    "[Og]": "[Rn] 5f14 6d10 7s2 7p6",
}
"""Noble-gas shorthands and the closed shells each stands for: 2, 10, 18, 36, 54, 86 and 118
electrons (the ground configurations of the noble gases, common practice)."""

_SHELL = re.compile(rf"^(\d+)([{LETTERS}])(\d+)$")  # 2p6: n, letter of l, occupation
_SUBSHELL = re.compile(r"^(.+/2)(?:\((\d+)\))?$")  # 2p3/2 or 2p3/2(4): a label, optional occupation
_SYNTAX = "a shorthand such as '[Ne]', a subshell '2p3/2' (or '2p3/2(4)') or a full shell '2p6'"


@dataclass(frozen=True)
class Subshell:
    """One relativistic subshell (n, kappa): kappa = -(l+1) for j = l+1/2, +l for j = l-1/2."""

    n: int
    kappa: int

    def __post_init__(self):
        ok = all(isinstance(v, int) and not isinstance(v, bool) for v in (self.n, self.kappa))
        if not ok or self.kappa == 0 or self.n < orbital_l(self.kappa) + 1:
            raise ConfigError(f"Subshell(n={self.n!r}, kappa={self.kappa!r}): needs integers kappa != 0 "
                              "and n >= l + 1")

    @property
    def l(self) -> int:  # noqa: E743  (the orbital quantum number keeps its name)
        return orbital_l(self.kappa)

    @property
    def j2(self) -> int:
        """2j = 2|kappa| - 1."""
        return j_twice(self.kappa)

    @property
    def occupancy(self) -> int:
        """Electrons of the closed subshell, 2j + 1 (common practice)."""
        return self.j2 + 1

    @property
    def label(self) -> str:
        """``2p3/2`` (:func:`relbasis.vocabulary.orbital_label`)."""
        return orbital_label(self.n, self.kappa)

    def order(self) -> tuple[int, int, int]:
        """Canonical sort key: n, then l, then j (1s1/2 2s1/2 2p1/2 2p3/2 3s1/2 ...)."""
        return self.n, self.l, self.j2


@dataclass(frozen=True)
class Electrons:
    """Closed core subshells (canonical order, each once) and an optional valence subshell
    holding one electron (the V^(N-1) model).  Build it with :func:`parse_electrons`."""

    core: tuple[Subshell, ...]
    valence: Subshell | None = None

    def __post_init__(self):
        core = tuple(sorted(self.core, key=Subshell.order))
        object.__setattr__(self, "core", core)  # canonical order, whatever order was given
        if not core:
            raise ConfigError("Electrons(core=()): give at least one closed subshell")
        if len(set(core)) != len(core):
            raise ConfigError("Electrons(core=...): a subshell is given twice; each closed subshell once")
        if self.valence is not None and self.valence in core:
            raise ConfigError(f"Electrons(valence={self.valence.label!r}): already a closed subshell of the core")

    @property
    def core_electrons(self) -> int:
        """Sum of the occupancies 2j + 1 of the core subshells."""
        return sum(s.occupancy for s in self.core)

    @property
    def electrons(self) -> int:
        """Core electrons, plus one for the valence electron."""
        return self.core_electrons + (self.valence is not None)

    def charge(self, Z: float) -> float:
        """Charge of the ion, Z - electrons."""
        return Z - self.electrons

    @property
    def kappas(self) -> tuple[int, ...]:
        """The kappas of the core subshells, each once, sorted."""
        return tuple(sorted({s.kappa for s in self.core}))

    def count(self, kappa: int) -> int:
        """Number of core subshells of this kappa (e.g. [Ar]: 3 of kappa = -1)."""
        return sum(s.kappa == kappa for s in self.core)

    def to_dict(self) -> dict:
        """``{"core": "1s1/2 2s1/2 ...", "valence": "3s1/2"}`` (valence only when set);
        :func:`parse_electrons` reads it back to an equal record."""
        out = {"core": " ".join(s.label for s in self.core)}
        if self.valence is not None:
            out["valence"] = self.valence.label
        return out


def parse_electrons(data: dict, Z: float) -> Electrons:
    """The ``[electrons]`` mapping validated against the nuclear charge Z.

    Each problem is a one-line :class:`~relbasis.errors.ConfigError` naming the key, the
    offending token and what would be valid (module docstring: the token syntax and rules).
    """
    if not isinstance(data, dict):
        raise ConfigError(f"[electrons] must be a table of keys, got {data!r}")
    for key in data:
        if key not in KEYS:
            raise ConfigError(f"unknown key electrons.{key}{suggest(key, KEYS)}; valid in [electrons]: {', '.join(KEYS)}")
    if data.get("core") is None:
        hint = " (valence needs a core)" if data.get("valence") is not None else ""
        raise ConfigError(f"electrons.core is missing{hint}: give the closed subshells, e.g. core = \"[Ne]\"; "
                          "without electrons leave out [electrons] (the bare nucleus)")
    core = parse_core(data["core"])
    where = f'electrons.core = "{data["core"]}"'
    n_core = sum(s.occupancy for s in core)
    if n_core > Z:
        raise ConfigError(f"{where}: {n_core} electrons, more than Z = {Z:g}; at most Z electrons (charge >= 0)")
    valence = None
    if data.get("valence") is not None:
        valence = parse_valence(data["valence"], core)
        if n_core + 1 > Z:
            raise ConfigError(f'electrons.valence = "{valence.label}": the core holds {n_core} electrons, so with '
                              f"the valence electron {n_core + 1} > Z = {Z:g}; at most Z electrons (charge >= 0)")
    return Electrons(core, valence)


def parse_core(text) -> tuple[Subshell, ...]:
    """The subshells of a core string in canonical order; each token once, each closed."""
    if not isinstance(text, str):
        raise ConfigError(f"electrons.core = {text!r}: give one string of closed subshells, e.g. \"[Ne] 3s2\"")
    where = f'electrons.core = "{text}"'
    tokens = text.split()
    if not tokens:
        raise ConfigError(f'{where}: give at least one closed subshell, e.g. "[He]" or "1s1/2"')
    given: dict[Subshell, str] = {}  # subshell -> the token that gave it (to name both in a repeat)
    for token in tokens:
        for s in _expand(token, where):
            if s in given:
                again = "" if given[s] == token else f", already in {given[s]!r}"
                raise ConfigError(f"{where}: token {token!r} repeats {s.label}{again}; give each closed subshell once")
            given[s] = token
    return tuple(sorted(given, key=Subshell.order))


def parse_valence(text, core: tuple[Subshell, ...]) -> Subshell:
    """The one valence subshell: a label such as ``6s1/2``, not in the core."""
    if not isinstance(text, str):
        raise ConfigError(f"electrons.valence = {text!r}: give one subshell label such as \"6s1/2\"")
    where = f'electrons.valence = "{text}"'
    try:
        n, kappa = parse_label(text, where=where)
    except ConfigError as err:
        raise ConfigError(f"{err}; give one subshell label such as \"6s1/2\" (one electron outside the core)") from None
    s = Subshell(n, kappa)
    if s in core:
        raise ConfigError(f"{where}: {s.label} is a closed subshell of electrons.core; the valence electron "
                          "goes into a subshell outside the core")
    return s


def _expand(token: str, where: str) -> tuple[Subshell, ...]:
    """The subshells one core token stands for (a shorthand, a shell 2p6, a subshell 2p3/2(4))."""
    if token.startswith("["):
        if token not in SHORTHANDS:
            raise ConfigError(f"{where}: token {token!r} is not a noble-gas shorthand{suggest(token, SHORTHANDS)}; "
                              f"valid: {' '.join(SHORTHANDS)}")
        return tuple(s for inner in SHORTHANDS[token].split() for s in _expand(inner, where))
    if m := _SHELL.match(token):
        return _shell(token, int(m.group(1)), LETTERS.index(m.group(2)), int(m.group(3)), where)
    if m := _SUBSHELL.match(token):
        return (_subshell(token, m.group(1), m.group(2), where),)
    raise ConfigError(f"{where}: token {token!r} is not a closed subshell; write {_SYNTAX}")


def _shell(token: str, n: int, l: int, occupation: int, where: str) -> tuple[Subshell, ...]:
    """A full nl shell: 2(2l + 1) electrons, the subshells j = l - 1/2 (l > 0) and l + 1/2."""
    name = f"{n}{LETTERS[l]}"
    if n < l + 1:
        raise ConfigError(f"{where}: token {token!r}: there is no {name} shell, l = {l} needs n >= {l + 1}")
    full = 2 * (2 * l + 1)
    if occupation != full:
        raise ConfigError(f"{where}: token {token!r} is an open shell: a closed {name} shell holds 2(2l+1) = "
                          f"{full} electrons ('{name}{full}')")
    return tuple(Subshell(n, k) for k in ((l, -(l + 1)) if l > 0 else (-1,)))


def _subshell(token: str, label: str, occupation: str | None, where: str) -> Subshell:
    """A subshell label with an optional occupation in parentheses, which must be 2j + 1."""
    try:
        n, kappa = parse_label(label, where=f"{where}: token")
    except ConfigError as err:
        raise ConfigError(f"{err} (a subshell nlj needs n >= l + 1 and j = l +- 1/2)") from None
    s = Subshell(n, kappa)
    if occupation is not None and int(occupation) != s.occupancy:
        raise ConfigError(f"{where}: token {token!r} is an open subshell: a closed subshell holds 2j+1 = "
                          f"{s.occupancy} electrons ('{s.label}' or '{s.label}({s.occupancy})')")
    return s
