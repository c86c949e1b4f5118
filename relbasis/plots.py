"""Pictures for the audit report (matplotlib, written as PNG; no screen needed)."""

from __future__ import annotations

import numpy as np

from .constants import C

_COLOURS = {"negative": "tab:blue", "bound": "tab:green", "positive": "tab:orange", "spurious": "tab:red"}


def _pyplot():
    import matplotlib

    matplotlib.use("Agg")  # files only: works on machines without a display
    import matplotlib.pyplot as plt

    return plt


def _save(plt, fig, path) -> None:
    """PNG by name: the path may be a temporary one without the .png suffix; the figure is
    closed even when writing fails (a full disk), so that no figure leaks."""
    try:
        fig.savefig(path, format="png")
    finally:
        plt.close(fig)


def spectrum_figure(solution, path) -> None:
    """Every root of every symmetry on a symmetric-log energy axis, coloured by branch.

    x: the symmetries kappa; y: the binding energy eps (hartree) on a symlog scale, linear
    within |eps| < 1; the continuum thresholds eps = 0 and eps = -2c^2 are drawn; spurious
    roots are red crosses labelled with their flags.
    """
    plt = _pyplot()
    fig, ax = plt.subplots(figsize=(9, 6), dpi=110)
    kappas = list(solution.kappas)
    for x, kappa in enumerate(kappas):
        spec = solution[kappa]
        for branch, colour in _COLOURS.items():
            idx = spec.indices(branch)
            if idx.size == 0:
                continue
            marker = "x" if branch == "spurious" else "_"
            size = 80 if branch == "spurious" else 300
            ax.scatter(np.full(idx.size, x), spec.energies[idx], marker=marker, s=size, c=colour,
                       linewidths=1.5, label=branch if x == 0 or branch == "spurious" else None, zorder=3)
        for i in spec.indices("spurious")[:1]:  # the lowest one per kappa, to keep it legible
            ax.annotate(",".join(spec.flags[i]), (x, spec.energies[i]), textcoords="offset points", xytext=(8, 0),
                        fontsize=6, color="tab:red")
    ax.axhline(0.0, color="k", lw=0.6, ls="--")
    ax.axhline(-2 * C * C, color="k", lw=0.6, ls="--")
    ax.text(-0.65, 0.0, "eps = 0", va="bottom", fontsize=7)
    ax.text(-0.65, -2 * C * C, "eps = -2mc²", va="top", fontsize=7)
    ax.set_yscale("symlog", linthresh=1.0)
    ax.set_xticks(range(len(kappas)), [f"{k:+d}" for k in kappas])
    ax.set_xlim(-0.7, len(kappas) - 0.3)
    ax.set_xlabel("kappa")
    ax.set_ylabel("binding energy eps (hartree, symmetric log)")
    nuc = solution.nucleus
    b = solution.config.basis
    ax.set_title(f"Z = {nuc.Z:g} ({nuc.model} nucleus), {b.family} {b.balance}, size {b.size}: all roots")
    handles, labels = ax.get_legend_handles_labels()
    seen = {}
    for h, lab in zip(handles, labels):
        seen.setdefault(lab, h)
    ax.legend(seen.values(), seen.keys(), loc="upper left", bbox_to_anchor=(1.01, 1.0), fontsize=8)
    ax.grid(True, axis="y", lw=0.3, alpha=0.5)
    fig.tight_layout()
    _save(plt, fig, path)


def convergence_figure(series: dict, path, title: str, target: float | None = None) -> None:
    """Relative error of each tracked level against basis size, log scale."""
    plt = _pyplot()
    fig, ax = plt.subplots(figsize=(9, 5), dpi=110)
    for label, points in sorted(series.items()):
        sizes, errs = zip(*points)
        errs = np.maximum(np.asarray(errs, dtype=float), 1e-17)
        ax.semilogy(sizes, errs, marker="o", ms=3, lw=1, label=label)
    if target:
        ax.axhline(target, color="k", ls="--", lw=0.8, label=f"target {target:g}")
    ax.set_xlabel("size (functions per component)")
    ax.set_ylabel("relative error of the level")
    ax.set_title(title, fontsize=9)
    ax.grid(True, which="both", lw=0.3, alpha=0.5)
    ax.legend(fontsize=7, ncol=2 if len(series) > 12 else 1, loc="upper left", bbox_to_anchor=(1.01, 1.0))
    fig.tight_layout()
    _save(plt, fig, path)


def scan_figure(label: str, state: dict, target: float, path) -> None:
    """Relative error of one tracked level (or of a core's total energy) against size, one line per series of the scan."""
    plt = _pyplot()
    fig, ax = plt.subplots(figsize=(9, 5), dpi=110)
    series: dict[str, list] = {}
    for row in state["rows"]:
        if row["relative_error"] is None or row["is_reference"]:
            continue
        basis = {k: v for k, v in row["basis"].items() if k != "size"}
        name = ", ".join(f"{k}={v}" for k, v in sorted({**row["ion"], **basis}.items()))
        series.setdefault(name, []).append((row["size"], max(row["relative_error"], 1e-17)))
    for name, pts in sorted(series.items()):
        pts.sort()
        ax.semilogy([p[0] for p in pts], [p[1] for p in pts], marker="o", ms=3, lw=1, label=name)
    ax.axhline(target, color="k", ls="--", lw=0.8, label=f"target {target:g}")
    ax.set_xlabel("size (functions per component)")
    ax.set_ylabel("relative error")
    ax.set_title(f"{label}: error against size", fontsize=10)
    ax.grid(True, which="both", lw=0.3, alpha=0.5)
    ax.legend(fontsize=6, loc="upper left", bbox_to_anchor=(1.01, 1.0))
    fig.tight_layout()
    _save(plt, fig, path)
