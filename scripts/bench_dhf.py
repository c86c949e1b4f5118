#!/usr/bin/env python
"""Benchmark: Dirac–Hartree–Fock closed shells, time and the ratio to one-electron solves.

For each closed-shell atom the script runs the mean field (relbasis.scf.run) with the default
basis and, in the same run, times one one-electron solve of the same basis (every symmetry of the
core, the bare nucleus), and prints

    total energy, iterations, seconds, seconds / (one-electron solve x iterations), peak memory.

Absolute times on shared machines are noisy; the ratio is the figure to compare
(docs/performance.md).

    python scripts/bench_dhf.py [--atoms Ne,Ar,Kr,Xe,Rn]
"""

from __future__ import annotations

import argparse
import resource
import time

import relbasis
from relbasis.config import resolve
from relbasis.solver import as_config, solve
from relbasis import scf

ATOMS = {"He": (2, "[He]"), "Ne": (10, "[Ne]"), "Ar": (18, "[Ar]"), "Kr": (36, "[Kr]"), "Xe": (54, "[Xe]"),
         "Rn": (86, "[Rn]")}


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--atoms", default="Ne,Ar,Kr,Xe,Rn")
    args = ap.parse_args()
    print(f"{'atom':>4} {'total energy (hartree)':>24} {'iter':>5} {'seconds':>8} {'one-electron s':>15} {'ratio':>6} {'peak MB':>8}")
    for name in args.atoms.split(","):
        Z, core = ATOMS[name]
        cfg, nuc = resolve(as_config({"ion": {"Z": Z}, "electrons": {"core": core}}))
        mf = scf.run(cfg, nuc, relbasis.constants.C, progress=False)
        kappas = sorted({o.kappa for o in mf.core}, key=lambda k: (k > 0, abs(k)))
        bare = {"ion": {"Z": Z}, "basis": {k: v for k, v in cfg.basis.__dict__.items() if v is not None},
                "solve": {"kappas": kappas}}
        t0 = time.perf_counter()
        solve(bare)
        one = time.perf_counter() - t0
        peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
        print(f"{name:>4} {mf.total_energy:24.10f} {mf.iterations:>5} {mf.seconds:8.1f} {one:15.3f} "
              f"{mf.seconds / (one * mf.iterations):6.1f} {peak:8.0f}", flush=True)


if __name__ == "__main__":
    main()
