"""Radial matrix elements between the orbitals of a solved basis, vectorised over all pairs.

All integrals are done on the solution's radial quadrature grid (for B-splines the
Gauss–Legendre table of the knot intervals, exact for the polynomial parts):

* ``moment(sol, ka, kb, k)``: M_ab = int (P_a P_b + Q_a Q_b) r^k dr for every root a of ka and
  b of kb;
* ``dipole(sol, ka, kb)``: the length-form E1 radial integral R_ab = M_ab with k = 1, the
  reduced matrix element <b||r C^1||a> = <kb||C^1||ka> R_ab, and the absorption oscillator
  strength f_ab = (2/3) (E_b - E_a) |<b||r C^1||a>|^2 / (2 j_a + 1) (atomic units; common
  practice, e.g. W. R. Johnson, *Atomic Structure Theory*, 2007, from memory);
* ``hyperfine(sol, ka, kb)``: the magnetic-dipole hyperfine radial integral
  int P_a Q_b / r^2 dr (for 1s of a point nucleus -alpha Z^3 / (gamma (2 gamma - 1)), whose
  ratio to the nonrelativistic -alpha Z^3 is Breit's factor; G. Breit, Phys. Rev. 35, 1447
  (1930), from memory);
* ``slater(sol, k, a, b, c, d)``: R^k(ab, cd) = int rho_ac(r) Y^k_bd(r) / r dr with
  rho_xy = P_x P_y + Q_x Q_y and Hartree's function
  Y^k_bd(r) = int (r_<^k / r_>^(k+1)) r rho_bd(s) ds, done by cumulative quadrature.

Orbitals are named by (kappa, root index) pairs.
"""

from __future__ import annotations

import numpy as np

from .angular import reduced_c
from .solver import Solution


def _sample(sol: Solution, kappa: int, roots=None):
    P, Q = sol.sample(kappa, roots, "PQ")
    return P, Q


def moment(sol: Solution, ka: int, kb: int, k: float, rows=None, cols=None) -> np.ndarray:
    """int (P_a P_b + Q_a Q_b) r^k dr, shape (roots of ka, roots of kb) (or the chosen ones)."""
    r, w = sol.grid
    Pa, Qa = _sample(sol, ka, rows)
    Pb, Qb = _sample(sol, kb, cols)
    wk = (w * r**k)[:, None]
    return (wk * Pa).T @ Pb + (wk * Qa).T @ Qb


def dipole(sol: Solution, ka: int, kb: int, rows=None, cols=None) -> dict:
    """Length-form E1 quantities from the roots of ka (rows) to those of kb (columns)."""
    R = moment(sol, ka, kb, 1, rows, cols)
    ang = reduced_c(1, kb, ka)
    Ea = sol[ka].energies if rows is None else sol[ka].energies[rows]
    Eb = sol[kb].energies if cols is None else sol[kb].energies[cols]
    reduced = ang * R
    f = (2.0 / 3.0) * (Eb[None, :] - Ea[:, None]) * reduced**2 / (2 * abs(ka))
    return {"radial": R, "reduced": reduced, "oscillator_strength": f, "angular": ang}


def dipole_velocity(sol: Solution, ka: int, kb: int, rows=None, cols=None) -> np.ndarray:
    """Velocity-form E1 radial integral R^V_ab, normalised like the length form R^L_ab = M_ab(k=1).

    From [H, r] = -i c alpha for eigenstates of one Dirac Hamiltonian,
    <b|z|a> = -i c <b|alpha_z|a> / (E_b - E_a); with psi = (P Omega_kappa, i Q Omega_-kappa)/r,
    <b|alpha_z|a> = i [A1 int P_b Q_a dr - A2 int Q_b P_a dr], A1 = <Omega_kb|sigma_z|Omega_-ka>,
    A2 = <Omega_-kb|sigma_z|Omega_ka>.  Dividing by the angular factor of the length form,
    A_L = <Omega_kb|C^1_0|Omega_ka>, gives R^V = c (A1 I_PQ - A2 I_QP) / (A_L (E_b - E_a)), which
    equals R^L for a complete basis: their agreement is a completeness test.
    """
    from .angular import c1_element, sigma_element

    r, w = sol.grid
    Pa, Qa = _sample(sol, ka, rows)
    Pb, Qb = _sample(sol, kb, cols)
    a1, a2, al = sigma_element(kb, -ka), sigma_element(-kb, ka), c1_element(kb, ka)
    i_pq = (w[:, None] * Qa).T @ Pb  # int P_b Q_a, (rows a, cols b)
    i_qp = (w[:, None] * Pa).T @ Qb  # int Q_b P_a
    Ea = sol[ka].energies if rows is None else sol[ka].energies[rows]
    Eb = sol[kb].energies if cols is None else sol[kb].energies[cols]
    with np.errstate(divide="ignore", invalid="ignore"):
        return sol.c * (a1 * i_pq - a2 * i_qp) / (al * (Eb[None, :] - Ea[:, None]))


def hyperfine(sol: Solution, ka: int, kb: int, rows=None, cols=None, origin: bool = True) -> np.ndarray:
    """int P_a Q_b / r^2 dr for roots a of ka and b of kb.

    For a point nucleus the bound states go as r^gamma near the origin, which polynomials
    follow slowly, and the integrand as r^(gamma_a + gamma_b - 2).  With ``origin`` (default),
    the part inside r_c (a knot with Z r_c ~ 1e-3) of every pair of bound states is taken from
    their Frobenius series, matched to the basis functions just outside r_c
    (:func:`origin_series`); other roots and finite nuclei are integrated on the grid alone.
    """
    r, w = sol.grid
    rows = np.arange(len(sol[ka])) if rows is None else np.asarray(rows)
    cols = np.arange(len(sol[kb])) if cols is None else np.asarray(cols)
    Pa, _ = _sample(sol, ka, rows)
    _, Qb = _sample(sol, kb, cols)
    if not (origin and sol.nucleus.model == "point" and sol.nucleus.Z > 0 and sol.table is not None):
        return (w / r**2 * Pa.T) @ Qb
    rc = _origin_radius(sol)
    outside = r >= rc
    out = (w[outside] / r[outside] ** 2 * Pa[outside].T) @ Qb[outside]
    inside = (w[~outside] / r[~outside] ** 2 * Pa[~outside].T) @ Qb[~outside]
    ba = [i for i, x in enumerate(rows) if sol[ka].branches[x] == "bound"]
    bb = [j for j, x in enumerate(cols) if sol[kb].branches[x] == "bound"]
    sa = {i: origin_series(sol, ka, rows[i], rc) for i in ba}
    sb = {j: origin_series(sol, kb, cols[j], rc) for j in bb}
    for i in ba:
        for j in bb:
            if sa[i] is None or sb[j] is None:
                continue  # no fit possible (too few grid points near r_c): keep the quadrature
            (ga, pa, _), (gb, _, qb) = sa[i], sb[j]
            p = ga + gb - 1 + np.add.outer(np.arange(pa.size), np.arange(qb.size))
            inside[i, j] = np.sum(np.outer(pa, qb) * rc**p / p)
    return out + inside


def _origin_radius(sol: Solution) -> float:
    """The knot nearest to 1e-3/Z (but at least 100 r_min): r_c of :func:`hyperfine`."""
    knots = np.unique(sol.splines.knots)
    target = max(1e-3 / sol.nucleus.Z, 100 * knots[1])
    return float(knots[np.argmin(np.abs(np.log(knots[1:] / target))) + 1])


def origin_series(sol: Solution, kappa: int, root: int, rc: float, terms: int = 10):
    """Frobenius series of a bound state in a point-Coulomb field, scaled to the basis function.

    P = r^gamma sum_k a_k r^k, Q = r^gamma sum_k b_k r^k, gamma = sqrt(kappa^2 - (Z/c)^2); the radial
    equations give b_0 = (gamma + kappa) c a_0 / Z and, for k >= 1,
    (gamma + k + kappa) a_k - (Z/c) b_k = ((eps + 2c^2)/c) b_(k-1),
    (Z/c) a_k + (gamma + k - kappa) b_k = -(eps/c) a_(k-1)
    (the standard series solution, e.g. Bethe & Salpeter 1957 §14).  a_0 is fitted to P of the
    basis on (rc, 3 rc).  Returns gamma, the coefficients of P (a_k) and of Q (b_k), or None
    when the grid has too few points there for a fit.
    """
    Z, c = sol.nucleus.Z, sol.c
    eps = float(sol[kappa].energies[root])
    gamma = np.sqrt(kappa * kappa - (Z / c) ** 2)
    a, b = np.zeros(terms), np.zeros(terms)
    a[0], b[0] = 1.0, (gamma + kappa) * c / Z
    for k in range(1, terms):
        M = np.array([[gamma + k + kappa, -Z / c], [Z / c, gamma + k - kappa]])
        a[k], b[k] = np.linalg.solve(M, [(eps + 2 * c * c) / c * b[k - 1], -eps / c * a[k - 1]])
    r, _ = sol.grid
    near = (r > rc) & (r < 3 * rc)
    if np.count_nonzero(near) < 4:
        return None
    P = sol.sample(kappa, [root], "P")[0][near, 0]
    shape = r[near] ** gamma * np.polynomial.polynomial.polyval(r[near], a)
    norm = shape @ shape
    if not (np.isfinite(norm) and norm > 0):
        return None
    amp = float(shape @ P / norm)
    return gamma, amp * a, amp * b


def _cumulative(r: np.ndarray, w: np.ndarray, f: np.ndarray, nq: int) -> np.ndarray:
    """int_0^{r_i} f(s) ds at every grid point, the grid being nq Gauss–Legendre points per panel.

    Within a panel the integrand is integrated through its interpolating polynomial on the
    panel's nodes (an nq x nq spectral integration matrix); the panels are summed before it.
    """
    x, _ = np.polynomial.legendre.leggauss(nq)
    V = np.polynomial.legendre.legvander(x, nq - 1)  # values of P_0..P_{nq-1} at the nodes
    # antiderivatives of the Legendre polynomials from -1: (P_{n+1} - P_{n-1}) / (2n + 1)
    anti = np.zeros((nq, nq))
    for n in range(nq):
        c = np.zeros(nq + 1)
        if n == 0:
            c[1], c[0] = 1.0, 1.0  # int_{-1}^x P_0 = x + 1
        else:
            c[n + 1] = 1.0 / (2 * n + 1)
            c[n - 1] = -1.0 / (2 * n + 1)
        anti[:, n] = np.polynomial.legendre.legval(x, c)
    A = anti @ np.linalg.inv(V)  # node values -> partial integrals at the nodes, on [-1, 1]
    panels = f.shape[0] // nq
    F = f.reshape(panels, nq, -1)
    half = (w.reshape(panels, nq).sum(axis=1) / 2.0)[:, None, None]  # half panel widths
    partial = np.einsum("ij,pjk->pik", A, F) * half
    whole = (w.reshape(panels, nq)[:, :, None] * F).sum(axis=1)
    before = np.concatenate([np.zeros((1, F.shape[2])), np.cumsum(whole, axis=0)[:-1]], axis=0)
    return (partial + before[:, None, :]).reshape(f.shape)


def yk(sol: Solution, k: int, b: tuple[int, int], d: tuple[int, int]) -> np.ndarray:
    """Hartree's Y^k_bd(r) on the grid: int (r_<^k / r_>^(k+1)) r rho_bd(s) ds."""
    r, w = sol.grid
    nq = sol.table.r.shape[1] if sol.table is not None else 16
    Pb, Qb = (x[:, 0] for x in _sample(sol, b[0], [b[1]]))
    Pd, Qd = (x[:, 0] for x in _sample(sol, d[0], [d[1]]))
    rho = Pb * Pd + Qb * Qd
    inner = _cumulative(r, w, (r**k * rho)[:, None], nq)[:, 0]
    outer_all = np.sum(w * rho / r ** (k + 1))
    outer = outer_all - _cumulative(r, w, (rho / r ** (k + 1))[:, None], nq)[:, 0]
    return inner / r**k + outer * r ** (k + 1)


def slater(sol: Solution, k: int, a, b, c, d) -> float:
    """R^k(ab, cd) = int rho_ac(r) Y^k_bd(r) / r dr; a, b, c, d are (kappa, root index) pairs."""
    r, w = sol.grid
    Pa, Qa = (x[:, 0] for x in _sample(sol, a[0], [a[1]]))
    Pc, Qc = (x[:, 0] for x in _sample(sol, c[0], [c[1]]))
    return float(np.sum(w * (Pa * Pc + Qa * Qc) * yk(sol, k, b, d) / r))
