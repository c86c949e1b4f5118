"""Export a solved basis for a many-body code (HDF5, or .npz + JSON) and read it back.

The layout is ours and documented in docs/file-format.md ("relbasis-basis", layout version 1).
Files are written under a unique temporary name in the target directory and renamed into place
(:mod:`relbasis.outputs`); an existing file is replaced only with ``force`` and only if relbasis
wrote it (its ``format`` attribute says so); modes follow the umask.  The reader checks the format name and layout
version and turns every problem into a one-line InputError; it reads plain datasets and
attributes only (no pickled objects, nothing executed).
"""

from __future__ import annotations

import json
import zipfile
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from . import __version__, constants
from .bspline import BSplineBasis
from .dirac import DiracBasis, Family
from .dirac_gaussian import GaussianDiracBasis
from .errors import InputError
from .outputs import atomic_group, atomic_write

FORMAT = "relbasis-basis"
LAYOUT_VERSION = 1
BLOCKS = ("dipole", "hyperfine", "slater")


# ----------------------------------------------------------------------------- writing


def check_target(path, force: bool) -> Path:
    """The output file, after making sure writing it destroys nothing unasked.

    An existing file is replaced only with ``force``, and only if relbasis wrote it (its
    ``format`` attribute, or for .npz the sidecar's, says so): a foreign file is never replaced.
    """
    p = Path(path)
    if p.is_dir():
        raise InputError(f"--out {str(p)!r} is a directory: give a file name such as {str(p / 'basis.h5')!r}")
    if not p.parent.is_dir():
        what = "is not a directory" if p.parent.exists() else "does not exist"
        raise InputError(f"--out {str(p)!r}: {str(p.parent)!r} {what}")
    if p.suffix not in (".h5", ".hdf5", ".npz"):
        raise InputError(f"--out {str(p)!r}: give a .h5 (HDF5) or .npz (numpy + JSON) file name")
    for q in (p, p.with_suffix(".json")) if p.suffix == ".npz" else (p,):
        if not (q.exists() or q.is_symlink()):
            continue
        if not _written_by_us(q):
            raise InputError(f"output file {str(q)!r} exists and was not written by relbasis: it is never replaced "
                             f"(not even with --force); move it or choose another name")
        if not force:
            raise InputError(f"output file {str(q)!r} exists: choose another name or add --force to replace it "
                             f"(force=True in Python)")
    return p


def _written_by_us(p: Path) -> bool:
    """True if ``p`` is a regular file that carries relbasis's format marker."""
    if p.is_symlink() or not p.is_file():
        return False
    try:
        if p.suffix == ".json":
            return json.loads(p.read_text(encoding="utf-8")).get("attrs", {}).get("format") == FORMAT
        if p.suffix == ".npz":
            side = p.with_suffix(".json")
            return zipfile.is_zipfile(p) and side.is_file() and _written_by_us(side)
        import h5py

        if not h5py.is_hdf5(p):
            return False
        with h5py.File(p, "r") as f:
            return _plain(f.attrs.get("format")) == FORMAT
    except (OSError, ValueError, AttributeError, TypeError, RuntimeError):
        return False


def _payload(sol, grid: np.ndarray | None, blocks, slater=()) -> dict:
    """Everything the file holds, as plain numbers, strings and arrays."""
    from . import integrals

    cfg = sol.config
    top = {
        "format": FORMAT, "layout_version": LAYOUT_VERSION, "relbasis_version": __version__,
        "codata": constants.CODATA, "alpha": constants.ALPHA, "c": constants.C, "c_used": float(sol.c),
        "hartree_eV": constants.HARTREE_EV, "family": cfg.basis.family, "balance": cfg.basis.balance,
        "wall": cfg.basis.wall or "", "config_json": json.dumps(cfg.to_dict(), sort_keys=True),
        "ion_json": json.dumps(sol.nucleus.to_dict(), sort_keys=True),
        # Added within layout version 1 (readers ignore attributes they do not know; older
        # files lack it and still load): where the rms radius came from, with its reference.
        "rms_radius_source": sol.nucleus.rms_radius_source,
        "energy_unit": "hartree", "length_unit": "bohr",
    }
    r_q, w_q = sol.grid
    out_grid = r_q if grid is None else np.asarray(grid, dtype=float)
    arrays = {"grid/r": out_grid, "quadrature/r": r_q, "quadrature/w": w_q}
    if sol.splines is not None:
        arrays["basis/knots"] = sol.splines.knots
        top["order"] = sol.splines.order
    else:
        arrays["basis/exponents"] = sol.bases[sol.kappas[0]].exponents
    for kappa in sol.kappas:
        spec, basis = sol[kappa], sol.bases[kappa]
        g = f"kappa_{kappa}"
        arrays[f"{g}/energies"] = spec.energies
        arrays[f"{g}/coefficients"] = spec.vectors
        arrays[f"{g}/n"] = np.array([-1 if n is None else n for n in spec.n], dtype=np.int64)
        arrays[f"{g}/branches"] = np.array(spec.branches, dtype=object)
        arrays[f"{g}/labels"] = np.array([lab or "" for lab in spec.labels], dtype=object)
        arrays[f"{g}/flags"] = np.array([",".join(f) for f in spec.flags], dtype=object)
        est = spec.error_estimate if spec.error_estimate is not None else np.full(spec.energies.size, np.nan)
        arrays[f"{g}/error_estimate"] = np.where(np.isfinite(est), est, np.nan)
        if grid is None:
            P, Q = sol.sample(kappa, None, "PQ")
        else:
            P, Q = (m @ spec.vectors for m in basis.components(out_grid)[:2])
        arrays[f"{g}/P"], arrays[f"{g}/Q"] = P, Q
        if isinstance(basis, DiracBasis):
            arrays[f"{g}/family_kinds"] = np.array([f.kind for f in basis.families], dtype=object)
            for i, f in enumerate(basis.families):
                arrays[f"{g}/family_{i}_splines"] = f.splines
            top[f"{g}/balance_radius"] = basis.families[0].balance_radius
    if "dipole" in blocks:  # every E1-connected pair once, rows: roots of ka, columns: roots of kb
        for ka in sol.kappas:
            for kb in sol.kappas:
                if ka < kb and integrals.reduced_c(1, kb, ka) != 0:
                    d = integrals.dipole(sol, ka, kb)
                    arrays[f"integrals/dipole/{ka}_{kb}/radial_length"] = d["radial"]
                    arrays[f"integrals/dipole/{ka}_{kb}/radial_velocity"] = integrals.dipole_velocity(sol, ka, kb)
                    top[f"integrals/dipole/{ka}_{kb}/angular"] = d["angular"]
    if "hyperfine" in blocks:  # int P_a Q_b / r^2 dr within each symmetry
        for kappa in sol.kappas:
            arrays[f"integrals/hyperfine/{kappa}_{kappa}"] = integrals.hyperfine(sol, kappa, kappa)
    if slater:
        rows, values = [], []
        for k, labels in slater:
            orbitals = [_orbital(sol, lab) for lab in labels]
            values.append(integrals.slater(sol, k, *orbitals))
            rows.append(f"{k}:{','.join(labels)}")
        arrays["integrals/slater/which"] = np.array(rows, dtype=object)
        arrays["integrals/slater/value"] = np.array(values)
    return {"attrs": top, "arrays": arrays}


def _orbital(sol, label: str) -> tuple[int, int]:
    """(kappa, root index) of the bound state with this label."""
    for kappa in sol.kappas:
        if label in sol[kappa].labels:
            return kappa, sol[kappa].labels.index(label)
    raise InputError(f"--slater: no bound state {label!r} among the solved symmetries {list(sol.kappas)}")


def parse_slater(text: str) -> tuple[int, tuple[str, str, str, str]]:
    """'0:1s1/2,1s1/2,1s1/2,1s1/2' -> (0, labels a, b, c, d) of R^k(ab, cd)."""
    try:
        k, rest = text.split(":")
        labels = tuple(x.strip() for x in rest.split(","))
        k = int(k)
    except ValueError:
        raise InputError(f"--slater {text!r}: give K:A,B,C,D with state labels, e.g. 0:1s1/2,1s1/2,1s1/2,1s1/2") from None
    if k < 0 or len(labels) != 4:
        raise InputError(f"--slater {text!r}: K must be >= 0 and four orbitals are needed (R^K(AB, CD))")
    return k, labels


def export(sol, path, *, force: bool = False, grid=None, blocks=(), slater=()) -> Path:
    """Write the solution to ``path`` (.h5/.hdf5: HDF5; .npz: numpy archive + .json sidecar).

    ``blocks``: integral blocks ("dipole", "hyperfine"); ``slater``: (k, (a, b, c, d)) with
    state labels, each stored as R^k(ab, cd).
    """
    blocks = tuple(blocks)
    bad = [b for b in blocks if b not in BLOCKS]
    if bad:
        raise InputError(f"--with {bad[0]!r}: valid integral blocks are {', '.join(BLOCKS)}")
    if "slater" in blocks and not slater:
        raise InputError("--with slater: say which integrals with --slater K:A,B,C,D (e.g. 0:1s1/2,1s1/2,1s1/2,1s1/2)")
    target = check_target(path, force)
    data = _payload(sol, grid, blocks, tuple(slater))
    if target.suffix in (".h5", ".hdf5"):
        atomic_write(target, lambda tmp: _write_h5(tmp, data), "write the basis file")
    else:  # .npz and its sidecar: both staged, then renamed, so that they always belong together
        meta = {"attrs": data["attrs"], "strings": {k: list(v) for k, v in data["arrays"].items() if v.dtype == object}}
        atomic_group([(target, lambda tmp: _write_npz(tmp, data)),
                      (target.with_suffix(".json"),
                       lambda tmp: Path(tmp).write_text(json.dumps(meta, indent=1), encoding="utf-8"))],
                     "write the basis file")
    return target


def _write_h5(tmp: str, data: dict) -> None:
    import h5py

    with h5py.File(tmp, "w") as f:
        for key, value in data["attrs"].items():
            group, _, name = key.rpartition("/")
            (f.require_group(group) if group else f).attrs[name] = value
        for key, value in data["arrays"].items():
            if value.dtype == object:
                f.create_dataset(key, data=value.astype(str).astype(object), dtype=h5py.string_dtype("utf-8"))
            else:
                f.create_dataset(key, data=value)
        f.attrs["units"] = "energies: hartree (binding, eps = E - m c^2); radii: bohr; P, Q: bohr^-1/2"


def _write_npz(tmp: str, data: dict) -> None:
    numeric = {k.replace("/", "."): v for k, v in data["arrays"].items() if v.dtype != object}
    with open(tmp, "wb") as fh:
        np.savez(fh, **numeric)


# ----------------------------------------------------------------------------- reading


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

    def radial(self, r) -> tuple[np.ndarray, np.ndarray]:
        """P and Q of every root at radii r: two arrays of shape (len(r), number of roots).

        The small-component parts of the basis functions carry 1/2c; they are rebuilt with the
        c the file records (:func:`used_c`)."""
        r = np.atleast_1d(np.asarray(r, dtype=float))
        P, Q = self._basis.components(r)[:2]
        return P @ self.coefficients, Q @ self.coefficients


@dataclass(frozen=True)
class BasisFile:
    """A basis read back from a file: ``b.kappas``, ``b[kappa]`` -> :class:`KappaBlock`."""

    attrs: dict
    config: dict
    ion: dict
    grid: np.ndarray
    blocks: dict[int, KappaBlock] = field(repr=False)
    integrals: dict = field(repr=False, default_factory=dict)

    @property
    def kappas(self) -> tuple[int, ...]:
        return tuple(self.blocks)

    @property
    def c(self) -> float:
        """Speed of light (atomic units) the stored roots were computed with (:func:`used_c`)."""
        return used_c(self.attrs)

    def __getitem__(self, kappa: int) -> KappaBlock:
        return self.blocks[kappa]


def load(path) -> BasisFile:
    """Read a file written by :func:`export` (HDF5 or .npz + .json)."""
    p = Path(path)
    if not p.is_file():
        raise InputError(f"basis file {str(p)!r} not found")
    if p.suffix == ".npz":
        return _load_npz(p)
    try:
        import h5py

        with h5py.File(p, "r") as f:
            attrs = {k: _plain(v) for k, v in f.attrs.items()}
            _check(attrs, p)
            data = {}

            def visit(name, obj):
                if isinstance(obj, h5py.Dataset):
                    data[name] = obj[()]
                else:
                    attrs.update({f"{name}/{k}": _plain(v) for k, v in obj.attrs.items()})

            f.visititems(visit)
    except InputError:
        raise
    except (OSError, KeyError, ValueError) as err:
        raise InputError(f"basis file {str(p)!r} cannot be read as a relbasis HDF5 file ({err})") from None
    data = {k: (np.array([x.decode() if isinstance(x, bytes) else x for x in v], dtype=object)
                if isinstance(v, np.ndarray) and v.dtype == object else v) for k, v in data.items()}
    return _assemble(attrs, data, p)


def _plain(v):
    if isinstance(v, bytes):
        return v.decode()
    if isinstance(v, np.generic):
        return v.item()
    return v


def _check(attrs: dict, p: Path) -> None:
    if attrs.get("format") != FORMAT:
        raise InputError(f"{str(p)!r} is not a relbasis basis file (format {attrs.get('format')!r}, expected {FORMAT!r})")
    if attrs.get("layout_version") != LAYOUT_VERSION:
        raise InputError(f"{str(p)!r} has layout version {attrs.get('layout_version')!r}; this relbasis reads "
                         f"version {LAYOUT_VERSION} only")


def _load_npz(p: Path) -> BasisFile:
    side = p.with_suffix(".json")
    if not side.is_file():
        raise InputError(f"{str(p)!r}: its metadata file {str(side)!r} is missing")
    try:
        meta = json.loads(side.read_text(encoding="utf-8"))
        attrs = meta["attrs"]
        _check(attrs, p)
        with np.load(p, allow_pickle=False) as z:
            data = {k.replace(".", "/"): z[k] for k in z.files}
    except InputError:
        raise
    except (OSError, KeyError, ValueError, json.JSONDecodeError) as err:
        raise InputError(f"{str(p)!r} cannot be read as a relbasis .npz basis ({err})") from None
    for k, v in meta["strings"].items():
        data[k] = np.array(v, dtype=object)
    return _assemble(attrs, data, p)


def used_c(attrs: dict) -> float:
    """The speed of light of the Hamiltonian the stored roots belong to.

    ``c_used`` since it was added; files written before it (layout version 1 all the same) were
    made with the physical c, which their ``c`` attribute (1/alpha) records.
    """
    if "c_used" in attrs:
        return float(attrs["c_used"])
    return float(attrs.get("c", constants.C))


def _assemble(attrs: dict, data: dict, p: Path) -> BasisFile:
    try:
        config = json.loads(attrs["config_json"])
        ion = json.loads(attrs["ion_json"])
        c = used_c(attrs)
        kappas = sorted({int(k.split("/")[0][len("kappa_"):]) for k in data if k.startswith("kappa_")},
                        key=lambda k: (abs(k), k > 0))
        blocks = {}
        for kappa in kappas:
            g = f"kappa_{kappa}"
            if attrs["family"] == "bspline":
                splines = BSplineBasis(data["basis/knots"], int(attrs["order"]))
                kinds = list(data[f"{g}/family_kinds"])
                fams = tuple(Family(str(kind), np.asarray(data[f"{g}/family_{i}_splines"]),
                                    float(attrs.get(f"{g}/balance_radius", 0.0)))
                             for i, kind in enumerate(kinds))
                basis = DiracBasis(splines, kappa, attrs["balance"], c, fams, attrs.get("wall") or "dirichlet")
            else:
                basis = GaussianDiracBasis.build(data["basis/exponents"], kappa, attrs["balance"], c)
            n = tuple(None if int(x) < 0 else int(x) for x in data[f"{g}/n"])
            blocks[kappa] = KappaBlock(
                kappa, np.asarray(data[f"{g}/energies"]), tuple(str(b) for b in data[f"{g}/branches"]),
                tuple(str(x) or None for x in data[f"{g}/labels"]), n,
                tuple(tuple(x for x in str(s).split(",") if x) for s in data[f"{g}/flags"]),
                np.asarray(data[f"{g}/coefficients"]), np.asarray(data[f"{g}/P"]), np.asarray(data[f"{g}/Q"]), basis,
                np.asarray(data[f"{g}/error_estimate"], dtype=float) if f"{g}/error_estimate" in data else None)
    except (KeyError, ValueError, TypeError) as err:
        raise InputError(f"{str(p)!r} is incomplete or damaged: missing or bad entry {err}") from None
    ints = {k[len("integrals/"):]: v for k, v in data.items() if k.startswith("integrals/")}
    return BasisFile(attrs, config, ion, np.asarray(data["grid/r"]), blocks, ints)

