"""The many-body bookkeeping of the second-order sums against determinants, in a small basis.

Rayleigh–Schrödinger perturbation theory over Slater determinants (common practice; e.g. A.
Szabo, N. S. Ostlund, *Modern Quantum Chemistry*, 1982, ch. 6, from memory): with H0 the sum of
one-electron Hamiltonians whose eigenstates are the basis roots, E2 = sum over excited
determinants K of |<K|V|0>|^2 / (E0 - E_K), the matrix elements from the Slater–Condon rules.
Here every spin orbital is explicit (kappa, root, m), g_ijkl = <ij|1/r12|kl> is summed over the
multipole components with 3j symbols, and the sums run over single and double excitations
one by one.  The package's closed forms (relbasis.perturbation: magnetic sums done with 3j/6j
algebra, the rules for which pairs are excluded, the factors 1/2, the singles of a bare-nucleus
H0 and of a valence electron's field) must give the same numbers, restricted to the same few
roots per symmetry.
"""

from __future__ import annotations

import itertools
import warnings

import numpy as np
import pytest

import relbasis
from relbasis import coulomb
from relbasis import perturbation as pt
from relbasis.angular import reduced_c, wigner_3j_doubled
from relbasis.vocabulary import j_twice

KEEP = 5  # roots per symmetry in the truncated sets (the lowest of the positive branch)
KAPPAS = (-1, 1, -2)


def _solve(cfg):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return relbasis.solve(dict(cfg, solve={"kappas": list(KAPPAS)}), progress=False)


def _truncated(sol):
    """The package's state sets cut to the first KEEP roots of each symmetry."""
    out = {}
    for k in KAPPAS:
        st = pt._states(sol, k, False)
        out[k] = st.take(np.arange(st.energies.size) < KEEP, "all")
    return out


def _c_element(ka, ma, k, q, kb, mb):
    phase = -1.0 if ((j_twice(ka) - ma) // 2) % 2 else 1.0
    return phase * wigner_3j_doubled(j_twice(ka), 2 * k, j_twice(kb), -ma, 2 * q, mb) * reduced_c(k, ka, kb)


class _SpinOrbitals:
    """Every (kappa, root, m) of the truncated sets, and g_ijkl between them."""

    def __init__(self, sol, states):
        self.r, self.w = sol.grid
        self.nq = sol.family_set.panel_points
        self.orb = []  # (kappa, position in its set, m2, energy, root)
        self.radial = {}
        for k, st in states.items():
            for p in range(st.energies.size):
                self.radial[(k, p)] = (st.P[:, p], st.Q[:, p], float(st.energies[p]), int(st.roots[p]))
                for m2 in range(-j_twice(k), j_twice(k) + 1, 2):
                    self.orb.append((k, p, m2))
        self._rk = {}

    def energy(self, i):
        return self.radial[self.orb[i][:2]][2]

    def _R(self, k, a, b, c, d):
        """R^k(ab, cd) = int rho_ac Y^k[rho_bd] / r for radial keys a, b, c, d."""
        key = (k, a, b, c, d)
        if key not in self._rk:
            Pa, Qa = self.radial[a][:2]
            Pb, Qb = self.radial[b][:2]
            Pc, Qc = self.radial[c][:2]
            Pd, Qd = self.radial[d][:2]
            y = coulomb.yk(self.r, self.w, Pb * Pd + Qb * Qd, k, self.nq)
            self._rk[key] = float(np.sum(self.w * (Pa * Pc + Qa * Qc) * y / self.r))
        return self._rk[key]

    def g(self, i, j, k, l):
        (ki, pi, mi), (kj, pj, mj), (kk, pk, mk), (kl, pl, ml) = (self.orb[x] for x in (i, j, k, l))
        if mi + mj != mk + ml:
            return 0.0
        total = 0.0
        for mult in range(0, 6):
            q2 = mk - mi  # <i|C^k_{-q}|k> needs m_i = m_k - q (m doubled here)
            if q2 % 2 or abs(q2 // 2) > mult:
                continue
            q = q2 // 2
            ang = (-1) ** q * _c_element(ki, mi, mult, -q, kk, mk) * _c_element(kj, mj, mult, q, kl, ml)
            if ang:
                total += ang * self._R(mult, (ki, pi), (kj, pj), (kk, pk), (kl, pl))
        return total

    def anti(self, i, j, k, l):
        return self.g(i, j, k, l) - self.g(i, j, l, k)


def _doubles(so, occupied, virtual):
    """sum over a < b occupied, m < n virtual of |<mn||ab>|^2 / (e_a + e_b - e_m - e_n)."""
    total = 0.0
    for a, b in itertools.combinations(occupied, 2):
        for m, n in itertools.combinations(virtual, 2):
            x = so.anti(m, n, a, b)
            if x:
                total += x * x / (so.energy(a) + so.energy(b) - so.energy(m) - so.energy(n))
    return total


def _index(so, kappa, root, m2):
    return next(i for i, (k, p, m) in enumerate(so.orb) if k == kappa and so.radial[(k, p)][3] == root and m == m2)


def test_pair_equals_the_determinant_sum():
    """1s^2 of a bare nucleus: doubles 1s^2 -> mn and singles 1s -> n in the field of the other
    1s electron (<n 1s'|V|1s 1s'>, V = 1/r12 since H0 has no mean field)."""
    sol = _solve({"ion": {"Z": 3, "nucleus": "point"}, "basis": {"size": 30}})
    states = _truncated(sol)
    so = _SpinOrbitals(sol, states)
    root = pt._root_of(sol, -1, 1)
    occ = [_index(so, -1, root, 1), _index(so, -1, root, -1)]
    virt = [i for i in range(len(so.orb)) if i not in occ]
    a, b = occ
    singles = 0.0
    for x, y in ((a, b), (b, a)):  # x -> m, y stays
        for m in virt:
            amp = so.anti(m, y, x, y)
            singles += amp * amp / (so.energy(x) - so.energy(m))
    expected = _doubles(so, occ, virt) + singles
    tally = pt._Tally(2)
    block = pt._Block(*sol.grid, sol.family_set.panel_points)
    pt._pair(sol, block, states, KAPPAS, tally)
    assert tally.by_l.sum() == pytest.approx(expected, rel=1e-11)


@pytest.fixture(scope="module")
def lithium():
    sol = _solve({"ion": {"Z": 3, "nucleus": "point"}, "electrons": {"core": "1s1/2", "valence": "2s1/2"},
                  "basis": {"size": 40}})
    return sol, _truncated(sol)


def test_valence_equals_the_difference_of_determinant_sums(lithium):
    """E_v = E2(core + v) - E2(core), both with H0 the core's Fock operator (V^(N-1)): in the
    atom the singles a -> m in the field of v, the doubles a v -> m n and a b -> m n; in the
    core alone the doubles a b -> m n with m, n anything outside the core."""
    sol, states = lithium
    so = _SpinOrbitals(sol, states)
    c1 = pt._root_of(sol, -1, 1)
    c2 = pt._root_of(sol, -1, 2)
    core = [_index(so, -1, c1, 1), _index(so, -1, c1, -1)]
    v = _index(so, -1, c2, 1)
    outside = [i for i in range(len(so.orb)) if i not in core]
    virt = [i for i in outside if i != v]
    atom = _doubles(so, core + [v], virt)
    for a in core:  # singles a -> m: <m v||a v>
        for m in virt:
            amp = so.anti(m, v, a, v)
            atom += amp * amp / (so.energy(a) - so.energy(m))
    expected = atom - _doubles(so, core, outside)
    tally = pt._Tally(2)
    block = pt._Block(*sol.grid, sol.family_set.panel_points)
    pt._valence(sol, block, states, KAPPAS, tally, None)
    assert tally.by_l.sum() == pytest.approx(expected, rel=1e-11)


def test_closed_core_equals_the_determinant_sum():
    """Be-like core 1s^2 2s^2 with H0 its own Fock operator: doubles only (Brillouin)."""
    sol = _solve({"ion": {"Z": 4, "nucleus": "point"}, "electrons": {"core": "1s1/2 2s1/2"}, "basis": {"size": 40}})
    states = _truncated(sol)
    so = _SpinOrbitals(sol, states)
    occ = [_index(so, -1, pt._root_of(sol, -1, n), m) for n in (1, 2) for m in (1, -1)]
    virt = [i for i in range(len(so.orb)) if i not in occ]
    expected = _doubles(so, occ, virt)
    tally = pt._Tally(2)
    block = pt._Block(*sol.grid, sol.family_set.panel_points)
    pt._core(sol, block, states, KAPPAS, tally, None)
    assert tally.by_l.sum() == pytest.approx(expected, rel=1e-11)
