"""The exported basis file records the Dirac–Hartree–Fock core (layout version 2, group "core").

One Na solve ([Ne] core, 3s1/2 valence) is exported to HDF5 and .npz; the tests read it back,
check the stored core against the mean field, and check the stored energies from the file's
data alone: the direct part from J and the quadrature weights, the exchange part from the
orbitals and the angular rule the file states, J(r) = N/r outside the core (Gauss's law, common
practice).  Damaged core groups give one InputError line naming the dataset.
"""

import json
import shutil

import h5py
import numpy as np
import pytest

import relbasis
from relbasis.angular import reduced_c
from relbasis.errors import InputError
from relbasis.layout import CORE_LAYOUT_VERSION, LAYOUT_VERSION
from relbasis.vocabulary import j_twice

NA = {"ion": {"Z": 11}, "electrons": {"core": "[Ne]", "valence": "3s1/2"}, "solve": {"kappas": [-1, 1, -2]}}
CORE = ("1s1/2", "2s1/2", "2p1/2", "2p3/2")


@pytest.fixture(scope="module")
def na(tmp_path_factory):
    d = tmp_path_factory.mktemp("core")
    sol = relbasis.solve(NA)
    return sol, relbasis.export(sol, d / "na.h5"), relbasis.export(sol, d / "na.npz")


@pytest.mark.parametrize("form", [1, 2], ids=["h5", "npz"])
def test_round_trip_of_the_core(na, form):
    sol, path = na[0], na[form]
    b = relbasis.load(path)
    mf, core = sol.scf, b.core
    assert b.attrs["layout_version"] == CORE_LAYOUT_VERSION == 2
    assert core.labels == CORE and core.n == (1, 2, 2, 2) and core.kappa == (-1, -1, 1, -2)
    assert core.occupancy.tolist() == [2, 2, 2, 4] and core.electron_count == 10
    np.testing.assert_array_equal(core.energies, [o.energy for o in mf.core])
    assert (core.total_energy, core.one_body, core.direct, core.exchange) == (
        mf.total_energy, mf.one_body, mf.direct, mf.exchange)
    assert core.iterations == mf.iterations and core.converged is True
    assert core.electrons == {"core": "1s1/2 2s1/2 2p1/2 2p3/2", "valence": "3s1/2"} == b.config["electrons"]
    P, Q = mf.orbital_values(b.grid)
    np.testing.assert_array_equal(core.P, P)
    np.testing.assert_array_equal(core.Q, Q)
    np.testing.assert_array_equal(core.direct_potential, mf.direct_potential(b.grid))
    assert "Lambda = <kappa||C^k||kappa_a>^2 / (2j + 1)" in core.exchange_rule


def test_the_occupied_roots_are_the_core_subshells(na):
    sol, path = na[0], na[1]
    b = relbasis.load(path)
    marked = {(k, b[k].n[i]) for k in b for i in np.flatnonzero(b[k].occupied)}
    assert marked == {(-1, 1), (-1, 2), (1, 2), (-2, 2)}
    assert all(b[k].labels[i] in CORE for k in b for i in np.flatnonzero(b[k].occupied))
    for i, label in enumerate(b.core.labels):  # the stored orbital is the root it points at (up to sign)
        k, root = b.core.kappa[i], b.core.roots[i]
        assert b[k].labels[root] == label and b[k].energies[root] == pytest.approx(b.core.energies[i], abs=1e-12)
        Pk = b[k].P[:, root] * np.sign(b[k].P[:, root] @ b.core.P[:, i])
        assert np.abs(Pk - b.core.P[:, i]).max() < 1e-8  # the SCF converges orbitals to ~1e-10


def test_the_core_energies_follow_from_the_file_alone(na):
    """With h5py only: direct = 1/2 sum_a q_a int J (P_a^2 + Q_a^2) dr on the stored quadrature
    (the default export grid is the quadrature), exchange = -1/2 sum_ab q_a sum_k Lambda R^k(ab, ba)
    by a double sum over the grid, and r J(r) = N_core at the cavity radius."""
    with h5py.File(na[1], "r") as f:
        r, qr, w = f["grid/r"][()], f["quadrature/r"][()], f["quadrature/w"][()]
        P, Q, J = f["core/P"][()], f["core/Q"][()], f["core/direct_potential"][()]
        kappa = [int(k) for k in f["core/kappa"][()]]
        q = f["core/occupancy"][()]
        attrs = dict(f["core"].attrs)
    np.testing.assert_array_equal(r, qr)
    rho = P**2 + Q**2
    direct = 0.5 * np.sum(q * (w[:, None] * J[:, None] * rho).sum(axis=0))
    assert direct == pytest.approx(attrs["direct"], rel=1e-12)
    small, large = np.minimum.outer(r, r), np.maximum.outer(r, r)
    exchange = 0.0
    for a, ka in enumerate(kappa):
        for b, kb in enumerate(kappa):
            pair = w * (P[:, a] * P[:, b] + Q[:, a] * Q[:, b])
            for k in range(abs(j_twice(ka) - j_twice(kb)) // 2, (j_twice(ka) + j_twice(kb)) // 2 + 1):
                lam = reduced_c(k, ka, kb) ** 2 / (j_twice(ka) + 1)
                if lam:
                    exchange -= 0.5 * q[a] * lam * (pair @ ((small / large) ** k / large @ pair))
    # the plain double sum meets the kink of r</r> at r = s: measured 3e-5 relative
    assert exchange == pytest.approx(attrs["exchange"], rel=2e-4)
    assert attrs["total_energy"] == pytest.approx(attrs["one_body"] + attrs["direct"] + attrs["exchange"], rel=1e-12)
    assert r[-1] * J[-1] == pytest.approx(10.0, rel=1e-8)


def test_a_file_without_a_core_stays_version_1(tmp_path, solved):
    sol = solved(ion={"Z": 10, "nucleus": "point"}, basis={"size": 20, "order": 6}, solve={"kappas": [-1]})
    for suffix in (".h5", ".npz"):
        b = relbasis.load(relbasis.export(sol, tmp_path / f"bare{suffix}"))
        assert b.attrs["layout_version"] == LAYOUT_VERSION == 1 and b.core is None and b[-1].occupied is None


def test_the_cli_writes_the_core_also_of_kappas_not_exported(tmp_path, capsys):
    """Only kappa -1 exported (a small basis, for speed): the 2p subshells are in the group "core"
    with their orbitals, and point at no root."""
    from relbasis.cli import main

    cfg = tmp_path / "na.toml"
    cfg.write_text('[ion]\nZ = 11\n[basis]\nsize = 40\n[electrons]\ncore = "[Ne]"\n[solve]\nkappas = [-1]\n')
    assert main(["export", str(cfg), "--out", str(tmp_path / "na.npz")]) == 0
    assert "core: 1s1/2 2s1/2 2p1/2 2p3/2 (10 electrons, converged)" in capsys.readouterr().out
    b = relbasis.load(tmp_path / "na.npz")
    assert b.core.labels == CORE and b.core.roots[2:] == (None, None) and b.core.electrons == {"core": " ".join(CORE)}
    assert [b[-1].n[i] for i in np.flatnonzero(b[-1].occupied)] == [1, 2] and b.core.P.shape == (b.grid.size, 4)


# ----------------------------------------------------------------------------- damaged core groups


def _h5(edit):
    def make(na, dst):
        out = dst / "bad.h5"
        shutil.copyfile(na[1], out)
        with h5py.File(out, "r+") as f:
            edit(f)
        return out

    return make


def _replace(name, value):
    def edit(f):
        del f[name]
        f[name] = value

    return edit


def _attr(name, value):
    def edit(f):
        group, _, key = name.rpartition("/")
        (f[group] if group else f).attrs[key] = value

    return edit


def _npz_side(edit):
    def make(na, dst):
        out = dst / "bad.npz"
        shutil.copyfile(na[2], out)
        meta = json.loads(na[2].with_suffix(".json").read_text())
        edit(meta)
        out.with_suffix(".json").write_text(json.dumps(meta))
        return out

    return make


CASES = {
    "no-core-group": (_h5(lambda f: f.__delitem__("core")), "marks a file with a core"),
    "core-in-version-1": (_h5(_attr("layout_version", 1)), "but layout version 1"),
    "P-wrong-shape": (_h5(_replace("core/P", np.zeros((5, 4)))), "core/P"),
    "Q-nan": (_h5(lambda f: f["core/Q"].__setitem__((3, 1), np.nan)), "core/Q"),
    "J-missing": (_h5(lambda f: f.__delitem__("core/direct_potential")), "core/direct_potential"),
    "occupancy-not-full": (_h5(_replace("core/occupancy", np.array([2, 2, 2, 3]))), "core/occupancy"),
    "kappa-zero": (_h5(_replace("core/kappa", np.array([-1, 0, 1, -2]))), "core/kappa"),
    "root-not-occupied": (_h5(_replace("core/root", np.array([96, 98, 97, 96]))), "core/root"),
    "occupied-twice": (_h5(lambda f: f["kappa_1/occupied"].__setitem__(0, 1)), "kappa_1/occupied"),
    "occupied-missing": (_h5(lambda f: f.__delitem__("kappa_-2/occupied")), "kappa_-2/occupied"),
    "total-energy-changed": (_h5(_attr("core/total_energy", -160.0)), "core/total_energy"),
    "converged-text": (_h5(_attr("core/converged", "yes")), "core/converged"),
    "npz-labels-short": (_npz_side(lambda m: m["strings"].__setitem__("core/labels", ["1s1/2"])), "core/kappa"),
    "npz-exchange-text": (_npz_side(lambda m: m["attrs"].__setitem__("core/exchange", "big")), "core/exchange"),
}


@pytest.mark.parametrize("case", sorted(CASES))
def test_a_damaged_core_gives_one_input_error_line(case, na, tmp_path):
    make, fragment = CASES[case]
    path = make(na, tmp_path)
    with pytest.raises(InputError) as err:
        relbasis.load(path)
    text = str(err.value)
    assert "\n" not in text and path.name in text and fragment in text, text
