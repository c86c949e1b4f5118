"""The radial Dirac Hamiltonian as a sum of terms, assembled in any basis family.

For the binding energy eps = E - c^2 the Hamiltonian of one symmetry kappa is

    H = T + sum_t V_t,     T (P, Q) = ( -c D- Q ,  c D+ P - 2c^2 Q ),   D+- = d/dr +- kappa/r,

(W. R. Johnson, S. A. Blundell, J. Sapirstein, Phys. Rev. A 37, 307 (1988)): the kinetic and
rest-mass part T, which every basis family assembles itself with S (its ``kinetic_and_overlap``),
and a list of potential terms V_t, each

* **local** (:class:`LocalTerm`): a potential V(r) acting on both components,
  (V_t)_fg = int V(r) (fP gP + fQ gQ) dr — the nucleus now; a screening or a QED potential
  later.  A family may evaluate a term in closed form where it knows one (Gaussians: point and
  Gaussian nuclei), else on its own quadrature;
* **nonlocal** (:class:`NonlocalTerm`): any operator whose matrix the term computes from the
  basis functions sampled on the quadrature (weights w, components P and Q) — later the
  exchange operator of a Dirac–Hartree–Fock core.

Each term has a name; the Solution, its JSON document and the exported file record the names of
the terms of the Hamiltonian that was solved (:func:`names`).
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass, field

import numpy as np

KINETIC = ("kinetic", "rest-mass")
"""Names of the two parts every Hamiltonian has (assembled by the family with the overlap)."""


@dataclass(frozen=True)
class LocalTerm:
    """V(r) on both components.  ``potential(r)`` is vectorised; ``source`` is an object a
    family may recognise for a closed form (the :class:`~relbasis.nucleus.Nucleus`), else None."""

    name: str
    potential: Callable[[np.ndarray], np.ndarray] = field(repr=False)
    source: object = field(default=None, repr=False)


@dataclass(frozen=True)
class NonlocalTerm:
    """An operator given by its matrix: ``matrix(sampled)`` -> (size, size), where ``sampled``
    holds the basis functions on the family's quadrature (``sampled.r``, ``sampled.w`` and
    ``sampled.dense("P")`` / ``dense("Q")``: points x functions)."""

    name: str
    matrix: Callable[[object], np.ndarray] = field(repr=False)


Term = LocalTerm | NonlocalTerm


def nucleus_term(nucleus) -> LocalTerm:
    """The nuclear potential as the local term "nucleus"."""
    return LocalTerm("nucleus", nucleus.potential, nucleus)


def names(terms: Sequence[Term]) -> tuple[str, ...]:
    """The names of a Hamiltonian: the kinetic parts, then the potential terms in order."""
    return (*KINETIC, *(t.name for t in terms))


def local_potential(terms: Sequence[Term], r: np.ndarray) -> np.ndarray:
    """The sum of the local terms at radii r (what the sorting and the balance checks use)."""
    r = np.asarray(r, dtype=float)
    total = np.zeros_like(r)
    for t in terms:
        if isinstance(t, LocalTerm):
            total = total + t.potential(r)
    return total


def assemble(basis, sampled, terms: Sequence[Term]) -> tuple[np.ndarray, np.ndarray]:
    """H and S of one symmetry: the family's T and S, plus the matrix of every term.

    ``basis`` is a per-kappa basis of any family (it provides ``kinetic_and_overlap(sampled)``
    and ``local_matrix(term, sampled)``); ``sampled`` its functions on its quadrature.
    """
    H, S = basis.kinetic_and_overlap(sampled)
    for t in terms:
        if isinstance(t, LocalTerm):
            H = H + basis.local_matrix(t, sampled)
        elif isinstance(t, NonlocalTerm):
            M = np.asarray(t.matrix(sampled), dtype=float)
            if M.shape != H.shape:
                raise ValueError(f"term {t.name!r}: matrix of shape {M.shape}, the basis has {H.shape}")
            H = H + 0.5 * (M + M.T)  # a Hermitian operator: symmetrise the rounding
        else:
            raise TypeError(f"not a Hamiltonian term: {t!r}")
    return H, S
