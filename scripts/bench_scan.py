#!/usr/bin/env python
"""Benchmark: a 200-unit scan with one and with two worker processes, in the same run.

5 sizes x 4 orders x 2 balances x 5 ions (point nuclei; every bound level n <= 4, so seven
symmetries per unit).  Prints both
wall times and their ratio (docs/performance.md).

    python scripts/bench_scan.py [--jobs 2]
"""

import argparse
import tempfile
import time

from relbasis.scan import plan_from_dict, scan

PLAN = {
    "base": {"ion": {"nucleus": "point"}},
    "axes": {
        "ion.Z": [10, 30, 50, 70, 90],
        "basis.size": [60, 80, 100, 120, 140],
        "basis.order": [7, 8, 9, 10],
        "basis.balance": ["dkb", "none"],
    },
    "track": {"max_n": 4, "target": 1e-9},
}


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--jobs", type=int, default=2)
    args = ap.parse_args()
    plan = plan_from_dict(PLAN)
    times = {}
    for jobs in (1, args.jobs):
        with tempfile.TemporaryDirectory() as out:
            t0 = time.perf_counter()
            result = scan(plan, out, jobs=jobs, progress=False)
            times[jobs] = time.perf_counter() - t0
            print(f"jobs = {jobs}: {result.computed} units in {times[jobs]:.1f} s")
    print(f"speed-up jobs {args.jobs} vs 1: {times[1] / times[args.jobs]:.2f}")


if __name__ == "__main__":
    main()
