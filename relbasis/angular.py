"""Angular factors: Wigner 3j symbols and reduced matrix elements of C^k between kappa states.

The 3j symbol follows Racah's closed formula (A. R. Edmonds, *Angular Momentum in Quantum
Mechanics*, Princeton 1957, eq. 3.7.3, from memory), the 6j symbol Racah's sum (Edmonds eq.
6.3.7; D. A. Varshalovich et al., *Quantum Theory of Angular Momentum*, World Scientific 1988,
sec. 9.2, from memory); arguments are given doubled (2j, 2m) so that half-integers stay exact
integers.  The reduced matrix element of the normalised spherical
harmonic C^k between relativistic orbitals is

    <kappa_b || C^k || kappa_a> = (-1)^(j_b + 1/2) sqrt((2j_a+1)(2j_b+1)) (j_b k j_a; -1/2 0 1/2)

when l_a + k + l_b is even and zero otherwise (W. R. Johnson, *Atomic Structure Theory*,
Springer 2007, from memory).  The same factor serves the small components, whose orbital
momenta are both flipped.
"""

from __future__ import annotations

from fractions import Fraction
from functools import lru_cache
from math import factorial, prod, sqrt

from .vocabulary import j_twice, orbital_l


@lru_cache(maxsize=4096)
def wigner_3j_doubled(j1: int, j2: int, j3: int, m1: int, m2: int, m3: int) -> float:
    """(j1/2 j2/2 j3/2; m1/2 m2/2 m3/2), all arguments doubled."""
    if m1 + m2 + m3 != 0:
        return 0.0
    if any((j + m) % 2 for j, m in ((j1, m1), (j2, m2), (j3, m3))):
        return 0.0
    if abs(m1) > j1 or abs(m2) > j2 or abs(m3) > j3:
        return 0.0
    if j3 > j1 + j2 or j3 < abs(j1 - j2) or (j1 + j2 + j3) % 2:
        return 0.0
    f = lambda x: factorial(x // 2)  # noqa: E731  (x is even here)
    tri = f(j1 + j2 - j3) * f(j1 - j2 + j3) * f(-j1 + j2 + j3) / f(j1 + j2 + j3 + 2)
    pre = sqrt(tri * f(j1 + m1) * f(j1 - m1) * f(j2 + m2) * f(j2 - m2) * f(j3 + m3) * f(j3 - m3))
    total = 0.0
    kmin = max(0, j2 - j3 - m1, j1 - j3 + m2)
    kmax = min(j1 + j2 - j3, j1 - m1, j2 + m2)
    for k in range(kmin, kmax + 1, 2):
        den = f(k) * f(j1 + j2 - j3 - k) * f(j1 - m1 - k) * f(j2 + m2 - k) * f(j3 - j2 + m1 + k) * f(j3 - j1 - m2 + k)
        total += (-1) ** (k // 2) / den
    sign = (-1) ** ((j1 - j2 - m3) // 2)
    return sign * pre * total


def _triangle(a: int, b: int, c: int) -> Fraction | None:
    """Delta(abc)^2 = (a+b-c)! (a-b+c)! (-a+b+c)! / (a+b+c+1)! for doubled a, b, c, or None when
    (a/2, b/2, c/2) do not form a triangle with an integer sum."""
    if c > a + b or c < abs(a - b) or (a + b + c) % 2:
        return None
    return Fraction(factorial((a + b - c) // 2) * factorial((a - b + c) // 2) * factorial((-a + b + c) // 2),
                    factorial((a + b + c) // 2 + 1))


@lru_cache(maxsize=65536)
def wigner_6j_doubled(j1: int, j2: int, j3: int, j4: int, j5: int, j6: int) -> float:
    """{j1/2 j2/2 j3/2; j4/2 j5/2 j6/2}, all arguments doubled.

    Racah's formula: Delta(j1 j2 j3) Delta(j1 j5 j6) Delta(j4 j2 j6) Delta(j4 j5 j3) times
    sum_t (-1)^t (t+1)! / [prod_i (t - a_i)! prod_k (b_k - t)!], with the triad sums
    a = (j1+j2+j3, j1+j5+j6, j4+j2+j6, j4+j5+j3) and b = (j1+j2+j4+j5, j2+j3+j5+j6, j3+j1+j6+j4)
    (module docstring).  The sum is exact in rational arithmetic; only the final square root is
    rounded, so the result is correct to a few ulp for any arguments.
    """
    deltas = [_triangle(j1, j2, j3), _triangle(j1, j5, j6), _triangle(j4, j2, j6), _triangle(j4, j5, j3)]
    if any(d is None for d in deltas):
        return 0.0
    a = [(j1 + j2 + j3) // 2, (j1 + j5 + j6) // 2, (j4 + j2 + j6) // 2, (j4 + j5 + j3) // 2]
    b = [(j1 + j2 + j4 + j5) // 2, (j2 + j3 + j5 + j6) // 2, (j3 + j1 + j6 + j4) // 2]
    total = Fraction(0)
    for t in range(max(a), min(b) + 1):
        den = prod(factorial(t - x) for x in a) * prod(factorial(y - t) for y in b)
        total += Fraction((-1) ** t * factorial(t + 1), den)
    if total == 0:
        return 0.0
    square = total * total * deltas[0] * deltas[1] * deltas[2] * deltas[3]
    magnitude = sqrt(float(square))  # float() of a Fraction rounds correctly, however large its parts
    return magnitude if total > 0 else -magnitude


def reduced_c(k: int, kappa_b: int, kappa_a: int) -> float:
    """<kappa_b || C^k || kappa_a> (see module docstring)."""
    la, lb = orbital_l(kappa_a), orbital_l(kappa_b)
    if (la + k + lb) % 2:
        return 0.0
    ja, jb = j_twice(kappa_a), j_twice(kappa_b)
    sign = -1.0 if ((jb + 1) // 2) % 2 else 1.0
    return sign * sqrt((ja + 1) * (jb + 1)) * wigner_3j_doubled(jb, 2 * k, ja, -1, 0, 1)


def dipole_partners(kappa: int) -> tuple[int, ...]:
    """The symmetries an E1 transition reaches from kappa (|j' - j| <= 1, l' = l +- 1)."""
    out = []
    for kb in range(-abs(kappa) - 2, abs(kappa) + 3):
        if kb != 0 and reduced_c(1, kb, kappa) != 0.0:
            out.append(kb)
    return tuple(out)


def clebsch_gordan_doubled(j1: int, m1: int, j2: int, m2: int, J: int, M: int) -> float:
    """<j1 m1 j2 m2 | J M>, arguments doubled: (-1)^(j1 - j2 + M) sqrt(2J+1) (j1 j2 J; m1 m2 -M)."""
    sign = -1.0 if ((j1 - j2 + M) // 2) % 2 else 1.0
    return sign * sqrt(J + 1) * wigner_3j_doubled(j1, j2, J, m1, m2, -M)


def _spinor(kappa: int, m2: int):
    """Omega_{kappa m} = sum_mu <l, m - mu; 1/2, mu | j m> Y_{l, m - mu} chi_mu: [(mu2, ml, coefficient)]."""
    l, j2 = orbital_l(kappa), j_twice(kappa)
    out = []
    for mu2 in (1, -1):
        ml2 = m2 - mu2
        if abs(ml2) <= 2 * l:
            out.append((mu2, ml2 // 2, clebsch_gordan_doubled(2 * l, ml2, 1, mu2, j2, m2)))
    return out


def _gaunt(lb: int, mb: int, k: int, q: int, la: int, ma: int) -> float:
    """<Y_{lb mb} | C^k_q | Y_{la ma}> = (-1)^mb sqrt((2lb+1)(2la+1)) (lb k la; 0 0 0)(lb k la; -mb q ma)."""
    sign = -1.0 if mb % 2 else 1.0
    return sign * sqrt((2 * lb + 1) * (2 * la + 1)) * wigner_3j_doubled(2 * lb, 2 * k, 2 * la, 0, 0, 0) \
        * wigner_3j_doubled(2 * lb, 2 * k, 2 * la, -2 * mb, 2 * q, 2 * ma)


def c1_element(kappa_b: int, kappa_a: int, m2: int = 1) -> float:
    """<Omega_{kappa_b m}| C^1_0 |Omega_{kappa_a m}> for m = m2/2, built from the spinors."""
    lb, la = orbital_l(kappa_b), orbital_l(kappa_a)
    total = 0.0
    for mu_b, ml_b, cb in _spinor(kappa_b, m2):
        for mu_a, ml_a, ca in _spinor(kappa_a, m2):
            if mu_a == mu_b:
                total += cb * ca * _gaunt(lb, ml_b, 1, 0, la, ml_a)
    return total


def sigma_element(kappa_b: int, kappa_a: int, m2: int = 1) -> float:
    """<Omega_{kappa_b m}| sigma_z |Omega_{kappa_a m}> for m = m2/2 (non-zero only for l_b = l_a)."""
    if orbital_l(kappa_b) != orbital_l(kappa_a):
        return 0.0
    total = 0.0
    for mu_b, ml_b, cb in _spinor(kappa_b, m2):
        for mu_a, ml_a, ca in _spinor(kappa_a, m2):
            if mu_a == mu_b and ml_a == ml_b:
                total += cb * ca * mu_a  # sigma_z chi_mu = 2 mu chi_mu, and mu_a is 2 mu
    return total
