"""Independent shooting solver for bound levels of the radial Dirac equation (tests only).

This module is the outside check for finite-nucleus levels, where no closed form exists.  It
uses none of the package's solver code (no basis, no matrices): it integrates the radial
Dirac equations directly with :func:`scipy.integrate.solve_ivp` and matches an outward and
an inward solution.  The potential is any callable ``V(r)`` (hartree, ``r`` in bohr).

Equations (atomic units, binding energy ``eps = E - c^2``)::

    P' = -kappa/r P + (eps - V + 2c^2)/c Q,      Q' = kappa/r Q - (eps - V)/c P.

Method (a Pruefer-angle form of shooting, common practice for Sturm-Liouville-type systems):

* With ``q = S Q``, ``S = |P/Q|`` of the decaying tail ``= sqrt((2c^2 + eps)/(-eps))`` (both
  components then weigh alike in the angle, which keeps ``|dF/deps|`` large: a well-conditioned
  root; at low Z ``S ~ 2c n/Z``, so ``q ~ (n/Z) P'`` there) write ``P = rho cos(phi)``,
  ``q = rho sin(phi)``.  In the variable ``x = ln r`` the angle obeys a first-order
  equation of its own::

      dphi/dx = -A cos^2(phi) + kappa sin(2 phi) - B sin^2(phi),
      A = r S (eps - V)/c,   B = r (eps - V + 2c^2)/(c S),

  and ``d ln(rho)/dx = -kappa cos(2 phi) + (B - A) sin(phi) cos(phi)``.  The angle never
  overflows, and the equation is stable in the direction in which each side is integrated
  (outward from the origin, inward from the tail), so errors of the starting values die out.
* At a node of P (``cos(phi) = 0``) ``dphi/dx = -B < 0``: the angle falls through each
  level ``-pi/2 - k pi`` exactly once.  A state with ``N = n - l - 1`` nodes therefore has
  ``phi_out(r_m) = phi_in(r_m) - N pi`` at the matching radius, with ``phi_in`` started at
  ``r_inf`` on the branch ``(-pi/2, 0)`` (the decaying tail has ``Q/P < 0``).  The mismatch
  ``F(eps) = phi_out(r_m) - phi_in(r_m) + N pi`` is strictly decreasing in ``eps``
  (``d(dphi/dx)/d eps = -r (S cos^2 + sin^2/S)/c < 0``), so its root is unique and carries
  the node count by construction.  The root is found by safeguarded Newton steps; ``dF/deps``
  comes from the variational equation integrated alongside.
* Starting values: for a Coulomb-singular origin (``r V -> -zeta``) ``P, Q ~ r^gamma`` with
  ``gamma = sqrt(kappa^2 - (zeta/c)^2)`` and ``Q/P = (gamma + kappa) c/zeta
  = -(zeta/c)/(gamma - kappa)``; for a regular origin (``V -> V0``) ``P ~ r^|kappa|``,
  ``Q/P = (V0 - eps) r /(c (2|kappa| + 1))`` when ``kappa < 0`` and ``Q ~ r^kappa``,
  ``Q/P = (2 kappa + 1) c /((eps - V0 + 2c^2) r)`` when ``kappa > 0`` (both follow from the
  equations above at lowest order in r).  Far out ``P ~ exp(-lambda r)``,
  ``lambda = sqrt(-eps (2c^2 + eps))/c``, ``Q/P = -sqrt(-eps/(2c^2 + eps))``.
* A kink of V (the edge of a uniform sphere) is passed as ``r_break``; every integration is
  split there so that the high-order stepper never steps across it.
* At the threshold eps = -2c^2 (:func:`threshold_charge`, the critical charge) the energy
  is fixed and the charge is the unknown; the tail there decays like exp(-sqrt(8 Z r)) (see
  the section "threshold charge" below).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy.integrate import solve_ivp

from relbasis.errors import InputError, PhysicsRangeError

__all__ = ["dirac_level", "dirac_orbital", "coulomb_level", "threshold_mismatch", "threshold_charge"]

@dataclass(frozen=True)
class _Setup:
    """Everything that fixes the mismatch function F(eps) of one level."""

    kappa: int
    nodes: int
    c: float
    scale: float  # S in q = S Q
    r0: float  # first radius of the outward integration
    r_match: float
    r_inf: float
    r_break: float | None
    origin: str  # "coulomb" or "regular"
    zeta: float  # -lim r V(r) for a Coulomb origin, else 0
    v0: float  # V(r0) for a regular origin, else 0


def _orbital_l(kappa: int) -> int:
    return kappa if kappa > 0 else -kappa - 1


def _check_state(kappa, n, c, Z) -> None:
    if not isinstance(kappa, (int, np.integer)) or isinstance(kappa, bool) or kappa == 0:
        raise InputError(f"kappa={kappa!r} is not valid; use a non-zero integer (-1 for s1/2, 1 for p1/2, ...)")
    if not isinstance(n, (int, np.integer)) or isinstance(n, bool):
        raise InputError(f"n={n!r} is not valid; use an integer principal quantum number")
    l = _orbital_l(int(kappa))
    if n < l + 1:
        raise InputError(f"n={n} is not valid for kappa={kappa} (l={l}); use n >= {l + 1}")
    if not (np.isfinite(c) and c > 0):
        raise InputError(f"c={c!r} is not valid; use the speed of light in atomic units (> 0)")
    if not (np.isfinite(Z) and Z > 0):
        raise InputError(f"Z={Z!r} is not valid; use the positive asymptotic charge of the potential")


def _v_at(V, r: float) -> float:
    # a one-element array, not a bare float: potentials written for arrays (masks, fancy
    # indexing) then work unchanged
    return float(np.asarray(V(np.array([r])), dtype=float).reshape(-1)[0])


def coulomb_level(Z: float, kappa: int, n: int, *, c: float) -> float:
    """Exact point-nucleus binding energy, written without cancellation.

    ``eps = -c^2 x^2 / (sqrt(1+x^2) (1+sqrt(1+x^2)))``, ``x = Z alpha/(n - |kappa| + gamma)``,
    ``n - |kappa| + gamma = n - (Z alpha)^2/(|kappa| + gamma)`` (Sommerfeld-Darwin-Gordon
    formula; Bethe & Salpeter (1957) §14).  Used here only as a starting guess.
    """
    za = Z / c
    if za >= abs(kappa):
        raise PhysicsRangeError(f"Z={Z} gives Z*alpha >= |kappa|={abs(kappa)}; a point nucleus has no level there")
    gamma = math.sqrt(kappa * kappa - za * za)
    x = za / (n - za * za / (abs(kappa) + gamma))
    s = math.sqrt(1.0 + x * x)
    return -c * c * x * x / (s * (1.0 + s))


def _origin(V, r0: float) -> tuple[str, float, float]:
    """Classify the origin: Coulomb-singular (r V -> -zeta != 0) or regular (V -> V0)."""
    z1 = -r0 * _v_at(V, r0)
    z2 = -(r0 * 1e-3) * _v_at(V, r0 * 1e-3)
    if z1 > 0 and abs(z2 - z1) <= 1e-2 * abs(z1):
        return "coulomb", z1, 0.0
    return "regular", 0.0, _v_at(V, r0)


def _start_ratio(st: _Setup, eps: float) -> float:
    """Q/P at r0 from the lowest order of the series solution (see module docstring)."""
    k, c, r0 = st.kappa, st.c, st.r0
    if st.origin == "coulomb":
        za = st.zeta / c
        if za >= abs(k):
            raise PhysicsRangeError(
                f"the potential has r*V(r) -> {-st.zeta:.6g} at the origin, i.e. charge*alpha >= |kappa|={abs(k)}; "
                "use a finite nucleus"
            )
        gamma = math.sqrt(k * k - za * za)
        return -za / (gamma - k) if k < 0 else (gamma + k) / za
    if k < 0:
        return (st.v0 - eps) * r0 / (c * (2 * abs(k) + 1))
    return (2 * k + 1) * c / ((eps - st.v0 + 2 * c * c) * r0)


def _tail_ratio(eps: float, c: float) -> float:
    return -math.sqrt(-eps / (2 * c * c + eps))


def _tail_angle(V, st: _Setup, eps: float) -> float:
    """Starting angle at r_inf: the local fixed point of the angle equation (decaying branch).

    With t = tan(phi), dphi/dx = 0 reads -A + 2 kappa t - B t^2 = 0; in the forbidden region
    A < 0 < B and the root t = (kappa - sqrt(kappa^2 - A B))/B < 0 is the decaying one.  It
    carries the Coulomb and centrifugal terms at r_inf, so the start is already close to the
    true angle and the transient that the inward integration must damp is small.  (Far out
    it tends to S Q/P = -S sqrt(-eps/(2c^2 + eps)).)
    """
    r, k, c, S = st.r_inf, st.kappa, st.c, st.scale
    w = eps - _v_at(V, r)
    a = r * S * w / c
    b = r * (w + 2.0 * c * c) / (c * S)
    if a >= 0.0 or b <= 0.0:  # not forbidden at r_inf (odd potential): plain asymptotic ratio
        return math.atan(S * _tail_ratio(eps, c))
    root = k - math.sqrt(k * k - a * b)
    t = root / b if k <= 0 else a / (k + math.sqrt(k * k - a * b))  # same root, no cancellation
    return math.atan(t)


def _decay(eps: float, c: float) -> float:
    return math.sqrt(-eps * (2 * c * c + eps)) / c


def _outer_turning_point(V, kappa: int, eps: float, Z: float, r0: float, n: int) -> float:
    """Outermost r with eps > V(r) + l(l+1)/(2 r^2) (nonrelativistic estimate, vectorised)."""
    l = _orbital_l(kappa)
    r_hi = 20.0 * max(Z / abs(eps), n * n / Z)
    for _ in range(6):
        r = np.geomspace(r0, r_hi, 4000)
        allowed = eps > np.asarray(V(r), dtype=float) + l * (l + 1) / (2.0 * r * r)
        if not allowed.any():
            return n * n / Z  # no classically allowed region for this guess: hydrogen-like radius
        last = int(np.flatnonzero(allowed)[-1])
        if last < r.size - 1:
            return float(r[last])
        r_hi *= 10.0
    return float(r_hi)


def _setup(V, kappa, n, eps, *, c, Z, r_break, r0, r_match, decay) -> _Setup:
    if r0 is None:
        r0 = 1e-9 * min(1.0 / Z, r_break if r_break else math.inf)
    origin, zeta, v0 = _origin(V, r0)
    if r_match is None:
        r_match = _outer_turning_point(V, kappa, eps, Z, r0, n)
        if r_break is not None and r_match <= r_break:
            r_match = 2.0 * r_break
    r_inf = r_match + decay / _decay(eps, c)
    if not (r0 < r_match < r_inf):
        raise InputError(f"r_match={r_match!r} is not valid; use a radius between r0={r0:.3g} and r_inf={r_inf:.3g} bohr")
    # S = |P/Q| of the tail: both components then weigh alike in the angle, which keeps
    # dF/deps = -(S/c) norm/(P^2 + S^2 Q^2)(r_m) as large as it can be (best-conditioned root)
    scale = 1.0 / abs(_tail_ratio(eps, c))
    return _Setup(int(kappa), n - _orbital_l(kappa) - 1, float(c), scale, float(r0), float(r_match),
                  float(r_inf), r_break, origin, zeta, v0)


def _knots(a: float, b: float, r_break: float | None) -> list[float]:
    """Integration knots in x = ln r from a to b (either direction), split at r_break."""
    xs = [math.log(a)]
    if r_break is not None and min(a, b) < r_break < max(a, b):
        xs.append(math.log(r_break))
    xs.append(math.log(b))
    return xs


def _march(fun, knots, y0, rtol, atol, dense=False):
    y = np.asarray(y0, dtype=float)
    pieces = []
    for xa, xb in zip(knots[:-1], knots[1:]):
        sol = solve_ivp(fun, (xa, xb), y, method="DOP853", rtol=rtol, atol=atol, dense_output=dense)
        if not sol.success:
            raise RuntimeError(f"shooting integration failed between r={math.exp(xa):.3g} and {math.exp(xb):.3g}: {sol.message}")
        y = sol.y[:, -1]
        pieces.append(sol)
    return y, pieces


def _phase_rhs(V, st: _Setup, eps: float):
    """d/dx of (phi, d phi/d eps): the Pruefer angle and its variational equation."""
    k, c, S = st.kappa, st.c, st.scale
    two_c2 = 2.0 * c * c

    def rhs(x, y):
        r = math.exp(x)
        w = eps - _v_at(V, r)
        a = r * S * w / c
        b = r * (w + two_c2) / (c * S)
        cs, sn = math.cos(y[0]), math.sin(y[0])
        dphi = -a * cs * cs + 2.0 * k * sn * cs - b * sn * sn
        dfdphi = 2.0 * (a - b) * sn * cs + 2.0 * k * (cs * cs - sn * sn)
        dfde = -r * (S * cs * cs + sn * sn / S) / c
        return [dphi, dfdphi * y[1] + dfde]

    return rhs


def _orbit_rhs(V, st: _Setup, eps: float):
    """d/dx of (phi, ln rho, norm), norm = integral of (P^2 + Q^2) dr."""
    k, c, S = st.kappa, st.c, st.scale
    two_c2 = 2.0 * c * c

    def rhs(x, y):
        r = math.exp(x)
        w = eps - _v_at(V, r)
        a = r * S * w / c
        b = r * (w + two_c2) / (c * S)
        cs, sn = math.cos(y[0]), math.sin(y[0])
        dphi = -a * cs * cs + 2.0 * k * sn * cs - b * sn * sn
        dlnrho = -k * (cs * cs - sn * sn) + (b - a) * sn * cs
        dnorm = r * math.exp(2.0 * y[1]) * (cs * cs + sn * sn / (S * S))
        return [dphi, dlnrho, dnorm]

    return rhs


def _mismatch(V, st: _Setup, eps: float, rtol: float) -> tuple[float, float]:
    """F(eps) = phi_out(r_m) - phi_in(r_m) + N pi and dF/deps."""
    # the derivative only steers Newton: a loose absolute tolerance keeps it stable without
    # letting it drive the step size
    atol = [rtol * 1e-3, 1e-8]
    phi0 = math.atan(st.scale * _start_ratio(st, eps))
    out, _ = _march(_phase_rhs(V, st, eps), _knots(st.r0, st.r_match, st.r_break), [phi0, 0.0], rtol, atol)
    phi_inf = _tail_angle(V, st, eps)
    inn, _ = _march(_phase_rhs(V, st, eps), _knots(st.r_inf, st.r_match, st.r_break), [phi_inf, 0.0], rtol, atol)
    return out[0] - inn[0] + st.nodes * math.pi, out[1] - inn[1]


def _solve(V, st: _Setup, eps: float, rtol: float) -> float:
    """Root of the strictly decreasing F by Newton steps inside a shrinking bracket."""
    lo, hi = -2.0 * st.c * st.c, 0.0  # F(lo) > 0 > F(hi) once they have been evaluated
    prev = math.inf
    for _ in range(80):
        f, df = _mismatch(V, st, eps, rtol)
        if f > 0:
            lo = eps
        else:
            hi = eps
        step = -f / df if (df < 0 and math.isfinite(df)) else math.nan
        if abs(step) <= 4e-16 * abs(eps):  # below the spacing of doubles: converged
            return eps + step
        new = eps + step
        if math.isfinite(new):
            new = min(max(new, 2.0 * eps), 0.5 * eps)  # at most a factor 2 per step
        if not (math.isfinite(new) and lo < new < hi):  # Newton left the bracket: bisect it
            if hi >= 0.0:
                new = 0.5 * eps
            elif lo <= -2.0 * st.c * st.c:
                new = 0.5 * (eps + lo)
            else:
                new = -math.sqrt(lo * hi)
        size = abs(new - eps)
        eps = new
        if lo <= -2.0 * st.c * st.c and eps < -2.0 * st.c * st.c * (1.0 - 1e-9):
            raise PhysicsRangeError(
                f"no level kappa={st.kappa} with {st.nodes} nodes above eps=-2c^2: it has dived into the "
                "negative continuum (nuclear charge too large for this nucleus)"
            )
        if hi >= 0.0 and eps > -1e-12 * st.c * st.c:
            raise PhysicsRangeError(f"no bound level kappa={st.kappa} with {st.nodes} nodes below eps=0 in this potential")
        if size <= 1e-14 * abs(eps):
            return eps
        if prev < 1e-11 * abs(eps) and size > 0.5 * prev:  # steps stopped shrinking: noise floor of F
            return eps
        prev = size
    raise RuntimeError(f"shooting did not converge for kappa={st.kappa}, {st.nodes} nodes (last eps={eps!r})")


def dirac_level(V, kappa: int, n: int, *, c: float, Z: float, r_break: float | None = None,
                eps_guess: float | None = None, rtol: float = 3e-14, r0: float | None = None,
                r_match: float | None = None, decay: float = 20.0) -> float:
    """Binding energy eps (hartree) of the bound state (n, kappa) in the potential V.

    ``V`` is a vectorised callable of r (bohr) returning hartree, finite at the origin or
    Coulomb-singular there; ``Z`` is its asymptotic charge (V -> -Z/r), used for the start
    guess and the radii.  ``r_break`` is a radius where V has a kink (integration breakpoint).
    ``rtol`` is the relative tolerance of the ODE steps (3e-14, near the floor solve_ivp
    accepts, costs about the same as 1e-13 here and leaves 20 times less noise in the level).  ``r0`` (first radius), ``r_match``
    (matching radius) and ``decay`` (``lambda (r_inf - r_match)``) exist for convergence
    studies; the defaults are 1e-9 min(1/Z, r_break), the outer classical turning point and 20.
    The state has n - l - 1 nodes of P by construction (see the module docstring).
    """
    _check_state(kappa, n, c, Z)
    if r_break is not None and not (np.isfinite(r_break) and r_break > 0):
        raise InputError(f"r_break={r_break!r} is not valid; use a positive radius in bohr or None")
    if eps_guess is None:
        try:
            eps_guess = coulomb_level(Z, kappa, n, c=c)
        except PhysicsRangeError:  # finite nucleus beyond the point-nucleus limit: start lower
            eps_guess = -0.5 * c * c
    if not (-2.0 * c * c < eps_guess < 0.0):
        raise InputError(f"eps_guess={eps_guess!r} is not valid; use a binding energy between -2c^2 and 0 hartree")
    eps = float(eps_guess)
    for _ in range(4):
        st = _setup(V, kappa, n, eps, c=c, Z=Z, r_break=r_break, r0=r0, r_match=r_match, decay=decay)
        new = _solve(V, st, eps, rtol)
        # radii were chosen for the guess; accept once the level is close enough to it
        if r_match is not None or abs(new - eps) <= 0.05 * abs(eps):
            return new
        eps = new
    return new


def dirac_orbital(V, kappa: int, n: int, eps: float, *, c: float, Z: float, r_break: float | None = None,
                  r=None, rtol: float = 3e-14, r0: float | None = None, r_match: float | None = None,
                  decay: float = 20.0) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Radial functions (r, P, Q) of the level (n, kappa) at its binding energy ``eps``.

    Normalised to ``integral (P^2 + Q^2) dr = 1`` (the norm is integrated as a third ODE
    component), P > 0 near the origin.  ``r`` is an optional grid (bohr); by default 4000
    log-spaced points from r0 to r_inf.  Outside [r0, r_inf] the lowest-order power law and
    the exponential tail are used.  ``eps`` should come from :func:`dirac_level`.
    """
    _check_state(kappa, n, c, Z)
    if not (np.isfinite(eps) and -2.0 * c * c < eps < 0.0):
        raise InputError(f"eps={eps!r} is not valid; use a bound-state binding energy between -2c^2 and 0 hartree")
    st = _setup(V, kappa, n, eps, c=c, Z=Z, r_break=r_break, r0=r0, r_match=r_match, decay=decay)
    atol = [rtol * 1e-3, rtol * 1e-3, 1e300]  # the norm is a quadrature: step control by (phi, ln rho)
    fun = _orbit_rhs(V, st, eps)
    phi0 = math.atan(st.scale * _start_ratio(st, eps))
    out, out_pieces = _march(fun, _knots(st.r0, st.r_match, st.r_break), [phi0, 0.0, 0.0], rtol, atol, dense=True)
    phi_inf = _tail_angle(V, st, eps)
    inn, in_pieces = _march(fun, _knots(st.r_inf, st.r_match, st.r_break), [phi_inf, 0.0, 0.0], rtol, atol, dense=True)
    shift = out[1] - inn[1]  # makes rho continuous at r_match
    norm = out[2] + abs(inn[2]) * math.exp(2.0 * shift)
    half_log_norm = 0.5 * math.log(norm)

    r = np.geomspace(st.r0, st.r_inf, 4000) if r is None else np.asarray(r, dtype=float)
    if r.ndim != 1 or not np.all(np.isfinite(r)) or np.any(r <= 0):
        raise InputError("r is not valid; use a one-dimensional array of positive radii in bohr")
    x = np.log(r)
    phi = np.full(r.shape, np.nan)
    lnrho = np.full(r.shape, np.nan)
    for sol, sign in [(p, 0) for p in out_pieces] + [(p, 1) for p in in_pieces]:
        xa, xb = sorted((sol.t[0], sol.t[-1]))
        sel = (x >= xa) & (x <= xb)
        if sel.any():
            y = sol.sol(x[sel])
            phi[sel] = y[0] - sign * st.nodes * math.pi  # inward branch lies N pi above the true angle
            lnrho[sel] = y[1] + sign * shift
    P = np.exp(lnrho - half_log_norm) * np.cos(phi)
    Q = np.exp(lnrho - half_log_norm) * np.sin(phi) / st.scale

    # outside the integrated range: lowest-order power law at the origin, exponential tail
    P0, Q0 = math.exp(-half_log_norm) * math.cos(phi0), math.exp(-half_log_norm) * math.sin(phi0) / st.scale
    if st.origin == "coulomb":
        sp = sq = math.sqrt(kappa * kappa - (st.zeta / c) ** 2)
    else:
        sp, sq = (abs(kappa), abs(kappa) + 1) if kappa < 0 else (kappa + 1, kappa)
    inner = r < st.r0
    P[inner] = P0 * (r[inner] / st.r0) ** sp
    Q[inner] = Q0 * (r[inner] / st.r0) ** sq
    outer = r > st.r_inf
    rho_inf = math.exp(shift - half_log_norm)
    lam = _decay(eps, c)
    P[outer] = rho_inf * math.cos(phi_inf - st.nodes * math.pi) * np.exp(-lam * (r[outer] - st.r_inf))
    Q[outer] = rho_inf * math.sin(phi_inf - st.nodes * math.pi) / st.scale * np.exp(-lam * (r[outer] - st.r_inf))
    return r, P, Q


# --------------------------------------------------------------------------- threshold charge
#
# At the lower threshold E = -mc^2 (eps = -2c^2) the equations read
#     P' = -kappa/r P - V/c Q,      Q' = kappa/r Q + (2c^2 + V)/c P.
# Far out (V = -Z/r, 2c^2 >> Z/r) they give P' ~ (Z/(c r)) Q and Q' ~ 2c P, so
# P'' ~ (2Z/r) P, whose WKB solutions are exp(+-sqrt(8 Z r)) (exact solutions:
# sqrt(r) times modified Bessel functions of sqrt(8 Z r)); the bound one decays like
# exp(-sqrt(8 Z r)), with Q/P ~ -c sqrt(2 r/Z) (derived from the two equations above), no
# longer small.  The electron is classically allowed only where -V > 2c^2, i.e. inside
# r = Z/(2c^2) for a Coulomb tail.  The critical charge is the Z at which a solution with
# n - l - 1 nodes of P and this decaying tail exists at eps = -2c^2: the same Pruefer-angle
# matching as above, with the energy fixed and Z as the unknown.


def _angle_rhs(V, kappa: int, c: float, S: float, eps: float):
    """d phi/dx of the Pruefer angle alone (see the module docstring), x = ln r."""

    def rhs(x, y):
        r = math.exp(x)
        w = eps - _v_at(V, r)
        a = r * S * w / c
        b = r * (w + 2.0 * c * c) / (c * S)
        cs, sn = math.cos(y[0]), math.sin(y[0])
        return [-a * cs * cs + 2.0 * kappa * sn * cs - b * sn * sn]

    return rhs


def _local_ratio(V, kappa: int, c: float, eps: float, r: float) -> float:
    """Q/P of the decaying solution at r from the local fixed point of the angle equation (S = 1)."""
    w = eps - _v_at(V, r)
    a, b = r * w / c, r * (w + 2.0 * c * c) / c
    if not (a < 0.0 < b):
        raise InputError(f"r = {r:.3g} bohr is not in the classically forbidden region at eps = {eps:.6g}; "
                         "use a larger matching radius")
    return a / (kappa + math.sqrt(kappa * kappa - a * b)) if kappa > 0 else (kappa - math.sqrt(kappa * kappa - a * b)) / b


def threshold_mismatch(V, kappa: int, n: int, *, c: float, Z: float, r_break: float | None = None,
                       rtol: float = 3e-14, r_match: float | None = None, decay: float = 40.0) -> float:
    """F = phi_out(r_m) - phi_in(r_m) + N pi at eps = -2c^2 for the potential V (charge Z).

    F > 0 while the level (n, kappa) lies above the threshold and F < 0 once it has dived;
    F falls strictly with the depth of the potential (d(dphi/dx)/d(-V) < 0 on both sides).
    ``r_match`` defaults to Z/c^2, twice the Coulomb turning point Z/(2c^2) (at least twice
    ``r_break``); the inward start r_inf satisfies sqrt(8Z)(sqrt(r_inf) - sqrt(r_m)) =
    ``decay``, i.e. the tail exp(-sqrt(8 Z r)) has fallen by e^-decay from r_m to r_inf, and
    the start is the local fixed point of the angle equation there.
    """
    _check_state(kappa, n, c, Z)
    eps = -2.0 * c * c
    nodes = n - _orbital_l(kappa) - 1
    if r_match is None:
        r_match = max(Z / (c * c), 2.0 * r_break if r_break else 0.0)
    r_inf = (math.sqrt(r_match) + decay / math.sqrt(8.0 * Z)) ** 2
    r0 = 1e-9 * min(1.0 / Z, r_break if r_break else math.inf)
    origin, zeta, v0 = _origin(V, r0)
    if origin != "regular":
        raise PhysicsRangeError("a Coulomb-singular potential has no threshold solution here; use a finite nucleus")
    S = 1.0 / abs(_local_ratio(V, kappa, c, eps, r_match))  # P and S Q weigh alike at r_m
    st = _Setup(int(kappa), nodes, float(c), S, r0, float(r_match), r_inf, r_break, origin, zeta, v0)
    atol = [rtol * 1e-3]
    fun = _angle_rhs(V, int(kappa), float(c), S, eps)
    phi0 = math.atan(S * _start_ratio(st, eps))
    out, _ = _march(fun, _knots(r0, r_match, r_break), [phi0], rtol, atol)
    phi_inf = math.atan(S * _local_ratio(V, kappa, c, eps, r_inf))
    inn, _ = _march(fun, _knots(r_inf, r_match, r_break), [phi_inf], rtol, atol)
    return out[0] - inn[0] + nodes * math.pi


def threshold_charge(potential_of, kappa: int, n: int, *, c: float, bracket: tuple[float, float],
                     r_break_of=None, xtol: float = 1e-12, **kw) -> float:
    """The charge Z at which the level (n, kappa) reaches eps = -2c^2 (a root of threshold_mismatch).

    ``potential_of(Z)`` returns the potential V (a callable of r) of charge Z, with its nuclear
    size following whatever rule the caller chose; ``r_break_of(Z)`` the kink radius (sphere
    edge) or None.  ``bracket`` must hold the root: F > 0 at its lower and F < 0 at its upper
    end.  The root is found by Brent's method (scipy.optimize.brentq).
    """
    from scipy.optimize import brentq

    def F(Z):
        rb = r_break_of(Z) if r_break_of else None
        return threshold_mismatch(potential_of(Z), kappa, n, c=c, Z=Z, r_break=rb, **kw)

    lo, hi = bracket
    if not (F(lo) > 0.0 > F(hi)):
        raise InputError(f"bracket={bracket!r} does not hold the threshold charge of n={n}, kappa={kappa}")
    return brentq(F, lo, hi, xtol=xtol, rtol=4 * np.finfo(float).eps, maxiter=200)
