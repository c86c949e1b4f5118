"""Is the basis complete enough for a second-order sum?  The energy again in changed bases.

A second-order energy (relbasis.perturbation) converges in three directions: the partial waves
(the tail beyond l_max, estimated by the extrapolation with its uncertainty), the radial
completeness at fixed cavity (the number of functions), and the cavity itself (a sum that needs
diffuse intermediate states feels the wall).  :func:`completeness` computes the energy in the
user's basis and in two changed ones: with 1.5 times the functions, and with those and a 1.5
times wider reach as well (B-splines: r_max; Gaussians: the smallest exponent divided by 1.5^2),
so that the reach is judged at the finer resolution and not confused with it (a wider cavity at
a fixed number of functions also spreads them thinner).  It compares the extrapolated energies.  Each change is an estimate of the error in its direction (common
practice: a geometric refinement whose change bounds the remaining error when the convergence
is at least linear in the refinement); the verdict compares their root-sum-square with the
target and the advice names the setting to change.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

from .config import resolve
from .constants import C
from .families import family_of
from .perturbation import DEFAULT_L_MAX, SecondOrder, second_order
from .solver import as_config
from .validate import real

REFINEMENT = 1.5
"""Factor of the changed bases: 1.5 times the functions, 1.5 times the reach."""

DEFAULT_TARGET = 1e-6
"""Absolute accuracy (hartree) wanted of the second-order energy when none is given."""


@dataclass(frozen=True)
class Variation:
    """The energy in one changed basis."""

    name: str  # "size" or "reach"
    setting: str  # e.g. "basis.size = 150"
    result: SecondOrder
    change: float  # extrapolated energy minus that of the user's basis (hartree)


@dataclass(frozen=True)
class Completeness:
    """The verdict on a basis for a second-order sum, with the numbers behind it."""

    result: SecondOrder  # in the user's basis
    variations: tuple[Variation, ...]
    target: float
    error: float  # root-sum-square of the partial-wave uncertainty and the changes
    verdict: str  # "complete" (error <= target) or "incomplete"
    advice: tuple[str, ...]

    def to_dict(self) -> dict:
        return {
            "target_hartree": self.target,
            "estimated_error_hartree": self.error,
            "verdict": self.verdict,
            "advice": list(self.advice),
            "partial_waves": {"l_max": self.result.l_max, "uncertainty_hartree": self.result.uncertainty},
            "variations": [{"name": v.name, "setting": v.setting, "extrapolated_hartree": v.result.extrapolated,
                            "change_hartree": v.change} for v in self.variations],
        }


def _changed(cfg, name: str):
    """The config with one setting refined, and the words for it; None where the basis is given
    explicitly (knots or exponents listed) and cannot be refined by one number."""
    b = cfg.basis
    family = family_of(b)
    if name == "size":
        if not family.resizable(b):
            return None
        size = int(math.ceil(REFINEMENT * b.size))
        return replace(cfg, basis=replace(b, size=size)), f"basis.size = {size}"
    widened = family.widened(b, REFINEMENT)
    return None if widened is None else (replace(cfg, basis=widened[0]), widened[1])


def completeness(config=None, l_max: int = DEFAULT_L_MAX, *, target: float = DEFAULT_TARGET,
                 negative_branch: bool = False, c: float | None = None, progress: bool | None = None,
                 allow_large: bool = False) -> Completeness:
    """The second-order energy of ``config`` in its basis and in two refined ones, and a verdict.

    Parameters
    ----------
    config : path, mapping, Config or spec
        As for :func:`relbasis.second_order` (a config, not a Solution: the check solves again).
    l_max : int
        Largest l of the intermediate states.
    target : float
        Absolute accuracy wanted (hartree, default 1e-6).
    negative_branch, c, progress, allow_large
        As for :func:`relbasis.second_order` and :func:`relbasis.solve`.

    Returns
    -------
    Completeness
        ``verdict`` "complete" when the estimated error (root-sum-square of the partial-wave
        uncertainty and the two changes) is within ``target``, with advice per direction.
    """
    target = real("target", target)
    cfg = resolve(as_config(config), C if c is None else c)[0]
    base = second_order(cfg, l_max, negative_branch=negative_branch, c=c, progress=progress, allow_large=allow_large)
    variations = []
    before, current = base, cfg
    for name in ("size", "reach"):
        changed = _changed(current, name)
        if changed is None:
            continue
        current = changed[0]
        res = second_order(current, l_max, negative_branch=negative_branch, c=c, progress=progress,
                           allow_large=allow_large)
        # the reach is changed on top of the size: its change is measured from the finer basis
        variations.append(Variation(name, changed[1], res, res.extrapolated - before.extrapolated))
        before = res
    error = math.sqrt(base.uncertainty**2 + sum(v.change**2 for v in variations))
    advice = _advice(cfg, base, variations, target)
    return Completeness(base, tuple(variations), target, error, "complete" if error <= target else "incomplete",
                        tuple(advice))


def _advice(cfg, base: SecondOrder, variations, target: float) -> list[str]:
    out = []
    if base.uncertainty > target:
        L = base.l_max
        # the uncertainty is the size of the next term of the tail, ~ (L + 1/2)^-4 at least
        need = math.ceil((L + 0.5) * (base.uncertainty / target) ** 0.25 - 0.5) if base.uncertainty > 0 else L
        out.append(f"partial waves: the tail beyond l_max = {L} is uncertain by {base.uncertainty:.1e} hartree; "
                   f"raise l_max to about {max(need, L + 1)}")
    by = {v.name: v for v in variations}
    size, reach = by.get("size"), by.get("reach")
    if size is not None and abs(size.change) > target:
        cheaper = ""
        if reach is not None and abs(reach.change) <= target and family_of(cfg.basis).has_wall:
            cheaper = (f"; the reach is not what limits it (a {REFINEMENT:g} times wider one moved it by only "
                       f"{reach.change:+.1e}), so a smaller cavity at this size also puts more functions "
                       f"where the correlation happens")
        out.append(f"size: {size.setting} moves the energy by {size.change:+.1e} hartree; the basis needs more "
                   f"functions: raise basis.size further until the change is below {target:.0e}{cheaper}")
    if reach is not None and reach.change > target:
        # a sum over more complete sets goes down: a rise says the wider cavity spread the
        # functions thinner than it gained reach
        out.append(f"reach: {reach.setting} (with {size.setting if size else 'the same size'}) raises the energy "
                   f"by {reach.change:+.1e} hartree: the functions are spread too thin over the wider cavity, and "
                   f"the reach is not what limits the sum; raise basis.size")
    elif reach is not None and abs(reach.change) > target:
        key = reach.setting.split(" = ")[0]
        out.append(f"reach: {reach.setting} (with {size.setting if size else 'the same size'}) moves the energy by "
                   f"{reach.change:+.1e} hartree; the intermediate states need a wider reach: widen {key} "
                   f"(and raise basis.size with it) until the change is below {target:.0e}")
    if not family_of(cfg.basis).resizable(cfg.basis):
        out.append("the basis is given explicitly (knots or exponents listed): its size and reach were not varied")
    if "brown-ravenhall" in base.flags:
        out.append("the negative-branch part with one electron in each branch has no converged value "
                   "(Brown–Ravenhall): quote the no-pair energy")
    if "spurious-roots-included" in base.flags:
        out.append(f"roots flagged spurious contribute {base.parts.get('flagged_spurious', 0.0):+.1e} hartree: "
                   "check the balance (dkb has none) and the cavity")
    if not out:
        out.append(f"complete to {target:.0e} hartree in every direction checked")
    return out
