#!/usr/bin/env python
"""Calibration of the work estimate (relbasis.budget): time and peak memory of one symmetry.

For each size, a fresh interpreter solves Z = 92 (Fermi nucleus, default basis otherwise) for
one symmetry (kappa = -1) through ``relbasis.solve`` -- the reduced basis of the error estimate
included -- and reports the wall time, the growth of the peak resident memory over the
interpreter after import and a small warm-up solve, and, on the same matrices, the time of a bare
``scipy.linalg.eigh(H, S)`` (values and vectors).  The ratios time/eigh and memory/(2N)^2 are the
constants of relbasis.budget (docs/performance.md).

    python scripts/bench_budget.py [--sizes 100,200,400,800,1200] [--kind bspline|gaussian]
"""

from __future__ import annotations

import argparse
import json
import subprocess
import sys

CHILD = r"""
import json, resource, sys, time
import relbasis
import numpy as np, scipy.linalg as sl
from relbasis.config import resolve
from relbasis.solver import as_config, build_splines
from relbasis.dirac import DiracBasis
size, kind = int(sys.argv[1]), sys.argv[2]
basis = {"size": size} if kind == "bspline" else {"family": "gaussian", "size": size}
ion = {"Z": 92} if kind == "bspline" else {"Z": 92, "nucleus": "gauss"}
relbasis.solve(ion=ion, basis={**basis, "size": 20}, solve={"kappas": [-1]}, progress=False)
base = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024
t0 = time.perf_counter()
sol = relbasis.solve(ion=ion, basis=basis, solve={"kappas": [-1]}, progress=False)
seconds = time.perf_counter() - t0
peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024
if kind == "bspline":
    cfg, nuc = resolve(as_config(None, ion=ion, basis=basis, solve={"kappas": [-1]}))
    spl = build_splines(cfg, nuc)
    table = spl.quadrature(cfg.basis.quadrature)
    b = DiracBasis.build(spl, -1, cfg.basis.balance, relbasis.constants.C, 0.0, cfg.basis.wall)
    H, S = b.matrices(table, nuc.potential(table.r))
else:
    from relbasis.dirac_gaussian import GaussianDiracBasis
    cfg, nuc = resolve(as_config(None, ion=ion, basis=basis, solve={"kappas": [-1]}))
    from relbasis.gaussian import even_tempered
    b = GaussianDiracBasis.build(even_tempered(cfg.basis.size, cfg.basis.exponent_min, cfg.basis.exponent_max), -1, cfg.basis.balance, relbasis.constants.C)
    H, S = b.matrices(nuc, b.grid(nuc))
    s, U = sl.eigh(S)
    X = U[:, s > 1e-12 * s[-1]] / np.sqrt(s[s > 1e-12 * s[-1]])
    H, S = X.T @ H @ X, np.eye(X.shape[1])
t0 = time.perf_counter()
sl.eigh(H, S)
eigh = time.perf_counter() - t0
print(json.dumps({"size": size, "rows": int(H.shape[0]), "seconds": seconds, "eigh": eigh,
                  "memory": peak - base}))
"""


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--sizes", default="100,200,400,800,1200")
    ap.add_argument("--kind", default="bspline", choices=("bspline", "gaussian"))
    args = ap.parse_args()
    print(f"{'size':>5} {'rows':>5} {'solve s':>9} {'eigh s':>8} {'ratio':>6} {'memory MB':>10} {'mem/rows^2':>10}")
    for size in (int(s) for s in args.sizes.split(",")):
        out = subprocess.run([sys.executable, "-c", CHILD, str(size), args.kind], capture_output=True, text=True,
                             check=True)
        r = json.loads(out.stdout.strip().splitlines()[-1])
        print(f"{r['size']:>5} {r['rows']:>5} {r['seconds']:>9.3f} {r['eigh']:>8.3f} {r['seconds'] / r['eigh']:>6.2f} "
              f"{r['memory'] / 1e6:>10.1f} {r['memory'] / r['rows'] ** 2:>10.1f}", flush=True)


if __name__ == "__main__":
    main()
