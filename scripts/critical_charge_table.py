#!/usr/bin/env python
"""Critical charges of the package against an independent shooting calculation at threshold.

    python scripts/critical_charge_table.py [--states 1s,2p1/2,2s,2p3/2] [--cavity]

For each nuclear model (sphere, gauss, fermi) with A = 2.5 Z and R_rms = 0.836 A^(1/3) + 0.570
fm, prints the package's Z_cr (relbasis.critical_charge) with its uncertainty, the Z_cr of
tests/shooting.py (threshold_charge: Pruefer-angle shooting at eps = -2c^2 with
scipy.integrate.solve_ivp, no package code), their difference and the timings, as markdown
for docs/critical.md.  The sphere and Gauss potentials of the reference are written here;
the Fermi potential is the package's (tests/test_nucleus.py checks it against an mpmath
Poisson integral), with its parameters from the rms radius computed here.
``--cavity`` adds the basis and cavity study of the 1s (sphere): Z_cr for several sizes and
cavity radii, and the shooting result for other matching radii and tail lengths.
"""

import argparse
import math
import sys
import time
from pathlib import Path

import numpy as np
from scipy.constants import fine_structure
from scipy.special import erf

sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "tests"))

import relbasis  # noqa: E402
from relbasis.nucleus import make_nucleus  # noqa: E402
from shooting import threshold_charge  # noqa: E402

C = 1.0 / fine_structure
FM = 1.0 / 52917.7210544  # bohr per fm (CODATA 2022)
STATES = {"1s": (1, -1), "2p1/2": (2, 1), "2s": (2, -1), "2p3/2": (2, -2)}


def rms_bohr(Z):
    return (0.836 * (2.5 * Z) ** (1.0 / 3.0) + 0.570) * FM


def sphere_radius(Z):
    return math.sqrt(5.0 / 3.0) * rms_bohr(Z)


def sphere(Z):
    R = sphere_radius(Z)
    return lambda r: np.where(np.asarray(r) < R, -Z / (2 * R) * (3 - (np.asarray(r) / R) ** 2),
                              -Z / np.maximum(np.asarray(r), R))


def gauss(Z):
    b = math.sqrt(1.5) / rms_bohr(Z)  # rho ~ exp(-b^2 r^2), <r^2> = 3/(2 b^2)

    def V(r):
        y = b * np.asarray(r, dtype=float)
        small = -Z * b * 2 / math.sqrt(math.pi) * (1 - y * y / 3 + y**4 / 10)
        with np.errstate(invalid="ignore", divide="ignore"):
            return np.where(y < 1e-4, small, -Z * erf(y) / np.maximum(np.asarray(r, dtype=float), 1e-300))

    return V


def fermi(Z):
    return make_nucleus(Z, "fermi", rms_radius_fm=rms_bohr(Z) / FM).potential


MODELS = {"sphere": (sphere, sphere_radius), "gauss": (gauss, None), "fermi": (fermi, None)}


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--states", default="1s,2p1/2", help="comma-separated, from " + ", ".join(STATES))
    ap.add_argument("--cavity", action="store_true", help="add the basis/cavity study of the sphere 1s")
    args = ap.parse_args()
    print("| model | level | Z_cr package | uncertainty | Z_cr shooting | difference | package s | shooting s |")
    print("|---|---|---:|---:|---:|---:|---:|---:|")
    for model, (pot, rb) in MODELS.items():
        for name in args.states.split(","):
            n, kappa = STATES[name]
            t = time.perf_counter()
            res = relbasis.critical_charge(model, lambda Z: 2.5 * Z, n, kappa)
            t_pkg = time.perf_counter() - t
            t = time.perf_counter()
            ref = threshold_charge(pot, kappa, n, c=C, bracket=(res.Z - 1e-3, res.Z + 1e-3), r_break_of=rb)
            t_ref = time.perf_counter() - t
            print(f"| {model} | {res.label} | {res.Z:.10f} | {res.uncertainty:.1e} | {ref:.10f} | "
                  f"{res.Z - ref:+.1e} | {t_pkg:.1f} | {t_ref:.1f} |", flush=True)
    if args.cavity:
        cavity_study()


def cavity_study() -> None:
    """Z_cr of the sphere 1s for several bases and cavities, and the shooting's own settings."""
    print("\n| size | r_max | Z_cr package |")
    print("|---:|---:|---:|")
    base = None
    for size, rz in [(60, 150), (90, 40), (90, 60), (90, 150), (90, 300), (130, 300), (160, 150)]:
        # r_max must follow Z in the search: a callable is not a basis key, so each case uses the
        # r_max of the Z_cr found first (the cavity scales as 1/Z; over 1e-9 in Z that is nothing)
        res = relbasis.critical_charge("sphere", lambda Z: 2.5 * Z,
                                       basis={"size": size, "r_max": rz / (base or 169.47)})
        base = base or res.Z
        print(f"| {size} | {rz}/Z | {res.Z:.12f} |", flush=True)
    print("\n| shooting setting | Z_cr shooting |")
    print("|---|---:|")
    Zc = base
    for label, kw in [("r_match = Z/c^2, decay 40 (default)", {}), ("decay 60", {"decay": 60.0}),
                      ("r_match = 2 Z/c^2", {"r_match": 2 * Zc / C**2}), ("r_match = Z/(2c^2)·1.2", {"r_match": 0.6 * Zc / C**2}),
                      ("rtol 1e-12", {"rtol": 1e-12})]:
        ref = threshold_charge(sphere, -1, 1, c=C, bracket=(Zc - 1e-3, Zc + 1e-3), r_break_of=sphere_radius, **kw)
        print(f"| {label} | {ref:.12f} |", flush=True)


if __name__ == "__main__":
    main()
