#!/usr/bin/env python
"""Tables of the Dirac–Hartree–Fock core: closed shells He..Rn, nonrelativistic limits, alkali valence levels.

    python scripts/dhf_tables.py [--part closed|limits|alkali|all]

closed:  total energy and iterations of every closed-shell atom He..Rn, point and Fermi nuclei.
limits:  c = 1e7 (the nonrelativistic limit by the speed-of-light switch; the relativistic shift
         falls as c^-2, 4e-8 hartree for Xe) against the published Hartree–Fock limits
         (C. F. Bunge, J. A. Barrientos, A. V. Bunge, At. Data Nucl. Data Tables 53, 113 (1993);
         C. Froese Fischer, The Hartree–Fock Method for Atoms, 1977; from memory).
alkali:  the valence level of Li..Fr in the V^(N-1) frozen core.
"""

from __future__ import annotations

import argparse

import relbasis

CLOSED = {"He": (2, "[He]"), "Be": (4, "[He] 2s2"), "Ne": (10, "[Ne]"), "Mg": (12, "[Ne] 3s2"),
          "Ar": (18, "[Ar]"), "Ca": (20, "[Ar] 4s2"), "Zn": (30, "[Ar] 3d10 4s2"), "Kr": (36, "[Kr]"),
          "Sr": (38, "[Kr] 5s2"), "Cd": (48, "[Kr] 4d10 5s2"), "Xe": (54, "[Xe]"), "Ba": (56, "[Xe] 6s2"),
          "Yb": (70, "[Xe] 4f14 6s2"), "Hg": (80, "[Xe] 4f14 5d10 6s2"), "Rn": (86, "[Rn]")}
LIMITS = {"He": -2.861679996, "Be": -14.573023168, "Ne": -128.547098109, "Mg": -199.614636425,
          "Ar": -526.817512803, "Ca": -676.758185925, "Zn": -1777.848116161, "Kr": -2752.054977,
          "Xe": -7232.138364}
ALKALI = {"Li": (3, "[He]", "2s1/2"), "Na": (11, "[Ne]", "3s1/2"), "K": (19, "[Ar]", "4s1/2"),
          "Rb": (37, "[Kr]", "5s1/2"), "Cs": (55, "[Xe]", "6s1/2"), "Fr": (87, "[Rn]", "7s1/2")}


def core(Z, text, nucleus="fermi", c=None, valence=None):
    electrons = {"core": text} | ({"valence": valence} if valence else {})
    kappas = [-1]  # the s symmetry: enough for the core's figures and the alkali valence level
    return relbasis.solve({"ion": {"Z": Z, "nucleus": nucleus}, "electrons": electrons,
                           "solve": {"kappas": kappas}}, c=c)


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--part", default="all", choices=("closed", "limits", "alkali", "all"))
    args = ap.parse_args()
    if args.part in ("closed", "all"):
        print(f"{'atom':>4} {'point (hartree)':>22} {'fermi (hartree)':>22} {'iterations':>10}")
        for name, (Z, text) in CLOSED.items():
            p, f = core(Z, text, "point").scf, core(Z, text, "fermi").scf
            print(f"{name:>4} {p.total_energy:22.10f} {f.total_energy:22.10f} {p.iterations:>5} {f.iterations:>4}", flush=True)
    if args.part in ("limits", "all"):
        print(f"\n{'atom':>4} {'c = 1e7 (hartree)':>22} {'HF limit':>18} {'difference':>11}")
        for name, limit in LIMITS.items():
            Z, text = CLOSED[name]
            e = core(Z, text, "point", c=1e7).scf.total_energy
            print(f"{name:>4} {e:22.10f} {limit:18.9f} {e - limit:11.1e}", flush=True)
    if args.part in ("alkali", "all"):
        print(f"\n{'atom':>4} {'valence':>8} {'eps (hartree)':>20} {'est. error':>10}")
        for name, (Z, text, val) in ALKALI.items():
            sol = core(Z, text, "fermi", valence=val)
            spec = sol[-1]
            i = list(spec.labels).index(val)
            est = spec.error_estimate[i]
            print(f"{name:>4} {val:>8} {spec.energies[i]:20.12f} {est:10.1e}", flush=True)


if __name__ == "__main__":
    main()
