"""Convergence scans: many bases, in parallel, resumable, locally or on a Dask cluster.

A plan (TOML) gives a base config, axes whose product is the scan, the states to track, the
reference and a target accuracy:

```toml
[base.ion]            # any [ion] key of the config file
Z = 74
nucleus = "point"
[base.basis]          # any [basis] key
balance = "dkb"
[axes]                # dotted key = list of values (or {from, to, step}); the scan is their product
"basis.size" = [40, 60, 80, 100, 120]
"basis.order" = [7, 9]
[track]
states = ["1s1/2", "2p3/2"]   # or max_n = 4: every bound state with n <= 4
target = 1e-9
reference = "auto"            # "exact" (point nucleus), "largest" (largest basis of the scan), "auto"
```

Each *unit* is one basis for one ion with the symmetries the tracked states need.  Finished
units are appended to ``results.jsonl`` in the output folder, one JSON line each, keyed by a
hash of the unit's full configuration and the relbasis version; a rerun (or a changed plan)
computes only the units whose key is not there yet.  Work runs in joblib's process pool
(``jobs``) or, with ``scheduler``, on a dask.distributed cluster through joblib's Dask backend.
"""

from __future__ import annotations

import csv
import errno
import hashlib
import itertools
import json
import math
import numbers
import os
import re
import time
import tomllib
import warnings
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from .version import __version__
from .analytic import dirac_coulomb_energy
from .vocabulary import LETTERS as _LETTERS, orbital_l
from .config import KEYS as _KEYS, from_dict, resolve
from .errors import ConfigError, InputError
from .validate import suggest as _suggest
from .outputs import checked_path, read_input, atomic_text, atomic_write, directory_for, os_failure, read_manifest, write_manifest

REFERENCES = ("auto", "exact", "largest")
_LABEL = re.compile(r"^(\d+)([spdfghiklmnoqrtuvwxyz])(\d+)/2$")


# ----------------------------------------------------------------------------- the plan


def parse_label(label: str) -> tuple[int, int]:
    """'2p3/2' -> (n, kappa) = (2, -2)."""
    m = _LABEL.match(str(label).strip())
    if not m:
        raise ConfigError(f"track.states: {label!r} is not a state label such as '1s1/2' or '2p3/2'")
    n, l, j2 = int(m.group(1)), _LETTERS.index(m.group(2)), int(m.group(3))
    if j2 == 2 * l + 1:
        kappa = -(l + 1)
    elif j2 == 2 * l - 1 and l > 0:
        kappa = l
    else:
        raise ConfigError(f"track.states: {label!r} has j = {j2}/2, impossible for l = {l}")
    if n < l + 1:
        raise ConfigError(f"track.states: {label!r} needs n >= l + 1 = {l + 1}")
    return n, kappa


@dataclass(frozen=True)
class Plan:
    base: dict
    axes: tuple[tuple[str, tuple], ...]
    states: tuple[str, ...] | None
    max_n: int | None
    target: float
    reference: str

    def kappas(self) -> tuple[int, ...]:
        if self.states:
            return tuple(sorted({parse_label(s)[1] for s in self.states}, key=lambda k: (abs(k), k > 0)))
        solve = self.base.get("solve", {})
        if "kappas" in solve:
            return tuple(solve["kappas"])
        return tuple(k for k in (-1, 1, -2, 2, -3, 3, -4, 4, -5, 5) if orbital_l(k) <= self.max_n - 1)

    def tracked(self, label: str | None, n: int | None) -> bool:
        if label is None:
            return False
        if self.states:
            return label in self.states
        return n is not None and n <= self.max_n

    def to_dict(self) -> dict:
        return {"base": self.base, "axes": {k: list(v) for k, v in self.axes},
                "track": {"states": list(self.states) if self.states else None, "max_n": self.max_n,
                          "target": self.target, "reference": self.reference}}


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
        raise ConfigError("[base] must hold [base.ion], [base.basis] and/or [base.solve]")
    for sec in base:
        if sec not in _KEYS:
            raise ConfigError(f"unknown section [base.{sec}]{_suggest(sec, _KEYS)}; valid: ion, basis, solve")
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
        raise ConfigError("[track] is missing: give states = [\"1s1/2\", ...] or max_n = 4, and a target")
    for key in track:
        if key not in ("states", "max_n", "target", "reference"):
            raise ConfigError(f"unknown key track.{key}{_suggest(key, ('states', 'max_n', 'target', 'reference'))}; "
                              "valid: states, max_n, target, reference")
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
    if states is None and max_n is None:
        raise ConfigError("[track] needs states = [...] or max_n = N")
    if states is not None and max_n is not None:
        raise ConfigError("[track]: give either states or max_n, not both")
    target = track.get("target", 1e-9)
    if isinstance(target, bool) or not isinstance(target, numbers.Real) or not (0 < target < 1):
        raise ConfigError(f"track.target = {target!r}: must be a relative accuracy between 0 and 1, e.g. 1e-9")
    reference = track.get("reference", "auto")
    if reference not in REFERENCES:
        raise ConfigError(f"track.reference = {reference!r}: valid are {', '.join(REFERENCES)}")
    plan = Plan(base, tuple(axes), states, max_n, float(target), reference)
    check_units(plan, allow_large)
    if reference == "exact":
        for unit in units(plan):
            ion = unit.config["ion"]
            if ion.get("nucleus") != "point":
                raise ConfigError("track.reference = 'exact' needs nucleus = 'point' in every unit of the scan")
    return plan


def check_units(plan: Plan, allow_large: bool = False) -> None:
    """Every unit of the plan (its axis values merged into the base) through the config
    validation, the defaults and their numerics check (:func:`relbasis.config.resolve`) and the
    work estimate (:mod:`relbasis.budget`), before the first unit runs.  A problem is one line
    naming the axis, the value and what is wrong."""
    from .budget import check, solve_estimate

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
    text = str(err)
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


# ----------------------------------------------------------------------------- units


@dataclass(frozen=True)
class Unit:
    config: dict
    settings: dict  # the axis values of this unit, e.g. {"basis.size": 40}
    key: str


RECORD_FORMAT = 2  # part of every key: records of another layout are not reused


def unit_key(config: dict) -> str:
    text = json.dumps({"relbasis": __version__, "format": RECORD_FORMAT, "config": config}, sort_keys=True)
    return hashlib.sha256(text.encode()).hexdigest()[:24]


def units(plan: Plan) -> list[Unit]:
    """The product of the axes, each merged into the base config."""
    keys = [k for k, _ in plan.axes]
    out = []
    for combo in itertools.product(*(v for _, v in plan.axes)):
        cfg = {sec: dict(vals) for sec, vals in plan.base.items() if sec in ("ion", "basis")}
        cfg.setdefault("ion", {})
        cfg.setdefault("basis", {})
        for key, value in zip(keys, combo):
            sec, name = key.split(".")
            cfg[sec][name] = value
        cfg["solve"] = {"kappas": list(plan.kappas())}
        out.append(Unit(cfg, dict(zip(keys, combo)), unit_key(cfg)))
    return out


def run_unit(config: dict) -> dict:
    """Solve one unit and return its record (runs in a worker process)."""
    from .solver import solve

    t0 = time.perf_counter()
    sol = solve(config, allow_large=True, progress=False)  # its work was checked with the plan (check_units)
    levels = {}
    spurious = 0
    for kappa in sol.kappas:
        spec = sol[kappa]
        spurious += len(spec.indices("spurious"))
        for e, n, lab in zip(spec.energies, spec.n, spec.labels):
            if lab is not None:
                levels[lab] = float(e)
    return {"key": unit_key(config), "config": config, "levels": levels, "spurious": spurious,
            "nucleus": sol.nucleus.model, "Z": float(sol.nucleus.Z),
            "resolved_basis": sol.config.to_dict()["basis"], "seconds": time.perf_counter() - t0}


# ----------------------------------------------------------------------------- the store


class Store:
    """Append-only JSON-lines file of finished units; a torn last line is ignored."""

    def __init__(self, path: Path):
        self.path = Path(path)

    def load(self) -> dict[str, dict]:
        out = {}
        if not self.path.exists():
            return out
        with self.path.open("r", encoding="utf-8") as fh:
            for line in fh:
                try:
                    rec = json.loads(line)
                except json.JSONDecodeError:
                    continue  # a line cut short by an interruption
                if isinstance(rec, dict) and "key" in rec:
                    out[rec["key"]] = rec
        return out

    def append(self, record: dict) -> None:
        """One os.write of one line with O_APPEND: the line lands whole, and once written it is in
        the kernel and survives the process being killed; :meth:`sync` flushes it to the disk."""
        data = (json.dumps(record, sort_keys=True) + "\n").encode()
        try:
            fd = os.open(self.path, os.O_WRONLY | os.O_APPEND | os.O_CREAT, 0o666)  # the umask decides
            try:
                if os.write(fd, data) != len(data):  # a short write: the disk is full; the torn line is ignored on reading
                    raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))
            finally:
                os.close(fd)
        except OSError as err:
            raise os_failure(err, "append to the scan results", self.path) from None

    def sync(self) -> None:
        if self.path.exists():
            try:
                fd = os.open(self.path, os.O_RDONLY)
                try:
                    os.fsync(fd)
                finally:
                    os.close(fd)
            except OSError as err:
                raise os_failure(err, "flush the scan results", self.path) from None


# ----------------------------------------------------------------------------- execution


@dataclass(frozen=True)
class ScanResult:
    plan: Plan
    out: Path
    total: int
    computed: int
    summary: dict = field(repr=False)


def _execute(todo: list[Unit], jobs: int, scheduler: str | None, store: Store, progress: bool) -> int:
    from joblib import Parallel, delayed, parallel_config
    from tqdm import tqdm

    if not todo:
        return 0
    calls = (delayed(run_unit)(u.config) for u in todo)
    bar = tqdm(total=len(todo), desc="units", unit="unit", disable=not progress)
    count = 0
    try:
        if scheduler:
            try:
                from distributed import Client
            except ImportError:
                raise InputError("--scheduler needs the 'cluster' extra: pip install 'relbasis[cluster]'") from None
            try:
                client = Client(scheduler, timeout="10s")
            except (OSError, TimeoutError, ValueError, TypeError) as err:
                reason = (str(err).splitlines() or [type(err).__name__])[0]
                raise InputError(f"--scheduler {scheduler!r}: cannot reach the scheduler ({reason})") from None
            try:
                with parallel_config(backend="dask"):
                    for rec in Parallel(return_as="generator_unordered")(calls):
                        store.append(rec)
                        count += 1
                        bar.update()
            finally:
                client.close()
        else:
            for rec in Parallel(n_jobs=jobs, return_as="generator_unordered")(calls):
                store.append(rec)
                count += 1
                bar.update()
    finally:
        bar.close()
    return count


SCHEDULER_ADDRESS = re.compile(r"^(?:(tcp|tls|ws|wss|ucx|inproc)://)?(\[[0-9a-fA-F:.]+\]|[A-Za-z0-9_.-]+):(\d{1,5})$")
"""A dask.distributed scheduler address: [PROTOCOL://]HOST:PORT."""


def check_scheduler(address: str) -> str:
    """A scheduler address that dask.distributed can dial, or a one-line error saying what is."""
    m = SCHEDULER_ADDRESS.match(address.strip()) if isinstance(address, str) else None
    if m is None or not 0 < int(m.group(3)) < 65536:
        raise InputError(f"--scheduler {address!r}: give the scheduler's address as [PROTOCOL://]HOST:PORT, "
                         f"e.g. tcp://127.0.0.1:8786 (protocols tcp, tls, ws, wss, ucx, inproc)")
    return address.strip()


OUTPUT_KIND = "scan"
FIXED_OUTPUTS = ("results.jsonl", "summary.json", "convergence.csv")


def _looks_like_results(path: Path) -> bool:
    """A results store of relbasis (written before folders carried a manifest): every whole line a record."""
    try:
        with path.open("r", encoding="utf-8") as fh:
            lines = fh.read().splitlines()
    except (OSError, UnicodeDecodeError):
        return False
    records = 0
    for i, line in enumerate(lines):
        try:
            rec = json.loads(line)
        except json.JSONDecodeError:
            if i == len(lines) - 1:
                continue  # a line cut short by an interruption
            return False
        if not (isinstance(rec, dict) and "key" in rec and "config" in rec and "levels" in rec):
            return False
        records += 1
    return records > 0


def claim_folder(out: Path) -> set[str]:
    """Check that the scan may write into ``out``; returns the names a scan wrote there before.

    A scan folder is resumed: its results store is appended to, and its analysis (summary,
    table, pictures: all derived from the store, so nothing is lost) is rewritten for the plan
    at hand.  A file relbasis did not write is never replaced.
    """
    manifest = read_manifest(out)
    ours = {name for name, kind in manifest.items() if kind == OUTPUT_KIND}
    if not ours and (out / "results.jsonl").is_file() and _looks_like_results(out / "results.jsonl"):
        # a folder written before manifests existed: its results store says it is a scan folder
        ours = {p.name for p in out.iterdir() if p.is_file() and p.name not in manifest
                and (p.name in FIXED_OUTPUTS or _PICTURE.match(p.name))}
    present = [p.name for p in out.iterdir() if p.name in FIXED_OUTPUTS or _PICTURE.match(p.name)]
    foreign = sorted(n for n in present if n not in ours or not (out / n).is_file() or (out / n).is_symlink())
    if foreign:
        raise InputError(f"--out {str(out)!r} holds {foreign[0]!r}, which relbasis did not write there: it is never "
                         f"replaced; move it or choose another folder")
    return ours


def scan(plan, out="scan-out", jobs: int = 1, scheduler: str | None = None, progress: bool = True,
         allow_large: bool = False) -> ScanResult:
    """Run (or resume) a scan and write its analysis into ``out``.

    Every unit is validated before the first runs (:func:`check_units`); ``allow_large`` lets
    units beyond the work limits through.  ``out`` may hold other files: the scan writes only
    results.jsonl, summary.json, convergence.csv, error_*.png and its manifest, and replaces
    only files it wrote itself.

    Parameters
    ----------
    plan : Plan, dict, str or os.PathLike
        The plan (docs/scan.md): a :class:`Plan`, a mapping with [base], [axes] and [track], or
        the path of a TOML plan.
    out : str or os.PathLike
        The output directory (created if missing; results already there are reused).
    jobs : int
        Worker processes (-1: all cores).
    scheduler : str, optional
        Address of a dask scheduler to run the units on instead.
    progress : bool
        A progress bar on stderr.
    allow_large : bool
        Run units beyond the work limits.

    Returns
    -------
    ScanResult
        The analysis written into ``out``.
    """
    if isinstance(plan, Plan):
        check_units(plan, allow_large)
    elif isinstance(plan, dict):
        plan = plan_from_dict(plan, allow_large)
    else:
        plan = load_plan(checked_path(plan, "scan plan"), allow_large)
    if isinstance(jobs, bool) or not isinstance(jobs, int) or jobs == 0 or jobs < -1:
        raise InputError(f"--jobs {jobs!r}: give a positive number of processes (or -1 for all cores)")
    if scheduler is not None:
        scheduler = check_scheduler(scheduler)
    out = checked_path(out, "out")
    if out.exists() and not out.is_dir():
        raise InputError(f"--out {str(out)!r} is a file, not a directory")
    ours = claim_folder(out) if out.is_dir() else set()
    with directory_for(out, "--out", parents=True):  # a folder made for nothing is taken back
        write_manifest(out, OUTPUT_KIND, ours | {"results.jsonl"})  # before the first record lands
    store = Store(out / "results.jsonl")
    everything = units(plan)
    done = store.load()
    todo = [u for u in everything if u.key not in done]
    try:
        computed = _execute(todo, jobs, scheduler, store, progress)
    finally:
        store.sync()
    records = store.load()
    summary = analyse(plan, everything, records)
    written = write_outputs(out, summary, jobs if not scheduler else 1, ours)
    for stale in sorted(n for n in ours if _PICTURE.match(n) and n not in written):
        try:  # a picture of a state this plan no longer tracks: ours, so it goes
            (out / stale).unlink()
        except OSError:
            written.add(stale)  # still there: keep it on the record
    write_manifest(out, OUTPUT_KIND, written | {"results.jsonl"})
    return ScanResult(plan, out, len(everything), computed, summary)


# ----------------------------------------------------------------------------- analysis


def _ion_key(unit: Unit) -> str:
    return json.dumps(unit.config["ion"], sort_keys=True)


def _size(rec: dict) -> int:
    return int(rec["resolved_basis"]["size"])


def fit_rate(sizes, errors) -> dict | None:
    """Observed convergence in size: exponential err ~ exp(-a N) or algebraic err ~ N^-p,
    whichever straight-line fit (log err against N, or against log N) leaves less residual."""
    pts = [(n, e) for n, e in zip(sizes, errors) if e is not None and e > 1e-15]
    if len(pts) < 3:
        return None
    n = np.array([p[0] for p in pts], dtype=float)
    y = np.log(np.array([p[1] for p in pts]))
    fits = {}
    for kind, x in (("exponential", n), ("power", np.log(n))):
        A = np.vstack([x, np.ones_like(x)]).T
        coef, res, *_ = np.linalg.lstsq(A, y, rcond=None)
        resid = float(np.sum((A @ coef - y) ** 2))
        fits[kind] = (resid, -float(coef[0]))
    kind = min(fits, key=lambda k: fits[k][0])
    rate = fits[kind][1]
    text = (f"error ~ exp(-{rate:.3g} N): x{math.exp(10 * rate):.3g} per 10 functions" if kind == "exponential"
            else f"error ~ N^-{rate:.3g}")
    return {"form": kind, "rate": rate, "text": text, "points": len(pts)}


def analyse(plan: Plan, everything: list[Unit], records: dict[str, dict]) -> dict:
    """Convergence tables per tracked state, rates, and the smallest basis meeting the target."""
    done = [(u, records[u.key]) for u in everything if u.key in records]
    groups: dict[str, list] = {}
    for u, rec in done:
        groups.setdefault(_ion_key(u), []).append((u, rec))
    labels = sorted({lab for _, rec in done for lab in rec["levels"]
                     if plan.tracked(lab, parse_label(lab)[0])}, key=lambda s: (parse_label(s)[0], s))
    references = {}
    for gk, members in groups.items():
        ion = json.loads(gk)
        point = members[0][1]["nucleus"] == "point" and members[0][1]["Z"] > 0
        use_exact = plan.reference == "exact" or (plan.reference == "auto" and point)
        largest = max(members, key=lambda m: (_size(m[1]), m[1]["resolved_basis"].get("order") or 0))
        refs = {}
        for lab in labels:
            if use_exact:
                n, kappa = parse_label(lab)
                refs[lab] = {"energy": dirac_coulomb_energy(members[0][1]["Z"], n, kappa), "source": "exact Dirac–Coulomb"}
            elif lab in largest[1]["levels"]:
                refs[lab] = {"energy": largest[1]["levels"][lab], "source": f"largest basis {largest[0].settings}",
                             "unit": largest[0].key}
        references[gk] = {"ion": ion, "states": refs}
    states = {}
    for lab in labels:
        rows = []
        for u, rec in done:
            ref = references[_ion_key(u)]["states"].get(lab)
            e = rec["levels"].get(lab)
            err = None if (e is None or ref is None) else abs(e / ref["energy"] - 1)
            rows.append({"settings": u.settings, "ion": u.config["ion"], "basis": u.config["basis"],
                         "size": _size(rec), "spurious_roots": rec.get("spurious", 0), "energy_hartree": e,
                         "reference_hartree": None if ref is None else ref["energy"], "relative_error": err,
                         "is_reference": ref is not None and ref.get("unit") == u.key})
        keyed = sorted(((_row_series(r), r["size"], i) for i, r in enumerate(rows)))
        rows = [rows[i] for _, _, i in keyed]
        by_series: dict[str, list] = {}
        for (sk, _, _), r in zip(keyed, rows):
            if not r["is_reference"]:
                by_series.setdefault(sk, []).append((r["size"], r["relative_error"]))
        rates = []
        for sk, pts in by_series.items():
            fit = fit_rate([p[0] for p in pts], [p[1] for p in pts])
            if fit:
                rates.append({"series": json.loads(sk), **fit})
        states[lab] = {"rows": rows, "rates": rates}
    return {"relbasis": __version__, "plan": plan.to_dict(), "target": plan.target, "units": len(everything),
            "finished": len(done), "references": list(references.values()), "states": states,
            "recommended": _recommend(plan, states)}


def _row_series(row: dict) -> str:
    """Everything but the size: the rows along one line of a convergence picture."""
    basis = {k: v for k, v in row["basis"].items() if k != "size"}
    return json.dumps({"ion": row["ion"], "basis": basis}, sort_keys=True)


def _recommend(plan: Plan, states) -> dict | None:
    """The smallest basis (fewest functions; then the smaller worst error) meeting the target for every tracked state
    of every ion of the scan; a unit serving as the reference is no evidence for itself."""
    verdict: dict[str, dict] = {}
    for st in states.values():
        for row in st["rows"]:
            bk = json.dumps(row["basis"], sort_keys=True)
            cand = verdict.setdefault(bk, {"basis": row["basis"], "size": row["size"], "ok": True, "worst": 0.0})
            err = row["relative_error"]
            if row["is_reference"] or err is None or err > plan.target or row["spurious_roots"]:
                cand["ok"] = False  # a basis with spurious roots is not recommended, however accurate
            if err is not None:
                cand["worst"] = max(cand["worst"], err)
    good = [c for c in verdict.values() if c["ok"]]
    if not good:
        return None
    best = min(good, key=lambda c: (c["size"], c["worst"]))
    return {"basis": best["basis"], "size": best["size"], "worst_relative_error": best["worst"]}


# ----------------------------------------------------------------------------- outputs


_PICTURE = re.compile(r"^error_[0-9a-z_]+\.png$")


def _picture_name(label: str) -> str:
    return "error_" + re.sub(r"[^0-9a-z]", "_", label) + ".png"


def write_outputs(out: Path, summary: dict, jobs: int = 1, ours=frozenset()) -> set[str]:
    """summary.json, convergence.csv and one PNG per tracked state, each written atomically
    under a unique temporary name; returns the names written.  A name that exists and is not in
    ``ours`` (what relbasis wrote there before) is refused, not replaced.  The pictures are drawn
    by ``jobs`` processes, as matplotlib's text and lines take time."""
    pictures = {lab: _picture_name(lab) for lab in summary["states"]}
    for name in (*FIXED_OUTPUTS[1:], *pictures.values()):
        p = out / name
        if (p.exists() or p.is_symlink()) and name not in ours:
            raise InputError(f"--out {str(out)!r} holds {name!r}, which relbasis did not write there: it is never "
                             f"replaced; move it and run the scan again (its results are kept)")
    atomic_text(out / "summary.json", json.dumps(summary, indent=1, sort_keys=True), "write the scan summary")
    lines = []
    for lab, st in summary["states"].items():
        for r in st["rows"]:
            lines.append({"state": lab, **{k: v for k, v in r["settings"].items()}, "size": r["size"],
                          "energy_hartree": r["energy_hartree"], "reference_hartree": r["reference_hartree"],
                          "relative_error": r["relative_error"], "is_reference": r["is_reference"]})
    fields = []
    for line in lines:
        for k in line:
            if k not in fields:
                fields.append(k)

    def write_csv(tmp):
        with open(tmp, "w", newline="", encoding="utf-8") as fh:
            w = csv.DictWriter(fh, fieldnames=fields)
            w.writeheader()
            w.writerows(lines)

    atomic_write(out / "convergence.csv", write_csv, "write the convergence table")
    from joblib import Parallel, delayed

    Parallel(n_jobs=jobs)(delayed(_picture)(lab, st, summary["target"], out / pictures[lab])
                          for lab, st in summary["states"].items())
    return {"summary.json", "convergence.csv", *pictures.values()}


def _picture(label: str, state: dict, target: float, path: Path) -> None:
    from .plots import scan_figure

    atomic_write(path, lambda tmp: scan_figure(label, state, target, tmp), "write the picture")


def summary_table(summary: dict) -> str:
    """The printed form of a scan's analysis."""
    lines = [f"scan: {summary['finished']} of {summary['units']} units finished; target {summary['target']:g}"]
    for lab, st in summary["states"].items():
        lines.append("")
        lines.append(f"{lab}")
        lines.append(f"  {'settings':<48} {'size':>5} {'energy (hartree)':>22} {'rel. error':>10}")
        for r in st["rows"]:
            settings = ", ".join(f"{k.split('.', 1)[1]}={v}" for k, v in r["settings"].items())
            err = "reference" if r["is_reference"] else ("-" if r["relative_error"] is None else f"{r['relative_error']:.2e}")
            if r["spurious_roots"]:
                err += f" ({r['spurious_roots']} spurious)"
            e = "-" if r["energy_hartree"] is None else f"{r['energy_hartree']:.15g}"
            lines.append(f"  {settings:<48} {r['size']:>5} {e:>22} {err:>10}")
        for rate in st["rates"]:
            where = ", ".join(f"{k}={v}" for k, v in sorted({**rate["series"]["ion"], **rate["series"]["basis"]}.items()))
            lines.append(f"  rate ({where}): {rate['text']} ({rate['points']} points)")
    rec = summary["recommended"]
    lines.append("")
    if rec is None:
        lines.append("recommended: none of the bases meets the target for every tracked state")
    else:
        lines.append(f"recommended: {json.dumps(rec['basis'], sort_keys=True)} (worst error {rec['worst_relative_error']:.2e})")
    return "\n".join(lines)
