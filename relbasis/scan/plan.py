"""The plan of a scan: its validated form (:class:`Plan`), the state labels it tracks, and
its units (the product of the axes, each merged into the base config, with the key of its record).
"""

from __future__ import annotations

import hashlib
import itertools
import json
import math
import numbers
import re
import tomllib
import warnings
from dataclasses import dataclass
from pathlib import Path

from ..version import __version__
from ..vocabulary import orbital_l, parse_label as _parse_label
from ..config import KEYS as _KEYS, from_dict, resolve
from ..electrons import parse_electrons
from ..validate import suggest as _suggest
from ..errors import ConfigError, InputError
from ..outputs import read_input
from ..perturbation import L_MAX_LIMIT, kappas_through
from .store import RECORD_FORMAT


REFERENCES = ("auto", "exact", "largest")
TRACK_KEYS = ("states", "max_n", "target", "reference", "second_order", "second_order_target")
"""The keys of a plan's [track]."""
DEFAULT_SECOND_ORDER_TARGET = 1e-6
"""Absolute accuracy (hartree) asked of a tracked second-order energy when the plan names none."""


def parse_label(label: str) -> tuple[int, int]:
    """'2p3/2' -> (n, kappa) = (2, -2); errors name track.states (relbasis.vocabulary)."""
    return _parse_label(label, "track.states")


@dataclass(frozen=True)
class Plan:
    base: dict
    axes: tuple[tuple[str, tuple], ...]
    states: tuple[str, ...] | None
    max_n: int | None
    target: float
    reference: str
    second_order: int | None = None  # l_max of a tracked second-order energy (relbasis.perturbation)
    second_order_target: float = DEFAULT_SECOND_ORDER_TARGET  # hartree, absolute

    def kappas(self) -> tuple[int, ...]:
        """The symmetries each unit solves: those of the tracked levels, and with a tracked
        second-order energy every kappa of l <= l_max as well (the sum runs over them)."""
        order = lambda k: (abs(k), k > 0)  # noqa: E731
        wanted = set(kappas_through(self.second_order)) if self.second_order is not None else set()
        if self.states:
            return tuple(sorted({parse_label(s)[1] for s in self.states} | wanted, key=order))
        if self.max_n is None:  # the second-order energy alone
            return tuple(sorted(wanted, key=order))
        solve = self.base.get("solve", {})
        if "kappas" in solve:
            return tuple(sorted(set(solve["kappas"]) | wanted, key=order)) if wanted else tuple(solve["kappas"])
        return tuple(sorted({k for k in (-1, 1, -2, 2, -3, 3, -4, 4, -5, 5) if orbital_l(k) <= self.max_n - 1} | wanted,
                            key=order))

    def tracked(self, label: str | None, n: int | None) -> bool:
        if label is None:
            return False
        if self.states:
            return label in self.states
        return n is not None and self.max_n is not None and n <= self.max_n

    def to_dict(self) -> dict:
        track = {"states": list(self.states) if self.states else None, "max_n": self.max_n,
                 "target": self.target, "reference": self.reference}
        if self.second_order is not None:  # only when tracked: other plans keep their summary
            track["second_order"] = self.second_order
            track["second_order_target"] = self.second_order_target
        return {"base": self.base, "axes": {k: list(v) for k, v in self.axes}, "track": track}


MAX_UNITS = 10_000
"""Most units a plan may have (the product of its axes): each unit is a whole solve, and the
plan is validated unit by unit before any runs; a real convergence scan has tens to hundreds."""


def _axis_values(key: str, value) -> tuple:
    if isinstance(value, dict):
        unknown = set(value) - {"from", "to", "step"}
        if unknown or not {"from", "to"} <= set(value):
            raise ConfigError(f"axes.{key!r}: a range is {{from = ..., to = ..., step = ...}}")
        lo, hi, step = value["from"], value["to"], value.get("step", 1)
        if not all(isinstance(x, numbers.Real) and not isinstance(x, bool) for x in (lo, hi, step)) or step <= 0:
            raise ConfigError(f"axes.{key!r}: from, to and a positive step must be numbers")
        if not all(math.isfinite(x) for x in (lo, hi, step)):
            raise ConfigError(f"axes.{key!r}: from, to and step must be finite numbers")
        count = int(math.floor((hi - lo) / step + 1e-9)) + 1
        if count > MAX_UNITS:  # before the list is made: a range can name a billion values
            raise ConfigError(f"axes.{key!r}: the range from {lo} to {hi} in steps of {step} has {count} values; "
                              f"a plan may have at most {MAX_UNITS} units: use a larger step")
        vals = [lo + i * step for i in range(max(count, 0))]
        if all(isinstance(x, int) for x in (lo, hi, step)):
            vals = [int(v) for v in vals]
        value = vals
    if not isinstance(value, (list, tuple)) or len(value) == 0:
        raise ConfigError(f"axes.{key!r} is empty: give a non-empty list of values or a range")
    if len({json.dumps(v, sort_keys=True) for v in value}) != len(value):
        raise ConfigError(f"axes.{key!r}: values repeat")
    return tuple(value)


def plan_from_dict(data: dict, allow_large: bool = False) -> Plan:
    """Validated :class:`Plan` (one-line ConfigError for unknown keys, empty axes, bad values).

    Every unit is checked before any runs (:func:`check_units`); ``allow_large`` lets units
    beyond the work limits through (docs/performance.md)."""
    if not isinstance(data, dict):
        raise ConfigError("a scan plan is a TOML table with [base], [axes] and [track]")
    for key in data:
        if key not in ("base", "axes", "track"):
            raise ConfigError(f"unknown plan section [{key}]{_suggest(key, ('base', 'axes', 'track'))}; valid: [base], [axes], [track]")
    base = data.get("base", {})
    if not isinstance(base, dict):
        raise ConfigError("[base] must hold [base.ion], [base.basis], [base.solve] and/or [base.electrons]")
    for sec in base:
        if sec not in BASE_SECTIONS:
            raise ConfigError(f"unknown section [base.{sec}]{_suggest(sec, BASE_SECTIONS)}; valid: {', '.join(BASE_SECTIONS)}")
    if "electrons" in base:
        _check_electrons(base)
    axes_raw = data.get("axes")
    if not isinstance(axes_raw, dict) or not axes_raw:
        raise ConfigError("[axes] is missing or empty: give at least one axis, e.g. \"basis.size\" = [40, 60, 80]")
    axes = []
    for key, value in axes_raw.items():
        parts = key.split(".")
        if len(parts) != 2 or parts[0] not in ("ion", "basis"):
            raise ConfigError(f"axes: {key!r} must be 'ion.KEY' or 'basis.KEY', e.g. \"basis.size\"")
        sec, name = parts
        if name not in _KEYS[sec]:
            raise ConfigError(f"axes: unknown key {key!r}{_suggest(name, _KEYS[sec])}; valid in [{sec}]: {', '.join(_KEYS[sec])}")
        axes.append((key, _axis_values(key, value)))
    total = math.prod(len(v) for _, v in axes)
    if total > MAX_UNITS:
        raise ConfigError(f"axes: the plan has {total} units ({' x '.join(str(len(v)) for _, v in axes)}); "
                          f"at most {MAX_UNITS} are allowed: use fewer values per axis")
    track = data.get("track")
    if not isinstance(track, dict):
        raise ConfigError("[track] is missing: give states = [\"1s1/2\", ...] or max_n = 4 (and/or second_order = L_MAX), "
                          "and a target")
    for key in track:
        if key not in TRACK_KEYS:
            raise ConfigError(f"unknown key track.{key}{_suggest(key, TRACK_KEYS)}; valid: {', '.join(TRACK_KEYS)}")
    states = track.get("states")
    if states is not None:
        if isinstance(states, str) or not isinstance(states, list) or not states:
            raise ConfigError("track.states: give a non-empty list of labels such as [\"1s1/2\", \"2p3/2\"]")
        for s in states:
            parse_label(s)
        states = tuple(dict.fromkeys(str(s).strip() for s in states))
    max_n = track.get("max_n")
    if max_n is not None and (isinstance(max_n, bool) or not isinstance(max_n, int) or max_n < 1):
        raise ConfigError(f"track.max_n = {max_n!r}: must be an integer >= 1")
    second_order = track.get("second_order")
    if second_order is not None and (isinstance(second_order, bool) or not isinstance(second_order, int)
                                     or not 0 <= second_order <= L_MAX_LIMIT):
        raise ConfigError(f"track.second_order = {second_order!r}: must be an integer l_max with 0 <= l_max <= {L_MAX_LIMIT} "
                          "(the largest orbital l of the intermediate states)")
    so_target = track.get("second_order_target", DEFAULT_SECOND_ORDER_TARGET)
    if "second_order_target" in track and second_order is None:
        raise ConfigError("track.second_order_target needs track.second_order = L_MAX (the second-order energy to track)")
    if isinstance(so_target, bool) or not isinstance(so_target, numbers.Real) or not (0 < so_target < 1) \
            or not math.isfinite(so_target):
        raise ConfigError(f"track.second_order_target = {so_target!r}: must be an absolute accuracy in hartree "
                          "between 0 and 1, e.g. 1e-6")
    if states is None and max_n is None and second_order is None:
        raise ConfigError("[track] needs states = [...], max_n = N or second_order = L_MAX")
    if states is not None and max_n is not None:
        raise ConfigError("[track]: give either states or max_n, not both")
    target = track.get("target", 1e-9)
    if isinstance(target, bool) or not isinstance(target, numbers.Real) or not (0 < target < 1):
        raise ConfigError(f"track.target = {target!r}: must be a relative accuracy between 0 and 1, e.g. 1e-9")
    reference = track.get("reference", "auto")
    if reference not in REFERENCES:
        raise ConfigError(f"track.reference = {reference!r}: valid are {', '.join(REFERENCES)}")
    plan = Plan(base, tuple(axes), states, max_n, float(target), reference, second_order, float(so_target))
    check_units(plan, allow_large)
    if reference == "exact" and "electrons" in base:
        raise ConfigError("track.reference = 'exact' needs the bare nucleus: with [base.electrons] the levels are those "
                          "of the mean field; use reference = 'largest' or 'auto'")
    if reference == "exact":
        for unit in units(plan):
            ion = unit.config["ion"]
            if ion.get("nucleus") != "point":
                raise ConfigError("track.reference = 'exact' needs nucleus = 'point' in every unit of the scan")
    return plan


BASE_SECTIONS = ("ion", "basis", "solve", "electrons")
"""The sections of a plan's [base]: [base.electrons] (a core, docs/dhf.md) goes into every unit."""


def _plan_key(text: str) -> str:
    """An [electrons] message with its keys named as plan keys: electrons.core -> base.electrons.core."""
    return re.sub(r"(?<![\w.])(\[?)electrons([.\]])", r"\1base.electrons\2", text)


def _check_electrons(base: dict) -> None:
    """[base.electrons] through relbasis.electrons before any unit is made: its syntax, and its
    electron count against Z when Z is fixed by [base.ion] (a scanned Z is checked unit by unit,
    :func:`check_units`)."""
    ion = base.get("ion", {})
    Z = ion.get("Z") if isinstance(ion, dict) else None
    if isinstance(Z, bool) or not isinstance(Z, numbers.Real) or not math.isfinite(Z):
        Z = math.inf  # a bad or missing Z is [base.ion]'s problem, reported by check_units
    try:
        parse_electrons(base["electrons"], Z)
    except InputError as err:
        raise ConfigError(_plan_key(str(err))) from None


def check_units(plan: Plan, allow_large: bool = False) -> None:
    """Every unit of the plan (its axis values merged into the base) through the config
    validation, the defaults and their numerics check (:func:`relbasis.config.resolve`) and the
    work estimate (:mod:`relbasis.budget`), before the first unit runs.  A problem is one line
    naming the axis, the value and what is wrong."""
    from ..budget import check, solve_estimate

    everything = units(plan)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # accuracy warnings belong to the run, not to the check
        for i, unit in enumerate(everything):
            try:
                cfg, _ = resolve(from_dict(unit.config))
                check(solve_estimate(cfg), f"basis.size = {cfg.basis.size}", allow_large,
                      "--allow-large (allow_large=True)")
            except InputError as err:
                raise ConfigError(_unit_problem(unit, err, i, len(everything))) from None


def _unit_problem(unit: Unit, err: InputError, i: int, total: int) -> str:
    """The one-line message of a bad unit: the axis the problem names (else all of the unit's
    settings), its value, which unit, and the problem."""
    text = _plan_key(str(err)) if "electrons" in unit.config else str(err)
    named = [k for k in unit.settings if re.search(rf"(?<![\w.]){re.escape(k)}(?![\w])", text)]
    if named:
        key = named[0]
        return f"axes.{key!r} = {unit.settings[key]!r} (unit {i + 1} of {total}): {text}"
    where = ", ".join(f"{k} = {v!r}" for k, v in unit.settings.items())
    return f"scan unit {i + 1} of {total} ({where}): {text}"


def load_plan(path, allow_large: bool = False) -> Plan:
    p = Path(path)
    text = read_input(p, "scan plan")
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as err:
        raise InputError(f"scan plan {str(p)!r} is not valid TOML: {err}") from None
    return plan_from_dict(data, allow_large)


@dataclass(frozen=True)
class Unit:
    config: dict
    settings: dict  # the axis values of this unit, e.g. {"basis.size": 40}
    key: str
    second_order: int | None = None  # l_max of the second-order energy the unit computes, if any


def unit_key(config: dict, second_order: int | None = None) -> str:
    """The key of a unit's record: a hash of its config, the record format and the version, and
    the l_max of a tracked second-order energy.  Without one the key is what it always was, so
    existing stores stay valid; with one, a record made without it (or with another l_max) is
    not taken for this unit, whose record must carry that energy."""
    data = {"relbasis": __version__, "format": RECORD_FORMAT, "config": config}
    if second_order is not None:
        data["second_order"] = {"l_max": int(second_order)}
    text = json.dumps(data, sort_keys=True)
    return hashlib.sha256(text.encode()).hexdigest()[:24]


def _canonical_electrons(data, Z) -> dict:
    """The core in its canonical spelling (relbasis.electrons: order n, l, j; shorthands
    expanded), so that one core written two ways is one unit; as given if it does not parse
    with this unit's Z (check_units then names the problem)."""
    try:
        return parse_electrons(data, Z).to_dict()
    except (InputError, TypeError):
        return dict(data) if isinstance(data, dict) else data


def _electron_kappas(data, Z) -> tuple[int, ...]:
    """The symmetries of the core and valence subshells (none if they do not parse: check_units
    then names the problem)."""
    try:
        electrons = parse_electrons(data, Z)
    except (InputError, TypeError):
        return ()
    return (*electrons.kappas, *(() if electrons.valence is None else (electrons.valence.kappa,)))


def units(plan: Plan) -> list[Unit]:
    """The product of the axes, each merged into the base config ([base.electrons] too: it is
    part of the unit's config, hence of its key, so a changed core is a new unit)."""
    keys = [k for k, _ in plan.axes]
    out = []
    for combo in itertools.product(*(v for _, v in plan.axes)):
        cfg = {sec: dict(vals) for sec, vals in plan.base.items() if sec in ("ion", "basis")}
        cfg.setdefault("ion", {})
        cfg.setdefault("basis", {})
        for key, value in zip(keys, combo):
            sec, name = key.split(".")
            cfg[sec][name] = value
        kappas = plan.kappas()
        if "electrons" in plan.base:
            cfg["electrons"] = _canonical_electrons(plan.base["electrons"], cfg["ion"].get("Z"))
            if plan.second_order is not None:  # the sum needs the core's and the valence's symmetries too
                kappas = tuple(sorted(set(kappas) | set(_electron_kappas(cfg["electrons"], cfg["ion"].get("Z"))),
                                      key=lambda k: (abs(k), k > 0)))
        cfg["solve"] = {"kappas": list(kappas)}
        out.append(Unit(cfg, dict(zip(keys, combo)), unit_key(cfg, plan.second_order), plan.second_order))
    return out
