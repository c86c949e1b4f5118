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
    ``balance_residual`` = ||Q - c D+P/(2c^2 + eps - V)|| / ||Q|| (L2 over the radial grid;
    :func:`balance_residual`, which the audit uses too).
    A converged physical state has a small residual (it measures the basis error of the
    state); a spurious root of an unbalanced basis has a residual of order one.
``node-count``
    P has fewer nodes than the next level of the series needs: the root repeats a lower level
    (marks it spurious).

``nodes-disagree``
    The node count of P and the order of the root within the symmetry give different n: the
    root is labelled by its nodes (or not at all if that n is taken) and not claimed accurate.
``unconverged`` / ``cavity-limited``
    The estimated error of the level (:mod:`relbasis.confidence`) exceeds 1e-9.
``precision-limited``
    Rounding of the matrix problem (large c) exceeds 1e-9 (:mod:`relbasis.precision`).
``dived``
    A level below -2c^2 (charge above critical) that keeps the negative branch, its n and label.
``duplicate-level``
    The level coincides with a level of the partner symmetry -kappa whose n has no counterpart
    in kappa (kappa > 0 has no n = kappa state): it mirrors a state of the wrong symmetry
    (W. R. Johnson, S. A. Blundell, J. Sapirstein, Phys. Rev. A 37, 307 (1988) describe this
    root of the unbalanced B-spline basis, at the 1s energy for kappa = +1).
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass, field

import numpy as np

from .vocabulary import LETTERS as _LETTERS, j_twice, orbital_l, orbital_label  # noqa: F401  (orbital_label: public here too)
from .confidence import cavity_estimate, judge
from .errors import InputError, MissingLevelError

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
SPURIOUS_FLAGS = ("kinetic-balance-residual", "duplicate-level", "node-count")
"""Flags that make a root of the gap spurious (a root no physical state explains).  Other
flags (``nodes-disagree``, ``unconverged``, ``cavity-limited``, ``precision-limited``) leave
the root in the bound branch but withdraw the claim of accuracy; ``dived`` marks a level below
-2c^2 that keeps the negative branch with its n and label."""
DUPLICATE_TOLERANCE = 1e-6
"""Relative distance below which two levels of partner symmetries count as the same level."""

def count_nodes(P: np.ndarray, w: np.ndarray, floor: float = NODE_FLOOR) -> np.ndarray:
    """Nodes of each column of P (values on an ascending radial grid with weights w).

    The grid is cut into lobes of constant sign; lobes holding less than ``floor`` of the norm
    integral sum(w P^2), or peaking below PEAK_FLOOR of the largest |P|, are dropped and their
    neighbours of equal sign merged, so that the ripples a coarse basis leaves in the
    exponential tail and at the origin do not count as nodes.
    """
    P = P.reshape(P.shape[0], -1)
    m = P.shape[1]
    # every column at once: the non-zero values column after column, cut into lobes where the
    # sign or the column changes
    Pt = P.T
    keep = Pt != 0
    col = np.nonzero(keep)[0]
    if col.size == 0:
        return np.zeros(m, dtype=int)
    p = Pt[keep]
    sign = np.sign(p)
    wk = np.broadcast_to(w, Pt.shape)[keep]
    starts = np.flatnonzero(np.concatenate([[True], (sign[1:] != sign[:-1]) | (col[1:] != col[:-1])]))
    weight = np.add.reduceat(wk * p * p, starts)
    peak = np.maximum.reduceat(np.abs(p), starts)
    lobe_col = col[starts]
    firsts = np.flatnonzero(np.concatenate([[True], lobe_col[1:] != lobe_col[:-1]]))  # first lobe of each column
    total = np.repeat(np.add.reduceat(weight, firsts), np.diff(np.append(firsts, weight.size)))
    top = np.repeat(np.maximum.reduceat(peak, firsts), np.diff(np.append(firsts, weight.size)))
    real = (weight > floor * total) & (peak > PEAK_FLOOR * top)
    signs, cols = sign[starts][real], lobe_col[real]
    flips = (signs[1:] != signs[:-1]) & (cols[1:] == cols[:-1])
    return np.bincount(cols[1:][flips], minlength=m).astype(int)


def gap(energies: np.ndarray, c: float) -> np.ndarray:
    """Roots in the bound-state window -2c^2 < eps < 0 (the ones refined and labelled)."""
    return (energies > -2 * c * c) & (energies < 0)


def balance_residual(Q: np.ndarray, DP: np.ndarray, energies: np.ndarray, V: np.ndarray, w: np.ndarray,
                     c: float) -> np.ndarray:
    """||Q - c D+P/(2c^2 + eps - V)|| / ||Q|| of each column (L2 with the quadrature weights w).

    The first radial equation, exact for an eigenstate, gives Q = c D+P / (2c^2 + eps - V) with
    D+ = d/dr + kappa/r (Bethe & Salpeter 1957, §14); ``Q`` and ``DP`` hold Q and D+P of the roots
    (points x roots) with binding energies ``energies``, ``V`` the potential on the same points.
    The one place this figure is computed: the ``kinetic-balance-residual`` flag of
    :func:`classify` and the audit (:mod:`relbasis.measures`) both call it.
    """
    q_exact = c * DP / (2 * c * c + np.asarray(energies)[None, :] - V[:, None])
    num = np.sqrt(w @ (Q - q_exact) ** 2)
    den = np.sqrt(w @ Q**2)
    return num / np.maximum(den, np.finfo(float).tiny)


DIVE_WINDOW = 1.0
"""Depth below -2c^2, in units of c^2, searched for levels that have dived (see :func:`_dived`)."""


def examined(energies: np.ndarray, c: float) -> np.ndarray:
    """Roots whose functions :func:`classify` needs on the fine grid: the gap -2c^2 < eps < 0
    and the dive window -(2 + DIVE_WINDOW) c^2 < eps <= -2c^2 below it.  (Other continuum roots
    are sorted by energy alone; the audit examines them.)"""
    return (energies > -(2 + DIVE_WINDOW) * c * c) & (energies < 0)


def _first_sign(P: np.ndarray) -> np.ndarray:
    """Sign of each column at its first point where |P| exceeds 1e-3 of its largest value."""
    big = np.abs(P) > 1e-3 * np.max(np.abs(P), axis=0, keepdims=True)
    first = np.argmax(big, axis=0)
    sign = np.sign(P[first, np.arange(P.shape[1])])
    sign[sign == 0] = 1.0
    return sign


@dataclass(frozen=True)
class Spectrum:
    """All roots of one symmetry kappa, in ascending energy, with branch, n, label and flags.

    ``error_estimate`` holds the estimated relative error of each labelled level (NaN where
    none is made: continua, spurious roots, dived levels); see :mod:`relbasis.confidence`.
    """

    kappa: int
    energies: np.ndarray
    vectors: np.ndarray = field(repr=False)
    branches: tuple[str, ...]
    n: tuple[int | None, ...]
    labels: tuple[str | None, ...]
    flags: tuple[tuple[str, ...], ...]
    nodes: np.ndarray = field(repr=False)
    balance_residual: np.ndarray = field(repr=False)
    error_estimate: np.ndarray | None = field(default=None, repr=False)

    def __len__(self) -> int:
        return self.energies.size

    def indices(self, branch: str) -> np.ndarray:
        return np.array([i for i, b in enumerate(self.branches) if b == branch], dtype=int)

    def trusted(self, i: int) -> bool:
        """True when root i is plainly trustworthy: branch ``bound`` and no flag."""
        return self.branches[i] == "bound" and not self.flags[i]

    def level(self, n: int, *, strict: bool = False) -> float:
        """Binding energy (hartree) of the level with principal number n.

        A level that carries a flag (unconverged, cavity-limited, dived, ...) is returned with
        an :class:`UntrustedLevelWarning` naming the flags, or refused with an
        :class:`~relbasis.errors.InputError` when ``strict`` is true.  A missing level raises
        :class:`~relbasis.errors.MissingLevelError` (an InputError and a KeyError).
        """
        for i, m in enumerate(self.n):
            if m == n:
                if self.flags[i]:
                    msg = (f"{self.labels[i]} (kappa = {self.kappa}) is not plainly trustworthy: "
                           f"flags {', '.join(self.flags[i])}")
                    if strict:
                        raise InputError(msg)
                    warnings.warn(msg, UntrustedLevelWarning, stacklevel=2)
                return float(self.energies[i])
        raise MissingLevelError(f"no level n = {n} for kappa = {self.kappa} in this basis "
                                f"(levels present: {', '.join(str(m) for m in self.n if m is not None) or 'none'})")


class UntrustedLevelWarning(UserWarning):
    """A level was read that carries a flag: it is not claimed to the documented accuracy."""


def _dived(kappa: int, energies: np.ndarray, cand: np.ndarray, P: np.ndarray, Q: np.ndarray, r: np.ndarray,
           w: np.ndarray, missing: list[int]) -> dict[int, int]:
    """Roots just below -2c^2 that are bound levels which have dived into the negative continuum.

    Above the critical charge a level (n, kappa) leaves the gap; in a finite basis it survives
    as one root below -2c^2 that, unlike its continuum neighbours, keeps the large component
    dominant and compact: its share int P^2 stands out against the neighbours (measured, Z = 170
    sphere: 0.38 against 0.005..0.01) and its <r> is far below theirs (2e-3 against 0.5 bohr).
    Only levels missing from the gap (``missing``: n below the lowest level found there) are
    looked for, so that no continuum root is ever given a label at ordinary Z.  Returns
    {root index: n}.
    """
    if not missing or cand.size < 3:
        return {}
    l = orbital_l(kappa)
    pw = w @ (P * P) / np.maximum(w @ (P * P + Q * Q), 1e-300)
    rm = (w * r) @ (P * P + Q * Q) / np.maximum(w @ (P * P + Q * Q), 1e-300)
    nodes = count_nodes(P, w)
    out = {}
    for j in range(cand.size):
        lo, hi = max(0, j - 4), min(cand.size, j + 5)
        others = np.r_[np.arange(lo, j), np.arange(j + 1, hi)]
        if others.size == 0:
            continue
        if pw[j] > max(0.1, 5 * np.median(pw[others])) and rm[j] < 0.2 * np.median(rm[others]):
            n = int(nodes[j]) + l + 1
            if n in missing and n not in out.values():
                out[int(cand[j])] = n
    return out


def can_dive(r: np.ndarray | None, V: np.ndarray, c: float) -> bool:
    """True where a level can dive below -2c^2: the charge -r V(r) exceeds c somewhere (a
    potential deeper than Z alpha = 1 allows a point charge: finite nuclei near the critical
    charges, about 170; min V < -2c^2 alone is not enough)."""
    return r is not None and bool(np.min(r * V) < -c)


def classify(kappa: int, energies: np.ndarray, vectors: np.ndarray, P_all: np.ndarray | None, P: np.ndarray,
             Q: np.ndarray, DP: np.ndarray, w: np.ndarray, V: np.ndarray, c: float,
             external: dict[int, str] | None = None, *, r: np.ndarray | None = None,
             wall: float | None = None, reference: dict[int, float] | None = None,
             window: np.ndarray | None = None) -> Spectrum:
    """Branches, n, labels, flags and error estimates for the roots of one symmetry.

    ``P_all`` holds P of every root on an ascending radial grid, coarse or fine (it fixes the
    sign of the roots not examined); ``P``, ``Q`` and ``DP`` hold P, Q and D+P of the examined
    roots (:func:`examined`: the gap -2c^2 < eps < 0 and the dive window below it; points x
    examined roots) on the grid ``r`` with quadrature weights ``w`` and potential ``V``;
    ``vectors`` are the coefficients (basis x roots), returned with the sign fixed so that
    P > 0 near the origin.  ``external`` maps root indices to flags found outside this
    symmetry (duplicate levels; lost precision is added afterwards, relbasis.precision).  ``wall`` is the cavity radius (None: no
    wall) and ``reference`` maps n to the level of a reduced basis, or is a function that
    takes {n: level} of the labelled levels and returns that mapping (called once, after the
    labels are given); both feed the error estimate of every labelled level
    (:mod:`relbasis.confidence`).  Levels are looked for
    below -2c^2 (dived) only where the charge -r V(r) exceeds c somewhere (Z alpha > 1).

    n comes from the node count of P (n - l - 1 nodes) and is cross-checked against the order
    of the roots within the symmetry: a root whose node count disagrees with its place gets
    the flag ``nodes-disagree`` (and no n at all if its node count repeats one already given).

    ``Q`` and ``DP`` may instead hold the columns of the gap's roots alone where no level can
    dive (:func:`can_dive`): the roots of the dive window then need P only, for their sign.

    ``P_all`` None leaves the roots not examined with the sign they came with, and ``window``
    (a mask) may name the columns of P, Q, DP instead of :func:`examined`: the gap alone where
    no level can dive (:func:`can_dive`); both for the reduced basis of the error estimate,
    whose levels alone are kept.
    """
    external = external or {}
    l = orbital_l(kappa)
    window = examined(energies, c) if window is None else window
    gap = window & (energies > -2 * c * c)
    sign = np.ones(energies.size) if P_all is None else _first_sign(P_all)
    sign[window] = _first_sign(P)
    vectors = vectors * sign[None, :]
    gap_only = Q.shape[1] != P.shape[1]  # Q and D+P given for the roots of the gap alone
    if gap_only and can_dive(r, V, c):
        raise ValueError("classify: Q and D+P of the whole window are needed where a level can dive")
    P = P * sign[window]
    Q, DP = Q * sign[gap if gap_only else window], DP * sign[gap if gap_only else window]
    in_gap = gap[window]
    nodes = np.full(energies.size, -1)
    residual = np.full(energies.size, np.nan)
    estimate = np.full(energies.size, np.nan)
    cavity = np.zeros(energies.size)
    if np.any(gap):
        Pg = P[:, in_gap]
        Qg, DPg = (Q, DP) if gap_only else (Q[:, in_gap], DP[:, in_gap])
        nodes[gap] = count_nodes(Pg, w)
        residual[gap] = balance_residual(Qg, DPg, energies[gap], V, w, c)
        if wall is not None and r is not None:
            cavity[gap] = cavity_estimate(energies[gap], Pg, r, w, V, kappa, wall, c)

    # first pass: which roots of the gap are candidates for a level, with their node-count n
    reasons: dict[int, list[str]] = {}
    candidates = []
    for i in np.flatnonzero(gap):
        why = [external[i]] if i in external else []
        if not residual[i] <= BALANCE_THRESHOLD:
            why.append("kinetic-balance-residual")
        reasons[i] = why
        if not any(f in SPURIOUS_FLAGS for f in why):
            candidates.append(i)
    lowest = min((int(nodes[i]) + l + 1 for i in candidates), default=None)
    dived = {}
    # a level can dive only in a potential deeper than Z alpha = 1 allows a point charge (finite
    # nuclei; the critical charges lie near 170): min V < -2c^2 alone is not enough
    if lowest is not None and lowest > l + 1 and np.any(window & ~gap) and can_dive(r, V, c):
        below = window & ~gap
        dived = _dived(kappa, energies, np.flatnonzero(below), P[:, ~in_gap], Q[:, ~in_gap], r, w,
                       list(range(l + 1, lowest)))

    branches = ["negative" if e < -2 * c * c else "positive" if e >= 0 else None for e in energies]
    ns: list[int | None] = [None] * energies.size
    labels: list[str | None] = [None] * energies.size
    flags: list[tuple[str, ...]] = [()] * energies.size
    for i, n in dived.items():
        ns[i], labels[i], flags[i] = n, orbital_label(n, kappa), ("dived",)
    expected = l + 1 + len(dived)
    used = set(dived.values())
    judged: list[tuple[int, int, list[str]]] = []  # (root, n, flags so far) of the labelled levels
    for i in np.flatnonzero(gap):
        why = reasons[i]
        if not why and nodes[i] + l + 1 < expected and (nodes[i] + l + 1) in used:
            why.append("node-count")  # repeats the node count of a level already found: an intruder
        if any(f in SPURIOUS_FLAGS for f in why):
            branches[i], flags[i] = "spurious", tuple(why)
            continue
        branches[i] = "bound"
        n = int(nodes[i]) + l + 1
        if n != expected or n in used:
            why.append("nodes-disagree")
        expected += 1
        if n in used:
            flags[i] = tuple(why)
            continue
        used.add(n)
        ns[i], labels[i] = n, orbital_label(n, kappa)
        judged.append((i, n, why))
    if callable(reference):  # asked for the labelled levels only, once they are known
        reference = reference({n: float(energies[i]) for i, n, _ in judged})
    for i, n, why in judged:
        estimate[i], verdict = judge(float(energies[i]), None if reference is None else reference.get(n, np.inf),
                                     float(cavity[i]))
        flags[i] = tuple(dict.fromkeys(why + verdict))
    return Spectrum(kappa, energies, vectors, tuple(branches), tuple(ns), tuple(labels), tuple(flags),
                    nodes, residual, estimate)


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
    e = np.asarray(energies)
    hit = (e < 0) & np.any(np.abs(e[:, None] - lone[None, :]) <= tol * np.abs(lone)[None, :], axis=1)
    return {int(i): "duplicate-level" for i in np.flatnonzero(hit)}
