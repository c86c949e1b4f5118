"""The public names of the export and the scan after their split into one module per job.

``relbasis.export`` and ``relbasis.load`` are the functions (there is no module of that name to
shadow them); ``relbasis.scan`` is a package whose ``scan`` is the entry point.
"""

import importlib
import types
from pathlib import Path

import relbasis


def test_export_and_load_are_the_functions():
    from relbasis import reader, writer

    assert isinstance(relbasis.export, types.FunctionType) and relbasis.export is writer.export
    assert isinstance(relbasis.load, types.FunctionType) and relbasis.load is reader.load
    package = Path(relbasis.__file__).parent
    assert not (package / "export.py").exists() and not (package / "scan.py").exists()  # nothing left to shadow them


def test_writer_and_reader_share_the_layout_names():
    from relbasis import layout, reader, writer

    assert writer.FORMAT is layout.FORMAT is reader.FORMAT == "relbasis-basis"
    assert writer.LAYOUT_VERSION == reader.LAYOUT_VERSION == layout.LAYOUT_VERSION == 1
    assert writer.BLOCKS is layout.BLOCKS


def test_scan_is_a_package_with_its_entry_point():
    scan_package = importlib.import_module("relbasis.scan")
    assert isinstance(scan_package, types.ModuleType) and hasattr(scan_package, "__path__")
    assert relbasis.scan is scan_package
    assert callable(scan_package.scan) and scan_package.scan.__module__ == "relbasis.scan.run"
    for job in ("plan", "store", "run", "analysis", "output"):
        assert isinstance(importlib.import_module(f"relbasis.scan.{job}"), types.ModuleType)


def test_the_scan_package_reexports_the_objects_of_its_modules():
    import relbasis.scan as scan_package

    for name in scan_package.__all__:
        obj = getattr(scan_package, name)
        home = getattr(obj, "__module__", None)
        if home is not None and home.startswith("relbasis.scan."):
            assert getattr(importlib.import_module(home), name) is obj


def test_no_module_outside_the_families_branches_on_the_family():
    """Only the family modules, the config (which validates by key style) and the registries name
    the families: everything else asks relbasis.families (common practice: one registry)."""
    import re
    from pathlib import Path

    allowed = {"config.py", "dirac.py", "dirac_gaussian.py", "bspline.py", "gaussian.py", "families.py",
               "vocabulary.py"}
    pattern = re.compile(r"family\s*[!=]=|==\s*\"(bspline|gaussian)\"|table is (not )?None|splines is (not )?None"
                         r"|isinstance\([^)]*(DiracBasis|GaussianDiracBasis)")
    root = Path(relbasis.__file__).parent
    hits = [f"{p.relative_to(root)}:{i}: {line.strip()}" for p in sorted(root.rglob("*.py")) if p.name not in allowed
            for i, line in enumerate(p.read_text(encoding="utf-8").splitlines(), 1) if pattern.search(line)]
    assert not hits, hits
