"""The generalized symmetric eigenproblem H c = eps S c, with every root kept.

Four steps, each for a reason measured on the B-spline Dirac matrices:

1. *Scaling.*  The basis functions are rescaled so that diag(S) = 1 (a congruence, which leaves
   the roots unchanged); the raw S spans many decades because the knots do.
2. *Full solve.*  ``scipy.linalg.eigh`` returns all roots and S-orthonormal vectors.  Its roots
   carry an absolute error of up to machine epsilon times the largest |root|, which with knots
   close to the origin is 1e9..1e12 hartree at c = 1/alpha, and grows with c (the largest roots
   go as c/r_min and -2c^2): 1e13 at c = 1e5, 1e14 at c = 1e6, where it exceeds the spacing of
   the bound levels.  Its vectors are better for a root apart from the others, so every root
   is replaced by the Rayleigh quotient of its vector, with an error estimate (:func:`_rayleigh`).
3. *Shift and invert* (:func:`shift_invert`; the solver calls it only where a root has lost
   digits and is too close to its neighbours for step 4, i.e. at large c).  The roots near the
   bound-state window are found again from the full eigendecomposition of
   M = L^T (H - sigma S)^(-1) L, S = L L^T, whose eigenvalues are mu = 1/(eps - sigma): with
   sigma below the lowest bound root, eigh's error, machine epsilon times max |mu|, gives eps
   to about machine epsilon times (eps - sigma)^2 / min |eps - sigma|, i.e. to 1e-16..1e-15 of
   the bound levels whatever c.  The roots far from sigma (both continua at large |eps|) keep
   the values of step 2, which are better there (common practice of shift-and-invert spectral
   transformations, e.g. B. N. Parlett, *The Symmetric Eigenvalue Problem*, SIAM 1998, from memory).
4. *Refinement* of chosen roots by shifted inverse iteration,
   ``(H - sigma S) x_{k+1} = S x_k`` with sigma the current root, followed by the Rayleigh
   quotient eps = x^T H x / x^T S x.  Each step shrinks the error of the vector by the ratio of
   |eps - sigma| to the distance to the next root, so one step suffices once sigma is close
   (B. N. Parlett, op. cit., ch. 4; common practice).

Every :class:`Eigensystem` carries ``error``, an estimate of the error of each root (hartree)
from rounding and from the eigensolver: the Kato–Temple bound |r|^2/gap of the residual r
(or |r| where the root is not separated) plus the rounding of the Rayleigh quotient after steps
2 and 4, EPS max|mu| (eps - sigma)^2 for the roots replaced in step 3.  It says nothing about
the basis-truncation error; the solver flags the roots whose estimate is large
(:mod:`relbasis.precision`).
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace

import numpy as np
import scipy.linalg as sl

_REFINE_STEPS = 1
EPS = float(np.finfo(float).eps)


DEFAULT_THRESHOLD = 1e-12
"""Canonical orthogonalisation keeps eigenvectors of the scaled S above this share of its largest."""


@dataclass(frozen=True)
class Eigensystem:
    """All roots (ascending) and S-normalised vectors (columns) of one symmetry.

    ``dropped`` counts the combinations removed by canonical orthogonalisation (0 when the
    generalized problem was solved directly); ``condition`` is the condition number of the
    scaled overlap matrix when it was computed (else NaN); ``error`` estimates the absolute
    rounding error of each root (module docstring).
    """

    energies: np.ndarray
    vectors: np.ndarray
    refined: np.ndarray  # bool mask of the roots improved by inverse iteration
    dropped: int = 0
    condition: float = float("nan")
    transform: np.ndarray | None = field(default=None, repr=False)  # T: vectors = T @ y (canonical case)
    error: np.ndarray | None = field(default=None, repr=False)  # rounding-error estimate per root (hartree)


def solve(H: np.ndarray, S: np.ndarray, threshold: float | None = None) -> Eigensystem:
    """All roots and vectors of H c = eps S c (steps 1 and 2 above).

    With ``threshold`` given, or when S is numerically not positive definite, the problem is
    solved by canonical orthogonalisation (P.-O. Löwdin, Adv. Quantum Chem. 5, 185 (1970),
    from memory): with S' = U s U^T the scaled overlap, the combinations X = U_k s_k^(-1/2) with
    s_k > threshold * max(s) span the basis, and X^T H' X y = eps y is an ordinary symmetric
    problem of their number of rows.  The others are dropped and counted.
    """
    d = 1.0 / np.sqrt(np.diag(S))
    Hs = H * d[:, None] * d[None, :]
    Ss = S * d[:, None] * d[None, :]
    if threshold is None:
        try:
            energies, vectors = sl.eigh(Hs, Ss, driver="gvd", check_finite=False)
            energies, vectors, error = _rayleigh(Hs, Ss, vectors, normalised=True)
            return Eigensystem(energies, vectors * d[:, None], np.zeros(energies.size, dtype=bool), error=error)
        except sl.LinAlgError:
            threshold = DEFAULT_THRESHOLD
    s, U = sl.eigh(Ss, check_finite=False)
    keep = s > threshold * s[-1]
    X = U[:, keep] / np.sqrt(s[keep])
    Hr = X.T @ Hs @ X
    energies, y = sl.eigh(Hr, check_finite=False, driver="evd")
    energies, y, error = _rayleigh(Hr, None, y)
    condition = float(s[-1] / s[0]) if s[0] > 0 else float("inf")
    T = X * d[:, None]
    return Eigensystem(energies, T @ y, np.zeros(energies.size, dtype=bool),
                       int(np.count_nonzero(~keep)), condition, T, error)


NORM_TOLERANCE = 1e-6
"""eigh's vectors must be S-normalised to this.  With a numerically singular S (smallest
eigenvalue of the scaled S at the rounding level, e.g. -3e-16 in a bag of radius 0.01 bohr) the
Cholesky factorisation inside eigh may still succeed, depending on the LAPACK build, and return
vectors with v^T S v far from 1, even negative; the problem is then solved by canonical
orthogonalisation instead."""


def _rayleigh(Hm: np.ndarray, Sm: np.ndarray | None, V: np.ndarray, normalised: bool = False):
    """Rayleigh quotients of eigh's vectors and an error estimate per root (step 2).

    eigh's roots are accurate to machine epsilon times the largest |root| only, its vectors
    much better for a root well apart from the others: the Rayleigh quotient
    eps = v^T H v / v^T S v is then correct to second order in the error of v.  The estimate
    is the Kato–Temple bound |r|^2 / gap for a root separated from its neighbours by more than
    its residual r = H v - eps S v (else |r|, the residual bound), plus the rounding of the
    quotient itself, machine epsilon times |v|^T |H| |v| (T. Kato, J. Phys. Soc. Japan 4, 334
    (1949); B. N. Parlett, op. cit., ch. 10, from memory).  The Euclidean norm of r in the
    scaled basis stands in for its S^-1 norm.  With ``normalised`` the vectors must come
    S-normalised (from eigh): a LinAlgError if not (:data:`NORM_TOLERANCE`).
    """
    HV = Hm @ V
    SV = V if Sm is None else Sm @ V
    norm = np.einsum("ij,ij->j", V, SV)
    if normalised and not np.all(np.abs(norm - 1.0) < NORM_TOLERANCE):
        raise sl.LinAlgError("eigh's vectors are not S-normalised: the overlap is numerically singular")
    energies = np.einsum("ij,ij->j", V, HV) / norm
    HV -= SV * energies[None, :]  # the residuals, in place
    resid = np.sqrt(np.einsum("ij,ij->j", HV, HV) / norm)
    rounding = _rounding(Hm, V) / norm
    if np.any(np.diff(energies) < 0):  # eigh's order, unless the quotients cross
        order = np.argsort(energies, kind="stable")
        energies, resid, rounding, V, norm = energies[order], resid[order], rounding[order], V[:, order], norm[order]
    gaps = np.diff(energies)
    gap = np.minimum(np.concatenate([[np.inf], gaps]), np.concatenate([gaps, [np.inf]]))
    with np.errstate(divide="ignore", invalid="ignore"):
        bound = np.where(gap > resid, np.minimum(resid, resid**2 / gap), resid)
    return energies, V / np.sqrt(norm), bound + rounding


def _kato_temple(r: np.ndarray, norm: float, energies: np.ndarray, j: int) -> float:
    """min(|r|, |r|^2/gap) for the residual r of root j (see :func:`_rayleigh`)."""
    resid = float(np.sqrt(r @ r / norm))
    if energies.size < 2:
        return resid
    dist = np.abs(energies - energies[j])
    dist[j] = np.inf
    gap = float(np.min(dist))
    return resid if gap <= resid else min(resid, resid * resid / gap)


def _rounding(H: np.ndarray, V: np.ndarray) -> np.ndarray:
    """Rounding of v^T H v per column v of V: machine epsilon times the root-sum-square of the
    terms v_i H_ij v_j (rounding errors of independent sign add like a random walk; the
    worst-case sum of |v_i H_ij v_j| overstates the measured error by orders of magnitude in
    the canonical Gaussian bases, where it flagged levels correct to 3e-11)."""
    V2 = V * V
    return EPS * np.sqrt(np.einsum("ij,ij->j", V2, (H * H) @ V2))


def _full_solve_error(energies: np.ndarray) -> np.ndarray:
    """Normwise rounding-error estimate of eigh's roots: machine epsilon times the largest |root|."""
    scale = float(np.max(np.abs(energies))) if energies.size else 0.0
    return np.full(energies.size, EPS * scale)


def shift_invert(system: Eigensystem, H: np.ndarray, S: np.ndarray, floor: float) -> Eigensystem:
    """The roots near the bound-state window again, by shift and invert (step 3).

    ``floor`` is the edge of the negative continuum (-2c^2 for binding energies): sigma is put
    below the lowest root in the upper half of the gap (eps > floor/2, i.e. E > 0; at large c
    eigh's error can lift roots of the negative continuum above the floor itself), by the
    distance of that root from zero (at most half its distance from the floor).  With M = L^T (H - sigma S)^(-1) L and S = L L^T (LU and Cholesky
    factorisations in the scaled basis, or in the span kept by canonical orthogonalisation),
    eigh(M) gives mu = 1/(eps - sigma) with an absolute error of about machine epsilon times
    max |mu|, hence eps with an error e_si = EPS max|mu| (eps - sigma)^2.  The roots with
    e_si below eigh's own estimate (an interval around sigma) take the new values and
    vectors x = (H - sigma S)^(-1) L z / mu; the interval is narrowed until the two solves
    agree on the number of roots in it.  The new vectors are kept and the others are made
    S-orthogonal to them (:func:`_reorthogonalise`).
    """
    e = system.energies
    n = e.size
    err = system.error if system.error is not None else _full_solve_error(e)
    safe = e[e > floor + max(4 * float(err.max()), 0.5 * abs(floor))]  # clear of the continuum edge
    if n == 0 or safe.size == 0:
        return replace(system, error=err)
    low = float(safe.min())
    step = max(abs(low), 16 * float(err.max()), np.finfo(float).tiny)
    sigma = low - min(step, 0.5 * (low - floor))
    if system.transform is not None:
        T = system.transform
        Hs, Ss = T.T @ H @ T, T.T @ S @ T
    else:
        d = 1.0 / np.sqrt(np.diag(S))
        Hs, Ss = H * d[:, None] * d[None, :], S * d[:, None] * d[None, :]
    try:
        L = sl.cholesky(Ss, lower=True, check_finite=False)
        lu = sl.lu_factor(Hs - sigma * Ss, check_finite=False)
    except (sl.LinAlgError, ValueError):
        return replace(system, error=err)
    W = sl.lu_solve(lu, L, check_finite=False)
    M = L.T @ W
    mu, z = sl.eigh(0.5 * (M + M.T), check_finite=False, driver="evd")
    with np.errstate(divide="ignore"):
        eps_si = sigma + 1.0 / mu
    if not np.all(np.isfinite(eps_si[mu != 0])):
        return replace(system, error=err)
    sorter = np.argsort(eps_si)
    eps_si, mu, z = eps_si[sorter], mu[sorter], z[:, sorter]
    mu_max = float(np.max(np.abs(mu)))
    # interval |eps - sigma| < R where e_si = EPS mu_max R^2 stays below eigh's normwise level
    radius = np.sqrt(EPS * float(np.max(np.abs(e))) / (EPS * mu_max))
    for _ in range(8):
        new = np.flatnonzero(np.abs(eps_si - sigma) < radius)
        old = np.flatnonzero(np.abs(e - sigma) < radius)
        if new.size == old.size:
            break
        radius *= 0.5
    else:
        return replace(system, error=err)
    if new.size == 0:
        return replace(system, error=err)
    better = EPS * mu_max * (eps_si[new] - sigma) ** 2 < err[old]  # per root: keep the better of the two
    new, old = new[better], old[better]
    if new.size == 0:
        return replace(system, error=err)
    x = (W @ z[:, new]) / mu[new]
    x /= np.sqrt(np.einsum("ij,ij->j", x, Ss @ x))
    vectors = system.vectors.copy()
    vectors[:, old] = system.transform @ x if system.transform is not None else x * d[:, None]
    energies, error, refined = e.copy(), err.copy(), system.refined.copy()
    energies[old] = eps_si[new]
    error[old] = EPS * mu_max * (eps_si[new] - sigma) ** 2
    refined[old] = True
    _reorthogonalise(vectors, S, refined)
    order = np.argsort(energies, kind="stable")
    return replace(system, energies=energies[order], vectors=vectors[:, order], refined=refined[order],
                   error=error[order])


@dataclass(frozen=True)
class _Shifted:
    """H and S scaled to diag(S) = 1 (dense, in the basis's own order) and, where the
    permutation ``perm`` makes them banded, in LAPACK band storage for the shifted
    factorisations: ab[kl + ku + i - j, j] = A[perm[i], perm[j]], kl extra rows for the fill-in."""

    d: np.ndarray  # 1/sqrt(diag S), basis order
    Hs: np.ndarray
    Ss: np.ndarray
    perm: np.ndarray
    kl: int
    ku: int
    hb: np.ndarray | None  # None: not banded enough to pay, dense LU instead
    sb: np.ndarray | None

    @classmethod
    def of(cls, H: np.ndarray, S: np.ndarray, order: np.ndarray | None) -> "_Shifted":
        n = H.shape[0]
        d = 1.0 / np.sqrt(np.diag(S))
        Hs = H * d[:, None] * d[None, :]
        Ss = S * d[:, None] * d[None, :]
        perm = np.arange(n) if order is None else np.asarray(order)
        inv = np.empty(n, dtype=int)
        inv[perm] = np.arange(n)
        i, j = np.nonzero((H != 0) | (S != 0))
        off = inv[i] - inv[j]  # row - column in the banded order
        kl = int(max(0, off.max())) if off.size else 0
        ku = int(max(0, -off.min())) if off.size else 0
        if not 3 * (kl + ku + 1) < n:
            return cls(d, Hs, Ss, perm, kl, ku, None, None)
        hb, sb = np.zeros((2, 2 * kl + ku + 1, n))
        cols = np.broadcast_to(np.arange(n), (kl + ku + 1, n))
        rows = np.arange(-ku, kl + 1)[:, None] + cols  # i = j + (band row - kl - ku)
        inside = (rows >= 0) & (rows < n)
        ri, ci = perm[rows[inside]], perm[cols[inside]]
        hb[kl:][inside] = Hs[ri, ci]
        sb[kl:][inside] = Ss[ri, ci]
        return cls(d, Hs, Ss, perm, kl, ku, hb, sb)

    def factor(self, sigma: float):
        """A solver b -> (H - sigma S)^(-1) b in the scaled basis (basis order), or None where
        the factorisation fails."""
        perm = self.perm
        if self.hb is not None:
            lu, piv, info = sl.lapack.dgbtrf(self.hb - sigma * self.sb, self.kl, self.ku, overwrite_ab=1)
            if info < 0:
                return None
            kl, ku = self.kl, self.ku

            def solve_one(b):
                out = np.empty_like(b)
                out[perm] = sl.lapack.dgbtrs(lu, kl, ku, b[perm], piv)[0]
                return out
            return solve_one
        lu, piv, info = sl.lapack.dgetrf(self.Hs - sigma * self.Ss)
        if info < 0:
            return None
        return lambda b: sl.lapack.dgetrs(lu, piv, b)[0]

    def definite(self) -> bool:
        """True if the scaled S is numerically positive definite (banded Cholesky, else dense)."""
        if self.hb is not None and self.kl == self.ku:
            return sl.lapack.dpbtrf(self.sb[self.kl + self.ku:], lower=1)[1] == 0
        return sl.lapack.dpotrf(self.Ss, lower=1)[1] == 0


def _separation(energies: np.ndarray) -> np.ndarray:
    """Distance of each root to its nearest other root (any order; inf for a single root)."""
    if energies.size < 2:
        return np.full(energies.size, np.inf)
    order = np.argsort(energies, kind="stable")
    gaps = np.diff(energies[order])
    out = np.empty(energies.size)
    out[order] = np.minimum(np.concatenate([[np.inf], gaps]), np.concatenate([gaps, [np.inf]]))
    return out


def refine(system: Eigensystem, H: np.ndarray, S: np.ndarray, which, order: np.ndarray | None = None,
           steps: int = _REFINE_STEPS, reorthogonalise: bool = True) -> Eigensystem:
    """Improve the roots ``which`` (indices or mask) by shifted inverse iteration (step 3).

    ``order`` is a permutation of the basis that makes H and S banded (B-spline functions sorted
    by their spline index); the shifted matrix is then factorised in band storage (LAPACK
    gbtrf/gbtrs), which costs O(n b^2) instead of O(n^3) per root.  Only the factorisations and
    solves go root by root; the products with H and S, the Rayleigh quotients and the estimates
    are made for all refined roots at once.  The Kato–Temple gap of a refined root is its
    distance to the nearest other root after all of them are refined.  ``reorthogonalise``
    False leaves the other vectors as they came (:func:`_reorthogonalise`; the energies are the
    same either way): for a solve whose levels alone are kept.
    """
    which = np.asarray(which)
    idx = np.flatnonzero(which) if which.dtype == bool else which.astype(int)
    if idx.size == 0:
        return system
    if system.transform is not None:
        return _refine_reduced(system, H, S, idx, steps, reorthogonalise)
    shifted = _Shifted.of(H, S, order)
    d, Hs, Ss = shifted.d, shifted.Hs, shifted.Ss
    energies = system.energies.copy()
    vectors = system.vectors.copy()
    refined = system.refined.copy()
    error = (system.error if system.error is not None else _full_solve_error(energies)).copy()
    solvers = [shifted.factor(energies[j]) for j in idx]
    X = vectors[:, idx] / d[:, None]  # scaled basis
    good = np.array([s is not None for s in solvers])
    for _ in range(steps):
        B = Ss @ X
        Y = np.zeros_like(X)
        for k, solve_one in enumerate(solvers):
            if good[k]:
                Y[:, k] = solve_one(B[:, k])
        good &= np.isfinite(Y).all(axis=0) & Y.any(axis=0)
        Y[:, ~good] = 1.0  # dropped below; keeps the arithmetic finite
        Y /= np.abs(Y).max(axis=0)  # keep y @ S @ y clear of overflow
        X = Y / np.sqrt(np.einsum("ij,ij->j", Y, Ss @ Y))
    done = idx[good]
    if done.size:
        X = X[:, good]
        HX, SX = Hs @ X, Ss @ X
        norm = np.einsum("ij,ij->j", X, SX)
        energies[done] = np.einsum("ij,ij->j", X, HX) / norm
        R = HX - SX * energies[done][None, :]
        resid = np.sqrt(np.einsum("ij,ij->j", R, R) / norm)
        gap = _separation(energies)[done]
        with np.errstate(divide="ignore", invalid="ignore"):
            error[done] = np.where(gap <= resid, resid, np.minimum(resid, resid * resid / gap))
        X2 = X * X
        # rounding of each quotient (as _rounding)
        error[done] += EPS * np.sqrt(np.einsum("ij,ij->j", X2, (Hs * Hs) @ X2)) / norm
        vectors[:, done] = X * d[:, None]
        refined[done] = True
    if reorthogonalise:
        _reorthogonalise(vectors, S, refined)
    sorter = np.argsort(energies, kind="stable")
    return Eigensystem(energies[sorter], vectors[:, sorter], refined[sorter], system.dropped, system.condition,
                       error=error[sorter])


SEEDED_STEPS = 8
"""Most inverse-iteration steps :func:`roots_near` takes from one shift."""
SEEDED_SETTLED = 0.05
""":func:`roots_near` stops once the Rayleigh quotient moves by less than this share of its
distance from the shift (or by rounding only)."""


def roots_near(H: np.ndarray, S: np.ndarray, shifts, order: np.ndarray | None = None):
    """The root of H x = eps S x nearest each shift, by inverse iteration with that shift held.

    ``(H - sigma S) x_{k+1} = S x_k`` from a flat start x_0, with the Rayleigh quotient
    rho_k = x^T H x / x^T S x after each step: the component of the root nearest sigma grows
    against each other root's by |eps' - sigma| / |eps - sigma| per step (B. N. Parlett, op.
    cit., ch. 4), so the error of rho_k falls by the square of that ratio and is at most that
    square times the last move |rho_k - rho_(k-1)|.  The iteration stops once the last move is
    below :data:`SEEDED_SETTLED` of |rho_k - sigma|, or below four times the rounding of the
    quotient (as :func:`_rounding`, or four units in the last place of rho: the quotient was
    measured to alternate between neighbouring doubles 1.7e-16 apart, relative, on a settled
    root), and gives up after :data:`SEEDED_STEPS`.  One banded LU
    per shift (``order``: as in :func:`refine`).

    For shifts close to the roots of a nearby problem (the levels of a larger basis, as the
    error estimate of :mod:`relbasis.confidence` needs) this finds the corresponding roots
    without the full eigendecomposition; which root it found is for the caller to check.
    Returns (energies, vectors (basis x shifts), settled mask), or None where S is not
    numerically positive definite.
    """
    shifts = np.asarray(shifts, dtype=float)
    n = H.shape[0]
    shifted = _Shifted.of(H, S, order)
    if not shifted.definite():
        return None
    d, Hs, Ss = shifted.d, shifted.Hs, shifted.Ss
    H2 = Hs * Hs
    m = shifts.size
    solvers = [shifted.factor(float(sigma)) for sigma in shifts]
    alive = np.array([f is not None for f in solvers], dtype=bool)  # still iterating
    settled = np.zeros(m, dtype=bool)
    energies = np.full(m, np.nan)
    X = np.broadcast_to((np.ones(n) / np.sqrt(float(np.sum(Ss))))[:, None], (n, m)).copy()  # flat start
    rho = np.full(m, np.nan)
    for _ in range(SEEDED_STEPS):  # every unsettled shift takes one step, side by side
        cols = np.flatnonzero(alive)
        if cols.size == 0:
            break
        B = Ss @ X[:, cols]
        Y = np.empty_like(B)
        for k, j in enumerate(cols):
            Y[:, k] = solvers[j](B[:, k])
        fine = np.isfinite(Y).all(axis=0) & Y.any(axis=0)
        alive[cols[~fine]] = False
        cols, Y = cols[fine], Y[:, fine]
        Y /= np.abs(Y).max(axis=0)
        Y /= np.sqrt(np.einsum("ij,ij->j", Y, Ss @ Y))
        X[:, cols] = Y
        new = np.einsum("ij,ij->j", Y, Hs @ Y)
        if np.isnan(rho[cols]).all():  # the first step: nothing to compare with yet
            rho[cols] = new
            continue
        Y2 = Y * Y
        rounding = EPS * np.sqrt(np.einsum("ij,ij->j", Y2, H2 @ Y2))
        tol = np.maximum.reduce([SEEDED_SETTLED * np.abs(new - shifts[cols]), 4 * rounding, 4 * EPS * np.abs(new)])
        done = np.abs(new - rho[cols]) <= tol
        energies[cols[done]] = new[done]
        settled[cols[done]] = True
        alive[cols[done]] = False
        rho[cols] = new
    vectors = X * d[:, None]
    return energies, vectors, settled


def _reorthogonalise(vectors: np.ndarray, S: np.ndarray, refined: np.ndarray) -> None:
    """Keep the whole set S-orthonormal after refinement (in place).

    A refined vector is accurate but no longer exactly orthogonal to the unrefined vectors of
    the full solve (overlaps up to 6e-8 were measured), which sums over the whole spectrum
    (closure, perturbation sums) would feel.  The refined vectors are kept; their components
    are projected out of the others, which are then renormalised.
    """
    R, O = np.flatnonzero(refined), np.flatnonzero(~refined)
    if R.size == 0 or O.size == 0:
        return
    VR, VO = vectors[:, R], vectors[:, O]
    SVO = S @ VO  # the one large product; S VO after the projection follows from it cheaply
    C = VR.T @ SVO
    VO = VO - VR @ C
    SVO = SVO - (S @ VR) @ C
    VO /= np.sqrt(np.einsum("ij,ij->j", VO, SVO))
    vectors[:, O] = VO


def _refine_reduced(system: Eigensystem, H, S, idx, steps, reorthogonalise: bool = True) -> Eigensystem:
    """Inverse iteration in the span kept by canonical orthogonalisation (vectors = T y)."""
    T = system.transform
    Hr, Sr = T.T @ H @ T, T.T @ S @ T
    energies, vectors, refined = system.energies.copy(), system.vectors.copy(), system.refined.copy()
    error = (system.error if system.error is not None else _full_solve_error(energies)).copy()
    for j in idx:
        x = T.T @ (S @ vectors[:, j])
        lu, piv, info = sl.lapack.dgetrf(Hr - energies[j] * Sr)
        if info < 0:
            continue
        for _ in range(steps):
            y = sl.lapack.dgetrs(lu, piv, Sr @ x)[0]
            if not np.all(np.isfinite(y)) or not np.any(y):
                break
            y = y / np.max(np.abs(y))
            x = y / np.sqrt(y @ Sr @ y)
        else:
            Hx, Sx = Hr @ x, Sr @ x
            norm = x @ Sx
            energies[j] = (x @ Hx) / norm
            vectors[:, j] = T @ x
            error[j] = _rounding(Hr, x[:, None])[0] / norm + _kato_temple(Hx - energies[j] * Sx, norm, energies, j)
            refined[j] = True
    if reorthogonalise:
        _reorthogonalise(vectors, S, refined)
    sorter = np.argsort(energies, kind="stable")
    return Eigensystem(energies[sorter], vectors[:, sorter], refined[sorter], system.dropped, system.condition, T,
                       error[sorter])
