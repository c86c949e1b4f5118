"""The Dirac–Hartree–Fock mean field of a closed-shell core, in the finite basis of any family.

For every symmetry kappa the Fock operator is

    F = h + J - K,       h = T + V_nucleus         (T: kinetic and rest mass, relbasis.hamiltonian)

with the direct potential of the whole core, local,

    J(r) = Y^0[rho](r) / r,         rho = sum_a (2j_a + 1) (P_a^2 + Q_a^2),

and the exchange, nonlocal, on a function u = (P, Q) of symmetry kappa,

    (K u)(r) = sum_a sum_k  Lambda(kappa, kappa_a, k)  Y^k[P_a P + Q_a Q](r) / r  (P_a, Q_a)(r),
    Lambda = <kappa || C^k || kappa_a>^2 / (2j + 1)

(I. P. Grant, *Relativistic Quantum Theory of Atoms and Molecules*, Springer 2007, ch. 6;
W. R. Johnson, *Atomic Structure Theory*, Springer 2007, ch. 3 and 8; the reduced matrix
element of C^k from relbasis.angular; Y^k from relbasis.coulomb).  The sum runs over the core
subshells a, each full (2j_a + 1 electrons); k over the values with l + k + l_a even and
|j - j_a| <= k <= j + j_a.

In the basis the Fock matrix F_ij = h_ij + <i|J|j> - <i|K|j> is assembled per symmetry and
diagonalised with the overlap; the occupied orbitals of a symmetry are its lowest roots of the
positive-energy branch (eps > -c^2 for binding energies), by count, skipping a root whose
kinetic balance fails (a spurious root of an unbalanced basis).  The iteration starts from a
screened Thomas–Fermi potential (or the bare nucleus), and is accelerated by Pulay's DIIS
(P. Pulay, Chem. Phys. Lett. 73, 393 (1980)) on the first-order orbital change that the
occupied–virtual block <v|F_out - F_in|a> asks for (:func:`_orbital_step`), with damping in the first
iterations.  Converged when the total energy changes by less than ``energy_tolerance`` (relative)
and no orbital would change by more than ``orbital_tolerance`` (:func:`_orbital_step`).

The total energy (binding: the electrons' rest mass excluded) is

    E = sum_a q_a <a|h|a> + 1/2 sum_a q_a <a|J|a> - 1/2 sum_a q_a <a|K|a>,   q_a = 2j_a + 1,

reported with those three parts; the orbital energies are the roots of the last Fock matrix,
which is the frozen-core Hamiltonian (relbasis.solver solves every symmetry in it).
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass, field, replace

import numpy as np

from . import coulomb, eigen, hamiltonian
from .angular import reduced_c
from .errors import InputError
from .families import family_of
from .solver import final_roots
from .spectrum import balance_residual
from .vocabulary import j_twice

ENERGY_TOLERANCE = 1e-14
"""Converged when |E_i - E_(i-1)| < ENERGY_TOLERANCE |E| (and every orbital step below ORBITAL_TOLERANCE)."""
ORBITAL_TOLERANCE = 1e-10
"""Converged when no orbital would change by more than this (the S-norm of the first-order
change :func:`_orbital_step` that F_out - F_in asks for)."""
MAX_ITERATIONS = 200
DIIS_SIZE = 10
"""Fock matrices kept for the DIIS extrapolation."""
DAMPING = 0.5
"""Share of the previous Fock matrix kept in the first DAMPED iterations (before DIIS takes over)."""
DAMPED = 2
DIIS_START = 0.05
"""DIIS takes over once the orbital step is below this (damped mixing until then, at least
DAMPED iterations): far from the solution the extrapolation of a collapsing 4f (Yb) diverges."""
SPURIOUS_RESIDUAL = 0.1
"""A root whose kinetic-balance residual (relbasis.spectrum.balance_residual) exceeds this is not
taken as an occupied orbital: bound states of a balanced basis show 1e-6..1e-3, spurious roots ~1."""
TF_LENGTH = 0.8853
"""Thomas–Fermi length b = 0.8853 Z^(-1/3) bohr (L. H. Thomas 1927, E. Fermi 1927; common practice)."""
TIETZ = 0.53625
"""phi(x) ~ 1 / (1 + 0.53625 x)^2, T. Tietz's approximation of the Thomas–Fermi function (from memory)."""
GUESSES = ("thomas-fermi", "nucleus")


class ConvergenceError(InputError):
    """The self-consistent field did not converge: one line with the figures and advice."""


@dataclass(frozen=True)
class Orbital:
    """One converged core subshell: label ("2p3/2"), n, kappa, electrons (2j + 1), binding energy
    (hartree), coefficients in the basis of its symmetry, <r> and <r^2> (bohr)."""

    label: str
    n: int
    kappa: int
    occupancy: int
    energy: float
    coefficients: np.ndarray = field(repr=False)
    r_mean: float = float("nan")
    r2_mean: float = float("nan")


@dataclass(frozen=True)
class Iteration:
    """One row of the iteration table."""

    index: int
    energy: float
    change: float  # E_i - E_(i-1)
    step: float  # the largest change of an orbital that F_out - F_in asks for (S-norm)
    diis: int  # Fock matrices in the extrapolation (0: damped)


@dataclass(frozen=True)
class MeanField:
    """The converged core: its orbitals, energies and the potential of the frozen-core basis.

    ``total_energy`` is the binding energy of the core (hartree, rest mass excluded) with its
    parts ``one_body``, ``direct`` and ``exchange``; ``core`` the core subshells (:class:`Orbital`) in
    the order of the config, ``orbitals`` their binding energies by label; ``history`` the iteration table.  :meth:`terms` gives the potential as
    two Hamiltonian terms, "direct" (local) and "exchange" (nonlocal), valid in any basis.
    """

    electrons: object = field(repr=False)
    core: tuple[Orbital, ...]
    total_energy: float
    one_body: float
    direct: float
    exchange: float
    iterations: int
    converged: bool
    seconds: float
    history: tuple[Iteration, ...] = field(repr=False)
    r: np.ndarray = field(repr=False)  # the SCF's quadrature points
    w: np.ndarray = field(repr=False)
    panel_points: int = 0
    P: np.ndarray = field(repr=False, default=None)  # core orbitals at r (points x orbitals)
    Q: np.ndarray = field(repr=False, default=None)
    direct_values: np.ndarray = field(repr=False, default=None)  # J(r) at r
    bases: dict = field(repr=False, default_factory=dict)  # kappa -> basis of the SCF
    guess: str = "thomas-fermi"

    @property
    def converged_text(self) -> str:
        return "converged" if self.converged else "not converged"

    def to_dict(self) -> dict:
        """The JSON ``scf`` object: total energy and its parts, orbitals {label: hartree}, <r>,
        <r^2>, iterations, convergence, time."""
        return {
            "total_energy_hartree": self.total_energy,
            "one_body_hartree": self.one_body,
            "direct_hartree": self.direct,
            "exchange_hartree": self.exchange,
            "orbitals": self.orbitals,
            "occupations": {o.label: o.occupancy for o in self.core},
            "r_mean_bohr": {o.label: o.r_mean for o in self.core},
            "r2_mean_bohr2": {o.label: o.r2_mean for o in self.core},
            "iterations": self.iterations,
            "converged": self.converged,
            "seconds": self.seconds,
            "guess": self.guess,
        }

    @property
    def orbitals(self) -> dict[str, float]:
        """{label: binding energy} of the core orbitals (hartree), in the order of the config."""
        return {o.label: o.energy for o in self.core}

    @property
    def electron_count(self) -> int:
        return int(sum(o.occupancy for o in self.core))

    def direct_potential(self, r) -> np.ndarray:
        """J(r) at any radii: inside the SCF grid through the panels' polynomials
        (relbasis.coulomb.interpolate), beyond it N/r."""
        r = np.asarray(r, dtype=float)
        flat = r.ravel()
        out = coulomb.interpolate(self.r, self.direct_values, self.panel_points, flat, 0.0)
        outside = flat > self.r[-1]
        out[outside] = self.electron_count / flat[outside]
        return out.reshape(r.shape)

    def orbital_values(self, r: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """P and Q of the core orbitals at radii r (points x orbitals), from their bases."""
        if r.shape == self.r.shape and np.array_equal(r, self.r):
            return self.P, self.Q
        P, Q = np.empty((r.size, len(self.core))), np.empty((r.size, len(self.core)))
        for i, o in enumerate(self.core):
            comp = self.bases[o.kappa].components(r)
            P[:, i], Q[:, i] = comp[0] @ o.coefficients, comp[1] @ o.coefficients
        return P, Q

    def exchange_matrix(self, sampled) -> np.ndarray:
        """The exchange term's matrix, -<i|K|j>, of the basis functions ``sampled`` (one
        symmetry, a panel grid): F = h + J - K."""
        kappa, nq = sampled.kappa, sampled.panel_points
        if kappa is None or nq is None:
            raise InputError("the exchange term needs basis functions that know their kappa and quadrature panels")
        Pc, Qc = self.orbital_values(sampled.r)
        occupied = [(o.kappa, Pc[:, i], Qc[:, i]) for i, o in enumerate(self.core)]
        return -exchange(sampled, occupied, nq)

    def terms(self) -> tuple[hamiltonian.LocalTerm, hamiltonian.NonlocalTerm]:
        """The core's potential as Hamiltonian terms: "direct" (local) and "exchange" (nonlocal)."""
        return (hamiltonian.LocalTerm("direct", self.direct_potential, self),
                hamiltonian.NonlocalTerm("exchange", self.exchange_matrix))


# ----------------------------------------------------------------------------- operators

def exchange_orders(kappa: int, kappa_a: int) -> list[tuple[int, float]]:
    """(k, Lambda) with Lambda = <kappa||C^k||kappa_a>^2 / (2j + 1) non-zero (module docstring)."""
    j, ja = j_twice(kappa), j_twice(kappa_a)
    out = []
    for k in range(abs(j - ja) // 2, (j + ja) // 2 + 1):
        c = reduced_c(k, kappa, kappa_a)
        if c != 0.0:
            out.append((k, c * c / (j + 1)))
    return out


def exchange(sampled, occupied, nq: int, dense=None) -> np.ndarray:
    """<i|K|j> for the functions ``sampled`` of one symmetry; ``occupied`` lists (kappa_a, P_a, Q_a)
    of the core orbitals at the sampled points; ``dense``: (P, Q) of the functions as dense
    (points x size) arrays, if already at hand.

    <i|K|j> = sum_a,k Lambda int (P_i P_a + Q_i Q_a) Y^k[P_j P_a + Q_j Q_a] / r dr: the pair
    densities of orbital a with every basis function are one (points x size) array, their Y^k
    one call of relbasis.coulomb.yk; the sums over a and k are taken on the grid, so that the
    family's ``project`` runs once.
    """
    kappa = sampled.kappa
    r, w = sampled.r, sampled.w
    P, Q = dense if dense is not None else (sampled.dense("P"), sampled.dense("Q"))
    fP, fQ = np.zeros_like(P), np.zeros_like(Q)
    for kappa_a, Pa, Qa in occupied:
        orders = exchange_orders(kappa, kappa_a)
        if not orders:
            continue
        rho = P * Pa[:, None] + Q * Qa[:, None]
        Y = sum(lam * coulomb.yk(r, w, rho, k, nq) for k, lam in orders) / r[:, None]
        fP += Pa[:, None] * Y
        fQ += Qa[:, None] * Y
    K = sampled.project(fP, fQ)
    return 0.5 * (K + K.T)


def direct_values(r, w, P, Q, occupancy, nq: int) -> np.ndarray:
    """J(r) = Y^0[rho](r) / r at the points, rho = sum_a q_a (P_a^2 + Q_a^2)."""
    rho = (P * P + Q * Q) @ np.asarray(occupancy, dtype=float)
    return coulomb.yk(r, w, rho, 0, nq) / r


def thomas_fermi_potential(Z: float, electrons: int):
    """The starting potential: the nucleus screened by N - 1 electrons of a Thomas–Fermi atom,

        V(r) = -[Z - (N - 1)(1 - phi(r / b))] / r,   b = 0.8853 Z^(-1/3),

    with Tietz's phi (module constants); it tends to -Z/r at the origin and to -(Z - N + 1)/r
    far out, the charge an outer electron sees."""
    b = TF_LENGTH * Z ** (-1.0 / 3.0)
    screen = max(electrons - 1, 0)

    def potential(r):
        phi = 1.0 / (1.0 + TIETZ * np.asarray(r) / b) ** 2
        return screen * (1.0 - phi) / np.asarray(r)

    return potential


# ----------------------------------------------------------------------------- the iteration

@dataclass
class _Symmetry:
    """What the iteration keeps per symmetry (mutable: orbitals change every iteration)."""

    kappa: int
    basis: object
    sampled: object
    h: np.ndarray
    S: np.ndarray
    P: np.ndarray  # dense basis functions at the points
    Q: np.ndarray
    DP: np.ndarray
    shells: list  # the core subshells of this kappa, ascending n
    energies: np.ndarray = None
    vectors: np.ndarray = None
    occupied: np.ndarray = None  # indices of the occupied roots


class _Unbound(Exception):
    """An occupied orbital left the bound states (eps >= 0) while starting from Thomas–Fermi."""


def run(config, nucleus, c: float, *, guess: str = "thomas-fermi", energy_tolerance: float = ENERGY_TOLERANCE,
        orbital_tolerance: float = ORBITAL_TOLERANCE, max_iterations: int = MAX_ITERATIONS,
        progress: bool | None = None) -> MeanField:
    """The self-consistent core of a resolved config with an ``electrons`` section.

    From the Thomas–Fermi start an occupied orbital may be pushed out of the bound states in
    the first iterations (the 4f of Yb, whose Thomas–Fermi well is too shallow): it would become
    a root of the pseudo-continuum, from which the iteration does not recover.  The run then
    starts again from the bare nucleus, where every orbital is bound, and says so in ``guess``.

    Raises :class:`ConvergenceError` (an InputError) with the last figures and advice when the
    iteration does not converge in ``max_iterations``.
    """
    if guess not in GUESSES:
        raise InputError(f"guess = {guess!r}: choose one of {', '.join(GUESSES)}")
    t0 = time.perf_counter()
    try:
        return _run(config, nucleus, c, guess, energy_tolerance, orbital_tolerance, max_iterations, progress, t0)
    except _Unbound as why:
        mf = _run(config, nucleus, c, "nucleus", energy_tolerance, orbital_tolerance, max_iterations, progress, t0)
        return replace(mf, guess=f"nucleus ({why})")


def _run(config, nucleus, c, guess, energy_tolerance, orbital_tolerance, max_iterations, progress, t0) -> MeanField:
    """One iteration from one start (see :func:`run`)."""
    electrons = config.electrons
    fset = family_of(config).build_set(config, nucleus, c)
    nq = fset.panel_points
    nuc = hamiltonian.nucleus_term(nucleus)
    by_kappa: dict[int, list] = {}
    for shell in electrons.core:
        by_kappa.setdefault(shell.kappa, []).append(shell)
    syms = []
    for kappa, shells in sorted(by_kappa.items(), key=lambda kv: (kv[0] > 0, abs(kv[0]))):
        basis = fset.build(kappa)
        sampled = fset.sample(basis)
        h, S = hamiltonian.assemble(basis, sampled, (nuc,))
        syms.append(_Symmetry(kappa, basis, sampled, h, S, sampled.dense("P"), sampled.dense("Q"),
                              sampled.dense("DP"), sorted(shells, key=lambda s: s.n)))
    r, w = syms[0].sampled.r, syms[0].sampled.w
    Z = float(nucleus.Z)
    N = sum(s.occupancy for s in electrons.core)
    V_nuc = nucleus.potential(r)
    field_in = [np.zeros_like(s.h) for s in syms]
    if guess == "thomas-fermi":
        screening = hamiltonian.LocalTerm("guess", thomas_fermi_potential(Z, N))
        field_in = [s.basis.local_matrix(screening, s.sampled) for s in syms]
    history: list[Iteration] = []
    diis_F: list[list[np.ndarray]] = []
    diis_e: list[np.ndarray] = []
    energy_old = math.nan
    bar = _bar(progress, max_iterations)
    converged = False
    try:
        for it in range(1, max_iterations + 1):
            V_local = V_nuc + (direct_values(r, w, *_grid_orbitals(syms), _occupancies(syms), nq)
                               if syms[0].vectors is not None else 0.0)
            for s, G in zip(syms, field_in):
                _diagonalise(s, s.h + G, c, r, w, V_local)
                if guess == "thomas-fermi" and np.any(s.energies[s.occupied] >= 0):
                    lost = [sh.label for sh, e in zip(s.shells, s.energies[s.occupied]) if e >= 0]
                    raise _Unbound(f"from Thomas–Fermi, {', '.join(lost)} left the bound states in iteration {it}")
            Pg, Qg = _grid_orbitals(syms)
            occ = _occupancies(syms)
            J = direct_values(r, w, Pg, Qg, occ, nq)
            occupied = _occupied_list(syms, Pg, Qg)
            Jterm = hamiltonian.LocalTerm("direct", lambda x, J=J: J)
            field_out, grads, parts = [], [], np.zeros(3)
            for s, G_in in zip(syms, field_in):
                Jm = s.basis.local_matrix(Jterm, s.sampled)
                Km = exchange(s.sampled, occupied, nq, (s.P, s.Q))
                G_out = Jm - Km
                C = s.vectors[:, s.occupied]
                q = 2 * abs(s.kappa)
                parts += q * np.array([np.einsum("ij,ik,kj->", C, s.h, C), 0.5 * np.einsum("ij,ik,kj->", C, Jm, C),
                                       -0.5 * np.einsum("ij,ik,kj->", C, Km, C)])
                grads.append(_orbital_step(G_out - G_in, s).ravel())
                field_out.append(G_out)
            energy = float(parts.sum())
            grad = np.concatenate(grads)
            gmax = max(float(np.sqrt(np.max(np.einsum("ij,ik,kj->j", d, s.S, d)))) for d, s in
                       zip((g.reshape(s.S.shape[0], -1) for g, s in zip(grads, syms)), syms))
            change = energy - energy_old
            history.append(Iteration(it, energy, change, gmax, len(diis_F)))
            if bar is not None:
                bar.update(1)
                bar.set_postfix_str(f"E = {energy:.10f}, orbital step {gmax:.1e}")
            if abs(change) < energy_tolerance * abs(energy) and gmax < orbital_tolerance:
                converged = True
                field_in = field_out
                break
            energy_old = energy
            field_in = _next_field(field_in, field_out, grad, diis_F, diis_e, it, gmax)
        else:
            last = history[-1]
            raise ConvergenceError(
                f"the mean field of {electrons_text(electrons)} did not converge in {max_iterations} iterations "
                f"(last change {last.change:.1e} hartree, orbital step {last.step:.1e}); try guess = "
                f"{'thomas-fermi' if guess.startswith('nucleus') else 'nucleus'}, a larger basis.r_max, or check the core")
    finally:
        if bar is not None:
            bar.close()
    # The frozen potential is the one built from the orbitals of the last iteration (their
    # coefficients are kept: J, K, the exported orbitals and <r> all come from them); the
    # frozen-core Hamiltonian is the Fock matrix they built, and its roots are the orbital
    # energies.  The two sets of orbitals agree to the convergence of the iteration.
    builders = {(s.kappa, shell.n): s.vectors[:, idx].copy() for s in syms for shell, idx in zip(s.shells, s.occupied)}
    for s, G in zip(syms, field_in):
        _diagonalise(s, s.h + G, c, r, w, V_local)
    energies = {(s.kappa, shell.n): float(s.energies[idx]) for s in syms for shell, idx in zip(s.shells, s.occupied)}
    dense = {s.kappa: s for s in syms}
    orbitals = []
    for shell in electrons.core:
        coef = builders[(shell.kappa, shell.n)]
        s = dense[shell.kappa]
        Pv, Qv = s.P @ coef, s.Q @ coef
        dens = w * (Pv * Pv + Qv * Qv)
        orbitals.append(Orbital(shell.label, shell.n, shell.kappa, shell.occupancy, energies[(shell.kappa, shell.n)],
                                coef, float(dens @ r), float(dens @ (r * r))))
    return MeanField(electrons, tuple(orbitals), energy, *map(float, parts), len(history), converged,
                     time.perf_counter() - t0, tuple(history), r, w, nq, *_builders(occupied, electrons, syms),
                     J, {s.kappa: s.basis for s in syms}, guess)


def _builders(occupied, electrons, syms):
    """P and Q at the points of the orbitals that built the last Fock matrix, in config order."""
    order = []
    for s in syms:
        order.extend((s.kappa, shell.n) for shell in s.shells)
    place = {key: i for i, key in enumerate(order)}
    cols = [place[(shell.kappa, shell.n)] for shell in electrons.core]
    P = np.stack([occupied[i][1] for i in cols], axis=1)
    Q = np.stack([occupied[i][2] for i in cols], axis=1)
    return P, Q


def electrons_text(electrons) -> str:
    return " ".join(s.label for s in electrons.core)


def _bar(progress, total):
    import sys

    if progress is False or (progress is None and not sys.stderr.isatty()):
        return None
    from tqdm import tqdm

    return tqdm(total=total, desc="mean field", unit="iteration", file=sys.stderr, leave=False)


def _diagonalise(s: _Symmetry, F: np.ndarray, c: float, r, w, V_local) -> None:
    """Roots of F, and the occupied ones: the lowest of the positive branch whose balance holds."""
    system = eigen.solve(F, s.S)
    # at large c eigh alone loses the bound roots' digits: the solver's shift-and-invert and
    # inverse iteration give them back (relbasis.eigen)
    system, _ = final_roots(F, s.S, system, c, lambda v: s.sampled.evaluate(v, ("P", "Q")), w, s.basis.band_order()
                      if hasattr(s.basis, "band_order") else None)
    s.energies, s.vectors = system.energies, system.vectors
    candidates = np.flatnonzero(system.energies > -c * c)
    need = len(s.shells)
    look = candidates[: need + 4]
    Pv, Qv, DPv = s.P @ s.vectors[:, look], s.Q @ s.vectors[:, look], s.DP @ s.vectors[:, look]
    resid = balance_residual(Qv, DPv, s.energies[look], np.broadcast_to(V_local, r.shape), w, c)
    good = look[resid < SPURIOUS_RESIDUAL]
    if good.size < need:
        raise ConvergenceError(f"kappa {s.kappa:+d}: only {good.size} of the {need} core orbitals are bound "
                               "states of the basis; enlarge the basis or check the core")
    s.occupied = good[:need]
    # sign convention: P > 0 near the origin
    for i in s.occupied:
        Pi = s.P @ s.vectors[:, i]
        big = np.flatnonzero(np.abs(Pi) > 1e-3 * np.max(np.abs(Pi)))
        if big.size and Pi[big[0]] < 0:
            s.vectors[:, i] = -s.vectors[:, i]


def _orbital_step(dG: np.ndarray, s: "_Symmetry") -> np.ndarray:
    """The first-order change of the occupied orbitals that F_out - F_in = dG asks for,

        delta c_a = sum_v c_v <v|dG|a> / (eps_a - eps_v)        (v: every unoccupied root),

    a (basis x occupied) matrix (Rayleigh–Schrodinger perturbation theory of the orbitals;
    common practice).  It does not depend on the signs or the mixing of the virtual roots, which
    change between iterations (DIIS needs error vectors of one fixed space), and it weighs the
    occupied–virtual block <v|dG|a> by 1/gap: the high roots of the pseudo-continuum and of the
    negative branch, whose vectors carry eigh's rounding (1e-16 of c/r_min, 2c^2), count as
    little as they change the orbitals.  Its S-norm is the change of each orbital.
    """
    occ = s.occupied
    virt = np.setdiff1d(np.arange(s.energies.size), occ)
    Cv = s.vectors[:, virt]
    block = Cv.T @ (dG @ s.vectors[:, occ])
    gap = s.energies[occ][None, :] - s.energies[virt][:, None]
    return Cv @ (block / gap)


def _grid_orbitals(syms) -> tuple[np.ndarray, np.ndarray]:
    P = np.concatenate([s.P @ s.vectors[:, s.occupied] for s in syms], axis=1)
    Q = np.concatenate([s.Q @ s.vectors[:, s.occupied] for s in syms], axis=1)
    return P, Q


def _occupancies(syms) -> np.ndarray:
    return np.concatenate([np.full(len(s.shells), 2 * abs(s.kappa), dtype=float) for s in syms])


def _occupied_list(syms, Pg, Qg):
    kap = [s.kappa for s in syms for _ in s.shells]
    return [(k, Pg[:, i], Qg[:, i]) for i, k in enumerate(kap)]


def _next_field(field_in, field_out, grad, diis_F, diis_e, it, step=0.0):
    """The mean-field part G = J - K of the next Fock matrix: damped mixing in the first
    iterations, then Pulay's DIIS on the orbital steps.  Only G is mixed, never h: the
    kinetic and rest-mass entries reach c/r_min and 2c^2, and a combination sum c_i h with
    sum c_i = 1 would leave their rounding, 1e-16 |h|, in F."""
    if it <= DAMPED or (step > DIIS_START and not diis_F):
        return [DAMPING * a + (1 - DAMPING) * b for a, b in zip(field_in, field_out)]
    new_fock = field_out
    diis_F.append(new_fock)
    diis_e.append(grad)
    if len(diis_F) > DIIS_SIZE:
        diis_F.pop(0)
        diis_e.pop(0)
    m = len(diis_F)
    B = -np.ones((m + 1, m + 1))
    B[m, m] = 0.0
    E = np.stack(diis_e)
    B[:m, :m] = E @ E.T
    rhs = np.zeros(m + 1)
    rhs[m] = -1.0
    scale = np.max(np.abs(np.diag(B[:m, :m])))
    if scale > 0:
        B[:m, :m] /= scale
    try:
        coef = np.linalg.lstsq(B, rhs, rcond=None)[0][:m]
    except np.linalg.LinAlgError:
        return new_fock
    return [sum(ci * F[k] for ci, F in zip(coef, diis_F)) for k in range(len(new_fock))]
