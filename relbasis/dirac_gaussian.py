"""Matrices H and S of the radial Dirac equation in a Gaussian basis, per symmetry kappa.

The large-component functions are G_i = r^(l+1) exp(-zeta_i r^2) with l of kappa; the small
component depends on the balance scheme (R. E. Stanton, S. Havriliak, J. Chem. Phys. 81, 1910
(1984), from memory, for kinetic balance in finite bases; V. M. Shabaev et al., Phys. Rev.
Lett. 93, 130405 (2004), for DKB):

* ``none``: small-component Gaussians r^(lbar+1) exp(-zeta_i r^2), lbar = 2j - l, with the same
  exponents and coefficients of their own: families ``large`` (G, 0) and ``small`` (0, Gbar);
* ``rkb`` (restricted kinetic balance): ``large`` (G, 0) and ``balanced`` (0, D+G/2c), with
  D+- = d/dr +- kappa/r;
* ``dkb``: ``upper`` (G, D+G/2c) and ``lower`` (D-Gbar/2c, Gbar).

Every component is a polynomial Gaussian (:mod:`relbasis.gaussian`), so the symmetric form of
:mod:`relbasis.dirac`,

    H_fg = int [V (fP gP + fQ gQ) - 2c^2 fQ gQ + c (fQ D+gP + gQ D+fP)] dr,

is evaluated in closed form for the overlap, the derivative terms, the point nucleus and the
Gaussian nucleus, and on a Gauss–Legendre grid for the sphere and Fermi nuclei.  All
components vanish at the origin and at infinity, so the symmetric form is the matrix of H.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from .vocabulary import orbital_l
from .errors import InputError
from .gaussian import GaussPoly, coulomb, gauss_nucleus, overlap, radial_grid
from .nucleus import Nucleus
from .sampling import DenseChannels

from .vocabulary import GAUSSIAN_BALANCES as BALANCES  # noqa: E402  (the config vocabulary)

PANEL_POINTS = 16
"""Gauss–Legendre points per panel of the radial grid (relbasis.gaussian.radial_grid's default)."""


def _dplus(f: GaussPoly, kappa: int, sign: int = +1) -> GaussPoly:
    """(d/dr + sign * kappa / r) f."""
    return f.derivative() + f.over_r().scale(sign * kappa)


@dataclass(frozen=True)
class GaussFamily:
    """One kind of two-component function: P, Q and D+P as polynomial Gaussians."""

    kind: str
    P: GaussPoly = field(repr=False)
    Q: GaussPoly = field(repr=False)
    DP: GaussPoly = field(repr=False)
    DQ: GaussPoly | None = field(default=None, repr=False)  # D-Q, for the diagnostics

    @property
    def size(self) -> int:
        return len(self.P.exps)


def gaussian_families(balance: str, kappa: int, exps: np.ndarray, c: float) -> tuple[GaussFamily, ...]:
    fams = _families(balance, kappa, exps, c)
    return tuple(GaussFamily(f.kind, f.P, f.Q, f.DP, _dplus(f.Q, kappa, -1)) for f in fams)


def _families(balance: str, kappa: int, exps: np.ndarray, c: float) -> tuple[GaussFamily, ...]:
    l = orbital_l(kappa)
    lbar = l + 1 if kappa < 0 else l - 1  # lbar = 2j - l
    G = GaussPoly.monomial(exps, l + 1)
    zero = GaussPoly.zeros_like(G)
    dG = _dplus(G, kappa)
    if balance == "none":
        Gbar = GaussPoly.monomial(exps, lbar + 1)
        return GaussFamily("large", G, zero, dG), GaussFamily("small", zero, Gbar, zero)
    if balance == "rkb":
        return GaussFamily("large", G, zero, dG), GaussFamily("balanced", zero, dG.scale(1 / (2 * c)), zero)
    if balance == "dkb":
        Gbar = GaussPoly.monomial(exps, lbar + 1)
        lowP = _dplus(Gbar, kappa, -1).scale(1 / (2 * c))
        return (GaussFamily("upper", G, dG.scale(1 / (2 * c)), dG),
                GaussFamily("lower", lowP, Gbar, _dplus(lowP, kappa)))
    raise InputError(f"basis.balance = {balance!r}: valid for Gaussians are {', '.join(BALANCES)}")


@dataclass(frozen=True)
class GaussianDiracBasis:
    """The two-component Gaussian basis of one symmetry kappa."""

    exponents: np.ndarray
    kappa: int
    balance: str
    c: float
    families: tuple[GaussFamily, ...] = field(repr=False)

    @classmethod
    def build(cls, exponents, kappa: int, balance: str, c: float) -> "GaussianDiracBasis":
        if isinstance(kappa, bool) or int(kappa) != kappa or kappa == 0:
            raise InputError(f"kappa = {kappa!r}: must be a non-zero integer (kappa = -(l+1) or +l)")
        exps = np.asarray(exponents, dtype=float)
        return cls(exps, int(kappa), balance, c, gaussian_families(balance, int(kappa), exps, c))

    @property
    def size(self) -> int:
        return sum(f.size for f in self.families)

    @property
    def family_sizes(self) -> tuple[int, ...]:
        return tuple(f.size for f in self.families)

    def _stack(self, name: str) -> list[GaussPoly]:
        return [getattr(f, name) for f in self.families]

    def components(self, r: np.ndarray, channels=("P", "Q", "DP", "DQ")):
        """Dense (P, Q, D+P, D-Q) of every basis function at radii r: (len(r), size) arrays."""
        r = np.asarray(r, dtype=float)
        return tuple(np.concatenate([g.values(r) for g in self._stack(ch)], axis=1) for ch in channels)

    def _blocks(self, integral) -> np.ndarray:
        """Assemble a (size x size) matrix from integral(f_family, g_family) block by block."""
        rows = [np.concatenate([integral(f, g) for g in self.families], axis=1) for f in self.families]
        return np.concatenate(rows, axis=0)

    def sample(self, grid) -> DenseChannels:
        """The functions on the quadrature grid (r, w): the family's sampled form."""
        r, w = grid
        P, Q, DP, DQ = self.components(r)
        return DenseChannels(np.asarray(r, dtype=float), np.asarray(w, dtype=float), P, Q, DP, DQ, self.kappa,
                             PANEL_POINTS)

    def kinetic_and_overlap(self, sampled=None):
        """T (kinetic and rest mass) and S in closed form (the sampled functions are not needed)."""
        c = self.c

        def s_block(f, g):
            return overlap(f.P, g.P) + overlap(f.Q, g.Q)

        def t_block(f, g):  # everything but the potential
            return -2 * c * c * overlap(f.Q, g.Q) + c * (overlap(f.Q, g.DP) + overlap(f.DP, g.Q))

        return self._blocks(t_block), self._blocks(s_block)

    def local_matrix(self, term, sampled) -> np.ndarray:
        """int V (fP gP + fQ gQ) dr of a local term: in closed form for a point or Gaussian
        nucleus (the term's source), else on the sampled grid."""
        if isinstance(term.source, Nucleus) and term.source.model in ("point", "gauss"):
            return self.potential_matrix(term.source)
        wV = (sampled.w * term.potential(sampled.r))[:, None]
        return sampled.P.T @ (wV * sampled.P) + sampled.Q.T @ (wV * sampled.Q)

    def matrices(self, nucleus: Nucleus, grid=None):
        """H and S; the potential term in closed form (point, gauss) or on ``grid`` (r, w)."""
        T, S = self.kinetic_and_overlap()
        return T + self.potential_matrix(nucleus, grid), S

    def potential_matrix(self, nucleus: Nucleus, grid=None) -> np.ndarray:
        Z = nucleus.Z
        if Z == 0:
            return np.zeros((self.size, self.size))
        if nucleus.model == "point":
            return self._blocks(lambda f, g: coulomb(f.P, g.P, Z) + coulomb(f.Q, g.Q, Z))
        if nucleus.model == "gauss":
            eta = nucleus.gauss_exponent
            return self._blocks(lambda f, g: gauss_nucleus(f.P, g.P, Z, eta) + gauss_nucleus(f.Q, g.Q, Z, eta))
        r, w = grid if grid is not None else self.grid(nucleus)
        P, Q = self.components(r, ("P", "Q"))
        wV = (w * nucleus.potential(r))[:, None]
        return P.T @ (wV * P) + Q.T @ (wV * Q)

    def grid(self, nucleus: Nucleus):
        """Quadrature grid (r, w) for these exponents, with the nuclear edge as a panel end."""
        breaks = ()
        if nucleus.model == "sphere":
            breaks = (nucleus.sphere_radius_bohr,)
        elif nucleus.model == "fermi":
            cf, af = nucleus.fermi_c_bohr, nucleus.fermi_a_bohr
            breaks = tuple(x for x in (cf - 4 * af, cf - 2 * af, cf, cf + 2 * af, cf + 4 * af, cf + 8 * af) if x > 0)
        return radial_grid(self.exponents, breaks)


@dataclass(frozen=True)
class GaussianSet:
    """Everything one solve shares across symmetries for the Gaussian family: the exponents,
    the radial grid and how the pipeline of :mod:`relbasis.solver` treats them."""

    exponents: np.ndarray
    grid: tuple
    balance: str
    c: float
    threshold: float | None = None
    wall_radius = None  # no cavity wall
    origin_series = False  # no knot at the origin to hand the r^gamma series to
    panel_points = PANEL_POINTS  # the grid is panels of this many Gauss–Legendre points

    def build(self, kappa: int) -> GaussianDiracBasis:
        return GaussianDiracBasis.build(self.exponents, kappa, self.balance, self.c)

    def sample(self, basis: GaussianDiracBasis) -> DenseChannels:
        return basis.sample(self.grid)

    def node_matrix(self, basis, sampled) -> np.ndarray:
        return sampled.P

    def band_order(self, basis):
        return None  # dense functions: no band structure

    def record(self) -> tuple[dict, dict]:
        """(attributes, arrays) of the exported file that rebuild the set: the exponents."""
        return {}, {"exponents": self.exponents}

    def record_kappa(self, basis) -> tuple[dict, dict]:
        return {}, {}  # the exponents and the balance define every symmetry

    def cause(self) -> str:
        return (f"the Gaussian exponents {float(np.min(self.exponents)):.3g}..{float(np.max(self.exponents)):.3g} "
                f"bohr^-2 (c = {self.c:g}) lie outside what double precision represents; see the valid ranges in "
                "docs/config.md")

