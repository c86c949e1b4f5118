"""The fenced code blocks of README.md and docs/*.md, and a runner that executes them as a reader would.

How a block is treated (DEVELOPERS.md, "Examples in the docs"):

- Shell blocks (fence without a language, or sh, bash, shell, console): every line that is not
  blank or a comment is a command; ``A && B`` is two commands, run in turn.  ``relbasis ...`` and
  ``python -m relbasis ...`` run ``relbasis.cli.main`` in-process (the console script and
  ``__main__`` call nothing else; tests/test_cli.py runs the real entry points);
  ``python scripts/NAME.py ...`` runs the repository's script in a subprocess.  A ``pip install``
  part is not run and is listed as such.  Any other command is an error: mark the block.
- A command whose trailing comment starts with ``exit status N`` must exit with N, every other
  command with 0; no command may print a traceback.
- Python blocks run as one script in a fresh namespace.
- TOML blocks are parsed and validated, not solved: a scan plan if they have ``[axes]``, else a
  config file (``relbasis.config.resolve``).
- ``<!-- not run: REASON -->`` on the line before the fence: the block is not run and is listed
  with REASON.  Blocks in another language (c pseudocode, ...) are listed too; ``text`` blocks
  (diagrams) are ignored.

Every block of one document runs in order in one fresh directory that holds a copy of the
repository's ``examples/``, as a reader working through the page in a new directory would.

Run as a script (``python tests/doc_examples.py --workdir DIR --results FILE DOC...``) it runs
the given documents, each in ``DIR/<document name>``, and writes a JSON list of step results to
FILE; tests/test_examples.py starts two of these in parallel.
"""

from __future__ import annotations

import argparse
import contextlib
import io
import json
import os
import re
import shlex
import shutil
import subprocess
import sys
import time
import traceback
from dataclasses import dataclass, field
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
SHELL = {"", "sh", "bash", "shell", "console"}
IGNORED = {"text"}
NOT_RUN = re.compile(r"<!--\s*not run:\s*(.*?)\s*-->")
EXIT_STATUS = re.compile(r"^exit status (\d+)\b")
OUTPUT_TAIL = 3000


def documents() -> list[Path]:
    """README.md and every docs/*.md, in a fixed order."""
    return [ROOT / "README.md", *sorted((ROOT / "docs").glob("*.md"))]


@dataclass(frozen=True)
class Block:
    """One fenced code block: its document, first line (the fence), language, text, and the
    reason given in a ``<!-- not run: ... -->`` marker on the line before, if any."""

    doc: Path
    line: int
    lang: str
    text: str
    not_run: str | None = None

    @property
    def where(self) -> str:
        return f"{self.doc.relative_to(ROOT)}:{self.line}"


def blocks(doc: Path) -> list[Block]:
    """Every fenced (```) block of a Markdown file."""
    lines = doc.read_text(encoding="utf-8").splitlines()
    out, i = [], 0
    while i < len(lines):
        m = re.match(r"^\s*```\s*([\w+-]*)\s*$", lines[i])
        if not m:
            i += 1
            continue
        j = i + 1
        while j < len(lines) and not lines[j].strip().startswith("```"):
            j += 1
        if j == len(lines):
            raise ValueError(f"{doc.relative_to(ROOT)}:{i + 1}: fence never closed")
        marker = NOT_RUN.search(lines[i - 1]) if i > 0 else None
        out.append(Block(doc, i + 1, m.group(1).lower(), "\n".join(lines[i + 1:j]) + "\n",
                         marker.group(1) if marker else None))
        i = j + 1
    return out


def split_comment(line: str) -> tuple[str, str]:
    """(command, comment): the comment starts at the first '#' outside quotes that begins a word."""
    quote = None
    for k, ch in enumerate(line):
        if quote:
            if ch == quote:
                quote = None
        elif ch in "'\"":
            quote = ch
        elif ch == "#" and (k == 0 or line[k - 1].isspace()):
            return line[:k].rstrip(), line[k + 1:].strip()
    return line.rstrip(), ""


@dataclass(frozen=True)
class Step:
    """One thing to run: a command (argv), a Python script or a TOML document."""

    where: str
    kind: str                     # "relbasis" | "script" | "python" | "toml"
    text: str                     # as printed in the document
    argv: tuple[str, ...] = ()
    expected: int = 0


@dataclass
class Plan:
    steps: list[Step] = field(default_factory=list)
    skipped: list[tuple[str, str]] = field(default_factory=list)   # (where, reason)
    problems: list[str] = field(default_factory=list)               # blocks that cannot be run


def _shell_lines(text: str) -> list[tuple[int, str]]:
    """(offset, line) of each command, joining backslash continuations."""
    out, pending, start = [], "", 0
    for k, raw in enumerate(text.splitlines()):
        if not pending:
            start = k
        if raw.rstrip().endswith("\\"):
            pending += raw.rstrip()[:-1] + " "
            continue
        line, pending = pending + raw, ""
        if line.strip() and not line.lstrip().startswith("#"):
            out.append((start, line.strip()))
    return out


def plan(doc: Path) -> Plan:
    """What would be run for one document, what is skipped and why, and what cannot be run."""
    p = Plan()
    for b in blocks(doc):
        if b.not_run is not None:
            p.skipped.append((b.where, f"marked not run: {b.not_run}" if b.not_run else "marked not run"))
            if not b.not_run:
                p.problems.append(f"{b.where}: a not-run marker must give its reason")
        elif b.lang in IGNORED:
            continue
        elif b.lang == "python":
            p.steps.append(Step(b.where, "python", b.text))
        elif b.lang == "toml":
            p.steps.append(Step(b.where, "toml", b.text))
        elif b.lang in SHELL:
            for offset, line in _shell_lines(b.text):
                where = f"{b.doc.relative_to(ROOT)}:{b.line + 1 + offset}"
                command, comment = split_comment(line)
                m = EXIT_STATUS.match(comment)
                expected = int(m.group(1)) if m else 0
                try:
                    words = shlex.split(command)
                except ValueError as err:
                    p.problems.append(f"{where}: cannot parse {line!r}: {err}")
                    continue
                parts, cur = [], []
                for w in words:
                    if w == "&&":
                        parts.append(cur)
                        cur = []
                    else:
                        cur.append(w)
                parts.append(cur)
                for k, argv in enumerate(parts):
                    last = k == len(parts) - 1
                    text = shlex.join(argv)
                    if argv[:2] == ["pip", "install"]:
                        p.skipped.append((where, f"not run: {text} (installs packages)"))
                    elif argv[:1] == ["relbasis"]:
                        p.steps.append(Step(where, "relbasis", text, tuple(argv[1:]), expected if last else 0))
                    elif argv[:3] == ["python", "-m", "relbasis"]:
                        p.steps.append(Step(where, "relbasis", text, tuple(argv[3:]), expected if last else 0))
                    elif argv[:1] == ["python"] and len(argv) > 1 and argv[1].startswith("scripts/"):
                        p.steps.append(Step(where, "script", text, tuple(argv[1:]), expected if last else 0))
                    else:
                        p.problems.append(f"{where}: {text!r} is not a relbasis command; mark the block "
                                          f"<!-- not run: REASON --> or make it one")
        else:
            p.skipped.append((b.where, f"not run: a {b.lang} block"))
    return p


# ---------------------------------------------------------------------------------------------
# running


def _run_cli(argv) -> tuple[int, str]:
    from relbasis import cli

    out = io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(out):
        try:
            status = cli.main(list(argv))
        except SystemExit as exc:       # argparse: --help, usage errors
            status = exc.code if isinstance(exc.code, int) else (0 if exc.code is None else 1)
        except BaseException:           # noqa: BLE001 - a traceback is what the check is for
            traceback.print_exc(file=out)
            status = 1
    return int(status or 0), out.getvalue()


def _run_python(text: str, where: str) -> tuple[int, str]:
    out = io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(out):
        try:
            exec(compile(text, where, "exec"), {"__name__": "__main__"})  # noqa: S102 - our own docs
            status = 0
        except SystemExit as exc:
            status = exc.code if isinstance(exc.code, int) else (0 if exc.code is None else 1)
        except BaseException:           # noqa: BLE001
            traceback.print_exc(file=out)
            status = 1
    return status, out.getvalue()


def _run_script(argv) -> tuple[int, str]:
    script = ROOT / argv[0]
    proc = subprocess.run([sys.executable, str(script), *argv[1:]], capture_output=True, text=True,
                          timeout=600, env=_env())
    return proc.returncode, proc.stdout + proc.stderr


def _check_toml(text: str) -> tuple[int, str]:
    import tomllib

    from relbasis import config
    from relbasis.errors import InputError
    from relbasis.scan import plan_from_dict, units

    try:
        data = tomllib.loads(text)
        if "axes" in data:
            what = f"a scan plan of {len(units(plan_from_dict(data)))} units"
        else:
            config.resolve(config.from_dict(data))
            what = "a valid config"
    except (InputError, tomllib.TOMLDecodeError) as err:
        return 2, f"error: {err}"
    return 0, what


def _env() -> dict:
    env = dict(os.environ)
    env["PYTHONPATH"] = os.pathsep.join([str(ROOT), *filter(None, [env.get("PYTHONPATH")])])
    return env


def _cpu() -> float:
    """CPU seconds of this process and its finished children (the wall clock misleads on a busy machine)."""
    t = os.times()
    return t.user + t.system + t.children_user + t.children_system


def run_step(step: Step) -> dict:
    t0, c0 = time.perf_counter(), _cpu()
    if step.kind == "relbasis":
        status, output = _run_cli(step.argv)
    elif step.kind == "script":
        status, output = _run_script(step.argv)
    elif step.kind == "python":
        status, output = _run_python(step.text, step.where)
    else:
        status, output = _check_toml(step.text)
    problem = None
    if "Traceback (most recent call last)" in output:
        problem = "printed a traceback"
    elif status != step.expected:
        problem = f"exit status {status}, the document says {step.expected}"
    return {"where": step.where, "kind": step.kind, "text": step.text.strip(), "expected": step.expected,
            "status": status, "seconds": round(time.perf_counter() - t0, 3),
            "cpu_seconds": round(_cpu() - c0, 3), "problem": problem,
            "output": output[-OUTPUT_TAIL:]}


def run_document(doc: Path, workdir: Path) -> list[dict]:
    """Run every step of one document, in order, in workdir (made fresh, with examples/ copied in)."""
    if workdir.exists():
        shutil.rmtree(workdir)
    workdir.mkdir(parents=True)
    shutil.copytree(ROOT / "examples", workdir / "examples")
    here = os.getcwd()
    os.chdir(workdir)
    try:
        return [run_step(s) for s in plan(doc).steps]
    finally:
        os.chdir(here)


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description="run the examples of the given documents")
    ap.add_argument("--workdir", required=True, help="each document runs in WORKDIR/<its name>")
    ap.add_argument("--results", required=True, help="JSON file for the step results")
    ap.add_argument("docs", nargs="+")
    args = ap.parse_args(argv)
    sys.path.insert(0, str(ROOT))
    os.environ["PYTHONPATH"] = _env()["PYTHONPATH"]
    results = []
    for d in args.docs:
        doc = Path(d).resolve()
        results.extend(run_document(doc, Path(args.workdir).resolve() / doc.stem))
    Path(args.results).write_text(json.dumps(results, indent=1))
    return 0


if __name__ == "__main__":
    sys.exit(main())
