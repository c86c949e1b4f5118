"""Writing audit reports: audit.json and two pictures in a directory, never destroying a file.

The report files are staged under unique temporary names in the target directory and renamed
into place together (:func:`relbasis.outputs.atomic_group`); an interrupted or failed run
leaves no half-written report.  The directory records what relbasis wrote into it
(:data:`relbasis.outputs.MANIFEST`): an earlier report there is replaced only with ``force``,
and a file relbasis did not write is never replaced, so a report can go into a folder that
holds other work (``--report .``).
"""

from __future__ import annotations

import json
from pathlib import Path

from .errors import InputError, option
from .outputs import atomic_group, claim, directory_for, write_manifest

REPORT_FILES = ("audit.json", "spectrum.png", "convergence.png")
KIND = "audit-report"


def check_target(path, force: bool) -> Path:
    """The report directory, after making sure writing the report will not destroy anything unasked.

    Called before the audit runs, so that a refusal costs nothing; nothing is created yet.
    """
    target = Path(path)
    if target.exists() and not target.is_dir():
        raise InputError(f"report directory {str(target)!r} ({option('path', '--report')}) is a file, not a directory: give a directory")
    if not target.exists():
        if not target.parent.is_dir():
            raise InputError(f"report directory {str(target)!r} ({option('path', '--report')}): the parent directory {str(target.parent)!r} does not exist")
        return target
    claim(target, REPORT_FILES, KIND, force=force, what="report directory",
          replace_hint=f"add {option('force=True', '--force')} to replace them, or choose another directory")
    return target


def write_report(result, path, force: bool, series: dict) -> Path:
    """audit.json, spectrum.png and convergence.png in ``path`` (staged, then renamed together)."""
    from .audit import comparison_size
    from .plots import convergence_figure, spectrum_figure

    target = check_target(path, force)
    doc = result.to_dict()
    doc["convergence"] = {label: [[s, float(e)] for s, e in pts] for label, pts in series.items()}
    sol = result.solution
    against = "exact Dirac–Coulomb levels" if (sol.nucleus.model == "point" and sol.nucleus.Z > 0) \
        else f"a basis of size {comparison_size(sol.config.basis.size)}"
    title = f"Z = {sol.nucleus.Z:g}: bound levels n <= {result.max_n} against {against}"
    with directory_for(target, "report directory"):
        atomic_group([
            (target / "audit.json", lambda tmp: Path(tmp).write_text(json.dumps(doc, indent=1), encoding="utf-8")),
            (target / "spectrum.png", lambda tmp: spectrum_figure(sol, tmp)),
            (target / "convergence.png", lambda tmp: convergence_figure(series, tmp, title, result.target)),
        ], what="write the report file")
        try:
            write_manifest(target, KIND, REPORT_FILES)
        except BaseException:  # without its record the report could never be replaced: take it back
            for name in REPORT_FILES:
                (target / name).unlink(missing_ok=True)
            raise
    return target
