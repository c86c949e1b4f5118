#!/usr/bin/env python
"""Tables of second-order energies (docs/second-order.md) and their timing.

    python scripts/second_order_tables.py [--quick] [--only pair,helium,z,sodium,cesium,timing]

* pair:    the 1s^2 pair in the nonrelativistic limit (c = 1e6), increments L = 0..10, against
           E2 = -0.157666429 (C. W. Scherr, R. E. Knight, Rev. Mod. Phys. 35, 436 (1963), from memory);
* helium:  He with the Hartree–Fock reference, against -0.0373774 (literature value, from memory);
* z:       relativistic 1s^2 pairs, Z = 10..92, point nucleus, with the basis change and the
           negative-branch share;
* sodium, cesium: valence second order of Na 3s and Cs 6s in the V^(N-1) basis, by l_max and
           basis (the default basis, 1.5x the functions, 1.5x the cavity with those);
* timing:  Cs 6s with l_max = 6 and the two-electron pair to l = 10, wall-clock seconds, with
           the share of the solve (SCF and spectra) and of the sums.
"""

from __future__ import annotations

import argparse
import time
import warnings

import relbasis  # noqa: F401  (one-thread BLAS default before numpy loads)
from relbasis import perturbation as pt

NR = 1e6


def solve(cfg, l_max, c=None):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return relbasis.solve(pt.summed_config(cfg, l_max), c=c, progress=False)


def increments_table(res, title):
    print(f"\n{title}")
    print(f"| L | increment (hartree) | sum through L | -d_L (L+1/2)^4 |")
    print("| ---: | ---: | ---: | ---: |")
    total = 0.0
    for L, d in enumerate(res.increments):
        total += d
        print(f"| {L} | {d:.10f} | {total:.10f} | {-d * (L + 0.5) ** 4:.6f} |")
    print(f"sum through {res.l_max}: {res.energy:.10f}; extrapolated {res.extrapolated:.10f} +- {res.uncertainty:.1e}; "
          f"last exponent {res.exponent:.3f}; {res.seconds:.2f} s")


def pair():
    sol = solve({"ion": {"Z": 2, "nucleus": "point"}, "basis": {"size": 150, "r_max": 10.0}}, 10, NR)
    for L in (8, 10):
        res = pt.second_order(sol, l_max=L)
        print(f"pair, c = 1e6, 150 splines, r_max = 10 bohr, l_max = {L}: {res.extrapolated:.10f} +- "
              f"{res.uncertainty:.1e}; minus Scherr–Knight {res.extrapolated + 0.157666429:+.1e}")
    increments_table(res, "1s^2 pair, nonrelativistic limit (Z = 2, c = 1e6)")


def helium():
    sol = solve({"ion": {"Z": 2, "nucleus": "point"}, "electrons": {"core": "1s1/2"},
                 "basis": {"size": 150, "r_max": 20.0}}, 10, NR)
    res = pt.second_order(sol, l_max=10)
    increments_table(res, "helium, Hartree–Fock reference (c = 1e6, 150 splines, r_max = 20)")
    print(f"minus the literature value -0.0373774: {res.extrapolated + 0.0373774:+.1e}")
    print(f"default basis: {pt.second_order({'ion': {'Z': 2, 'nucleus': 'point'}, 'electrons': {'core': '1s1/2'}}, l_max=10, c=NR).extrapolated:.10f}")


def zscan(quick):
    zs = (10, 30, 60, 92) if quick else (10, 20, 30, 40, 50, 60, 70, 80, 92)
    print("\n| Z | E2 through l=8 | extrapolated | +- | exponent | 100 splines minus 150 | negative branch: one | both |")
    print("| ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: |")
    for Z in zs:
        base = {"ion": {"Z": Z, "nucleus": "point"}, "basis": {"size": 150, "r_max": 20.0 / Z}}
        sol = solve(base, 8)
        res = pt.second_order(sol, l_max=8)
        small = pt.second_order(solve(dict(base, basis={"size": 100, "r_max": 20.0 / Z}), 8), l_max=8)
        neg = pt.second_order(sol, l_max=8, negative_branch=True)
        print(f"| {Z} | {res.energy:.9f} | {res.extrapolated:.9f} | {res.uncertainty:.1e} | {res.exponent:.2f} | "
              f"{small.extrapolated - res.extrapolated:+.1e} | {neg.parts['one_negative']:+.2e} | "
              f"{neg.parts['both_negative']:+.2e} |")
    nr = pt.second_order(solve({"ion": {"Z": 10, "nucleus": "point"}, "basis": {"size": 150, "r_max": 2.0}}, 8, NR),
                         l_max=8)
    print(f"Z = 10 at c = 1e6: {nr.extrapolated:.9f}")


def valence(Z, core, v, ls):
    cfg = {"ion": {"Z": Z}, "electrons": {"core": core, "valence": v}}
    sol = solve(cfg, max(ls))
    print(f"\n{v} of Z = {Z} (core {core}), default basis, by l_max:")
    print("| l_max | sum through l_max | extrapolated | +- |")
    print("| ---: | ---: | ---: | ---: |")
    for L in ls:
        res = pt.second_order(sol, l_max=L)
        print(f"| {L} | {res.energy:.9f} | {res.extrapolated:.9f} | {res.uncertainty:.1e} |")
    increments_table(res, f"{v}, increments (l_max = {max(ls)})")
    print(f"parts: {res.parts}")
    from relbasis.completeness import completeness
    chk = completeness(cfg, min(6, max(ls)), target=1e-6, progress=False)
    print(f"completeness (l_max = {chk.result.l_max}): {chk.verdict}, error {chk.error:.1e}")
    for var in chk.variations:
        print(f"  {var.setting}: {var.result.extrapolated:.9f} (change {var.change:+.1e})")
    for a in chk.advice:
        print(f"  - {a}")


def timing():
    t = time.perf_counter()
    res = pt.second_order({"ion": {"Z": 55}, "electrons": {"core": "[Xe]", "valence": "6s1/2"}}, l_max=6, progress=False)
    total = time.perf_counter() - t
    t = time.perf_counter()
    sol = solve({"ion": {"Z": 55}, "electrons": {"core": "[Xe]", "valence": "6s1/2"}}, 6)
    solve_s = time.perf_counter() - t
    t = time.perf_counter()
    pt.second_order(sol, l_max=6)
    sums = time.perf_counter() - t
    print(f"\nCs 6s, l_max = 6: {total:.1f} s in all (solve {solve_s:.1f} s, sums {sums:.1f} s); E2 = {res.energy:.9f}")
    t = time.perf_counter()
    res = pt.second_order({"ion": {"Z": 2, "nucleus": "point"}}, l_max=10, c=NR, progress=False)
    print(f"pair to l = 10, default basis: {time.perf_counter() - t:.2f} s in all; E2 = {res.extrapolated:.9f}")
    for size in (60, 100, 150, 200):
        sol = solve({"ion": {"Z": 2, "nucleus": "point"}, "basis": {"size": size}}, 10, NR)
        for L in (4, 10):
            t = time.perf_counter()
            pt.second_order(sol, l_max=L)
            print(f"  pair sums, {size} splines, l_max = {L}: {time.perf_counter() - t:.3f} s")


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true")
    ap.add_argument("--only", default="pair,helium,z,sodium,cesium,timing")
    args = ap.parse_args()
    parts = args.only.split(",")
    if "pair" in parts:
        pair()
    if "helium" in parts:
        helium()
    if "z" in parts:
        zscan(args.quick)
    if "sodium" in parts:
        valence(11, "[Ne]", "3s1/2", (2, 4, 6, 8))
    if "cesium" in parts:
        valence(55, "[Xe]", "6s1/2", (2, 4, 6, 8, 10))
    if "timing" in parts:
        timing()


if __name__ == "__main__":
    main()
