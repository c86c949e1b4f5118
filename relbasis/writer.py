"""Export a solved basis for a many-body code (HDF5, or .npz + JSON): ``relbasis.export``.

The layout is ours and documented in docs/file-format.md ("relbasis-basis", layout version 1; a
solution with a Dirac–Hartree–Fock core adds the group "core" and is written as version 2).
Files are written under a unique temporary name in the target directory and renamed into place
(:mod:`relbasis.outputs`); an existing file is replaced only with ``force`` and only if relbasis
wrote it (its ``format`` attribute says so); modes follow the umask.  The file is read back by
:mod:`relbasis.reader` (``relbasis.load``).
"""

from __future__ import annotations

import json
import zipfile
from pathlib import Path

import h5py
import numpy as np
from tqdm import tqdm

from . import constants
from .version import __version__
from .errors import InputError, option
from .layout import BLOCKS, CORE_GROUP, CORE_LAYOUT_VERSION, FORMAT, LAYOUT_VERSION
from .outputs import atomic_group, atomic_write, checked_path
from .validate import items
from .reader import _plain


def check_target(path, force: bool) -> Path:
    """The output file, after making sure writing it destroys nothing unasked.

    An existing file is replaced only with ``force``, and only if relbasis wrote it (its
    ``format`` attribute, or for .npz the sidecar's, says so): a foreign file is never replaced.
    """
    p = Path(path)
    if p.is_dir():
        raise InputError(f"{option('path', '--out')} = {str(p)!r} is a directory: give a file name such as {str(p / 'basis.h5')!r}")
    if not p.parent.is_dir():
        what = "is not a directory" if p.parent.exists() else "does not exist"
        raise InputError(f"{option('path', '--out')} = {str(p)!r}: {str(p.parent)!r} {what}")
    if p.suffix not in (".h5", ".hdf5", ".npz"):
        raise InputError(f"{option('path', '--out')} = {str(p)!r}: give a .h5 (HDF5) or .npz (numpy + JSON) file name")
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

        if not h5py.is_hdf5(p):
            return False
        with h5py.File(p, "r") as f:
            return _plain(f.attrs.get("format")) == FORMAT
    except (OSError, ValueError, AttributeError, TypeError, RuntimeError):
        return False


def _payload(sol, grid: np.ndarray | None, blocks, slater=(), bar=None) -> dict:
    """Everything the file holds, as plain numbers, strings and arrays (``bar``: a tqdm bar,
    advanced once per symmetry and per integral block of a pair or symmetry)."""
    from . import integrals

    tick = bar.update if bar is not None else (lambda n=1: None)

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
        # Added within layout version 1 as well: the names of the parts of the Hamiltonian solved
        "hamiltonian_terms": json.dumps(list(getattr(sol, "terms", ("kinetic", "rest-mass", "nucleus")))),
        "energy_unit": "hartree", "length_unit": "bohr",
        # Added within layouts 1 and 2 (older files lack it): the quadrature's panels of Gauss–Legendre
        # points, which a reader needs to integrate on it panel by panel (Y^k functions)
        "quadrature_panel_points": int(sol.family_set.panel_points),
    }
    r_q, w_q = sol.grid
    out_grid = r_q if grid is None else np.asarray(grid, dtype=float)
    arrays = {"grid/r": out_grid, "quadrature/r": r_q, "quadrature/w": w_q}
    fset = sol.family_set
    attrs, data = fset.record()  # what rebuilds the functions (docs/file-format.md)
    top.update(attrs)
    arrays.update({f"basis/{k}": v for k, v in data.items()})
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
        attrs, data = fset.record_kappa(basis)
        top.update({f"{g}/{k}": v for k, v in attrs.items()})
        arrays.update({f"{g}/{k}": v for k, v in data.items()})
        tick()
    if sol.scf is not None:
        top["layout_version"] = CORE_LAYOUT_VERSION
        core_attrs, core_arrays = _core(sol, out_grid)
        top.update(core_attrs)
        arrays.update(core_arrays)
    if "dipole" in blocks:  # every E1-connected pair once, rows: roots of ka, columns: roots of kb
        for ka in sol.kappas:
            for kb in sol.kappas:
                if ka < kb and integrals.reduced_c(1, kb, ka) != 0:
                    d = integrals.dipole(sol, ka, kb)
                    arrays[f"integrals/dipole/{ka}_{kb}/radial_length"] = d["radial"]
                    arrays[f"integrals/dipole/{ka}_{kb}/radial_velocity"] = integrals.dipole_velocity(sol, ka, kb)
                    top[f"integrals/dipole/{ka}_{kb}/angular"] = d["angular"]
                    tick()
    if "hyperfine" in blocks:  # int P_a Q_b / r^2 dr within each symmetry
        for kappa in sol.kappas:
            arrays[f"integrals/hyperfine/{kappa}_{kappa}"] = integrals.hyperfine(sol, kappa, kappa)
            tick()
    if slater:
        rows, values = [], []
        for k, labels in slater:
            orbitals = [_orbital(sol, lab) for lab in labels]
            values.append(integrals.slater(sol, k, *orbitals))
            rows.append(f"{k}:{','.join(labels)}")
        arrays["integrals/slater/which"] = np.array(rows, dtype=object)
        arrays["integrals/slater/value"] = np.array(values)
    return {"attrs": top, "arrays": arrays}


EXCHANGE_RULE = ("(K u)(r) = sum_a sum_k Lambda(kappa, kappa_a, k) Y^k[P_a P + Q_a Q](r) / r (P_a, Q_a)(r), "
                 "Lambda = <kappa||C^k||kappa_a>^2 / (2j + 1), k with l + k + l_a even and "
                 "|j - j_a| <= k <= j + j_a, a over the core subshells (each full, 2j_a + 1 electrons)")
"""The exchange of the frozen core in words a reader can rebuild it from (relbasis.scf; the
group attribute ``core/exchange_rule``, docs/file-format.md)."""


def _core(sol, r: np.ndarray) -> tuple[dict, dict]:
    """The group "core" of a solution with a mean field: the subshells, energies, the orbitals and
    the direct potential J(r) on the file's grid, and per exported kappa the occupied roots.

    The orbitals are those of the mean field's own bases (``MeanField.orbital_values``), which are
    the occupied roots of the frozen-core Hamiltonian; the occupied root of subshell (K, n) is the
    (n - l - 1)-th bound root of kappa_K (``Solution.core_roots``, the rule of ``Solution.states``).
    """
    mf = sol.scf
    core = mf.core
    P, Q = mf.orbital_values(r)
    electrons = sol.config.electrons.to_dict()
    g = CORE_GROUP
    attrs = {f"{g}/{k}": v for k, v in {
        "total_energy": float(mf.total_energy), "one_body": float(mf.one_body), "direct": float(mf.direct),
        "exchange": float(mf.exchange), "iterations": int(mf.iterations), "converged": bool(mf.converged),
        "electrons_core": electrons["core"], "electrons_valence": electrons.get("valence", ""),
        "electron_count": int(mf.electron_count), "exchange_rule": EXCHANGE_RULE,
    }.items()}
    where = sol.core_roots()
    roots = [where.get((o.kappa, o.n), -1) for o in core]
    arrays = {
        f"{g}/labels": np.array([o.label for o in core], dtype=object),
        f"{g}/n": np.array([o.n for o in core], dtype=np.int64),
        f"{g}/kappa": np.array([o.kappa for o in core], dtype=np.int64),
        f"{g}/occupancy": np.array([o.occupancy for o in core], dtype=np.int64),
        f"{g}/energies": np.array([o.energy for o in core], dtype=float),
        f"{g}/root": np.array(roots, dtype=np.int64),
        f"{g}/P": np.asarray(P, dtype=float), f"{g}/Q": np.asarray(Q, dtype=float),
        f"{g}/direct_potential": np.asarray(mf.direct_potential(r), dtype=float),
    }
    held = {(k, i) for (k, _), i in where.items()}
    for kappa in sol.kappas:
        arrays[f"kappa_{kappa}/occupied"] = np.array([int((kappa, i) in held) for i in range(len(sol[kappa]))],
                                                     dtype=np.int64)
    return attrs, arrays


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


def _slater_entry(item) -> tuple[int, tuple[str, str, str, str]]:
    """One ``slater`` item of :func:`export`: (k, (a, b, c, d)) or the text 'K:A,B,C,D'."""
    if isinstance(item, str):
        return parse_slater(item)
    try:
        k, labels = item
        labels = tuple(labels)
    except (TypeError, ValueError):
        k, labels = None, ()
    if isinstance(k, bool) or not isinstance(k, (int, np.integer)) or k < 0 \
            or len(labels) != 4 or not all(isinstance(x, str) for x in labels):
        raise InputError(f"slater item {item!r}: give (k, (a, b, c, d)) with k >= 0 and four state labels, "
                         "e.g. (0, ('1s1/2', '1s1/2', '1s1/2', '1s1/2'))")
    return int(k), labels


def export(sol, path, *, force: bool = False, grid=None, blocks=(), slater=(), allow_large: bool = False,
           progress: bool | None = None) -> Path:
    """Write the solution to ``path`` (.h5/.hdf5: HDF5; .npz: numpy archive + .json sidecar).

    ``grid``: radii (bohr, increasing, positive, inside the cavity) at which P and Q are stored
    (default: the quadrature points); ``blocks``: integral blocks ("dipole", "hyperfine");
    ``slater``: (k, (a, b, c, d)) with state labels, each stored as R^k(ab, cd).  An export whose
    estimated size or time exceeds the limits of :mod:`relbasis.budget` is refused unless
    ``allow_large``.  ``progress``: a bar on stderr (None: when the export is estimated to take
    more than a couple of seconds and stderr is a terminal).  A solution with a Dirac–Hartree–Fock
    core (``sol.scf``) adds the group "core" (subshells, energies, orbitals and J(r) on the file's
    grid, the energy parts) and ``kappa_K/occupied``, and is written as layout version 2.

    Parameters
    ----------
    sol : Solution
        What :func:`relbasis.solve` returned.
    path : str or os.PathLike
        The file to write, .h5/.hdf5 or .npz (docs/file-format.md).
    force : bool
        Replace an existing file that relbasis wrote (a foreign file is never replaced).
    grid : array_like, optional
        Radii (bohr) for P and Q; None: the quadrature points.
    blocks : iterable of str
        Integral blocks: "dipole", "hyperfine", "slater".
    slater : iterable of (k, (a, b, c, d)) or of 'K:A,B,C,D'
        The R^k(ab, cd) to store, with state labels such as "1s1/2".
    allow_large : bool
        Export even beyond the work limits.
    progress : bool or None
        A progress bar on stderr: always, never, or (None) for long exports on a terminal.

    Returns
    -------
    pathlib.Path
        The file written.
    """
    from . import budget
    from .solver import Solution

    if not isinstance(sol, Solution):
        raise InputError(f"relbasis.export: give the Solution of relbasis.solve(...), not {type(sol).__name__}")
    path = checked_path(path, "relbasis.export: the output file")
    blocks = items("blocks", blocks)
    slater = tuple(_slater_entry(s) for s in items("slater", slater))
    bad = [b for b in blocks if b not in BLOCKS]
    if bad:
        raise InputError(f"--with {bad[0]!r}: valid integral blocks are {', '.join(BLOCKS)}")
    if "slater" in blocks and not slater:
        raise InputError("--with slater: say which integrals with --slater K:A,B,C,D (e.g. 0:1s1/2,1s1/2,1s1/2,1s1/2)")
    target = check_target(path, force)
    if grid is not None:
        grid = _checked_grid(grid, sol)
    est = budget.export_estimate(sol.config, None if grid is None else grid.size, blocks)
    budget.check(est, "the export" if grid is None else f"the export on {grid.size} radii", allow_large,
                 "allow_large=True")
    own = budget.Estimate(est.memory, est.seconds - budget.solve_estimate(sol.config).seconds, est.symmetries, est.rows)
    steps = len(sol.kappas) * (1 + ("hyperfine" in blocks)) + ("dipole" in blocks) * sum(
        1 for a in sol.kappas for b in sol.kappas if a < b and _e1(a, b))
    with tqdm(total=steps, desc="export", unit="block", disable=not budget.show_progress(own, progress),
              leave=False) as bar:
        data = _payload(sol, grid, blocks, slater, bar)
    if target.suffix in (".h5", ".hdf5"):
        atomic_write(target, lambda tmp: _write_h5(tmp, data), "write the basis file")
    else:  # .npz and its sidecar: both staged, then renamed, so that they always belong together
        meta = {"attrs": data["attrs"], "strings": {k: list(v) for k, v in data["arrays"].items() if v.dtype == object}}
        atomic_group([(target, lambda tmp: _write_npz(tmp, data)),
                      (target.with_suffix(".json"),
                       lambda tmp: Path(tmp).write_text(json.dumps(meta, indent=1), encoding="utf-8"))],
                     "write the basis file")
    return target


def _e1(ka: int, kb: int) -> bool:
    from .integrals import reduced_c

    return reduced_c(1, kb, ka) != 0


def _checked_grid(grid, sol) -> np.ndarray:
    """The output radii as a 1-D float array, or a one-line error naming what is wrong."""
    try:
        r = np.asarray(grid, dtype=float)
    except (TypeError, ValueError):
        raise InputError("grid: give the radii (bohr) as a sequence of numbers") from None
    if r.ndim != 1 or r.size < 2:
        raise InputError(f"grid: give at least two radii in a flat sequence (got shape {r.shape})")
    if not np.all(np.isfinite(r)) or r[0] <= 0 or np.any(np.diff(r) <= 0):
        raise InputError("grid: the radii must be finite, positive and strictly increasing (bohr)")
    wall = sol.family_set.wall_radius
    if wall is not None and r[-1] > wall:
        raise InputError(f"grid: the last radius {r[-1]:g} lies beyond the cavity radius r_max = {wall:g} bohr")
    return r


def _write_h5(tmp: str, data: dict) -> None:

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
