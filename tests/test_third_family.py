"""A third basis family, written here in a few dozen lines, runs through solve, audit and export.

The toy family: Slater-type functions f_i = r^(l+1) exp(-zeta_i r) with restricted kinetic
balance (large (f, 0) and balanced (0, D+f / 2c), D+- = d/dr +- kappa/r), every integral on a
Gauss–Legendre panel grid.  Its exponents are zeta_i = sqrt(alpha_i) of the even-tempered set
the config resolves for Gaussians (the "exponents" key style), so that it needs no config
code of its own.  Nothing outside this file and the registries (relbasis.vocabulary,
relbasis.families) learns its name: that is the point of the test.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pytest

import relbasis
from relbasis import families, vocabulary
from relbasis.audit import audit
from relbasis.gaussian import even_tempered
from relbasis.sampling import DenseChannels
from relbasis.vocabulary import orbital_l

NAME = "slater-toy"
PANEL = 16


@dataclass(frozen=True)
class ToyBasis:
    """The functions of one kappa: N large and N balanced ones (rows of H: 2N)."""

    zetas: np.ndarray
    kappa: int
    c: float

    @property
    def size(self) -> int:
        return 2 * self.zetas.size

    def components(self, r):
        """P, Q, D+P, D-Q of every function at r (points x size), from the closed-form derivatives."""
        r = np.asarray(r, dtype=float)[:, None]
        l, k, z = orbital_l(self.kappa), self.kappa, self.zetas[None, :]
        f = r ** (l + 1) * np.exp(-z * r)
        d1 = ((l + 1) / r - z) * f  # f'
        d2 = (((l + 1) / r - z) ** 2 - (l + 1) / r**2) * f  # f''
        dplus = d1 + k * f / r
        dminus_dplus = d2 + k * (d1 / r - f / r**2) - k * dplus / r  # D- (D+ f)
        zero = np.zeros_like(f)
        P = np.hstack([f, zero])
        Q = np.hstack([zero, dplus / (2 * self.c)])
        DP = np.hstack([dplus, zero])
        DQ = np.hstack([zero, dminus_dplus / (2 * self.c)])
        return P, Q, DP, DQ

    def kinetic_and_overlap(self, s):
        w = s.w[:, None]
        cross = s.Q.T @ (w * s.DP)
        T = -2 * self.c**2 * (s.Q.T @ (w * s.Q)) + self.c * (cross + cross.T)
        return T, s.P.T @ (w * s.P) + s.Q.T @ (w * s.Q)

    def local_matrix(self, term, s):
        wV = (s.w * term.potential(s.r))[:, None]
        return s.P.T @ (wV * s.P) + s.Q.T @ (wV * s.Q)


@dataclass(frozen=True)
class ToySet:
    zetas: np.ndarray
    c: float
    grid: tuple
    threshold: float = 1e-10
    wall_radius = None
    origin_series = False
    panel_points = PANEL

    def build(self, kappa):
        return ToyBasis(self.zetas, kappa, self.c)

    def sample(self, basis):
        r, w = self.grid
        return DenseChannels(r, w, *basis.components(r))

    def node_matrix(self, basis, sampled):
        return sampled.P

    def band_order(self, basis):
        return None

    def cause(self):
        return f"the Slater exponents {self.zetas.min():.3g}..{self.zetas.max():.3g} bohr^-1"

    def record(self):
        return {}, {"zetas": self.zetas}

    def record_kappa(self, basis):
        return {}, {}


def panel_grid(lo: float, hi: float, per_decade: int = 8):
    """Gauss–Legendre points (PANEL per panel) on geometric panels from lo to hi."""
    edges = np.geomspace(lo, hi, max(int(per_decade * np.log10(hi / lo)), 1) + 1)
    x, w = np.polynomial.legendre.leggauss(PANEL)
    a, b = edges[:-1, None], edges[1:, None]
    return ((a + b) / 2 + (b - a) / 2 * x).ravel(), ((b - a) / 2 * w).ravel()


class ToyFamily(families.GaussianFamily):
    """Registry entry: the Gaussian family's words and reduced basis, its own functions."""

    name = NAME

    def describe(self, spec):
        return f"{NAME}, {spec.size} functions per component, balance = {spec.balance}"

    def build_set(self, config, nucleus, c):
        b = config.basis
        zetas = np.sqrt(even_tempered(b.size, b.exponent_min, b.exponent_max))
        return ToySet(zetas, c, panel_grid(1e-4 / zetas.max(), 60.0 / zetas.min()))

    def exponents_of(self, solution):
        return solution.family_set.zetas**2  # the Gaussian words measure reach in zeta^2

    def quadrature_points(self, spec):
        return 2000


@pytest.fixture
def toy_family():
    vocabulary.register_family(NAME, "exponents", ("rkb",), default_size=30)
    families.REGISTRY[NAME] = ToyFamily()
    try:
        yield
    finally:
        families.REGISTRY.pop(NAME)
        vocabulary.unregister_family(NAME)


CONFIG = {"ion": {"Z": 10, "nucleus": "point"}, "basis": {"family": NAME, "balance": "rkb"},
          "solve": {"kappas": [-1, 1, -2]}}


def test_a_third_family_solves(toy_family):
    """The levels approach the exact Dirac–Coulomb ones (Sommerfeld's formula; Bethe & Salpeter
    1957): Slater functions lack the r^gamma cusp, so only to 2e-9..2e-7 here (measured) — and
    the error estimate, made through the family's reduced basis, says so: every one is flagged."""
    sol = relbasis.solve(CONFIG)
    assert sol.config.basis.family == NAME
    for kappa, n in ((-1, 1), (-1, 2), (1, 2), (-2, 2)):
        i = sol[kappa].n.index(n)
        assert sol[kappa].energies[i] == pytest.approx(sol.exact(kappa, n), rel=1e-6)
        assert "unconverged" in sol[kappa].flags[i]
    assert sum(len(sol[k].indices("spurious")) for k in sol) == 0
    assert sol.to_dict()["basis"]["family"] == NAME


def test_a_third_family_is_audited_and_exported(toy_family, tmp_path):
    sol = relbasis.solve(CONFIG)
    result = audit(sol)
    assert result.verdict in ("pass", "warn", "fail")
    assert {c.name for c in result.checks} >= {"spurious-roots", "kinetic-balance", "closure"}
    assert result.check("spurious-roots").status == "pass"
    path = relbasis.export(sol, tmp_path / "toy.h5", blocks=("dipole",))
    import h5py

    with h5py.File(path, "r") as f:
        assert f.attrs["family"] == NAME
        assert f["basis/zetas"].shape == (sol.family_set.zetas.size,)
        assert f["kappa_-1/coefficients"].shape == (sol.bases[-1].size, len(sol[-1]))
