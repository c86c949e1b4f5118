"""Second-order Coulomb energies summed over a finite Dirac basis: the test that a basis is
complete enough for many-body work.

Three energies, chosen by the config (``relbasis.second_order``):

* **pair** (no ``[electrons]``): the 1s^2 pair of a two-electron ion, H0 the bare-nucleus Dirac
  Hamiltonian of each electron and V = 1/r12.  In the nonrelativistic limit this is the
  Z-independent coefficient E2 of the 1/Z expansion (C. W. Scherr, R. E. Knight, Rev. Mod.
  Phys. 35, 436 (1963): E2 = -0.157666429 hartree, from memory).
* **core**: the correlation energy of a closed-shell Dirac–Hartree–Fock core to second order
  (Møller–Plesset partition: H0 the Fock operator, so single excitations vanish, Brillouin).
* **valence**: the second-order energy of one electron v outside the core, in the V^(N-1)
  frozen-core basis (the core's Fock operator), E(N) - E(N-1 core).

With spin orbitals i, j, ..., g_ijkl = <ij|1/r12|kl>, occupied a, b, intermediate m, n and
binding energies eps (rest mass excluded), Rayleigh–Schrödinger perturbation theory over
determinants gives (e.g. W. R. Johnson, *Atomic Structure Theory*, Springer 2007, ch. 5; I.
Lindgren, J. Morrison, *Atomic Many-Body Theory*, Springer 1986, from memory)

    E_core = 1/2 sum_abmn  (g_mnab^2 - g_mnab g_nmab) / (eps_a + eps_b - eps_m - eps_n)
    E_v    =     sum_amn   (g_mnav^2 - g_mnav g_nmav) / (eps_a + eps_v - eps_m - eps_n)
           -     sum_abn   (g_vnab^2 - g_vnab g_nvab) / (eps_a + eps_b - eps_v - eps_n)

(m, n over every state outside the core in E_v: the terms with n = v are the single
excitations a -> m in the field of v; the second sum removes the core pairs that v blocks).
For the two-electron pair the intermediate pairs are all (m, n) except both in 1s: those with one
of them in 1s are the single excitations, which do not vanish for a bare-nucleus H0.

The sums over magnetic quantum numbers are done in closed form.  With the multipole expansion
1/r12 = sum_k r_<^k / r_>^(k+1) C^k(1).C^k(2), R^k(ijkl) = int int rho_ik(r1) r_<^k/r_>^(k+1)
rho_jl(r2) (rho_ik = P_i P_k + Q_i Q_k) and X_k(ijkl) = <i||C^k||k> <j||C^k||l> R^k(ijkl),

    sum_m g_ijkl^2        = sum_k X_k(ijkl)^2 / (2k+1)
    sum_m g_ijkl g_jikl   = - sum_kk' (-1)^(k+k') {j_i j_k k; j_j j_l k'} X_k(ijkl) X_k'(jikl)

(orthogonality of 3j symbols and their contraction to a 6j symbol, A. R. Edmonds, *Angular
Momentum in Quantum Mechanics*, Princeton 1957, ch. 6; the second line, sign included, is
checked in the tests against the explicit sum over every magnetic quantum number).  E_v is
averaged over the 2j_v + 1 substates of v.

Every radial integral of one pair of occupied orbitals (a, b) with whole blocks of intermediate
states is one matrix product: R^k(mnab) = rho_ma^T diag(w/r) Y^k[rho_nb], with Hartree's Y^k
(relbasis.coulomb) of all the densities rho_nb at once.

**Partial waves.**  A term belongs to the partial wave L = the largest orbital l of its
intermediate states; ``increments[L]`` is its total, so that ``energy`` = sum through l_max is
the energy of a basis truncated at l_max.  For a pair with a cusp in r12 the increments fall
as (L + 1/2)^-4 (C. Schwartz, Phys. Rev. 126, 1015 (1962); the (L+1/2)^-5 and ^-6 terms follow,
R. N. Hill, J. Chem. Phys. 83, 1173 (1985), from memory); the tail beyond l_max is
extrapolated from the last increments with that law (:func:`extrapolate`).
"""

from __future__ import annotations

import sys
import time
from dataclasses import dataclass, field, replace
from functools import lru_cache

import numpy as np
from scipy.special import zeta

from . import coulomb
from .angular import reduced_c, wigner_6j_doubled
from .errors import InputError
from .solver import Solution, as_config, solve
from .vocabulary import j_twice, orbital_label, orbital_l

DEFAULT_L_MAX = 6
"""Partial waves of the intermediate states summed when l_max is not given."""

L_MAX_LIMIT = 30
"""Largest l_max accepted: 61 symmetries, far beyond what the extrapolation needs."""

FIT_POWERS = (4, 5, 6)
"""Powers of 1/(L + 1/2) in the asymptotic law of the increments (module docstring)."""

RELATIVISTIC_POWERS = (2, 4, 5)
"""The alternative law whose tail bounds the uncertainty: the relativistic part of the
increments, d_L(Z) - d_L(c -> inf), falls as (L + 1/2)^-2 at large Z alpha (measured at Z = 92:
(L + 1/2)^2 times it constant to 10 % for L = 5..12, docs/second-order.md), a term the
nonrelativistic law lacks."""

EXTRAPOLATION_START = 3
"""Smallest L whose increment enters the fit: the law is asymptotic, and at L <= 2 the
increments of a two-electron pair still differ from it by tens of percent."""


@dataclass(frozen=True)
class Extrapolation:
    """The energy beyond l_max, from the last increments and the law sum_p A_p (L + 1/2)^-p."""

    tail: float  # hartree: the estimated sum of the increments L > l_max
    uncertainty: float  # hartree: the largest difference between the tails of the fits compared (extrapolate)
    powers: tuple[int, ...]  # the powers of the fit used for ``tail``
    exponent: float  # effective power of the last two increments, -log(d_L / d_(L-1)) / log((L+1/2)/(L-1/2))


def _hurwitz(p: int, start: int) -> float:
    """sum_{L >= start} (L + 1/2)^-p (Hurwitz zeta)."""
    return float(zeta(p, start + 0.5))


def _fitted_tail(d: np.ndarray, top: int, powers) -> float:
    """sum_p A_p zeta(p, top + 3/2), the A_p fitted exactly to the last len(powers) increments."""
    L = np.arange(top - len(powers) + 1, top + 1)
    A = np.linalg.solve((L[:, None] + 0.5) ** -np.array(powers, dtype=float)[None, :], d[L])
    return float(sum(a * _hurwitz(p, top + 1) for a, p in zip(A, powers)))


def extrapolate(increments, powers=FIT_POWERS, start: int = EXTRAPOLATION_START) -> Extrapolation:
    """Tail of a partial-wave series whose increments d_L follow sum_p A_p (L + 1/2)^-p.

    With n powers the coefficients A_p are fitted exactly to the last n increments (L = l_max - n
    + 1 .. l_max) and the tail is sum_p A_p zeta(p, l_max + 3/2).  The fits with one, two and
    three powers (as far as the increments from ``start`` on allow) are compared: the tail is
    the richest fit's; the uncertainty is the largest of the differences between consecutive
    fits, from the fit of :data:`RELATIVISTIC_POWERS`, and from the tail of a pure power law
    with the exponent the last two increments show (increments not yet on the law).  With fewer than
    two increments from ``start`` on there is no extrapolation: tail 0, uncertainty the last
    increment times the tail of a pure (L + 1/2)^-4 law, so that the caller can still see how
    far the sum is from converged.
    """
    d = np.asarray(increments, dtype=float)
    top = d.size - 1
    exponent = float("nan")
    if top >= 1 and d[top] != 0 and d[top - 1] != 0 and np.sign(d[top]) == np.sign(d[top - 1]):
        exponent = float(-np.log(d[top] / d[top - 1]) / np.log((top + 0.5) / (top - 0.5)))
    usable = top - start + 1
    if usable < 2:
        guess = float(d[top] * (top + 0.5) ** 4 * _hurwitz(4, top + 1)) if top >= 0 else 0.0
        return Extrapolation(0.0, abs(guess), (), exponent)
    tails = [_fitted_tail(d, top, powers[:n]) for n in range(1, min(len(powers), usable) + 1)]
    spread = max(abs(b - a) for a, b in zip(tails, tails[1:])) if len(tails) > 1 else abs(tails[0])
    alternative = _fitted_tail(d, top, RELATIVISTIC_POWERS) if usable >= len(RELATIVISTIC_POWERS) else None
    if alternative is not None:
        spread = max(spread, abs(alternative - tails[-1]))
    if np.isfinite(exponent) and exponent > 1.5:
        # the increments may not have reached the law yet (at Z alpha ~ 0.4 and above they fall
        # as (L+1/2)^-3.4..-3.9 at L ~ 8..10, docs/second-order.md): the tail of a pure power
        # with the measured exponent bounds that case
        measured = float(d[top] * (top + 0.5) ** exponent * zeta(exponent, top + 1.5))
        spread = max(spread, abs(measured - tails[-1]))
    return Extrapolation(tails[-1], spread, tuple(powers[:len(tails)]), exponent)


@dataclass(frozen=True)
class SecondOrder:
    """A second-order energy summed over the basis, by partial wave, with its extrapolation.

    ``energy`` is the sum through ``l_max`` (hartree), ``increments[L]`` the part of partial
    wave L (the largest l of the intermediate states), ``extrapolated`` the energy with the
    estimated tail beyond l_max and ``uncertainty`` that estimate's uncertainty (hartree).
    ``negative`` is the part of ``energy`` from terms with an intermediate state of the negative
    branch: 0.0 and ``negative_branch`` False in the default no-pair sum.
    """

    kind: str
    reference: str  # what was correlated: "1s1/2^2", the core's subshells, or the valence label
    energy: float
    extrapolated: float
    uncertainty: float
    increments: tuple[float, ...]
    l_max: int
    negative_branch: bool
    negative: float
    exponent: float  # effective power law of the last increments (4 for a Coulomb cusp)
    fit_powers: tuple[int, ...]
    parts: dict = field(default_factory=dict)  # named contributions (valence: core pairs, blocked pairs)
    intermediate: dict = field(default_factory=dict)  # kappa -> number of intermediate states used
    flags: tuple[str, ...] = ()  # reasons to read the number with care (docs/second-order.md)
    c: float = float("nan")
    seconds: float = 0.0

    def to_dict(self) -> dict:
        """The JSON form (hartree)."""
        return {
            "kind": self.kind,
            "reference": self.reference,
            "energy_hartree": self.energy,
            "extrapolated_hartree": self.extrapolated,
            "uncertainty_hartree": self.uncertainty,
            "increments_hartree": list(self.increments),
            "l_max": self.l_max,
            "negative_branch": self.negative_branch,
            "negative_branch_hartree": self.negative,
            "exponent": self.exponent,
            "fit_powers": list(self.fit_powers),
            "parts_hartree": dict(self.parts),
            "intermediate_states": {str(k): v for k, v in self.intermediate.items()},
            "flags": list(self.flags),
            "c": self.c,
            "seconds": self.seconds,
        }


@dataclass(frozen=True)
class _States:
    """Radial functions of some roots of one kappa on the quadrature, with their energies."""

    name: str  # which set ("all", "outside", "valence"): part of the cache keys
    kappa: int
    roots: np.ndarray  # their indices in the kappa's spectrum
    energies: np.ndarray
    P: np.ndarray  # (points, states)
    Q: np.ndarray
    negative: np.ndarray  # bool: state of the negative branch
    flagged: np.ndarray  # bool: a root the spectrum flags as spurious

    @property
    def j2(self) -> int:
        return j_twice(self.kappa)

    def take(self, mask, name: str) -> "_States":
        return _States(name, self.kappa, self.roots[mask], self.energies[mask], self.P[:, mask], self.Q[:, mask],
                       self.negative[mask], self.flagged[mask])


@dataclass(frozen=True)
class _Orbital:
    """One occupied (or valence) radial function."""

    label: str
    kappa: int
    energy: float
    P: np.ndarray
    Q: np.ndarray

    @property
    def j2(self) -> int:
        return j_twice(self.kappa)


def kappas_through(l_max: int) -> tuple[int, ...]:
    """The symmetries of every l <= l_max: -1, 1, -2, 2, ..., -(l_max + 1)."""
    out = []
    for l in range(l_max + 1):
        out.append(-(l + 1))
        if l:
            out.append(l)
    return tuple(sorted(out, key=lambda k: (abs(k), k > 0)))


def _checked_l_max(l_max) -> int:
    if isinstance(l_max, bool) or not isinstance(l_max, (int, np.integer)) or not 0 <= l_max <= L_MAX_LIMIT:
        raise InputError(f"l_max = {l_max!r}: valid an integer 0 <= l_max <= {L_MAX_LIMIT}")
    return int(l_max)


def _solution(config_or_solution, l_max: int, c, progress, allow_large: bool) -> Solution:
    """The solution to sum over: the given one, or a solve of the config with every kappa of
    l <= l_max (and those of the core and the valence electron)."""
    if isinstance(config_or_solution, Solution):
        sol = config_or_solution
        if c is not None and c != sol.c:
            raise InputError(f"c = {c!r}: the solution was solved with c = {sol.c!r}; solve again with c, or omit c")
        missing = [k for k in kappas_through(l_max) if k not in sol]
        if missing:
            raise InputError(f"l_max = {l_max}: the solution lacks kappa {missing} (it has {list(sol.kappas)}); "
                             f"valid l_max <= {_solved_l_max(sol)}, or solve with those kappas")
        return sol
    return solve(summed_config(config_or_solution, l_max), c=c, progress=progress, allow_large=allow_large)


def summed_config(config, l_max: int):
    """The config with the symmetries a sum through l_max needs: every kappa of l <= l_max and
    those of the core and the valence electron (a Config; ``config`` as for ``relbasis.solve``)."""
    cfg = as_config(config)
    wanted = set(kappas_through(_checked_l_max(l_max)))
    if cfg.electrons is not None:
        wanted |= set(cfg.electrons.kappas)
    kappas = tuple(sorted(wanted, key=lambda k: (abs(k), k > 0)))
    return replace(cfg, solve=replace(cfg.solve, kappas=kappas))


def _solved_l_max(sol: Solution) -> int:
    top = -1
    while all(k in sol for k in kappas_through(top + 1)):
        top += 1
        if top >= L_MAX_LIMIT:
            break
    return top


def _states(sol: Solution, kappa: int, negative_branch: bool) -> _States:
    """Every root of kappa that can be an intermediate or occupied state.

    The no-pair sum runs over the eigenvectors of the basis Hamiltonian above the gap: the
    bound and positive-continuum roots, and the roots flagged spurious that lie above the middle
    of the gap (eps > -c^2).  Those belong to the positive-energy projector of the basis as
    much as the others; dropping one breaks the completeness the sum relies on (a wall-
    compressed 4s of Z = 92 in a cavity of 20/Z bohr, flagged for its balance residual of 0.103,
    carries 10 % of the s-wave pair energy).  Their share is reported (``flagged``).  The
    negative branch joins on request.
    """
    spec = sol[kappa]
    middle = -sol.c**2
    e = np.asarray(spec.energies)
    keep = [i for i, b in enumerate(spec.branches)
            if b in ("bound", "positive") or (b == "spurious" and e[i] > middle) or (b == "negative" and negative_branch)]
    idx = np.array(keep, dtype=int)
    P, Q = sol.sample(kappa, idx, "PQ")
    neg = np.array([spec.branches[i] == "negative" for i in idx], dtype=bool)
    flagged = np.array([spec.branches[i] == "spurious" for i in idx], dtype=bool)
    return _States("all", kappa, idx, e[idx], P, Q, neg, flagged)


def _root_of(sol: Solution, kappa: int, n: int) -> int:
    """The root of level n of kappa: the (n - l - 1)-th bound root in energy order, which must
    also carry the label n (a basis too coarse to count the nodes right is refused rather than
    summed over with the wrong orbital in the reference)."""
    spec = sol[kappa]
    bound = [i for i, b in enumerate(spec.branches) if b == "bound"]
    place = n - orbital_l(kappa) - 1
    label = orbital_label(n, kappa)
    if place >= len(bound):
        raise InputError(f"the level {label} (kappa = {kappa}) is not among the bound roots of the basis; "
                         f"enlarge the basis or the cavity")
    i = bound[place]
    if spec.n[i] != n:
        got = spec.labels[i] or "no label"
        raise InputError(f"the basis does not resolve {label} (kappa = {kappa}): its bound root number {place + 1} "
                         f"is labelled {got} (flags: {', '.join(spec.flags[i]) or 'none'}); enlarge the basis")
    return i


def _orbital(sol: Solution, kappa: int, n: int) -> _Orbital:
    i = _root_of(sol, kappa, n)
    P, Q = sol.sample(kappa, [i], "PQ")
    return _Orbital(orbital_label(n, kappa), kappa, float(sol[kappa].energies[i]), P[:, 0], Q[:, 0])


def _allowed_k(k1: int, k2: int) -> list[int]:
    """Multipoles k with <k1||C^k||k2> != 0."""
    lo, hi = abs(j_twice(k1) - j_twice(k2)) // 2, (j_twice(k1) + j_twice(k2)) // 2
    return [k for k in range(lo, hi + 1) if (orbital_l(k1) + orbital_l(k2) + k) % 2 == 0]


@lru_cache(maxsize=None)
def pair_angular(km: int, kn: int, ka: int, kb: int) -> tuple[dict[int, float], dict[tuple[int, int], float]]:
    """Angular coefficients of one block of symmetries (module docstring):

        sum over all magnetic numbers of (g_mnab^2 - g_mnab g_nmab)
            = sum_k d_k R^k(mnab)^2 + sum_kk' x_kk' R^k(mnab) R^k'(nmab)

    with d_k = (<m||C^k||a> <n||C^k||b>)^2 / (2k+1) and
    x_kk' = (-1)^(k+k') {j_m j_a k; j_n j_b k'} <m||C^k||a> <n||C^k||b> <n||C^k'||a> <m||C^k'||b>.
    Returns (d, x) as dicts over k and (k, k'); empty where no multipole connects the block.
    """
    direct, exchange = {}, {}
    for k in _allowed_k(km, ka):
        ck = reduced_c(k, km, ka) * reduced_c(k, kn, kb)
        if ck == 0.0:
            continue
        direct[k] = ck * ck / (2 * k + 1)
        for kp in _allowed_k(kn, ka):
            ckp = reduced_c(kp, kn, ka) * reduced_c(kp, km, kb)
            six = wigner_6j_doubled(j_twice(km), j_twice(ka), 2 * k, j_twice(kn), j_twice(kb), 2 * kp)
            if ckp != 0.0 and six != 0.0:
                exchange[(k, kp)] = (-1) ** (k + kp) * six * ck * ckp
    return direct, exchange


class _Block:
    """R^k(i j a b) for every i of one state set and j of another.

    The Y^k functions of one orbital b with whole state sets are kept while b is in use
    (:meth:`use`); the densities of a with the i's are products made on the fly (cheap next to
    the matrix product that follows).
    """

    def __init__(self, r, w, nq: int):
        self.r, self.w, self.nq = r, w, nq
        self._b: str | None = None
        self._y: dict = {}

    def use(self, b: _Orbital) -> None:
        """Keep the Y^k functions of b from now on (and drop those of the orbital before)."""
        if b.label != self._b:
            self._b, self._y = b.label, {}

    @staticmethod
    def rho(orb: _Orbital, states: _States) -> np.ndarray:
        return states.P * orb.P[:, None] + states.Q * orb.Q[:, None]

    def y_over_r(self, b: _Orbital, states: _States, k: int) -> np.ndarray:
        """w Y^k[rho_jb] / r at the quadrature points for every j of ``states``."""
        key = (states.name, states.kappa, k)
        if b.label != self._b or key not in self._y:
            y = coulomb.yk(self.r, self.w, self.rho(b, states), k, self.nq) * (self.w / self.r)[:, None]
            if b.label != self._b:
                return y  # not the orbital in use: nothing to keep
            self._y[key] = y
        return self._y[key]

    def radial(self, a: _Orbital, b: _Orbital, I: _States, J: _States, k: int, rho_a=None) -> np.ndarray:
        """R^k(i j a b) for i in I, j in J: an (I states x J states) array."""
        rho = self.rho(a, I) if rho_a is None else rho_a
        return rho.T @ self.y_over_r(b, J, k)


class _Tally:
    """Sums of one energy by partial wave, and the parts that are reported on their own."""

    def __init__(self, l_max: int):
        self.by_l = np.zeros(l_max + 1)
        self.one_negative = 0.0  # terms with one intermediate state of the negative branch
        self.both_negative = 0.0  # terms with both
        self.flagged = 0.0  # terms with an intermediate root flagged spurious
        self.smallest_gap = np.inf  # smallest |denominator| of a term with a negative-branch state

    def add(self, other: "_Tally", weight: float) -> None:
        self.by_l += weight * other.by_l
        self.one_negative += weight * other.one_negative
        self.both_negative += weight * other.both_negative
        self.flagged += weight * other.flagged
        self.smallest_gap = min(self.smallest_gap, other.smallest_gap)


def _pair_sum(block: _Block, a: _Orbital, b: _Orbital, M: dict[int, _States], N: dict[int, _States],
              l_index, excluded, tally: _Tally) -> None:
    """Add sum_{m in M, n in N} (S_D - S_X)(mnab) / (eps_a + eps_b - eps_m - eps_n) to ``tally``
    by partial wave (module docstring), over every magnetic quantum number of a, b, m, n.

    ``l_index(km, kn)`` gives the partial wave of a block of symmetries; ``excluded(km, kn)`` a
    boolean mask of the (m, n) pairs to leave out, or None.
    """
    for km, Sm in M.items():
        for kn, Sn in N.items():
            direct, exchange = pair_angular(km, kn, a.kappa, b.kappa)
            if not direct:
                continue
            rho_m, rho_n = block.rho(a, Sm), block.rho(a, Sn)
            R = {k: block.radial(a, b, Sm, Sn, k, rho_m) for k in direct}  # R^k(mnab), (m x n)
            Rt = {k: block.radial(a, b, Sn, Sm, k, rho_n).T for k in {kp for _, kp in exchange}}  # R^k'(nmab)
            num = sum(d * R[k] * R[k] for k, d in direct.items())
            for (k, kp), x in exchange.items():
                num = num + x * R[k] * Rt[kp]
            delta = a.energy + b.energy - Sm.energies[:, None] - Sn.energies[None, :]
            mask = excluded(km, kn) if excluded is not None else None
            if mask is not None:  # the reference pair itself (a zero denominator)
                delta = np.where(mask, 1.0, delta)
                num = np.where(mask, 0.0, num)
            terms = num / delta
            tally.by_l[l_index(km, kn)] += terms.sum()
            if Sm.negative.any() or Sn.negative.any():
                one = Sm.negative[:, None] ^ Sn.negative[None, :]
                both = Sm.negative[:, None] & Sn.negative[None, :]
                tally.one_negative += terms[one].sum()
                tally.both_negative += terms[both].sum()
                if one.any() or both.any():
                    tally.smallest_gap = min(tally.smallest_gap, float(np.abs(delta[one | both]).min()))
            if Sm.flagged.any() or Sn.flagged.any():
                tally.flagged += terms[Sm.flagged[:, None] | Sn.flagged[None, :]].sum()


def second_order(config_or_solution=None, l_max: int = DEFAULT_L_MAX, *, negative_branch: bool = False,
                 c: float | None = None, progress: bool | None = None, allow_large: bool = False) -> SecondOrder:
    """The second-order Coulomb energy summed over the basis (module docstring).

    Parameters
    ----------
    config_or_solution : path, mapping, Config, spec or Solution
        No ``[electrons]`` section: the 1s^2 pair of the bare nucleus.  A core alone: the core's
        correlation energy.  A core and a valence electron: the valence second-order energy in
        the V^(N-1) basis.  A config is solved with every kappa of l <= l_max; a Solution must
        hold them already.
    l_max : int
        Largest orbital l of the intermediate states (default 6).
    negative_branch : bool
        Include intermediate states of the negative branch (default: no-pair, positive branch
        only); their share is reported as ``negative``.
    c : float, optional
        Speed of light (atomic units) for the nonrelativistic limit, as in ``relbasis.solve``.
    progress : bool, optional
        Progress bar (default: when attached to a terminal).
    allow_large : bool
        Solve a basis beyond the size guard, as in ``relbasis.solve``.

    Returns
    -------
    SecondOrder
        ``energy`` (sum through l_max), ``extrapolated``, ``uncertainty``, ``increments`` (one
        per partial wave L = 0 .. l_max), all in hartree, with the parts and the law of the fit.
    """
    t0 = time.perf_counter()
    l_max = _checked_l_max(l_max)
    if not isinstance(negative_branch, bool):
        raise InputError(f"negative_branch = {negative_branch!r}: valid True or False")
    sol = _solution(config_or_solution, l_max, c, progress, allow_large)
    r, w = sol.grid
    block = _Block(r, w, sol.family_set.panel_points)
    wanted = kappas_through(l_max)
    states = {k: _states(sol, k, negative_branch)
              for k in sorted(set(wanted) | _occupied_kappas(sol), key=lambda k: (abs(k), k > 0))}
    tally = _Tally(l_max)
    parts: dict[str, float] = {}
    bar = _bar(progress, sol)
    if sol.scf is None:
        kind, reference, intermediate = _pair(sol, block, states, wanted, tally)
    elif sol.config.electrons.valence is None:
        kind, reference, intermediate = _core(sol, block, states, wanted, tally, bar)
    else:
        kind, reference, intermediate, parts = _valence(sol, block, states, wanted, tally, bar)
    if bar is not None:
        bar.close()
    energy = float(tally.by_l.sum())
    ex = extrapolate(tally.by_l)
    if negative_branch:
        parts["one_negative"] = float(tally.one_negative)
        parts["both_negative"] = float(tally.both_negative)
        parts["smallest_negative_denominator"] = float(tally.smallest_gap)
    flags = []
    if tally.flagged:
        parts["flagged_spurious"] = float(tally.flagged)
        flags.append("spurious-roots-included")
    if negative_branch and tally.one_negative != 0.0:
        # one electron in each branch: eps_m + eps_n = eps_a + eps_b has solutions in the two
        # continua (the Brown–Ravenhall degeneracy, G. E. Brown, D. G. Ravenhall, Proc. R. Soc.
        # A 208, 552 (1951)), so this part depends on where the basis puts its discrete pairs
        flags.append("brown-ravenhall")
    if ex.powers == ():
        flags.append("not-extrapolated")
    return SecondOrder(kind=kind, reference=reference, energy=energy, extrapolated=energy + ex.tail,
                       uncertainty=ex.uncertainty, increments=tuple(float(x) for x in tally.by_l), l_max=l_max,
                       negative_branch=negative_branch, negative=float(tally.one_negative + tally.both_negative),
                       exponent=ex.exponent, fit_powers=ex.powers, parts=parts, intermediate=intermediate,
                       flags=tuple(flags), c=float(sol.c), seconds=time.perf_counter() - t0)


def _bar(progress, sol):
    """A progress bar over the core orbitals (None without a core or when not wanted)."""
    if sol.scf is None:
        return None
    show = progress if progress is not None else sys.stderr.isatty()
    if not show:
        return None
    from tqdm import tqdm
    return tqdm(total=2 * len(sol.scf.core) if sol.config.electrons.valence is not None else len(sol.scf.core),
                desc="second order", unit="orbital", leave=False)


def _tick(bar) -> None:
    if bar is not None:
        bar.update(1)


def _occupied_kappas(sol: Solution) -> set[int]:
    return set() if sol.scf is None else {o.kappa for o in sol.scf.core} | set(sol.config.electrons.kappas)


def _by_max_l(km: int, kn: int) -> int:
    """The partial wave of a block of intermediate states: the larger l."""
    return max(orbital_l(km), orbital_l(kn))


def _pair(sol, block, states, wanted, tally):
    """1s^2 of the bare nucleus: every (m, n) but both in 1s."""
    if sol.nucleus.Z <= 0:
        raise InputError("ion.Z = 0: a free particle has no 1s^2 pair; give Z >= 1")
    s1 = _orbital(sol, -1, 1)
    at = int(np.flatnonzero(states[-1].roots == _root_of(sol, -1, 1))[0])
    M = {k: states[k] for k in wanted}

    def excluded(km, kn):
        if km != -1 or kn != -1:
            return None
        mask = np.zeros((M[-1].energies.size, M[-1].energies.size), dtype=bool)
        mask[at, at] = True
        return mask

    block.use(s1)
    part = _Tally(tally.by_l.size - 1)
    _pair_sum(block, s1, s1, M, M, _by_max_l, excluded, part)
    tally.add(part, 0.5)  # the 1/2 of sum_ab over the two ordered spin-orbital pairs of 1s^2
    return "pair", "1s1/2^2", {k: int(M[k].energies.size) for k in M}


def _split_core(sol, states, wanted):
    """The core orbitals (from the frozen-core spectra) and the states outside the core."""
    core = [_orbital(sol, o.kappa, o.n) for o in sol.scf.core]  # refuses a root whose label disagrees
    held = {(k, i) for (k, _), i in sol.core_roots().items()}
    outside = {}
    for k in wanted:
        mask = np.array([(k, int(i)) not in held for i in states[k].roots], dtype=bool)
        outside[k] = states[k].take(mask, "outside")
    return core, outside


def _core(sol, block, states, wanted, tally, bar):
    """The closed core: pairs (a, b) of core orbitals, m and n outside the core."""
    core, virt = _split_core(sol, states, wanted)
    for i, b in enumerate(core):
        block.use(b)
        for a in core[:i + 1]:
            part = _Tally(tally.by_l.size - 1)
            _pair_sum(block, a, b, virt, virt, _by_max_l, None, part)
            tally.add(part, 0.5 if a is b else 1.0)  # a != b: the (b, a) term equals the (a, b) one
        _tick(bar)
    reference = " ".join(o.label for o in core)
    return "core", reference, {k: int(v.energies.size) for k, v in virt.items()}


def _valence(sol, block, states, wanted, tally, bar):
    """One electron v outside the core (module docstring): E_v = first - second, over 2j_v + 1."""
    core, outside = _split_core(sol, states, wanted)
    sub = sol.config.electrons.valence
    v = _orbital(sol, sub.kappa, sub.n)
    L = tally.by_l.size - 1
    first, second = _Tally(L), _Tally(L)
    block.use(v)
    for a in core:
        _pair_sum(block, a, v, outside, outside, _by_max_l, None, first)
        _tick(bar)
    # the core pairs (a, b) that v blocks: sum_abn (S_D - S_X)(v n a b) / (eps_a + eps_b - eps_v - eps_n)
    V = {v.kappa: _States("valence", v.kappa, np.zeros(1, dtype=int), np.array([v.energy]), v.P[:, None],
                          v.Q[:, None], np.zeros(1, dtype=bool), np.zeros(1, dtype=bool))}
    for b in core:
        block.use(b)
        for a in core:
            _pair_sum(block, a, b, V, outside, lambda km, kn: orbital_l(kn), None, second)
        _tick(bar)
    scale = 1.0 / (v.j2 + 1)
    tally.add(first, scale)
    tally.add(second, -scale)
    parts = {"core_excitations": float(scale * first.by_l.sum()),
             "blocked_core_pairs": float(-scale * second.by_l.sum())}
    return "valence", v.label, {k: int(s.energies.size) for k, s in outside.items()}, parts
