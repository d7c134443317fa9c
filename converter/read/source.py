"""The input's bytes: only a regular file, opened without blocking, read once, bounded.

A named pipe (FIFO), a device (``/dev/zero``, also behind a symbolic link), a socket or a
folder is refused before anything is read from it, so the reader never waits on a writer
that never comes nor hashes an endless stream. The file is opened with ``O_NONBLOCK`` and
checked again on the open descriptor (``fstat``), so a FIFO swapped in between the check and
the opening cannot block either. At most the size limit is read; the SHA-256 is of exactly
the bytes that are then parsed (nothing reads the file a second time).
"""

from __future__ import annotations

import hashlib
import os
import stat
from dataclasses import dataclass
from pathlib import Path

from converter.read.limits import LimitExceeded, megabytes

#: Bytes read per call while loading a file.
BLOCK = 1 << 20


class NotAFile(Exception):
    """The path is missing or is not a regular file; the message says what it is."""

    def __init__(self, code: str, message: str):
        super().__init__(message)
        self.code = code


@dataclass(frozen=True)
class FileBytes:
    """A file's content and the SHA-256 of that content (FIPS 180-4, via hashlib)."""

    data: bytes
    sha256: str


def what_it_is(mode: int) -> str:
    """Plain words for a file type that is not a regular file.

    Examples
    --------
    >>> import stat
    >>> what_it_is(stat.S_IFIFO), what_it_is(stat.S_IFDIR)
    ('a named pipe (FIFO)', 'a folder')
    """
    if stat.S_ISDIR(mode):
        return "a folder"
    if stat.S_ISFIFO(mode):
        return "a named pipe (FIFO)"
    if stat.S_ISCHR(mode) or stat.S_ISBLK(mode):
        return "a device"
    if stat.S_ISSOCK(mode):
        return "a socket"
    return "not a regular file"


def check_regular(path: Path) -> os.stat_result:
    """``os.stat`` of ``path`` (following links) when it is a regular file, else NotAFile."""
    try:
        info = os.stat(path)
    except FileNotFoundError:
        if os.path.islink(path):
            raise NotAFile(
                "file-missing", f"{path} is a link to a file that does not exist"
            ) from None
        raise NotAFile("file-missing", f"file not found: {path}") from None
    except OSError as exc:
        raise NotAFile("unreadable", f"{path.name} cannot be opened: {exc.strerror}") from None
    if not stat.S_ISREG(info.st_mode):
        link = " (through a link)" if os.path.islink(path) else ""
        raise NotAFile("not-a-file", f"{path} is {what_it_is(info.st_mode)}{link}, not a file")
    return info


def read_bounded(path: Path, limit: int) -> FileBytes:
    """The bytes of the regular file ``path`` and their SHA-256, refusing more than ``limit``.

    Raises NotAFile (missing, not a regular file, no permission) or LimitExceeded (larger
    than ``limit`` bytes; nothing is hashed then, since only the bytes read are hashed).
    """
    check_regular(path)
    flags = os.O_RDONLY | getattr(os, "O_NONBLOCK", 0) | getattr(os, "O_CLOEXEC", 0)
    try:
        fd = os.open(path, flags)
    except OSError as exc:
        raise NotAFile("unreadable", f"{path.name} cannot be opened: {exc.strerror}") from None
    try:
        info = os.fstat(fd)
        if not stat.S_ISREG(info.st_mode):  # swapped for something else since the check
            raise NotAFile("not-a-file", f"{path} is {what_it_is(info.st_mode)}, not a file")
        if info.st_size > limit:
            raise _too_big(path, info.st_size, limit)
        chunks: list[bytes] = []
        total = 0
        while True:
            block = os.read(fd, min(BLOCK, limit + 1 - total))
            if not block:
                break
            chunks.append(block)
            total += len(block)
            if total > limit:  # the file grew while being read
                raise _too_big(path, total, limit)
    except OSError as exc:
        raise NotAFile("unreadable", f"{path.name} cannot be read: {exc.strerror}") from None
    finally:
        os.close(fd)
    data = b"".join(chunks)
    return FileBytes(data, hashlib.sha256(data).hexdigest())


def _too_big(path: Path, size: int, limit: int) -> LimitExceeded:
    return LimitExceeded(
        f"{path.name} is {megabytes(size)}, more than the {megabytes(limit)} pertbook reads "
        "(the file size limit)",
        "Remove what the schedule does not need (pictures, other sheets), or raise the limit "
        "with the environment variable PERTBOOK_MAX_FILE_MB.",
    )
