"""The results store of a scan: an append-only JSON-lines file of finished units."""

from __future__ import annotations

import errno
import json
import os
from pathlib import Path

from ..outputs import os_failure


RECORD_FORMAT = 2  # part of every key: records of another layout are not reused


class Store:
    """Append-only JSON-lines file of finished units; a torn last line is ignored."""

    def __init__(self, path: Path):
        self.path = Path(path)

    def load(self) -> dict[str, dict]:
        out = {}
        if not self.path.exists():
            return out
        with self.path.open("r", encoding="utf-8") as fh:
            for line in fh:
                try:
                    rec = json.loads(line)
                except json.JSONDecodeError:
                    continue  # a line cut short by an interruption
                if isinstance(rec, dict) and "key" in rec:
                    out[rec["key"]] = rec
        return out

    def append(self, record: dict) -> None:
        """One os.write of one line with O_APPEND: the line lands whole, and once written it is in
        the kernel and survives the process being killed; :meth:`sync` flushes it to the disk.
        After a torn last line (a short write) the record starts on a line of its own, so that it
        is not glued to the torn one and lost with it."""
        data = (json.dumps(record, sort_keys=True) + "\n").encode()
        try:
            fd = os.open(self.path, os.O_RDWR | os.O_APPEND | os.O_CREAT, 0o666)  # the umask decides
            try:
                size = os.fstat(fd).st_size
                if size and os.pread(fd, 1, size - 1) != b"\n":
                    data = b"\n" + data
                if os.write(fd, data) != len(data):  # a short write: the disk is full; the torn line is ignored on reading
                    raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))
            finally:
                os.close(fd)
        except OSError as err:
            raise os_failure(err, "append to the scan results", self.path) from None

    def sync(self) -> None:
        if self.path.exists():
            try:
                fd = os.open(self.path, os.O_RDONLY)
                try:
                    os.fsync(fd)
                finally:
                    os.close(fd)
            except OSError as err:
                raise os_failure(err, "flush the scan results", self.path) from None
