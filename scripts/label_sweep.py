"""Sweep of bases: is every label earned?  (figures recorded in docs/spectrum.md)

For each basis (large and small cavities, Z = 1..170, every nuclear model, both families, the
nonrelativistic switch) it prints: roots labelled, rows plainly bound, how many of those were
checked against an independent value (exact Dirac–Coulomb formula or the shooting solution of
tests/shooting.py), the worst relative error among them, the count beyond 1e-8, and the count of
labelled roots whose P has a node count other than n - l - 1.  Both counts must be 0.

    python scripts/label_sweep.py            # about a few minutes on 2 cores
"""

import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "tests"))

from sweep import check, solve_quiet  # noqa: E402

K = [-1, 1, -2, 2, -3]
CASES = []
for Z in (1, 10, 30, 54, 82, 92, 100, 118, 125, 130):
    for basis in ({}, {"r_max": 30 / Z}, {"r_max": 2000 / Z}, {"size": 40}, {"r_max": 1e6}):
        CASES.append((f"point Z={Z} {basis}", dict(ion={"Z": Z, "nucleus": "point"}, basis=basis, solve={"kappas": K})))
for Z, A in ((20, None), (54, None), (92, 238), (140, 350), (160, 400), (170, 430)):
    for model in ("sphere", "gauss", "fermi"):
        for basis in ({}, {"r_max": 30 / Z}, {"size": 50}):
            ion = {"Z": Z, "nucleus": model} | ({"A": A} if A else {})
            CASES.append((f"{model} Z={Z} {basis}", dict(ion=ion, basis=basis, solve={"kappas": [-1, 1, -2]})))
for Z in (1, 20, 54, 92):
    for bal in ("rkb", "dkb"):
        for size in (30, 40, 60):
            CASES.append((f"gaussian {bal} Z={Z} size={size}", dict(
                ion={"Z": Z, "nucleus": "gauss"}, basis={"family": "gaussian", "balance": bal, "size": size},
                solve={"kappas": [-1, 1, -2]})))
for c in (1e4, 1e5, 1e6):
    for Z in (1, 2, 10):
        CASES.append((f"point Z={Z} c={c:g}", dict(ion={"Z": Z, "nucleus": "point"}, solve={"kappas": K}, c=c)))


def main() -> int:
    bad = 0
    t0 = time.perf_counter()
    print(f"{'basis':<48} {'labelled':>8} {'plain':>6} {'checked':>7} {'worst':>9} {'>1e-8':>6} {'nodes':>6}")
    for name, kw in CASES:
        o = check(name, solve_quiet(**kw))
        bad += o.wrong_plain + o.node_violations
        print(f"{name:<48} {o.labelled:>8} {o.plain:>6} {o.checked:>7} {o.worst_plain:>9.1e} {o.wrong_plain:>6} "
              f"{o.node_violations:>6}", flush=True)
    print(f"{len(CASES)} bases, {bad} violations, {time.perf_counter() - t0:.0f} s")
    return 1 if bad else 0


if __name__ == "__main__":
    raise SystemExit(main())
