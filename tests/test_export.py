"""Export and reading back, and the radial integrals behind the optional blocks."""

import numpy as np
import pytest

import relbasis
from conftest import solve_cached
from relbasis import integrals
from relbasis.analytic import gamma_1s
from relbasis.cli import main
from relbasis.constants import C
from relbasis.errors import InputError


@pytest.mark.parametrize("name", ["basis.h5", "basis.npz"])
def test_round_trip(tmp_path, name):
    """Bit-identical energies and coefficients; P, Q at any radii equal direct evaluation to 1e-14."""
    sol = solve_cached(ion={"Z": 54, "nucleus": "fermi"}, basis={"size": 50}, solve={"kappas": [-1, 1, -2]})
    path = relbasis.export(sol, tmp_path / name, blocks=("dipole", "hyperfine") if name.endswith("h5") else ())
    back = relbasis.load(path)
    assert back.kappas == (-1, 1, -2)
    r = np.geomspace(1e-7, sol.splines.r_max, 300)
    for kappa in sol.kappas:
        assert np.array_equal(back[kappa].energies, sol[kappa].energies)
        assert np.array_equal(back[kappa].coefficients, sol[kappa].vectors)
        assert back[kappa].branches == sol[kappa].branches and back[kappa].labels == sol[kappa].labels
        P, Q = back[kappa].radial(r)
        Pd, Qd = (m @ sol[kappa].vectors for m in sol.bases[kappa].components(r)[:2])
        assert P.shape == (r.size, len(sol[kappa]))
        scale = max(np.abs(Pd).max(), np.abs(Qd).max())
        assert np.abs(P - Pd).max() <= 1e-14 * scale and np.abs(Q - Qd).max() <= 1e-14 * scale
    assert back.ion["Z"] == 54 and back.config["basis"]["size"] == 50


def test_gaussian_family_round_trip(tmp_path):
    sol = solve_cached(ion={"Z": 20, "nucleus": "gauss"}, basis={"family": "gaussian", "size": 20},
                       solve={"kappas": [-1]})
    back = relbasis.load(relbasis.export(sol, tmp_path / "g.h5"))
    r = np.linspace(0.001, 2.0, 40)
    P, _ = back[-1].radial(r)
    np.testing.assert_array_equal(P, sol.bases[-1].components(r)[0] @ sol[-1].vectors)


def test_existing_file_needs_force_and_bad_files_are_one_line_errors(tmp_path, capsys):
    out = tmp_path / "b.h5"
    assert main(["export", "--z", "10", "--kappas", "-1", "--size", "30", "--out", str(out)]) == 0
    assert main(["export", "--z", "10", "--kappas", "-1", "--size", "30", "--out", str(out)]) == 2
    assert "--force" in capsys.readouterr().err
    assert main(["export", "--z", "10", "--kappas", "-1", "--size", "30", "--out", str(out), "--force"]) == 0
    import h5py

    with h5py.File(out, "r+") as f:
        f.attrs["layout_version"] = 99
    with pytest.raises(InputError, match="layout version 99"):
        relbasis.load(out)
    cut = tmp_path / "cut.h5"
    cut.write_bytes(out.read_bytes()[:5000])
    with pytest.raises(InputError) as err:
        relbasis.load(cut)
    assert "\n" not in str(err.value)
    assert main(["export", "--z", "10", "--out", str(tmp_path / "x.txt")]) == 2
    assert main(["export", "--z", "10", "--out", str(tmp_path / "y.h5"), "--with", "slater,dipole"]) == 2
    assert main(["export", "--z", "10", "--out", str(tmp_path / "y.h5"), "--with", "quadrupole"]) == 2


def test_hydrogen_1s_2p_oscillator_strength():
    """f(1s -> 2p) of hydrogen = 0.4162 (Bethe & Salpeter 1957, from memory; 1e-3 relative)."""
    sol = solve_cached(ion={"Z": 1, "nucleus": "point"}, solve={"kappas": [-1, 1, -2]})
    a = sol[-1].indices("bound")[:1]
    f = sum(integrals.dipole(sol, -1, kb, a, [sol[kb].n.index(2)])["oscillator_strength"][0, 0] for kb in (1, -2))
    assert f == pytest.approx(0.4162, rel=1e-3)


@pytest.mark.parametrize("Z", [1, 50, 92])
def test_dipole_closure_over_the_whole_exported_spectrum(Z, tmp_path):
    """sum over all roots (both branches) of the partner symmetries of |<n||rC1||1s>|^2/(2j+1)
    equals <1s|r^2|1s> (completeness relation, common practice) to 1e-9, read from the file."""
    sol = solve_cached(ion={"Z": Z, "nucleus": "point"}, solve={"kappas": [-1, 1, -2]})
    b = relbasis.load(relbasis.export(sol, tmp_path / "c.h5", blocks=("dipole",)))
    a = b[-1].branches.index("bound")
    r2 = integrals.moment(sol, -1, -1, 2, [a], [a])[0, 0]
    total = 0.0
    for kb in (1, -2):
        key = f"dipole/{min(-1, kb)}_{max(-1, kb)}"
        R = b.integrals[key + "/radial_length"]
        row = R[a] if kb > -1 else R[:, a]
        total += np.sum((integrals.reduced_c(1, kb, -1) * row) ** 2) / 2
    assert abs(total / r2 - 1) < 1e-9


def test_length_and_velocity_forms_agree_at_z50():
    """E1 from 1s to the bound np levels: length and velocity forms agree to 1e-8 with the full
    basis ([H, r] = -i c alpha for eigenstates of one Hamiltonian; their agreement is a
    completeness test, common practice).  Measured: 1e-13."""
    sol = solve_cached(ion={"Z": 50, "nucleus": "point"}, solve={"kappas": [-1, 1, -2]})
    a = sol[-1].indices("bound")[:1]
    for kb in (1, -2):
        bound = sol[kb].indices("bound")[:5]
        L = integrals.moment(sol, -1, kb, 1, a, bound)[0]
        V = integrals.dipole_velocity(sol, -1, kb, a, bound)[0]
        np.testing.assert_allclose(V, L, rtol=1e-8)


@pytest.mark.parametrize("Z", [1, 2])
def test_slater_f0_of_1s_in_the_nonrelativistic_limit(Z):
    """F^0(1s,1s) = 5Z/8 for hydrogenic 1s (textbook value), in the c -> infinity limit, to 1e-9.
    c = 1e5 makes the relativistic corrections ~0.4 (Z/c)^2 < 1e-9 (larger c: tests/test_nonrelativistic.py)."""
    sol = relbasis.solve(ion={"Z": Z, "nucleus": "point"}, solve={"kappas": [-1]}, c=1e5)
    a = (-1, int(sol[-1].indices("bound")[0]))
    assert integrals.slater(sol, 0, a, a, a, a) == pytest.approx(5 * Z / 8, rel=1e-9)


def test_slater_block_in_the_export(tmp_path, capsys):
    out = tmp_path / "s.h5"
    assert main(["export", "--z", "54", "--kappas", "-1,-2", "--size", "50", "--out", str(out),
                 "--slater", "0:1s1/2,1s1/2,1s1/2,1s1/2", "--slater", "1:1s1/2,2p3/2,2p3/2,1s1/2"]) == 0
    b = relbasis.load(out)
    assert list(b.integrals["slater/which"]) == ["0:1s1/2,1s1/2,1s1/2,1s1/2", "1:1s1/2,2p3/2,2p3/2,1s1/2"]
    assert b.integrals["slater/value"][0] > 5 * 54 / 8  # relativistic contraction raises F^0
    assert main(["export", "--z", "54", "--kappas", "-1", "--out", str(tmp_path / "t.h5"),
                 "--slater", "0:1s1/2,9z1/2,1s1/2,1s1/2"]) == 2
    assert "--slater" in capsys.readouterr().err


@pytest.mark.parametrize("Z,tol", [(1, 1e-9), (50, 1e-9), (92, 1e-9)])
def test_hyperfine_integral_of_1s_against_breit(Z, tol):
    """int P Q / r^2 of 1s = -alpha Z^3 / (gamma (2 gamma - 1)) (Breit, Phys. Rev. 35, 1447 (1930),
    from memory), point nucleus, default basis; measured 3e-12, 4e-12, 1.6e-11 with the
    hypervirial diagonal (7.9e-8, 4.4e-7, 1.2e-4 without any origin treatment, also checked here)."""
    sol = solve_cached(ion={"Z": Z, "nucleus": "point"}, solve={"kappas": [-1]})
    a = sol[-1].indices("bound")[:1]
    g = gamma_1s(Z)
    exact = -(Z**3) / C / (g * (2 * g - 1))
    assert abs(integrals.hyperfine(sol, -1, -1, a, a)[0, 0] / exact - 1) < tol
    plain = abs(integrals.hyperfine(sol, -1, -1, a, a, origin=False)[0, 0] / exact - 1)
    assert plain > abs(integrals.hyperfine(sol, -1, -1, a, a)[0, 0] / exact - 1)


@pytest.mark.parametrize("model,sizes", [("gauss", (160, 200)), ("sphere", (160, 200)), ("fermi", (240, 280))])
def test_hyperfine_integral_converges_for_finite_nuclei(model, sizes):
    """With a finite nucleus the 1s hyperfine integral converges in size to 1e-9 (Z = 92, cavity 150/Z)."""
    vals = []
    for size in sizes:
        sol = solve_cached(ion={"Z": 92, "nucleus": model}, basis={"size": size, "r_max": 150 / 92}, solve={"kappas": [-1]})
        a = sol[-1].indices("bound")[:1]
        vals.append(integrals.hyperfine(sol, -1, -1, a, a)[0, 0])
    assert abs(vals[0] / vals[1] - 1) < 1e-9


def test_slater_integrals_symmetry_and_hydrogenic_limit():
    """R^k(ab,cd) = R^k(ba,dc) = R^k(cb,ad) (exchange symmetries, common practice); F^0(1s,1s) of
    hydrogen = 5/8 up to relativistic corrections of order (Z alpha)^2 (textbook value)."""
    sol = solve_cached(ion={"Z": 20, "nucleus": "point"}, solve={"kappas": [-1, -2]})
    s, p = (-1, int(sol[-1].indices("bound")[0])), (-2, int(sol[-2].indices("bound")[0]))
    x = integrals.slater(sol, 1, s, p, p, s)
    assert x == pytest.approx(integrals.slater(sol, 1, p, s, s, p), rel=1e-13)
    y = integrals.slater(sol, 1, s, p, s, p)
    assert y == pytest.approx(integrals.slater(sol, 1, p, s, p, s), rel=1e-13)
    h = solve_cached(ion={"Z": 1, "nucleus": "point"}, solve={"kappas": [-1, 1, -2]})
    a = (-1, int(h[-1].indices("bound")[0]))
    assert integrals.slater(h, 0, a, a, a, a) == pytest.approx(5 / 8, rel=1e-4)
