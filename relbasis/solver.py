"""One call from a config to the sorted spectra of every requested symmetry.

``solve(config)`` resolves the config, builds the nucleus and the family's per-solve set once
(:meth:`relbasis.families.BasisFamily.build_set`: the B-spline set and its quadrature, or the
Gaussian exponents and their grid), then runs one pipeline per kappa for every family
(:func:`solve_symmetry`): the basis of kappa, H = T + the terms of the Hamiltonian
(:mod:`relbasis.hamiltonian`: the nucleus, and any term the caller adds), every root
(:mod:`relbasis.eigen`), refinement of the roots in the bound-state window, and the sorting
(:mod:`relbasis.spectrum`).  Negative kappas are done first so that the duplicate-level check
of kappa > 0 can look at its partner -kappa.  The error estimate of every level
(:mod:`relbasis.confidence`) compares it with the same level of a reduced basis, whose matrices
are built first and whose levels are found from the full basis's by inverse iteration
(:class:`ReducedBasis`; the reduced basis is solved whole only where a check fails).
"""

from __future__ import annotations

import os
import sys
from concurrent.futures import ThreadPoolExecutor
from dataclasses import asdict, dataclass, field, replace

import numpy as np

from . import constants
from .version import __version__
from .analytic import dirac_coulomb_energy
from .bspline import BSplineBasis, QuadratureTable
from .config import BasisSpec, Config, IonSpec, SolveSpec, from_dict, read_toml, resolve
from .constants import C
from .dirac import FERMI_SURFACE_KNOTS, DiracBasis, build_splines  # noqa: F401  (public here as before)
from .dirac_gaussian import GaussianDiracBasis
from .eigen import Eigensystem, refine, roots_near, shift_invert, solve as eigensolve
from .errors import InputError, MissingLevelError, option
from .finite import check_matrices, check_roots
from . import budget
from .nucleus import Nucleus
from .confidence import reduced_config
from .families import family_of
from . import hamiltonian
from .precision import EDGE_MARGIN, POLISH_SHARE, isolated, lost, near_edge, precision_flags, settle_edge, with_flags
from .spectrum import (BALANCE_THRESHOLD, Spectrum, balance_residual, can_dive, classify, count_nodes,
                       duplicate_roots, examined, gap)
from .vocabulary import orbital_l


@dataclass(frozen=True)
class Solution:
    """Spectra of all requested symmetries of one ion in one basis."""

    config: Config  # resolved: every default filled in
    nucleus: Nucleus
    splines: BSplineBasis | None = field(repr=False)  # None for the Gaussian family
    bases: dict[int, DiracBasis | GaussianDiracBasis] = field(repr=False)
    spectra: dict[int, Spectrum] = field(repr=False)
    dropped: dict[int, int] = field(default_factory=dict)  # functions removed by canonical orthogonalisation
    condition: dict[int, float] = field(default_factory=dict)  # of the scaled overlap, where computed
    table: QuadratureTable | None = field(default=None, repr=False)  # B-splines: the Gauss–Legendre table
    gauss_grid: tuple | None = field(default=None, repr=False)  # Gaussians: (r, w)
    c: float = C  # speed of light used (1/alpha unless a nonrelativistic-limit check asked otherwise)
    sampled: dict = field(default_factory=dict, repr=False)  # kappa -> the basis functions on the quadrature
    terms: tuple[str, ...] = ("kinetic", "rest-mass", "nucleus")  # names of the Hamiltonian's parts
    family_set: object = field(default=None, repr=False)  # the family's per-solve set (relbasis.families)
    scf: object = field(default=None, repr=False)  # the mean field of a core (relbasis.scf.MeanField), else None

    @property
    def grid(self) -> tuple[np.ndarray, np.ndarray]:
        """Radial quadrature points and weights (r, w) on which the functions are examined."""
        return self.family_set.grid

    def sample(self, kappa: int, roots=None, channels="PQDM") -> tuple[np.ndarray, ...]:
        """Components of the chosen roots of kappa on :attr:`grid`: names "P", "Q", "DP" (D+P),
        "DQ" (D-Q), or a string of the letters P, Q, D, M (relbasis.sampling)."""
        spec = self[kappa]
        vec = spec.vectors if roots is None else spec.vectors[:, roots]
        return self.functions(kappa).evaluate(vec, channels)

    def functions(self, kappa: int):
        """The basis functions of kappa sampled on the quadrature (relbasis.sampling)."""
        if kappa not in self.sampled:  # a Solution made by hand, without its sampled functions
            self.sampled[kappa] = self.family_set.sample(self.bases[kappa])
        return self.sampled[kappa]

    @property
    def kappas(self) -> tuple[int, ...]:
        return self.config.solve.kappas

    # A Solution reads like a mapping kappa -> Spectrum (as a loaded BasisFile reads like one
    # kappa -> KappaBlock): ``sol[kappa]`` is the Spectrum of that symmetry, ``for kappa in sol``
    # runs over the solved kappas in config order, ``len(sol)`` counts them.
    def __getitem__(self, kappa: int) -> Spectrum:
        """The :class:`Spectrum` of symmetry ``kappa`` (a key, not a position)."""
        if kappa not in self.spectra:
            raise MissingLevelError(f"kappa = {kappa!r} was not solved; solved: {list(self.kappas)}")
        return self.spectra[kappa]

    def __iter__(self):
        return iter(self.kappas)

    def __len__(self) -> int:
        return len(self.kappas)

    def __contains__(self, kappa) -> bool:
        return kappa in self.spectra

    def core_roots(self) -> dict[tuple[int, int], int]:
        """{(kappa, n): root index} of the core orbitals in the frozen-core spectra (empty for a
        bare nucleus): subshell (kappa, n) is the (n - l - 1)-th bound root of kappa in energy
        order, as the mean field takes its occupied orbitals by count, whatever label the node
        count gives it (a basis too coarse to count nodes flags the root nodes-disagree)."""
        if self.scf is None:
            return {}
        out = {}
        for o in self.scf.core:
            spec = self.spectra.get(o.kappa)
            if spec is None:
                continue
            bound = [i for i, b in enumerate(spec.branches) if b == "bound"]
            place = o.n - orbital_l(o.kappa) - 1
            if place < len(bound):
                out[(o.kappa, o.n)] = bound[place]
        return out

    def exact(self, kappa: int, n: int) -> float | None:
        """Exact Dirac–Coulomb binding energy for a point nucleus (one electron), else None."""
        if self.nucleus.model != "point" or self.nucleus.Z == 0 or self.scf is not None:
            return None
        return dirac_coulomb_energy(self.nucleus.Z, n, kappa, self.c)

    def states(self) -> list[dict]:
        """Every root once, in symmetry order then ascending energy (the JSON ``states`` list)."""
        out = []
        occupied = {(k, root) for (k, _), root in self.core_roots().items()}
        for kappa in self.kappas:
            spec = self.spectra[kappa]
            for i, eps in enumerate(spec.energies):
                rec = {
                    "kappa": kappa,
                    "n": spec.n[i],
                    "label": spec.labels[i],
                    "branch": spec.branches[i],
                    "energy_hartree": float(eps),
                    "flags": list(spec.flags[i]),
                    "error_estimate": _estimate(spec, i),
                }
                if (kappa, i) in occupied:
                    rec["occupied"] = True
                if spec.n[i] is not None and self.exact(kappa, spec.n[i]) is not None:
                    ex = self.exact(kappa, spec.n[i])
                    rec["exact_hartree"] = ex
                    rec["relative_error"] = abs(eps / ex - 1.0)
                out.append(rec)
        return out

    def to_dict(self) -> dict:
        """The JSON document (docs/file-format.md describes the export; README the states contract)."""
        basis = self.config.to_dict()["basis"]
        basis["functions"] = {str(k): self.bases[k].size for k in self.kappas}
        basis["dropped"] = {str(k): self.dropped.get(k, 0) for k in self.kappas}
        doc = {
            "relbasis": __version__,
            "constants": constants.as_dict() | {"c_used": self.c},
            "ion": self.nucleus.to_dict(),
            "basis": basis,
            "hamiltonian": list(self.terms),  # the parts of H that were solved, by name
        }
        if self.scf is not None:
            doc["electrons"] = self.config.electrons.to_dict()
            doc["scf"] = self.scf.to_dict()
        doc["states"] = self.states()
        return doc


def _estimate(spec: Spectrum, i: int) -> float | None:
    """The JSON ``error_estimate`` of root i: relative, or None where none is made."""
    if spec.error_estimate is None or not np.isfinite(spec.error_estimate[i]):
        return None
    return float(spec.error_estimate[i])


def as_config(config=None, **overrides) -> Config:
    """A :class:`Config` from a Config, a mapping, a TOML path or keyword overrides.

    Overrides are section-qualified: ``solve(None, ion={"Z": 92}, basis={"size": 60})``; a
    section may also be given as its spec object, ``ion=IonSpec(92)`` (the keys it sets, i.e.
    the fields that are not None).
    """
    if isinstance(config, Config):
        data = config.to_dict()
    elif config is None:
        data = {}
    elif isinstance(config, dict):
        data = {k: dict(v) if isinstance(v, dict) else v for k, v in config.items()}
    else:  # the file is checked on its own, then merged as written: an override (a family,
        data = read_toml(config)  # say) then meets no default of the file's own family
        from_dict(data)
    for section, values in overrides.items():
        if isinstance(values, (IonSpec, BasisSpec, SolveSpec)):  # a spec object: its keys that are set
            values = {k: v for k, v in asdict(values).items() if v is not None}
        if not isinstance(values, dict):
            raise InputError(f"override {section}={values!r}: give a mapping of keys, e.g. {section}={{...}}")
        data.setdefault(section, {})
        if not isinstance(data[section], dict):
            raise InputError(f"[{section}] must be a table of keys")
        data[section].update(values)
    return from_dict(data)


def solve_symmetry(fset, kappa: int, terms, partner: Spectrum | None = None,
                   reference: dict[int, float] | None = None, levels_only: bool = False):
    """Basis, H from its terms, roots, refinement and sorting of one symmetry, in any family.

    ``fset`` is the family's per-solve set (:meth:`relbasis.families.BasisFamily.build_set`),
    ``terms`` the potential terms of the Hamiltonian (:mod:`relbasis.hamiltonian`).  Returns
    (basis, spectrum, eigensystem, sampled functions).

    ``levels_only`` (the reduced basis of the error estimate, whose levels alone are kept):
    the same energies, branches, n and flags, without the work only the vectors need: the
    unrefined vectors are not re-orthogonalised against the refined ones, the roots outside
    the examined window keep eigh's sign, and the dive window is not evaluated where no level
    can dive (-r V(r) <= c everywhere, :func:`relbasis.spectrum.classify`).  Its vectors are
    therefore not a clean S-orthonormal set.
    """
    basis = fset.build(kappa)
    sampled = fset.sample(basis)
    H, S = hamiltonian.assemble(basis, sampled, terms)
    cause = fset.cause()
    check_matrices(kappa, H, S, cause)
    r, w = sampled.r, sampled.w
    system, moved = final_roots(H, S, eigensolve(H, S, fset.threshold), fset.c,
                           lambda v: sampled.evaluate(v, ("P", "Q")), w, fset.band_order(basis),
                           reorthogonalise=not levels_only)
    check_roots(kappa, system.energies, system.vectors, system.error, cause)
    V = hamiltonian.local_potential(terms, r)
    window = examined(system.energies, fset.c)
    dive = can_dive(r, V, fset.c)
    if levels_only:
        P_all = None
        if not dive:
            window = gap(system.energies, fset.c)
    else:
        P_all = fset.node_matrix(basis, sampled) @ system.vectors
    if dive or levels_only:
        P, Q, DP = sampled.evaluate(system.vectors[:, window], ("P", "Q", "DP"))
    else:  # the roots below the gap need only P, for their sign (no level can dive)
        P, = sampled.evaluate(system.vectors[:, window], ("P",))
        Q, DP = sampled.evaluate(system.vectors[:, gap(system.energies, fset.c)], ("Q", "DP"))
    external = duplicate_roots(kappa, system.energies, partner)
    spec = classify(kappa, system.energies, system.vectors, P_all, P, Q, DP, w, V, fset.c, external,
                    r=r, wall=fset.wall_radius, reference=reference, window=window)
    return basis, with_flags(spec, precision_flags(system, moved)), system, sampled


def final_roots(H, S, system: Eigensystem, c: float, sample, w, order=None,
           reorthogonalise: bool = True) -> tuple[Eigensystem, np.ndarray]:
    """From eigh's roots to the final ones (:mod:`relbasis.eigen`, :mod:`relbasis.precision`):
    shift and invert where a root above the edge has lost digits and is too close to others for
    inverse iteration (at large c), the negative-continuum edge, inverse iteration of the
    window and of the roots that have lost digits.  ``sample(vectors)`` gives
    (P, Q) on the grid of weights w.  Returns the system and the mask of the roots moved
    below the edge -2c^2.  ``reorthogonalise``: see :func:`relbasis.eigen.refine`.
    """
    floor = -2 * c * c
    above = system.energies > floor + EDGE_MARGIN * system.error
    if np.any(lost(system) & above & ~isolated(system)):
        system = shift_invert(system, H, S, floor)  # eigh can even push bound states above 0
    edge = near_edge(system, floor)
    moved = np.zeros(system.energies.size, dtype=bool)
    if edge.size:
        P, Q = sample(system.vectors[:, edge])
        small = (w @ Q**2) / np.maximum(w @ (P**2 + Q**2), np.finfo(float).tiny)
        system, moved = settle_edge(system, floor, small, edge)
    # never polish a root eigh cannot place apart from its neighbours (at the edge): inverse
    # iteration could turn it into one of them
    polish = gap(system.energies, c) | (lost(system, POLISH_SHARE) & isolated(system))
    polish[near_edge(system, floor)] = False
    system = refine(system, H, S, polish, order, reorthogonalise=reorthogonalise)
    if moved.any():  # refine re-sorts: find the moved roots again (they sit alone just below the edge)
        moved = system.energies == np.nextafter(floor, -np.inf)
    return system, moved


C_MAX = 1e10
"""Largest speed of light of a solve: the bound levels are measured right to 8e-14 up to 1e10
(docs/nonrelativistic.md); at 1e12 they lose digits and at 1e14 none is found."""


def solve(config=None, *, c: float | None = None, allow_large: bool = False, progress: bool | None = None,
          terms=(), threads: int | None = 1, **overrides) -> Solution:
    """Spectra of the requested symmetries (see :func:`as_config` for the ways to pass a config).

    ``c`` replaces the speed of light (atomic units) for checks of the nonrelativistic limit
    (c -> infinity; supported 1/alpha <= c <= 1e6, bound levels measured right to 8e-14 up to
    1e10, docs/nonrelativistic.md; valid 1 < c <= C_MAX); every physical result uses the default
    c = 1/alpha.  The defaults (:func:`relbasis.config.resolve`) and the export follow it.

    Before any matrix is built the work is estimated (:mod:`relbasis.budget`); beyond the limits
    of docs/performance.md the solve is refused with the estimate unless ``allow_large``.
    ``progress``: a tqdm bar on stderr per symmetry (True), none (False), or (None) when the
    work is estimated above about 2 s and stderr is a terminal.

    Every labelled level carries an error estimate (:mod:`relbasis.confidence`), made by
    comparing it with the same level of a reduced basis (:class:`ReducedBasis`).

    Parameters
    ----------
    config : Config, mapping, str or os.PathLike, optional
        The config (docs/config.md): a :class:`~relbasis.config.Config`, a mapping shaped like
        the TOML file, or the path of a TOML file; None: only the overrides.
    c : float, optional
        Speed of light (atomic units), 1 < c <= C_MAX; None: 1/alpha.
    allow_large : bool
        Solve even beyond the work limits of docs/performance.md.
    progress : bool or None
        A progress bar on stderr: always, never, or (None) for long solves on a terminal.
    terms : sequence of LocalTerm or NonlocalTerm
        Potential terms added to the nucleus in H (:mod:`relbasis.hamiltonian`), each with a
        name the Solution, its JSON document and the exported file record; the reduced basis of
        the error estimate gets them too.
    threads : int or None
        Threads solving the symmetries side by side (groups of equal |kappa|); the result is
        the same to the bit with any number.  1 (default): one symmetry after another.  None:
        one per core beside the BLAS threads (read from OPENBLAS_NUM_THREADS, OMP_NUM_THREADS,
        MKL_NUM_THREADS, which relbasis sets to 1 unless they are set), at most one per |kappa|,
        and one above PARALLEL_ROWS rows.  Measured on the project's 2-core machine (docs/performance.md):
        at most 7 % faster when it is idle, up to 2x slower when it is busy, since eigh itself
        does not run faster on two cores at these sizes.
    **overrides
        Section-qualified keys that replace those of ``config``: ``ion={"Z": 92}``, or spec
        objects, ``ion=IonSpec(92)``, ``basis=BasisSpec(size=60)`` (their keys that are not None).

    Returns
    -------
    Solution
        A mapping kappa -> :class:`~relbasis.spectrum.Spectrum` (``sol[kappa]``, ``for kappa in
        sol``, ``len(sol)``), with the resolved config, the nucleus and the bases.

    Raises
    ------
    InputError
        One line naming the bad key or value and what would be valid.
    """
    terms = tuple(terms)
    bad = [t for t in terms if not isinstance(t, (hamiltonian.LocalTerm, hamiltonian.NonlocalTerm))]
    if bad:
        raise InputError(f"terms: {bad[0]!r} is not a Hamiltonian term (relbasis.hamiltonian.LocalTerm or NonlocalTerm)")
    taken = {"kinetic", "rest-mass", "nucleus", "direct", "exchange"}
    for t in terms:
        if t.name in taken or not t.name:
            raise InputError(f"terms: the name {t.name!r} is taken or empty; give each term a name of its own")
        taken.add(t.name)
    if c is not None and not (isinstance(c, (int, float)) and not isinstance(c, bool) and np.isfinite(c)
                              and 1.0 < c <= C_MAX):
        raise InputError(f"c = {c!r}: the speed of light must be a number with 1 < c <= {C_MAX:.0e} "
                         "(default 1/alpha; docs/nonrelativistic.md)")
    c = C if c is None else float(c)
    _checked_threads(threads)
    cfg, nucleus = resolve(as_config(config, **overrides), c)
    small = reduced_config(cfg)
    estimate = budget.check(budget.solve_estimate(cfg), f"basis.size = {cfg.basis.size}",
                            allow_large, option("allow_large=True", "--allow-large"))
    workers = _workers(threads, estimate.rows, _groups(cfg))
    bar = _progress_bar(estimate, progress, len(cfg.solve.kappas) * (2 if small is not None else 1))
    mean_field = None
    if cfg.electrons is not None:
        from . import scf  # lazy (upward): the mean field diagonalises with this module's root pipeline

        mean_field = scf.run(cfg, nucleus, c, progress=progress)
        terms = (*mean_field.terms(), *terms)
    try:
        sol = _solve_resolved(cfg, small, nucleus, c, bar, terms, workers)
        return sol if mean_field is None else replace(sol, scf=mean_field)
    finally:
        if bar is not None:
            bar.close()


PARALLEL_ROWS = 1000
"""Largest matrix (rows) whose symmetries are solved in parallel threads by default: each
thread holds the working set of one symmetry (about 12 n^2 doubles, relbasis.budget), 100 MB at
1000 rows; beyond, the symmetries run one after another and the memory estimate holds as stated."""


def _cores() -> int:
    try:
        return len(os.sched_getaffinity(0))
    except (AttributeError, OSError):
        return os.cpu_count() or 1


def _blas_threads() -> int:
    """Threads of the BLAS as its environment sets them (relbasis sets 1 unless the user chose;
    it holds when relbasis is imported before numpy)."""
    for var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
        try:
            return max(1, int(os.environ.get(var, "")))
        except ValueError:
            continue
    return _cores()  # not set: the BLAS may take every core


def _checked_threads(threads):
    """``threads`` as given, if it is None or a positive integer; else a one-line InputError."""
    if threads is not None and (isinstance(threads, bool) or not isinstance(threads, int) or threads < 1):
        raise InputError(f"threads = {threads!r}: give a positive number of threads (1: one symmetry after another; "
                         "None: as many as the cores allow)")
    return threads


def _workers(threads, rows: int, groups: int) -> int:
    """Threads of a solve: ``threads`` if given, else (None) as many as the cores allow beside
    the BLAS threads, at most one per group of symmetries, and one for matrices above
    PARALLEL_ROWS rows."""
    if threads is not None:
        return max(1, min(_checked_threads(threads), groups))
    if rows > PARALLEL_ROWS:
        return 1
    blas = _blas_threads()
    return max(1, min(groups, _cores() // blas))


def _groups(cfg: Config) -> int:
    return len({abs(k) for k in cfg.solve.kappas})


def _progress_bar(estimate, progress: bool | None, total: int):
    """A tqdm bar on stderr over the symmetry solves, or None (budget.show_progress decides)."""
    if not budget.show_progress(estimate, progress):
        return None
    from tqdm import tqdm

    # one update per symmetry, seconds apart: print every one (mininterval=0)
    return tqdm(total=total, desc="solving", unit="symmetry", file=sys.stderr, leave=False, mininterval=0)


def _starting(bar, label: str):
    """Show on the progress bar (if any) which symmetry is being solved."""
    if bar is not None:
        bar.set_postfix_str(label)


def _finished(bar):
    """Advance the progress bar (if any) past the symmetry just solved."""
    if bar is not None:
        bar.update(1)


class ReducedBasis:
    """The reduced basis of one symmetry for the error estimate (:mod:`relbasis.confidence`):
    its matrices, built before the full basis is solved, and its levels near those of the full
    basis (:meth:`levels`).

    Only the labelled levels of the reduced basis are wanted, and they lie within their error
    of the full basis's: each is found by inverse iteration from the full basis's level
    (:func:`relbasis.eigen.roots_near`, one banded factorisation per level), without the
    eigendecomposition of the whole reduced basis.  The root found is checked to be the level
    the sorting of a whole solve would give that n: inside the gap, with n - l - 1 nodes of P,
    a balance residual below the threshold, and not a duplicate of a level of the partner
    symmetry.  Where any check fails, or where the family orthogonalises or is not banded, the
    caller solves the reduced basis whole instead, as before.
    """

    @staticmethod
    def applies(rough_set) -> bool:
        """True for a family set whose reduced levels can be found this way: no canonical
        orthogonalisation asked for (B-splines without an overlap threshold)."""
        return rough_set.threshold is None

    def __init__(self, rough_set, kappa: int, terms):
        self.set, self.kappa, self.terms = rough_set, kappa, terms
        self.basis = rough_set.build(kappa)
        self.sampled = rough_set.sample(self.basis)
        self.H, self.S = hamiltonian.assemble(self.basis, self.sampled, terms)
        check_matrices(kappa, self.H, self.S, rough_set.cause())

    def levels(self, wanted: dict[int, float], partner: Spectrum | None) -> dict[int, float] | None:
        """{n: level} of the reduced basis for the full basis's levels ``wanted`` ({n: level}),
        or None where a check fails (``partner``: the full spectrum of -kappa, if solved)."""
        if not wanted:
            return {}
        order = self.set.band_order(self.basis)
        if self.set.threshold is not None or order is None:
            return None
        ns = np.array(list(wanted), dtype=int)
        found = roots_near(self.H, self.S, [wanted[n] for n in ns], order)
        if found is None:
            return None
        eps, vectors, settled = found
        c = self.set.c
        if not (settled.all() and np.all((eps > -2 * c * c) & (eps < 0))):
            return None
        sampled = self.sampled
        P, Q, DP = sampled.evaluate(vectors, ("P", "Q", "DP"))
        V = hamiltonian.local_potential(self.terms, sampled.r)
        if (np.any(count_nodes(P, sampled.w) + orbital_l(self.kappa) + 1 != ns)
                or not np.all(balance_residual(Q, DP, eps, V, sampled.w, c) <= BALANCE_THRESHOLD)
                or duplicate_roots(self.kappa, eps, partner)):
            return None
        return {int(n): float(e) for n, e in zip(ns, eps)}


def _solve_resolved(cfg: Config, small: Config | None, nucleus: Nucleus, c: float, bar=None, extra=(),
                    workers: int = 1) -> Solution:
    """The spectra of a resolved config, with the reduced basis ``small`` (None: none can be
    made) for the error estimates; ``extra``: potential terms added to the nucleus.

    The symmetries are solved in groups of equal |kappa|, -kappa before +kappa (the
    duplicate-level check of kappa > 0 looks at -kappa), each group reduced basis first (its
    matrices, :class:`ReducedBasis`): the full basis of kappa needs only the reduced levels of
    the same kappa, which the sorting of the full basis asks for once it has labelled its own
    levels (:func:`relbasis.spectrum.classify`).  Where the levels so found fail a check the
    reduced basis of kappa is solved whole (and, for kappa > 0, that of -kappa, for its
    duplicate-level check), as every reduced basis was before.  With ``workers`` > 1
    the groups run in a pool of threads (numpy and LAPACK release the interpreter lock); every
    symmetry is computed by the same operations in the same order as by one thread, so the
    result is the same to the bit.  An error is raised as one thread would have met it: the
    first in the order reduced basis then full basis, each in kappa order.
    """
    rough_set = family_of(small).build_set(small, nucleus, c) if small is not None else None
    fset = family_of(cfg).build_set(cfg, nucleus, c)
    terms = (hamiltonian.nucleus_term(nucleus), *extra)
    order = _kappa_order(cfg)
    stage = {("reduced", k): i for i, k in enumerate(order)} | {("full", k): len(order) + i for i, k in enumerate(order)}
    groups = [[k for k in order if abs(k) == a] for a in dict.fromkeys(abs(k) for k in order)]

    def run(group):
        done, failed = {}, None
        try:
            reduced, whole = {}, {}

            def whole_levels(kappa):
                """The reduced basis solved whole (eigh, refinement, sorting): the levels it labels."""
                if kappa not in whole:
                    partner = whole_levels(-kappa)[1] if kappa > 0 and -kappa in group else None
                    spec = solve_symmetry(rough_set, kappa, terms, partner, None, levels_only=True)[1]
                    whole[kappa] = ({n: float(e) for n, e, b in zip(spec.n, spec.energies, spec.branches)
                                     if n is not None and b == "bound"}, spec)
                return whole[kappa]

            def reference(kappa, wanted):
                nonlocal failed
                failed, was = ("reduced", kappa), failed
                levels = reduced[kappa].levels(wanted, spectra.get(-kappa)) if kappa in reduced else None
                if levels is None:  # a check failed: the reduced basis solved whole decides
                    levels = whole_levels(kappa)[0]
                failed = was
                return levels

            for kappa in group:
                failed = ("reduced", kappa)
                if rough_set is None:  # no reduced basis: no level can be confirmed (all unconverged)
                    continue
                _starting(bar, f"reduced basis, kappa {kappa:+d}")
                if ReducedBasis.applies(rough_set):
                    reduced[kappa] = ReducedBasis(rough_set, kappa, terms)
                else:  # solved whole now, as before (Gaussians, a B-spline overlap threshold)
                    whole_levels(kappa)
                _finished(bar)
            spectra = {}
            for kappa in group:
                failed = ("full", kappa)
                _starting(bar, f"kappa {kappa:+d}")
                ref = {} if rough_set is None else (lambda wanted, kappa=kappa: reference(kappa, wanted))
                done[kappa] = solve_symmetry(fset, kappa, terms, spectra.get(-kappa), ref)
                spectra[kappa] = done[kappa][1]
                _finished(bar)
            return done, None
        except Exception as err:  # noqa: BLE001  (re-raised below, in the order one thread meets it)
            return done, (stage[failed], err)

    if workers > 1 and len(groups) > 1:
        with ThreadPoolExecutor(max_workers=workers) as pool:
            results = list(pool.map(run, groups))
    else:
        results = [run(g) for g in groups]
    errors = [e for _, e in results if e is not None]
    if errors:
        raise min(errors, key=lambda e: e[0])[1]
    parts = {k: v for done, _ in results for k, v in done.items()}
    bases, spectra, systems, sampled = ({k: parts[k][i] for k in order} for i in range(4))
    return Solution(cfg, nucleus, getattr(fset, "splines", None), bases, spectra,
                    {k: s.dropped for k, s in systems.items()}, {k: s.condition for k, s in systems.items()},
                    getattr(fset, "table", None), None if hasattr(fset, "table") else fset.grid, c,
                    sampled, hamiltonian.names(terms), fset)


def _for(reference: dict | None, kappa: int) -> dict[int, float] | None:
    return None if reference is None else reference.get(kappa, {})


def _kappa_order(cfg: Config):
    """Negative kappas first: the duplicate-level check of kappa > 0 looks at -kappa."""
    return sorted(cfg.solve.kappas, key=lambda k: (k > 0, abs(k)))
