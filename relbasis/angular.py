"""Angular factors: Wigner 3j symbols and reduced matrix elements of C^k between kappa states.

The 3j symbol follows Racah's closed formula (A. R. Edmonds, *Angular Momentum in Quantum
Mechanics*, Princeton 1957, eq. 3.7.3, from memory); arguments are given doubled (2j, 2m) so
that half-integers stay exact integers.  The reduced matrix element of the normalised spherical
harmonic C^k between relativistic orbitals is

    <kappa_b || C^k || kappa_a> = (-1)^(j_b + 1/2) sqrt((2j_a+1)(2j_b+1)) (j_b k j_a; -1/2 0 1/2)

when l_a + k + l_b is even and zero otherwise (W. R. Johnson, *Atomic Structure Theory*,
Springer 2007, from memory).  The same factor serves the small components, whose orbital
momenta are both flipped.
"""

from __future__ import annotations

from functools import lru_cache
from math import factorial, sqrt

from .analytic import j_twice, orbital_l


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
