"""B-spline evaluation: partition of unity, derivatives, and scipy.interpolate.BSpline as an outside reference."""

import numpy as np
import pytest
from scipy.interpolate import BSpline

from relbasis.bspline import BSplineBasis, exponential_knots, knots_from_breakpoints, log_linear_knots
from relbasis.errors import InputError

KNOTS = {
    "exponential": lambda: exponential_knots(30, 7, 1e-5, 40.0),
    "log-linear": lambda: log_linear_knots(30, 8, 1e-6, 60.0, 5.0),
    "given": lambda: knots_from_breakpoints([0.0, 0.1, 0.3, 0.35, 1.0, 2.5, 4.0], 4),
}


@pytest.fixture(params=sorted(KNOTS))
def basis(request):
    t = KNOTS[request.param]()
    order = {"exponential": 7, "log-linear": 8, "given": 4}[request.param]
    return BSplineBasis(t, order)


def _points(basis, n=600):
    x = np.concatenate([np.geomspace(1e-7, basis.r_max, n), np.linspace(0, basis.r_max, n)])
    return np.sort(x)


def test_partition_of_unity(basis):
    """sum_i B_i(x) = 1 on [0, r_max] (de Boor 1978, common practice)."""
    x = _points(basis)
    v = basis.evaluate(x)[0]
    np.testing.assert_allclose(v.sum(axis=1), 1.0, atol=1e-14)
    assert v.min() >= -1e-15


def test_against_scipy_bspline(basis):
    """Values and first/second derivatives agree with scipy.interpolate.BSpline (reference library)."""
    x = _points(basis)[:-1]  # scipy's last interval is open at r_max
    ours = basis.evaluate(x, 2)
    k = basis.order - 1
    for i in range(basis.size):
        c = np.zeros(basis.size)
        c[i] = 1.0
        ref = BSpline(basis.knots, c, k, extrapolate=False)
        for d in range(3):
            want = ref(x) if d == 0 else ref.derivative(d)(x)
            scale = max(1.0, np.abs(want).max())
            np.testing.assert_allclose(ours[d][:, i], want, atol=1e-12 * scale, rtol=0)


def test_derivative_against_finite_differences(basis):
    """B' by central differences (common practice), away from knots where B' may have kinks."""
    x = _points(basis, 200)
    x = x[(x > 1e-3) & (x < basis.r_max - 1e-3)]
    h = 1e-6 * np.maximum(x, 1e-3)
    fd = (basis.evaluate(x + h)[0] - basis.evaluate(x - h)[0]) / (2 * h[:, None])
    d1 = basis.evaluate(x, 1)[1]
    scale = np.abs(d1).max()
    assert np.abs(fd - d1).max() < 1e-5 * scale


def test_quadrature_integrates_piecewise_polynomials(basis):
    """Gauss–Legendre per knot interval: int B_i B_j' is exact, and int B_i = (t_{i+k} - t_i)/k."""
    tab = basis.quadrature(basis.order + 2)
    k = basis.order
    ints = np.zeros(basis.size)
    np.add.at(ints, tab.first[:, None] + np.arange(k)[None, :], np.einsum("mq,mqj->mj", tab.w, tab.values[0]))
    want = (basis.knots[k:] - basis.knots[:-k]) / k  # de Boor (1978), common practice
    np.testing.assert_allclose(ints, want, rtol=1e-13)
    assert tab.w.sum() == pytest.approx(basis.r_max, rel=1e-14)


def test_local_values_match_dense(basis):
    """The per-interval table holds the same numbers as dense evaluation at the same points."""
    tab = basis.quadrature(5)
    dense = basis.evaluate(tab.r.ravel(), 2).reshape(3, *tab.r.shape, basis.size)
    cols = tab.first[:, None] + np.arange(basis.order)[None, :]  # (n_int, k)
    picked = np.take_along_axis(dense, cols[None, :, None, :], axis=-1)
    np.testing.assert_allclose(picked, tab.values, rtol=1e-13, atol=1e-13 * np.abs(tab.values).max())


def test_size_counts_splines():
    t = log_linear_knots(40, 9, 1e-6, 100.0)
    assert BSplineBasis(t, 9).size == 40
    assert t.size == 49 and t[0] == 0 and t[-1] == 100.0


@pytest.mark.parametrize(
    "args",
    [(5, 7, 1e-6, 10.0), (40, 1, 1e-6, 10.0), (40, 7, -1.0, 10.0), (40, 7, 1.0, 0.5), (40, 7, 1e-6, float("nan"))],
)
def test_bad_knot_requests_raise_input_error(args):
    with pytest.raises(InputError):
        exponential_knots(*args)


def test_radii_outside_the_cavity_are_rejected():
    b = BSplineBasis(exponential_knots(20, 5, 1e-4, 10.0), 5)
    with pytest.raises(InputError, match="r_max"):
        b.evaluate([11.0])
