"""Nuclear charge distributions, their potentials and the element table.

References: the potentials are checked against an independent evaluation of the Poisson
integral V(r) = -(4 pi/r) int_0^r rho r'^2 dr' - 4 pi int_r^inf rho r' dr' with mpmath.quad
at 30 digits; charge and rms radius against scipy.integrate.quad and, for the Fermi shape,
the closed form int_0^inf r^n/(1+exp((r-c)/a)) dr = -n! a^(n+1) Li_{n+1}(-e^(c/a))
(mpmath.polylog).
"""

import json
import math
import time

import mpmath as mp
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import integrate

from relbasis.constants import BOHR_FM, FM_BOHR
from relbasis.elements import default_mass_number, symbol
from relbasis.errors import InputError, PhysicsRangeError
from relbasis.nucleus import (
    FERMI_A_FM,
    FERMI_MIN_RMS_FM,
    MODELS,
    Nucleus,
    default_rms_radius_fm,
    make_nucleus,
)

mp.mp.dps = 30

# (Z, rms_radius_fm or None for the default): heavy, medium, light near the Fermi minimum.
CASES = [(92, None), (50, None), (2, None)]
FINITE = ("sphere", "gauss", "fermi")


# ----------------------------------------------------------------- independent references


def _mp_density(nuc: Nucleus):
    """(rho(r) as an mpmath function normalised to Z, its breakpoints) from the model's definition.

    Only the shape parameter that the code solves for (Fermi c) is taken from the object; the
    sphere radius and Gauss exponent are rebuilt here from the rms radius.
    """
    Z = mp.mpf(nuc.Z)
    R_rms = mp.mpf(nuc.rms_radius_fm) * mp.mpf(FM_BOHR)
    if nuc.model == "sphere":
        R = mp.sqrt(mp.mpf(5) / 3) * R_rms
        return (lambda r: 3 * Z / (4 * mp.pi * R**3) if r <= R else mp.mpf(0)), [R]
    if nuc.model == "gauss":
        eta = mp.mpf(3) / (2 * R_rms**2)
        return (lambda r: Z * (eta / mp.pi) ** 1.5 * mp.exp(-eta * r**2)), [1 / mp.sqrt(eta) * k for k in (1, 3, 8)]
    c, a = mp.mpf(nuc.fermi_c_bohr), mp.mpf(FERMI_A_FM) * mp.mpf(FM_BOHR)
    n2 = -2 * a**3 * mp.polylog(3, -mp.exp(c / a))  # int_0^inf f r^2 dr, closed form
    rho0 = Z / (4 * mp.pi * n2)
    return (lambda r: rho0 / (1 + mp.exp((r - c) / a))), [c, c + 10 * a, c + 40 * a, c + 90 * a]


def _mp_potential(nuc: Nucleus, r: float) -> mp.mpf:
    """Poisson integral for V(r), by mpmath.quad split at r and at the density's breakpoints."""
    rho, brk = _mp_density(nuc)
    r = mp.mpf(r)
    inner = sorted({mp.mpf(0), r, *[b for b in brk if b < r]})
    outer = sorted({r, *[b for b in brk if b > r]}) + [mp.inf]
    q1 = mp.quad(lambda s: rho(s) * s, outer)
    q2 = mp.quad(lambda s: rho(s) * s**2, inner) if r > 0 else mp.mpf(0)
    return -4 * mp.pi * ((q2 / r if r > 0 else 0) + q1)


def _radii(nuc: Nucleus) -> list[float]:
    """Radii inside, at the edge and outside the nucleus (Fermi: 0, 0.5c, c, c+a, 3c, 100c)."""
    if nuc.model == "fermi":
        c, a = nuc.fermi_c_bohr, nuc.fermi_a_bohr
        return [0.0, 0.5 * c, c, c + a, 3 * c, 100 * c]
    R = nuc.radius_bohr
    return [0.0, 1e-3 * R, 0.5 * R, R, 1.5 * R, 3 * R, 100 * R]


# ----------------------------------------------------------------- element table


@pytest.mark.parametrize("Z, A, sym", [(1, 1, "H"), (82, 208, "Pb"), (92, 238, "U"), (26, 56, "Fe"), (100, 257, "Fm")])
def test_default_mass_number(Z, A, sym):
    # isotope tables (from memory): most abundant stable isotope, else the longest-lived
    assert default_mass_number(Z) == A
    assert symbol(Z) == sym


def test_element_table_is_complete_and_sane():
    symbols = [symbol(Z) for Z in range(1, 119)]
    assert len(set(symbols)) == 118
    assert all(default_mass_number(Z) >= Z for Z in range(1, 119))


@pytest.mark.parametrize("Z", [0, 119, 130, -3, 92.5])
def test_element_table_outside_range(Z):
    with pytest.raises(InputError, match=r"1\.\.118.*give A"):
        default_mass_number(Z)
    with pytest.raises(InputError, match=r"1\.\.118"):
        symbol(Z)


# ----------------------------------------------------------------- default radius


def test_default_rms_radius_uranium():
    # R = 0.836 A^(1/3) + 0.570 fm, W. R. Johnson, G. Soff, ADNDT 33, 405 (1985) (from memory):
    # 0.836 * 238^(1/3) + 0.570 = 5.750821 fm (the measured U-238 radius, about 5.86 fm, is
    # a different number).
    assert default_rms_radius_fm(238) == pytest.approx(5.750821107, rel=1e-9)
    assert make_nucleus(92).rms_radius_fm == pytest.approx(5.750821107, rel=1e-9)


def test_fermi_minimum_rms_closed_form():
    # c = 0: <r^2> = 12 a^2 Li_5(-1)/Li_3(-1) (closed form above, mpmath.polylog)
    a = mp.mpf(FERMI_A_FM)
    ref = a * mp.sqrt(12 * mp.polylog(5, -1) / mp.polylog(3, -1))
    assert FERMI_MIN_RMS_FM == pytest.approx(float(ref), rel=1e-15)
    assert FERMI_MIN_RMS_FM == pytest.approx(1.8827, abs=1e-4)


# ----------------------------------------------------------------- normalisation and rms


@pytest.mark.parametrize("model", FINITE)
@pytest.mark.parametrize("Z, rms", CASES)
def test_charge_and_rms_radius(model, Z, rms):
    """4 pi int rho r^2 dr = Z and sqrt(<r^2>) = R_rms, by scipy.integrate.quad."""
    nuc = make_nucleus(Z, model, rms_radius_fm=rms)
    R = nuc.rms_radius_fm * FM_BOHR
    edges = sorted({0.0, nuc.radius_bohr, R, 3 * R, 10 * R, 30 * R}) + [np.inf]
    pieces = list(zip(edges[:-1], edges[1:]))

    def moment(p):
        f = lambda r: 4 * math.pi * nuc.charge_density(r) * r**p  # noqa: E731
        tol = 1e-16 * Z * R ** (p - 2)  # the tails are negligible: stop there, not on roundoff
        return math.fsum(integrate.quad(f, lo, hi, epsabs=tol, epsrel=2e-14, limit=200)[0] for lo, hi in pieces)

    q, m4 = moment(2), moment(4)
    assert q == pytest.approx(Z, rel=1e-13)
    assert math.sqrt(m4 / q) * BOHR_FM == pytest.approx(nuc.rms_radius_fm, rel=1e-13)


@pytest.mark.parametrize("Z, rms", CASES + [(60, 40.0)])
def test_fermi_rms_closed_form(Z, rms):
    # <r^2> = 12 a^2 Li_5(-e^x)/Li_3(-e^x), x = c/a (closed form above, mpmath.polylog)
    nuc = make_nucleus(Z, "fermi", rms_radius_fm=rms)
    a = mp.mpf(FERMI_A_FM)
    x = mp.mpf(nuc.fermi_c_bohr) / mp.mpf(nuc.fermi_a_bohr)
    rms_ref = a * mp.sqrt(12 * mp.polylog(5, -mp.exp(x)) / mp.polylog(3, -mp.exp(x)))
    assert nuc.rms_radius_fm == pytest.approx(float(rms_ref), rel=1e-14)


# ----------------------------------------------------------------- potentials vs Poisson


@pytest.mark.parametrize("model", FINITE)
@pytest.mark.parametrize("Z, rms", CASES)
def test_potential_matches_poisson_integral(model, Z, rms):
    nuc = make_nucleus(Z, model, rms_radius_fm=rms)
    r = _radii(nuc)
    V = nuc.potential(np.array(r))
    ref = np.array([float(_mp_potential(nuc, x)) for x in r])
    np.testing.assert_allclose(V, ref, rtol=2e-15, atol=0)


def test_fermi_potential_random_radii():
    """Fermi V at radii spread over every quadrature panel, against mpmath (U-238)."""
    nuc = make_nucleus(92)
    r = np.random.default_rng(7).uniform(0, nuc.fermi_c_bohr + 65 * nuc.fermi_a_bohr, 12)
    ref = np.array([float(_mp_potential(nuc, x)) for x in r])
    np.testing.assert_allclose(nuc.potential(r), ref, rtol=2e-15, atol=0)


def test_gauss_potential_near_origin():
    # -Z sqrt(eta) erf(y)/y with the Taylor branch y < 0.01, against mpmath.erf
    nuc = make_nucleus(92, "gauss")
    b = math.sqrt(nuc.gauss_exponent)
    r = np.array([0.0, 1e-12, 1e-6, 1e-3, 0.00999, 0.01, 0.0101, 0.5]) / b
    ref = [float(-92 * (2 * mp.mpf(b) / mp.sqrt(mp.pi) if x == 0 else mp.erf(mp.mpf(b) * x) / x)) for x in r]
    np.testing.assert_allclose(nuc.potential(r), ref, rtol=1e-15, atol=0)


@pytest.mark.parametrize("model", MODELS)
def test_far_field_is_coulomb(model):
    nuc = make_nucleus(82, model)
    r = np.array([0.1, 1.0, 10.0, 1e3])
    np.testing.assert_allclose(nuc.potential(r), -82 / r, rtol=1e-15, atol=0)


def test_sphere_edge_continuity():
    nuc = make_nucleus(92, "sphere")
    R = nuc.sphere_radius_bohr
    lo, at, hi = nuc.potential(np.array([R * (1 - 1e-12), R, R * (1 + 1e-12)]))
    assert at == pytest.approx(-92 / R, rel=1e-15)
    assert lo == pytest.approx(at, rel=1e-11) and hi == pytest.approx(at, rel=1e-11)
    # field continuity: dV/dr = Z/R^2 on both sides
    h = 1e-6 * R
    left = (nuc.potential(R) - nuc.potential(R - h)) / h
    right = (nuc.potential(R + h) - nuc.potential(R)) / h
    assert left == pytest.approx(92 / R**2, rel=1e-5) and right == pytest.approx(92 / R**2, rel=1e-5)


@settings(max_examples=25, deadline=None)
@given(Z=st.floats(1, 130), rms=st.floats(1.9, 12.0), model=st.sampled_from(FINITE))
def test_potential_is_bounded_and_increasing(Z, rms, model):
    # Gauss's law: dV/dr = Z_enc(r)/r^2 >= 0 and V >= -Z/r for any positive density
    nuc = make_nucleus(Z, model, A=300, rms_radius_fm=rms)
    r = np.linspace(0, 5 * nuc.radius_bohr, 400)
    V = nuc.potential(r)
    assert np.all(np.diff(V) >= -1e-13 * abs(V[0]))
    assert np.all(V[1:] >= -Z / r[1:] * (1 + 1e-14)) and np.all(V < 0)


def test_potential_shape_and_order():
    nuc = make_nucleus(92)
    r = np.random.default_rng(3).uniform(0, 3 * nuc.radius_bohr, (4, 5))
    V = nuc.potential(r)
    assert V.shape == (4, 5)
    np.testing.assert_array_equal(V.ravel()[::-1], nuc.potential(r.ravel()[::-1]))


def test_fermi_potential_is_fast():
    """2000 radii in well under 10 ms (asserted loosely against slow machines)."""
    nuc = make_nucleus(92)
    r = np.linspace(0, 2 * nuc.radius_bohr, 2000)
    best = min(_timed(nuc.potential, r) for _ in range(5))
    assert best < 0.05


def _timed(f, x):
    t0 = time.perf_counter()
    f(x)
    return time.perf_counter() - t0


# ----------------------------------------------------------------- point, Z = 0, records


def test_point_nucleus():
    nuc = make_nucleus(92, "point")
    assert nuc.rms_radius_fm is None and nuc.radius_bohr == 0.0 and nuc.A == 238
    assert nuc.potential(0.0) == -np.inf
    assert nuc.potential(2.0) == -46.0
    with pytest.raises(PhysicsRangeError, match="point"):
        nuc.charge_density([0.1])


@pytest.mark.parametrize("model", MODELS)
def test_zero_charge_is_no_nucleus(model):
    nuc = make_nucleus(0, model)
    r = np.array([0.0, 1e-5, 1.0])
    np.testing.assert_array_equal(nuc.potential(r), 0.0)
    np.testing.assert_array_equal(nuc.charge_density(r), 0.0)
    assert nuc.radius_bohr == 0.0


def test_radius_bohr_per_model():
    rms = 5.0 * FM_BOHR
    assert make_nucleus(92, "sphere", rms_radius_fm=5.0).radius_bohr == pytest.approx(math.sqrt(5 / 3) * rms, rel=1e-15)
    assert make_nucleus(92, "gauss", rms_radius_fm=5.0).radius_bohr == pytest.approx(math.sqrt(5 / 3) * rms, rel=1e-15)
    fermi = make_nucleus(92, "fermi", rms_radius_fm=5.0)
    assert fermi.radius_bohr == fermi.fermi_c_bohr


@pytest.mark.parametrize("model", MODELS)
def test_to_dict_is_json_ready(model):
    d = make_nucleus(92, model).to_dict()
    assert {"Z": 92, "A": 238, "nucleus": model}.items() <= d.items()
    assert json.loads(json.dumps(d)) == d
    if model == "fermi":
        assert d["fermi_a_fm"] == pytest.approx(2.30 / (4 * math.log(3)), rel=1e-15)


def test_large_Z_needs_A():
    with pytest.raises(InputError, match=r"Z = 130 \(table covers 1\.\.118\): give A"):
        make_nucleus(130)
    nuc = make_nucleus(130, A=330)
    assert nuc.rms_radius_fm == pytest.approx(default_rms_radius_fm(330))


# ----------------------------------------------------------------- bad input


def test_fermi_too_small_for_hydrogen():
    # H: default R = 0.836 + 0.570 = 1.406 fm < 1.8827 fm, the Fermi minimum at c = 0
    with pytest.raises(InputError, match=r"1\.406 .*1\.88270 fm.*'sphere' or 'gauss'"):
        make_nucleus(1)
    assert make_nucleus(1, "sphere").rms_radius_fm == pytest.approx(1.406)
    assert make_nucleus(1, "gauss").rms_radius_fm == pytest.approx(1.406)


@pytest.mark.parametrize(
    "kwargs, key",
    [
        ({"Z": -1}, "Z"),
        ({"Z": math.nan}, "Z"),
        ({"Z": math.inf}, "Z"),
        ({"Z": "92"}, "Z"),
        ({"Z": True}, "Z"),
        ({"Z": 92, "model": "fermy"}, "did you mean 'fermi'"),
        ({"Z": 92, "model": "Gaussian"}, "did you mean 'gauss'"),
        ({"Z": 92, "model": 3}, "nucleus"),
        ({"Z": 92, "A": 0}, "A = 0"),
        ({"Z": 92, "A": -238}, "A = -238"),
        ({"Z": 92, "A": 238.5}, "A = 238.5"),
        ({"Z": 92, "A": "238"}, "A = '238'"),
        ({"Z": 92, "A": 50}, "A = 50"),
        ({"Z": 92, "rms_radius_fm": 0.0}, "rms_radius_fm"),
        ({"Z": 92, "rms_radius_fm": -5.0}, "rms_radius_fm"),
        ({"Z": 92, "rms_radius_fm": math.nan}, "rms_radius_fm"),
        ({"Z": 92, "rms_radius_fm": math.inf}, "rms_radius_fm"),
        ({"Z": 92, "rms_radius_fm": "5.8"}, "rms_radius_fm"),
        ({"Z": 92, "model": "point", "rms_radius_fm": 5.8}, "rms_radius_fm"),
        ({"Z": 92.5}, "give A or rms_radius_fm"),
    ],
)
def test_invalid_input(kwargs, key):
    with pytest.raises(InputError, match=key) as info:
        make_nucleus(**kwargs)
    assert "\n" not in str(info.value)


@pytest.mark.parametrize("r", [-1e-3, math.nan])
def test_negative_radius(r):
    with pytest.raises(InputError, match="r >= 0"):
        make_nucleus(92).potential(np.array([0.0, r]))
