"""Exact bound states of the point-Coulomb Dirac equation, in mpmath (tests only).

An outside reference for radial integrals of any hydrogen-like state: it uses none of the
package's code.  With W = c^2 (n_r + gamma) / N the total energy, n_r = n - |kappa|,
gamma = sqrt(kappa^2 - (Z/c)^2), N = sqrt(n_r^2 + 2 n_r gamma + kappa^2), lambda = Z / N and
x = 2 lambda r, the radial functions are (H. A. Bethe, E. E. Salpeter, *Quantum Mechanics of
One- and Two-Electron Atoms*, 1957, §14; V. B. Berestetskii, E. M. Lifshitz,
L. P. Pitaevskii, *Quantum Electrodynamics*, §36)

    P = C sqrt(1 + W/c^2) x^gamma e^(-x/2) [(N - kappa) M(-n_r, 2 gamma + 1, x) + s1 n_r M(1 - n_r, 2 gamma + 1, x)]
    Q = C s0 sqrt(1 - W/c^2) x^gamma e^(-x/2) [(N - kappa) M(-n_r, 2 gamma + 1, x) + s2 n_r M(1 - n_r, 2 gamma + 1, x)]

with Kummer's M (a polynomial here).  The signs s0, s1, s2 are not taken from memory: they
are the ones for which (P, Q) satisfies the radial equations

    P' = -kappa P / r + (W + Z/r + c^2) Q / c,    Q' = kappa Q / r - (W + Z/r - c^2) P / c

(checked at construction, residual below 1e-25); C normalises int (P^2 + Q^2) dr = 1 and makes
P > 0 near the origin.  Since P and Q are r^gamma e^(-lambda r) times polynomials, every
integral int (P_a P_b + Q_a Q_b) r^s dr is a finite sum of Gamma functions (exact).
"""

from __future__ import annotations

from dataclasses import dataclass

import mpmath as mp

mp.mp.dps = 40


@dataclass(frozen=True)
class CoulombState:
    Z: object
    n: int
    kappa: int
    c: object
    gamma: object
    lam: object
    W: object
    p: tuple  # coefficients of P / (r^gamma e^(-lam r)) in powers of r
    q: tuple  # same for Q

    @property
    def eps(self):
        """Binding energy W - c^2."""
        return self.W - self.c**2

    def radial(self, r):
        r = mp.mpf(r)
        base = r**self.gamma * mp.exp(-self.lam * r)
        return base * mp.polyval(self.p[::-1], r), base * mp.polyval(self.q[::-1], r)


def _kummer(m: int, b, scale) -> list:
    """Coefficients of M(-m, b, scale r) in powers of r (m >= 0)."""
    out, term = [], mp.mpf(1)
    for j in range(m + 1):
        out.append(term * scale**j)
        term = term * (j - m) / ((b + j) * (j + 1))
    return out


def _add(u, v, a=1, b=1):
    n = max(len(u), len(v))
    u, v = list(u) + [0] * (n - len(u)), list(v) + [0] * (n - len(v))
    return [a * x + b * y for x, y in zip(u, v)]


def _mul(u, v):
    out = [mp.mpf(0)] * (len(u) + len(v) - 1)
    for i, x in enumerate(u):
        for j, y in enumerate(v):
            out[i + j] += x * y
    return out


def _integral(g, lam, coeffs, s):
    """int r^(g + s) e^(-lam r) sum_j coeffs_j r^j dr, exact."""
    return mp.fsum(cj * mp.gamma(g + s + j + 1) / lam ** (g + s + j + 1) for j, cj in enumerate(coeffs))


def state(Z, n: int, kappa: int, c) -> CoulombState:
    Z, c = mp.mpf(Z), mp.mpf(c)
    nr = n - abs(kappa)
    assert nr >= 0 and (nr > 0 or kappa < 0)
    g = mp.sqrt(kappa * kappa - (Z / c) ** 2)
    N = mp.sqrt(nr * nr + 2 * nr * g + kappa * kappa)
    W, lam = c * c * (nr + g) / N, Z / N
    scale = 2 * lam
    m0 = _kummer(nr, 2 * g + 1, scale)
    m1 = _kummer(nr - 1, 2 * g + 1, scale) if nr > 0 else [mp.mpf(0)]
    pre = scale**g
    best = None
    for s0 in (1, -1):
        for s1 in (1, -1):
            for s2 in (1, -1):
                p = [pre * mp.sqrt(1 + W / c**2) * x for x in _add(m0, m1, N - kappa, s1 * nr)]
                q = [pre * s0 * mp.sqrt(1 - W / c**2) * x for x in _add(m0, m1, N - kappa, s2 * nr)]
                st = CoulombState(Z, n, kappa, c, g, lam, W, tuple(p), tuple(q))
                res = _residual(st)
                if best is None or res < best[0]:
                    best = (res, st)
    res, st = best
    assert res < mp.mpf("1e-25"), res
    norm = _integral(2 * g, 2 * lam, _add(_mul(st.p, st.p), _mul(st.q, st.q)), 0)
    sign = 1 if st.p[0] > 0 else -1
    k = sign / mp.sqrt(norm)
    return CoulombState(Z, n, kappa, c, g, lam, W, tuple(k * x for x in st.p), tuple(k * x for x in st.q))


def _residual(st: CoulombState):
    """Largest relative residual of the radial equations at a few radii."""
    worst = mp.mpf(0)
    for r in (mp.mpf("0.3"), mp.mpf(1), mp.mpf(3)):
        r = r / st.lam
        P, Q = st.radial(r)
        dP = mp.diff(lambda x: st.radial(x)[0], r)
        dQ = mp.diff(lambda x: st.radial(x)[1], r)
        e1 = dP + st.kappa * P / r - (st.W + st.Z / r + st.c**2) * Q / st.c
        e2 = dQ - st.kappa * Q / r + (st.W + st.Z / r - st.c**2) * P / st.c
        scale = abs(P) / r + abs(Q) / r + abs(dP) + abs(dQ)
        worst = max(worst, abs(e1) / scale, abs(e2) / scale)
    return worst


def moment(a: CoulombState, b: CoulombState, s, parts: str = "PP+QQ"):
    """int (P_a P_b + Q_a Q_b) r^s dr ("PP+QQ"), or "PQ" for int P_a Q_b r^s dr; exact."""
    if parts == "PQ":
        coeffs = _mul(a.p, b.q)
    else:
        coeffs = _add(_mul(a.p, b.p), _mul(a.q, b.q))
    return _integral(a.gamma + b.gamma, a.lam + b.lam, coeffs, s)
