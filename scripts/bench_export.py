#!/usr/bin/env python
"""Benchmark: export Z = 92, |kappa| <= 5, 60 B-splines, with the dipole and hyperfine blocks.

Prints the solve and export times and the file size (docs/performance.md).

    python scripts/bench_export.py
"""

import tempfile
import time
from pathlib import Path

import relbasis


def main() -> None:
    kappas = [k for k in range(-5, 6) if k != 0]
    t0 = time.perf_counter()
    sol = relbasis.solve(ion={"Z": 92}, basis={"size": 60}, solve={"kappas": kappas})
    t1 = time.perf_counter()
    with tempfile.TemporaryDirectory() as tmp:
        path = relbasis.export(sol, Path(tmp) / "u91.h5", blocks=("dipole", "hyperfine"))
        t2 = time.perf_counter()
        size = path.stat().st_size
    print(f"solve {t1 - t0:.2f} s, export {t2 - t1:.2f} s, total {t2 - t0:.2f} s; file {size / 2**20:.1f} MiB")


if __name__ == "__main__":
    main()
