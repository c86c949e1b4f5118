"""Sort the roots of one symmetry into branches, label the bound states, flag spurious roots.

Branches (binding energy eps = E - c^2):

* ``negative``: eps < -2c^2, the discretised negative-energy continuum;
* ``bound``:    -2c^2 < eps < 0 and no reason to doubt the root;
* ``positive``: eps >= 0, the discretised positive-energy continuum (pseudo-continuum);
* ``spurious``: a root in the bound-state window with at least one stated reason (flag).

Each bound state gets n from the node count of its large component P: a bound state (n, kappa)
has n - l - 1 nodes of P (Bethe & Salpeter 1957, §14, for the Coulomb functions; common
practice for screened and finite-nucleus potentials).  Flags, each with the figure behind it:

``kinetic-balance-residual``
    The exact first radial equation gives Q = c D+P / (2c^2 + eps - V) with D+ = d/dr + kappa/r;
    ``balance_residual`` = ||Q - c D+P/(2c^2 + eps - V)|| / ||Q|| (L2 over the radial grid).
    A converged physical state has a small residual (it measures the basis error of the
    state); a spurious root of an unbalanced basis has a residual of order one.
``node-count``
    P has fewer nodes than the next level of the series needs: the root repeats a lower level
    (marks it spurious).

More nodes than n allows are ripples of a state the basis does not resolve (typically a high
Rydberg level of a wide Gaussian set): the root stays ``bound`` and unflagged, and
``Spectrum.nodes`` keeps the count for diagnostics.
``duplicate-level``
    The level coincides with a level of the partner symmetry -kappa whose n has no counterpart
    in kappa (kappa > 0 has no n = kappa state): it mirrors a state of the wrong symmetry
    (W. R. Johnson, S. A. Blundell, J. Sapirstein, Phys. Rev. A 37, 307 (1988) describe this
    root of the unbalanced B-spline basis, at the 1s energy for kappa = +1).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from .analytic import j_twice, orbital_l

BRANCHES = ("negative", "bound", "positive", "spurious")
BALANCE_THRESHOLD = 0.1
"""Largest balance residual of a root accepted as a bound state.  Every bound state of the
balanced default bases (B-spline DKB, Gaussian RKB and DKB; Z = 1..118, |kappa| <= 4, all
nuclear models) measures at most 1.3e-2; the spurious roots of unbalanced bases measure 0.5
to 1000."""
NODE_FLOOR = 1e-6
"""A lobe of P (a stretch of one sign) counts only if it holds this share of the norm integral.
The innermost lobe of a hydrogen-like ns state holds 8e-4 for n = 8 (measured, default basis)."""
PEAK_FLOOR = 1e-2
"""A lobe of P counts only if its peak reaches this share of max |P|: tail ripples of a 20-spline
basis reach 4e-3; inner lobes of hydrogen-like states with n <= 10 peak above 5e-2 (estimate)."""
DUPLICATE_TOLERANCE = 1e-6
"""Relative distance below which two levels of partner symmetries count as the same level."""

_LETTERS = "spdfghiklmnoqrtuvwxyz"


def orbital_label(n: int, kappa: int) -> str:
    """Spectroscopic label such as ``1s1/2`` or ``2p3/2``."""
    l = orbital_l(kappa)
    letter = _LETTERS[l] if l < len(_LETTERS) else f"[l={l}]"
    return f"{n}{letter}{j_twice(kappa)}/2"


def count_nodes(P: np.ndarray, w: np.ndarray, floor: float = NODE_FLOOR) -> np.ndarray:
    """Nodes of each column of P (values on an ascending radial grid with weights w).

    The grid is cut into lobes of constant sign; lobes holding less than ``floor`` of the norm
    integral sum(w P^2), or peaking below PEAK_FLOOR of the largest |P|, are dropped and their
    neighbours of equal sign merged, so that the ripples a coarse basis leaves in the
    exponential tail and at the origin do not count as nodes.
    """
    P = P.reshape(P.shape[0], -1)
    out = np.zeros(P.shape[1], dtype=int)
    for j in range(P.shape[1]):
        p = P[:, j]
        sign = np.sign(p)
        keep = sign != 0
        p, sign, wk = p[keep], sign[keep], w[keep]
        if p.size == 0:
            continue
        starts = np.flatnonzero(np.concatenate([[True], sign[1:] != sign[:-1]]))
        weight = np.add.reduceat(wk * p * p, starts)
        peak = np.maximum.reduceat(np.abs(p), starts)
        real = (weight > floor * weight.sum()) & (peak > PEAK_FLOOR * peak.max())
        signs = sign[starts][real]
        out[j] = int(np.count_nonzero(signs[1:] != signs[:-1]))
    return out


def examined(energies: np.ndarray, c: float) -> np.ndarray:
    """Roots whose functions :func:`classify` needs on the fine grid: the bound-state window
    -2c^2 < eps < 0.  (Continuum roots are sorted by energy alone; the audit examines them.)"""
    return (energies > -2 * c * c) & (energies < 0)


def _first_sign(P: np.ndarray) -> np.ndarray:
    """Sign of each column at its first point where |P| exceeds 1e-3 of its largest value."""
    big = np.abs(P) > 1e-3 * np.max(np.abs(P), axis=0, keepdims=True)
    first = np.argmax(big, axis=0)
    sign = np.sign(P[first, np.arange(P.shape[1])])
    sign[sign == 0] = 1.0
    return sign


@dataclass(frozen=True)
class Spectrum:
    """All roots of one symmetry kappa, in ascending energy, with branch, n, label and flags."""

    kappa: int
    energies: np.ndarray
    vectors: np.ndarray = field(repr=False)
    branches: tuple[str, ...]
    n: tuple[int | None, ...]
    labels: tuple[str | None, ...]
    flags: tuple[tuple[str, ...], ...]
    nodes: np.ndarray = field(repr=False)
    balance_residual: np.ndarray = field(repr=False)

    def __len__(self) -> int:
        return self.energies.size

    def indices(self, branch: str) -> np.ndarray:
        return np.array([i for i, b in enumerate(self.branches) if b == branch], dtype=int)

    def level(self, n: int) -> float:
        """Binding energy of the bound state with principal number n."""
        for e, m in zip(self.energies, self.n):
            if m == n:
                return float(e)
        raise KeyError(f"no bound state n = {n} for kappa = {self.kappa}")


def classify(kappa: int, energies: np.ndarray, vectors: np.ndarray, P_all: np.ndarray, P: np.ndarray,
             Q: np.ndarray, DP: np.ndarray, w: np.ndarray, V: np.ndarray, c: float,
             external: dict[int, str] | None = None) -> Spectrum:
    """Branches, n, labels and flags for the roots of one symmetry.

    ``P_all`` holds P of every root on an ascending radial grid, coarse or fine (it fixes the
    sign of the roots not examined); ``P``, ``Q`` and ``DP`` hold P, Q and D+P of the examined
    roots (:func:`examined`: -2c^2 < eps < 2c^2; points x examined roots) on a grid with
    quadrature weights ``w`` and potential ``V``; ``vectors`` are the
    coefficients (basis x roots), returned with the sign fixed so that P > 0 near the origin.
    ``external`` maps root indices to flags found outside this symmetry (duplicate levels).
    """
    external = external or {}
    l = orbital_l(kappa)
    window = examined(energies, c)
    sign = _first_sign(P_all)
    sign[window] = _first_sign(P)
    vectors = vectors * sign[None, :]
    P, Q, DP = P * sign[window], Q * sign[window], DP * sign[window]
    nodes = np.full(energies.size, -1)
    residual = np.full(energies.size, np.nan)
    if np.any(window):
        nodes[window] = count_nodes(P, w)
        e = energies[window][None, :]
        q_exact = c * DP / (2 * c * c + e - V[:, None])
        num = np.sqrt(w @ (Q - q_exact) ** 2)
        den = np.sqrt(w @ Q**2)
        residual[window] = num / np.maximum(den, np.finfo(float).tiny)

    branches, ns, labels, flags = [], [], [], []
    expected = l + 1
    for i, eps in enumerate(energies):
        if eps < -2 * c * c:
            branches.append("negative"), ns.append(None), labels.append(None), flags.append(())
            continue
        if eps >= 0:
            branches.append("positive"), ns.append(None), labels.append(None), flags.append(())
            continue
        why = [external[i]] if i in external else []
        if not residual[i] <= BALANCE_THRESHOLD:
            why.append("kinetic-balance-residual")
        elif not why and nodes[i] + l + 1 < expected:
            why.append("node-count")  # repeats the node count of a lower level: an intruder
        if why:
            branches.append("spurious"), ns.append(None), labels.append(None), flags.append(tuple(why))
            continue
        # more nodes than n allows are ripples of a state the basis does not resolve (high n):
        # the root is still that physical level; ``nodes`` keeps the count for diagnostics
        branches.append("bound"), ns.append(expected), labels.append(orbital_label(expected, kappa)), flags.append(())
        expected += 1
    return Spectrum(kappa, energies, vectors, tuple(branches), tuple(ns), tuple(labels), tuple(flags),
                    nodes, residual)


def duplicate_roots(kappa: int, energies: np.ndarray, partner: Spectrum | None,
                    tol: float = DUPLICATE_TOLERANCE) -> dict[int, str]:
    """Roots of kappa > 0 that repeat a level of -kappa with no counterpart in kappa.

    A state (n', -kappa) with n' = kappa (e.g. 1s1/2 for kappa = +1, 2p3/2 for kappa = +2) has
    no partner (n', kappa), since kappa > 0 needs n >= kappa + 1.  A root of kappa in the
    bound-state window within ``tol`` (relative) of such a level gets ``duplicate-level``.
    """
    if kappa < 0 or partner is None:
        return {}
    lone = np.array([e for e, m in zip(partner.energies, partner.n) if m is not None and m < orbital_l(kappa) + 1])
    if lone.size == 0:
        return {}
    out = {}
    for i, eps in enumerate(energies):
        if eps < 0 and np.any(np.abs(eps - lone) <= tol * np.abs(lone)):
            out[i] = "duplicate-level"
    return out
