"""A user's files are safe: outputs write only their own files, atomically, with the umask's modes,
and every operating-system failure is one line with exit status 2 and nothing left behind.

Read-only and full filesystems are real where the test may mount a tmpfs (root on Linux) and
injected otherwise; /proc is a special filesystem every Linux machine has.
"""

from __future__ import annotations

import contextlib
import errno
import os
import subprocess
import sys
from pathlib import Path

import pytest

import relbasis.outputs as outputs
from relbasis.cli import main
from relbasis.errors import InputError
from relbasis.outputs import MANIFEST

SMALL = ["--z", "10", "--nucleus", "point", "--size", "30", "--kappas", "-1"]
PLAN = """[base.ion]
Z = 10
nucleus = "point"
[base.basis]
size = 30
[axes]
"basis.order" = [8, 9]
[track]
states = ["1s1/2"]
target = 1e-6
"""


def _tree(root: Path) -> dict[str, tuple[int, bytes]]:
    """Every file under root with its mode and content (directories with their mode)."""
    out = {}
    for p in sorted(root.rglob("*")):
        rel = str(p.relative_to(root))
        out[rel] = (p.stat().st_mode & 0o7777, p.read_bytes() if p.is_file() else b"")
    return out


def _foreign(root: Path) -> None:
    """A working folder as a user has it: a thesis, notes, a results file of their own."""
    (root / "thesis.tex").write_text("\\section{Results}\n")
    (root / "notes").mkdir()
    (root / "notes" / "todo.txt").write_text("check 2p3/2\n")
    (root / "basis-mine.h5").write_bytes(b"\x89HDF\r\n\x1a\n not really")
    os.chmod(root / "thesis.tex", 0o640)


def _one_line_error(capsys) -> str:
    cap = capsys.readouterr()
    err = cap.err
    assert "Traceback" not in err and "Traceback" not in cap.out
    lines = err.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("error: "), err
    return lines[0]


# ----------------------------------------------------------------------------- foreign files


def test_report_scan_and_export_leave_foreign_files_untouched(tmp_path, capsys, monkeypatch):
    work = tmp_path / "work"
    work.mkdir()
    _foreign(work)
    mode = work.stat().st_mode & 0o7777
    before = _tree(work)
    (tmp_path / "plan.toml").write_text(PLAN)
    monkeypatch.chdir(work)
    assert main(["audit", *SMALL, "--report", "."]) == 0
    assert main(["audit", *SMALL, "--report", ".", "--force"]) == 0
    assert main(["audit", *SMALL, "--report", str(work), "--force"]) == 0
    assert main(["scan", str(tmp_path / "plan.toml"), "--out", str(work), "--quiet"]) == 0
    assert main(["scan", str(tmp_path / "plan.toml"), "--out", str(work), "--quiet"]) == 0  # resumed
    assert main(["export", *SMALL, "--out", str(work / "basis.h5")]) == 0
    assert main(["export", *SMALL, "--out", str(work / "basis.h5"), "--force"]) == 0
    assert main(["export", *SMALL, "--out", str(work / "basis.npz"), "--force"]) == 0
    capsys.readouterr()
    after = _tree(work)
    for name, value in before.items():
        assert after[name] == value, name
    assert work.stat().st_mode & 0o7777 == mode
    assert not [p for p in tmp_path.iterdir() if p.name not in ("work", "plan.toml")]  # nothing beside it
    assert not [p for p in work.iterdir() if p.name.endswith(".part") or ".old." in p.name]


@pytest.mark.parametrize("command, name", [
    (["audit", *SMALL, "--report", "{d}", "--force"], "audit.json"),
    (["audit", *SMALL, "--report", "{d}", "--force"], "spectrum.png"),
    (["scan", "{plan}", "--out", "{d}", "--quiet"], "summary.json"),
    (["scan", "{plan}", "--out", "{d}", "--quiet"], "results.jsonl"),
    (["scan", "{plan}", "--out", "{d}", "--quiet"], "error_1s1_2.png"),
    (["export", *SMALL, "--out", "{d}/basis.h5", "--force"], "basis.h5"),
    (["export", *SMALL, "--out", "{d}/basis.npz", "--force"], "basis.json"),
    (["export", *SMALL, "--out", "{d}/basis.npz", "--force"], "basis.npz"),
])
def test_a_foreign_file_under_an_output_name_is_never_replaced(tmp_path, capsys, command, name):
    d = tmp_path / "d"
    d.mkdir()
    (d / name).write_text("the user's own\n")
    (tmp_path / "plan.toml").write_text(PLAN)
    before = _tree(d)
    argv = [a.format(d=d, plan=tmp_path / "plan.toml") for a in command]
    assert main(argv) == 2
    line = _one_line_error(capsys)
    assert "did not write" in line or "not written by relbasis" in line
    assert _tree(d) == before


def test_a_damaged_manifest_is_refused_not_overwritten(tmp_path, capsys):
    (tmp_path / MANIFEST).write_text("{not json")
    assert main(["audit", *SMALL, "--report", str(tmp_path)]) == 2
    assert MANIFEST in _one_line_error(capsys)
    assert (tmp_path / MANIFEST).read_text() == "{not json"


def test_an_earlier_report_is_replaced_only_with_force(tmp_path, capsys):
    rep = tmp_path / "rep"
    assert main(["audit", *SMALL, "--report", str(rep)]) == 0
    stamp = (rep / "audit.json").stat().st_mtime_ns
    assert main(["audit", *SMALL, "--report", str(rep)]) == 2
    assert "--force" in _one_line_error(capsys)
    assert (rep / "audit.json").stat().st_mtime_ns == stamp


# ----------------------------------------------------------------------------- modes


@pytest.mark.parametrize("mask", [0o022, 0o027, 0o077])
def test_modes_follow_the_umask(tmp_path, capsys, mask):
    old = os.umask(mask)
    try:
        assert main(["export", *SMALL, "--out", str(tmp_path / "b.h5")]) == 0
        assert main(["export", *SMALL, "--out", str(tmp_path / "b.npz")]) == 0
        assert main(["audit", *SMALL, "--report", str(tmp_path / "rep")]) == 0
        (tmp_path / "plan.toml").write_text(PLAN)
        assert main(["scan", str(tmp_path / "plan.toml"), "--out", str(tmp_path / "scan"), "--quiet"]) == 0
    finally:
        os.umask(old)
    capsys.readouterr()
    files = [tmp_path / "b.h5", tmp_path / "b.npz", tmp_path / "b.json", *(tmp_path / "rep").iterdir(),
             *(tmp_path / "scan").iterdir()]
    for f in files:
        assert f.stat().st_mode & 0o777 == 0o666 & ~mask, f
    for d in (tmp_path / "rep", tmp_path / "scan"):
        assert d.stat().st_mode & 0o777 == 0o777 & ~mask, d


# ----------------------------------------------------------------------------- atomic writes


@pytest.mark.parametrize("failure", [KeyboardInterrupt, OSError(errno.EIO, "I/O error"), RuntimeError("bug")])
def test_a_failed_write_leaves_the_old_file_and_no_temporary(tmp_path, failure):
    target = tmp_path / "f.txt"
    target.write_text("old")

    def write(tmp):
        Path(tmp).write_text("half")
        raise failure

    with pytest.raises((KeyboardInterrupt, InputError, RuntimeError)):
        outputs.atomic_write(target, write)
    assert target.read_text() == "old"
    assert [p.name for p in tmp_path.iterdir()] == ["f.txt"]


def test_a_failed_group_write_changes_none_of_its_files(tmp_path):
    a, b = tmp_path / "a", tmp_path / "b"
    a.write_text("old a")

    def fail(tmp):
        raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))

    with pytest.raises(InputError, match="ENOSPC"):
        outputs.atomic_group([(a, lambda tmp: Path(tmp).write_text("new a")), (b, fail)])
    assert a.read_text() == "old a" and not b.exists()
    assert sorted(p.name for p in tmp_path.iterdir()) == ["a"]


def test_temporary_names_are_unique(tmp_path):
    """Two writers into one folder never share a temporary file (scans used a fixed name)."""
    seen = []

    def write(tmp):
        seen.append(tmp)
        if len(seen) == 1:
            outputs.atomic_text(tmp_path / "x.txt", "inner")
        Path(tmp).write_text("outer")

    outputs.atomic_write(tmp_path / "x.txt", write)
    assert (tmp_path / "x.txt").read_text() == "outer"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["x.txt"]


# ----------------------------------------------------------------------------- hostile places


def _mount_tmpfs(where: Path, size: str = "64k") -> bool:
    where.mkdir()
    if sys.platform != "linux" or os.geteuid() != 0:
        return False
    done = subprocess.run(["mount", "-t", "tmpfs", "-o", f"size={size}", "tmpfs", str(where)],
                          capture_output=True, check=False)
    return done.returncode == 0


def _umount(where: Path) -> None:
    subprocess.run(["umount", "-l", str(where)], capture_output=True, check=False)


@contextlib.contextmanager
def _tmpfs(where: Path):
    """A small tmpfs mounted at ``where`` for the test, or a skip where none can be mounted."""
    if not _mount_tmpfs(where):
        pytest.skip("cannot mount a tmpfs here (needs root on Linux); the injected cases cover this")
    try:
        yield where
    finally:
        _umount(where)


@pytest.fixture
def full_fs(tmp_path):
    """A real filesystem with no space left (a tmpfs filled by a file of the user's)."""
    with _tmpfs(tmp_path / "full") as mnt:
        fd = os.open(mnt / "filler.bin", os.O_WRONLY | os.O_CREAT)
        try:
            while os.write(fd, b"\0" * 4096):
                pass
        except OSError:
            pass
        finally:
            os.close(fd)
        yield mnt


@pytest.fixture
def readonly_fs(tmp_path):
    """A real read-only filesystem holding one file of the user's."""
    with _tmpfs(tmp_path / "ro") as mnt:
        (mnt / "data.txt").write_text("kept")
        done = subprocess.run(["mount", "-o", "remount,ro", str(mnt)], capture_output=True, check=False)
        if done.returncode != 0:
            pytest.skip("cannot remount read-only here")
        yield mnt


COMMANDS = {
    "export-h5": lambda d, plan: ["export", *SMALL, "--out", f"{d}/b.h5"],
    "export-npz": lambda d, plan: ["export", *SMALL, "--out", f"{d}/b.npz"],
    "export-force": lambda d, plan: ["export", *SMALL, "--out", f"{d}/b.h5", "--force"],
    "report": lambda d, plan: ["audit", *SMALL, "--report", f"{d}/rep"],
    "report-here": lambda d, plan: ["audit", *SMALL, "--report", f"{d}", "--force"],
    "scan": lambda d, plan: ["scan", plan, "--out", f"{d}/scan", "--quiet"],
    "scan-here": lambda d, plan: ["scan", plan, "--out", f"{d}", "--quiet"],
}


def _run_hostile(capsys, tmp_path, d: Path, command: str, inspect: bool = True) -> str:
    plan = tmp_path / "plan.toml"
    plan.write_text(PLAN)
    before = _tree(d) if d.is_dir() and inspect else None
    assert main(COMMANDS[command](d, str(plan))) == 2
    line = _one_line_error(capsys)
    if before is not None:
        assert _tree(d) == before  # nothing half-written, no stray temporary
    return line


@pytest.mark.parametrize("command", sorted(COMMANDS))
def test_full_filesystem(tmp_path, capsys, full_fs, command):
    assert "ENOSPC" in _run_hostile(capsys, tmp_path, full_fs, command)


@pytest.mark.parametrize("command", sorted(COMMANDS))
def test_read_only_filesystem(tmp_path, capsys, readonly_fs, command):
    assert "EROFS" in _run_hostile(capsys, tmp_path, readonly_fs, command)


@pytest.mark.parametrize("command", sorted(COMMANDS))
def test_special_filesystem(tmp_path, capsys, command):
    if not Path("/proc/self").is_dir():
        pytest.skip("no /proc here")
    _run_hostile(capsys, tmp_path, Path("/proc"), command, inspect=False)
    assert not [p for p in ("b.h5", "b.npz", "b.json", "rep", "scan", "audit.json", MANIFEST) if (Path("/proc") / p).exists()]


@pytest.mark.parametrize("command", sorted(COMMANDS))
def test_a_file_in_the_way_of_the_path(tmp_path, capsys, command):
    blocker = tmp_path / "blocker"
    blocker.write_text("a file, not a directory")
    _run_hostile(capsys, tmp_path, blocker, command)
    assert blocker.read_text() == "a file, not a directory"


@pytest.mark.parametrize("command", ["export-h5", "export-npz", "report"])
def test_a_missing_directory(tmp_path, capsys, command):
    line = _run_hostile(capsys, tmp_path, tmp_path / "missing", command)
    assert "does not exist" in line
    assert not (tmp_path / "missing").exists()


@pytest.mark.parametrize("code", [errno.EACCES, errno.EPERM, errno.ENOSPC, errno.EDQUOT, errno.EROFS, errno.EIO])
@pytest.mark.parametrize("command", sorted(COMMANDS))
def test_injected_failures_at_the_first_write(tmp_path, capsys, monkeypatch, command, code):
    """Permission, immutable directory, full disk, quota, read-only, I/O: as the kernel reports them."""
    d = tmp_path / "d"
    d.mkdir()
    (d / "mine.txt").write_text("kept")

    def refuse(*args, **kwargs):
        raise OSError(code, os.strerror(code))

    monkeypatch.setattr(outputs.tempfile, "mkstemp", refuse)
    monkeypatch.setattr(os, "mkdir", refuse)
    import relbasis.scan.store

    monkeypatch.setattr(relbasis.scan.store.os, "open", refuse)
    line = _run_hostile(capsys, tmp_path, d, command)
    assert errno.errorcode[code] in line


@pytest.mark.parametrize("command", ["export-h5", "export-npz", "report", "scan"])
def test_injected_failure_while_writing_leaves_nothing(tmp_path, capsys, monkeypatch, command):
    d = tmp_path / "d"
    d.mkdir()
    real = outputs.os.chmod

    def fail_after_writing(path, mode, *a, **k):  # the data is written; then the disk gives up
        if str(path).endswith(".part"):
            raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))
        return real(path, mode, *a, **k)

    monkeypatch.setattr(outputs.os, "chmod", fail_after_writing)
    _run_hostile(capsys, tmp_path, d, command)
    assert not [p for p in d.rglob("*") if p.name.endswith(".part")]


@pytest.mark.parametrize("address", ["notaurl", "tcp://", "tcp://host:99999", "http://host:8786", "host:port", ""])
def test_a_bad_scheduler_address_is_one_line(tmp_path, capsys, address):
    (tmp_path / "plan.toml").write_text(PLAN)
    assert main(["scan", str(tmp_path / "plan.toml"), "--out", str(tmp_path / "s"), "--scheduler", address]) == 2
    assert "--scheduler" in _one_line_error(capsys)
    assert not (tmp_path / "s").exists()


def test_a_real_process_prints_one_line_for_proc(tmp_path):
    """The whole program, not only main(): no traceback reaches the terminal."""
    done = subprocess.run([sys.executable, "-m", "relbasis", "export", *SMALL, "--out", "/proc/relbasis.h5"],
                          capture_output=True, text=True, cwd=tmp_path, check=False)
    assert done.returncode == 2
    assert len(done.stderr.strip().splitlines()) == 1 and "Traceback" not in done.stderr


def test_standard_output_on_a_full_disk_is_one_line(tmp_path):
    if not Path("/dev/full").exists():
        pytest.skip("no /dev/full here")
    with open("/dev/full", "w") as full:
        done = subprocess.run([sys.executable, "-m", "relbasis", "levels", *SMALL], stdout=full,
                              stderr=subprocess.PIPE, text=True, cwd=tmp_path, check=False)
    assert done.returncode == 2
    assert len(done.stderr.strip().splitlines()) == 1 and "ENOSPC" in done.stderr


@pytest.mark.parametrize("command", ["levels", "audit", "export", "scan"])
@pytest.mark.parametrize("path, says", [
    ("{tmp}", "is a directory"),
    ("/dev/null", "not a regular file"),
    ("/proc/self/mem", "EIO"),
    ("{tmp}/missing.toml", "not found"),
    ("{tmp}/binary.toml", "not UTF-8"),
])
def test_unreadable_inputs_are_one_line(tmp_path, capsys, command, path, says):
    if path.startswith("/") and not Path(path).exists():
        pytest.skip(f"no {path} here")
    (tmp_path / "binary.toml").write_bytes(b"\xff\xfe\x00Z = 92")
    argv = [command, path.format(tmp=tmp_path)]
    if command == "export":
        argv += ["--out", str(tmp_path / "b.h5")]
    if command == "scan":
        argv += ["--out", str(tmp_path / "s")]
    assert main(argv) == 2
    assert says in _one_line_error(capsys)
