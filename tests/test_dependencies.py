"""The declared dependency floors are honest: they agree with the pinned minimum-version set that
the suite is run with (.ci/minimum-versions.txt, scripts/check_minimum_versions.sh), the running
versions meet them, and the code uses no library API newer than them.

CI runs the newest releases, so the last two checks guard the floors between runs of the
minimum-version script: a name that exists only in a newer numpy passes every other test here.
"""

import re
import tomllib
from importlib.metadata import PackageNotFoundError, version
from pathlib import Path

import numpy as np
import pytest

ROOT = Path(__file__).resolve().parent.parent
CONSTRAINTS = ROOT / ".ci" / "minimum-versions.txt"


def _norm(name: str) -> str:
    return re.sub(r"[-_.]+", "-", name).lower()


def _release(v: str) -> tuple[int, ...]:
    """(1, 24, 0) from '1.24', '1.24.0' or '1.24.0rc1' (release segment, zero-padded to 3)."""
    parts = [int(x) for x in re.match(r"\d+(?:\.\d+)*", v).group().split(".")]
    return tuple(parts + [0] * (3 - len(parts)))


def _floors() -> dict[str, str]:
    """name -> floor for every requirement in pyproject.toml (core and every extra)."""
    project = tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))["project"]
    reqs = list(project["dependencies"])
    for extra in project.get("optional-dependencies", {}).values():
        reqs.extend(extra)
    floors = {}
    for req in reqs:
        m = re.fullmatch(r"\s*([A-Za-z0-9_.-]+)\s*>=\s*([0-9][0-9.]*)\s*", req)
        assert m, f"{req!r}: every requirement must be 'name>=floor' (a floor the suite was run with)"
        name, floor = _norm(m.group(1)), m.group(2)
        assert floors.setdefault(name, floor) == floor, f"{name}: two different floors in pyproject.toml"
    return floors


def _pins() -> dict[str, str]:
    pins = {}
    for line in CONSTRAINTS.read_text(encoding="utf-8").splitlines():
        line = line.split("#")[0].strip()
        if line:
            name, _, pin = line.partition("==")
            assert pin, f"{line!r}: the minimum-version file pins exactly (name==version)"
            pins[_norm(name)] = pin.strip()
    return pins


def test_pyproject_floors_are_the_pinned_minimum_versions():
    floors, pins = _floors(), _pins()
    assert sorted(floors) == sorted(pins), "pyproject.toml and .ci/minimum-versions.txt list different packages"
    wrong = {n: (floors[n], pins[n]) for n in floors if _release(floors[n]) != _release(pins[n])}
    assert not wrong, f"floor in pyproject.toml vs pin in .ci/minimum-versions.txt: {wrong}"


def test_running_versions_meet_the_floors():
    floors, too_old = _floors(), []
    for name, floor in floors.items():
        try:
            have = version(name)
        except PackageNotFoundError:
            continue        # an extra not installed here; the core ones are imported by the suite
        if _release(have) < _release(floor):
            too_old.append(f"{name} {have} < {floor}")
    assert not too_old, too_old


# Names that exist only from a numpy release later than some possible floor (numpy release notes
# 1.25 and 2.0-2.1, from memory).  One of them in the code or the docs while the floor is older
# breaks the floor (np.trapezoid in a test and in docs/file-format.md did).
NUMPY_SINCE = {
    "exceptions": (1, 25), "dtypes": (1, 25),
    "trapezoid": (2, 0), "concat": (2, 0), "permute_dims": (2, 0), "matrix_transpose": (2, 0),
    "vecdot": (2, 0), "isdtype": (2, 0), "astype": (2, 0), "bitwise_count": (2, 0), "pow": (2, 0),
    "acos": (2, 0), "asin": (2, 0), "atan": (2, 0), "atan2": (2, 0), "acosh": (2, 0), "asinh": (2, 0),
    "atanh": (2, 0), "bitwise_invert": (2, 0), "bitwise_left_shift": (2, 0),
    "bitwise_right_shift": (2, 0), "strings": (2, 0), "long": (2, 0), "ulong": (2, 0),
    "unstack": (2, 1), "cumulative_sum": (2, 1), "cumulative_prod": (2, 1),
}


def _sources():
    files = [*ROOT.glob("relbasis/**/*.py"), *ROOT.glob("tests/*.py"), *ROOT.glob("scripts/*.py"),
             ROOT / "README.md", *ROOT.glob("docs/*.md")]
    return [f for f in files if f.name != Path(__file__).name]


def test_no_numpy_name_newer_than_the_floor():
    floor = _release(_floors()["numpy"])[:2]
    newer = {n for n, since in NUMPY_SINCE.items() if since > floor}
    pattern = re.compile(r"\b(?:np|numpy)\.(" + "|".join(sorted(newer)) + r")\b"
                         r"|from numpy import [^\n]*\b(" + "|".join(sorted(newer)) + r")\b")
    found = [f"{f.relative_to(ROOT)}:{text[:m.start()].count(chr(10)) + 1}: {m.group(0)}"
             for f in _sources() for text in [f.read_text(encoding="utf-8")] for m in pattern.finditer(text)]
    assert not found, f"numpy floor is {floor}, these need a newer numpy: {found}"


def test_apis_the_package_relies_on_exist_here():
    """Cheap calls of the library features relbasis needs, at the running versions."""
    import h5py
    import scipy.linalg as sl
    from joblib import Parallel, delayed, parallel_config
    from scipy.integrate import simpson, solve_ivp, trapezoid

    from relbasis import constants

    # scipy >= 1.15: CODATA 2022, the edition of every number in the docs (scipy.constants)
    assert constants.CODATA == "2022"
    # joblib >= 1.4: unordered streaming of scan results; parallel_config selects the Dask backend
    assert sorted(Parallel(n_jobs=1, return_as="generator_unordered")(delayed(abs)(i) for i in (-2, 1))) == [1, 2]
    with parallel_config(backend="threading", n_jobs=1):
        pass
    # scipy.linalg drivers chosen in eigen.py and confidence.py
    H, S = np.array([[2.0, 1.0], [1.0, 3.0]]), np.eye(2)
    assert sl.eigh(H, S, driver="gvd", check_finite=False)[0] == pytest.approx(sl.eigh(H, driver="evd")[0])
    x = np.linspace(0.0, 1.0, 5)
    assert trapezoid(x, x) == pytest.approx(0.5) and simpson(x, x=x) == pytest.approx(0.5)
    assert solve_ivp(lambda t, y: -y, (0.0, 1.0), [1.0], method="DOP853").success
    assert hasattr(h5py.Dataset, "asstr")         # h5py >= 3: string datasets read as str
    assert np.finfo(float).eps > 0 and callable(np.polynomial.legendre.leggauss)


def test_ci_runs_the_readme_test_command_verbatim():
    command = 'pip install ".[test,cluster]" && python -m pytest'
    assert command in (ROOT / "README.md").read_text(encoding="utf-8").splitlines()
    assert command in (ROOT / ".ci" / "run").read_text(encoding="utf-8").splitlines()
