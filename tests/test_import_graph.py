"""The import graph of relbasis follows the layers of docs/architecture.md.

Every module of relbasis/ is parsed with ``ast`` (nothing is imported).  Two graphs are built
from the intra-package imports: module-level imports (run when the module is imported) and
function-level imports (run when the function is called; used to keep a heavy or upward
dependency off the import path).  The test fails on a cycle among module-level imports, on a
module-level import of a module in the same or a higher layer, and on a function-level upward
import that is not listed in ALLOWED_UPWARD with its reason.
"""

from __future__ import annotations

import ast
import functools
from pathlib import Path

PACKAGE = Path(__file__).resolve().parents[1] / "relbasis"

LAYERS: tuple[tuple[str, ...], ...] = (
    # 0 leaves: no relbasis import except errors (and vocabulary -> errors, validate -> errors)
    ("version", "constants", "errors"),
    ("vocabulary", "validate", "outputs", "layout", "sampling", "hamiltonian", "coulomb"),
    # 2 input: what a user writes and the records it names
    ("electrons", "elements", "finite", "analytic"),
    ("config", "radii", "angular"),
    ("nucleus",),
    # 5 basis functions
    ("bspline", "gaussian"),
    # 6 Dirac matrices of one kappa, per family; the registry of families
    ("dirac", "dirac_gaussian", "eigen"),
    ("families", "precision"),
    # 8 judging a spectrum
    ("confidence", "budget"),
    ("spectrum",),
    # 10 the solver, then what is computed from a solution
    ("solver",),
    ("integrals", "critical", "plots", "reader", "measures", "scf", "perturbation"),
    ("checks", "writer", "scan"),
    ("audit", "completeness"),
    ("report",),
    # 14 the command line and the package's front door
    ("cli",),
    ("__init__", "__main__"),
)
"""Bottom to top: a module may import, at module level, only modules of lower layers."""

ALLOWED_UPWARD: dict[tuple[str, str], str] = {
    ("config", "nucleus"): "resolving a config builds its Nucleus; validation itself needs no physics",
    ("config", "budget"): "the size check of a config estimates memory with the solver's budget",
    ("solver", "scf"): "a config with a core runs the mean field first, which diagonalises with the solver's pipeline",
}
"""Function-level imports against the layer order, each with the reason it is lazy."""


def _layer_of() -> dict[str, int]:
    return {name: i for i, layer in enumerate(LAYERS) for name in layer}


@functools.lru_cache(maxsize=None)
def _modules() -> dict[str, ast.Module]:
    """Every module of the package by name; a subpackage (relbasis/scan/) counts as one module,
    its files' bodies joined (imports between its own files are internal to it)."""
    out = {p.stem: ast.parse(p.read_text(encoding="utf-8"), str(p)) for p in sorted(PACKAGE.glob("*.py"))}
    for pkg in sorted(d for d in PACKAGE.iterdir() if (d / "__init__.py").exists()):
        body = []
        for f in sorted(pkg.glob("*.py")):
            tree = ast.parse(f.read_text(encoding="utf-8"), str(f))
            body.extend(_lift(tree).body)
        out[pkg.name] = ast.Module(body=body, type_ignores=[])
    return out


def _lift(tree: ast.Module) -> ast.Module:
    """A file of a subpackage as if it were a top-level module: 'from ..x' becomes 'from .x',
    and 'from .y' (the subpackage's own files) is dropped."""
    class Lift(ast.NodeTransformer):
        def visit_ImportFrom(self, node):
            if node.level == 1:
                return None
            if node.level == 2:
                node.level = 1
            return node

    return Lift().visit(tree)


def _targets(node: ast.AST, here: str) -> list[str]:
    """relbasis modules named by one import statement."""
    out = []
    if isinstance(node, ast.ImportFrom):
        if node.level == 1 and node.module is None:  # from . import x, y: a name that is no
            # module (e.g. __version__) is taken from the package, i.e. runs relbasis/__init__
            out = [a.name if ((PACKAGE / f"{a.name}.py").exists() or (PACKAGE / a.name).is_dir()) else "__init__"
                   for a in node.names]
        elif node.level == 1:
            out = [node.module.split(".")[0]]
        elif node.level == 0 and node.module and node.module.split(".")[0] == "relbasis":
            parts = node.module.split(".")
            out = [parts[1]] if len(parts) > 1 else \
                [a.name if (PACKAGE / f"{a.name}.py").exists() else "__init__" for a in node.names]
    elif isinstance(node, ast.Import):
        out = [a.name.split(".")[1] if "." in a.name else "__init__" for a in node.names
               if a.name.split(".")[0] == "relbasis"]
    return [t for t in out if ((PACKAGE / f"{t}.py").exists() or (PACKAGE / t / "__init__.py").exists()) and t != here]


def _is_type_checking(node: ast.If) -> bool:
    t = node.test
    return (isinstance(t, ast.Name) and t.id == "TYPE_CHECKING") or \
        (isinstance(t, ast.Attribute) and t.attr == "TYPE_CHECKING")


@functools.lru_cache(maxsize=None)
def _edges() -> tuple[frozenset[tuple[str, str]], frozenset[tuple[str, str]]]:
    """(module-level, function-level) edges (importer, imported)."""
    top, lazy = set(), set()

    def walk(nodes, here, in_function):
        for node in nodes:
            if isinstance(node, ast.If) and _is_type_checking(node):
                continue  # annotations only: never executed
            if isinstance(node, (ast.Import, ast.ImportFrom)):
                for t in _targets(node, here):
                    (lazy if in_function else top).add((here, t))
            inner = isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef, ast.Lambda)) or in_function
            walk(ast.iter_child_nodes(node), here, inner)

    for name, tree in _modules().items():
        walk(tree.body, name, False)
    return frozenset(top), frozenset(lazy)


def _cycles(edges) -> list[list[str]]:
    graph: dict[str, list[str]] = {}
    for a, b in edges:
        graph.setdefault(a, []).append(b)
    found, state = [], {}

    def visit(node, path):
        state[node] = 1
        for nxt in sorted(graph.get(node, ())):
            if state.get(nxt) == 1:
                found.append(path[path.index(nxt):] + [nxt])
            elif nxt not in state:
                visit(nxt, path + [nxt])
        state[node] = 2

    for node in sorted(graph):
        if node not in state:
            visit(node, [node])
    return found


def test_every_module_has_a_layer():
    layer = _layer_of()
    missing = sorted(set(_modules()) - set(layer))
    assert not missing, f"modules missing from LAYERS (and from docs/architecture.md): {missing}"
    stale = sorted(set(layer) - set(_modules()))
    assert not stale, f"LAYERS names modules that do not exist: {stale}"


def test_no_cycle_among_module_level_imports():
    top, _ = _edges()
    assert _cycles(top) == []


def test_module_level_imports_go_downward():
    layer = _layer_of()
    top, _ = _edges()
    bad = sorted(f"{a} (layer {layer[a]}) imports {b} (layer {layer[b]})"
                 for a, b in top if layer[b] >= layer[a])
    assert not bad, "module-level imports against the layer order:\n" + "\n".join(bad)


def test_function_level_upward_imports_are_the_listed_ones():
    layer = _layer_of()
    _, lazy = _edges()
    upward = {(a, b) for a, b in lazy if layer[b] >= layer[a]}
    unlisted = sorted(f"{a} -> {b}" for a, b in upward - set(ALLOWED_UPWARD))
    assert not unlisted, "function-level upward imports without a reason in ALLOWED_UPWARD:\n" + "\n".join(unlisted)
    stale = sorted(f"{a} -> {b}" for a, b in set(ALLOWED_UPWARD) - lazy)
    assert not stale, "ALLOWED_UPWARD lists imports that are gone: " + ", ".join(stale)


def test_config_imports_no_computational_module():
    top, _ = _edges()
    assert sorted(b for a, b in top if a == "config") == ["constants", "electrons", "errors", "outputs", "validate", "vocabulary"]


def test_leaves_import_only_leaves():
    top, _ = _edges()
    for leaf in ("version", "constants", "errors", "vocabulary", "validate"):
        assert {b for a, b in top if a == leaf} <= {"errors"}, leaf


def test_architecture_doc_lists_every_layer():
    """docs/architecture.md names each module of LAYERS in its layer table."""
    text = (PACKAGE.parent / "docs" / "architecture.md").read_text(encoding="utf-8")
    missing = [m for layer in LAYERS for m in layer if m not in ("__main__", "__init__") and f"`{m}`" not in text]
    assert not missing, f"docs/architecture.md does not name: {missing}"
