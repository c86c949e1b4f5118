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

Near a point nucleus the grid is not enough for weights r^k, k < 0 (the states go as r^gamma,
which the polynomials follow slowly, and the first knot interval and the region below r_min
weigh heavily): there the bound states are replaced inside r_c by their Frobenius series
(:func:`origin_series`), with amplitudes calibrated on the hypervirial <r^-2>
(:func:`hypervirial`), and the diagonal hyperfine integrals come from the hypervirial
relations.  Integrals that diverge at the origin raise InputError; the velocity form is NaN
where the levels are degenerate (:func:`dipole_velocity`).  Figures: docs/integrals.md.

Orbitals are named by (kappa, root index) pairs.
"""

from __future__ import annotations

import numpy as np

from .vocabulary import orbital_l
from . import coulomb
from .angular import reduced_c
from .errors import InputError
from .solver import Solution
from .spectrum import examined


def _roots(sol: Solution, kappa: int, roots) -> np.ndarray:
    return np.arange(len(sol[kappa])) if roots is None else np.atleast_1d(np.asarray(roots, dtype=int))


def _sample(sol: Solution, kappa: int, roots=None):
    P, Q = sol.sample(kappa, roots, "PQ")
    return P, Q


def origin_power(sol: Solution, ka: int, kb: int, parts: str = "PP+QQ") -> float:
    """Lowest power p of r in the integrand near the origin, without the r^k weight.

    Point nucleus (Z > 0): every root of kappa goes as r^gamma in both components,
    gamma = sqrt(kappa^2 - (Z/c)^2) (Bethe & Salpeter 1957 §14), so p = gamma_a + gamma_b.
    Finite nuclei and the free particle: the functions are analytic at 0, P ~ r^(l+1),
    Q ~ r^(lbar+1) with lbar the orbital momentum of -kappa (common practice), so
    p = min(l_a + l_b, lbar_a + lbar_b) + 2 for P_a P_b + Q_a Q_b ("PP+QQ") and
    p = l_a + lbar_b + 2 for P_a Q_b ("PQ").  int ... r^k dr converges at 0 iff p + k > -1.
    """
    Z, c = sol.nucleus.Z, sol.c
    if sol.nucleus.model == "point" and Z > 0:
        return float(np.sqrt(ka * ka - (Z / c) ** 2) + np.sqrt(kb * kb - (Z / c) ** 2))
    la, lb, ma, mb = orbital_l(ka), orbital_l(kb), orbital_l(-ka), orbital_l(-kb)
    if parts == "PQ":
        return float(la + mb + 2)
    return float(min(la + lb, ma + mb) + 2)


def _check_convergent(sol: Solution, ka: int, kb: int, k: float, parts: str, what: str) -> None:
    p = origin_power(sol, ka, kb, parts)
    if not p + k > -1:
        kind = "a point nucleus" if sol.nucleus.model == "point" and sol.nucleus.Z > 0 else "this nucleus"
        raise InputError(
            f"{what} = {k!r} between kappa {ka} and {kb}: the integral diverges at the origin for {kind} "
            f"(integrand ~ r^{p + k:.6g}); valid: {what} > {-1 - p:.6g}")


def _origin_applies(sol: Solution, origin: bool) -> bool:
    return bool(origin and sol.nucleus.model == "point" and sol.nucleus.Z > 0 and sol.family_set.origin_series)


def _split(sol: Solution, ka: int, kb: int, k: float, rows, cols, pairs, origin: bool,
           calibrate: int = 2) -> np.ndarray:
    """sum over (x, y) in ``pairs`` of int X_a Y_b r^k dr (X, Y in "P", "Q") for all roots a, b.

    The grid quadrature, except (``origin``, point nucleus, B-splines) for pairs of bound states
    inside r_c, where both functions are replaced by their Frobenius series matched to the basis
    (:func:`origin_series`) and the integral is done in closed form.
    """
    r, w = sol.grid
    rows, cols = _roots(sol, ka, rows), _roots(sol, kb, cols)
    fa, fb = dict(zip("PQ", _sample(sol, ka, rows))), dict(zip("PQ", _sample(sol, kb, cols)))
    wk = w * r**k

    def quad(mask):
        return sum((wk[mask, None] * fa[x][mask]).T @ fb[y][mask] for x, y in pairs)

    if not _origin_applies(sol, origin):
        return quad(slice(None))
    rc = _origin_radius(sol)
    outside = r >= rc
    inside = quad(~outside)
    ga, sa, oka = _series_of(sol, ka, rows, rc, calibrate)
    gb, sb, okb = _series_of(sol, kb, cols, rc, calibrate)
    if oka.any() and okb.any():
        series = sum(sa[x] @ _term_integrals(ga + gb + k, rc, sa[x].shape[1]) @ sb[y].T for x, y in pairs)
        inside = np.where(np.outer(oka, okb), series, inside)
    return quad(outside) + inside


def _series_of(sol: Solution, kappa: int, rows: np.ndarray, rc: float, calibrate: int):
    """Origin series of the bound states of kappa, laid out for ``rows`` (zero where none)."""
    bound = sol[kappa].indices("bound")
    terms = SERIES_TERMS
    coef = {x: np.zeros((rows.size, terms)) for x in "PQ"}
    ok = np.zeros(rows.size, dtype=bool)
    gamma = float(np.sqrt(kappa * kappa - (sol.nucleus.Z / sol.c) ** 2))
    wanted = np.isin(rows, bound)
    if not wanted.any():
        return gamma, coef, ok
    P, Q = _sample(sol, kappa, bound)
    gamma, bc, bok = _series(sol, kappa, bound, rc, {"P": P, "Q": Q}, calibrate)
    where = np.searchsorted(bound, rows[wanted])
    for x in "PQ":
        coef[x][wanted] = bc[x][where]
    ok[wanted] = bok[where]
    return gamma, coef, ok


def _diagonal_inverse_r(sol: Solution, kappa: int, roots: np.ndarray, calibrate: int):
    """int P_a^2 / r dr and int Q_a^2 / r dr of the chosen bound states (origin series inside r_c)."""
    r, w = sol.grid
    P, Q = _sample(sol, kappa, roots)
    if not _origin_applies(sol, True):  # Gaussians: the grid alone
        return [(w / r) @ P**2, (w / r) @ Q**2]
    rc = _origin_radius(sol)
    out = r >= rc
    g, coef, ok = _series_of(sol, kappa, roots, rc, calibrate)
    G = _term_integrals(2 * g - 1, rc, SERIES_TERMS)
    res = []
    for x, f in (("P", P), ("Q", Q)):
        grid_out = (w[out] / r[out]) @ f[out] ** 2
        grid_in = (w[~out] / r[~out]) @ f[~out] ** 2
        series = np.einsum("im,mn,in->i", coef[x], G, coef[x])
        res.append(grid_out + np.where(ok, series, grid_in))
    return res


def _term_integrals(p: float, rc: float, terms: int) -> np.ndarray:
    """G[m, n] = int_0^rc r^(p + m + n) dr: the series terms r^(gamma_a + m), r^(gamma_b + n) times r^k."""
    q = p + 1 + np.add.outer(np.arange(terms), np.arange(terms))
    return rc**q / q


def moment(sol: Solution, ka: int, kb: int, k: float, rows=None, cols=None, origin: bool = True) -> np.ndarray:
    """int (P_a P_b + Q_a Q_b) r^k dr, shape (roots of ka, roots of kb) (or the chosen ones).

    The integral must converge at the origin (:func:`origin_power`): a point nucleus needs
    k > -(gamma_a + gamma_b + 1), finite nuclei k > -(min(l_a + l_b, lbar_a + lbar_b) + 3);
    otherwise InputError (the exact integral is infinite, and a quadrature would give a finite
    wrong number).  For k < 0 and a point nucleus (``origin``, default) the part inside r_c of
    every pair of bound states comes from their r^gamma series (:func:`origin_series`, amplitudes
    calibrated on the hypervirial <r^-2>); k >= 0 takes less than 1e-15 of its value from inside
    r_c and uses the grid alone.
    """
    _check_convergent(sol, ka, kb, k, "PP+QQ", "moment k")
    return _split(sol, ka, kb, k, rows, cols, (("P", "P"), ("Q", "Q")), origin and k < 0)


def hypervirial(sol: Solution, kappa: int, roots, k: int, passes: int = 2) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """<r^k>, <beta r^k> and int P Q r^k (k = -2, -3, ...) of bound states of a point nucleus.

    For an eigenstate of the radial Dirac equation with V = -Z/r and total energy W = eps + c^2,
    the integrals of the derivatives of r^s P^2, r^s Q^2 and r^s P Q vanish when s > -2 gamma
    (derived here from the radial equations; the method of hypervirial relations, J. O.
    Hirschfelder, J. Chem. Phys. 33, 1462 (1960), from memory).  With A_s = int (P^2 + Q^2) r^s,
    B_s = int (P^2 - Q^2) r^s and C_s = int P Q r^s:

        s A_(s-1) - 2 kappa B_(s-1) + 4c C_s = 0,
        s B_(s-1) - 2 kappa A_(s-1) + (4/c) (W C_s + Z C_(s-1)) = 0,
        c s C_(s-1) - W B_s - Z B_(s-1) + c^2 A_s = 0.

    At s = 0 they give C_(-1) = kappa X / (2 c Z), X = c^2 A_(-1) - W B_(-1); each further level is
    a 3 x 3 solve whose determinant c s (s^2 - 4 gamma^2) vanishes only where <r^(s-1)> diverges.
    The first step gives <r^-2> = 2 kappa (2 kappa W/c^2 - 1) X / (Z (4 gamma^2 - 1)) (for 1s:
    2 Z^2 / (gamma (2 gamma - 1)), the closed form of Bethe & Salpeter 1957 §14) and the
    hyperfine integral C_(-2) = (X - Z B_(-2)) / c.  The inputs A_(-1), B_(-1) (integrands
    r^(2 gamma - 1), origin series) and W are mild: their errors are of the order of the level's
    own, whereas <r^-2> near gamma = 1/2 takes most of its value from r < 1e-5/Z, where the basis
    functions are least accurate.  X is evaluated as 2 c^2 int Q^2/r - eps B_(-1) and the
    recursion carries D = A - B = 2 int Q^2 r^s, so that nothing cancels at low Z.  ``passes``:
    the inputs use origin series calibrated on this function with ``passes - 1`` (1: the fitted
    series; the default 2 brings Z = 118 from 1.5e-9 to 9e-10, docs/integrals.md).
    """
    if sol.nucleus.model != "point" or not sol.nucleus.Z > 0:
        raise InputError(f"nucleus = {sol.nucleus.model!r}: the hypervirial relations here need a point nucleus (Z > 0)")
    if int(k) != k or k > -2:
        raise InputError(f"k = {k!r}: give an integer k <= -2 (k = -1 is an ordinary moment)")
    if int(passes) != passes or passes < 1:
        raise InputError(f"passes = {passes!r}: give an integer >= 1")
    _check_convergent(sol, kappa, kappa, k, "PP+QQ", "moment k")
    roots = _roots(sol, kappa, roots)
    Z, c = float(sol.nucleus.Z), sol.c
    eps = sol[kappa].energies[roots]
    W = eps + c * c
    # the s = -1 inputs, with the origin series calibrated on the previous pass (the first: fitted)
    pp, qq = _diagonal_inverse_r(sol, kappa, roots, passes - 1)
    A, D = pp + qq, 2 * qq
    C = kappa * (2 * c * c * qq - eps * (pp - qq)) / (2 * c * Z)
    for s in range(-1, int(k), -1):  # level s gives A, D, C at s - 1
        M = np.array([[s - 2.0 * kappa, 2.0 * kappa, 0.0], [0.0, -(s + 2.0 * kappa), 4 * Z / c], [-Z, Z, c * s]])
        rhs = np.stack([-4 * c * C, -(4 / c) * eps * C, eps * A - W * D])
        A, D, C = np.linalg.solve(M, rhs)
    return A, A - D, C


def dipole(sol: Solution, ka: int, kb: int, rows=None, cols=None) -> dict:
    """Length-form E1 quantities from the roots of ka (rows) to those of kb (columns)."""
    R = moment(sol, ka, kb, 1, rows, cols)
    ang = reduced_c(1, kb, ka)
    Ea = sol[ka].energies if rows is None else sol[ka].energies[rows]
    Eb = sol[kb].energies if cols is None else sol[kb].energies[cols]
    reduced = ang * R
    f = (2.0 / 3.0) * (Eb[None, :] - Ea[:, None]) * reduced**2 / (2 * abs(ka))
    return {"radial": R, "reduced": reduced, "oscillator_strength": f, "angular": ang}


DEGENERATE_LEVELS = 1e-9
"""Relative level noise below which two refined roots count as degenerate in the velocity form.

It is the accuracy the default basis promises for the bound levels (README: 1e-11 for Z <= 100,
1e-9 at Z = 118).  Measured splittings of exactly degenerate point-nucleus pairs (2s1/2-2p1/2,
3s1/2-3p1/2, 4s1/2-4p1/2; the Dirac-Coulomb levels depend on n and |kappa| only): 1e-14..3e-13
of the level for Z <= 92 and 9e-11 at Z = 118; velocity-form values there are 30 % (Z <= 92)
and 0.6 % (Z = 118) wrong.  The smallest genuine splitting measured, 2s1/2-2p1/2 of a finite
nucleus: 4.7e-10 (Z = 1, sphere; then NaN), 1.0e-8 (Z = 3, Gaussian nucleus; length and
velocity agree to 5e-8), 2e-7 (Z = 10: 4e-10)."""


def level_noise(sol: Solution, kappa: int, roots=None) -> np.ndarray:
    """Numerical uncertainty of the energies (hartree) of the chosen roots of kappa.

    Roots of the bound-state window are refined by inverse iteration: DEGENERATE_LEVELS * |eps|.
    The others carry the absolute error of a generalized symmetric eigensolver, a few machine
    epsilons times the largest root (common practice; DEVELOPERS.md, "Refinement"): 4 eps_mach
    max |eps|.
    """
    spec = sol[kappa]
    eps = spec.energies if roots is None else spec.energies[roots]
    floor = 4 * np.finfo(float).eps * np.max(np.abs(spec.energies))
    return np.where(examined(eps, sol.c), DEGENERATE_LEVELS * np.abs(eps), np.maximum(floor, DEGENERATE_LEVELS * np.abs(eps)))


def dipole_velocity(sol: Solution, ka: int, kb: int, rows=None, cols=None) -> np.ndarray:
    """Velocity-form E1 radial integral R^V_ab, normalised like the length form R^L_ab = M_ab(k=1).

    From [H, r] = -i c alpha for eigenstates of one Dirac Hamiltonian,
    <b|z|a> = -i c <b|alpha_z|a> / (E_b - E_a); with psi = (P Omega_kappa, i Q Omega_-kappa)/r,
    <b|alpha_z|a> = i [A1 int P_b Q_a dr - A2 int Q_b P_a dr], A1 = <Omega_kb|sigma_z|Omega_-ka>,
    A2 = <Omega_-kb|sigma_z|Omega_ka>.  Dividing by the angular factor of the length form,
    A_L = <Omega_kb|C^1_0|Omega_ka>, gives R^V = c (A1 I_PQ - A2 I_QP) / (A_L (E_b - E_a)), which
    equals R^L for a complete basis: their agreement is a completeness test.

    The form is 0/0 for degenerate levels, and its relative error is about
    (delta_a + delta_b) / |E_b - E_a| with delta the numerical error of each level.  Undefined,
    NaN (use the length form there): pairs with |E_b - E_a| <= delta_a + delta_b, delta from
    :func:`level_noise`, and the exactly degenerate bound pairs of a point nucleus (same n,
    kappa_b = -kappa_a, e.g. 2s1/2-2p1/2), whatever splitting the basis gives them.
    """
    from .angular import c1_element, sigma_element

    al = c1_element(kb, ka)
    if al == 0.0:
        raise InputError(f"kappa {ka} -> {kb}: no E1 transition (need l_b = l_a +- 1, |j_b - j_a| <= 1)")
    r, w = sol.grid
    Pa, Qa = _sample(sol, ka, rows)
    Pb, Qb = _sample(sol, kb, cols)
    a1, a2 = sigma_element(kb, -ka), sigma_element(-kb, ka)
    i_pq = (w[:, None] * Qa).T @ Pb  # int P_b Q_a, (rows a, cols b)
    i_qp = (w[:, None] * Pa).T @ Qb  # int Q_b P_a
    Ea = sol[ka].energies if rows is None else sol[ka].energies[rows]
    Eb = sol[kb].energies if cols is None else sol[kb].energies[cols]
    dE = Eb[None, :] - Ea[:, None]
    noise = level_noise(sol, ka, rows)[:, None] + level_noise(sol, kb, cols)[None, :]
    with np.errstate(divide="ignore", invalid="ignore"):
        out = sol.c * (a1 * i_pq - a2 * i_qp) / (al * dE)
    out[np.abs(dE) <= noise] = np.nan
    out[_degenerate_bound(sol, ka, kb, rows, cols)] = np.nan
    return out


def _degenerate_bound(sol: Solution, ka: int, kb: int, rows, cols) -> np.ndarray:
    """Pairs of bound states that are exactly degenerate: point nucleus, kb = -ka, same n.

    The Dirac-Coulomb levels depend on n and |kappa| only (Sommerfeld formula, Bethe & Salpeter
    1957 §14), whatever splitting the basis shows: a smaller basis splits them by its own level
    error (40 splines, Z = 50: 1e-5 of the level), which no fixed threshold would catch.
    """
    rows, cols = _roots(sol, ka, rows), _roots(sol, kb, cols)
    if not (sol.nucleus.model == "point" and sol.nucleus.Z > 0 and kb == -ka):
        return np.zeros((rows.size, cols.size), dtype=bool)
    na = np.array([sol[ka].n[x] if sol[ka].branches[x] == "bound" else -1 for x in rows])
    nb = np.array([sol[kb].n[x] if sol[kb].branches[x] == "bound" else -2 for x in cols])
    return na[:, None] == nb[None, :]


def hyperfine(sol: Solution, ka: int, kb: int, rows=None, cols=None, origin: bool = True) -> np.ndarray:
    """int P_a Q_b / r^2 dr for roots a of ka and b of kb.

    For a point nucleus the bound states go as r^gamma near the origin, which polynomials
    follow slowly, and the integrand as r^(gamma_a + gamma_b - 2).  With ``origin`` (default),
    the part inside r_c (a knot with Z r_c ~ 1e-3) of every pair of bound states is taken from
    their Frobenius series, matched to the basis functions just outside r_c
    (:func:`origin_series`), and the diagonal elements of bound states come from the
    hypervirial relations (:func:`hypervirial`); other roots and finite nuclei are integrated on
    the grid alone.  Where the integral diverges (point nucleus, |kappa_a| = |kappa_b| = 1 and
    Z alpha >= sqrt(3)/2, i.e. Z >= 118.7) InputError.
    """
    _check_convergent(sol, ka, kb, -2, "PQ", "hyperfine power k")
    out = _split(sol, ka, kb, -2, rows, cols, (("P", "Q"),), origin)
    if _origin_applies(sol, origin) and ka == kb:
        rows, cols = _roots(sol, ka, rows), _roots(sol, kb, cols)
        both = np.intersect1d(rows, cols)
        bound = both[[sol[ka].branches[x] == "bound" for x in both]]
        if bound.size:
            value = dict(zip(bound.tolist(), hypervirial(sol, ka, bound, -2)[2]))
            i, j = np.nonzero(rows[:, None] == cols[None, :])
            for a, b in zip(i, j):
                if int(rows[a]) in value:
                    out[a, b] = value[int(rows[a])]
    return out


def _origin_radius(sol: Solution) -> float:
    """The knot nearest to 1e-3/Z (but at least 100 r_min): r_c of :func:`hyperfine`."""
    knots = np.unique(sol.splines.knots)
    target = max(1e-3 / sol.nucleus.Z, 100 * knots[1])
    return float(knots[np.argmin(np.abs(np.log(knots[1:] / target))) + 1])


SERIES_TERMS = 10
"""Terms of the origin series: at Z r <= 3e-3 (the fit window) the next term is below 1e-25."""
CALIBRATION_SHARE = 1e-3
"""Smallest share of <r^-2> inside r_c for which a bound state's series amplitude is calibrated
on the hypervirial <r^-2> (the calibration multiplies the quadrature error of the part outside
r_c by at most 1/(2 share) = 500).  |kappa| = 1: share 2e-3 (Z = 1) to 0.9 (Z = 118);
|kappa| >= 2: below 1e-7, where the fit is the better amplitude."""


def _series(sol: Solution, kappa: int, roots: np.ndarray, rc: float, f: dict, calibrate: int = 2,
            terms: int = SERIES_TERMS):
    """Origin series of the chosen roots (f: their "P" and "Q" on the grid).

    Returns gamma, {"P": a, "Q": b} (arrays of shape (roots, terms), zero rows where no series is
    used) and a mask of the roots that have one: bound states with enough grid points in the
    fit window (rc, 3 rc).  See :func:`origin_series` for the recursion, the fit and the
    calibration.
    """
    Z, c = float(sol.nucleus.Z), sol.c
    gamma = float(np.sqrt(kappa * kappa - (Z / c) ** 2))
    n = roots.size
    eps = sol[kappa].energies[roots]
    a, b = np.zeros((n, terms)), np.zeros((n, terms))
    a[:, 0], b[:, 0] = 1.0, (gamma + kappa) * c / Z
    for k in range(1, terms):
        # (gamma + k + kappa) a_k - (Z/c) b_k = r1,  (Z/c) a_k + (gamma + k - kappa) b_k = r2,
        # determinant (gamma + k)^2 - kappa^2 + (Z/c)^2 = k (2 gamma + k)
        r1, r2 = (eps + 2 * c * c) / c * b[:, k - 1], -eps / c * a[:, k - 1]
        det = k * (2 * gamma + k)
        a[:, k] = ((gamma + k - kappa) * r1 + Z / c * r2) / det
        b[:, k] = ((gamma + k + kappa) * r2 - Z / c * r1) / det
    r, w = sol.grid
    near = (r > rc) & (r < 3 * rc)
    ok = np.array([sol[kappa].branches[x] == "bound" for x in roots], dtype=bool)
    if np.count_nonzero(near) < 4:
        ok[:] = False
    shape = (r[near] ** gamma * np.polynomial.polynomial.polyval(r[near], a.T)).T  # (points, roots)
    norm = np.sum(shape * shape, axis=0)
    with np.errstate(invalid="ignore", divide="ignore"):
        amp = np.sum(shape * f["P"][near], axis=0) / norm
    ok &= np.isfinite(amp) & (norm > 0)
    amp = np.where(ok, amp, 0.0)
    if calibrate > 0 and gamma > 0.5 and ok.any():
        sel = np.flatnonzero(ok)
        G = _term_integrals(2 * gamma - 2, rc, terms)
        unit = np.einsum("im,mn,in->i", a[sel], G, a[sel]) + np.einsum("im,mn,in->i", b[sel], G, b[sel])
        out = r >= rc
        outside = (w[out] / r[out] ** 2) @ (f["P"][out][:, sel] ** 2 + f["Q"][out][:, sel] ** 2)
        total = hypervirial(sol, kappa, roots[sel], -2, calibrate)[0]
        share = amp[sel] ** 2 * unit / total
        use = (share > CALIBRATION_SHARE) & (total > outside)
        with np.errstate(invalid="ignore"):
            amp[sel[use]] = np.sign(amp[sel[use]]) * np.sqrt((total - outside)[use] / unit[use])
    return gamma, {"P": amp[:, None] * a, "Q": amp[:, None] * b}, ok


def origin_series(sol: Solution, kappa: int, root: int, rc: float, terms: int = SERIES_TERMS,
                  calibrate: bool = True):
    """Frobenius series of a bound state in a point-Coulomb field, scaled to the basis function.

    P = r^gamma sum_k a_k r^k, Q = r^gamma sum_k b_k r^k, gamma = sqrt(kappa^2 - (Z/c)^2); the radial
    equations give b_0 = (gamma + kappa) c a_0 / Z and, for k >= 1,
    (gamma + k + kappa) a_k - (Z/c) b_k = ((eps + 2c^2)/c) b_(k-1),
    (Z/c) a_k + (gamma + k - kappa) b_k = -(eps/c) a_(k-1)
    (the standard series solution, e.g. Bethe & Salpeter 1957 §14).  a_0 is fitted to P of the
    basis on (rc, 3 rc) (least squares over the grid points there).  Near the origin the basis
    functions of one symmetry share a relative error of 1e-8..1e-7 at Z >= 90 (the same for
    every n: it is the polynomials' misfit of r^gamma), which the fit inherits; with
    ``calibrate`` (default) a_0 is instead chosen so that the series inside rc plus the grid
    outside give the hypervirial <r^-2> (:func:`hypervirial`), when the inside carries at least
    CALIBRATION_SHARE of it.  Returns gamma, the coefficients of P (a_k) and of Q (b_k), or None
    when the grid has too few points there for a fit or the root is not a bound state.
    """
    roots = np.array([root])
    P, Q = sol.sample(kappa, roots, "PQ")
    gamma, coef, ok = _series(sol, kappa, roots, rc, {"P": P, "Q": Q}, 2 if calibrate else 0, terms)
    if not ok[0]:
        return None
    return gamma, coef["P"][0], coef["Q"][0]


def yk(sol: Solution, k: int, b: tuple[int, int], d: tuple[int, int]) -> np.ndarray:
    """Hartree's Y^k_bd(r) on the grid: int (r_<^k / r_>^(k+1)) r rho_bd(s) ds."""
    r, w = sol.grid
    Pb, Qb = (x[:, 0] for x in _sample(sol, b[0], [b[1]]))
    Pd, Qd = (x[:, 0] for x in _sample(sol, d[0], [d[1]]))
    return coulomb.yk(r, w, Pb * Pd + Qb * Qd, k, sol.family_set.panel_points)


def slater(sol: Solution, k: int, a, b, c, d) -> float:
    """R^k(ab, cd) = int rho_ac(r) Y^k_bd(r) / r dr; a, b, c, d are (kappa, root index) pairs."""
    r, w = sol.grid
    Pa, Qa = (x[:, 0] for x in _sample(sol, a[0], [a[1]]))
    Pc, Qc = (x[:, 0] for x in _sample(sol, c[0], [c[1]]))
    return float(np.sum(w * (Pa * Pc + Qa * Qc) * yk(sol, k, b, d) / r))
