"""The label sweep: every root a solution labels, against an independent value.

For each labelled root: the node count of P must be n - l - 1 (Bethe & Salpeter 1957, §14, for
Coulomb functions; common practice for screened and finite-nucleus potentials); every row
labelled plainly ``bound`` (no flag) must lie within TOLERANCE of the independent level: the
Sommerfeld–Darwin–Gordon formula for a point nucleus (relbasis.analytic, Bethe & Salpeter §14),
the shooting solution of tests/shooting.py (scipy.integrate.solve_ivp) for finite nuclei.
Used by tests/test_labels.py (a few bases) and scripts/label_sweep.py (the full sweep).
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass

import numpy as np

import relbasis
from relbasis.analytic import dirac_coulomb_energy, orbital_l
from relbasis.spectrum import count_nodes
from shooting import dirac_level

TOLERANCE = 1e-8


@dataclass
class Outcome:
    name: str
    labelled: int = 0
    plain: int = 0
    worst_plain: float = 0.0
    node_violations: int = 0
    wrong_plain: int = 0
    checked: int = 0


def reference(sol, kappa: int, n: int) -> float | None:
    """The independent level (n, kappa) of the solution's model, or None where none is made."""
    nuc = sol.nucleus
    if nuc.model == "point":
        return dirac_coulomb_energy(nuc.Z, n, kappa, sol.c)
    r_break = nuc.sphere_radius_bohr if nuc.model == "sphere" else None
    try:
        return dirac_level(nuc.potential, kappa, n, c=sol.c, Z=float(nuc.Z), r_break=r_break)
    except relbasis.InputError:
        return None


def check(name: str, sol, max_reference_n: int = 4) -> Outcome:
    """Node rule on every labelled root; the tolerance on every plainly bound row with
    n <= max_reference_n (the shooting solver is slow for high n; point nuclei: every row)."""
    out = Outcome(name)
    r, w = sol.grid
    for kappa in sol.kappas:
        spec = sol[kappa]
        idx = [i for i, n in enumerate(spec.n) if n is not None]
        if not idx:
            continue
        P = sol.sample(kappa, idx, "P")[0]
        nodes = count_nodes(P, w)
        for j, i in enumerate(idx):
            n = spec.n[i]
            out.labelled += 1
            if nodes[j] != n - orbital_l(kappa) - 1:
                out.node_violations += 1
            if spec.branches[i] != "bound" or spec.flags[i]:
                continue
            out.plain += 1
            if sol.nucleus.model != "point" and n > max_reference_n:
                continue
            ref = reference(sol, kappa, n)
            if ref is None:
                continue
            out.checked += 1
            err = abs(spec.energies[i] / ref - 1)
            out.worst_plain = max(out.worst_plain, err)
            out.wrong_plain += err > TOLERANCE
    return out


def solve_quiet(**kw):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return relbasis.solve(**kw)
