#!/usr/bin/env python
"""Run the command line against a few hundred bad or hostile inputs and count the outcomes.

Every case must end with exit status 2 and exactly one line on stderr that starts with
"error:", no traceback, and no file left in the working folder that was not there before
(a case may say which outputs it is allowed to create).  The script prints one line per
failing case and a summary: cases, clean refusals, tracebacks, other failures.

    python scripts/hostile_inputs.py [--jobs 2] [--verbose]

The cases are built in a temporary folder: configs with wrong keys, types and ranges, plans
with bad axes, paths into special or missing places, damaged input files, flags out of range.
Refusals that cost a solve (none should) are reported with their time.
"""

from __future__ import annotations

import argparse
import os
import subprocess
import sys
import tempfile
import time
from concurrent.futures import ThreadPoolExecutor
from pathlib import Path

GOOD_ION = '[ion]\nZ = 10\nnucleus = "point"\n'
SMALL = ["--size", "30", "--kappas", "-1"]


def configs() -> dict[str, str]:
    """Bad config files: name -> TOML text."""
    bad = {
        "no-ion": "[basis]\nsize = 40\n",
        "no-Z": "[ion]\nnucleus = 'point'\n",
        "Z-string": "[ion]\nZ = 'ninety'\n",
        "Z-zero-point": "[ion]\nZ = 0\nnucleus = 'point'\nA = 1\n",
        "Z-negative": "[ion]\nZ = -5\n",
        "Z-huge": "[ion]\nZ = 1e6\n",
        "Z-nan": "[ion]\nZ = nan\n",
        "Z-inf": "[ion]\nZ = inf\n",
        "Z-bool": "[ion]\nZ = true\n",
        "Z-list": "[ion]\nZ = [92]\n",
        "A-zero": "[ion]\nZ = 92\nA = 0\n",
        "A-negative": "[ion]\nZ = 92\nA = -238\n",
        "A-float": "[ion]\nZ = 92\nA = 238.5\n",
        "A-small": "[ion]\nZ = 92\nA = 10\n",
        "nucleus-bad": "[ion]\nZ = 92\nnucleus = 'plum'\n",
        "nucleus-int": "[ion]\nZ = 92\nnucleus = 3\n",
        "radius-negative": "[ion]\nZ = 92\nrms_radius_fm = -1\n",
        "radius-zero": "[ion]\nZ = 92\nnucleus = 'fermi'\nrms_radius_fm = 0\n",
        "radius-huge": "[ion]\nZ = 92\nrms_radius_fm = 1e9\n",
        "radius-nan": "[ion]\nZ = 92\nrms_radius_fm = nan\n",
        "radius-source-bad": "[ion]\nZ = 92\nradius = 'guess'\n",
        "unknown-section": GOOD_ION + "[bassis]\nsize = 40\n",
        "unknown-key": GOOD_ION + "[basis]\nsise = 40\n",
        "unknown-ion-key": "[ion]\nZ = 10\nnucleus = 'point'\ncharge = 3\n",
        "family-bad": GOOD_ION + "[basis]\nfamily = 'slater'\n",
        "size-zero": GOOD_ION + "[basis]\nsize = 0\n",
        "size-negative": GOOD_ION + "[basis]\nsize = -40\n",
        "size-float": GOOD_ION + "[basis]\nsize = 40.5\n",
        "size-string": GOOD_ION + "[basis]\nsize = 'forty'\n",
        "size-huge": GOOD_ION + "[basis]\nsize = 10000000\n",
        "order-1": GOOD_ION + "[basis]\norder = 1\n",
        "order-huge": GOOD_ION + "[basis]\norder = 99\n",
        "order-above-size": GOOD_ION + "[basis]\nsize = 8\norder = 10\n",
        "r_min-zero": GOOD_ION + "[basis]\nr_min = 0\n",
        "r_min-negative": GOOD_ION + "[basis]\nr_min = -1e-6\n",
        "r_min-tiny": GOOD_ION + "[basis]\nr_min = 1e-300\n",
        "r_min-above-r_max": GOOD_ION + "[basis]\nr_min = 50\nr_max = 40\n",
        "r_max-zero": GOOD_ION + "[basis]\nr_max = 0\n",
        "r_max-huge": GOOD_ION + "[basis]\nr_max = 1e300\n",
        "r_max-inf": GOOD_ION + "[basis]\nr_max = inf\n",
        "r_max-nan": GOOD_ION + "[basis]\nr_max = nan\n",
        "r_scale-negative": GOOD_ION + "[basis]\nr_scale = -1\n",
        "knots-bad-name": GOOD_ION + "[basis]\nknots = 'random'\n",
        "knots-empty": GOOD_ION + "[basis]\nknots = []\n",
        "knots-unsorted": GOOD_ION + "[basis]\nknots = [0.0, 2.0, 1.0, 3.0]\n",
        "knots-negative": GOOD_ION + "[basis]\nknots = [-1.0, 0.5, 1.0]\n",
        "knots-strings": GOOD_ION + "[basis]\nknots = ['a', 'b']\n",
        "knots-nan": GOOD_ION + "[basis]\nknots = [0.0, nan, 1.0]\n",
        "balance-bad": GOOD_ION + "[basis]\nbalance = 'rkb2'\n",
        "balance-rkb-bspline": GOOD_ION + "[basis]\nbalance = 'rkb'\n",
        "quadrature-zero": GOOD_ION + "[basis]\nquadrature = 0\n",
        "quadrature-huge": GOOD_ION + "[basis]\nquadrature = 100000\n",
        "wall-bad": GOOD_ION + "[basis]\nwall = 'soft'\n",
        "overlap-threshold-negative": GOOD_ION + "[basis]\noverlap_threshold = -1\n",
        "overlap-threshold-one": GOOD_ION + "[basis]\noverlap_threshold = 2\n",
        "gauss-exponent-huge": GOOD_ION + "[basis]\nfamily = 'gaussian'\nexponent_max = 1e30\n",
        "gauss-exponent-zero": GOOD_ION + "[basis]\nfamily = 'gaussian'\nexponent_min = 0\n",
        "gauss-exponent-negative": GOOD_ION + "[basis]\nfamily = 'gaussian'\nexponent_min = -1\n",
        "gauss-exponents-reversed": GOOD_ION + "[basis]\nfamily = 'gaussian'\nexponent_min = 10\nexponent_max = 1\n",
        "gauss-exponents-empty": GOOD_ION + "[basis]\nfamily = 'gaussian'\nexponents = []\n",
        "gauss-exponents-dup": GOOD_ION + "[basis]\nfamily = 'gaussian'\nexponents = [1.0, 1.0, 2.0]\n",
        "gauss-order": GOOD_ION + "[basis]\nfamily = 'gaussian'\norder = 7\n",
        "kappas-zero": GOOD_ION + "[solve]\nkappas = [0]\n",
        "kappas-empty": GOOD_ION + "[solve]\nkappas = []\n",
        "kappas-string": GOOD_ION + "[solve]\nkappas = 'all'\n",
        "kappas-float": GOOD_ION + "[solve]\nkappas = [-1.5]\n",
        "kappas-huge": GOOD_ION + "[solve]\nkappas = [-1000]\n",
        "point-Z-beyond": "[ion]\nZ = 140\nnucleus = 'point'\n",
        "not-toml": "this is not toml = = =\n",
        "toml-array-top": "ion = [1, 2]\n",
        "ion-not-table": "ion = 92\n",
        "basis-not-table": GOOD_ION + "basis = 'big'\n",
        "empty": "",
        "electrons-open-shell": GOOD_ION + "[electrons]\ncore = '[He] 2s2 2p5'\n",
        "electrons-open-subshell": GOOD_ION + "[electrons]\ncore = '[He] 2s2 2p3/2(3)'\n",
        "electrons-repeat": GOOD_ION + "[electrons]\ncore = '[Ne] 2p3/2'\n",
        "electrons-impossible": GOOD_ION + "[electrons]\ncore = '1s2 2d5/2'\n",
        "electrons-bad-j": GOOD_ION + "[electrons]\ncore = '2p5/2'\n",
        "electrons-shorthand": GOOD_ION + "[electrons]\ncore = '[Ca]'\n",
        "electrons-beyond-Z": GOOD_ION + "[electrons]\ncore = '[Ar]'\n",
        "electrons-valence-beyond-Z": GOOD_ION + "[electrons]\ncore = '[Ne]'\nvalence = '3s1/2'\n",
        "electrons-valence-in-core": "[ion]\nZ = 11\n[electrons]\ncore = '[Ne]'\nvalence = '2p3/2'\n",
        "electrons-valence-two": "[ion]\nZ = 12\n[electrons]\ncore = '[Ne]'\nvalence = '3s1/2 3p1/2'\n",
        "electrons-valence-no-core": GOOD_ION + "[electrons]\nvalence = '1s1/2'\n",
        "electrons-empty-core": GOOD_ION + "[electrons]\ncore = ''\n",
        "electrons-core-list": GOOD_ION + "[electrons]\ncore = ['[He]']\n",
        "electrons-unknown-key": GOOD_ION + "[electrons]\ncore = '[He]'\ncharge = 8\n",
        "electrons-not-table": "electrons = '[He]'\n" + GOOD_ION,
    }
    return bad


def plans() -> dict[str, str]:
    base = '[base.ion]\nZ = 10\nnucleus = "point"\n[base.basis]\nsize = 30\n'
    track = '[track]\nstates = ["1s1/2"]\ntarget = 1e-6\n'
    return {
        "no-axes": base + track,
        "axis-not-list": base + '[axes]\n"basis.size" = 40\n' + track,
        "axis-empty": base + '[axes]\n"basis.size" = []\n' + track,
        "axis-bad-key": base + '[axes]\n"basis.sise" = [30, 40]\n' + track,
        "axis-bad-section": base + '[axes]\n"solve.kappas" = [[1]]\n' + track,
        "axis-undotted": base + '[axes]\nsize = [30, 40]\n' + track,
        "axis-bad-middle": base + '[axes]\n"basis.size" = [30, -5, 40]\n' + track,
        "axis-bad-last": base + '[axes]\n"basis.size" = [30, 40, "fifty"]\n' + track,
        "axis-range-bad": base + '[axes]\n"basis.size" = {from = 40, to = 30, step = 10}\n' + track,
        "axis-range-zero-step": base + '[axes]\n"basis.size" = {from = 30, to = 40, step = 0}\n' + track,
        "axis-range-huge": base + '[axes]\n"basis.size" = {from = 30, to = 1000000000, step = 1}\n' + track,
        "axes-product-huge": base + '[axes]\n"basis.size" = {from = 30, to = 130, step = 1}\n'
                             '"basis.order" = {from = 5, to = 15}\n"basis.r_max" = {from = 20, to = 40}\n' + track,
        "axis-range-inf": base + '[axes]\n"basis.r_max" = {from = 20.0, to = inf, step = 1.0}\n' + track,
        "track-bad-state": base + '[axes]\n"basis.size" = [30, 40]\n[track]\nstates = ["1x1/2"]\n',
        "track-bad-j": base + '[axes]\n"basis.size" = [30, 40]\n[track]\nstates = ["2p5/2"]\n',
        "track-target-negative": base + '[axes]\n"basis.size" = [30, 40]\n[track]\nstates = ["1s1/2"]\ntarget = -1\n',
        "track-reference-bad": base + '[axes]\n"basis.size" = [30, 40]\n[track]\nstates = ["1s1/2"]\nreference = "best"\n',
        "track-max-n-zero": base + '[axes]\n"basis.size" = [30, 40]\n[track]\nmax_n = 0\n',
        "exact-finite": '[base.ion]\nZ = 10\nnucleus = "fermi"\n[axes]\n"basis.size" = [30, 40]\n'
                        '[track]\nstates = ["1s1/2"]\nreference = "exact"\n',
        "base-bad-ion": '[base.ion]\nZ = "ten"\n[axes]\n"basis.size" = [30, 40]\n' + track,
        "base-unknown": base + '[base.solve2]\nx = 1\n[axes]\n"basis.size" = [30, 40]\n' + track,
        "not-toml": "axes = = [\n",
        "empty": "",
    }


def cases(tmp: Path) -> list[tuple[str, list[str], str]]:
    """(name, argv after 'relbasis', stdin text)."""
    out = []
    cdir = tmp / "configs"
    cdir.mkdir()
    for name, text in configs().items():
        p = cdir / f"{name}.toml"
        p.write_text(text)
        for cmd in ("levels", "audit"):
            out.append((f"config:{name}:{cmd}", [cmd, str(p), *([] if "kappas" in name else [])], ""))
    pdir = tmp / "plans"
    pdir.mkdir()
    for name, text in plans().items():
        p = pdir / f"{name}.toml"
        p.write_text(text)
        out.append((f"plan:{name}", ["scan", str(p), "--out", str(tmp / f"scan-{name}"), "--quiet"], ""))
    good = cdir / "good.toml"
    good.write_text(GOOD_ION + "[basis]\nsize = 30\n[solve]\nkappas = [-1]\n")
    (tmp / "file").write_text("x")
    (tmp / "binary.toml").write_bytes(b"\x00\xff" * 50)
    flags = {
        "size-zero": ["--size", "0"], "size-negative": ["--size", "-3"], "size-word": ["--size", "ten"],
        "size-huge": ["--size", "20000"], "order-0": ["--order", "0"], "order-word": ["--order", "x"],
        "r-min-tiny": ["--r-min", "1e-300"], "r-min-negative": ["--r-min", "-1"], "r-min-nan": ["--r-min", "nan"],
        "r-max-huge": ["--r-max", "1e300"], "r-max-inf": ["--r-max", "inf"], "r-max-zero": ["--r-max", "0"],
        "r-scale-zero": ["--r-scale", "0"], "z-word": ["--z", "U"], "z-nan": ["--z", "nan"],
        "z-negative": ["--z", "-1"], "z-huge": ["--z", "1e9"], "a-zero": ["--a", "0"], "a-word": ["--a", "x"],
        "nucleus-bad": ["--nucleus", "pear"], "family-bad": ["--family", "x"], "balance-bad": ["--balance", "x"],
        "knots-bad": ["--knots", "x"], "wall-bad": ["--wall", "x"], "kappas-zero": ["--kappas", "0"],
        "kappas-word": ["--kappas", "s,p"], "kappas-empty": ["--kappas", ","], "quadrature-0": ["--quadrature", "0"],
        "exponent-min-neg": ["--family", "gaussian", "--exponent-min", "-1"],
        "exponent-max-huge": ["--family", "gaussian", "--exponent-max", "1e30"],
        "overlap-threshold-neg": ["--overlap-threshold", "-1"], "radius-bad": ["--radius", "x"],
        "rms-radius-neg": ["--rms-radius", "-2"], "unknown-flag": ["--colour", "red"],
        "order-on-gaussian": ["--family", "gaussian", "--order", "7"],
        "point-z-200": ["--z", "200", "--nucleus", "point"],
    }
    for name, extra in flags.items():
        for cmd in ("levels", "audit", "export"):
            argv = [cmd, "--z", "10", *SMALL, *extra]
            if cmd == "export":
                argv += ["--out", str(tmp / f"x-{name}.h5")]
            out.append((f"flag:{name}:{cmd}", argv, ""))
    paths = {
        "config-missing": ["levels", str(tmp / "missing.toml")],
        "config-dir": ["levels", str(tmp)],
        "config-devnull": ["levels", "/dev/null"],
        "config-binary": ["levels", str(tmp / "binary.toml")],
        "config-proc-mem": ["levels", "/proc/self/mem"],
        "plan-missing": ["scan", str(tmp / "missing.toml")],
        "plan-dir": ["scan", str(tmp)],
        "export-proc": ["export", str(good), "--out", "/proc/relbasis.h5"],
        "export-sys": ["export", str(good), "--out", "/sys/relbasis.h5"],
        "export-devnull": ["export", str(good), "--out", "/dev/null"],
        "export-dir": ["export", str(good), "--out", str(tmp)],
        "export-no-parent": ["export", str(good), "--out", str(tmp / "missing" / "b.h5")],
        "export-under-file": ["export", str(good), "--out", str(tmp / "file" / "b.h5")],
        "export-suffix": ["export", str(good), "--out", str(tmp / "b.txt")],
        "export-foreign-force": ["export", str(good), "--out", str(tmp / "file.h5"), "--force"],
        "export-long-name": ["export", str(good), "--out", str(tmp / ("n" * 300 + ".h5"))],
        "export-grid-huge": ["export", str(good), "--out", str(tmp / "g.h5"), "--grid", "1e-6:1:1000000000"],
        "export-grid-bad": ["export", str(good), "--out", str(tmp / "g.h5"), "--grid", "1:0:10"],
        "export-grid-word": ["export", str(good), "--out", str(tmp / "g.h5"), "--grid", "a:b:c"],
        "export-grid-beyond": ["export", str(good), "--out", str(tmp / "g.h5"), "--grid", "1e-6:1e6:100"],
        "export-with-bad": ["export", str(good), "--out", str(tmp / "w.h5"), "--with", "quadrupole"],
        "export-slater-bad": ["export", str(good), "--out", str(tmp / "w.h5"), "--with", "slater", "--slater", "x"],
        "export-slater-missing": ["export", str(good), "--out", str(tmp / "w.h5"), "--with", "slater",
                                  "--slater", "0:99s1/2,1s1/2,1s1/2,1s1/2"],
        "report-proc": ["audit", str(good), "--report", "/proc/relbasis-report"],
        "report-sys": ["audit", str(good), "--report", "/sys/relbasis-report"],
        "report-file": ["audit", str(good), "--report", str(tmp / "file")],
        "report-under-file": ["audit", str(good), "--report", str(tmp / "file" / "r")],
        "report-no-parent": ["audit", str(good), "--report", str(tmp / "missing" / "r")],
        "audit-max-n-zero": ["audit", str(good), "--max-n", "0"],
        "audit-target-zero": ["audit", str(good), "--target", "0"],
        "audit-target-nan": ["audit", str(good), "--target", "nan"],
        "scan-out-proc": ["scan", str(pdir / "no-axes.toml"), "--out", "/proc/relbasis-scan"],
        "scan-out-file": ["scan", str(pdir / "no-axes.toml"), "--out", str(tmp / "file")],
        "scan-jobs-zero": ["scan", str(pdir / "no-axes.toml"), "--jobs", "0"],
        "scan-scheduler-bad": ["scan", str(pdir / "no-axes.toml"), "--scheduler", "notaurl"],
        "scan-scheduler-port": ["scan", str(pdir / "no-axes.toml"), "--scheduler", "tcp://h:99999"],
        "critical-point": ["critical", "--nucleus", "point"],
        "critical-n-zero": ["critical", "--n", "0"],
        "critical-kappa-zero": ["critical", "--kappa", "0"],
        "critical-a-both": ["critical", "--a", "400", "--a-per-z", "2.5"],
        "critical-size-tiny": ["critical", "--size", "3"],
        "no-command": [],
        "bad-command": ["solve"],
    }
    (tmp / "file.h5").write_text("the user's own file")
    for name, argv in paths.items():
        out.append((f"path:{name}", argv, ""))
    return out


def run(case, tmp: Path, timeout: float) -> dict:
    name, argv, stdin = case
    t0 = time.perf_counter()
    try:
        done = subprocess.run([sys.executable, "-m", "relbasis", *argv], input=stdin, capture_output=True,
                              text=True, cwd=tmp / "cwd", timeout=timeout, check=False)
    except subprocess.TimeoutExpired:
        return {"name": name, "status": "timeout", "seconds": timeout, "err": ""}
    err = done.stderr.strip()
    lines = err.splitlines()
    if "Traceback" in err:
        status = "traceback"
    elif done.returncode == 2 and len(lines) == 1 and lines[0].startswith("error: "):
        status = "clean"
    else:
        status = f"exit {done.returncode}, {len(lines)} stderr lines"
    return {"name": name, "status": status, "seconds": time.perf_counter() - t0, "err": err}


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--jobs", type=int, default=2)
    ap.add_argument("--timeout", type=float, default=60.0)
    ap.add_argument("--verbose", action="store_true")
    args = ap.parse_args()
    with tempfile.TemporaryDirectory() as d:
        tmp = Path(d)
        (tmp / "cwd").mkdir()
        todo = cases(tmp)
        before = {p for p in tmp.rglob("*")}
        with ThreadPoolExecutor(args.jobs) as pool:
            results = list(pool.map(lambda c: run(c, tmp, args.timeout), todo))
        stray = sorted(str(p.relative_to(tmp)) for p in set(tmp.rglob("*")) - before)
    counts: dict[str, int] = {}
    for r in results:
        kind = "clean" if r["status"] == "clean" else ("traceback" if r["status"] == "traceback" else "other")
        counts[kind] = counts.get(kind, 0) + 1
        if r["status"] != "clean" or args.verbose:
            print(f"{r['name']:<44} {r['status']:<28} {r['seconds']:6.2f} s  {r['err'][-300:]!r}")
    slow = [r for r in results if r["status"] == "clean" and r["seconds"] > 5]
    for r in slow:
        print(f"slow refusal: {r['name']} {r['seconds']:.1f} s")
    print(f"\n{len(results)} cases: {counts.get('clean', 0)} clean one-line refusals (exit 2), "
          f"{counts.get('traceback', 0)} tracebacks, {counts.get('other', 0)} other outcomes; "
          f"stray files: {len(stray)}{' ' + ', '.join(stray[:10]) if stray else ''}")
    return 0 if counts.get("clean", 0) == len(results) and not stray else 1


if __name__ == "__main__":
    sys.exit(main())
