"""The analysis of a scan: convergence tables per tracked state, rates, and the smallest basis
meeting the target."""

from __future__ import annotations

import json
import math

import numpy as np

from ..version import __version__
from ..analytic import dirac_coulomb_energy
from .plan import Plan, Unit, parse_label


def _ion_key(unit: Unit) -> str:
    return json.dumps(unit.config["ion"], sort_keys=True)


def _size(rec: dict) -> int:
    return int(rec["resolved_basis"]["size"])


def fit_rate(sizes, errors) -> dict | None:
    """Observed convergence in size: exponential err ~ exp(-a N) or algebraic err ~ N^-p,
    whichever straight-line fit (log err against N, or against log N) leaves less residual."""
    pts = [(n, e) for n, e in zip(sizes, errors) if e is not None and e > 1e-15]
    if len(pts) < 3:
        return None
    n = np.array([p[0] for p in pts], dtype=float)
    y = np.log(np.array([p[1] for p in pts]))
    fits = {}
    for kind, x in (("exponential", n), ("power", np.log(n))):
        A = np.vstack([x, np.ones_like(x)]).T
        coef, res, *_ = np.linalg.lstsq(A, y, rcond=None)
        resid = float(np.sum((A @ coef - y) ** 2))
        fits[kind] = (resid, -float(coef[0]))
    kind = min(fits, key=lambda k: fits[k][0])
    rate = fits[kind][1]
    text = (f"error ~ exp(-{rate:.3g} N): x{math.exp(10 * rate):.3g} per 10 functions" if kind == "exponential"
            else f"error ~ N^-{rate:.3g}")
    return {"form": kind, "rate": rate, "text": text, "points": len(pts)}


def analyse(plan: Plan, everything: list[Unit], records: dict[str, dict]) -> dict:
    """Convergence tables per tracked state, rates, and the smallest basis meeting the target."""
    done = [(u, records[u.key]) for u in everything if u.key in records]
    groups: dict[str, list] = {}
    for u, rec in done:
        groups.setdefault(_ion_key(u), []).append((u, rec))
    labels = sorted({lab for _, rec in done for lab in rec["levels"]
                     if plan.tracked(lab, parse_label(lab)[0])}, key=lambda s: (parse_label(s)[0], s))
    references = {}
    for gk, members in groups.items():
        ion = json.loads(gk)
        # the exact one-electron level is no reference for the levels of a mean field
        point = members[0][1]["nucleus"] == "point" and members[0][1]["Z"] > 0 and "scf" not in members[0][1]
        use_exact = plan.reference == "exact" or (plan.reference == "auto" and point)
        largest = max(members, key=lambda m: (_size(m[1]), m[1]["resolved_basis"].get("order") or 0))
        refs = {}
        for lab in labels:
            if use_exact:
                n, kappa = parse_label(lab)
                refs[lab] = {"energy": dirac_coulomb_energy(members[0][1]["Z"], n, kappa), "source": "exact Dirac–Coulomb"}
            elif lab in largest[1]["levels"]:
                refs[lab] = {"energy": largest[1]["levels"][lab], "source": f"largest basis {largest[0].settings}",
                             "unit": largest[0].key}
        references[gk] = {"ion": ion, "states": refs}
    states = {}
    for lab in labels:
        rows = []
        for u, rec in done:
            ref = references[_ion_key(u)]["states"].get(lab)
            e = rec["levels"].get(lab)
            err = None if (e is None or ref is None) else abs(e / ref["energy"] - 1)
            rows.append({"settings": u.settings, "ion": u.config["ion"], "basis": u.config["basis"],
                         "size": _size(rec), "spurious_roots": rec.get("spurious", 0), "energy_hartree": e,
                         "reference_hartree": None if ref is None else ref["energy"], "relative_error": err,
                         "is_reference": ref is not None and ref.get("unit") == u.key})
        rows, rates = _sorted_with_rates(rows)
        states[lab] = {"rows": rows, "rates": rates}
    summary = {"relbasis": __version__, "plan": plan.to_dict(), "target": plan.target, "units": len(everything),
               "finished": len(done), "references": list(references.values()), "states": states}
    core = core_convergence(plan, done)
    if core is not None:  # only for a scan of a core: bare-nucleus summaries keep their layout
        summary["core"] = core
    second = second_order_convergence(plan, done)
    if second is not None:  # only when the plan tracks it: other summaries keep their layout
        summary["second_order"] = second
    summary["recommended"] = _recommend(plan, states, core, second)
    return summary


def _largest(members: list) -> tuple:
    """The unit of the most complete basis among (unit, record) pairs: the most functions, then
    the highest order; the first in the plan's order among equals."""
    best = members[0]
    for u, rec in members[1:]:
        if (_size(rec), rec["resolved_basis"].get("order") or 0) > \
                (_size(best[1]), best[1]["resolved_basis"].get("order") or 0):
            best = (u, rec)
    return best


def _previous(plan: Plan, u: Unit, by_settings: dict) -> dict:
    """For every axis, the record of the unit one value earlier on that axis with every other
    setting the same (None for the first value, or when that unit is not finished)."""
    out = {}
    for k, vals in plan.axes:
        i = [json.dumps(v, sort_keys=True) for v in vals].index(json.dumps(u.settings[k], sort_keys=True))
        out[k] = by_settings.get(json.dumps({**u.settings, k: vals[i - 1]}, sort_keys=True)) if i else None
    return out


def second_order_convergence(plan: Plan, done: list) -> dict | None:
    """The convergence of the tracked second-order energy in the basis (None when not tracked).

    Per unit: the energy summed through l_max, its extrapolation in l and that extrapolation's
    uncertainty (relbasis.perturbation), and ``difference_hartree`` = |E_x - E_x,ref|, E_x the
    extrapolated energy, against the unit of the most complete basis of its ion (the most
    functions, then the highest order: :func:`_largest`; ``is_reference`` marks it), and for
    every axis the absolute change |E_x - E_x,prev| from the unit one value earlier on that
    axis with every other setting the same (None for the first value).  The target is absolute
    (hartree).  ``recommended`` is the smallest basis (fewest functions, then the smaller worst
    difference) within the target of the reference for every ion, with no spurious root and a
    sum that ran; the reference is no evidence for itself.  ``notes`` say when the verdict
    rests on a reference that itself still moves by more than the target, or when the
    uncertainty of the l extrapolation (common to every unit) exceeds the target."""
    if plan.second_order is None:
        return None
    target = plan.second_order_target
    mine = [(u, rec) for u, rec in done if rec.get("second_order", {}).get("l_max") == plan.second_order]
    ran = [(u, rec) for u, rec in mine if "error" not in rec["second_order"]]
    by_settings = {json.dumps(u.settings, sort_keys=True): rec for u, rec in ran}
    groups: dict[str, list] = {}
    for u, rec in ran:
        groups.setdefault(_ion_key(u), []).append((u, rec))
    refs = {gk: _largest(members) for gk, members in groups.items()}
    rows = []
    for u, rec in mine:
        so = rec["second_order"]
        row = {"settings": u.settings, "ion": u.config["ion"], "basis": u.config["basis"], "size": _size(rec),
               "spurious_roots": rec.get("spurious", 0), "l_max": so["l_max"]}
        ref = refs.get(_ion_key(u))
        if "error" in so:
            rows.append({**row, "error": so["error"], "kind": None, "energy_hartree": None,
                         "extrapolated_hartree": None, "uncertainty_hartree": None, "increments_hartree": None,
                         "flags": [], "reference_hartree": None if ref is None else ref[1]["second_order"]["extrapolated_hartree"],
                         "difference_hartree": None, "is_reference": False,
                         "change_hartree": {k: None for k, _ in plan.axes}})
            continue
        e = so["extrapolated_hartree"]
        ref_e = ref[1]["second_order"]["extrapolated_hartree"]
        prev = _previous(plan, u, by_settings)
        rows.append({**row, "error": None, "kind": so["kind"], "energy_hartree": so["energy_hartree"],
                     "extrapolated_hartree": e, "uncertainty_hartree": so["uncertainty_hartree"],
                     "increments_hartree": so["increments_hartree"], "flags": so["flags"],
                     "reference_hartree": ref_e, "difference_hartree": abs(e - ref_e), "is_reference": ref[0].key == u.key,
                     "change_hartree": {k: None if p is None else abs(e - p["second_order"]["extrapolated_hartree"])
                                        for k, p in prev.items()}})
    keyed = sorted((_row_series(r), r["size"], i) for i, r in enumerate(rows))
    rows = [rows[i] for _, _, i in keyed]
    references = [{"ion": json.loads(gk), "settings": u.settings, "size": _size(rec), "unit": u.key,
                   "extrapolated_hartree": rec["second_order"]["extrapolated_hartree"]}
                  for gk, (u, rec) in refs.items()]
    notes = []
    settled = True
    for r in rows:
        if r["is_reference"]:
            moves = [v for v in r["change_hartree"].values() if v is not None]
            if moves and max(moves) > target:
                settled = False
                notes.append(f"the reference {r['settings']} still moves by {max(moves):.2e} hartree from its neighbour "
                             f"(more than the target {target:g}): extend the scan")
    worst_tail = max((r["uncertainty_hartree"] for r in rows if r["uncertainty_hartree"] is not None), default=None)
    if worst_tail is not None and worst_tail > target:
        notes.append(f"the uncertainty of the extrapolation beyond l_max = {plan.second_order} reaches "
                     f"{worst_tail:.2e} hartree (more than the target {target:g}): the basis comparison holds at "
                     f"l_max = {plan.second_order}, the absolute energy only to that uncertainty")
    for r in rows:
        if r["error"] is not None:
            notes.append(f"no second-order energy for {r['settings']}: {r['error']}")
    return {"quantity": "second-order energy", "kinds": sorted({r["kind"] for r in rows if r["kind"]}),
            "l_max": plan.second_order, "target_hartree": target,
            "reference": "the most complete basis of the scan (most functions, then highest order), per ion",
            "references": references, "rows": rows, "recommended": _recommend_second(rows, target, settled), "notes": notes}


def _recommend_second(rows: list[dict], target: float, settled: bool = True) -> dict | None:
    """The smallest basis whose extrapolated second-order energy is within ``target`` (hartree)
    of the reference for every ion (no spurious roots, the sum ran, not the reference itself);
    ``reference_settled`` False when a reference still moves by more than the target from its
    neighbour on an axis, i.e. the verdict is only as good as a reference that is not converged."""
    verdict: dict[str, dict] = {}
    _judge(verdict, rows, "difference_hartree", target)
    best = _smallest(verdict)
    if best is None:
        return None
    return {"basis": best["basis"], "size": best["size"], "worst_difference_hartree": best["worst"],
            "reference_settled": settled}


def core_convergence(plan: Plan, done: list) -> dict | None:
    """The convergence of the core's total energy E (units with a mean field), None without.

    Each row has E, its relative error |E / E_ref - 1| against the unit of the largest basis of
    its ion (as for the levels: no exact total is known), and, for every axis, the relative
    change |E / E_prev - 1| from the unit one value earlier on that axis with every other
    setting the same (None for the first value); also the orbital energies, the iterations and
    whether the iteration converged.  Rates are fitted in size per series as for the levels."""
    with_core = [(u, rec) for u, rec in done if "scf" in rec]
    if not with_core:
        return None
    axes = [k for k, _ in plan.axes]
    position = {k: {json.dumps(v, sort_keys=True): i for i, v in enumerate(vals)} for k, vals in plan.axes}
    by_settings = {json.dumps(u.settings, sort_keys=True): rec for u, rec in with_core}
    largest = {}
    for u, rec in with_core:
        gk = _ion_key(u)
        if gk not in largest or ((_size(rec), rec["resolved_basis"].get("order") or 0)
                                 > (_size(largest[gk][1]), largest[gk][1]["resolved_basis"].get("order") or 0)):
            largest[gk] = (u, rec)
    rows = []
    for u, rec in with_core:
        e = rec["scf"]["total_energy_hartree"]
        ref_u, ref = largest[_ion_key(u)]
        ref_e = ref["scf"]["total_energy_hartree"]
        changes = {}
        for k in axes:  # the unit one step back on this axis, every other setting the same
            i = position[k][json.dumps(u.settings[k], sort_keys=True)]
            prev = by_settings.get(json.dumps({**u.settings, k: plan.axes[axes.index(k)][1][i - 1]}, sort_keys=True)) if i else None
            changes[k] = None if prev is None else abs(e / prev["scf"]["total_energy_hartree"] - 1)
        rows.append({"settings": u.settings, "ion": u.config["ion"], "basis": u.config["basis"], "size": _size(rec),
                     "spurious_roots": rec.get("spurious", 0), "energy_hartree": e, "reference_hartree": ref_e,
                     "relative_error": abs(e / ref_e - 1), "is_reference": ref_u.key == u.key,
                     "relative_change": changes, "orbitals": rec["scf"]["orbitals"],
                     "iterations": rec["scf"]["iterations"], "converged": rec["scf"]["converged"]})
    rows, rates = _sorted_with_rates(rows)
    return {"quantity": "total energy", "reference": "largest basis of the scan, per ion", "rows": rows, "rates": rates}


def _row_series(row: dict) -> str:
    """Everything but the size: the rows along one line of a convergence picture."""
    basis = {k: v for k, v in row["basis"].items() if k != "size"}
    return json.dumps({"ion": row["ion"], "basis": basis}, sort_keys=True)


def _candidate(verdict: dict, row: dict) -> dict:
    """The entry of the row's basis in a verdict {basis: {basis, size, ok, worst}}."""
    key = json.dumps(row["basis"], sort_keys=True)
    return verdict.setdefault(key, {"basis": row["basis"], "size": row["size"], "ok": True, "worst": 0.0})


def _judge(verdict: dict, rows, error_key: str, target: float, worst: bool = True) -> None:
    """Mark each row's basis: not ok if the row is a reference (no evidence for itself), has no
    error, misses the target or has spurious roots (never recommended, however accurate); with
    ``worst`` the largest error of the basis is kept."""
    for row in rows:
        cand = _candidate(verdict, row)
        err = row[error_key]
        if row["is_reference"] or err is None or err > target or row["spurious_roots"]:
            cand["ok"] = False
        if worst and err is not None:
            cand["worst"] = max(cand["worst"], err)


def _smallest(verdict: dict) -> dict | None:
    """The ok basis with the fewest functions (then the smaller worst error), or None."""
    good = [c for c in verdict.values() if c["ok"]]
    return min(good, key=lambda c: (c["size"], c["worst"])) if good else None


def _recommend(plan: Plan, states, core=None, second=None) -> dict | None:
    """The smallest basis (fewest functions; then the smaller worst error) meeting the target for every tracked state
    of every ion of the scan, for the core's total energy when there is a core (its iteration converged), and
    within the second-order target when a second-order energy is tracked (its own verdict,
    :func:`_recommend_second`); a unit serving as the reference is no evidence for itself.
    ``worst_relative_error`` is over the levels and the core's total energy (None when the plan
    tracks only a second-order energy, whose differences are absolute: ``second_order``)."""
    verdict: dict[str, dict] = {}
    if second is not None:  # absolute differences: they veto a basis but do not enter the relative worst
        _judge(verdict, second["rows"], "difference_hartree", plan.second_order_target, worst=False)
    if core is not None:
        for row in core["rows"]:
            if not row["converged"]:
                _candidate(verdict, row)["ok"] = False
    for st in (*states.values(), *(() if core is None else (core,))):
        _judge(verdict, st["rows"], "relative_error", plan.target)
    best = _smallest(verdict)
    if best is None:
        return None
    relative = bool(states) or core is not None
    return {"basis": best["basis"], "size": best["size"], "worst_relative_error": best["worst"] if relative else None}


def _sorted_with_rates(rows: list[dict]) -> tuple[list[dict], list[dict]]:
    """The rows sorted by series then size, and the convergence rate fitted per series (the
    reference rows left out): shared by the levels and the core's total energy."""
    keyed = sorted(((_row_series(r), r["size"], i) for i, r in enumerate(rows)))
    rows = [rows[i] for _, _, i in keyed]
    by_series: dict[str, list] = {}
    for (sk, _, _), r in zip(keyed, rows):
        if not r["is_reference"]:
            by_series.setdefault(sk, []).append((r["size"], r["relative_error"]))
    rates = []
    for sk, pts in by_series.items():
        fit = fit_rate([p[0] for p in pts], [p[1] for p in pts])
        if fit:
            rates.append({"series": json.loads(sk), **fit})
    return rows, rates
