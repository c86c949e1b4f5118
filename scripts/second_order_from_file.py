#!/usr/bin/env python
"""Second-order Coulomb energies from an exported relbasis basis file alone.

    python scripts/second_order_from_file.py FILE.h5 [--l-max L] [--negative-branch] [--json]

Reads only the file (HDF5 through h5py, or the .npz archive with its .json sidecar) and sums the
second-order energy that ``relbasis.second_order`` sums, with numpy, h5py, scipy.special.zeta
and the standard library: no relbasis import.  It is the proof that the file holds everything a
many-body code needs, and a template for writing one (docs/file-format.md, "Second-order sums
from the file alone").

Which energy (the same rule as the package):

* **pair** (no group ``core``, layout version 1): the 1s^2 pair of the bare nucleus, H0 the
  Dirac Hamiltonian of each electron and V = 1/r12.  In the nonrelativistic limit this is the
  coefficient E2 of the 1/Z expansion (C. W. Scherr, R. E. Knight, Rev. Mod. Phys. 35, 436
  (1963): E2 = -0.157666429 hartree, from memory).
* **core** (group ``core``, no valence electron): the correlation energy of the closed
  Dirac–Hartree–Fock core to second order (Møller–Plesset partition: H0 the Fock operator).
* **valence** (group ``core`` and a valence electron): the second-order energy of the electron
  v outside the core in the V^(N-1) frozen-core basis, E(N) - E(N-1 core).

With g_ijkl = <ij|1/r12|kl>, core orbitals a, b, intermediate m, n and binding energies eps,
Rayleigh–Schrödinger perturbation theory gives (W. R. Johnson, *Atomic Structure Theory*,
Springer 2007, ch. 5; I. Lindgren, J. Morrison, *Atomic Many-Body Theory*, Springer 1986, from
memory)

    E_core = 1/2 sum_abmn  (g_mnab^2 - g_mnab g_nmab) / (eps_a + eps_b - eps_m - eps_n)
    E_v    =     sum_amn   (g_mnav^2 - g_mnav g_nmav) / (eps_a + eps_v - eps_m - eps_n)
           -     sum_abn   (g_vnab^2 - g_vnab g_nvab) / (eps_a + eps_b - eps_v - eps_n)

(E_v averaged over the 2j_v + 1 substates of v; m, n over every state outside the core, v
included).  For the pair a = b = 1s and (m, n) runs over every pair but (1s, 1s), weight 1/2.

Magnetic sums in closed form (A. R. Edmonds, *Angular Momentum in Quantum Mechanics*, Princeton
1957, ch. 6), with X_k(ijkl) = <i||C^k||k> <j||C^k||l> R^k(ijkl):

    sum_m g_ijkl^2       = sum_k X_k(ijkl)^2 / (2k+1)
    sum_m g_ijkl g_jikl  = - sum_kk' (-1)^(k+k') {j_i j_k k; j_j j_l k'} X_k(ijkl) X_k'(jikl)

Radial integrals: R^k(mnab) = int rho_ma(r) Y^k[rho_nb](r) / r dr, rho_ij = P_i P_j + Q_i Q_j,
with Hartree's function Y^k (D. R. Hartree, *The Calculation of Atomic Structures*, Wiley
1957; W. R. Johnson, *Atomic Structure Theory*, Springer 2007, ch. 3) integrated panel by panel
on the file's Gauss–Legendre quadrature (a spectral integration matrix, L. N. Trefethen,
*Spectral Methods in MATLAB*, SIAM 2000, from memory).  For one pair (a, b) and one block of
symmetries (kappa_m, kappa_n) the whole (m x n) array of R^k is one matrix product.

Partial waves: a term belongs to L = the larger l of m and n (for the blocked-pair term of
E_v: the l of n).  The tail beyond l_max follows sum_p A_p (L + 1/2)^-p, p = 4, 5, 6 (C.
Schwartz, Phys. Rev. 126, 1015 (1962); R. N. Hill, J. Chem. Phys. 83, 1173 (1985), from memory).

Bad input (missing or foreign file, unknown layout version, a kappa the sum needs but the file
lacks, a grid that is not the quadrature): one line on stderr, exit status 2.
"""

from __future__ import annotations

import argparse
import json
import math
import re
import sys
import zipfile
from fractions import Fraction
from math import factorial, sqrt
from pathlib import Path

import h5py
import numpy as np
from scipy.special import zeta

FORMAT = "relbasis-basis"
LAYOUTS = (1, 2)  # 1: bare nucleus; 2: a Dirac–Hartree–Fock core (group "core")
L_MAX_LIMIT = 30
FIT_POWERS = (4, 5, 6)  # powers of 1/(L + 1/2) in the law of the increments
EXTRAPOLATION_START = 3  # smallest L whose increment enters the fit (the law is asymptotic)
RELATIVISTIC_POWERS = (2, 4, 5)  # the alternative law: the relativistic part falls as (L + 1/2)^-2
LETTERS = "spdfghiklmnoqrtuvwxyz"  # l = 0, 1, 2, ... (j skipped after i, common practice)


class Refused(Exception):
    """A file or option this script cannot use: printed as one line, exit status 2."""


# ------------------------------------------------------------------------------------------
# kappa conventions (common practice): kappa = -(l+1) for j = l+1/2, +l for j = l-1/2

def orbital_l(kappa: int) -> int:
    return kappa if kappa > 0 else -kappa - 1


def j_twice(kappa: int) -> int:
    return 2 * abs(kappa) - 1


def kappas_through(l_max: int) -> list[int]:
    """-1, 1, -2, 2, ..., -(l_max + 1): every symmetry with l <= l_max."""
    out = []
    for l in range(l_max + 1):
        out += [-(l + 1)] + ([l] if l else [])
    return sorted(out, key=lambda k: (abs(k), k > 0))


def parse_label(label: str) -> tuple[int, int]:
    """'3s1/2' -> (n, kappa) = (3, -1)."""
    m = re.match(rf"^(\d+)([{LETTERS}])(\d+)/2$", label.strip())
    if not m:
        raise Refused(f"valence label {label!r} is not a state label such as '3s1/2'")
    n, l, j2 = int(m.group(1)), LETTERS.index(m.group(2)), int(m.group(3))
    if j2 == 2 * l + 1:
        return n, -(l + 1)
    if j2 == 2 * l - 1 and l > 0:
        return n, l
    raise Refused(f"valence label {label!r}: j = {j2}/2 is impossible for l = {l}")


# ------------------------------------------------------------------------------------------
# angular factors, arguments doubled (2j, 2m) so that half-integers stay integers

def wigner_3j_doubled(j1, j2, j3, m1, m2, m3) -> float:
    """(j1/2 j2/2 j3/2; m1/2 m2/2 m3/2): Racah's closed formula (A. R. Edmonds, *Angular Momentum
    in Quantum Mechanics*, Princeton 1957, eq. 3.7.3, from memory), exact in rationals."""
    if m1 + m2 + m3 != 0 or any((j + m) % 2 for j, m in ((j1, m1), (j2, m2), (j3, m3))):
        return 0.0
    if abs(m1) > j1 or abs(m2) > j2 or abs(m3) > j3 or j3 > j1 + j2 or j3 < abs(j1 - j2) or (j1 + j2 + j3) % 2:
        return 0.0
    f = lambda x: factorial(x // 2)  # noqa: E731 (x even here)
    square = Fraction(f(j1 + j2 - j3) * f(j1 - j2 + j3) * f(-j1 + j2 + j3), f(j1 + j2 + j3 + 2)) \
        * f(j1 + m1) * f(j1 - m1) * f(j2 + m2) * f(j2 - m2) * f(j3 + m3) * f(j3 - m3)
    total = Fraction(0)
    for t in range(max(0, j2 - j3 - m1, j1 - j3 + m2), min(j1 + j2 - j3, j1 - m1, j2 + m2) + 1, 2):
        den = f(t) * f(j1 + j2 - j3 - t) * f(j1 - m1 - t) * f(j2 + m2 - t) * f(j3 - j2 + m1 + t) * f(j3 - j1 - m2 + t)
        total += Fraction((-1) ** (t // 2), den)
    sign = -1.0 if ((j1 - j2 - m3) // 2) % 2 else 1.0
    return sign * float(total) * sqrt(float(square))


def _triangle(a, b, c):
    """Delta(abc)^2 for doubled a, b, c, or None if they do not form a triangle."""
    if c > a + b or c < abs(a - b) or (a + b + c) % 2:
        return None
    return Fraction(factorial((a + b - c) // 2) * factorial((a - b + c) // 2) * factorial((-a + b + c) // 2),
                    factorial((a + b + c) // 2 + 1))


def wigner_6j_doubled(j1, j2, j3, j4, j5, j6) -> float:
    """{j1/2 j2/2 j3/2; j4/2 j5/2 j6/2}: Racah's sum (Edmonds eq. 6.3.7; D. A. Varshalovich et
    al., *Quantum Theory of Angular Momentum*, World Scientific 1988, sec. 9.2, from memory),
    exact in rationals, one rounding at the square root."""
    deltas = [_triangle(j1, j2, j3), _triangle(j1, j5, j6), _triangle(j4, j2, j6), _triangle(j4, j5, j3)]
    if any(d is None for d in deltas):
        return 0.0
    a = [(j1 + j2 + j3) // 2, (j1 + j5 + j6) // 2, (j4 + j2 + j6) // 2, (j4 + j5 + j3) // 2]
    b = [(j1 + j2 + j4 + j5) // 2, (j2 + j3 + j5 + j6) // 2, (j3 + j1 + j6 + j4) // 2]
    total = Fraction(0)
    for t in range(max(a), min(b) + 1):
        den = math.prod(factorial(t - x) for x in a) * math.prod(factorial(y - t) for y in b)
        total += Fraction((-1) ** t * factorial(t + 1), den)
    if total == 0:
        return 0.0
    magnitude = sqrt(float(total * total * deltas[0] * deltas[1] * deltas[2] * deltas[3]))
    return magnitude if total > 0 else -magnitude


def reduced_c(k: int, kappa_b: int, kappa_a: int) -> float:
    """<kappa_b||C^k||kappa_a> = (-1)^(j_b + 1/2) sqrt((2j_a+1)(2j_b+1)) (j_b k j_a; -1/2 0 1/2)
    for l_a + k + l_b even, else 0 (W. R. Johnson, *Atomic Structure Theory*, Springer 2007,
    from memory); the same factor serves the small components."""
    if (orbital_l(kappa_a) + k + orbital_l(kappa_b)) % 2:
        return 0.0
    ja, jb = j_twice(kappa_a), j_twice(kappa_b)
    sign = -1.0 if ((jb + 1) // 2) % 2 else 1.0
    return sign * sqrt((ja + 1) * (jb + 1)) * wigner_3j_doubled(jb, 2 * k, ja, -1, 0, 1)


def allowed_k(k1: int, k2: int) -> range:
    """Multipoles k with |j1 - j2| <= k <= j1 + j2 and l1 + l2 + k even."""
    lo, hi = abs(j_twice(k1) - j_twice(k2)) // 2, (j_twice(k1) + j_twice(k2)) // 2
    return [k for k in range(lo, hi + 1) if (orbital_l(k1) + orbital_l(k2) + k) % 2 == 0]


_ANGULAR: dict = {}


def pair_angular(km, kn, ka, kb):
    """(d, x) with sum over all magnetic numbers of (g_mnab^2 - g_mnab g_nmab)
    = sum_k d_k R^k(mnab)^2 + sum_kk' x_kk' R^k(mnab) R^k'(nmab):

        d_k   = (<m||C^k||a> <n||C^k||b>)^2 / (2k+1)
        x_kk' = (-1)^(k+k') {j_m j_a k; j_n j_b k'} <m||C^k||a> <n||C^k||b> <n||C^k'||a> <m||C^k'||b>
    """
    key = (km, kn, ka, kb)
    if key not in _ANGULAR:
        direct, exchange = {}, {}
        for k in allowed_k(km, ka):
            ck = reduced_c(k, km, ka) * reduced_c(k, kn, kb)
            if ck == 0.0:
                continue
            direct[k] = ck * ck / (2 * k + 1)
            for kp in allowed_k(kn, ka):
                ckp = reduced_c(kp, kn, ka) * reduced_c(kp, km, kb)
                six = wigner_6j_doubled(j_twice(km), j_twice(ka), 2 * k, j_twice(kn), j_twice(kb), 2 * kp)
                if ckp != 0.0 and six != 0.0:
                    exchange[(k, kp)] = (-1) ** (k + kp) * six * ck * ckp
        _ANGULAR[key] = (direct, exchange)
    return _ANGULAR[key]


# ------------------------------------------------------------------------------------------
# radial integrals on the panel quadrature

def integration_matrix(nq: int) -> np.ndarray:
    """A with (A f)_i = int_{-1}^{x_i} p(x) dx, p the polynomial through the Gauss–Legendre nodes
    x_j: A = W V^-1, V the Legendre–Vandermonde matrix, W the antiderivatives of the Legendre
    polynomials at the nodes, int_{-1}^x P_n = (P_{n+1} - P_{n-1}) / (2n+1) (x + 1 for n = 0)."""
    x, _ = np.polynomial.legendre.leggauss(nq)
    V = np.polynomial.legendre.legvander(x, nq - 1)
    W = np.zeros((nq, nq))
    for n in range(nq):  # nq (about 10) polynomials, not grid points
        coef = np.zeros(nq + 1)
        if n == 0:
            coef[:2] = 1.0
        else:
            coef[n + 1], coef[n - 1] = 1.0 / (2 * n + 1), -1.0 / (2 * n + 1)
        W[:, n] = np.polynomial.legendre.legval(x, coef)
    return np.linalg.solve(V.T, W.T).T


def cumulative(w: np.ndarray, f: np.ndarray, A: np.ndarray) -> np.ndarray:
    """int_0^{r_i} f for every point r_i and every column of f (points x m): whole panels by
    their Gauss weights, the current panel through the integration matrix A."""
    nq = A.shape[0]
    F = f.reshape(-1, nq, f.shape[1])  # (panels, nq, m)
    wp = w.reshape(-1, nq)
    half = wp.sum(axis=1)[:, None, None] / 2.0  # half panel widths (Gauss weights sum to 2)
    partial = np.tensordot(A, F, axes=([1], [1])).transpose(1, 0, 2) * half
    whole = np.einsum("pq,pqm->pm", wp, F)
    before = np.cumsum(whole, axis=0) - whole  # the panels before each one
    return (partial + before[:, None, :]).reshape(f.shape)


_ORIGIN = {}


def origin_panel_kernel(k: int, nq: int, points: int = 240) -> np.ndarray:
    """W_ij = int_0^1 l_j(t) K(t_i, t) dt on the reference panel [0, 1]: l_j the Lagrange
    polynomials of the nq Gauss–Legendre nodes t_i, K(r, s) = (s/r)^k (s < r), (r/s)^(k+1)
    (s > r), homogeneous of degree 0, so that a first panel [0, b] needs only b W.  The part
    s < t_i is a polynomial (exact Gauss–Legendre); the part s > t_i is smooth in u = ln(t/t_i)."""
    if (k, nq) not in _ORIGIN:
        x, wx = np.polynomial.legendre.leggauss(nq)
        t = (x + 1.0) / 2.0
        bary = (-1.0) ** np.arange(nq) * np.sqrt((1 - x * x) * wx)

        def lagrange(s):  # barycentric formula (Berrut–Trefethen, SIAM Rev. 46, 501 (2004))
            terms = bary[None, :] / (s[:, None] - t[None, :])
            return terms / terms.sum(axis=1, keepdims=True)

        xa, wa = np.polynomial.legendre.leggauss(nq + k // 2 + 2)
        xu, wu = np.polynomial.legendre.leggauss(points)
        W = np.zeros((nq, nq))
        for i, ti in enumerate(t):  # nq target nodes, not grid points
            s = ti * (xa + 1.0) / 2.0
            W[i] += (wa * ti / 2.0 * (s / ti) ** k) @ lagrange(s)
            top = np.log(1.0 / ti)
            u = top * (xu + 1.0) / 2.0
            W[i] += (wu * top / 2.0 * np.exp(-k * u) * ti) @ lagrange(ti * np.exp(u))
        _ORIGIN[(k, nq)] = W
    return _ORIGIN[(k, nq)]


def yk(r, w, rho, k, A):
    """Y^k(r) = r^-k int_0^r s^k rho + r^(k+1) int_r^inf s^-(k+1) rho, every column of rho.
    The outer integral runs from the right end (the reversed grid is again a panel grid), so
    that far out it is not a small difference of two large totals.  A first panel that starts
    at the origin takes rho itself against the exact kernel there (origin_panel_kernel): s^-(k+1)
    rho is singular in it and s^k rho varies by (b/r_1)^k, which no interpolation follows."""
    nq = A.shape[0]
    rk = r**k
    inner = cumulative(w, rho * rk[:, None], A)
    g = rho / (rk * r)[:, None]
    outer = cumulative(w[::-1], g[::-1], A)[::-1]
    out = inner / rk[:, None] + outer * (rk * r)[:, None]
    width = float(np.sum(w[:nq]))
    start = r[0] - (1.0 + np.polynomial.legendre.leggauss(nq)[0][0]) * width / 2.0
    if rho.shape[0] > nq and abs(start) <= 1e-12 * width:
        beyond = np.sum(w[nq:, None] * g[nq:], axis=0)
        out[:nq] = width * (origin_panel_kernel(k, nq) @ rho[:nq]) + (rk[:nq] * r[:nq])[:, None] * beyond[None, :]
    return out


# ------------------------------------------------------------------------------------------
# the file

class _Source:
    """Uniform access to the HDF5 file or the .npz archive + .json sidecar."""

    def __init__(self, path: Path):
        self.path = path
        if not path.exists():
            raise Refused(f"basis file '{path}': no such file")
        if not path.is_file():
            raise Refused(f"basis file '{path}': not a regular file")
        if path.suffix == ".npz":
            side = path.with_suffix(".json")
            if not zipfile.is_zipfile(path) or not side.is_file():
                raise Refused(f"basis file '{path}': not an .npz archive with its .json sidecar")
            try:
                meta = json.loads(side.read_text(encoding="utf-8"))
                self._attrs, self._strings = dict(meta["attrs"]), dict(meta["strings"])
                with np.load(path, allow_pickle=False) as z:  # never unpickle
                    self._arrays = {k.replace(".", "/"): z[k] for k in z.files}
            except (ValueError, KeyError, TypeError, OSError, zipfile.BadZipFile) as e:
                raise Refused(f"basis file '{path}': unreadable .npz/.json pair ({type(e).__name__})") from None
            self._h5 = None
        else:
            if not h5py.is_hdf5(path):
                raise Refused(f"basis file '{path}': not an HDF5 file")
            self._h5 = h5py.File(path, "r")

    def close(self):
        if self._h5 is not None:
            self._h5.close()

    def attr(self, name, default=None):
        """Attribute 'name' or 'group/name'."""
        if self._h5 is None:
            return self._attrs.get(name, default)
        group, _, key = name.rpartition("/")
        if group and group not in self._h5:
            return default
        value = (self._h5[group] if group else self._h5).attrs.get(key, default)
        return value.decode() if isinstance(value, bytes) else value

    def has(self, name) -> bool:
        if self._h5 is None:
            return name in self._arrays or name in self._strings
        return name in self._h5

    def array(self, name) -> np.ndarray:
        if not self.has(name):
            raise Refused(f"basis file '{self.path}': lacks the dataset '{name}'")
        return np.asarray(self._arrays[name] if self._h5 is None else self._h5[name][()])

    def strings(self, name) -> np.ndarray:
        if not self.has(name):
            raise Refused(f"basis file '{self.path}': lacks the dataset '{name}'")
        if self._h5 is None:
            return np.array(self._strings[name], dtype=object)
        return np.asarray(self._h5[name].asstr()[()], dtype=object)

    def kappas(self) -> list[int]:
        names = self._h5.keys() if self._h5 is not None else {k.split("/")[0] for k in self._arrays}
        out = [int(m.group(1)) for g in names if (m := re.fullmatch(r"kappa_(-?\d+)", g))]
        return sorted(out, key=lambda k: (abs(k), k > 0))


def load(path) -> dict:
    """Everything the sums need: quadrature, c, the kind of energy, and per kappa the energies,
    branches, principal numbers, occupied flags and P, Q on the quadrature."""
    src = _Source(Path(path))
    try:
        where = f"basis file '{src.path}'"
        if src.attr("format") != FORMAT:
            raise Refused(f"{where}: not a relbasis basis file (attribute format is not {FORMAT!r})")
        version = src.attr("layout_version")
        if isinstance(version, (bool, np.bool_)) or version not in LAYOUTS:
            shown = version.item() if isinstance(version, np.generic) else version
            raise Refused(f"{where}: layout_version {shown!r} unknown to this script (knows {list(LAYOUTS)})")
        r, w = src.array("quadrature/r").astype(float), src.array("quadrature/w").astype(float)
        grid = src.array("grid/r")
        if grid.shape != r.shape or not np.array_equal(grid, r):
            raise Refused(f"{where}: grid/r is not the quadrature (exported with a grid); export it on the default grid")
        nq = src.attr("quadrature_panel_points")
        if nq is None:
            raise Refused(f"{where}: lacks the attribute quadrature_panel_points (an older file): export it again")
        nq = int(nq)
        _check_panels(r, w, nq, where)
        c = float(src.attr("c_used", src.attr("c")))  # older files lack c_used: made with c
        kappas = {}
        for k in src.kappas():
            g = f"kappa_{k}"
            kappas[k] = {"energies": src.array(f"{g}/energies").astype(float),
                         "branches": src.strings(f"{g}/branches"),
                         "n": src.array(f"{g}/n").astype(int),
                         "P": src.array(f"{g}/P").astype(float), "Q": src.array(f"{g}/Q").astype(float),
                         "occupied": (src.array(f"{g}/occupied").astype(bool) if version == 2 else None)}
        data = {"path": str(src.path), "r": r, "w": w, "nq": nq, "c": c, "kappas": kappas, "kind": "pair"}
        if version == 2:
            valence = src.attr("core/electrons_valence", "") or ""
            if not valence:  # the config's own record of [electrons], as a cross-check
                valence = json.loads(src.attr("config_json", "{}")).get("electrons", {}).get("valence", "") or ""
            data["kind"] = "valence" if valence else "core"
            data["valence"] = valence
            # the core subshells in the config's order (the order only changes the rounding)
            data["core"] = list(zip(src.array("core/kappa").astype(int).tolist(), src.array("core/n").astype(int).tolist()))
        return data
    finally:
        src.close()


def _check_panels(r, w, nq, where) -> None:
    """The quadrature must be panels of nq Gauss–Legendre points, as the Y^k integration assumes."""
    if nq < 1 or r.size % nq or r.size == 0:
        raise Refused(f"{where}: quadrature_panel_points = {nq} does not divide the {r.size} quadrature points")
    x, wx = np.polynomial.legendre.leggauss(nq)
    half = w.reshape(-1, nq).sum(axis=1) / 2.0
    mid = r.reshape(-1, nq).mean(axis=1)
    if not np.allclose(w.reshape(-1, nq), half[:, None] * wx[None, :], rtol=1e-10, atol=0) or \
            not np.allclose(r.reshape(-1, nq), mid[:, None] + half[:, None] * x[None, :], rtol=1e-10, atol=0):
        raise Refused(f"{where}: the quadrature is not panels of {nq} Gauss–Legendre points")


# ------------------------------------------------------------------------------------------
# state sets

def kept(data, kappa, negative_branch) -> dict:
    """The roots of kappa in the sum: bound and positive, spurious ones above the middle of the
    gap (eps > -c^2: they belong to the positive-energy projector of the basis), the negative
    branch only on request.  Returns energies, P, Q and the root indices."""
    blk = data["kappas"][kappa]
    b, e = blk["branches"], blk["energies"]
    keep = (b == "bound") | (b == "positive") | ((b == "spurious") & (e > -data["c"] ** 2))
    if negative_branch:
        keep |= b == "negative"
    idx = np.flatnonzero(keep)
    return {"kappa": kappa, "roots": idx, "e": e[idx], "P": blk["P"][:, idx], "Q": blk["Q"][:, idx],
            "neg": b[idx] == "negative"}


def orbital(data, kappa, n, what) -> dict:
    """One orbital: the root of kappa with principal number n, as a one-state set."""
    if kappa not in data["kappas"]:
        raise Refused(f"basis file '{data['path']}': lacks kappa_{kappa}, needed for the {what}")
    blk = data["kappas"][kappa]
    # the (n - l - 1)-th bound root in energy order, which must carry the label n (as relbasis does:
    # a basis too coarse to count the nodes is refused rather than summed with the wrong orbital)
    bound = np.flatnonzero(blk["branches"] == "bound")
    place = n - orbital_l(kappa) - 1
    if place >= bound.size or blk["n"][bound[place]] != n:
        raise Refused(f"basis file '{data['path']}': bound root number {place + 1} of kappa {kappa} is not "
                      f"n = {n} (the {what}); the basis does not resolve it")
    i = int(bound[place])
    return {"kappa": kappa, "roots": np.array([i]), "e": blk["energies"][[i]], "P": blk["P"][:, [i]],
            "Q": blk["Q"][:, [i]], "neg": np.zeros(1, dtype=bool), "label": f"{n}{LETTERS[orbital_l(kappa)]}{j_twice(kappa)}/2"}


class Radial:
    """R^k(i j a b) for whole state sets I, J: rho_{iI a}^T diag(w/r) Y^k[rho_{jJ b}], with the
    Y^k of one orbital b kept while b is in use (they are the expensive part)."""

    def __init__(self, data):
        self.r, self.w = data["r"], data["w"]
        self.A = integration_matrix(data["nq"])
        self.cache, self.owner = {}, None

    @staticmethod
    def rho(orb, S):
        return S["P"] * orb["P"] + S["Q"] * orb["Q"]  # (points, states): orb is one column

    def y_over_r(self, b, S, k):
        key = (id(b), id(S), k)
        if self.owner is not b:  # a new orbital b: drop the functions of the one before
            self.cache, self.owner = {}, b
        if key not in self.cache:
            self.cache[key] = yk(self.r, self.w, self.rho(b, S), k, self.A) * (self.w / self.r)[:, None]
        return self.cache[key]

    def R(self, a, b, I, J, k):
        return self.rho(a, I).T @ self.y_over_r(b, J, k)  # (I states, J states)


def pair_sum(rad, a, b, M, N, l_index, by_l, exclude=None) -> float:
    """by_l[L] += sum_{m in M, n in N} (S_D - S_X)(mnab) / (eps_a + eps_b - eps_m - eps_n) over
    every magnetic number, block by block of symmetries (whole arrays of states per block).
    ``exclude(km, kn)``: a boolean (m x n) mask of pairs left out (the reference pair), or None.
    Returns the smallest |denominator| of a term with a negative-branch state (inf if none)."""
    gap = math.inf
    for km, Sm in M.items():
        for kn, Sn in N.items():
            direct, exchange = pair_angular(km, kn, a["kappa"], b["kappa"])
            if not direct:
                continue
            R = {k: rad.R(a, b, Sm, Sn, k) for k in direct}  # R^k(mnab)
            Rt = {kp: rad.R(a, b, Sn, Sm, kp).T for kp in {kp for _, kp in exchange}}  # R^k'(nmab)
            num = sum(d * R[k] * R[k] for k, d in direct.items())
            for (k, kp), x in exchange.items():
                num = num + x * R[k] * Rt[kp]
            delta = a["e"][0] + b["e"][0] - Sm["e"][:, None] - Sn["e"][None, :]
            mask = exclude(km, kn) if exclude is not None else None
            if mask is not None:
                delta, num = np.where(mask, 1.0, delta), np.where(mask, 0.0, num)
            by_l[l_index(km, kn)] += (num / delta).sum()
            one = Sm["neg"][:, None] ^ Sn["neg"][None, :]
            if one.any():  # one electron in each branch: the denominator can vanish (Brown–Ravenhall)
                gap = min(gap, float(np.abs(delta[one]).min()))
    return gap


def by_max_l(km, kn) -> int:
    return max(orbital_l(km), orbital_l(kn))


# ------------------------------------------------------------------------------------------
# the three energies

def second_order(data, l_max=6, negative_branch=False) -> dict:
    """The second-order energy of the file (module docstring) summed through l_max, with its
    partial-wave increments and extrapolation, as the JSON object the script prints."""
    if isinstance(l_max, bool) or not isinstance(l_max, int) or not 0 <= l_max <= L_MAX_LIMIT:
        raise Refused(f"--l-max {l_max!r}: valid an integer 0 <= L <= {L_MAX_LIMIT}")
    wanted = kappas_through(l_max)
    missing = [k for k in wanted if k not in data["kappas"]]
    if missing:
        have = list(data["kappas"])
        raise Refused(f"--l-max {l_max}: the file lacks kappa {missing} (it holds {have}); valid --l-max <= "
                      f"{_file_l_max(have)}")
    states = {k: kept(data, k, negative_branch) for k in wanted}
    rad = Radial(data)
    by_l = np.zeros(l_max + 1)
    gap = math.inf
    kind = data["kind"]
    if kind == "pair":
        s1 = orbital(data, -1, 1, "1s^2 pair")
        at = int(np.flatnonzero(states[-1]["roots"] == s1["roots"][0])[0])
        size = states[-1]["e"].size

        def exclude(km, kn):  # the reference pair (1s, 1s) itself
            if (km, kn) != (-1, -1):
                return None
            mask = np.zeros((size, size), dtype=bool)
            mask[at, at] = True
            return mask

        part = np.zeros_like(by_l)
        gap = pair_sum(rad, s1, s1, states, states, by_max_l, part, exclude)
        by_l += 0.5 * part  # the two ordered spin-orbital pairs of 1s^2
    else:
        core = [orbital(data, k, n, "core") for k, n in data["core"]]
        for k, blk in data["kappas"].items():  # the occupied flags and the core group must agree
            held = sorted(int(o["roots"][0]) for o in core if o["kappa"] == k)
            if held != np.flatnonzero(blk["occupied"]).tolist():
                raise Refused(f"basis file '{data['path']}': kappa_{k}/occupied disagrees with the group core")
        outside = {}
        for k in wanted:  # intermediate states: every kept root that is not a core orbital
            occ = data["kappas"][k]["occupied"][states[k]["roots"]]
            S = states[k]
            outside[k] = {"kappa": k, "roots": S["roots"][~occ], "e": S["e"][~occ], "P": S["P"][:, ~occ],
                          "Q": S["Q"][:, ~occ], "neg": S["neg"][~occ]}
        if kind == "core":
            for i, b in enumerate(core):
                for a in core[:i + 1]:
                    part = np.zeros_like(by_l)
                    gap = min(gap, pair_sum(rad, a, b, outside, outside, by_max_l, part))
                    by_l += (0.5 if a is b else 1.0) * part  # (b, a) equals (a, b)
        else:
            n_v, k_v = parse_label(data["valence"])
            v = orbital(data, k_v, n_v, "valence electron")
            first, second = np.zeros_like(by_l), np.zeros_like(by_l)
            for a in core:  # core excitations with v: m, n outside the core (v included)
                gap = min(gap, pair_sum(rad, a, v, outside, outside, by_max_l, first))
            for b in core:  # the core pairs (a, b) that v blocks; partial wave: the l of n
                for a in core:
                    gap = min(gap, pair_sum(rad, a, b, {k_v: v}, outside, lambda km, kn: orbital_l(kn), second))
            scale = 1.0 / (j_twice(k_v) + 1)  # average over the substates of v
            by_l += scale * first
            by_l -= scale * second
    energy = float(by_l.sum())
    tail, uncertainty = extrapolate(by_l)
    notes = []
    if l_max - EXTRAPOLATION_START + 1 < 2:
        notes.append(f"not extrapolated: needs --l-max >= {EXTRAPOLATION_START + 1}; the uncertainty is the size "
                     "of a pure (L+1/2)^-4 tail")
    if gap < math.inf:  # terms with one electron in each branch: relbasis flags them "brown-ravenhall"
        notes.append(f"brown-ravenhall: terms with one electron in each branch (smallest denominator {gap:.3g} "
                     "hartree) have no converged value: eps_m + eps_n = eps_a + eps_b has solutions in the two "
                     "continua (G. E. Brown, D. G. Ravenhall, Proc. R. Soc. A 208, 552 (1951))")
    spurious = sum(int((data["kappas"][k]["branches"][S["roots"]] == "spurious").sum()) for k, S in states.items())
    return {"kind": kind, "energy_hartree": energy, "extrapolated_hartree": energy + tail,
            "uncertainty_hartree": uncertainty, "increments_hartree": [float(x) for x in by_l],
            "l_max": l_max, "negative_branch": negative_branch,
            # for the text output: whether there was a fit, and how many flagged roots were summed
            "extrapolated": l_max - EXTRAPOLATION_START + 1 >= 2, "spurious_roots": spurious, "notes": notes}


def _file_l_max(kappas) -> int:
    top = -1
    while top < L_MAX_LIMIT and all(k in kappas for k in kappas_through(top + 1)):
        top += 1
    return top


def _hurwitz(p, start) -> float:
    """sum_{L >= start} (L + 1/2)^-p (Hurwitz zeta)."""
    return float(zeta(p, start + 0.5))


def fitted_tail(d, top, powers) -> float:
    """sum_p A_p zeta(p, top + 3/2), the A_p fitted exactly to the last len(powers) increments."""
    L = np.arange(top - len(powers) + 1, top + 1)
    A = np.linalg.solve((L[:, None] + 0.5) ** -np.array(powers, dtype=float)[None, :], d[L])
    return float(sum(a * _hurwitz(p, top + 1) for a, p in zip(A, powers)))


def extrapolate(d, powers=FIT_POWERS, start=EXTRAPOLATION_START) -> tuple[float, float]:
    """(tail, uncertainty) of the increments d_L beyond the last one.

    With n powers, A_p is fitted exactly to the last n increments and the tail is
    sum_p A_p zeta(p, l_max + 3/2); fits with 1, 2, 3 powers (as far as the increments from
    ``start`` allow): tail of the richest, uncertainty the largest change between consecutive
    fits, the difference from the fit of (L+1/2)^-2, ^-4, ^-5 (the relativistic part of the
    increments falls as (L+1/2)^-2, measured) and that from the tail of a pure power law with
    the exponent of the last two increments, whichever is largest.  Fewer than two increments from ``start``: tail 0, uncertainty |d_top| (top+1/2)^4
    zeta(4, top + 3/2), the size of a pure (L + 1/2)^-4 tail.
    """
    d = np.asarray(d, dtype=float)
    top = d.size - 1
    usable = top - start + 1
    if usable < 2:
        return 0.0, abs(float(d[top] * (top + 0.5) ** 4 * _hurwitz(4, top + 1)))
    tails = [fitted_tail(d, top, powers[:n]) for n in range(1, min(len(powers), usable) + 1)]
    spread = max(abs(y - x) for x, y in zip(tails, tails[1:])) if len(tails) > 1 else abs(tails[0])
    if usable >= len(RELATIVISTIC_POWERS):  # a relativistic (L+1/2)^-2 part bounds the uncertainty too
        spread = max(spread, abs(fitted_tail(d, top, RELATIVISTIC_POWERS) - tails[-1]))
    exponent = math.nan  # the power law the last two increments show
    if top >= 1 and d[top] != 0 and d[top - 1] != 0 and np.sign(d[top]) == np.sign(d[top - 1]):
        exponent = float(-np.log(d[top] / d[top - 1]) / np.log((top + 0.5) / (top - 0.5)))
    if math.isfinite(exponent) and exponent > 1.5:  # increments not yet on the law: a pure power with it
        measured = float(d[top] * (top + 0.5) ** exponent * zeta(exponent, top + 1.5))
        spread = max(spread, abs(measured - tails[-1]))
    return tails[-1], spread


# ------------------------------------------------------------------------------------------
# command line

class _Parser(argparse.ArgumentParser):
    def error(self, message):  # one line, exit status 2 (argparse would add the usage)
        print(f"second_order_from_file: {message}", file=sys.stderr)
        raise SystemExit(2)


def main(argv=None) -> int:
    p = _Parser(prog="second_order_from_file", description="Second-order Coulomb energy from a relbasis basis file.")
    p.add_argument("file", help="basis file: .h5/.hdf5, or .npz beside its .json sidecar")
    p.add_argument("--l-max", type=int, default=6, help="largest l of the intermediate states (default 6)")
    p.add_argument("--negative-branch", action="store_true", help="include the negative-branch roots")
    p.add_argument("--json", action="store_true", help="print a JSON object (hartree)")
    try:
        args = p.parse_args(argv)
    except SystemExit as e:  # --help (0) or a bad option (2, one line from _Parser.error)
        return int(e.code or 0)
    try:
        result = second_order(load(args.file), args.l_max, args.negative_branch)
    except Refused as e:
        print(f"second_order_from_file: {e}", file=sys.stderr)
        return 2
    except (OSError, KeyError, ValueError, TypeError) as e:  # a damaged file: still one line
        print(f"second_order_from_file: basis file '{args.file}': cannot be read ({type(e).__name__}: {e})".splitlines()[0],
              file=sys.stderr)
        return 2
    if args.json:
        print(json.dumps({k: result[k] for k in ("energy_hartree", "extrapolated_hartree", "uncertainty_hartree",
                                                  "increments_hartree", "l_max", "kind", "notes")}))
        return 0
    print(f"{result['kind']} second-order energy of {args.file} (hartree)")
    print("   L  increment")
    for L, d in enumerate(result["increments_hartree"]):
        print(f"  {L:2d}  {d: .12e}")
    print(f"energy (L <= {result['l_max']})  {result['energy_hartree']: .12e}")
    if result["extrapolated"]:
        print(f"extrapolated         {result['extrapolated_hartree']: .12e} +- {result['uncertainty_hartree']:.2e}")
    else:  # too few increments at L >= 3 for a fit: say so rather than print a number as a limit
        print(f"not extrapolated (needs --l-max >= {EXTRAPOLATION_START + 1}); a pure (L+1/2)^-4 tail would be "
              f"about {result['uncertainty_hartree']:.2e}")
    for note in result["notes"][1:] if not result["extrapolated"] else result["notes"]:
        print(f"note: {note}")
    if result["spurious_roots"]:
        print(f"note: {result['spurious_roots']} roots flagged spurious (eps > -c^2) are in the sum, as in relbasis")
    return 0


if __name__ == "__main__":
    sys.exit(main())
