"""Following a log file while a logger appends to it: new complete lines only, restarts on a new file.

The follower reads the bytes added since its last poll. A last line without its line end is held
back until the logger finishes it. A file that shrinks, is replaced by another file (a new inode)
or whose first bytes change has been started anew: the follower starts again from its first byte
and says so. Nothing here parses CSV; `measured_log.read_log` does that.
"""
from __future__ import annotations

import os
from dataclasses import dataclass, field
from pathlib import Path

from ..errors import ScenarioError
from .measured_log import MAX_LOG_BYTES

HEAD_BYTES = 64      # the first bytes of the file, compared at every poll to notice a rewrite


@dataclass(frozen=True)
class Poll:
    """What one poll found.

    lines : the new complete lines (without line ends), in file order.
    restart : None, or a sentence saying why the follower started again from the file's start.
    pending_bytes : bytes of a half-written last line held back.
    missing : True when the file does not exist (yet).
    """
    lines: list = field(default_factory=list)
    restart: str | None = None
    pending_bytes: int = 0
    missing: bool = False


class LogFollower:
    """Polls one file. State: where it has read to, the file's identity and its first bytes."""

    def __init__(self, path):
        self.path = Path(path)
        self._identity = None
        self._offset = 0          # bytes consumed, up to and including the last complete line
        self._partial = b""
        self._head = b""

    def poll(self) -> Poll:
        try:
            stat = os.stat(self.path)
        except FileNotFoundError:
            return Poll(missing=True)
        if not self.path.is_file():
            raise ScenarioError("log", str(self.path), "a regular file")
        identity = (stat.st_dev, stat.st_ino)
        restart = self._why_restart(identity, stat.st_size)
        if restart:
            self._offset, self._partial, self._head = 0, b"", b""
        self._identity = identity
        if stat.st_size - self._offset > MAX_LOG_BYTES:
            raise ScenarioError("log", f"{stat.st_size} bytes", f"a file of at most {MAX_LOG_BYTES} bytes (20 MB)")
        with open(self.path, "rb") as handle:
            self._head = handle.read(HEAD_BYTES)
            handle.seek(self._offset + len(self._partial))
            new = handle.read()
        data = self._partial + new
        end = data.rfind(b"\n") + 1
        complete, self._partial = data[:end], data[end:]
        self._offset += len(complete)
        return Poll(lines=_decode(complete, first=self._offset == len(complete)).splitlines(),
                    restart=restart, pending_bytes=len(self._partial))

    def _why_restart(self, identity, size) -> str | None:
        if self._identity is None:
            return None
        if identity != self._identity:
            return "the log file was replaced by a new one"
        if size < self._offset + len(self._partial):
            return "the log file was truncated"
        if self._head:
            with open(self.path, "rb") as handle:
                head = handle.read(len(self._head))
            if head != self._head[:len(head)]:
                return "the log file was rewritten from its start"
        return None


def _decode(data: bytes, first: bool) -> str:
    """Line by line UTF-8 (a byte-order mark at the file's start dropped); a line that is not UTF-8
    is read as Latin-1, which keeps digits."""
    if first and data.startswith(b"\xef\xbb\xbf"):
        data = data[3:]
    lines = []
    for line in data.split(b"\n"):
        try:
            lines.append(line.decode("utf-8"))
        except UnicodeDecodeError:
            lines.append(line.decode("latin-1"))
    return "\n".join(lines)
