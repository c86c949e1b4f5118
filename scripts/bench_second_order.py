#!/usr/bin/env python
"""Benchmark: second-order sums against the bare matrix products they are made of.

    python scripts/bench_second_order.py [--repeat 3]

For the 1s^2 pair to l = 10 (default basis, c = 1e6) and for Cs 6s outside [Xe] with
l_max = 6 (default basis), the script times, in the same run,

* relbasis: ``relbasis.second_order(solution, l_max)`` on a solved basis (the sums alone), and
  the whole call from the config (solve and SCF included);
* bare:     the same number of numpy matrix products of the same shapes, (N_m x points) @
  (points x N_n), one per multipole of every block of symmetries the pair (or core-excitation)
  sums visit, nothing else (the blocked core pairs of a valence sum, products of one row, are
  left out of the bare count);

and prints both and their ratio.  The ratio is the overhead of everything that is not a
radial-integral product (Y^k functions, densities, angular factors, denominators); absolute
times on shared machines are noisy (docs/performance.md).
"""

from __future__ import annotations

import argparse
import time
import warnings

import relbasis  # noqa: F401  (one-thread BLAS default before numpy loads)
import numpy as np

from relbasis import perturbation as pt


def best_of(fn, repeat):
    out = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        out.append(time.perf_counter() - t0)
    return min(out)


def products(sol, l_max):
    """The shapes (N_m, points, N_n) of every radial-integral product the sums make."""
    wanted = pt.kappas_through(l_max)
    points = sol.grid[0].size
    size = {k: len(sol[k].energies) // 2 for k in wanted}  # about the positive branch
    shapes = []
    if sol.scf is None:
        pairs = [(-1, -1)]
    else:
        core = [o.kappa for o in sol.scf.core]
        if sol.config.electrons.valence is None:
            pairs = [(a, b) for i, b in enumerate(core) for a in core[:i + 1]]
        else:
            v = sol.config.electrons.valence.kappa
            pairs = [(a, v) for a in core]
    for ka, kb in pairs:
        for km in wanted:
            for kn in wanted:
                direct, exchange = pt.pair_angular(km, kn, ka, kb)
                for _ in list(direct) + sorted({kp for _, kp in exchange}):
                    shapes.append((size[km], points, size[kn]))
    return shapes


def bare(shapes):
    mats = {}
    for m, p, n in shapes:
        if (m, p) not in mats:
            mats[(m, p)] = np.random.default_rng(0).standard_normal((m, p))
        if (p, n) not in mats:
            mats[(p, n)] = np.random.default_rng(1).standard_normal((p, n))
    def run():
        for m, p, n in shapes:
            mats[(m, p)] @ mats[(p, n)]
    return run


def case(name, cfg, l_max, c, repeat):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        t0 = time.perf_counter()
        res = pt.second_order(cfg, l_max=l_max, c=c, progress=False)
        whole = time.perf_counter() - t0
        sol = relbasis.solve(pt.summed_config(cfg, l_max), c=c, progress=False)
    sums = best_of(lambda: pt.second_order(sol, l_max=l_max), repeat)
    shapes = products(sol, l_max)
    plain = best_of(bare(shapes), repeat)
    print(f"{name}: E2 through l_max = {l_max}: {res.energy:.9f} (extrapolated {res.extrapolated:.9f})")
    print(f"  whole call (solve included) {whole:8.2f} s")
    print(f"  sums alone                  {sums:8.3f} s")
    print(f"  bare products ({len(shapes)} of them) {plain:8.3f} s   ratio {sums / plain:.1f}")


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeat", type=int, default=3)
    args = ap.parse_args()
    case("1s^2 pair, Z = 2, c = 1e6, default basis", {"ion": {"Z": 2, "nucleus": "point"}}, 10, 1e6, args.repeat)
    case("Cs 6s outside [Xe], default basis", {"ion": {"Z": 55}, "electrons": {"core": "[Xe]", "valence": "6s1/2"}},
         6, None, args.repeat)


if __name__ == "__main__":
    main()
