"""Measured rms nuclear charge radii, read at run time from an optional extra.

The values are those of I. Angeli, K. P. Marinova, "Table of experimental nuclear ground state
charge radii: An update", At. Data Nucl. Data Tables 99, 69 (2013).  relbasis ships no copy
of that table (nor any part of it): the PyPI package ``nucleardatapy`` (extra ``radii``,
``pip install "relbasis[radii]"``) carries it as a CSV file, under the licence CC BY-NC-ND
4.0, which allows reading it at run time.  The file is found through the import system
without importing the package (its import pulls in matplotlib and takes about a second), it
is parsed here and kept in memory for the rest of the process.

Columns of the file (nucleardatapy 1.0.2, ``nucleardatapy/data/nuclei/radch/2013-Angeli.csv``):
``z, symbol, n, a, radius_val, radius_unc, radius_preliminary_val, radius_preliminary_unc``,
the radii in fm.  We read ``radius_val`` and ``radius_unc``, the values of the 2013
compilation; the ``preliminary`` columns (later, unpublished revisions for a few nuclides)
are not used.  The row of the free neutron (z = 0, whose entry is a mean-square radius in
fm^2) is skipped.
"""

from __future__ import annotations

import csv
import functools
import importlib.metadata
import importlib.util
import io
from dataclasses import dataclass
from pathlib import Path

from .errors import InputError

TABLE_REFERENCE = "I. Angeli, K. P. Marinova, At. Data Nucl. Data Tables 99, 69 (2013)"
"""The compilation the measured radii come from."""

DISTRIBUTION = "nucleardatapy"
"""The package (import name and distribution name) that carries the table."""

TABLE_FILE = "data/nuclei/radch/2013-Angeli.csv"
"""Where the table lies inside that package."""

EXTRA_HINT = 'pip install "relbasis[radii]" (which adds nucleardatapy)'

_COLUMNS = ("z", "a", "radius_val", "radius_unc")


@dataclass(frozen=True)
class MeasuredRadius:
    """One nuclide's rms charge radius from the compilation (fm)."""

    Z: int
    A: int
    rms_radius_fm: float
    uncertainty_fm: float


def _table_path() -> Path:
    """The CSV inside the installed extra, or InputError saying how to install it."""
    spec = importlib.util.find_spec(DISTRIBUTION)  # locates the package; runs none of its code
    if spec is None or not spec.submodule_search_locations:
        raise InputError(f"radius = 'measured' needs the optional extra with the "
                         f"{TABLE_REFERENCE} table: {EXTRA_HINT} (or give rms_radius_fm)")
    for root in spec.submodule_search_locations:
        path = Path(root) / TABLE_FILE
        if path.is_file():
            return path
    raise InputError(f"radius = 'measured': {DISTRIBUTION} {_version()} is installed but has no "
                     f"{TABLE_FILE}; {EXTRA_HINT} installs a version that has it")


def _version() -> str:
    try:
        return importlib.metadata.version(DISTRIBUTION)
    except importlib.metadata.PackageNotFoundError:
        return "(version unknown)"


def _parse(text: str, where: str) -> dict[int, dict[int, MeasuredRadius]]:
    """{Z: {A: MeasuredRadius}} from the CSV text; the header is the '#' line naming the columns."""
    lines = text.splitlines()
    header = next((ln.lstrip("#").strip() for ln in lines
                   if ln.startswith("#") and ln.lstrip("#").strip().startswith("z,")), None)
    if header is None or not set(_COLUMNS) <= set(header.split(",")):
        raise InputError(f"{where}: no column header with {', '.join(_COLUMNS)}; "
                         f"this {DISTRIBUTION} version lays the table out differently ({EXTRA_HINT})")
    body = [ln for ln in lines if ln.strip() and not ln.startswith("#")]
    table: dict[int, dict[int, MeasuredRadius]] = {}
    try:
        for row in csv.DictReader(io.StringIO("\n".join([header, *body]))):
            Z, A = int(row["z"]), int(row["a"])
            if Z < 1:  # the free neutron: no nucleus here, and its entry is <r^2>, not a radius
                continue
            value, unc = float(row["radius_val"]), float(row["radius_unc"] or "nan")
            if not value > 0:
                raise ValueError(f"radius {value} for Z = {Z}, A = {A}")
            table.setdefault(Z, {})[A] = MeasuredRadius(Z, A, value, unc)
    except (KeyError, TypeError, ValueError) as err:
        raise InputError(f"{where}: unreadable row ({err}); reinstall the extra ({EXTRA_HINT})") from None
    return table


@functools.cache
def _table() -> dict[int, dict[int, MeasuredRadius]]:
    """The whole compilation, read once per process (errors are not cached: a fix takes effect)."""
    path = _table_path()
    return _parse(path.read_text(encoding="utf-8"), str(path))


def measured_radius(Z: int, A: int) -> MeasuredRadius:
    """rms charge radius of the nuclide (Z, A) from Angeli and Marinova (2013).

    InputError (one line) when the extra is not installed, or when the nuclide is not in the
    table: the message lists the nearest mass numbers measured for that Z, or says that the
    element has no measured isotope at all.
    """
    from .elements import Z_MAX, symbol

    isotopes = _table().get(Z, {})
    if A in isotopes:
        return isotopes[A]
    name = f"{symbol(Z)} (Z = {Z})" if 1 <= Z <= Z_MAX else f"Z = {Z}"
    if not isotopes:
        raise InputError(f"radius = 'measured': {TABLE_REFERENCE} has no isotope of {name}; "
                         "give rms_radius_fm or radius = 'formula'")
    near = sorted(sorted(isotopes, key=lambda a: (abs(a - A), a))[:4])
    raise InputError(f"radius = 'measured': no value for A = {A} of {name} in {TABLE_REFERENCE}; "
                     f"nearest measured A = {', '.join(map(str, near))}: give one of them as A, "
                     "or rms_radius_fm, or radius = 'formula'")
