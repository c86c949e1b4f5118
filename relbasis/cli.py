"""Command line: a thin shell over the Python API.

    relbasis levels [CONFIG.toml] [--z Z] [--nucleus MODEL] [--size N] ... [--json] [--all]
    relbasis critical [--nucleus MODEL] [--a-per-z X | --a A] [--n N] [--kappa K] [--json]

Every error a user can fix is printed as one line on stderr with exit status 2.
"""

from __future__ import annotations

import argparse
import json
import math
import os
import sys

import numpy as np

from . import constants
from .version import __version__
from .errors import InputError

_EXAMPLE = "relbasis levels --z 92"


EXIT_FAILED_VERDICT = 3
"""Exit status of ``relbasis audit --strict`` when the verdict is fail (2 is bad input)."""


class _Parser(argparse.ArgumentParser):
    """argparse with one-line errors (exit status 2), as for every other input problem."""

    def error(self, message):  # noqa: D401 - argparse API
        raise InputError(f"{self.prog}: {message} (see '{self.prog} --help')")


def _add_model_options(p: argparse.ArgumentParser) -> None:
    ion = p.add_argument_group("ion (override [ion] of the config)")
    ion.add_argument("--z", type=float, metavar="Z", help="nuclear charge (required without a config)")
    ion.add_argument("--a", type=int, metavar="A", help="mass number (default: per element)")
    ion.add_argument("--nucleus", metavar="MODEL", help="point | sphere | gauss | fermi (default fermi; gauss for the lightest)")
    ion.add_argument("--rms-radius", type=float, metavar="FM", help="rms charge radius in fm")
    ion.add_argument("--radius", metavar="SOURCE", help="formula | measured: where the rms radius comes from "
                     "without --rms-radius (default formula; measured needs the extra relbasis[radii])")
    basis = p.add_argument_group("basis (override [basis] of the config)")
    basis.add_argument("--family", help="bspline | gaussian (default bspline)")
    basis.add_argument("--size", type=int, help="functions per component (default 100 B-splines, 40 Gaussians)")
    basis.add_argument("--order", type=int, help="B-spline order, degree + 1 (default 10)")
    basis.add_argument("--r-min", type=float, metavar="BOHR", help="first non-zero knot")
    basis.add_argument("--r-max", type=float, metavar="BOHR", help="cavity radius")
    basis.add_argument("--r-scale", type=float, metavar="BOHR", help="log-linear knots: where spacing turns even")
    basis.add_argument("--knots", help="log-linear | exponential")
    basis.add_argument("--balance", help="none | dkb, and rkb for Gaussians (default dkb)")
    basis.add_argument("--exponent-min", type=float, metavar="ZETA", help="Gaussians: most diffuse exponent (bohr^-2)")
    basis.add_argument("--exponent-max", type=float, metavar="ZETA", help="Gaussians: tightest exponent (bohr^-2)")
    basis.add_argument("--overlap-threshold", type=float, metavar="T",
                       help="canonical orthogonalisation: drop overlap eigenvalues below T x the largest")
    basis.add_argument("--quadrature", type=int, metavar="N", help="Gauss-Legendre points per knot interval")
    basis.add_argument("--wall", help="B-splines: dirichlet (P(R) = Q(R) = 0) | bag (P(R) = -Q(R))")
    p.add_argument("--kappas", metavar="LIST", help="symmetries, e.g. -1,1,-2 (default: |kappa| <= 4)")
    _add_work_options(p)


def _add_work_options(p: argparse.ArgumentParser, progress: bool = True) -> None:
    """--allow-large, and the progress switches (docs/performance.md: limits and estimates)."""
    work = p.add_argument_group("work (estimates and limits: docs/performance.md)")
    work.add_argument("--allow-large", action="store_true",
                      help="go on beyond the work limits: estimated memory over half of this machine's, "
                           "over 30 min of work, or an exported file over 2 GB")
    if progress:
        bars = work.add_mutually_exclusive_group()
        bars.add_argument("--progress", dest="progress", action="store_const", const=True, default=None,
                          help="show progress bars on stderr even for short work or when it is not a terminal")
        bars.add_argument("--no-progress", dest="progress", action="store_const", const=False,
                          help="never show progress bars")


def _overrides(args) -> dict:
    ion = {"Z": args.z, "A": args.a, "nucleus": args.nucleus, "rms_radius_fm": args.rms_radius, "radius": args.radius}
    basis = {"family": args.family, "size": args.size, "order": args.order, "r_min": args.r_min,
             "r_max": args.r_max, "r_scale": args.r_scale, "knots": args.knots, "balance": args.balance,
             "quadrature": args.quadrature, "exponent_min": args.exponent_min, "exponent_max": args.exponent_max,
             "overlap_threshold": args.overlap_threshold, "wall": args.wall}
    out = {"ion": {k: v for k, v in ion.items() if v is not None},
           "basis": {k: v for k, v in basis.items() if v is not None}}
    if out["ion"].get("Z") is not None and float(out["ion"]["Z"]).is_integer():
        out["ion"]["Z"] = int(out["ion"]["Z"])
    if args.kappas is not None:
        try:
            out["solve"] = {"kappas": [int(k) for k in args.kappas.replace(" ", "").split(",") if k]}
        except ValueError:
            raise InputError(f"--kappas {args.kappas!r}: give a comma-separated list of non-zero integers, e.g. -1,1,-2") from None
    return out


def _config_source(args):
    """(config file or None, section overrides) of the model options."""
    over = _overrides(args)
    config = args.config
    if config is None and "Z" not in over["ion"]:
        config = demo_config_path()
    return config, over


def _solution(args):
    from .solver import solve

    config, over = _config_source(args)
    return solve(config, allow_large=args.allow_large, progress=args.progress, **over)


def demo_config_path():
    """The embedded demo scenario (an invented one), used when neither a config nor --z is given."""
    from importlib.resources import files

    return files("relbasis") / "data" / "demo.toml"


# ----------------------------------------------------------------------------- levels


def _fmt_flags(flags) -> str:
    return ",".join(flags) if flags else ""


def basis_line(sol) -> str:
    """One line describing the basis actually used (defaults resolved): the family's own words,
    then what canonical orthogonalisation dropped (where it ran)."""
    from .families import family_of

    b = sol.config.basis
    family = family_of(b)
    text = f"basis: {family.describe(b)}"
    dropped = {k: n for k, n in sol.dropped.items() if n}
    if dropped or family.always_orthogonalised or b.overlap_threshold is not None:
        text += "; canonical orthogonalisation dropped " + (
            ", ".join(f"{n} in kappa {k:+d}" for k, n in dropped.items()) if dropped else "nothing")
    return text


def ion_line(nuc) -> str:
    """The ion as the table headers state it: Z, A, model, rms radius and where it came from."""
    if nuc.rms_radius_fm is not None:
        radius = f", rms radius {nuc.rms_radius_fm:.4f} fm (source: {nuc.rms_radius_source})"
    else:
        radius = f", rms radius: {nuc.rms_radius_source}"
    return f"Z = {nuc.Z:g}, A = {nuc.A}, {nuc.model} nucleus{radius}; no QED"


def levels_table(sol, show_all: bool = False) -> str:
    """The readable table of `relbasis levels`."""
    nuc = sol.nucleus
    point = (nuc.model == "point" and nuc.Z > 0) and sol.scf is None  # exact values are one-electron ones
    lines = [f"relbasis {__version__}: {ion_line(nuc)}"]
    lines.append(basis_line(sol))
    lines.append(f"constants: CODATA {constants.CODATA}, alpha = {constants.ALPHA:.13g}, 1 hartree = {constants.HARTREE_EV:.12g} eV")
    lines.append("energies are binding energies eps = E - m c^2")
    lines.append("")
    head = f"{'kappa':>5}  {'branch':<8}  {'label':<7}  {'eps (hartree)':>22}  {'eps (eV)':>22}  {'est. error':>10}"
    if point:
        head += f"  {'rel. error':>10}"
    head += "  flags"
    lines.append(head)
    dived = []
    core = set() if sol.scf is None else {(o.kappa, o.n) for o in sol.scf.core}
    for kappa in sol.kappas:
        spec = sol[kappa]
        counts = {br: len(spec.indices(br)) for br in ("negative", "bound", "positive", "spurious")}
        for i, eps in enumerate(spec.energies):
            br = spec.branches[i]
            if (kappa, spec.n[i]) in core and br == "bound":
                br = "core"  # an occupied orbital of the mean field (bound, and in the core)
            if "dived" in spec.flags[i]:
                dived.append(spec.labels[i])
            elif not show_all and br in ("negative", "positive"):
                continue
            est = spec.error_estimate[i] if spec.error_estimate is not None else float("nan")
            est = f"{est:.1e}" if np.isfinite(est) else "-"
            row = (f"{kappa:>5}  {br:<8}  {spec.labels[i] or '-':<7}  {eps:>22.15g}  {eps * constants.HARTREE_EV:>22.15g}"
                   f"  {est:>10}")
            if point:
                err = f"{abs(eps / sol.exact(kappa, spec.n[i]) - 1):.2e}" if spec.n[i] is not None else "-"
                row += f"  {err:>10}"
            row += f"  {_fmt_flags(spec.flags[i])}"
            lines.append(row.rstrip())
        lines.append(
            f"{'':>5}  roots: {len(spec)} = {counts['negative']} negative + {counts['bound']} bound + "
            f"{counts['positive']} positive + {counts['spurious']} spurious"
            + ("" if show_all else "  (--all lists the continua)")
        )
    lines.append("")
    from .confidence import CONFIDENCE_THRESHOLD
    lines.append(f"est. error: relative error estimated from the basis itself (a reduced basis and the cavity wall); "
                 f"a level above {CONFIDENCE_THRESHOLD:.0e} is flagged unconverged or cavity-limited.")
    lines.append("A row is plainly trustworthy only when its branch is bound (or core: an occupied orbital of the mean field) and it carries no flag.")
    for label in dived:
        lines.append(f"dived: {label} lies below -2 m c^2, in the negative continuum (the charge exceeds its "
                     f"critical value); the levels above keep their own n.")
    lines.append("Levels hold for the stated nuclear model without QED; validate before use in publications.")
    return "\n".join(lines)


def audit_table(result) -> str:
    """The readable table of `relbasis audit`."""
    sol = result.solution
    lines = [f"relbasis {__version__} audit: {ion_line(sol.nucleus)}", basis_line(sol), ""]
    lines.append(f"{'check':<26} {'status':<6} {'value':>10} {'threshold':>10}  detail")
    for c in result.checks:
        value = "-" if c.value is None else f"{c.value:.3g}"
        thr = "-" if c.threshold is None else f"{c.threshold:.3g}"
        lines.append(f"{c.name:<26} {c.status:<6} {value:>10} {thr:>10}  {c.detail}")
    lines.append("")
    lines.append(f"verdict: {result.verdict}")
    for a in result.advice:
        lines.append(f"advice: {a}")
    lines.append("")
    lines.append("Checked for the stated nuclear model without QED; validate before use in publications.")
    return "\n".join(lines)


def _cmd_audit(args) -> int:
    from .audit import audit, convergence_series
    from .report import write_report

    if args.max_n < 1:
        raise InputError(f"--max-n {args.max_n}: must be at least 1")
    if not (args.target > 0):
        raise InputError(f"--target {args.target}: must be a positive relative accuracy, e.g. 1e-8")
    if args.report is not None:
        from .report import check_target

        check_target(args.report, args.force)
    result = audit(_solution(args), max_n=args.max_n, target=args.target)
    if args.report is not None:
        write_report(result, args.report, args.force, convergence_series(result))
    if args.json:
        print(json.dumps(result.to_dict(), indent=1))
    else:
        print(audit_table(result))
        if args.report is not None:
            print(f"report written to {args.report}")
    if args.strict and result.verdict == "fail":
        return EXIT_FAILED_VERDICT
    return 0


def _cmd_scan(args) -> int:
    from .scan import scan, summary_table

    if args.jobs == 0 or args.jobs < -1:
        raise InputError(f"--jobs {args.jobs}: give a positive number of processes (or -1 for all cores)")
    result = scan(args.plan, args.out, jobs=args.jobs, scheduler=args.scheduler, progress=not args.quiet,
                  allow_large=args.allow_large)
    print(summary_table(result.summary))
    print(f"computed {result.computed} of {result.total} units ({result.total - result.computed} reused); "
          f"results in {result.out}")
    return 0


def _cmd_export(args) -> int:
    from .writer import export

    blocks = tuple(b for b in (args.with_ or "").replace(" ", "").split(",") if b)
    from .writer import check_target

    check_target(args.out, args.force)  # before the solve: a refusal costs nothing
    spec = _parse_grid(args.grid) if args.grid is not None else None
    _check_export_work(args, spec, blocks)  # before the solve and before any array is made
    grid = np.geomspace(*spec) if spec is not None else None
    sol = _solution(args)
    from .writer import parse_slater

    slater = [parse_slater(s) for s in (args.slater or [])]
    path = export(sol, args.out, force=args.force, grid=grid, blocks=blocks, slater=slater,
                  allow_large=args.allow_large, progress=args.progress)
    total = sum(len(sol[k]) for k in sol.kappas)
    print(f"wrote {path}: {total} roots in {len(sol.kappas)} symmetries" + (f", blocks {', '.join(blocks)}" if blocks else ""))
    print(f"ion: {ion_line(sol.nucleus)}")
    if sol.scf is not None:  # the file's layout version 2: the roots are those of the frozen core
        print(f"core: {sol.config.electrons.to_dict()['core']} ({sol.scf.electron_count} electrons, "
              f"{sol.scf.converged_text}), stored in the group 'core' (layout version 2)")
    return 0


def _parse_grid(text: str) -> tuple[float, float, int]:
    """'R_MIN:R_MAX:COUNT' -> (r_min, r_max, count), checked; nothing is allocated here."""
    try:
        lo, hi, count = text.split(":")
        lo, hi, count = float(lo), float(hi), float(count)
    except ValueError:
        raise InputError(f"--grid {text!r}: give R_MIN:R_MAX:COUNT, e.g. 1e-6:40:2000 (log-spaced, bohr)") from None
    if not (math.isfinite(lo) and math.isfinite(hi) and 0 < lo < hi):
        raise InputError(f"--grid {text!r}: need finite radii 0 < R_MIN < R_MAX (bohr)")
    if not (math.isfinite(count) and count.is_integer() and count >= 2):
        raise InputError(f"--grid {text!r}: COUNT must be a whole number >= 2")
    return lo, hi, int(count)


def _check_export_work(args, spec, blocks) -> None:
    """The grid against the cavity and the whole export against the work limits, from the
    resolved config alone (relbasis.budget): refused at once, before the solve."""
    from . import budget
    from .config import LENGTH_MAX, resolve
    from .families import family_of
    from .solver import as_config

    config, over = _config_source(args)
    cfg, _ = resolve(as_config(config, **over))
    b = cfg.basis
    if spec is not None:
        wall = family_of(b).wall(b)
        top = wall if wall is not None else LENGTH_MAX
        if spec[1] > top:
            where = f"the cavity radius r_max = {top:g} bohr" if wall is not None else f"{top:g} bohr"
            raise InputError(f"--grid: R_MAX = {spec[1]:g} lies beyond {where}")
    est = budget.export_estimate(cfg, spec[2] if spec is not None else None, blocks)
    if spec is not None:
        what = (f"--grid {args.grid} ({spec[2]} points x {est.rows} roots x 2 components x 8 bytes "
                f"in each of {est.symmetries} symmetries)")
    else:
        what = f"the export of {b.size} functions per component"
    budget.check(est, what, args.allow_large, "--allow-large")  # the command line names its flag


def _cmd_levels(args) -> int:
    sol = _solution(args)
    if args.json:
        print(json.dumps(sol.to_dict(), indent=1))
    else:
        if sol.scf is not None:
            print(mean_field_table(sol))
            print()
        print(levels_table(sol, args.all))
    return 0


# ----------------------------------------------------------------------------- mean field


def mean_field_table(sol, iterations: bool = False) -> str:
    """The readable table of a core: energies, orbitals, convergence (``relbasis mean-field``)."""
    mf, cfg = sol.scf, sol.config
    ion = sol.nucleus
    charge = ion.Z - mf.electron_count - (1 if cfg.electrons.valence is not None else 0)
    lines = [
        f"relbasis {__version__} Dirac–Hartree–Fock core of Z = {ion.Z:g} ({ion.model} nucleus), "
        f"{mf.electron_count} core electrons"
        + (f" + valence {cfg.electrons.valence.label}" if cfg.electrons.valence is not None else "")
        + f", charge {charge:+g}",
        f"{'converged' if mf.converged else 'NOT CONVERGED'} in {mf.iterations} iterations, {mf.seconds:.1f} s "
        f"(start: {mf.guess}); c = {sol.c:.10g}",
        "",
        f"  total energy of the core {mf.total_energy:22.12f} hartree (rest mass excluded)",
        f"    one-body             {mf.one_body:22.12f}",
        f"    direct               {mf.direct:22.12f}",
        f"    exchange             {mf.exchange:22.12f}",
        "",
        f"  {'orbital':<8} {'q':>3} {'energy (hartree)':>22} {'<r> (bohr)':>14} {'<r^2> (bohr^2)':>16}",
    ]
    lines += [f"  {o.label:<8} {o.occupancy:>3} {o.energy:22.12f} {o.r_mean:14.8f} {o.r2_mean:16.8f}" for o in mf.core]
    if iterations:
        lines += ["", f"  {'iter':>4} {'energy (hartree)':>22} {'change':>10} {'orbital step':>13} {'DIIS':>5}"]
        lines += [f"  {h.index:>4} {h.energy:22.12f} {h.change:10.1e} {h.step:13.1e} {h.diis:>5}" for h in mf.history]
    lines += ["", "Holds for the stated model only (Dirac–Coulomb mean field, this nuclear model, no QED); "
              "validate before use in publications."]
    return "\n".join(lines)


def _cmd_mean_field(args) -> int:
    sol = _solution(args)
    if sol.scf is None:
        raise InputError("mean-field: the config has no [electrons] section; give the core, e.g. "
                         '[electrons] core = "[Ne]" (docs/config.md)')
    if args.json:
        doc = sol.to_dict()
        print(json.dumps({k: doc[k] for k in ("relbasis", "ion", "electrons", "scf")}, indent=1))
    else:
        print(mean_field_table(sol, iterations=True))
    return 0


# ----------------------------------------------------------------------------- second order


_KIND_WORDS = {"pair": "1s^2 pair of the bare nucleus (1/Z expansion)",
               "core": "correlation of the closed core (Dirac–Hartree–Fock reference)",
               "valence": "valence electron outside the core (V^(N-1) basis)"}


def second_order_table(res, check=None) -> str:
    """The readable table of ``relbasis second-order``: increments, sums, extrapolation, verdict."""
    lines = [
        f"relbasis {__version__} second-order Coulomb energy: {_KIND_WORDS[res.kind]}, reference {res.reference}",
        f"{'no-pair (positive branch only)' if not res.negative_branch else 'negative branch included'}; "
        f"c = {res.c:.10g}; {res.seconds:.1f} s",
        "",
        f"  {'L':>3} {'increment (hartree)':>22} {'sum through L':>22}",
    ]
    total = 0.0
    for L, d in enumerate(res.increments):
        total += d
        lines.append(f"  {L:>3} {d:22.12f} {total:22.12f}")
    lines += [
        "",
        f"  sum through l_max = {res.l_max}   {res.energy:22.12f} hartree",
        f"  extrapolated          {res.extrapolated:22.12f} +- {res.uncertainty:.1e} "
        f"(tail law (L+1/2)^-p, p = {', '.join(map(str, res.fit_powers)) or 'none'}; last increments fall as "
        f"(L+1/2)^-{res.exponent:.2f})",
    ]
    for name, value in res.parts.items():
        lines.append(f"    {name.replace('_', ' '):<28} {value:22.12f}")
    if res.flags:
        lines.append(f"  flags: {', '.join(res.flags)}")
    if check is not None:
        lines += ["", f"  completeness for {check.target:.0e} hartree: {check.verdict.upper()} "
                      f"(estimated error {check.error:.1e})"]
        for v in check.variations:
            lines.append(f"    {v.setting:<28} {v.result.extrapolated:22.12f}  change {v.change:+.1e}")
        lines += [f"    - {a}" for a in check.advice]
    lines += ["", "Holds for the stated model only (Dirac–Coulomb, this nuclear model, no Breit, no QED, second order); "
                  "validate before use in publications."]
    return "\n".join(lines)


def _cmd_second_order(args) -> int:
    from .completeness import completeness
    from .perturbation import L_MAX_LIMIT, second_order
    from .solver import as_config

    if not 0 <= args.l_max <= L_MAX_LIMIT:
        raise InputError(f"--l-max {args.l_max}: valid 0 <= L <= {L_MAX_LIMIT}")
    config, over = _config_source(args)
    cfg = as_config(config, **over)
    progress = args.progress
    if args.check:
        chk = completeness(cfg, args.l_max, target=_target(args.target), negative_branch=args.negative_branch,
                           progress=progress, allow_large=args.allow_large)
        res = chk.result
    else:
        chk = None
        res = second_order(cfg, args.l_max, negative_branch=args.negative_branch, progress=progress,
                           allow_large=args.allow_large)
    if args.json:
        doc = {"relbasis": __version__, "second_order": res.to_dict()}
        if chk is not None:
            doc["completeness"] = chk.to_dict()
        print(json.dumps(doc, indent=1))
    else:
        print(second_order_table(res, chk))
    return 0


def _target(value: float) -> float:
    from .validate import real

    return real("--target", value)  # the command line names its flag


# ----------------------------------------------------------------------------- critical


def critical_table(res) -> str:
    """The readable table of `relbasis critical`."""
    digits = max(0, -math.floor(math.log10(res.uncertainty)) + 1) if res.uncertainty > 0 else 12
    b, cb = res.basis, res.check_basis
    return "\n".join([
        f"relbasis {__version__} critical charge of {res.label} (n = {res.n}, kappa = {res.kappa:+d}): "
        f"{res.nucleus} nucleus, one electron",
        f"mass rule: {res.mass_rule}",
        f"radius: {res.radius_rule}; at Z_cr A = {res.A:.6g}, R_rms = {res.rms_radius_fm:.6f} fm",
        f"threshold: eps = -2c^2 = {res.threshold_hartree:.10g} hartree (E = -mc^2)",
        "",
        f"  Z_cr = {res.Z:.{digits}f} +- {res.uncertainty:.1e}",
        f"  d eps/dZ at Z_cr = {res.slope:.6g} hartree per unit charge (along the mass rule)",
        "",
        f"basis: bspline, {b['size']} splines of order {b['order']}, r_max = {b['r_max']:.4g} bohr, "
        f"balance = {b['balance']}; check: {cb['size']} splines, r_max = {cb['r_max']:.4g} bohr "
        f"(Z_cr = {res.Z_check:.{digits}f})",
        f"method: {res.method}",
        f"{res.evaluations} solves in {res.seconds:.1f} s; constants CODATA {constants.CODATA}",
        "",
        f"Holds for the stated model only: {res.caveat}; validate before use in publications.",
    ])


def _cmd_critical(args) -> int:
    from .critical import critical_charge, per_z_rule

    if args.a is not None and args.a_per_z is not None:
        raise InputError("--a and --a-per-z: give one mass rule, a fixed A or A = (A/Z) x Z")
    rule = per_z_rule(args.a_per_z) if args.a_per_z is not None else None
    basis = {k: v for k, v in {"size": args.size, "r_max": args.r_max}.items() if v is not None}
    progress = not args.quiet and not args.json and sys.stderr.isatty()
    res = critical_charge(args.nucleus, args.a, args.n, args.kappa, basis=basis, progress=progress, rule=rule)
    print(json.dumps(res.to_dict(), indent=1) if args.json else critical_table(res))
    return 0


# ----------------------------------------------------------------------------- main


def _model_command(sub, name: str, help: str, description: str) -> argparse.ArgumentParser:
    """A subcommand that takes a config file and the ion/basis override flags."""
    cmd = sub.add_parser(name, help=help, description=description)
    cmd.add_argument("config", nargs="?", help="TOML config file ([ion], [basis], [solve]); default: the embedded demo ion")
    _add_model_options(cmd)
    return cmd


def build_parser() -> argparse.ArgumentParser:
    p = _Parser(prog="relbasis", description="Finite bases of Dirac orbitals for relativistic atomic-structure work.")
    p.add_argument("--version", action="version", version=f"relbasis {__version__}")
    sub = p.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    lv = _model_command(sub, "levels", "solve one-electron Dirac spectra and sort every root",
                        "Spectrum of the radial Dirac equation for a one-electron ion in a finite basis.")
    lv.add_argument("--json", action="store_true", help="print the JSON document instead of the table")
    lv.add_argument("--all", action="store_true", help="list the continuum roots too")
    lv.set_defaults(func=_cmd_levels)
    mf = _model_command(sub, "mean-field", "Dirac–Hartree–Fock core of a config with [electrons]: energies, orbitals",
                        "Self-consistent Dirac–Hartree–Fock core: total energy and parts, orbital table, iterations.")
    mf.add_argument("--json", action="store_true", help="print the JSON of the core (the scf object)")
    mf.set_defaults(func=_cmd_mean_field)
    so = _model_command(sub, "second-order", "second-order Coulomb energy summed over the basis, by partial wave",
                        "Second-order energy of the 1s^2 pair (no [electrons]), of a closed core, or of a valence "
                        "electron, resolved by partial wave and extrapolated in l_max; --check judges the basis.")
    so.add_argument("--l-max", type=int, default=6, metavar="L", help="largest l of the intermediate states (default 6)")
    so.add_argument("--negative-branch", action="store_true",
                    help="include intermediate states of the negative branch (default: no-pair)")
    so.add_argument("--check", action="store_true",
                    help="also solve with 1.5x the functions and a 1.5x wider reach, and give a verdict with advice")
    so.add_argument("--target", type=float, default=1e-6, help="accuracy wanted for --check, hartree (default 1e-6)")
    so.add_argument("--json", action="store_true", help="print the JSON document instead of the table")
    so.set_defaults(func=_cmd_second_order)
    au = _model_command(sub, "audit", "diagnose a basis: checks, verdict, advice",
                        "Checks of a basis before a production run, with a verdict and advice.")
    au.add_argument("--max-n", type=int, default=5, metavar="N", help="bound states checked: n <= N (default 5)")
    au.add_argument("--target", type=float, default=1e-8, help="relative accuracy wanted of the bound levels (default 1e-8)")
    au.add_argument("--json", action="store_true", help="print the audit JSON document")
    au.add_argument("--report", metavar="DIR", help="write audit.json, spectrum.png and convergence.png into DIR")
    au.add_argument("--force", action="store_true", help="replace an earlier report in DIR (only the files "
                    "relbasis wrote there; other files are never touched)")
    au.add_argument("--strict", action="store_true",
                    help=f"exit with status {EXIT_FAILED_VERDICT} when the verdict is fail (default: 0 after any verdict)")
    au.set_defaults(func=_cmd_audit)
    sc = sub.add_parser("scan", help="convergence scan over basis and ion settings (resumable, parallel)",
                        description="Run or resume a convergence scan plan; results and analysis go to --out.")
    sc.add_argument("plan", help="scan plan (TOML: [base.ion], [base.basis], [axes], [track])")
    sc.add_argument("--out", default="scan-out", help="output folder (results.jsonl, summary.json, ...; default scan-out)")
    sc.add_argument("--jobs", type=int, default=1, help="worker processes (joblib loky; default 1)")
    sc.add_argument("--scheduler", metavar="ADDRESS", help="dask.distributed scheduler, e.g. tcp://127.0.0.1:8786")
    sc.add_argument("--quiet", action="store_true", help="no progress bar")
    _add_work_options(sc, progress=False)
    sc.set_defaults(func=_cmd_scan)
    ex = _model_command(sub, "export", "write the basis (every root, both branches) to HDF5 or .npz + JSON",
                        "Export a basis for a many-body code; layout in docs/file-format.md.")
    ex.add_argument("--out", required=True, help="FILE.h5 (HDF5) or FILE.npz (numpy + FILE.json)")
    ex.add_argument("--with", dest="with_", metavar="BLOCKS", help="integral blocks: dipole,hyperfine,slater")
    ex.add_argument("--grid", metavar="R_MIN:R_MAX:COUNT", help="log-spaced radial grid for P and Q "
                    "(default: the quadrature points)")
    ex.add_argument("--slater", action="append", metavar="K:A,B,C,D",
                    help="store R^K(AB, CD) for these bound states, e.g. 0:1s1/2,1s1/2,1s1/2,1s1/2 (repeatable)")
    ex.add_argument("--force", action="store_true", help="replace an existing file that relbasis wrote")
    ex.set_defaults(func=_cmd_export)
    cr = sub.add_parser("critical", help="critical charge: the Z at which a level reaches eps = -2c^2",
                        description="Critical charge of a level of a one-electron ion with a finite nucleus "
                                    "(docs/critical.md).")
    cr.add_argument("--nucleus", default="fermi", help="sphere | gauss | fermi (default fermi)")
    cr.add_argument("--a-per-z", type=float, metavar="X", help="mass rule A = X Z (default 2.5)")
    cr.add_argument("--a", type=float, metavar="A", help="fixed mass number instead of a rule")
    cr.add_argument("--n", type=int, default=1, help="principal number (default 1)")
    cr.add_argument("--kappa", type=int, default=-1, help="symmetry (default -1: s1/2)")
    cr.add_argument("--size", type=int, help="B-splines of the primary basis (default 100)")
    cr.add_argument("--r-max", type=float, metavar="BOHR", help="cavity radius of the primary basis (default 250/Z)")
    cr.add_argument("--json", action="store_true", help="print the JSON document")
    cr.add_argument("--quiet", action="store_true", help="no progress bar")
    cr.set_defaults(func=_cmd_critical)
    return p


def _join_negative_lists(argv: list[str]) -> list[str]:
    """'--kappas -1,1' -> '--kappas=-1,1': argparse would take '-1,1' for an option."""
    out, i = [], 0
    while i < len(argv):
        if argv[i] == "--kappas" and i + 1 < len(argv) and argv[i + 1][:2].lstrip("-")[:1].isdigit():
            out.append(f"--kappas={argv[i + 1]}")
            i += 2
        else:
            out.append(argv[i])
            i += 1
    return out


def _silence_stdout() -> None:
    """Point stdout at /dev/null, so that the interpreter's last flush of what could not be
    written (a closed pipe, a full disk) raises nothing more at exit (common practice)."""
    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
    except (OSError, ValueError, AttributeError):  # stdout without a file descriptor (e.g. captured)
        pass


def main(argv=None) -> int:
    parser = build_parser()
    try:
        args = parser.parse_args(_join_negative_lists(list(sys.argv[1:] if argv is None else argv)))
        if getattr(args, "func", None) is None:
            raise InputError(f"relbasis: give a command, e.g. '{_EXAMPLE}' (see 'relbasis --help')")
        status = args.func(args)
        sys.stdout.flush()  # here, not at exit: a full disk behind stdout is then one more error line
        return status
    except InputError as err:
        print(f"error: {err}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print("interrupted", file=sys.stderr)
        return 130
    except BrokenPipeError:
        _silence_stdout()
        return 0
    except OSError as err:  # a failure the writers did not anticipate (they name their own)
        from .outputs import os_failure, os_reason

        if err.filename is not None:
            print(f"error: {os_failure(err, 'use', err.filename)}", file=sys.stderr)
        else:  # e.g. the file that standard output goes to is on a full disk
            _silence_stdout()
            print(f"error: cannot write the output: {os_reason(err)}", file=sys.stderr)
        return 2
    except MemoryError:
        print("error: out of memory: choose a smaller basis (--size), fewer symmetries or a coarser --grid",
              file=sys.stderr)
        return 2


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
