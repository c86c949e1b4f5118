"""Writing files without losing any: atomic replacement, a record of what relbasis wrote, modes
from the umask, and every operating-system failure as one line.

Three rules hold for every file relbasis writes (exported bases, audit reports, scan folders):

1. **Atomic.** A file is written under a unique temporary name in its own directory
   (:func:`tempfile.mkstemp`) and renamed over the target with :func:`os.replace`, which POSIX
   makes atomic within one filesystem; the temporary file is removed on every failure path, so
   an interrupted or failed run leaves the old file or the new one, never half of either.
2. **Only our own files.** An existing target is replaced only when the caller says so
   (``force``), and even then only if relbasis itself wrote it: a directory records the names
   it holds from relbasis in a manifest (:data:`MANIFEST`), a single file carries its own
   marker (the exporter checks the ``format`` attribute). Foreign files are never touched.
3. **Shareable.** New files get mode ``0o666 & ~umask`` and new directories ``0o777 & ~umask``,
   as files made by ``open()`` and ``mkdir`` would; :func:`tempfile.mkstemp` alone would give
   0600.

An :class:`OSError` (permission, read-only or full filesystem, missing or non-directory parent,
special filesystems such as /proc) becomes an :class:`~relbasis.errors.InputError` of one line
that names the path, the reason and what to do.
"""

from __future__ import annotations

import errno
import json
import os
import tempfile
from collections.abc import Callable, Iterable
from contextlib import contextmanager
from pathlib import Path

from .errors import InputError, option

MANIFEST = ".relbasis-manifest.json"
"""Name of the record, in an output directory, of the files relbasis wrote there."""

_ADVICE = {
    errno.ENOSPC: "free some space or choose another place",
    errno.EDQUOT: "free some space or choose another place",
    errno.EROFS: "choose a writable directory",
    errno.EACCES: "choose a directory you may write to",
    errno.EPERM: "choose a directory you may write to (is it immutable or append-only?)",
    errno.ENOENT: "create the directory first or correct the path",
    errno.ENOTDIR: "a part of the path is a file, not a directory",
    errno.EISDIR: "give a file name, not a directory",
    errno.EBUSY: "choose another path",
    errno.ENAMETOOLONG: "choose a shorter path",
    errno.EXDEV: "choose a path on one filesystem",
}


def umask() -> int:
    """The process's file-creation mask (read without changing it for long)."""
    mask = os.umask(0o022)
    os.umask(mask)
    return mask


def os_reason(err: OSError) -> str:
    """Why an operating-system call failed and what would help, e.g. "no space left on device
    (ENOSPC); free some space or choose another place"."""
    # os.strerror, not err.strerror: libraries such as HDF5 put pages of detail there
    reason = os.strerror(err.errno) if err.errno else (str(err).splitlines() or [type(err).__name__])[0]
    code = errno.errorcode.get(err.errno, "") if err.errno is not None else ""
    advice = _ADVICE.get(err.errno, "check the path and the filesystem")
    return f"{reason.lower()}{f' ({code})' if code else ''}; {advice}"


def os_failure(err: OSError, action: str, path) -> InputError:
    """One line for an operating-system failure: what, where, why, and what would help."""
    return InputError(f"cannot {action} {str(path)!r}: {os_reason(err)}")


def _remove(path) -> None:
    try:
        os.unlink(path)
    except FileNotFoundError:
        pass
    except OSError:  # nothing more can be done; the error being raised says what went wrong
        pass


def atomic_write(path, write: Callable[[str], None], what: str = "write") -> Path:
    """Write ``path`` through ``write(temporary_name)`` and rename it into place.

    The temporary file lives beside the target with a unique name (two runs writing into one
    directory never collide); on any failure, including KeyboardInterrupt, it is removed and
    the target is left as it was (:func:`atomic_group` of one file).
    """
    atomic_group([(Path(path), write)], what)
    return Path(path)


def atomic_text(path, text: str, what: str = "write") -> Path:
    """:func:`atomic_write` of a UTF-8 text."""
    return atomic_write(path, lambda tmp: Path(tmp).write_text(text, encoding="utf-8"), what)


def atomic_group(items: Iterable[tuple[Path, Callable[[str], None]]], what: str = "write") -> None:
    """Write several files, then rename them all: a failure while writing leaves none of them.

    The renames themselves cannot fail for lack of space (they write no data), so a full disk
    or a permission problem is found before any target changes.
    """
    staged: list[tuple[str, Path]] = []
    try:
        for path, write in items:
            path = Path(path)
            try:
                fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".part", dir=path.parent)
            except OSError as err:
                raise os_failure(err, what, path) from None
            os.close(fd)
            staged.append((tmp, path))
            try:
                write(tmp)
                os.chmod(tmp, 0o666 & ~umask())
            except OSError as err:
                raise os_failure(err, what, path) from None
        while staged:
            tmp, path = staged[0]
            try:
                os.replace(tmp, path)
            except OSError as err:
                raise os_failure(err, what, path) from None
            staged.pop(0)
    finally:
        for tmp, _ in staged:
            _remove(tmp)


# ----------------------------------------------------------------------------- inputs

MAX_INPUT_BYTES = 10 * 2**20
"""Largest config or plan file read (10 MiB; real ones are a few hundred bytes)."""


def checked_path(path, what: str) -> Path:
    """``path`` as a Path, or a one-line InputError when it is no path (a number, None, a list)."""
    if not isinstance(path, (str, os.PathLike)):
        raise InputError(f"{what}: give a path (str or pathlib.Path), not {type(path).__name__} {_short(path)}")
    return Path(path)


def _short(value) -> str:
    text = repr(value)
    return text if len(text) <= 40 else text[:37] + "..."


def read_input(path, what: str) -> str:
    """The text of a small input file (a config, a plan), or a one-line error saying why not:
    no path at all, missing, a directory, not a regular file (a device, a pipe), too large,
    unreadable, not UTF-8."""
    p = checked_path(path, what)
    if not p.exists():
        raise InputError(f"{what} {str(p)!r} not found")
    if p.is_dir():
        raise InputError(f"{what} {str(p)!r} is a directory: give a TOML file")
    if not p.is_file():
        raise InputError(f"{what} {str(p)!r} is not a regular file: give a TOML file")
    try:
        if p.stat().st_size > MAX_INPUT_BYTES:
            raise InputError(f"{what} {str(p)!r} is larger than {MAX_INPUT_BYTES // 2**20} MiB: is it the right file?")
        return p.read_bytes().decode("utf-8")
    except UnicodeDecodeError:
        raise InputError(f"{what} {str(p)!r} is not UTF-8 text") from None
    except OSError as err:
        raise os_failure(err, f"read the {what}", p) from None


# ----------------------------------------------------------------------------- directories


def make_directory(path, what: str, parents: bool = False) -> Path:
    """Create ``path`` (mode from the umask) unless it is already a directory."""
    path = Path(path)
    if path.is_dir():
        return path
    if path.exists() or path.is_symlink():
        raise InputError(f"{what} {str(path)!r} is a file, not a directory: choose a directory")
    if not parents and not path.parent.is_dir():
        raise InputError(f"{what} {str(path)!r}: the parent directory {str(path.parent)!r} does not exist")
    try:
        path.mkdir(mode=0o777, parents=parents, exist_ok=True)  # mkdir applies the umask
    except OSError as err:
        raise os_failure(err, "create the directory", path) from None
    return path


@contextmanager
def directory_for(path, what: str, parents: bool = False):
    """:func:`make_directory` for the duration of a write: if the write fails and the directory
    was made for it, the directories made are removed again (only while empty)."""
    path = Path(path)
    missing = []
    p = path
    while not p.exists() and not p.is_symlink() and p != p.parent:
        missing.append(p)
        p = p.parent
    make_directory(path, what, parents)
    try:
        yield path
    except BaseException:
        for d in missing:  # deepest first
            try:
                d.rmdir()
            except OSError:
                break
        raise


def read_manifest(directory) -> dict[str, str]:
    """What relbasis wrote into ``directory``: {file name: kind of output}, empty if nothing.

    Several outputs may share a directory (an audit report and a scan, say); each name is
    recorded with the kind of output that wrote it.  A file of the manifest's name that is not
    a relbasis manifest (damaged, or someone else's) is refused: relbasis would otherwise
    overwrite it, and could not tell which files are its own.
    """
    p = Path(directory) / MANIFEST
    if not (p.exists() or p.is_symlink()):
        return {}
    try:
        data = json.loads(p.read_text(encoding="utf-8")) if p.is_file() and not p.is_symlink() else None
    except (OSError, ValueError):
        data = None
    if not isinstance(data, dict) or data.get("written_by") != "relbasis" or not isinstance(data.get("files"), dict):
        raise InputError(f"{str(p)!r} is not a record relbasis can read (damaged, or not relbasis's): relbasis "
                         f"cannot tell its own files there; move it away or choose another directory")
    return {name: kind for name, kind in data["files"].items()
            if isinstance(name, str) and isinstance(kind, str) and "/" not in name and name not in ("", ".", "..")}


def write_manifest(directory, kind: str, files: Iterable[str]) -> None:
    """Record (atomically) that an output of ``kind`` now consists of ``files`` in ``directory``;
    the records of other kinds of output there are kept."""
    from .version import __version__

    entries = {name: k for name, k in read_manifest(directory).items() if k != kind}
    entries.update({name: kind for name in files})
    doc = {"written_by": "relbasis", "relbasis_version": __version__,
           "note": "files relbasis wrote into this directory and may replace; it never touches any other",
           "files": dict(sorted(entries.items()))}
    atomic_text(Path(directory) / MANIFEST, json.dumps(doc, indent=1) + "\n")


def owned(directory, kind: str) -> set[str]:
    """The names in ``directory`` that an output of ``kind`` wrote."""
    return {name for name, k in read_manifest(directory).items() if k == kind}


def claim(directory, names: Iterable[str], kind: str, *, force: bool, what: str, replace_hint: str) -> set[str]:
    """Check that writing ``names`` into ``directory`` destroys nothing unasked; returns what
    ``kind`` wrote there before.

    A name that exists and is not recorded for this kind of output is a foreign file (or
    another output's): refused, with or without ``force``.  A name recorded for this kind is
    replaced only with ``force`` (``replace_hint`` says how).
    """
    directory = Path(directory)
    ours = owned(directory, kind)
    present = []
    for name in names:
        p = directory / name
        if not (p.exists() or p.is_symlink()):
            continue
        if name not in ours or p.is_symlink() or not p.is_file():
            raise InputError(f"{what} {str(directory)!r} holds a file {name!r} that relbasis did not write there: "
                             f"it is never replaced (not even with {option('force=True', '--force')}); move it or choose another directory")
        present.append(name)
    if present and not force:
        raise InputError(f"{what} {str(directory)!r} already holds {', '.join(present)} from an earlier run: "
                         f"{replace_hint}")
    return ours
