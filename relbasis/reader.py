"""Read back a basis file written by :mod:`relbasis.writer` (HDF5, or .npz + JSON): ``relbasis.load``.

The layout is documented in docs/file-format.md ("relbasis-basis", layout versions 1 and 2: 2 is a
file with a Dirac–Hartree–Fock core, the group "core").  The reader
checks the format name and layout version and turns every problem into a one-line InputError; it
reads plain datasets and attributes only (no pickled objects, nothing executed).
"""

from __future__ import annotations

import json
import os
import struct
import zipfile
import zlib
from dataclasses import dataclass, field, replace
from pathlib import Path

import h5py
import numpy as np

from . import constants
from .errors import InputError, MissingLevelError
from .layout import CORE_GROUP, CORE_LAYOUT_VERSION, FORMAT, LAYOUT_VERSION, READABLE_VERSIONS


# The reader trusts nothing in the file.  Each check below says what is wrong in a short phrase
# (_Damaged); load() puts the file name in front and raises one InputError line.  The checks
# come in the order a reader needs the values: the file's kind, the root attributes, the basis
# (rebuilt from knots/order or exponents), then per kappa the roots, their coefficients against
# the rebuilt basis, and the stored P, Q against the rebuilt functions.  A dataset is read only
# after its type and shape were found right.  Failures the structure cannot foresee (a damaged
# HDF5 object header, a bad zip CRC) are caught by class at that one boundary and said the same
# way.  Nothing is unpickled or executed: .npz members holding Python objects are refused from
# their header, before any byte of their data is read.

_BRANCHES = ("negative", "bound", "positive", "spurious")
_MAX_KAPPA = 10_000  # far beyond any use; bounds the work of rebuilding a Gaussian basis (r^(l+1))
_INFLATE = 1100
"""Deflate makes at most 1032 bytes from one stored byte: a dataset or archive member that claims
more data than that from what the file stores is damaged, and is not read."""
_CHECK_POINTS = 1_000_000  # radii x basis functions evaluated to compare the stored P, Q
_CHECK_FLOPS = 100_000_000  # ... and radii x functions x roots multiplied for it
_PQ_TOLERANCE = 1e-9
"""Stored P, Q and the rebuilt basis times the coefficients agree to rounding: relative to
sum_i |c_i B_i(r)| the difference of a dot product of n <= 4000 terms is below n * 1.1e-16 < 5e-13
(measured: 0, the writer forms the same products)."""
_MAX_SIDECAR = 256 * 2**20
_HDF5_SIGNATURE = b"\x89HDF\r\n\x1a\n"
_NPY_SIGNATURE = b"\x93NUMPY"
_PICKLE_OPCODES = (b"\x80",)  # protocol 2 and later start with PROTO


class _Damaged(Exception):
    """What is wrong with a file, as a short phrase; :func:`load` adds the file name."""


@dataclass(frozen=True)
class KappaBlock:
    """All roots of one symmetry as stored: energies (binding, hartree), labels, coefficients."""

    kappa: int
    energies: np.ndarray
    branches: tuple[str, ...]
    labels: tuple[str | None, ...]
    n: tuple[int | None, ...]
    flags: tuple[tuple[str, ...], ...]
    coefficients: np.ndarray = field(repr=False)
    P: np.ndarray = field(repr=False)
    Q: np.ndarray = field(repr=False)
    _basis: object = field(repr=False, default=None)
    error_estimate: np.ndarray | None = field(repr=False, default=None)  # relative; NaN where none (absent in older files)
    occupied: np.ndarray | None = field(repr=False, default=None)  # bool per root: a core orbital (files with a core)

    def radial(self, r) -> tuple[np.ndarray, np.ndarray]:
        """P and Q of every root at radii r: two arrays of shape (len(r), number of roots).

        The small-component parts of the basis functions carry 1/2c; they are rebuilt with the
        c the file records (:func:`used_c`)."""
        r = np.atleast_1d(np.asarray(r, dtype=float))
        P, Q = self._basis.components(r)[:2]
        return P @ self.coefficients, Q @ self.coefficients


@dataclass(frozen=True)
class Core:
    """The Dirac–Hartree–Fock core a file of layout version 2 records (the group "core").

    Per subshell a, in the order of the config: ``labels``, ``n``, ``kappa``, ``occupancy``
    (2j_a + 1), ``energies`` (binding, hartree), ``roots`` (its root in ``kappa_K``, None where
    that kappa was not exported); ``P``, ``Q`` (bohr^-1/2, radii of ``grid`` x subshells) and
    ``direct_potential`` J(r) (hartree) on the file's grid; the core's binding energy
    ``total_energy`` = ``one_body`` + ``direct`` + ``exchange``; ``iterations``, ``converged``;
    ``electrons`` the [electrons] strings; ``exchange_rule`` the exchange in words.
    """

    labels: tuple[str, ...]
    n: tuple[int, ...]
    kappa: tuple[int, ...]
    occupancy: np.ndarray
    energies: np.ndarray
    roots: tuple[int | None, ...]
    P: np.ndarray = field(repr=False)
    Q: np.ndarray = field(repr=False)
    direct_potential: np.ndarray = field(repr=False)
    total_energy: float = float("nan")
    one_body: float = float("nan")
    direct: float = float("nan")
    exchange: float = float("nan")
    iterations: int = 0
    converged: bool = False
    electrons: dict = field(default_factory=dict)
    exchange_rule: str = ""

    @property
    def orbitals(self) -> dict[str, float]:
        """{label: binding energy} (hartree), in the order of the config."""
        return dict(zip(self.labels, map(float, self.energies)))

    @property
    def electron_count(self) -> int:
        return int(self.occupancy.sum())

    def index(self, label: str) -> int:
        """The column of subshell ``label`` in ``P`` and ``Q``."""
        if label not in self.labels:
            raise MissingLevelError(f"label = {label!r} is not a core subshell of the file; stored: {list(self.labels)}")
        return self.labels.index(label)


@dataclass(frozen=True)
class BasisFile:
    """A basis read back from a file: ``b.kappas``, ``b[kappa]`` -> :class:`KappaBlock`."""

    attrs: dict
    config: dict
    ion: dict
    grid: np.ndarray
    blocks: dict[int, KappaBlock] = field(repr=False)
    integrals: dict = field(repr=False, default_factory=dict)
    core: Core | None = field(repr=False, default=None)  # the mean field (layout version 2), else None

    @property
    def kappas(self) -> tuple[int, ...]:
        return tuple(self.blocks)

    @property
    def c(self) -> float:
        """Speed of light (atomic units) the stored roots were computed with (:func:`used_c`)."""
        return used_c(self.attrs)

    def __getitem__(self, kappa: int) -> KappaBlock:
        """The :class:`KappaBlock` of symmetry ``kappa`` (a key, as ``Solution[kappa]``)."""
        if kappa not in self.blocks:
            raise MissingLevelError(f"kappa = {kappa!r} is not in the file; stored: {list(self.kappas)}")
        return self.blocks[kappa]

    def __iter__(self):
        return iter(self.blocks)

    def __len__(self) -> int:
        return len(self.blocks)

    def __contains__(self, kappa) -> bool:
        return kappa in self.blocks


def load(path) -> BasisFile:
    """Read a file written by :func:`export` (HDF5, or .npz with its .json sidecar).

    Every damaged, truncated, foreign, wrong-version or inconsistent file gives one InputError
    line naming the file and what is wrong (docs/file-format.md, "What relbasis.load checks");
    nothing in the file is executed or unpickled.

    Parameters
    ----------
    path : str or os.PathLike
        A .h5/.hdf5 file, or a .npz file beside its .json sidecar.

    Returns
    -------
    BasisFile
        A mapping kappa -> :class:`KappaBlock` (``b[kappa]``, ``for kappa in b``, ``len(b)``,
        the same meaning as on a Solution), with the file's attributes, config and grid, and
        ``core`` (:class:`Core`, layout version 2) or None.
    """

    failures = (OSError, KeyError, ValueError, TypeError, EOFError, zipfile.BadZipFile, UnicodeDecodeError,
                RuntimeError, AttributeError, IndexError, OverflowError, MemoryError, NotImplementedError,
                struct.error, zlib.error)
    if not isinstance(path, (str, os.PathLike)):
        raise InputError(f"relbasis.load: give the basis file as a path or string, not {type(path).__name__}")
    p = Path(path)
    try:
        head = _head(p)
        return _load_npz(p, head) if p.suffix == ".npz" else _load_h5(p, head)
    except _Damaged as bad:
        why = str(bad)
    except InputError as err:  # a basis builder refusing a value (the checks should have caught it)
        why = f"holds a value relbasis refuses ({err})"
    except failures as err:
        why = f"cannot be read ({_describe(err)})"
    raise InputError(f"basis file {str(p)!r}: {_one_line(why)}")  # repr() keeps a newline in a name escaped


def used_c(attrs: dict) -> float:
    """The speed of light of the Hamiltonian the stored roots belong to.

    ``c_used`` since it was added; files written before it (layout version 1 all the same) were
    made with the physical c, which their ``c`` attribute (1/alpha) records.
    """
    if "c_used" in attrs:
        return float(attrs["c_used"])
    return float(attrs.get("c", constants.C))


def _show(value, limit: int = 60) -> str:
    """repr() of a value from the file, on one line and clipped: the file may hold anything."""
    return _one_line(repr(value), limit)


def _one_line(text: str, limit: int = 600) -> str:
    text = " ".join(text.split())
    return text if len(text) <= limit else text[: limit - 3] + "..."


def _describe(err: BaseException) -> str:
    """A library's complaint in a few words; never numpy's advice to enable pickle loading."""
    if isinstance(err, MemoryError):
        return "not enough memory"
    text = err.strerror if isinstance(err, OSError) and err.strerror else str(err)
    if "pickle" in text.lower():
        return "it holds Python objects, which relbasis does not load"
    return _one_line(text or type(err).__name__, 300)


def _head(p: Path) -> bytes:
    """The first bytes of the file, after checking that it is a non-empty regular file."""
    if p.is_dir():
        raise _Damaged("is a directory, not a basis file")
    if not p.exists():
        raise _Damaged("no such file")
    if not p.is_file():
        raise _Damaged("is not a regular file (a device, pipe or socket?)")
    with open(p, "rb") as fh:
        head = fh.read(8)
    if not head:
        raise _Damaged("is empty (0 bytes)")
    return head


# ---- the two containers: each gives entry(name) -> (kind, shape, what) or None, and read(name)


def _kind(dtype: np.dtype, is_string: bool) -> tuple[str, str]:
    """('f' | 'i' | 's' | 'o' | 'x', words for a message) of a dataset's element type."""
    if is_string:
        return "s", "strings"
    if dtype.hasobject:
        return "o", "Python objects"
    if dtype.kind == "f":
        return "f", f"{dtype.name} numbers"
    if dtype.kind in "iu":
        return "i", f"{dtype.name} integers"
    if dtype.kind == "U":
        return "x", "numpy unicode strings"
    return "x", f"values of type {dtype}"


class _H5Source:
    """Datasets of an open HDF5 file by path; links to other files are never followed."""

    def __init__(self, f):

        self.h5py, self.f = h5py, f

    def resolve(self, name: str):
        """The object at ``name``, or None where there is none."""
        obj = self.f
        parts = name.split("/")
        for i, part in enumerate(parts):
            where = "/".join(parts[: i + 1])
            if not isinstance(obj, self.h5py.Group):
                raise _Damaged(f"{'/'.join(parts[:i])!r} is a dataset where a group is expected")
            link = obj.get(part, getlink=True)
            if link is None:
                return None
            if not isinstance(link, (self.h5py.HardLink, self.h5py.SoftLink)):
                raise _Damaged(f"{where!r} is a link to another file, which relbasis does not follow")
            obj = obj.get(part)
            if obj is None:
                raise _Damaged(f"{where!r} is a link that leads nowhere")
        return obj

    def entry(self, name: str):
        ds = self.resolve(name)
        if ds is None:
            return None
        if not isinstance(ds, self.h5py.Dataset):
            raise _Damaged(f"{name!r} is a group where a dataset is expected")
        return (*_kind(ds.dtype, self.h5py.check_string_dtype(ds.dtype) is not None), ds.shape)

    def read(self, name: str) -> np.ndarray:
        ds = self.resolve(name)
        if ds.is_virtual:
            raise _Damaged(f"{name!r} is a virtual dataset made of other files, which relbasis does not follow")
        dcpl = ds.id.get_create_plist()
        if dcpl.get_external_count():
            raise _Damaged(f"{name!r} keeps its data in another file, which relbasis does not read")
        need, stored = ds.size * ds.dtype.itemsize, ds.id.get_storage_size()
        if need > (stored if dcpl.get_nfilters() == 0 else _INFLATE * stored + 4096):
            raise _Damaged(f"{name!r} declares {need} bytes of data but the file stores {stored}")
        try:
            if self.h5py.check_string_dtype(ds.dtype) is not None:
                return np.asarray(ds.asstr()[()], dtype=object)
            return np.asarray(ds[()])
        except UnicodeDecodeError:
            raise _Damaged(f"entry {name!r} holds strings that are not UTF-8 text") from None
        except (OSError, RuntimeError, TypeError, ValueError) as err:
            raise _Damaged(f"entry {name!r} cannot be read: the file is damaged ({_describe(err)})") from None

    def walk(self, top: str, depth: int = 3) -> tuple[list[str], dict]:
        """Dataset names below the group ``top`` (``depth`` levels at most) and the attributes of
        its groups, keyed "group/name"."""
        names, attrs, todo = [], {}, [(top, 0)]
        while todo:
            path, level = todo.pop()
            obj = self.resolve(path)
            if obj is None:
                continue
            if isinstance(obj, self.h5py.Dataset):
                names.append(path)
                continue
            attrs.update(_h5_attrs(obj.attrs, path + "/"))
            if level < depth:
                todo.extend((f"{path}/{k}", level + 1) for k in obj.keys())
        return names, attrs


def _h5_attrs(attrset, prefix: str = "") -> dict:
    out = {}
    for name in attrset.keys():
        try:
            value = attrset[name]
        except (OSError, KeyError, TypeError, ValueError) as err:
            raise _Damaged(f"attribute {prefix + name!r} cannot be read ({_describe(err)})") from None
        out[prefix + name] = _plain(value, prefix + name)
    return out


def _plain(v, name: str = "?"):
    if isinstance(v, bytes):
        try:
            return v.decode()
        except UnicodeDecodeError:
            raise _Damaged(f"attribute {name!r} is not UTF-8 text") from None
    if isinstance(v, np.generic) or (isinstance(v, np.ndarray) and v.ndim == 0):
        v = v.item()
        return _plain(v, name) if isinstance(v, bytes) else v
    return v


class _NpzSource:
    """Members of an .npz archive (numeric) and the sidecar's string datasets, by name."""

    def __init__(self, z, strings: dict):
        self.z, self.strings, self.members = z, strings, {}
        for member in z.zip.namelist():
            key = member[:-4] if member.endswith(".npy") else member
            name = key.replace(".", "/")
            if name in strings or name in self.members:
                raise _Damaged(f"holds {name!r} twice (in the archive and in the .json sidecar, or twice in the archive)")
            self.members[name] = (member, key)

    def names(self) -> list[str]:
        return [*self.members, *self.strings]

    def entry(self, name: str):
        if name in self.strings:
            return "s", "strings", (len(self.strings[name]),)
        if name not in self.members:
            return None
        return self._header(name)[:3]

    def _header(self, name: str):
        """(kind, words, shape) from the member's .npy header, which is all that is read here."""
        member = self.members[name][0]
        info = self.z.zip.getinfo(member)
        if info.file_size > _INFLATE * info.compress_size + 4096:
            raise _Damaged(f"{name!r} claims {info.file_size} bytes from {info.compress_size} stored")
        fmt = np.lib.format
        with self.z.zip.open(member) as fp:
            try:
                version = fmt.read_magic(fp)
                read_header = {(1, 0): fmt.read_array_header_1_0, (2, 0): fmt.read_array_header_2_0}.get(version)
                if read_header is None:
                    raise _Damaged(f"{name!r} is a numpy array of format version {version}, which relbasis does not read")
                shape, _, dtype = read_header(fp)
            except ValueError as err:
                raise _Damaged(f"{name!r} is not a numpy array ({_describe(err)})") from None
            offset = fp.tell()
        kind, words = _kind(dtype, False)
        if kind != "o":
            need = dtype.itemsize
            for s in shape:
                need *= s
            if need != info.file_size - offset:
                raise _Damaged(f"{name!r} is damaged: its header declares {need} bytes of data, the archive holds "
                               f"{info.file_size - offset}")
        return kind, words, tuple(shape)

    def read(self, name: str) -> np.ndarray:
        
        if name in self.strings:
            return np.array(self.strings[name], dtype=object)
        if self._header(name)[0] == "o":  # never handed to numpy: its data would be unpickled
            raise _Damaged(f"{name!r} holds Python objects, which relbasis does not load")
        try:
            return np.asarray(self.z[self.members[name][1]])
        except (OSError, EOFError, ValueError, zipfile.BadZipFile, zlib.error) as err:
            raise _Damaged(f"entry {name!r} cannot be read: the archive is damaged ({_describe(err)})") from None


def _load_h5(p: Path, head: bytes) -> BasisFile:

    if head.startswith(b"PK\x03\x04"):
        raise _Damaged("is a zip archive (an .npz basis?), not HDF5: give it the suffix .npz")
    if not h5py.is_hdf5(str(p)):
        raise _Damaged("is not an HDF5 file (no HDF5 signature): not written by relbasis, or damaged at its start")
    try:
        f = h5py.File(p, "r")
    except OSError as err:
        raise _Damaged(f"is a damaged or truncated HDF5 file ({_describe(err)})") from None
    with f:
        try:
            attrs = _h5_attrs(f.attrs)
            layout = _layout(attrs)
            src = _H5Source(f)
            kappa_names = [name for name in f.keys() if name.startswith("kappa_")]
            for name in kappa_names:
                group = src.resolve(name)
                if not isinstance(group, h5py.Group):
                    raise _Damaged(f"{name!r} is a dataset where a group is expected")
                attrs.update(_h5_attrs(group.attrs, name + "/"))
            integral_names, integral_attrs = src.walk("integrals")
            attrs.update(integral_attrs)
            has_core = CORE_GROUP in f
            if has_core:
                group = src.resolve(CORE_GROUP)
                if not isinstance(group, h5py.Group):
                    raise _Damaged(f"{CORE_GROUP!r} is a dataset where a group is expected")
                attrs.update(_h5_attrs(group.attrs, CORE_GROUP + "/"))
            return _assemble(layout, attrs, src, kappa_names, integral_names, has_core)
        except (OSError, KeyError, RuntimeError, TypeError, ValueError) as err:  # h5py on a damaged object
            raise _Damaged(f"is a damaged HDF5 file ({_describe(err)})") from None


def _load_npz(p: Path, head: bytes) -> BasisFile:

    if not head.startswith(b"PK\x03\x04"):
        if head.startswith(_HDF5_SIGNATURE):
            raise _Damaged("is an HDF5 file, not an .npz archive: give it the suffix .h5")
        if head.startswith(_NPY_SIGNATURE):
            raise _Damaged("is a single numpy array (.npy), not an .npz archive of a basis")
        if head.startswith(_PICKLE_OPCODES):
            raise _Damaged("is a Python pickle: it holds Python objects, which relbasis does not load")
        raise _Damaged("is not an .npz archive (no zip signature at its start)")
    if not zipfile.is_zipfile(p):
        raise _Damaged("is a truncated or damaged zip archive (its directory at the end is missing or broken)")
    meta = _sidecar(p)
    attrs = meta["attrs"]
    layout = _layout(attrs)
    try:
        z = np.load(p, allow_pickle=False)
    except (OSError, ValueError, EOFError, zipfile.BadZipFile) as err:
        raise _Damaged(f"is a damaged zip archive ({_describe(err)})") from None
    with z:
        try:
            src = _NpzSource(z, meta["strings"])
            names = src.names()
            kappa_names = sorted({name.split("/")[0] for name in names if name.startswith("kappa_")})
            integral_names = [name for name in names if name.startswith("integrals/")]
            has_core = any(name.startswith(CORE_GROUP + "/") for name in names)
            return _assemble(layout, attrs, src, kappa_names, integral_names, has_core)
        except (OSError, EOFError, ValueError, zipfile.BadZipFile, NotImplementedError) as err:
            raise _Damaged(f"is a damaged zip archive ({_describe(err)})") from None


def _sidecar(p: Path) -> dict:
    """The .json beside an .npz: {"attrs": {...}, "strings": {name: [str, ...]}}, checked."""
    side = p.with_suffix(".json")
    if not side.is_file():
        raise _Damaged(f"its metadata file {side.name!r} (beside it) is missing"
                       + (" (there is a directory of that name)" if side.is_dir() else ""))
    if side.stat().st_size > _MAX_SIDECAR:
        raise _Damaged(f"its metadata file {side.name!r} is larger than {_MAX_SIDECAR // 2**20} MiB")
    try:
        meta = json.loads(side.read_bytes().decode("utf-8"))
    except OSError as err:
        raise _Damaged(f"its metadata file {side.name!r} cannot be read ({_describe(err)})") from None
    except UnicodeDecodeError:
        raise _Damaged(f"its metadata file {side.name!r} is not UTF-8 text") from None
    except (ValueError, RecursionError) as err:
        raise _Damaged(f"its metadata file {side.name!r} is not valid JSON ({_describe(err)})") from None
    if not isinstance(meta, dict):
        raise _Damaged(f"its metadata file {side.name!r} is not a JSON object with 'attrs' and 'strings'")
    for key in ("attrs", "strings"):
        if not isinstance(meta.get(key), dict):
            raise _Damaged(f"its metadata file {side.name!r} has no object {key!r}")
    for name, values in meta["strings"].items():
        if not isinstance(values, list) or not all(isinstance(v, str) for v in values):
            raise _Damaged(f"its metadata file {side.name!r}: strings[{name!r}] is not a list of strings")
    return meta


# ---- the checks, common to both containers


@dataclass(frozen=True)
class _Layout:
    """The root attributes a reader needs, checked."""

    family: str
    balance: str
    wall: str
    order: int | None
    c: float
    config: dict
    ion: dict
    version: int = LAYOUT_VERSION


def _is_int(v) -> bool:
    return isinstance(v, int) and not isinstance(v, bool)


def _is_real(v) -> bool:
    return isinstance(v, (int, float)) and not isinstance(v, bool)


def _finite_real(v) -> bool:
    """A plain finite number (a JSON integer too large for a float is not)."""
    try:
        return _is_real(v) and bool(np.isfinite(float(v)))
    except OverflowError:
        return False


def _layout(attrs: dict) -> _Layout:
    from .families import REGISTRY, family_of
    from .vocabulary import BALANCES_OF

    if "format" not in attrs:
        raise _Damaged("is not a relbasis basis file: it has no 'format' attribute (written by another program?)")
    if not isinstance(attrs["format"], str) or attrs["format"] != FORMAT:
        raise _Damaged(f"is not a relbasis basis file (format {_show(attrs['format'])}, expected {FORMAT!r})")
    version = attrs.get("layout_version")
    if version is None:
        raise _Damaged("has no 'layout_version' attribute")
    readable = " and ".join(map(str, READABLE_VERSIONS))
    if not _is_int(version):
        raise _Damaged(f"has layout_version {_show(version)}, which is not an integer "
                       f"(this relbasis reads versions {readable})")
    if version > max(READABLE_VERSIONS):
        raise _Damaged(f"has layout version {version}, written by a newer relbasis; this relbasis reads versions "
                       f"{readable} only: update relbasis to read it")
    if version not in READABLE_VERSIONS:
        raise _Damaged(f"has layout version {version}; this relbasis reads versions {readable} only")
    family = _choice(attrs, "family", tuple(REGISTRY))
    balance = _choice(attrs, "balance", BALANCES_OF[family])
    wall, order = family_of(family).read_layout(attrs, _READING)
    for key in ("c_used", "c"):
        if key in attrs and not (_finite_real(attrs[key]) and attrs[key] > 0):
            raise _Damaged(f"has {key} = {_show(attrs[key])}: expected a finite positive speed of light (atomic units)")
    return _Layout(family, balance, wall, order, used_c(attrs), _json_object(attrs, "config_json"),
                   _json_object(attrs, "ion_json"), version)


def _choice(attrs: dict, key: str, valid) -> str:
    value = attrs.get(key)
    if not isinstance(value, str) or value not in valid:
        raise _Damaged(f"has {key} = {_show(value)}; valid are {', '.join(valid)}")
    return value


def _json_object(attrs: dict, key: str) -> dict:
    text = attrs.get(key)
    if not isinstance(text, str):
        record = "config" if key == "config_json" else "ion"
        raise _Damaged(f"has no text attribute {key!r} (the JSON record of the {record})")
    try:
        value = json.loads(text)
    except (ValueError, RecursionError) as err:
        raise _Damaged(f"has an attribute {key!r} that is not valid JSON ({_describe(err)})") from None
    if not isinstance(value, dict):
        raise _Damaged(f"has an attribute {key!r} that is JSON but not an object")
    return value


_WORDS = {"f": "floating-point numbers", "i": "integers", "s": "strings"}


def _get(src, name: str, kind: str, shape: tuple, dims: str = "", required: bool = True):
    """The dataset ``name``, read only after its element kind and shape were found right.

    ``shape``: expected sizes, None where any size will do; ``dims`` names the axes for a message.
    """
    meta = src.entry(name)
    if meta is None:
        if required:
            raise _Damaged(f"lacks the entry {name!r}")
        return None
    got, words, got_shape = meta
    if got == "o":
        raise _Damaged(f"entry {name!r} holds Python objects, which relbasis does not load")
    if got != kind:
        raise _Damaged(f"entry {name!r} holds {words}, expected {_WORDS[kind]}")
    if len(got_shape) != len(shape) or any(s is not None and s != g for s, g in zip(shape, got_shape)):
        want = "(" + ", ".join("any" if s is None else str(s) for s in shape) + ("," if len(shape) == 1 else "") + ")"
        raise _Damaged(f"entry {name!r} has shape {tuple(got_shape)}, expected {want}" + (f" = {dims}" if dims else ""))
    value = src.read(name)
    if value.shape != tuple(got_shape):
        raise _Damaged(f"entry {name!r} reads with shape {value.shape}, not the declared {tuple(got_shape)}")
    return value.astype(float, copy=False) if kind == "f" else value


def _finite(name: str, a: np.ndarray, *, nan: bool = False) -> np.ndarray:
    """``a`` unless it holds an infinity or (``nan`` False) a NaN."""
    bad = np.isinf(a) if nan else ~np.isfinite(a)
    if np.any(bad):
        _first(name, bad, f"holds {float(a[np.unravel_index(int(np.argmax(bad)), a.shape)])!r}",
               "expected finite numbers" + (" (or NaN)" if nan else ""))
    return a


def _first(name: str, bad: np.ndarray, what: str, fix: str = "") -> None:
    """Say where ``bad`` is first true: "entry NAME WHAT at index I: FIX"."""
    if np.any(bad):
        i = tuple(int(x) for x in np.unravel_index(int(np.argmax(bad)), bad.shape))
        raise _Damaged(f"entry {name!r} {what} at index {i if len(i) > 1 else i[0]}" + (f": {fix}" if fix else ""))


def _kappas(names) -> list[int]:
    out = []
    for name in names:
        try:
            kappa = int(name[len("kappa_"):])
        except ValueError:
            kappa = None
        if kappa is None or kappa == 0 or name != f"kappa_{kappa}" or abs(kappa) > _MAX_KAPPA:
            raise _Damaged(f"has a group {name!r}: expected kappa_K with K a non-zero integer (kappa_-1, kappa_2), "
                           f"|K| <= {_MAX_KAPPA}")
        out.append(kappa)
    if not out:
        raise _Damaged("holds no kappa_K group (no roots of any symmetry)")
    return sorted(out, key=lambda k: (abs(k), k > 0))


def _same_kappas(config: dict, kappas: list[int]) -> None:
    """The kappa groups are the symmetries the config solved (solve.kappas of config_json)."""
    listed = config.get("solve", {}).get("kappas") if isinstance(config.get("solve"), dict) else None
    if not isinstance(listed, list) or not all(_is_int(k) for k in listed):
        return
    for k in listed:
        if k not in kappas:
            raise _Damaged(f"lacks the group kappa_{k}, which its config_json solved (solve.kappas = {listed})")
    for k in kappas:
        if k not in listed:
            raise _Damaged(f"has a group kappa_{k} that its config_json did not solve (solve.kappas = {listed}): "
                           f"parts of two exports?")


def _assemble(layout: _Layout, attrs: dict, src, kappa_names, integral_names, has_core: bool = False) -> BasisFile:
    kappas = _kappas(kappa_names)
    _same_kappas(layout.config, kappas)
    grid = _finite("grid/r", _get(src, "grid/r", "f", (None,), "(radii,)"))
    _first("grid/r", ~(grid > 0), "holds a radius <= 0", "expected positive radii (bohr)")
    _first("grid/r", np.diff(grid) <= 0, "stops increasing", "expected strictly increasing radii")
    if grid.size == 0:
        raise _Damaged("entry 'grid/r' is empty")
    if src.entry("quadrature/r") is not None or src.entry("quadrature/w") is not None:
        qr = _finite("quadrature/r", _get(src, "quadrature/r", "f", (None,), "(points,)"))
        _finite("quadrature/w", _get(src, "quadrature/w", "f", qr.shape, "(points,) like quadrature/r"))
    from .families import family_of

    rebuild = family_of(layout.family).read_set(_Reading(src), attrs, layout, grid)
    blocks = {kappa: _block(src, kappa, rebuild(kappa, f"kappa_{kappa}"), grid) for kappa in kappas}
    ints = _integrals(src, attrs, blocks, integral_names)
    core = None
    if layout.version == CORE_LAYOUT_VERSION:
        if not has_core:
            raise _Damaged(f"has layout version {CORE_LAYOUT_VERSION}, which marks a file with a core, but no group "
                           f"{CORE_GROUP!r}")
        core, occupied = _core(src, attrs, grid, blocks)
        blocks = {k: replace(b, occupied=occupied[k]) for k, b in blocks.items()}
    elif has_core:
        raise _Damaged(f"has a group {CORE_GROUP!r} but layout version {layout.version} (a file with a core is "
                       f"version {CORE_LAYOUT_VERSION})")
    return BasisFile(attrs, layout.config, layout.ion, grid, blocks, ints, core)


class _Reading:
    """What a family's reader (relbasis.families: ``read_layout``, ``read_set``) needs of a file:
    its datasets read only after their kind and shape were found right, the checks that say
    where a value is bad, and the error that becomes the one-line InputError."""

    def __init__(self, src=None):
        self.src = src

    def array(self, name: str, kind: str, shape: tuple, dims: str = "", required: bool = True):
        return _get(self.src, name, kind, shape, dims, required)

    @staticmethod
    def finite(name: str, a, *, nan: bool = False):
        return _finite(name, a, nan=nan)

    @staticmethod
    def first(name: str, bad, what: str, fix: str = "") -> None:
        _first(name, bad, what, fix)

    @staticmethod
    def show(value) -> str:
        return _show(value)

    @staticmethod
    def is_int(value) -> bool:
        return _is_int(value)

    @staticmethod
    def finite_real(value) -> bool:
        return _finite_real(value)


_Reading.Damaged = _Damaged
_READING = _Reading()


def _block(src, kappa: int, basis, grid: np.ndarray) -> KappaBlock:
    g = f"kappa_{kappa}"
    energies = _finite(f"{g}/energies", _get(src, f"{g}/energies", "f", (None,), "(roots,)"))
    R, F = energies.size, basis.size
    if R == 0 or R > F:
        raise _Damaged(f"entry '{g}/energies' holds {R} roots; its basis has {F} functions (expected 1 to {F} roots)")
    _first(f"{g}/energies", np.diff(energies) < 0, "decreases", "expected energies in ascending order")
    roots = f"(roots,) like {g}/energies"
    branches = _get(src, f"{g}/branches", "s", (R,), roots)
    _first(f"{g}/branches", ~np.isin(branches, _BRANCHES),
           f"holds {_show(next((b for b in branches if b not in _BRANCHES), ''))}", f"valid are {', '.join(_BRANCHES)}")
    labels = _get(src, f"{g}/labels", "s", (R,), roots)
    n = _get(src, f"{g}/n", "i", (R,), roots)
    _first(f"{g}/n", (n < -1) | (n == 0), "holds a principal number < 1", "expected n >= 1, or -1 for none")
    flags = _get(src, f"{g}/flags", "s", (R,), roots)
    est = _get(src, f"{g}/error_estimate", "f", (R,), roots, required=False)  # absent in older files
    if est is not None:
        _first(f"{g}/error_estimate", ~(np.isnan(est) | (np.isfinite(est) & (est >= 0))),
               "holds a value that is neither a relative error >= 0 nor NaN")
    coefficients = _finite(f"{g}/coefficients", _get(src, f"{g}/coefficients", "f", (F, R),
                                                     "(basis functions rebuilt from the file, roots)"))
    pq = "(radii of grid/r, roots)"
    P = _finite(f"{g}/P", _get(src, f"{g}/P", "f", (grid.size, R), pq))
    Q = _finite(f"{g}/Q", _get(src, f"{g}/Q", "f", (grid.size, R), pq))
    _agree(g, basis, grid, coefficients, P, Q)
    return KappaBlock(kappa, energies, tuple(str(b) for b in branches), tuple(str(x) or None for x in labels),
                      tuple(None if int(x) < 0 else int(x) for x in n),
                      tuple(tuple(x for x in str(s).split(",") if x) for s in flags),
                      coefficients, P, Q, basis, est)


def _agree(g: str, basis, grid: np.ndarray, coefficients: np.ndarray, P: np.ndarray, Q: np.ndarray) -> None:
    """Stored P, Q equal the rebuilt basis functions times the coefficients (to rounding).

    This ties the coefficients, the knots or exponents, c and the stored functions together: a
    changed number in any of them, or a sidecar of another export, shows here.  Every radius and
    root is compared where that is cheap; larger files at evenly spread subsets.
    """
    (M, R), F = P.shape, coefficients.shape[0]
    m = min(M, max(32, _CHECK_POINTS // F))
    k = min(R, max(8, _CHECK_FLOPS // (m * F)))
    rows = np.unique(np.linspace(0, M - 1, m).round().astype(int))
    cols = np.unique(np.linspace(0, R - 1, k).round().astype(int))
    c = coefficients[:, cols]
    with np.errstate(all="ignore"):
        parts = basis.components(grid[rows])[:2]
        for name, stored, B in (("P", P, parts[0]), ("Q", Q, parts[1])):
            diff = np.abs(stored[np.ix_(rows, cols)] - B @ c)
            bad = ~(diff <= _PQ_TOLERANCE * (np.abs(B) @ np.abs(c)))
            if np.any(bad):
                i, j = np.unravel_index(int(np.argmax(bad)), bad.shape)
                raise _Damaged(f"entry '{g}/{name}' at r = {grid[rows[i]]:g}, root {cols[j]} differs from the basis "
                               f"rebuilt from the file times '{g}/coefficients': one of them, the knots or exponents, or "
                               f"c_used is damaged")


_CORE_ENERGY_TOLERANCE = 1e-10
"""total_energy = one_body + direct + exchange as the writer adds them: equal to rounding."""


def _core(src, attrs: dict, grid: np.ndarray, blocks: dict) -> tuple[Core, dict]:
    """The group "core" (layout version 2), checked, and per kappa the occupied roots (bool).

    Each subshell is a full one (2|kappa| electrons, n > l); its root index points at an occupied
    root of kappa_K with the same n (or is -1 where kappa_K was not exported); each kappa_K has as
    many occupied roots as the core has subshells of that kappa; the energy parts add up."""
    g = CORE_GROUP
    labels = _get(src, f"{g}/labels", "s", (None,), "(subshells,)")
    C = labels.size
    if C == 0:
        raise _Damaged(f"entry '{g}/labels' is empty: a core has at least one subshell")
    each = f"(subshells,) like {g}/labels"
    kappa = _get(src, f"{g}/kappa", "i", (C,), each)
    _first(f"{g}/kappa", (kappa == 0) | (np.abs(kappa) > _MAX_KAPPA), "holds kappa 0 or |kappa| > 10000",
           "expected a non-zero integer")
    n = _get(src, f"{g}/n", "i", (C,), each)
    l = np.where(kappa > 0, kappa, -kappa - 1)
    _first(f"{g}/n", n <= l, "holds n <= l", "expected n > l of the subshell's kappa")
    occupancy = _get(src, f"{g}/occupancy", "i", (C,), each)
    _first(f"{g}/occupancy", occupancy != 2 * np.abs(kappa), "is not 2|kappa|",
           "expected full subshells (2j + 1 = 2|kappa| electrons)")
    energies = _finite(f"{g}/energies", _get(src, f"{g}/energies", "f", (C,), each))
    root = _get(src, f"{g}/root", "i", (C,), each)
    pq = f"(radii of grid/r, subshells of {g}/labels)"
    P = _finite(f"{g}/P", _get(src, f"{g}/P", "f", (grid.size, C), pq))
    Q = _finite(f"{g}/Q", _get(src, f"{g}/Q", "f", (grid.size, C), pq))
    J = _finite(f"{g}/direct_potential", _get(src, f"{g}/direct_potential", "f", grid.shape, "(radii of grid/r,)"))
    occupied = {}
    for k, b in blocks.items():
        name = f"kappa_{k}/occupied"
        flags = _get(src, name, "i", b.energies.shape, f"(roots,) like kappa_{k}/energies")
        _first(name, (flags != 0) & (flags != 1), "holds a value other than 0 or 1", "expected 1 for a core root, else 0")
        want = int(np.count_nonzero(kappa == k))
        if int(flags.sum()) != want:
            raise _Damaged(f"entry {name!r} marks {int(flags.sum())} roots occupied; {g}/kappa holds {want} "
                           f"subshells of kappa {k}")
        occupied[k] = flags.astype(bool)
    for i in range(C):
        k, r_i = int(kappa[i]), int(root[i])
        b = blocks.get(k)
        ok = r_i == -1 if b is None else (0 <= r_i < b.energies.size and occupied[k][r_i] and b.n[r_i] == int(n[i]))
        if not ok:
            fix = (f"expected -1 (kappa {k} was not exported)" if b is None else
                   f"expected the index of the occupied root of kappa_{k} with n = {int(n[i])}")
            raise _Damaged(f"entry '{g}/root' holds {r_i} at index {i}: {fix}")
    numbers = {}
    for key in ("total_energy", "one_body", "direct", "exchange"):
        value = attrs.get(f"{g}/{key}")
        if not _finite_real(value):
            raise _Damaged(f"has {g}/{key} = {_show(value)}: expected a finite number (hartree)")
        numbers[key] = float(value)
    parts = numbers["one_body"] + numbers["direct"] + numbers["exchange"]
    if not abs(parts - numbers["total_energy"]) <= _CORE_ENERGY_TOLERANCE * abs(numbers["total_energy"]):
        raise _Damaged(f"has {g}/total_energy = {numbers['total_energy']!r}, but one_body + direct + exchange = "
                       f"{parts!r}: one of them is damaged")
    iterations = attrs.get(f"{g}/iterations")
    if not (_is_int(iterations) and iterations >= 1):
        raise _Damaged(f"has {g}/iterations = {_show(iterations)}: expected an integer >= 1")
    converged = attrs.get(f"{g}/converged")
    if not isinstance(converged, bool):
        raise _Damaged(f"has {g}/converged = {_show(converged)}: expected true or false")
    texts = {}
    for key in ("electrons_core", "electrons_valence", "exchange_rule"):
        value = attrs.get(f"{g}/{key}")
        if not isinstance(value, str):
            raise _Damaged(f"has {g}/{key} = {_show(value)}: expected text")
        texts[key] = value
    count = attrs.get(f"{g}/electron_count")
    if count is not None and count != int(occupancy.sum()):
        raise _Damaged(f"has {g}/electron_count = {_show(count)}, but {g}/occupancy adds up to {int(occupancy.sum())}")
    electrons = {"core": texts["electrons_core"]}
    if texts["electrons_valence"]:
        electrons["valence"] = texts["electrons_valence"]
    core = Core(tuple(str(x) for x in labels), tuple(int(x) for x in n), tuple(int(x) for x in kappa),
                occupancy.astype(np.int64), energies, tuple(None if int(x) < 0 else int(x) for x in root), P, Q, J,
                iterations=int(iterations), converged=converged, electrons=electrons,
                exchange_rule=texts["exchange_rule"], **numbers)
    return core, occupied


def _integrals(src, attrs: dict, blocks: dict, names) -> dict:
    """The optional integral blocks, keyed without "integrals/"; known ones checked against the roots."""
    out = {}
    roots = {k: b.energies.size for k, b in blocks.items()}
    which = None
    for name in sorted(names):
        parts = name.split("/")[1:]
        if parts[:1] == ["dipole"] and len(parts) == 3 and parts[2] in ("radial_length", "radial_velocity"):
            ka, kb = _pair(name, parts[1], roots)
            dims = f"(roots of kappa {ka}, roots of kappa {kb})"
            value = _finite(name, _get(src, name, "f", (roots[ka], roots[kb]), dims), nan=parts[2] == "radial_velocity")
        elif parts[:1] == ["hyperfine"] and len(parts) == 2:
            ka, kb = _pair(name, parts[1], roots)
            dims = f"(roots of kappa {ka}, roots of kappa {kb})"
            value = _finite(name, _get(src, name, "f", (roots[ka], roots[kb]), dims))
        elif parts == ["slater", "which"]:
            value = which = _get(src, name, "s", (None,), "(integrals,)")
        elif parts == ["slater", "value"]:
            value = _finite(name, _get(src, name, "f", (None,), "(integrals,)"))
        else:  # a block this reader does not know: plain numbers or strings only
            kind = (src.entry(name) or ("x",))[0]
            if kind not in ("f", "i", "s"):
                raise _Damaged(f"entry {name!r} holds neither numbers nor strings")
            value = src.read(name)
        out[name[len("integrals/"):]] = value
    if which is not None or "slater/value" in out:
        if which is None or "slater/value" not in out or out["slater/value"].shape != which.shape:
            raise _Damaged("entries 'integrals/slater/which' and 'integrals/slater/value' do not come as a pair "
                           "of one length")
    for key, value in attrs.items():
        if key.startswith("integrals/") and key.endswith("/angular") and not _finite_real(value):
            raise _Damaged(f"has {key} = {_show(value)}: expected a finite number")
    return out


def _pair(name: str, text: str, roots: dict) -> tuple[int, int]:
    """KA_KB of an integral block: two kappas the file holds."""
    try:
        ka, kb = (int(x) for x in text.split("_"))
    except ValueError:
        raise _Damaged(f"entry {name!r}: {text!r} is not KA_KB with two kappas") from None
    for k in (ka, kb):
        if text != f"{ka}_{kb}" or k not in roots:
            raise _Damaged(f"entry {name!r} names kappa {k}, which the file has no group kappa_{k} for")
    return ka, kb
