"""Self-tests of the independent shooting solver in tests/shooting.py.

The potentials are written here on purpose (no package code): a point Coulomb field and a
uniformly charged sphere.  Energies are binding energies eps = E - c^2 in hartree.
"""

import math
from functools import lru_cache

import mpmath as mp
import numpy as np
import pytest
from scipy.constants import fine_structure
from scipy.integrate import simpson
from scipy.special import gamma as gamma_fn

from relbasis.errors import InputError, PhysicsRangeError
from shooting import coulomb_level, dirac_level, dirac_orbital

C = 1.0 / fine_structure
FM = 1.0 / 52917.7210544  # one femtometre in bohr
R_RMS = 5.86 * FM
R_SPHERE = math.sqrt(5.0 / 3.0) * R_RMS  # uniform sphere of that rms radius (elementary, from the definition of R_rms)

STATES = [(1, -1), (2, -1), (2, 1), (2, -2), (3, -3)]  # (n, kappa): 1s, 2s, 2p1/2, 2p3/2, 3d5/2


def point(Z):
    return lambda r: -Z / np.asarray(r, dtype=float)


def sphere(Z, R=R_SPHERE):
    """Uniformly charged sphere: V = -Z/(2R) (3 - r^2/R^2) inside, -Z/r outside."""

    def V(r):
        r = np.asarray(r, dtype=float)
        return np.where(r < R, -Z / (2.0 * R) * (3.0 - (r / R) ** 2), -Z / np.maximum(r, R))

    return V


def dirac_coulomb_exact(Z, kappa, n):
    """Sommerfeld-Darwin-Gordon formula, Bethe & Salpeter (1957) §14, in 40-digit arithmetic."""
    with mp.workdps(40):
        za = mp.mpf(Z) / mp.mpf(C)
        gamma = mp.sqrt(kappa * kappa - za * za)
        return float(mp.mpf(C) ** 2 * (1 / mp.sqrt(1 + (za / (n - abs(kappa) + gamma)) ** 2) - 1))


def l_of(kappa):
    return kappa if kappa > 0 else -kappa - 1


# --- point nucleus: the exact Dirac-Coulomb levels ------------------------------------------


@pytest.mark.parametrize("Z", [1, 54, 92])
@pytest.mark.parametrize("n,kappa", STATES)
def test_closed_form_helper_is_free_of_cancellation(Z, n, kappa):
    # Sommerfeld-Darwin-Gordon formula; Bethe & Salpeter (1957) §14
    assert coulomb_level(Z, kappa, n, c=C) == pytest.approx(dirac_coulomb_exact(Z, kappa, n), rel=1e-15)


@pytest.mark.parametrize("Z", [1, 10, 54, 92])
@pytest.mark.parametrize("n,kappa", STATES)
def test_point_coulomb_level_matches_dirac_formula(Z, n, kappa):
    # Sommerfeld-Darwin-Gordon formula; Bethe & Salpeter (1957) §14.  Started from the
    # nonrelativistic level so that the guess is not the answer.
    eps = dirac_level(point(Z), kappa, n, c=C, Z=Z, eps_guess=-Z * Z / (2.0 * n * n))
    assert eps == pytest.approx(dirac_coulomb_exact(Z, kappa, n), rel=1e-11, abs=0)


@pytest.mark.parametrize("Z", [1, 92])
def test_point_1s_orbital_matches_closed_form(Z):
    # 1s: P = N sqrt((1+g)/2) r^g e^(-Zr), Q = -N sqrt((1-g)/2) r^g e^(-Zr),
    # N^2 = (2Z)^(2g+1)/Gamma(2g+1), g = sqrt(1-(Z alpha)^2)  (Bethe & Salpeter (1957) §14)
    eps = dirac_level(point(Z), -1, 1, c=C, Z=Z)
    r = np.geomspace(1e-6 / Z, 30.0 / Z, 400)
    r, P, Q = dirac_orbital(point(Z), -1, 1, eps, c=C, Z=Z, r=r)
    g = math.sqrt(1.0 - (Z / C) ** 2)
    norm = math.sqrt((2.0 * Z) ** (2 * g + 1) / gamma_fn(2 * g + 1))
    shape = norm * r**g * np.exp(-Z * r)
    scale = np.max(np.abs(shape))
    assert np.max(np.abs(P - math.sqrt((1 + g) / 2) * shape)) < 1e-9 * scale
    assert np.max(np.abs(Q + math.sqrt((1 - g) / 2) * shape)) < 1e-9 * scale


# --- uniformly charged sphere ---------------------------------------------------------------

SPHERE_STATES = [(1, -1), (2, -1), (2, 1)]  # 1s, 2s, 2p1/2


@lru_cache(maxsize=None)
def sphere_level(Z, n, kappa):
    """Level in the uniform sphere at the solver's default settings (shared by several tests)."""
    return dirac_level(sphere(Z), kappa, n, c=C, Z=Z, r_break=R_SPHERE)


@pytest.mark.parametrize("Z", [92, 120])
@pytest.mark.parametrize("n,kappa", SPHERE_STATES)
def test_sphere_level_lies_above_point_level(Z, n, kappa):
    # a finite nucleus weakens the field inside R, so every level moves up (common practice)
    assert dirac_coulomb_exact(Z, kappa, n) < sphere_level(Z, n, kappa) < 0.0


SETTINGS = {
    "looser-rtol": dict(rtol=1e-13),
    "r0-x100": dict(r0=1e-7 * R_SPHERE),
    "r0-/100": dict(r0=1e-11 * R_SPHERE),
    "longer-tail": dict(decay=30.0),
    "match-inner": "inner",
    "match-outer": "outer",
}


@pytest.mark.parametrize("setting", list(SETTINGS))
@pytest.mark.parametrize("n,kappa", SPHERE_STATES)
def test_sphere_level_is_stable_under_numerical_settings(n, kappa, setting):
    """Self-consistency at Z = 92: no numerical setting moves the level by 1e-12 relative."""
    Z = 92
    kwargs = SETTINGS[setting]
    if isinstance(kwargs, str):  # the default match radius is the outer turning point ~ 2n^2/Z
        kwargs = dict(r_match=(0.7 if kwargs == "inner" else 4.0) * n * n / Z)
    base = sphere_level(Z, n, kappa)
    other = dirac_level(sphere(Z), kappa, n, c=C, Z=Z, r_break=R_SPHERE, **kwargs)
    assert other == pytest.approx(base, rel=1e-12, abs=0)


@pytest.mark.parametrize("n", [1, 2])
def test_hydrogen_finite_size_shift_matches_first_order_formula(n):
    # Nonrelativistic first-order shift dE = (2/3) Z^4 <r^2>/n^3 (common practice;
    # 0.06 % off at Z = 1).  The shift is 8e-9 hartree on 0.5: the shooting resolves eps to
    # ~1e-15 relative, i.e. the shift to ~1e-6 of itself.
    Z = 1
    shift = dirac_level(sphere(Z), -1, n, c=C, Z=Z, r_break=R_SPHERE) - dirac_coulomb_exact(Z, -1, n)
    first_order = 2.0 / 3.0 * Z**4 * R_RMS**2 / n**3
    assert shift == pytest.approx(first_order, rel=5e-3)


def test_finite_size_shift_at_z10_is_within_a_few_percent_of_first_order():
    # Same formula (common practice); relativistic terms grow like (Z alpha)^2 ln(ZR)
    # and reach a few % by Z = 10.  Here "a few %" is taken as 5 %.
    Z = 10
    shift = dirac_level(sphere(Z), -1, 1, c=C, Z=Z, r_break=R_SPHERE) - dirac_coulomb_exact(Z, -1, 1)
    first_order = 2.0 / 3.0 * Z**4 * R_RMS**2
    assert shift == pytest.approx(first_order, rel=5e-2)


# --- orbitals ---------------------------------------------------------------------------------


@pytest.mark.parametrize("nucleus", ["point", "sphere"])
@pytest.mark.parametrize("Z,n,kappa", [(1, 3, -1), (54, 3, 2), (92, 4, -1), (92, 3, -3)])
def test_orbital_is_normalised_positive_at_origin_with_right_nodes(nucleus, Z, n, kappa):
    V, r_break = (point(Z), None) if nucleus == "point" else (sphere(Z), R_SPHERE)
    eps = dirac_level(V, kappa, n, c=C, Z=Z, r_break=r_break)
    r, P, Q = dirac_orbital(V, kappa, n, eps, c=C, Z=Z, r_break=r_break)
    assert simpson(P**2 + Q**2, x=r) == pytest.approx(1.0, abs=1e-8)  # grid quadrature of the ODE norm
    assert P[0] > 0.0
    big = np.abs(P) > 1e-10 * np.max(np.abs(P))  # ignore the far tail
    assert np.count_nonzero(np.diff(np.sign(P[big])) != 0) == n - l_of(kappa) - 1


# --- errors -----------------------------------------------------------------------------------


def test_level_that_has_dived_raises_physics_range_error():
    # With R = 7.57 fm this solver finds the 1s level at eps = -2c^2 near Z = 167.7; the
    # critical charge of an extended nucleus lies near 170 (from memory), so Z = 170 has dived.
    with pytest.raises(PhysicsRangeError, match="dived"):
        dirac_level(sphere(170), -1, 1, c=C, Z=170, r_break=R_SPHERE)


@pytest.mark.parametrize(
    "kwargs, key",
    [
        (dict(kappa=0, n=1), "kappa"),
        (dict(kappa=-1, n=0), "n="),
        (dict(kappa=2, n=2), "n="),
        (dict(kappa=-1, n=1, c=-1.0), "c="),
        (dict(kappa=-1, n=1, eps_guess=0.5), "eps_guess"),
        (dict(kappa=-1, n=1, r_break=-1.0), "r_break"),
    ],
)
def test_bad_input_raises_input_error_naming_the_key(kwargs, key):
    args = dict(c=C, Z=1.0) | kwargs
    with pytest.raises(InputError, match=key):
        dirac_level(point(1.0), args.pop("kappa"), args.pop("n"), **args)
