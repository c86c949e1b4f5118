#!/usr/bin/env python
"""A realistic scan in our invented scenario: one B-spline basis for several hydrogen-like ions.

The "Lantern" collaboration (invented) plans laser spectroscopy of hydrogen-like xenon,
tungsten, lead and uranium in a storage ring and wants the smallest B-spline basis that
converges every bound level with n <= 3 to 1e-9 for all four ions (Fermi nuclei).  This runs
examples/scan_storage_ring.toml with two worker processes; rerunning resumes.

    python scripts/scan_storage_ring.py [--out scan-storage-ring] [--jobs 2]
"""

import argparse
from pathlib import Path

from relbasis.scan import scan, summary_table

PLAN = Path(__file__).resolve().parent.parent / "examples" / "scan_storage_ring.toml"


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--out", default="scan-storage-ring")
    ap.add_argument("--jobs", type=int, default=2)
    args = ap.parse_args()
    result = scan(PLAN, args.out, jobs=args.jobs)
    print(summary_table(result.summary))
    print(f"computed {result.computed} of {result.total} units; results in {result.out}")


if __name__ == "__main__":
    main()
