#!/usr/bin/env python
"""Compare the solves of this tree with those of another checkout of relbasis, config by config.

Used to check a change that is meant to make the solve faster without changing its results:
every labelled level equal within 1e-13 relative (or its own error estimate, if larger); the
same branches, n, labels and flags for every root; error estimates within a factor 1.5 where
they exceed 1e-12 relative (below that they are rounding noise, and the flags, compared above,
say whether they stay on the same side of every threshold).

    python scripts/compare_speed_change.py BASE_CHECKOUT

BASE_CHECKOUT is the top folder of the other checkout (it holds its ``relbasis`` package);
each tree is solved in a subprocess of its own with that folder first on the import path.
"""

from __future__ import annotations

import argparse
import json
import os
import subprocess
import sys
from pathlib import Path

import numpy as np

CASES = [
    ("Z=1 point", {"ion": {"Z": 1, "nucleus": "point"}}, None),
    ("Z=26", {"ion": {"Z": 26}}, None),
    ("Z=92 point", {"ion": {"Z": 92, "nucleus": "point"}}, None),
    ("Z=92 fermi", {"ion": {"Z": 92}}, None),
    ("Z=92 sphere", {"ion": {"Z": 92, "nucleus": "sphere"}}, None),
    ("Z=118", {"ion": {"Z": 118}}, None),
    ("Z=170 fermi", {"ion": {"Z": 170, "A": 426, "nucleus": "fermi"}}, None),
    ("Z=92 balance none", {"ion": {"Z": 92, "nucleus": "point"}, "basis": {"balance": "none"}}, None),
    ("Z=26 balance none", {"ion": {"Z": 26}, "basis": {"balance": "none"}}, None),
    ("Z=54 gaussian", {"ion": {"Z": 54}, "basis": {"family": "gaussian"}}, None),
    ("Z=0 bag", {"ion": {"Z": 0}, "basis": {"r_max": 10.0, "wall": "bag"}}, None),
    ("Z=0 bag balance none", {"ion": {"Z": 0}, "basis": {"r_max": 10.0, "wall": "bag", "balance": "none"}}, None),
    ("Z=1 c=1e4", {"ion": {"Z": 1, "nucleus": "point"}}, 1e4),
    ("Z=1 c=1e6", {"ion": {"Z": 1, "nucleus": "point"}}, 1e6),
    ("Z=92 c=1e4", {"ion": {"Z": 92, "nucleus": "point"}}, 1e4),
    ("Z=10 size 40", {"ion": {"Z": 10}, "basis": {"size": 40}}, None),
    ("Z=92 point size 30", {"ion": {"Z": 92, "nucleus": "point"}, "basis": {"size": 30}}, None),
    ("Z=50 size 24", {"ion": {"Z": 50}, "basis": {"size": 24}}, None),
    ("Z=80 gauss size 60", {"ion": {"Z": 80, "nucleus": "gauss"}, "basis": {"size": 60}}, None),
    ("Z=1 r_max 20", {"ion": {"Z": 1, "nucleus": "point"}, "basis": {"r_max": 20.0}}, None),
    ("Ne core (mean field)", {"ion": {"Z": 10}, "electrons": {"core": "[He] 2s1/2 2p1/2 2p3/2"}}, None),
]

RUNNER = """
import json, sys, warnings
import relbasis
import numpy as np
warnings.simplefilter("ignore")
cases = json.loads(sys.argv[1])
out = {"file": relbasis.__file__, "cases": {}}
for name, cfg, c in cases:
    sol = relbasis.solve(cfg, c=c)
    rec = {}
    for k in sol:
        s = sol[k]
        est = s.error_estimate
        rec[str(k)] = {"e": [float(x) for x in s.energies], "b": list(s.branches), "n": list(s.n),
                       "l": list(s.labels), "f": [list(f) for f in s.flags],
                       "est": [None if np.isnan(x) else "inf" if np.isinf(x) else float(x)
                               for x in (est if est is not None else [])]}
    out["cases"][name] = rec
print(json.dumps(out))
"""


def _number(x):
    """An estimate as stored: a float, "inf" (the reduced basis lacks the level) or None (none made)."""
    return np.inf if x == "inf" else x


def run(tree: Path) -> dict:
    env = dict(os.environ, PYTHONPATH=str(tree))
    res = subprocess.run([sys.executable, "-c", RUNNER, json.dumps(CASES)], env=env, cwd=tree, capture_output=True,
                         text=True)
    if res.returncode:
        sys.exit(f"solving in {tree} failed: {res.stderr.strip().splitlines()[-1]}")
    return json.loads(res.stdout)


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("base", type=Path, help="top folder of the other checkout")
    args = ap.parse_args()
    here = Path(__file__).resolve().parent.parent
    old, new = run(args.base.resolve()), run(here)
    print(f"base: {old['file']}\nthis: {new['file']}")
    bad = 0
    print(f"{'case':<22} {'levels':>6} {'max rel diff':>13} {'worst/allowed':>13} {'est ratio range':>17} "
          f"{'labels':>7} {'flags':>6}")
    for name, _, _ in CASES:
        a, b = old["cases"][name], new["cases"][name]
        levels, worst_diff, worst_share, ratios, same_labels, same_flags = 0, 0.0, 0.0, [], True, True
        for k in a:
            ra, rb = a[k], b[k]
            if (ra["b"], ra["n"], ra["l"]) != (rb["b"], rb["n"], rb["l"]) or len(ra["e"]) != len(rb["e"]):
                same_labels = False
                continue
            if ra["f"] != rb["f"]:
                same_flags = False
            for i, lab in enumerate(ra["l"]):
                if lab is None or ra["b"][i] != "bound":
                    continue
                levels += 1
                ea, eb = ra["e"][i], rb["e"][i]
                rel = abs(ea - eb) / abs(ea)
                ea_est, eb_est = (_number(r["est"][i]) if r["est"] else None for r in (ra, rb))
                worst_diff = max(worst_diff, rel)
                worst_share = max(worst_share, rel / max(1e-13, ea_est or 0.0))
                if ea_est is not None and eb_est is not None and ea_est > 1e-12:
                    # the reduced basis lacks the level (inf) in both: the same verdict
                    ratios.append(1.0 if ea_est == eb_est == np.inf else eb_est / ea_est)
        rng = f"{min(ratios):.3f}..{max(ratios):.3f}" if ratios else "-"
        ok = same_labels and same_flags and worst_share <= 1.0 and all(1 / 1.5 <= r <= 1.5 for r in ratios)
        bad += not ok
        print(f"{name:<22} {levels:>6} {worst_diff:>13.2e} {worst_share:>13.3f} {rng:>17} "
              f"{'same' if same_labels else 'DIFF':>7} {'same' if same_flags else 'DIFF':>6}{'' if ok else '  <- FAIL'}")
    print("all cases agree" if not bad else f"{bad} case(s) disagree")
    return 1 if bad else 0


if __name__ == "__main__":
    sys.exit(main())
