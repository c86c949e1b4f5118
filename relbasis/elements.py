"""Element table: chemical symbol and default mass number A for Z = 1..118.

The table lives in ``relbasis/data/elements.csv`` (columns ``Z,symbol,A``).  A is the mass
number of the most abundant stable isotope, or of the longest-lived isotope for an element
with no stable one; the values were recalled from standard isotope tables (from memory), as
the file's header says.  It only supplies a default when the user gives no ``A``.
"""

from __future__ import annotations

import csv
import functools
import io
from importlib import resources

from relbasis.errors import InputError
from relbasis.validate import is_real

Z_MAX: int = 118
"""Largest Z in the table."""


@functools.cache
def _table() -> dict[int, tuple[str, int]]:
    """{Z: (symbol, A)}, read once from the packaged CSV (lines starting with '#' are comments)."""
    text = resources.files("relbasis").joinpath("data/elements.csv").read_text(encoding="utf-8")
    rows = [line for line in text.splitlines() if line.strip() and not line.lstrip().startswith("#")]
    reader = csv.DictReader(io.StringIO("\n".join(rows)))
    table = {int(row["Z"]): (row["symbol"], int(row["A"])) for row in reader}
    # A broken data file must fail loudly here, not give a wrong default later.
    if sorted(table) != list(range(1, Z_MAX + 1)):
        raise RuntimeError(f"relbasis/data/elements.csv must list Z = 1..{Z_MAX} once each")
    return table


def _as_table_z(Z, what: str) -> int:
    """Z as an int key of the table, or InputError saying what the caller must supply instead."""
    if not is_real(Z):
        raise InputError(f"Z = {Z!r} must be a number (nuclear charge)")
    if Z != Z or not float(Z).is_integer() or not 1 <= Z <= Z_MAX:
        fix = ": give A in [ion]" if what == "default mass number" else ""
        raise InputError(f"no {what} for Z = {Z:g} (table covers 1..{Z_MAX}){fix}")
    return int(Z)


def default_mass_number(Z: int) -> int:
    """Default mass number A of element Z (most abundant stable isotope, else longest-lived).

    Raises InputError for Z outside 1..118 or non-integer Z: then ``A`` must be given.
    """
    return _table()[_as_table_z(Z, "default mass number")][1]


def symbol(Z: int) -> str:
    """Chemical symbol of element Z, e.g. ``symbol(92) == "U"``."""
    return _table()[_as_table_z(Z, "element symbol")][0]
