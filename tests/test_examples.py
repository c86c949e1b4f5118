"""Every command and snippet in README.md and docs/*.md runs as printed in a fresh directory.

The rules for reading the blocks are in tests/doc_examples.py (and DEVELOPERS.md).  The
documents run in two worker processes (python tests/doc_examples.py), each document in order in
its own fresh directory with a copy of examples/; blocks that are not run are listed as skipped
tests (``pytest -rs`` shows them with their reasons).
"""

import json
import os
import subprocess
import sys
import tomllib
from pathlib import Path

import pytest

import doc_examples as dx
from relbasis import config
from relbasis.scan import plan_from_dict, units

WORKERS = 2


def _all_skipped():
    return [item for doc in dx.documents() for item in dx.plan(doc).skipped]


def test_every_block_is_runnable_or_marked():
    problems = [msg for doc in dx.documents() for msg in dx.plan(doc).problems]
    assert not problems, "\n".join(problems)


def test_docs_examples_run_as_printed(tmp_path):
    plans = {doc: dx.plan(doc) for doc in dx.documents()}
    docs = sorted((d for d, p in plans.items() if p.steps), key=lambda d: -len(plans[d].steps))
    assert docs, "no runnable example found"
    # longest first onto the least-loaded worker (the step count stands in for the cost)
    groups = [[] for _ in range(min(WORKERS, len(docs)))]
    load = [0] * len(groups)
    for d in docs:
        k = load.index(min(load))
        groups[k].append(d)
        load[k] += len(plans[d].steps)
    env = dict(os.environ)
    env["PYTHONPATH"] = os.pathsep.join([str(dx.ROOT), *filter(None, [env.get("PYTHONPATH")])])
    procs = []
    for k, group in enumerate(groups):
        results = tmp_path / f"results-{k}.json"
        cmd = [sys.executable, str(Path(dx.__file__)), "--workdir", str(tmp_path / "docs"),
               "--results", str(results), *map(str, group)]
        procs.append((subprocess.Popen(cmd, stdout=subprocess.PIPE, stderr=subprocess.STDOUT, text=True,
                                       cwd=tmp_path, env=env), results))
    steps = []
    for proc, results in procs:
        out, _ = proc.communicate(timeout=600)
        assert proc.returncode == 0, f"example runner failed:\n{out[-3000:]}"
        steps.extend(json.loads(results.read_text()))
    assert len(steps) == sum(len(p.steps) for p in plans.values())
    bad = [s for s in steps if s["problem"]]
    report = "\n\n".join(f"{s['where']}: {s['text']}\n  -> {s['problem']}\n{s['output']}" for s in bad)
    assert not bad, f"{len(bad)} of {len(steps)} examples fail:\n{report}"


@pytest.mark.parametrize("where, reason", _all_skipped() or [("-", "")], ids=lambda v: str(v)[:40])
def test_not_run(where, reason):
    """Lists each block or command the examples test does not run, with the reason given."""
    if where == "-":
        return
    assert reason.strip()
    pytest.skip(f"{where}: {reason}")


def test_config_doc_shows_the_shipped_example():
    """docs/config.md's example is examples/my_ion.toml (README runs it), so the two cannot drift."""
    block = next(b for b in dx.blocks(dx.ROOT / "docs" / "config.md") if b.lang == "toml")
    assert block.text in (dx.ROOT / "examples" / "my_ion.toml").read_text(encoding="utf-8")


@pytest.mark.parametrize("path", sorted((dx.ROOT / "examples").glob("*.toml")), ids=lambda p: p.name)
def test_shipped_examples_are_valid(path):
    """Every file in examples/ is a valid config or scan plan (validated, not solved)."""
    data = tomllib.loads(path.read_text(encoding="utf-8"))
    if "axes" in data:
        assert units(plan_from_dict(data))
    else:
        config.resolve(config.from_dict(data))


def test_documents_name_only_shipped_example_files():
    """A path examples/NAME in a document names a file that is in the repository."""
    import re

    missing = [f"{doc.relative_to(dx.ROOT)}: {name}" for doc in [*dx.documents(), dx.ROOT / "DEVELOPERS.md"]
               for name in re.findall(r"\bexamples/[\w.-]+\.\w+", doc.read_text(encoding="utf-8"))
               if not (dx.ROOT / name).exists()]
    assert not missing, missing
