"""Matrices H and S of the radial Dirac equation in a B-spline basis, per symmetry kappa.

The radial Dirac Hamiltonian for the binding energy eps = E - c^2 acts on (P, Q) as

    H (P, Q) = ( V P - c D- Q ,  c D+ P + (V - 2c^2) Q ),      D+- = d/dr +- kappa/r,

(W. R. Johnson, S. A. Blundell, J. Sapirstein, Phys. Rev. A 37, 307 (1988)).  For two-component
basis functions f, g whose components vanish at r = 0 and at the wall r_max, integrating the
D- term by parts gives the symmetric (Galerkin) form used here:

    H_fg = ∫ [V (fP gP + fQ gQ) - 2c^2 fQ gQ + c (fQ D+gP + gQ D+fP)] dr,
    S_fg = ∫ (fP gP + fQ gQ) dr.

Every basis function is one of a few *families*, each a recipe turning a B-spline B into a
pair (P, Q) and the derivative term D+P:

* ``large``  (B, 0; D+B) and ``small`` (0, B; 0): balance = "none", the same splines for both
  components, B_0 and B_{N-1} removed so that P(0) = Q(0) = 0 and P(R) = Q(R) = 0.
* ``upper``  (B, g D+B/2c; D+B) and ``lower`` (g D-B/2c, B; D+(g D-B)/2c): dual kinetic
  balance, V. M. Shabaev, I. I. Tupitsyn, V. A. Yerokhin, G. Plunien, G. Soff, Phys. Rev.
  Lett. 93, 130405 (2004), where g = 1.  Here D+D-B = B'' - kappa(kappa-1) B / r^2.

The factor g(r) = 2c^2 / (2c^2 - V_s(r)) = r / (r + Z_s/2c^2) carries the singular part
V_s = -Z_s/r of the potential (Z_s = Z for a point nucleus, 0 for finite nuclei, so that g = 1
and the scheme is the published one).  It is our addition, made for the point nucleus: within
r < Z/2c^2 the Coulomb potential outweighs 2c^2, the plain balance D-B/2c gives the ``lower``
functions a large component far too big there, and its potential energy -Z/r P^2 pulls one
intruder root per kappa = -1 into the gap between the continua (measured: for Z = 26 with 80
order-10 splines an extra root at eps = -25045 hartree, below 1s at -341).  With g the exact
zero-energy relation Q = c D+P / (2c^2 - V) of the Coulomb problem is kept at small r, the
intruder is gone for every Z and kappa we tried, and g -> 1 where |V| << 2c^2.

With the Dirichlet wall both components of every function vanish at both ends, so that the
symmetric form is the true matrix of H: for DKB, B_{N-1} and B_{N-2} (the only splines with B or
B' non-zero at r_max) are removed, for the plain basis B_{N-1}.  With the bag wall no spline is
removed at r_max and a boundary term makes P(R) = -Q(R) the natural boundary condition
(:meth:`DiracBasis.wall_matrix`; the B-spline work of W. R. Johnson, S. A. Blundell,
J. Sapirstein, Phys. Rev. A 37, 307 (1988), uses a condition of this kind at the cavity wall).  At the origin B_0 is always removed; B_1 ~ r gives D+-B_1(0) =
(1 +- kappa) B_1'(0), so with g(0) = 1 it is kept in ``upper`` only for kappa = -1 and in
``lower`` only for kappa = +1, while with g(0) = 0 (point nucleus) it is kept in both.  With
these choices every integrand on the first knot interval is regular, even for V = -Z/r.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property

import functools

import numpy as np
from scipy import sparse

from .bspline import BSplineBasis, QuadratureTable, exponential_knots, knots_from_breakpoints, log_linear_knots
from .errors import InputError
from .sampling import channel_names

from .vocabulary import BALANCES, WALLS  # noqa: E402,F401  (the config vocabulary)
FAMILY_KINDS = {"none": ("large", "small"), "dkb": ("upper", "lower")}
"""The function families of each balance, in the order of the rows of H (the exported file records them)."""


@dataclass(frozen=True)
class Family:
    """One kind of two-component basis function built from the splines ``splines``."""

    kind: str  # "large", "small", "upper" or "lower"
    splines: np.ndarray
    balance_radius: float = 0.0  # Z_s / 2c^2 of the factor g(r) = r / (r + Z_s/2c^2)

    def channels(self, b: np.ndarray, r: np.ndarray, kappa: int, c: float, index: np.ndarray):
        """(P, Q, D+P, D-Q) of the family's functions from spline derivatives b[0..2] at radii r.

        ``b`` has shape (3, ..., n) with the points along the middle axes, ``r`` broadcasts
        against ``b[0]`` once a trailing axis is added, and ``index`` (broadcasting against
        ``b[0]``) gives the spline index of each column.  D-Q enters only the diagnostics.
        """
        r = r[..., None]
        B, dB, d2B = b[0], b[1], b[2]
        a = self.balance_radius
        g, dg = (r / (r + a), a / (r + a) ** 2) if a > 0 else (1.0, 0.0)
        zero = np.zeros_like(B)
        if self.kind == "large":
            return B, zero, dB + kappa * B / r, zero
        if self.kind == "small":
            return zero, B, zero, dB - kappa * B / r
        if self.kind == "upper":
            dplus = dB + kappa * B / r
            dminus_dplus = d2B - kappa * (kappa + 1) * B / r**2
            return B, g * dplus / (2 * c), dplus, (dg * dplus + g * dminus_dplus) / (2 * c)
        if self.kind == "lower":
            dminus = dB - kappa * B / r
            dplus_dminus = d2B - kappa * (kappa - 1) * B / r**2
            return g * dminus / (2 * c), B, (dg * dminus + g * dplus_dminus) / (2 * c), dminus
        raise AssertionError(self.kind)


def families(balance: str, kappa: int, n_splines: int, point_charge: float = 0.0, c: float = 1.0,
             wall: str = "dirichlet") -> tuple[Family, ...]:
    """The function families of a balance scheme, with the boundary conditions applied.

    ``point_charge`` is Z_s, the charge of a point-Coulomb singularity of the potential (Z for
    a point nucleus, 0 otherwise); it sets the DKB factor g(r) = r / (r + Z_s/2c^2).  With
    ``wall = "bag"`` no spline is removed at r_max: the bag condition enters as a boundary
    term of H instead (:meth:`DiracBasis.wall_matrix`).
    """
    if wall not in WALLS:
        raise InputError(f"basis.wall = {wall!r}: valid are {', '.join(WALLS)}")
    if balance == "none":
        keep = np.arange(1, n_splines - (1 if wall == "dirichlet" else 0))
        return Family("large", keep), Family("small", keep)
    if balance == "dkb":
        a = point_charge / (2 * c * c)
        singular = a > 0
        end = n_splines - (2 if wall == "dirichlet" else 0)
        upper = np.arange(1 if (kappa == -1 or singular) else 2, end)
        lower = np.arange(1 if (kappa == +1 or singular) else 2, end)
        return Family("upper", upper, a), Family("lower", lower, a)
    raise InputError(f"basis.balance = {balance!r}: valid for B-splines are {', '.join(BALANCES)}")


@dataclass(frozen=True)
class DiracBasis:
    """The two-component basis of one symmetry kappa: the families over one B-spline set."""

    splines: BSplineBasis
    kappa: int
    balance: str
    c: float
    families: tuple[Family, ...]
    wall: str = "dirichlet"

    @classmethod
    def build(cls, splines: BSplineBasis, kappa: int, balance: str, c: float, point_charge: float = 0.0,
              wall: str = "dirichlet") -> "DiracBasis":
        """The basis of symmetry kappa; ``point_charge`` = Z for a point nucleus, else 0."""
        if isinstance(kappa, bool) or int(kappa) != kappa or kappa == 0:
            raise InputError(f"kappa = {kappa!r}: must be a non-zero integer (kappa = -(l+1) or +l)")
        fams = families(balance, int(kappa), splines.size, point_charge, c, wall)
        return cls(splines, int(kappa), balance, c, fams, wall)

    @property
    def size(self) -> int:
        """Number of two-component basis functions (rows of H)."""
        return sum(f.splines.size for f in self.families)

    @property
    def family_sizes(self) -> tuple[int, ...]:
        return tuple(f.splines.size for f in self.families)

    def band_order(self) -> np.ndarray:
        """Permutation of the rows of H that sorts the functions by spline index (H, S banded)."""
        centre = np.concatenate([f.splines for f in self.families])
        return np.argsort(centre, kind="stable")

    def _global_index(self) -> list[np.ndarray]:
        """Per family: map spline index -> row of H (or -1 where the spline is removed)."""
        maps, offset = [], 0
        for f in self.families:
            g = np.full(self.splines.size, -1)
            g[f.splines] = offset + np.arange(f.splines.size)
            maps.append(g)
            offset += f.splines.size
        return maps

    def components(self, r: np.ndarray):
        """Dense (P, Q, D+P, D-Q) of every basis function at radii r: four (len(r), size) arrays."""
        r = np.asarray(r, dtype=float)
        b = self.splines.evaluate(r, 2)
        parts = [f.channels(b[:, :, f.splines], r, self.kappa, self.c, f.splines[None, :]) for f in self.families]
        return tuple(np.concatenate([p[i] for p in parts], axis=1) for i in range(4))

    def wall_matrix(self) -> np.ndarray:
        """Boundary term of the bag wall, added to H (zero for the Dirichlet wall).

        The symmetric weak form below (derivative on P only) has the natural boundary
        condition Q(R) = 0.  Writing it as the form with derivatives on both components,
        (c/2) int (Q D+P - P D-Q), plus (c/2)(P(R)^2 - Q(R)^2), the natural condition becomes
        (P + Q)(R) = 0, the MIT bag condition P(R) = -Q(R) in our sign convention
        (docs/audit.md).  Per pair of functions that is
        H_fg += (c/2) [fP gP - fQ gQ - fP gQ - fQ gP] at r = R.
        """
        if self.wall == "dirichlet":
            return np.zeros((self.size, self.size))
        P, Q = (x[0] for x in self.components(np.array([self.splines.r_max]))[:2])
        return 0.5 * self.c * (np.outer(P, P) - np.outer(Q, Q) - np.outer(P, Q) - np.outer(Q, P))

    def _local(self, table: QuadratureTable):
        """(P, Q, D+P) per interval, (n_int, nq, slots), and the row of H of each slot (-1: removed)."""
        k = self.splines.order
        cols = table.first[:, None] + np.arange(k)[None, :]  # spline index of each local slot
        chans, index = [], []
        for f, g in zip(self.families, self._global_index()):
            chans.append(f.channels(table.values, table.r, self.kappa, self.c, cols[:, None, :]))
            index.append(g[cols])
        P, Q, DP, DQ = (np.concatenate([ch[i] for ch in chans], axis=-1) for i in range(4))
        return P, Q, DP, DQ, np.concatenate(index, axis=1)

    def local_channels(self, table: QuadratureTable) -> "LocalChannels":
        """(P, Q, D+P, D-Q) of the functions on every interval of the table, for reuse."""
        return self.sample(table)

    def sample(self, table: QuadratureTable) -> "LocalChannels":
        """The functions on the quadrature table (the family's sampled form, for the Hamiltonian
        terms and for evaluating roots)."""
        P, Q, DP, DQ, idx = self._local(table)
        return LocalChannels(P, Q, DP, DQ, idx, table.r.ravel(), table.w.ravel(), self.size, self.kappa)

    def kinetic_and_overlap(self, local: "LocalChannels"):
        """T (kinetic and rest mass, with the wall term) and S, dense (size x size).

        Local assembly: on each knot interval only k splines per family are non-zero, so the
        integrals are (2k x 2k) blocks per interval, summed into the global matrices.
        """
        P, Q, DP, idx = local.P, local.Q, local.DP, local.index
        w = local.w.reshape(P.shape[:2])[..., None]
        wP, wQ = w * P, w * Q
        QQ = _bt(wQ, Q)  # in S and in the rest-mass term
        S_loc = _bt(wP, P) + QQ
        cross = _bt(wQ, DP)
        T_loc = -2 * self.c**2 * QQ + self.c * (cross + cross.transpose(0, 2, 1))
        n = self.size
        return _scatter(T_loc, idx, n, local.slots_for(n)) + self.wall_matrix(), _scatter(S_loc, idx, n, local.slots_for(n))

    def local_matrix(self, term, local: "LocalChannels") -> np.ndarray:
        """int V (fP gP + fQ gQ) dr of a local term, on the quadrature (interval by interval)."""
        return self._potential(term.potential(local.r), local)

    def _potential(self, values, local: "LocalChannels") -> np.ndarray:
        """int V (fP gP + fQ gQ) dr for V given at the quadrature points (any shape of that size)."""
        V = np.asarray(values, dtype=float).reshape(local.P.shape[:2])[..., None]
        w = local.w.reshape(local.P.shape[:2])[..., None]
        V_loc = _bt(V * w * local.P, local.P) + _bt(V * w * local.Q, local.Q)
        return _scatter(V_loc, local.index, self.size, local.slots_for(self.size))

    def matrices(self, table: QuadratureTable, potential: np.ndarray, local: LocalChannels | None = None):
        """H and S (dense, size x size) with a local potential V given at the table's points,
        shape (n_int, nq): T + V (:mod:`relbasis.hamiltonian` assembles the general sum)."""
        local = local or self.sample(table)
        T, S = self.kinetic_and_overlap(local)
        return T + self._potential(potential, local), S


@dataclass(frozen=True)
class LocalChannels:
    """P, Q, D+P of every local function slot, (n_int, nq, slots), and the slot -> row map."""

    P: np.ndarray
    Q: np.ndarray
    DP: np.ndarray
    DQ: np.ndarray
    index: np.ndarray  # (n_int, slots), -1 where the spline is removed
    r: np.ndarray | None = None  # the quadrature points, flat (n_int * nq)
    w: np.ndarray | None = None  # and their weights
    size: int | None = None  # rows of H
    kappa: int | None = None  # the symmetry of the functions

    @property
    def panel_points(self) -> int:
        """Quadrature points per knot interval (the points are panels of this many)."""
        return int(self.P.shape[1])

    @functools.cached_property
    def _gather(self):
        """Sparse (size x slots of all intervals) matrix summing interval slots into rows of H."""
        n_int, _, slots = self.P.shape
        flat = self.index.ravel()
        keep = np.flatnonzero(flat >= 0)
        return sparse.csr_matrix((np.ones(keep.size), (flat[keep], keep)), shape=(self.size, n_int * slots))

    def project(self, fP: np.ndarray, fQ: np.ndarray) -> np.ndarray:
        """int (P_i fP + Q_i fQ) dr for every basis function i and every column of fP, fQ
        (functions given at the quadrature points, (points, m)): (size, m), interval by interval."""
        n_int, nq, slots = self.P.shape
        w = self.w.reshape(n_int, nq, 1)
        m = fP.shape[1]
        blocks = _bt(w * self.P, fP.reshape(n_int, nq, m)) + _bt(w * self.Q, fQ.reshape(n_int, nq, m))
        return np.asarray(self._gather @ blocks.reshape(n_int * slots, m))

    @cached_property
    def slots(self) -> tuple[np.ndarray, np.ndarray]:
        """Where the local blocks go in the (size, size) matrices (:func:`_slots`), shared by
        T, S and every potential term of this basis."""
        return _slots(self.index, self.size)

    def slots_for(self, n: int):
        """:attr:`slots` for matrices of n rows (None if this sampling was made for another size)."""
        return self.slots if self.size == n else None

    def dense(self, channel: str, size: int | None = None) -> np.ndarray:
        """One component ("P", "Q", "DP", "DQ"; or the letters "D", "M" for the last two) as a
        dense (n_int * nq, size) matrix of the basis functions."""
        size = self.size if size is None else size
        M = getattr(self, channel_names(channel)[0])
        n_int, nq, slots = M.shape
        rows = np.broadcast_to(np.arange(n_int * nq).reshape(n_int, nq, 1), M.shape)
        cols = np.broadcast_to(self.index[:, None, :], M.shape)
        keep = cols >= 0
        # a sum per (point, function), as np.add.at would make it, in one pass
        flat = np.bincount(rows[keep] * size + cols[keep], weights=M[keep], minlength=n_int * nq * size)
        return flat.reshape(n_int * nq, size)

    def evaluate(self, coefficients: np.ndarray, channels=("P", "Q", "DP")):
        """Components (names "P", "Q", "DP" = D+P, "DQ" = D-Q, or a string of the letters
        P, Q, D, M) of the functions with the given coefficients (rows x m): (n_int * nq, m) each."""
        m = coefficients.shape[1]
        coef = np.where((self.index >= 0)[..., None], coefficients[np.maximum(self.index, 0)], 0.0)
        shape = (self.P.shape[0] * self.P.shape[1], m)
        return tuple(np.matmul(getattr(self, ch), coef).reshape(shape) for ch in channel_names(channels))


def _bt(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Batched a^T b over the quadrature axis: (m, q, i) x (m, q, j) -> (m, i, j)."""
    return np.matmul(a.transpose(0, 2, 1), b)


def _slots(idx: np.ndarray, n: int) -> tuple[np.ndarray, np.ndarray]:
    """(mask, flat) of :func:`_scatter`: the local slot pairs that are kept, and their index in
    the flattened (n, n) matrix."""
    ia = idx[:, :, None]
    ib = idx[:, None, :]
    mask = (ia >= 0) & (ib >= 0)
    return mask, (ia * n + ib)[mask]


def _scatter(local: np.ndarray, idx: np.ndarray, n: int, slots=None) -> np.ndarray:
    """Sum local blocks local[m, a, b] into the global (n, n) matrix at rows idx[m, a], cols idx[m, b].

    ``slots``: :func:`_slots` of (idx, n), computed once for the several matrices of one basis."""
    mask, flat = _slots(idx, n) if slots is None else slots
    out = np.bincount(flat, weights=local[mask], minlength=n * n)
    return out.reshape(n, n)


@dataclass(frozen=True)
class SplineSet:
    """Everything one solve shares across symmetries for the B-spline family: the spline set,
    its quadrature tables and how the pipeline of :mod:`relbasis.solver` treats it."""

    splines: BSplineBasis
    table: QuadratureTable
    coarse: QuadratureTable  # one point per interval: enough to count nodes and fix signs
    balance: str
    c: float
    point_charge: float  # Z for a point nucleus (the balance factor g), else 0
    wall: str = "dirichlet"
    threshold: float | None = None

    @property
    def grid(self) -> tuple[np.ndarray, np.ndarray]:
        return self.table.r.ravel(), self.table.w.ravel()

    @property
    def wall_radius(self) -> float:
        return self.splines.r_max

    @property
    def panel_points(self) -> int:
        """Gauss–Legendre points per knot interval: the grid is panels of this many points."""
        return int(self.table.r.shape[1])

    origin_series = True
    """The first knot interval resolves the r^gamma behaviour of a point nucleus, so the integrals
    may use the origin series there (relbasis.integrals)."""

    def build(self, kappa: int) -> DiracBasis:
        return DiracBasis.build(self.splines, kappa, self.balance, self.c, self.point_charge, self.wall)

    def sample(self, basis: DiracBasis) -> "LocalChannels":
        return basis.sample(self.table)

    def node_matrix(self, basis: DiracBasis, sampled) -> np.ndarray:
        """P of every function on the coarse table (points x size), for the node count and signs."""
        return basis.sample(self.coarse).dense("P")

    def band_order(self, basis: DiracBasis):
        return basis.band_order()

    def record(self) -> tuple[dict, dict]:
        """(attributes, arrays) of the exported file that rebuild the spline set: the order and
        the knots (docs/file-format.md)."""
        return {"order": self.splines.order}, {"knots": self.splines.knots}

    def record_kappa(self, basis: DiracBasis) -> tuple[dict, dict]:
        """(attributes, arrays) of one symmetry: its function families and their splines."""
        arrays = {"family_kinds": np.array([f.kind for f in basis.families], dtype=object)}
        for i, f in enumerate(basis.families):
            arrays[f"family_{i}_splines"] = f.splines
        return {"balance_radius": basis.families[0].balance_radius}, arrays

    def cause(self) -> str:
        """What a non-finite number of a solve points to (relbasis.finite)."""
        t = self.splines.knots
        r_min = float(t[t > 0][0]) if np.any(t > 0) else float("nan")
        return (f"the basis (r_min = {r_min:g}, r_max = {self.splines.r_max:g} bohr, {self.splines.size} splines, "
                f"c = {self.c:g}) lies outside what double precision represents; see the valid ranges in docs/config.md")


FERMI_SURFACE_KNOTS = (-6, -4, -2, -1, 0, 1, 2, 4, 6)
"""Breakpoints at c + k a (k listed) for a Fermi nucleus: one knot per skin width otherwise."""


def build_splines(config, nucleus) -> BSplineBasis:
    """The B-spline set of a resolved config (a relbasis.config.Config), with knots where the
    nucleus (a relbasis.nucleus.Nucleus) needs them.

    Uniform sphere: the potential has a jump in V'' at its radius R, so P and Q have a jump in
    their third derivative there; a knot of multiplicity k - 3 at R (C^2 splines) lets the basis
    follow it: the Z = 92 levels improve from 1e-9 to 1e-14 against the shooting solution.
    Fermi nucleus: breakpoints across the surface, at c + k a for k in FERMI_SURFACE_KNOTS; the
    levels do not need them, but the hyperfine integral, weighted by 1/r^2, converges with size
    only with them (Z = 92: to 1e-10 instead of stalling near 1e-7; docs/integrals.md).
    In both cases the sequence is built with correspondingly fewer splines, so that ``size``
    keeps its meaning.
    """
    b = config.basis
    if isinstance(b.knots, tuple):
        return BSplineBasis(knots_from_breakpoints(b.knots, b.order), b.order)
    R = nucleus.radius_bohr
    sphere = nucleus.model == "sphere" and b.r_min < R < b.r_max
    surface = []
    if nucleus.model == "fermi" and nucleus.fermi_c_bohr is not None:
        c, a = nucleus.fermi_c_bohr, nucleus.fermi_a_bohr
        surface = [c + k * a for k in FERMI_SURFACE_KNOTS if b.r_min < c + k * a < b.r_max]
    extra = max(b.order - 4, 0) if sphere else len(surface)
    if b.size - extra < b.order + 4:
        extra, sphere, surface = 0, False, []

    def base(size):
        if b.knots == "exponential":
            return exponential_knots(size, b.order, b.r_min, b.r_max)
        return log_linear_knots(size, b.order, b.r_min, b.r_max, b.r_scale)

    t = base(b.size - extra)
    if sphere and extra:
        x = np.unique(t)
        j = int(np.argmin(np.abs(x[1:-1] - R))) + 1
        x[j] = R
        t = np.sort(np.concatenate([knots_from_breakpoints(np.unique(x), b.order), np.full(extra, R)]))
    elif surface:
        for _ in range(2):  # a surface point on an existing knot adds no spline: make up for it once
            merged = knots_from_breakpoints(np.unique(np.concatenate([np.unique(t), surface])), b.order)
            missing = b.size - (merged.size - b.order)
            if missing == 0:
                break
            t = base(t.size - b.order + missing)
        t = merged
    return BSplineBasis(t, b.order)
