"""relbasis.load on damaged, truncated, foreign, wrong-version and wrong-shape files.

Every case must end in one InputError line that names the file and what is wrong: no other
exception type, no traceback text, no advice to enable pickle loading, and nothing unpickled.
The valid files are written once per module from a small B-spline and a small Gaussian basis.
"""

import json
import pickle
import shutil
import zipfile
from pathlib import Path

import h5py
import numpy as np
import pytest

import relbasis
from relbasis.constants import C
from relbasis.errors import InputError


class _Marker:
    """Unpickling this object creates the file it names (pickle calls ``open(path, "w")``)."""

    def __init__(self, path: str):
        self.path = path

    def __reduce__(self):
        return open, (self.path, "w")


@pytest.fixture(scope="module")
def good(tmp_path_factory) -> dict:
    """Valid exports: B-splines (.h5 with dipole and hyperfine blocks, .npz), Gaussians (.h5), and
    an .npz of another B-spline basis whose sidecar belongs to a different export."""
    d = tmp_path_factory.mktemp("good")
    sol = relbasis.solve(ion={"Z": 10, "nucleus": "point"}, basis={"size": 20, "order": 6},
                         solve={"kappas": [-1, 1]})
    other = relbasis.solve(ion={"Z": 10, "nucleus": "point"}, basis={"size": 24, "order": 6},
                           solve={"kappas": [-1, 1]})
    gauss = relbasis.solve(ion={"Z": 10, "nucleus": "gauss"}, basis={"family": "gaussian", "size": 8},
                           solve={"kappas": [-1]})
    return {
        "h5": relbasis.export(sol, d / "b.h5", blocks=("dipole", "hyperfine")),
        "npz": relbasis.export(sol, d / "b.npz"),
        "other": relbasis.export(other, d / "other.npz"),
        "gauss": relbasis.export(gauss, d / "g.h5"),
    }


# ----------------------------------------------------------------------------- helpers


def _copy_h5(good, dst, key="h5"):
    out = dst / "bad.h5"
    shutil.copyfile(good[key], out)
    return out


def _edit_h5(edit, key="h5"):
    """A case: copy the valid HDF5 file and change it in place with ``edit(f)``."""

    def make(good, dst):
        out = _copy_h5(good, dst, key)
        with h5py.File(out, "r+") as f:
            edit(f)
        return out

    return make


def _replace(name, value, **kw):
    def edit(f):
        del f[name]
        f.create_dataset(name, data=value, **kw)

    return edit


def _set_attr(name, value):
    def edit(f):
        f.attrs[name] = value

    return edit


def _del_attr(name):
    def edit(f):
        del f.attrs[name]

    return edit


def _bytes(transform, key="h5", suffix=".h5"):
    """A case: the valid file's bytes, transformed (npz: the sidecar is copied alongside)."""

    def make(good, dst):
        src = Path(good[key])
        out = dst / f"bad{suffix}"
        out.write_bytes(transform(src.read_bytes(), src))
        if suffix == ".npz":
            shutil.copyfile(src.with_suffix(".json"), out.with_suffix(".json"))
        return out

    return make


def _flip(dataset, pick, key="h5", high=b"\xf8\xff"):
    """A case: overwrite the two high bytes of one float64 of an HDF5 dataset (at its file offset);
    the default makes the value a NaN."""

    def transform(data, src):
        with h5py.File(src, "r") as f:
            ds = f[dataset]
            offset = ds.id.get_offset()
            index = pick(ds[()])
        buf = bytearray(data)
        at = offset + 8 * index + 6
        buf[at:at + 2] = high  # little-endian: sign, exponent and the top of the mantissa
        return bytes(buf)

    return _bytes(transform, key)


def _npz_members(path):
    with np.load(path) as z:
        return {k: z[k] for k in z.files}


def _edit_npz(edit=None, side=None, key="npz", pickled=False):
    """A case: rewrite the valid .npz with ``edit(members)`` and its sidecar with ``side(meta)``."""

    def make(good, dst):
        src = Path(good[key])
        out = dst / "bad.npz"
        members = _npz_members(src)
        if edit is not None:
            edit(members, dst)
        with open(out, "wb") as fh:
            np.savez(fh, allow_pickle=pickled, **members)
        meta = json.loads(src.with_suffix(".json").read_text())
        if side is not None:
            meta = side(meta)
        out.with_suffix(".json").write_text(meta if isinstance(meta, str) else json.dumps(meta))
        return out

    return make


def _members(**changes):
    def edit(members, dst):
        for k, v in changes.items():
            name = k.replace("__", ".").replace("kappa_m", "kappa_-")
            if v is None:
                del members[name]
            else:
                members[name] = v(members[name]) if callable(v) else v

    return edit


def _meta(path, value):
    """Set (or with None delete) meta[path[0]][path[1]]..."""

    def side(meta):
        node = meta
        for p in path[:-1]:
            node = node[p]
        if value is None:
            del node[path[-1]]
        else:
            node[path[-1]] = value
        return meta

    return side


def _foreign_h5(good, dst):
    out = dst / "bad.h5"
    with h5py.File(out, "w") as f:
        f.create_dataset("data", data=np.arange(10.0))
        f.attrs["creator"] = "some other program"
    return out


def _external_link(good, dst):
    out = _copy_h5(good, dst)
    elsewhere = dst / "elsewhere.h5"
    with h5py.File(elsewhere, "w") as f:
        f.create_dataset("energies", data=np.zeros(34))
    with h5py.File(out, "r+") as f:
        del f["kappa_-1/energies"]
        f["kappa_-1/energies"] = h5py.ExternalLink(str(elsewhere), "energies")
    return out


def _unwritten_P(f):
    shape = f["kappa_-1/P"].shape
    del f["kappa_-1/P"]
    f.create_dataset("kappa_-1/P", shape=shape, dtype=float)  # declared, never written: no data stored


def _deflate_bomb(f):
    """A compressed grid of 10^9 radii (8 GB once read) of which nothing is stored."""
    del f["grid/r"]
    f.create_dataset("grid/r", shape=(10**9,), dtype=float, chunks=(10**6,), compression="gzip")


def _dataset_to_group(name):
    def edit(f):
        del f[name]
        f.create_group(name)

    return edit


def _rename_group(old, new):
    def edit(f):
        f.move(old, new)

    return edit


def _npz_pickled_member(good, dst):
    """energies replaced by an object array whose unpickling would create dst/unpickled."""
    return _edit_npz(_members(kappa_m1__energies=np.array([_Marker(str(dst / "unpickled"))] * 34, dtype=object)),
                     pickled=True)(good, dst)


def _npz_is_a_pickle(good, dst):
    out = dst / "bad.npz"
    out.write_bytes(pickle.dumps({"kappa_-1.energies": _Marker(str(dst / "unpickled"))}))
    return _beside_good_sidecar(good, out)


def _npz_member_raw_bytes(good, dst):
    out = _edit_npz(_members(kappa_m1__energies=None))(good, dst)
    with zipfile.ZipFile(out, "a") as z:
        z.writestr("kappa_-1.energies.npy", b"these are not the bytes of a numpy array")
    return out


def _beside_good_sidecar(good, out: Path) -> Path:
    """``out`` with the valid export's .json sidecar beside it."""
    shutil.copyfile(Path(good["npz"]).with_suffix(".json"), out.with_suffix(".json"))
    return out


def _npz_single_array(good, dst):
    out = dst / "bad.npz"
    with open(out, "wb") as fh:
        np.save(fh, np.arange(10.0))
    return _beside_good_sidecar(good, out)


def _npz_missing_sidecar(good, dst):
    out = dst / "bad.npz"
    shutil.copyfile(good["npz"], out)
    return out


def _npz_sidecar_directory(good, dst):
    out = _npz_missing_sidecar(good, dst)
    out.with_suffix(".json").mkdir()
    return out


def _npz_sidecar_of_another_export(good, dst):
    out = dst / "bad.npz"
    shutil.copyfile(good["other"], out)
    return _beside_good_sidecar(good, out)


def _npz_sidecar_not_utf8(good, dst):
    out = _npz_missing_sidecar(good, dst)
    out.with_suffix(".json").write_bytes(b'{"attrs": "\xff\xfe"}')
    return out


def _directory(good, dst):
    out = dst / "bad.h5"
    out.mkdir()
    return out


def _missing(good, dst):
    return dst / "bad.h5"


def _h5_renamed_npz(good, dst):
    out = dst / "bad.npz"
    shutil.copyfile(good["h5"], out)
    return _beside_good_sidecar(good, out)


def _npz_renamed_h5(good, dst):
    out = dst / "bad.h5"
    shutil.copyfile(good["npz"], out)
    return out


def _random(suffix):
    return _bytes(lambda data, src: np.random.default_rng(7).bytes(4096), "npz" if suffix == ".npz" else "h5", suffix)


def _cut(n, key="h5", suffix=".h5"):
    """The first n bytes of the valid file (negative n: all but the last -n)."""
    return _bytes(lambda data, src: data[:n], key, suffix)


def _npz_crc(data, src):
    """One byte changed in the middle of the stored P of kappa_-1 (the zip CRC no longer matches)."""
    with zipfile.ZipFile(src) as z:
        info = z.getinfo("kappa_-1.P.npy")
    start = info.header_offset + 30 + len(info.filename) + len(info.extra)
    at = start + 128 + info.file_size // 2
    return data[:at] + bytes([data[at] ^ 0x55]) + data[at + 1:]


def _largest(a):
    return int(np.argmax(np.abs(a)))


def _middle(a):
    return a.size // 2


# name -> (how the file is made, a fragment the message must contain)
CASES = {
    # files that are not basis files at all
    "directory": (_directory, "directory"),
    "missing": (_missing, "no such file"),
    "h5-empty": (_bytes(lambda data, src: b""), "empty"),
    "h5-random-bytes": (_random(".h5"), "not an HDF5 file"),
    "h5-text-renamed": (_bytes(lambda data, src: b"Z = 10\nkappas = [-1, 1]\n"), "not an HDF5 file"),
    "h5-is-a-zip": (_npz_renamed_h5, "zip"),
    "h5-foreign": (_foreign_h5, "no 'format' attribute"),
    # truncated and flipped HDF5
    "h5-cut-100": (_cut(100), "HDF5"),
    "h5-cut-5000": (_cut(5000), "HDF5"),
    "h5-cut-half": (_bytes(lambda data, src: data[: len(data) // 2]), "HDF5"),
    "h5-cut-last-byte": (_cut(-1), "HDF5"),
    "h5-superblock-damaged": (_bytes(lambda data, src: data[:8] + b"\xff" * 8 + data[16:]), "HDF5"),
    "h5-flipped-energy": (_flip("kappa_-1/energies", _middle), "kappa_-1/energies"),
    "h5-flipped-coefficient": (_flip("kappa_1/coefficients", _largest), "kappa_1/coefficients"),
    "h5-changed-coefficient": (_flip("kappa_1/coefficients", _largest, high=b"\x00\x40"), "differs from the basis"),
    "h5-flipped-P": (_flip("kappa_-1/P", _largest), "kappa_-1/P"),
    "h5-flipped-knot": (_flip("basis/knots", _middle), "basis/knots"),
    # root attributes
    "h5-wrong-format": (_edit_h5(_set_attr("format", "someone-elses-basis")), "someone-elses-basis"),
    "h5-future-version": (_edit_h5(_set_attr("layout_version", 3)), "newer"),
    # version 2 is a file with a core (tests/test_export_core.py): without the group it is damaged
    "h5-version-2-without-core": (_edit_h5(_set_attr("layout_version", 2)), "marks a file with a core"),
    "h5-version-string": (_edit_h5(_set_attr("layout_version", "1")), "not an integer"),
    "h5-no-version": (_edit_h5(_del_attr("layout_version")), "layout_version"),
    "h5-unknown-family": (_edit_h5(_set_attr("family", "wavelet")), "wavelet"),
    "h5-format-an-array": (_edit_h5(_set_attr("format", np.array([b"relbasis-basis", b"x"]))), "format"),
    "h5-family-an-array": (_edit_h5(_set_attr("family", np.array([b"bspline", b"gaussian"]))), "family"),
    "h5-wall-unknown": (_edit_h5(_set_attr("wall", "rubber")), "rubber"),
    "h5-unknown-balance": (_edit_h5(_set_attr("balance", "xkb")), "xkb"),
    "h5-order-string": (_edit_h5(_set_attr("order", "ten")), "order"),
    "h5-order-absurd": (_edit_h5(_set_attr("order", 10**6)), "order"),
    "h5-c-used-nan": (_edit_h5(_set_attr("c_used", np.nan)), "c_used"),
    "h5-c-used-negative": (_edit_h5(_set_attr("c_used", -137.0)), "c_used"),
    "h5-c-used-text": (_edit_h5(_set_attr("c_used", "fast")), "c_used"),
    "h5-no-config-json": (_edit_h5(_del_attr("config_json")), "config_json"),
    "h5-config-json-damaged": (_edit_h5(_set_attr("config_json", '{"ion": {"Z": 10')), "config_json"),
    "h5-config-json-a-list": (_edit_h5(_set_attr("ion_json", "[10, 20]")), "ion_json"),
    "h5-attribute-not-utf8": (_edit_h5(_set_attr("family", np.bytes_(b"\xff\xfe"))), "family"),
    # groups and datasets
    "h5-no-kappa-groups": (_edit_h5(lambda f: [f.__delitem__(g) for g in ("kappa_-1", "kappa_1")]), "kappa"),
    "h5-kappa-group-deleted": (_edit_h5(lambda f: f.__delitem__("kappa_1")), "kappa_1"),
    "h5-kappa-zero": (_edit_h5(_rename_group("kappa_1", "kappa_0")), "kappa_0"),
    "h5-kappa-not-a-number": (_edit_h5(_rename_group("kappa_1", "kappa_one")), "kappa_one"),
    "h5-no-energies": (_edit_h5(lambda f: f.__delitem__("kappa_-1/energies")), "kappa_-1/energies"),
    "h5-no-knots": (_edit_h5(lambda f: f.__delitem__("basis/knots")), "basis/knots"),
    "h5-no-grid": (_edit_h5(lambda f: f.__delitem__("grid/r")), "grid/r"),
    "h5-energies-a-group": (_edit_h5(_dataset_to_group("kappa_-1/energies")), "kappa_-1/energies"),
    "h5-external-link": (_external_link, "another file"),
    "h5-energies-nan": (_edit_h5(_replace("kappa_-1/energies", np.r_[np.nan, np.zeros(33)])), "kappa_-1/energies"),
    "h5-energies-strings": (_edit_h5(_replace("kappa_-1/energies", np.array(["-50.0"] * 34, dtype=object),
                                              dtype=h5py.string_dtype())), "kappa_-1/energies"),
    "h5-energies-2d": (_edit_h5(_replace("kappa_-1/energies", np.zeros((34, 2)))), "kappa_-1/energies"),
    "h5-energies-unsorted": (_edit_h5(_replace("kappa_-1/energies", np.linspace(0, -10, 34))), "ascending"),
    "h5-coefficients-short": (_edit_h5(lambda f: _replace("kappa_-1/coefficients", f["kappa_-1/coefficients"][:-1])(f)),
                              "kappa_-1/coefficients"),
    "h5-coefficients-int": (_edit_h5(_replace("kappa_-1/coefficients", np.ones((34, 34), dtype=np.int64))),
                            "kappa_-1/coefficients"),
    "h5-P-wrong-shape": (_edit_h5(_replace("kappa_1/P", np.zeros((10, 34)))), "kappa_1/P"),
    "h5-P-not-written": (_edit_h5(_unwritten_P), "kappa_-1/P"),
    "h5-grid-deflate-bomb": (_edit_h5(_deflate_bomb), "grid/r"),
    "h5-labels-short": (_edit_h5(_replace("kappa_-1/labels", np.array(["1s1/2"] * 33, dtype=object),
                                          dtype=h5py.string_dtype())), "kappa_-1/labels"),
    "h5-branch-unknown": (_edit_h5(_replace("kappa_-1/branches", np.array(["bogus"] * 34, dtype=object),
                                            dtype=h5py.string_dtype())), "bogus"),
    "h5-n-float": (_edit_h5(_replace("kappa_-1/n", np.ones(34))), "kappa_-1/n"),
    "h5-estimate-negative": (_edit_h5(_replace("kappa_-1/error_estimate", -np.ones(34))), "error_estimate"),
    "h5-knots-decreasing": (_edit_h5(lambda f: _replace("basis/knots", f["basis/knots"][()][::-1])(f)), "basis/knots"),
    "h5-grid-empty": (_edit_h5(_replace("grid/r", np.zeros(0))), "grid/r"),
    "h5-grid-not-increasing": (_edit_h5(lambda f: _replace("grid/r", f["grid/r"][()][::-1])(f)), "grid/r"),
    "h5-grid-beyond-the-wall": (_edit_h5(lambda f: _replace("grid/r", f["grid/r"][()] * 10)(f)), "grid/r"),
    "h5-family-kinds-wrong": (_edit_h5(_replace("kappa_-1/family_kinds", np.array(["large", "small"], dtype=object),
                                                dtype=h5py.string_dtype())), "family_kinds"),
    "h5-family-splines-out-of-range": (_edit_h5(lambda f: _replace("kappa_-1/family_0_splines",
                                                                   f["kappa_-1/family_0_splines"][()] + 5)(f)),
                                       "family_0_splines"),
    "h5-balance-radius-text": (_edit_h5(lambda f: f["kappa_-1"].attrs.__setitem__("balance_radius", "small")),
                               "balance_radius"),
    "h5-dipole-wrong-shape": (_edit_h5(_replace("integrals/dipole/-1_1/radial_length", np.zeros((3, 3)))),
                              "integrals/dipole/-1_1/radial_length"),
    "h5-hyperfine-names-unknown-kappa": (_edit_h5(_rename_group("integrals/hyperfine/1_1", "integrals/hyperfine/5_5")),
                                         "5_5"),
    "gauss-exponent-negative": (_edit_h5(lambda f: _replace("basis/exponents", -f["basis/exponents"][()])(f), "gauss"),
                                "basis/exponents"),
    "gauss-no-exponents": (_edit_h5(lambda f: f.__delitem__("basis/exponents"), "gauss"), "basis/exponents"),
    # the .npz form
    "npz-empty": (_bytes(lambda data, src: b"", "npz", ".npz"), "empty"),
    "npz-random-bytes": (_random(".npz"), "zip"),
    "npz-text-renamed": (_bytes(lambda data, src: b"not an archive\n", "npz", ".npz"), "zip"),
    "npz-is-hdf5": (_h5_renamed_npz, "HDF5"),
    "npz-is-one-array": (_npz_single_array, ".npy"),
    "npz-is-a-pickle": (_npz_is_a_pickle, "Python objects"),
    "npz-cut-30": (_cut(30, "npz", ".npz"), "zip"),
    "npz-cut-half": (_bytes(lambda data, src: data[: len(data) // 2], "npz", ".npz"), "zip"),
    "npz-cut-last-100": (_cut(-100, "npz", ".npz"), "zip"),
    "npz-crc": (_bytes(_npz_crc, "npz", ".npz"), "kappa_-1/P"),
    "npz-pickled-member": (_npz_pickled_member, "Python objects"),
    "npz-member-raw-bytes": (_npz_member_raw_bytes, "kappa_-1/energies"),
    "npz-member-missing": (_edit_npz(_members(kappa_m1__coefficients=None)), "kappa_-1/coefficients"),
    "npz-energies-unicode": (_edit_npz(_members(kappa_m1__energies=np.array(["-50"] * 34))), "kappa_-1/energies"),
    "npz-energies-nan": (_edit_npz(_members(kappa_m1__energies=lambda a: np.where(a < 0, np.nan, a))),
                         "kappa_-1/energies"),
    "npz-coefficients-short": (_edit_npz(_members(kappa_m1__coefficients=lambda a: a[:, :-2])), "kappa_-1/coefficients"),
    "npz-Q-changed": (_edit_npz(_members(kappa_1__Q=lambda a: 1.5 * a)), "kappa_1/Q"),
    "npz-sidecar-missing": (_npz_missing_sidecar, "bad.json"),
    "npz-sidecar-a-directory": (_npz_sidecar_directory, "directory"),
    "npz-sidecar-not-json": (_edit_npz(side=lambda meta: '{"attrs": {"format": '), "JSON"),
    "npz-sidecar-a-list": (_edit_npz(side=lambda meta: [meta]), "JSON object"),
    "npz-sidecar-not-utf8": (_npz_sidecar_not_utf8, "UTF-8"),
    "npz-sidecar-no-attrs": (_edit_npz(side=_meta(["attrs"], None)), "attrs"),
    "npz-sidecar-no-strings": (_edit_npz(side=_meta(["strings"], None)), "strings"),
    "npz-sidecar-strings-numbers": (_edit_npz(side=_meta(["strings", "kappa_-1/branches"], 5)), "kappa_-1/branches"),
    "npz-sidecar-of-another-export": (_npz_sidecar_of_another_export, "kappa_-1"),
    "npz-sidecar-future-version": (_edit_npz(side=_meta(["attrs", "layout_version"], 7)), "newer"),
    "npz-sidecar-version-float": (_edit_npz(side=_meta(["attrs", "layout_version"], 1.0)), "not an integer"),
    "npz-sidecar-c-used-text": (_edit_npz(side=_meta(["attrs", "c_used"], "fast")), "c_used"),
    "npz-sidecar-c-infinite": (_edit_npz(side=_meta(["attrs", "c_used"], float("inf"))), "c_used"),
    "npz-sidecar-c-huge-integer": (_edit_npz(side=_meta(["attrs", "c_used"], 10**400)), "c_used"),
    "npz-sidecar-order-float": (_edit_npz(side=_meta(["attrs", "order"], 6.5)), "order"),
    "npz-sidecar-config-nested": (_edit_npz(side=_meta(["attrs", "config_json"], "[" * 100000 + "]" * 100000)),
                                  "config_json"),
    "npz-sidecar-kappas-disagree": (_edit_npz(side=lambda meta: _meta(["attrs", "config_json"], json.dumps(
        {**json.loads(meta["attrs"]["config_json"]), "solve": {"kappas": [-1, 1, -2]}}))(meta)), "kappa_-2"),
}


@pytest.mark.parametrize("case", sorted(CASES))
def test_a_damaged_file_gives_one_input_error_line(case, good, tmp_path):
    make, fragment = CASES[case]
    path = make(good, tmp_path)
    with pytest.raises(InputError) as err:  # any other exception type fails the test
        relbasis.load(path)
    text = str(err.value)
    assert "\n" not in text and "Traceback" not in text
    assert path.name in text
    assert "allow_pickle" not in text
    assert fragment in text, text
    assert not (tmp_path / "unpickled").exists()


def test_no_case_unpickles_anything(good, tmp_path):
    """Both pickle cases: the marker object is in the file, and loading leaves no marker behind."""
    for make in (_npz_pickled_member, _npz_is_a_pickle):
        path = make(good, tmp_path)
        assert b"open" in path.read_bytes()
        with pytest.raises(InputError, match="Python objects"):
            relbasis.load(path)
        assert not (tmp_path / "unpickled").exists()
    pickle.loads(pickle.dumps(_Marker(str(tmp_path / "unpickled")))).close()  # the marker works when unpickled
    assert (tmp_path / "unpickled").exists()


def test_the_valid_files_load(good, tmp_path):
    """The damage, not the fixture, makes each case fail; older layout-1 files (no error_estimate,
    no c_used) still load."""
    for key in ("h5", "npz", "other", "gauss"):
        b = relbasis.load(good[key])
        assert b.kappas and all(np.isfinite(b[k].energies).all() for k in b.kappas)
    old = _edit_h5(lambda f: ([f.__delitem__(f"kappa_{k}/error_estimate") for k in (-1, 1)],
                              f.attrs.__delitem__("c_used"), f.attrs.__delitem__("rms_radius_source")))(good, tmp_path)
    b = relbasis.load(old)
    assert b[-1].error_estimate is None and b.c == C
    P, Q = b[1].radial([0.1, 1.0])
    assert P.shape == (2, len(b[1].energies))


VALID = {
    "bag-wall": dict(ion={"Z": 30, "nucleus": "fermi"}, basis={"size": 24, "order": 6, "wall": "bag"},
                     solve={"kappas": [-1, 1]}),
    "no-balance": dict(ion={"Z": 20, "nucleus": "point"}, basis={"size": 24, "order": 6, "balance": "none"},
                       solve={"kappas": [-1, 2]}),
    "gauss-rkb": dict(ion={"Z": 20, "nucleus": "gauss"}, basis={"family": "gaussian", "size": 10, "balance": "rkb"},
                      solve={"kappas": [-1, 1]}),
    "gauss-none": dict(ion={"Z": 20, "nucleus": "gauss"}, basis={"family": "gaussian", "size": 10, "balance": "none"},
                       solve={"kappas": [-2]}),
    "large-c": dict(ion={"Z": 10, "nucleus": "point"}, basis={"size": 30}, solve={"kappas": [-1]}, c=1e4),
}


@pytest.mark.parametrize("name", sorted(VALID))
def test_valid_variants_load_in_both_forms(name, tmp_path):
    """The checks refuse no file the writer makes: both forms load, with P, Q as stored."""
    sol = relbasis.solve(**VALID[name])
    grid = np.geomspace(1e-4, 2.0, 50) if name == "bag-wall" else None
    for suffix in (".h5", ".npz"):
        blocks = ("dipole", "hyperfine") if suffix == ".h5" and name != "gauss-none" else ()
        slater = [(0, ("1s1/2",) * 4)] if name == "large-c" and suffix == ".h5" else ()
        b = relbasis.load(relbasis.export(sol, tmp_path / f"v{suffix}", grid=grid, blocks=blocks, slater=slater))
        assert b.kappas == tuple(sol.kappas)
        for kappa in b.kappas:
            np.testing.assert_array_equal(b[kappa].coefficients, sol[kappa].vectors)
            r = b.grid[:5]
            assert np.abs(b[kappa].radial(r)[0] - b[kappa].P[:5]).max() <= 1e-12 * np.abs(b[kappa].P).max()
