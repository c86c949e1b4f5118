"""How much memory and time a solve or an export will take, before it starts, and the limits.

A solve of one symmetry is dominated by dense matrices of n rows (n = 2N for N functions per
component: P and Q, or the kinetically balanced pairs) and by the generalized eigenproblem,
O(n^3).  The model, calibrated on the project's 2-core machine with ``scripts/bench_budget.py``
against a bare ``scipy.linalg.eigh(H, S)`` of the same matrices (docs/performance.md), is

    seconds(one symmetry) = SOLVE_RATIO * EIGH_SECONDS x^3 + SQUARE_SECONDS x^2 + FIXED_SECONDS,
                            x = n / 1000
    memory (bytes)        = 8 n^2 (PEAK_ROWS2 + KEPT_ROWS2 * symmetries)

with the reduced basis of the error estimate (:func:`relbasis.confidence.reduced_config`)
included in the measured ratio.  The first memory term is the peak of the symmetry being
solved (H, S, their scaled copies, the vectors, the products of the error estimate); the second
what every solved symmetry keeps (vectors, the functions sampled for the sorting).  An export
holds every array of the file in memory before it writes (:func:`export_estimate`).

Limits (a solve or export beyond them is refused with the estimate unless the caller says go
on: ``allow_large=True``, the command line's ``--allow-large``):

* :data:`TIME_LIMIT` seconds of estimated work;
* :data:`MEMORY_SHARE` of the machine's physical memory (:func:`machine_memory`);
* :data:`FILE_LIMIT` bytes of an exported file.

Even with ``allow_large`` an estimate beyond the machine's whole physical memory is refused:
the process would be killed by the system without a message.
"""

from __future__ import annotations

import os
import sys
from dataclasses import dataclass

from .errors import InputError, option

EIGH_SECONDS = 0.6
"""Seconds of ``scipy.linalg.eigh(H, S)`` (values and vectors) per (1000 rows)^3, measured here on
the matrices of a solve: 0.31..0.34 s (1600..2400 rows) at a load of 1.4 on the two cores, up to
1.23 s (3993 rows: 78.7 s) at a load of 5."""
SOLVE_RATIO = 4.0
"""One symmetry through ``relbasis.solve`` (reduced basis included) over the bare eigh at large n
(measured 4.4 at 1600..2400 rows at a load of 1.4; 2.7..4.5, and 3.2 at 3993 rows, at a load of 5)."""
SQUARE_SECONDS = 0.5
"""Per (1000 rows)^2 of one symmetry: assembly, sampling and sorting, which dominate below ~800 rows."""
FIXED_SECONDS = 0.03
"""Per symmetry, independent of n: tables, the Python around the linear algebra."""
PEAK_ROWS2 = 12.0
"""Peak memory of the symmetry being solved, in dense n x n matrices of doubles (measured 12.4
at 3993 rows, one symmetry: H, S, scaled copies, vectors, the products of the error estimate)."""
KEPT_ROWS2 = 2.3
"""What every solved symmetry keeps (vectors, sampled functions), in n x n matrices of doubles
(measured 2.2 per symmetry at 1200 rows, 1 to 8 symmetries)."""

TIME_LIMIT = 3600.0
"""Estimated seconds of work beyond which a solve or export needs ``allow_large``."""
MEMORY_SHARE = 0.5
"""Share of the machine's physical memory beyond which a solve or export needs ``allow_large``."""
FILE_LIMIT = 2e9
"""Bytes of an exported file beyond which the export needs ``allow_large``."""
PROGRESS_SECONDS = 2.0
"""Work estimated above this shows a progress bar (on stderr, when it is a terminal)."""
FALLBACK_MEMORY = 8e9
"""Physical memory assumed where the system does not say (bytes)."""


def machine_memory() -> float:
    """Physical memory of this machine in bytes (os.sysconf; FALLBACK_MEMORY where unknown)."""
    try:
        pages, size = os.sysconf("SC_PHYS_PAGES"), os.sysconf("SC_PAGE_SIZE")
    except (AttributeError, ValueError, OSError):
        return FALLBACK_MEMORY
    return float(pages * size) if pages > 0 and size > 0 else FALLBACK_MEMORY


def size_text(nbytes: float) -> str:
    """'25 GB', '737 MB', '12 kB' (decimal units, two significant digits)."""
    for unit, scale in (("TB", 1e12), ("GB", 1e9), ("MB", 1e6), ("kB", 1e3)):
        if nbytes >= scale:
            return f"{_two(nbytes / scale)} {unit}"
    return f"{nbytes:.0f} B"


def time_text(seconds: float) -> str:
    """'3 h', '12 min', '40 s', 'under a second'."""
    if seconds >= 86400 * 2:
        return f"{_two(seconds / 86400)} days"
    if seconds >= 3600:
        return f"{_two(seconds / 3600)} h"
    if seconds >= 60:
        return f"{_two(seconds / 60)} min"
    if seconds >= 1:
        return f"{_two(seconds)} s"
    return "under a second"


def _two(x: float) -> str:
    return f"{x:.2g}" if x < 100 else f"{x:.3g}" if x < 1000 else f"{x:.0f}"


@dataclass(frozen=True)
class Estimate:
    """Estimated peak memory (bytes), time (seconds) and, for an export, file size of one job."""

    memory: float
    seconds: float
    symmetries: int
    rows: int  # the largest matrix dimension of one symmetry
    file_bytes: float | None = None

    def text(self) -> str:
        """'about 25 GB of memory and 3 h for 8 symmetries' (with the file size for an export)."""
        what = f"about {size_text(self.memory)} of memory and {time_text(self.seconds)}"
        if self.file_bytes is not None:
            what = f"a file of about {size_text(self.file_bytes)}, {what}"
        sym = "symmetry" if self.symmetries == 1 else "symmetries"
        return f"{what} for {self.symmetries} {sym}"


# ----------------------------------------------------------------------------- the model


def symmetry_seconds(rows: int) -> float:
    """Estimated seconds of one symmetry of ``rows`` rows (the model of the module docstring)."""
    x = rows / 1000.0
    return SOLVE_RATIO * EIGH_SECONDS * x**3 + SQUARE_SECONDS * x**2 + FIXED_SECONDS


def rows_of(basis) -> int:
    """Upper estimate of the rows of one symmetry: two components of ``size`` functions each."""
    return 2 * int(basis.size)


def points_of(basis) -> int:
    """Radial quadrature points of a resolved basis (the family's own count, relbasis.families)."""
    from .families import family_of

    return family_of(basis).quadrature_points(basis)


def solve_estimate(config) -> Estimate:
    """Estimate of ``relbasis.solve`` for a resolved config (defaults filled in)."""
    rows = rows_of(config.basis)
    kappas = len(config.solve.kappas)
    seconds = kappas * symmetry_seconds(rows)
    memory = 8.0 * rows**2 * (PEAK_ROWS2 + KEPT_ROWS2 * kappas)
    return Estimate(memory, seconds, kappas, rows)


def size_estimate(size: int, kappas: int) -> Estimate:
    """Estimate for ``size`` functions per component and ``kappas`` symmetries, before any other
    setting is known (the message of a size beyond the absolute cap)."""
    rows = 2 * int(size)
    memory = 8.0 * rows**2 * (PEAK_ROWS2 + KEPT_ROWS2 * kappas)
    return Estimate(memory, kappas * symmetry_seconds(rows), kappas, rows)


WRITE_BYTES_PER_SECOND = 2e8
"""Export: bytes of arrays written per second (HDF5, measured here: 596 MB in 2.6 s)."""
EVAL_SECONDS = 0.7
"""Export: seconds per 1e9 multiply-adds of functions on a grid times coefficients (measured
here: P and Q of 8 symmetries of 400 rows on 20000 points, 35 s)."""


def export_estimate(config, grid_points: int | None = None, blocks=()) -> Estimate:
    """Estimate of an export of the solved config: the file (every root of every symmetry: its
    coefficients and P, Q on the grid, 2 components x 8 bytes a point, plus the integral
    blocks), the memory (the solve, the file's arrays held before writing, the functions on the
    grid) and the time (the solve, P and Q on a given grid, the integral blocks, the writing)."""
    from .angular import reduced_c

    solve = solve_estimate(config)
    rows = solve.rows
    kappas = tuple(config.solve.kappas)
    quad = points_of(config.basis)
    points = quad if grid_points is None else int(grid_points)
    per_kappa = 8.0 * rows * (rows + 2 * points + 8)  # coefficients, P and Q, energies and labels
    total = len(kappas) * per_kappa + 8.0 * 3 * quad
    work = 0.0 if grid_points is None else len(kappas) * 2.0 * points * rows * rows  # P, Q on the given grid
    if "dipole" in blocks:
        pairs = sum(1 for a in kappas for b in kappas if a < b and reduced_c(1, b, a) != 0)
        total += pairs * 2 * 8.0 * rows * rows
        work += pairs * 4.0 * quad * rows * rows  # length and velocity forms, P and Q parts
    if "hyperfine" in blocks:
        total += len(kappas) * 8.0 * rows * rows
        work += len(kappas) * quad * rows * rows
    components = 4 * 8.0 * points * rows  # P, Q, D+P, D-Q of the functions on the grid (one symmetry)
    memory = solve.memory + total + components
    seconds = solve.seconds + work / 1e9 * EVAL_SECONDS + total / WRITE_BYTES_PER_SECOND
    return Estimate(memory, seconds, len(kappas), rows, total)


# ----------------------------------------------------------------------------- the limits


def check(estimate: Estimate, what: str, allow_large: bool = False, flag: str = option("allow_large=True", "--allow-large")) -> Estimate:
    """Refuse ``estimate`` beyond the limits (InputError naming ``what``, the estimate, the limit
    and ``flag``); with ``allow_large`` only beyond the machine's physical memory."""
    ram = machine_memory()
    if estimate.memory > ram:
        raise BudgetError(f"{what}: {estimate.text()}; this machine has {size_text(ram)} of memory, "
                          f"so it cannot run here (reduce the size, the symmetries or the grid)")
    if allow_large:
        return estimate
    over = []
    if estimate.memory > MEMORY_SHARE * ram:
        over.append(f"{size_text(MEMORY_SHARE * ram)} of memory ({MEMORY_SHARE:.0%} of this machine's)")
    if estimate.seconds > TIME_LIMIT:
        over.append(f"{time_text(TIME_LIMIT)} of work")
    if estimate.file_bytes is not None and estimate.file_bytes > FILE_LIMIT:
        over.append(f"a {size_text(FILE_LIMIT)} file")
    if over:
        raise BudgetError(f"{what}: {estimate.text()}; the limit is {' and '.join(over)}; "
                          f"add {flag} to go on")
    return estimate


class BudgetError(InputError):
    """A job estimated beyond the work limits (the message carries the estimate)."""


def show_progress(estimate: Estimate, progress: bool | None, stream=None) -> bool:
    """Whether to show a progress bar: as asked (True/False), else (None) when the work is
    estimated above PROGRESS_SECONDS and the stream (stderr) is a terminal."""
    if progress is not None:
        return bool(progress)
    stream = sys.stderr if stream is None else stream
    try:
        tty = stream.isatty()
    except (AttributeError, ValueError):
        tty = False
    return tty and estimate.seconds > PROGRESS_SECONDS
