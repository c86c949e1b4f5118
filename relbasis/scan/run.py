"""Running a scan: one unit in a worker (:func:`run_unit`), the units in joblib's process pool or on
a dask.distributed cluster (:func:`_execute`), and the whole scan (:func:`scan`).
"""

from __future__ import annotations

import re
import time
from dataclasses import dataclass, field
from pathlib import Path

from ..errors import InputError, option
from ..perturbation import second_order as _second_order
from ..outputs import checked_path, directory_for, write_manifest
from .analysis import analyse
from .output import _PICTURE, OUTPUT_KIND, claim_folder, write_outputs
from .plan import Plan, Unit, check_units, load_plan, plan_from_dict, unit_key, units
from .store import Store


def run_unit(config: dict, second_order: int | None = None) -> dict:
    """Solve one unit and return its record (runs in a worker process); with ``second_order`` =
    l_max, the second-order energy summed over the unit's own Solution too (:func:`second_order_record`)."""
    from ..solver import solve

    t0 = time.perf_counter()
    # its work was checked with the plan (check_units); one thread: the scan's own workers
    # (processes, or a cluster's) already fill the cores
    sol = solve(config, allow_large=True, progress=False, threads=1)
    levels = {}
    spurious = 0
    for kappa in sol.kappas:
        spec = sol[kappa]
        spurious += len(spec.indices("spurious"))
        for e, n, lab in zip(spec.energies, spec.n, spec.labels):
            if lab is not None:
                levels[lab] = float(e)
    record = {"key": unit_key(config, second_order), "config": config, "levels": levels, "spurious": spurious,
              "nucleus": sol.nucleus.model, "Z": float(sol.nucleus.Z),
              "resolved_basis": sol.config.to_dict()["basis"]}
    if sol.scf is not None:  # only with a core: bare-nucleus records keep their layout (and their keys)
        record["scf"] = scf_record(sol.scf)
    if second_order is not None:  # only when tracked: other records keep their layout (and their keys)
        record["second_order"] = second_order_record(sol, second_order)
    record["seconds"] = time.perf_counter() - t0
    return record


def scf_record(mean_field) -> dict:
    """The figures of a unit's mean field kept in the store: the core's total energy, its
    orbital energies {label: hartree} and how the iteration ended."""
    return {"total_energy_hartree": float(mean_field.total_energy),
            "orbitals": {k: float(v) for k, v in mean_field.orbitals.items()},
            "iterations": int(mean_field.iterations), "converged": bool(mean_field.converged)}


SECOND_ORDER_FIELDS = ("kind", "energy_hartree", "extrapolated_hartree", "uncertainty_hartree",
                       "increments_hartree", "l_max", "flags")
"""The figures of a second-order energy kept in a unit's record (the keys of SecondOrder.to_dict)."""


def second_order_record(sol, l_max: int) -> dict:
    """The unit's second-order energy (relbasis.second_order on its own Solution, no-pair): the
    fields of :data:`SECOND_ORDER_FIELDS`, or {"l_max", "error"} with the one-line reason when
    the basis cannot carry the sum (e.g. it does not resolve an occupied orbital).  That verdict
    is a property of the unit's config, as deterministic as its energy, so it is stored; the
    analysis shows it and never recommends that basis."""
    try:
        res = _second_order(sol, l_max, progress=False).to_dict()
    except InputError as err:
        return {"l_max": int(l_max), "error": str(err)}
    return {k: res[k] for k in SECOND_ORDER_FIELDS}


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
    calls = (delayed(run_unit)(u.config, u.second_order) for u in todo)
    bar = tqdm(total=len(todo), desc="units", unit="unit", disable=not progress)
    count = 0
    try:
        if scheduler:
            try:
                from distributed import Client
            except ImportError:
                raise InputError(f"{option('scheduler', '--scheduler')} needs the 'cluster' extra: pip install 'relbasis[cluster]'") from None
            try:
                client = Client(scheduler, timeout="10s")
            except (OSError, TimeoutError, ValueError, TypeError) as err:
                reason = (str(err).splitlines() or [type(err).__name__])[0]
                raise InputError(f"{option('scheduler', '--scheduler')} = {scheduler!r}: cannot reach the scheduler ({reason})") from None
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
        raise InputError(f"{option('scheduler', '--scheduler')} = {address!r}: give the scheduler's address as [PROTOCOL://]HOST:PORT, "
                         f"e.g. tcp://127.0.0.1:8786 (protocols tcp, tls, ws, wss, ucx, inproc)")
    return address.strip()

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
        raise InputError(f"{option('jobs', '--jobs')} = {jobs!r}: give a positive number of processes (or -1 for all cores)")
    if scheduler is not None:
        scheduler = check_scheduler(scheduler)
    out = checked_path(out, "out")
    if out.exists() and not out.is_dir():
        raise InputError(f"{option('out', '--out')} = {str(out)!r} is a file, not a directory")
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
