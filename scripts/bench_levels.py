#!/usr/bin/env python
"""Benchmark: time to build, solve, refine and sort one symmetry, against a bare eigh.

Covers both families: B-splines (point nucleus) and Gaussians (Gaussian nucleus, where the
integral time is reported separately).

For each size the script times, in the same run and on the same matrices,

* relbasis: assemble H and S, solve, refine the bound window, evaluate and sort (one kappa);
* bare:     scipy.linalg.eigh(H, S) with values and vectors, nothing else;

and prints both and their ratio.  It then times a whole default solve (all eight symmetries
|kappa| <= 4, spline tables included).  Absolute times on shared machines are noisy; the
ratios are the figures to compare (docs/performance.md).

    python scripts/bench_levels.py [--z 92] [--repeat 7]
"""

from __future__ import annotations

import argparse
import time

import relbasis  # noqa: F401  (sets the one-thread BLAS default before numpy loads)
import numpy as np
import scipy.linalg as sl

from relbasis.config import resolve
from relbasis.constants import C
from relbasis.dirac_gaussian import GaussianDiracBasis
from relbasis.families import family_of
from relbasis.hamiltonian import nucleus_term
from relbasis.solver import as_config, solve, solve_symmetry


def best_of(fn, repeat):
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return min(times)


def bare_eigh(H, S):
    """scipy.linalg.eigh(H, S); where S is numerically singular (large Gaussian sets), the
    plainest equivalent: eigh(S), then eigh of H in the orthonormalised kept span."""
    try:
        return sl.eigh(H, S)
    except sl.LinAlgError:
        s, U = sl.eigh(S)
        X = U[:, s > 1e-12 * s[-1]] / np.sqrt(s[s > 1e-12 * s[-1]])
        return sl.eigh(X.T @ H @ X)


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--z", type=int, default=92)
    ap.add_argument("--repeat", type=int, default=7)
    args = ap.parse_args()

    print(f"Z = {args.z}, point nucleus, kappa = -1, dkb; best of {args.repeat}")
    print(f"{'size':>5} {'rows':>5} {'relbasis ms':>12} {'bare eigh ms':>13} {'ratio':>6}")
    for size in (40, 60, 80, 120, 160):
        cfg, nuc = resolve(as_config(None, ion={"Z": args.z, "nucleus": "point"}, basis={"size": size}))
        fset = family_of(cfg).build_set(cfg, nuc, C)
        terms = (nucleus_term(nuc),)
        basis = fset.build(-1)
        H, S = basis.matrices(fset.table, nuc.potential(fset.table.r))

        ours = best_of(lambda: solve_symmetry(fset, -1, terms), args.repeat)
        bare = best_of(lambda: sl.eigh(H, S), args.repeat)
        print(f"{size:>5} {H.shape[0]:>5} {ours * 1e3:>12.2f} {bare * 1e3:>13.2f} {ours / bare:>6.2f}")

    whole = best_of(lambda: solve(None, ion={"Z": args.z, "nucleus": "point"}), args.repeat)
    print(f"default basis, all eight kappas |kappa| <= 4, spline tables included: {whole * 1e3:.0f} ms")

    print()
    print(f"Gaussians: Z = {args.z}, Gaussian nucleus, kappa = +1, rkb, default exponent range; best of {args.repeat}")
    print(f"{'size':>5} {'rows':>5} {'integrals ms':>13} {'relbasis ms':>12} {'bare eigh ms':>13} {'ratio':>6}")
    for size in (20, 30, 40, 60, 80):
        cfg, nuc = resolve(as_config(None, ion={"Z": args.z, "nucleus": "gauss"},
                                     basis={"family": "gaussian", "balance": "rkb", "size": size}))
        fset = family_of(cfg).build_set(cfg, nuc, C)
        exps, grid = fset.exponents, fset.grid
        H, S = GaussianDiracBasis.build(exps, 1, "rkb", C).matrices(nuc, grid)
        integrals = best_of(lambda: GaussianDiracBasis.build(exps, 1, "rkb", C).matrices(nuc, grid), args.repeat)
        ours = best_of(lambda: solve_symmetry(fset, 1, (nucleus_term(nuc),)), args.repeat)
        bare = best_of(lambda: bare_eigh(H, S), args.repeat)
        print(f"{size:>5} {H.shape[0]:>5} {integrals * 1e3:>13.2f} {ours * 1e3:>12.2f} {bare * 1e3:>13.2f} {ours / bare:>6.2f}")
    whole = best_of(lambda: solve(None, ion={"Z": args.z, "nucleus": "gauss"}, basis={"family": "gaussian"}), args.repeat)
    print(f"default Gaussian basis (40, dkb), all eight kappas |kappa| <= 4: {whole * 1e3:.0f} ms")


if __name__ == "__main__":
    main()
