#!/usr/bin/env python
"""Convergence of point-nucleus levels in the number of B-splines, as a markdown table.

    python scripts/convergence_table.py [--z 92] [--order 10]

Prints the relative error of 1s1/2, 2p1/2, 3d5/2 and 5s1/2 against the exact Dirac–Coulomb
energy (Sommerfeld–Darwin–Gordon formula) for sizes 20..120; docs/convergence.md shows it.
"""

import argparse

import relbasis

STATES = [(1, -1), (2, 1), (3, -3), (5, -1)]


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--z", type=int, default=92)
    ap.add_argument("--order", type=int, default=10)
    args = ap.parse_args()
    labels = [relbasis.spectrum.orbital_label(n, k) for n, k in STATES]
    print("| size | " + " | ".join(labels) + " |")
    print("|---:|" + "---:|" * len(labels))
    for size in (20, 30, 40, 50, 60, 70, 80, 90, 100, 120):
        sol = relbasis.solve(ion={"Z": args.z, "nucleus": "point"}, basis={"size": size, "order": args.order},
                             solve={"kappas": sorted({k for _, k in STATES})})
        cells = []
        for n, k in STATES:
            try:
                cells.append(f"{abs(sol[k].level(n) / sol.exact(k, n) - 1):.1e}")
            except KeyError:
                cells.append("-")
        print(f"| {size} | " + " | ".join(cells) + " |")


if __name__ == "__main__":
    main()
