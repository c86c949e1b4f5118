"""Writing audit reports: a directory with the JSON document and two pictures, never clobbered.

The report is assembled in a temporary sibling directory and renamed into place, so that an
interrupted run leaves no half-written report; an existing directory is replaced only with
``force``.
"""

from __future__ import annotations

import json
import os
import shutil
import tempfile
from pathlib import Path

from .errors import InputError


def check_target(path, force: bool) -> Path:
    """The report directory, after making sure writing it will not destroy anything unasked."""
    target = Path(path)
    if target.exists() and not force:
        raise InputError(f"report directory {str(target)!r} exists: choose another or add --force to replace it")
    if target.exists() and not target.is_dir():
        raise InputError(f"--report {str(target)!r} is a file, not a directory")
    parent = target.resolve().parent
    if not parent.is_dir():
        raise InputError(f"--report {str(target)!r}: the parent directory {str(parent)!r} does not exist")
    return target


def write_report(result, path, force: bool, series: dict) -> Path:
    """audit.json, spectrum.png and convergence.png in ``path`` (atomic: temp dir, then rename)."""
    from .plots import convergence_figure, spectrum_figure

    target = check_target(path, force)
    tmp = Path(tempfile.mkdtemp(prefix=f".{target.name}.", dir=target.resolve().parent))
    try:
        doc = result.to_dict()
        doc["convergence"] = {label: [[s, float(e)] for s, e in pts] for label, pts in series.items()}
        (tmp / "audit.json").write_text(json.dumps(doc, indent=1), encoding="utf-8")
        spectrum_figure(result.solution, tmp / "spectrum.png")
        sol = result.solution
        against = "exact Dirac–Coulomb levels" if (sol.nucleus.model == "point" and sol.nucleus.Z > 0) \
            else f"a basis of size {sol.config.basis.size + 10}"
        convergence_figure(series, tmp / "convergence.png",
                           f"Z = {sol.nucleus.Z:g}: bound levels n <= {result.max_n} against {against}",
                           result.target)
        if target.exists():
            old = Path(tempfile.mkdtemp(prefix=f".{target.name}.old.", dir=target.resolve().parent))
            os.replace(target, old / target.name)
            os.replace(tmp, target)
            shutil.rmtree(old, ignore_errors=True)
        else:
            os.replace(tmp, target)
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        raise
    return target
