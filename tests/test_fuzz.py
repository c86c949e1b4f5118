"""Random configs, valid and invalid, thrown at the loader and the solver.

Every outcome must be a Solution or an InputError with a one-line message: never another
exception, never a traceback.
"""

import math

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import relbasis
from relbasis.errors import InputError

anything = st.one_of(
    st.none(), st.booleans(), st.integers(-300, 300), st.floats(allow_nan=True, allow_infinity=True),
    st.text(max_size=8), st.lists(st.integers(-5, 5), max_size=4),
)
ion = st.fixed_dictionaries(
    {},
    optional={
        "Z": st.one_of(st.integers(-5, 180), st.floats(-5, 180), anything),
        "A": st.one_of(st.integers(-5, 500), anything),
        "nucleus": st.one_of(st.sampled_from(["point", "sphere", "gauss", "fermi", "fermy", ""]), anything),
        "rms_radius_fm": st.one_of(st.floats(-1, 10), anything),
        "radius": st.one_of(st.sampled_from(["formula", "measured", "measure"]), anything),
        "charge": anything,
    },
)
basis = st.fixed_dictionaries(
    {},
    optional={
        "size": st.one_of(st.integers(-2, 40), anything),
        "order": st.one_of(st.integers(-1, 12), anything),
        "r_min": st.one_of(st.floats(-1, 1), anything),
        "r_max": st.one_of(st.floats(-1, 300), anything),
        "r_scale": st.one_of(st.floats(-1, 10), anything),
        "knots": st.one_of(st.sampled_from(["log-linear", "exponential", "linear"]),
                           st.lists(st.floats(0, 50), min_size=0, max_size=12), anything),
        "balance": st.one_of(st.sampled_from(["none", "dkb", "rkb"]), anything),
        "quadrature": st.one_of(st.integers(-1, 20), anything),
        "family": st.one_of(st.sampled_from(["bspline", "gaussian", "spline"]), anything),
    },
)
solve = st.fixed_dictionaries({}, optional={"kappas": st.one_of(st.lists(st.integers(-3, 3), max_size=3), anything)})
junk_config = st.fixed_dictionaries({}, optional={"ion": st.one_of(ion, anything), "basis": st.one_of(basis, anything),
                                                   "solve": st.one_of(solve, anything), "extra": anything})


@st.composite
def valid_config(draw):
    """Configs a user might well write: mostly valid, sometimes at the edge of the allowed range."""
    order = draw(st.integers(3, 10))
    cfg = {
        "ion": {"Z": draw(st.one_of(st.integers(1, 136), st.floats(0.5, 136.5))),
                "nucleus": draw(st.sampled_from(["point", "sphere", "gauss", "fermi"]))},
        "basis": {"size": draw(st.integers(order + 2, 40)), "order": order,
                  "balance": draw(st.sampled_from(["none", "dkb"])),
                  "knots": draw(st.sampled_from(["log-linear", "exponential"]))},
        "solve": {"kappas": draw(st.lists(st.sampled_from([-3, -2, -1, 1, 2, 3]), min_size=1, max_size=2))},
    }
    if draw(st.booleans()):
        cfg["ion"]["A"] = draw(st.integers(1, 300))
    if draw(st.integers(0, 3)) == 0:  # the Gaussian family, with its own keys
        cfg["basis"] = {"family": "gaussian", "size": draw(st.integers(2, 30)),
                        "balance": draw(st.sampled_from(["none", "rkb", "dkb"]))}
        if draw(st.booleans()):
            cfg["basis"]["exponent_min"] = draw(st.floats(1e-4, 1e3))
        if draw(st.booleans()):
            cfg["basis"]["exponent_max"] = draw(st.floats(1.0, 1e12))
        return cfg
    if draw(st.booleans()):
        cfg["basis"]["wall"] = draw(st.sampled_from(["dirichlet", "bag"]))
    if draw(st.integers(0, 5)) == 0:  # a free particle in a cavity
        cfg["ion"] = {"Z": 0}
        cfg["basis"]["r_max"] = draw(st.floats(0.01, 10))
        return cfg
    if draw(st.booleans()):
        cfg["basis"]["r_max"] = draw(st.floats(0.01, 500))
    if draw(st.booleans()):
        cfg["basis"]["r_min"] = draw(st.floats(1e-12, 1.0))
    return cfg


@st.composite
def mutated_config(draw):
    """A valid config with one key replaced by anything at all."""
    cfg = draw(valid_config())
    section = draw(st.sampled_from(sorted(cfg)))
    key = draw(st.sampled_from(sorted(cfg[section]) + ["unknown_key"]))
    cfg[section][key] = draw(anything)
    return cfg


config = st.one_of(valid_config(), mutated_config(), junk_config)


def _small(cfg):
    """Keep the solves quick: cap the number of splines and symmetries the fuzzer may ask for."""
    b = cfg.get("basis")
    if isinstance(b, dict):
        if isinstance(b.get("size"), int) and b["size"] > 40:
            b["size"] = 40
        b.setdefault("size", 24)
    s = cfg.get("solve")
    if isinstance(s, dict) and isinstance(s.get("kappas"), list):
        s["kappas"] = s["kappas"][:2]
    elif s is None and isinstance(b, dict):
        cfg["solve"] = {"kappas": [-1, 1]}
    return cfg


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(config)
def test_any_config_gives_a_result_or_an_input_error(cfg):
    cfg = _small(cfg)
    try:
        sol = relbasis.solve(cfg)
    except InputError as err:
        msg = str(err)
        assert msg and "\n" not in msg
        return
    for kappa in sol.kappas:
        spec = sol[kappa]
        assert len(spec) == sol.bases[kappa].size - sol.dropped[kappa]
        assert all(math.isfinite(e) for e in spec.energies)
        assert set(spec.branches) <= {"negative", "bound", "positive", "spurious"}
