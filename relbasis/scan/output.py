"""The output folder of a scan: which files in it are the scan's own (:func:`claim_folder`), the
analysis written there (summary.json, convergence.csv, one picture per state) and its printed form.
"""

from __future__ import annotations

import csv
import json
import re
from pathlib import Path

from ..errors import InputError, option
from ..outputs import atomic_text, atomic_write, read_manifest


_PICTURE = re.compile(r"^error_[0-9a-z_]+\.png$")
OUTPUT_KIND = "scan"
FIXED_OUTPUTS = ("results.jsonl", "summary.json", "convergence.csv")
CORE_QUANTITY = "total energy"
"""The name of the core's total energy in the table, convergence.csv and its picture (error_total_energy.png)."""
SECOND_ORDER_QUANTITY = "second-order energy"
"""The name of a tracked second-order energy in the table and convergence.csv (no picture: its
differences are absolute, the pictures draw relative errors)."""


def _looks_like_results(path: Path) -> bool:
    """A results store of relbasis (written before folders carried a manifest): every whole line a record."""
    try:
        with path.open("r", encoding="utf-8") as fh:
            lines = fh.read().splitlines()
    except (OSError, UnicodeDecodeError):
        return False
    records = 0
    for i, line in enumerate(lines):
        try:
            rec = json.loads(line)
        except json.JSONDecodeError:
            if i == len(lines) - 1:
                continue  # a line cut short by an interruption
            return False
        if not (isinstance(rec, dict) and "key" in rec and "config" in rec and "levels" in rec):
            return False
        records += 1
    return records > 0


def claim_folder(out: Path) -> set[str]:
    """Check that the scan may write into ``out``; returns the names a scan wrote there before.

    A scan folder is resumed: its results store is appended to, and its analysis (summary,
    table, pictures: all derived from the store, so nothing is lost) is rewritten for the plan
    at hand.  A file relbasis did not write is never replaced.
    """
    manifest = read_manifest(out)
    ours = {name for name, kind in manifest.items() if kind == OUTPUT_KIND}
    if not ours and (out / "results.jsonl").is_file() and _looks_like_results(out / "results.jsonl"):
        # a folder written before manifests existed: its results store says it is a scan folder
        ours = {p.name for p in out.iterdir() if p.is_file() and p.name not in manifest
                and (p.name in FIXED_OUTPUTS or _PICTURE.match(p.name))}
    present = [p.name for p in out.iterdir() if p.name in FIXED_OUTPUTS or _PICTURE.match(p.name)]
    foreign = sorted(n for n in present if n not in ours or not (out / n).is_file() or (out / n).is_symlink())
    if foreign:
        raise InputError(f"{option('out', '--out')} = {str(out)!r} holds {foreign[0]!r}, which relbasis did not write there: it is never "
                         f"replaced; move it or choose another folder")
    return ours


def _picture_name(label: str) -> str:
    return "error_" + re.sub(r"[^0-9a-z]", "_", label) + ".png"


def write_outputs(out: Path, summary: dict, jobs: int = 1, ours=frozenset()) -> set[str]:
    """summary.json, convergence.csv and one PNG per tracked state, each written atomically
    under a unique temporary name; returns the names written.  A name that exists and is not in
    ``ours`` (what relbasis wrote there before) is refused, not replaced.  The pictures are drawn
    by ``jobs`` processes, as matplotlib's text and lines take time."""
    pictures = {lab: _picture_name(lab) for lab in summary["states"]}
    core = summary.get("core")  # a scan of a core: its total energy is one more line of the table and picture
    if core is not None:
        pictures[CORE_QUANTITY] = _picture_name(CORE_QUANTITY)
    for name in (*FIXED_OUTPUTS[1:], *pictures.values()):
        p = out / name
        if (p.exists() or p.is_symlink()) and name not in ours:
            raise InputError(f"{option('out', '--out')} = {str(out)!r} holds {name!r}, which relbasis did not write there: it is never "
                             f"replaced; move it and run the scan again (its results are kept)")
    atomic_text(out / "summary.json", json.dumps(summary, indent=1, sort_keys=True), "write the scan summary")
    lines = []
    for lab, st in summary["states"].items():
        for r in st["rows"]:
            lines.append({"state": lab, **{k: v for k, v in r["settings"].items()}, "size": r["size"],
                          "energy_hartree": r["energy_hartree"], "reference_hartree": r["reference_hartree"],
                          "relative_error": r["relative_error"], "is_reference": r["is_reference"]})
    if core is not None:
        for r in core["rows"]:
            lines.append({"state": CORE_QUANTITY, **{k: v for k, v in r["settings"].items()}, "size": r["size"],
                          "energy_hartree": r["energy_hartree"], "reference_hartree": r["reference_hartree"],
                          "relative_error": r["relative_error"], "is_reference": r["is_reference"],
                          **{f"relative_change_in_{k}": v for k, v in r["relative_change"].items()},
                          "iterations": r["iterations"], "converged": r["converged"]})
    second = summary.get("second_order")
    if second is not None:
        for r in second["rows"]:
            lines.append({"state": SECOND_ORDER_QUANTITY, **{k: v for k, v in r["settings"].items()}, "size": r["size"],
                          "energy_hartree": r["extrapolated_hartree"], "reference_hartree": r["reference_hartree"],
                          "is_reference": r["is_reference"], "summed_hartree": r["energy_hartree"],
                          "uncertainty_hartree": r["uncertainty_hartree"], "difference_hartree": r["difference_hartree"],
                          **{f"change_hartree_in_{k}": v for k, v in r["change_hartree"].items()},
                          "l_max": r["l_max"], "flags": " ".join(r["flags"]) or None, "error": r["error"]})
    fields = []
    for line in lines:
        for k in line:
            if k not in fields:
                fields.append(k)

    def write_csv(tmp):
        with open(tmp, "w", newline="", encoding="utf-8") as fh:
            w = csv.DictWriter(fh, fieldnames=fields)
            w.writeheader()
            w.writerows(lines)

    atomic_write(out / "convergence.csv", write_csv, "write the convergence table")
    from joblib import Parallel, delayed

    drawn = {**summary["states"], **({} if core is None else {CORE_QUANTITY: core})}
    Parallel(n_jobs=jobs)(delayed(_picture)(lab, st, summary["target"], out / pictures[lab])
                          for lab, st in drawn.items())
    return {"summary.json", "convergence.csv", *pictures.values()}


def _picture(label: str, state: dict, target: float, path: Path) -> None:
    from ..plots import scan_figure

    atomic_write(path, lambda tmp: scan_figure(label, state, target, tmp), "write the picture")


def summary_table(summary: dict) -> str:
    """The printed form of a scan's analysis."""
    lines = [f"scan: {summary['finished']} of {summary['units']} units finished; target {summary['target']:g}"
             + ("" if "second_order" not in summary else
                f"; second-order target {summary['second_order']['target_hartree']:g} hartree")]
    for lab, st in summary["states"].items():
        lines.append("")
        lines.append(f"{lab}")
        lines.append(f"  {'settings':<48} {'size':>5} {'energy (hartree)':>22} {'rel. error':>10}")
        for r in st["rows"]:
            settings = ", ".join(f"{k.split('.', 1)[1]}={v}" for k, v in r["settings"].items())
            err = "reference" if r["is_reference"] else ("-" if r["relative_error"] is None else f"{r['relative_error']:.2e}")
            if r["spurious_roots"]:
                err += f" ({r['spurious_roots']} spurious)"
            e = "-" if r["energy_hartree"] is None else f"{r['energy_hartree']:.15g}"
            lines.append(f"  {settings:<48} {r['size']:>5} {e:>22} {err:>10}")
        for rate in st["rates"]:
            where = ", ".join(f"{k}={v}" for k, v in sorted({**rate["series"]["ion"], **rate["series"]["basis"]}.items()))
            lines.append(f"  rate ({where}): {rate['text']} ({rate['points']} points)")
    core = summary.get("core")
    if core is not None:
        lines.extend(_core_table(core))
    second = summary.get("second_order")
    if second is not None:
        lines.extend(_second_order_table(second))
    rec = summary["recommended"]
    lines.append("")
    if rec is None:
        lines.append("recommended: none of the bases meets the target for every tracked "
                     + ("quantity" if second is not None else "state"))
    elif rec["worst_relative_error"] is None:
        lines.append(f"recommended: {json.dumps(rec['basis'], sort_keys=True)}")
    else:
        lines.append(f"recommended: {json.dumps(rec['basis'], sort_keys=True)} (worst error {rec['worst_relative_error']:.2e})")
    return "\n".join(lines)


def _second_order_table(second: dict) -> list[str]:
    """The second-order energy per unit: extrapolated in l, its uncertainty, its difference from
    the reference (the most complete basis) and its change from the previous value of each axis,
    all in hartree; the flags or the reason the sum did not run; the recommendation and notes."""
    axes = list(second["rows"][0]["change_hartree"]) if second["rows"] else []
    head = "".join(f" {'change in ' + k.split('.', 1)[1]:>16}" for k in axes)
    kinds = ", ".join(second["kinds"]) or "-"
    lines = ["", f"{SECOND_ORDER_QUANTITY} ({kinds}; l_max = {second['l_max']}; target {second['target_hartree']:g} hartree; "
             "reference: the most complete basis)",
             f"  {'settings':<48} {'size':>5} {'extrapolated (hartree)':>22} {'uncertainty':>11} {'difference':>10}{head}  flags"]
    fmt = lambda v: "-" if v is None else f"{v:.2e}"  # noqa: E731
    for r in second["rows"]:
        settings = ", ".join(f"{k.split('.', 1)[1]}={v}" for k, v in r["settings"].items())
        if r["error"] is not None:
            lines.append(f"  {settings:<48} {r['size']:>5} {'no sum (see notes)':>22}")
            continue
        diff = "reference" if r["is_reference"] else fmt(r["difference_hartree"])
        changes = "".join(f" {fmt(r['change_hartree'][k]):>16}" for k in axes)
        flags = " ".join(r["flags"]) + (f" ({r['spurious_roots']} spurious)" if r["spurious_roots"] else "")
        lines.append(f"  {settings:<48} {r['size']:>5} {r['extrapolated_hartree']:>22.12f} {fmt(r['uncertainty_hartree']):>11} "
                     f"{diff:>10}{changes}  {flags or '-'}")
    rec = second["recommended"]
    if rec is None:
        lines.append(f"  recommended: none of the bases is within {second['target_hartree']:g} hartree of the reference")
    else:
        lines.append(f"  recommended: {json.dumps(rec['basis'], sort_keys=True)} "
                     f"(worst difference {rec['worst_difference_hartree']:.2e} hartree"
                     + ("" if rec["reference_settled"] else "; CAUTION: the reference itself still moves, see the notes") + ")")
    lines.extend(f"  note: {n}" for n in second["notes"])
    return lines


def _core_table(core: dict) -> list[str]:
    """The core's total energy per unit: relative error against the largest basis, the relative
    change from the previous value of each axis, iterations (flagged when not converged)."""
    axes = list(core["rows"][0]["relative_change"]) if core["rows"] else []
    head = "".join(f" {'change in ' + k.split('.', 1)[1]:>16}" for k in axes)
    lines = ["", f"{CORE_QUANTITY} of the core",
             f"  {'settings':<48} {'size':>5} {'energy (hartree)':>22} {'rel. error':>10}{head} {'iterations':>10}"]
    for r in core["rows"]:
        settings = ", ".join(f"{k.split('.', 1)[1]}={v}" for k, v in r["settings"].items())
        err = "reference" if r["is_reference"] else f"{r['relative_error']:.2e}"
        changes = "".join(f" {'-' if r['relative_change'][k] is None else format(r['relative_change'][k], '.2e'):>16}"
                          for k in axes)
        its = f"{r['iterations']}" + ("" if r["converged"] else " NOT CONVERGED")
        lines.append(f"  {settings:<48} {r['size']:>5} {r['energy_hartree']:>22.15g} {err:>10}{changes} {its:>10}")
    for rate in core["rates"]:
        where = ", ".join(f"{k}={v}" for k, v in sorted({**rate["series"]["ion"], **rate["series"]["basis"]}.items()))
        lines.append(f"  rate ({where}): {rate['text']} ({rate['points']} points)")
    return lines
