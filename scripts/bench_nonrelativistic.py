"""Accuracy of the default B-spline basis (and the Gaussian family) as c grows (docs/nonrelativistic.md).

For each c and Z (point nucleus): the worst relative error of the levels n <= 4 of
kappa = -1, 1, -2, 2, -3 against the exact Dirac values at that c (Sommerfeld–Darwin–Gordon
formula, relbasis.analytic), the relative deviation of F^0(1s,1s) from 5Z/8 (textbook
nonrelativistic value; it contains the relativistic correction ~0.4 (Z/c)^2), and the count of
roots per branch and of roots flagged precision-limited.

    python scripts/bench_nonrelativistic.py [--c 137.036 1e5 3e5 1e6 1e7] [--z 1 2 10 50] [--family bspline]
"""

from __future__ import annotations

import argparse
import time
from collections import Counter

import relbasis
from relbasis import integrals
from relbasis.analytic import dirac_coulomb_energy, orbital_l
from relbasis.precision import FLAG

KAPPAS = (-1, 1, -2, 2, -3)


def measure(Z: float, c: float, family: str, nmax: int):
    t = time.perf_counter()
    sol = relbasis.solve(ion={"Z": Z, "nucleus": "point"}, basis={"family": family},
                         solve={"kappas": list(KAPPAS)}, c=c)
    seconds = time.perf_counter() - t
    worst, counts, flagged = 0.0, Counter(), Counter()
    for kappa in KAPPAS:
        spec = sol[kappa]
        counts.update(spec.branches)
        flagged.update(b for b, f in zip(spec.branches, spec.flags) if FLAG in f)
        for n in range(orbital_l(kappa) + 1, nmax + 1):
            worst = max(worst, abs(spec.level(n) / dirac_coulomb_energy(Z, n, kappa, c) - 1))
    a = (-1, int(sol[-1].indices("bound")[0]))
    f0 = integrals.slater(sol, 0, a, a, a, a) / (5 * Z / 8) - 1
    return worst, f0, dict(counts), dict(flagged), seconds


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--c", type=float, nargs="+", default=[1 / relbasis.constants.ALPHA, 1e5, 3e5, 1e6, 1e7])
    ap.add_argument("--z", type=float, nargs="+", default=[1, 2, 10, 50])
    ap.add_argument("--family", default="bspline", choices=("bspline", "gaussian"))
    ap.add_argument("--nmax", type=int, default=4)
    args = ap.parse_args()
    print(f"{'c':>10} {'Z':>4} {'levels n<=' + str(args.nmax):>12} {'F0/(5Z/8)-1':>12} {'s':>6}  flagged precision-limited / branches")
    for c in args.c:
        for Z in args.z:
            worst, f0, counts, flagged, seconds = measure(Z, c, args.family, args.nmax)
            print(f"{c:>10.4g} {Z:>4g} {worst:>12.1e} {f0:>12.1e} {seconds:>6.2f}  {flagged or '-'} / {counts}")


if __name__ == "__main__":
    main()
