"""Looking at the inbox: which dropped files are complete and may be claimed.

A file is complete when it shows the same size and modification time at two scans in a
row (a file still being saved or copied keeps changing). Office lock and temporary files,
hidden files and sub-folders are passed over in silence; other file types, symbolic links
and anything that is not a regular file (a named pipe, a socket, a device) are left where
they are and noted in the log once. The scan never opens a file: it asks only the folder
listing and ``lstat``, so nothing dropped can make it wait. Claiming (a rename into a job
folder) is the loop's job.
"""

from __future__ import annotations

import errno
import logging
import os
import stat
from collections import deque
from pathlib import Path

from converter.api import kind_of
from converter.drop import folder as df

BUSY, GONE = "busy", "gone"


def open_check(path: Path) -> str | None:
    """None if ``path`` is a regular file that opens and reads; else why not: :data:`BUSY`
    (it cannot be opened yet: a writer on Windows may hold a lock), :data:`GONE`, or what
    it is instead of a regular file (``"a named pipe (FIFO)"``, ``"a symbolic link"``).

    Never blocks: the kind is asked first without opening (``os.lstat``); the open itself
    is non-blocking and does not follow a symbolic link, and the opened file is checked
    again (``fstat``) in case the name was swapped in between.
    """
    try:
        st = os.lstat(path)
    except FileNotFoundError:
        return GONE
    except OSError:
        return BUSY
    if not stat.S_ISREG(st.st_mode):
        return kind_of(st.st_mode)
    flags = (
        os.O_RDONLY
        | getattr(os, "O_NONBLOCK", 0)
        | getattr(os, "O_NOFOLLOW", 0)
        | getattr(os, "O_BINARY", 0)
    )
    try:
        fd = os.open(path, flags)
    except FileNotFoundError:
        return GONE
    except OSError as exc:
        return "a symbolic link" if exc.errno == errno.ELOOP else BUSY
    try:
        st = os.fstat(fd)
        if not stat.S_ISREG(st.st_mode):
            return kind_of(st.st_mode)
        os.read(fd, 1)
    except OSError:
        return BUSY
    finally:
        os.close(fd)
    return None


class InboxScan:
    """The inbox as seen at the last scans.

    ``ready``: complete files in the order to claim them; ``waiting``: files seen but not
    yet complete (or held open by their writer); ``scans``: how many scans were made.
    """

    def __init__(self, inbox: Path, log: logging.Logger) -> None:
        self.inbox = inbox
        self.log = log
        self.ready: deque[str] = deque()
        self.waiting: set[str] = set()
        self.scans = 0
        self._seen: dict[str, tuple[int, int]] = {}
        self._told: set[str] = set()

    def scan(self) -> None:
        """Note each candidate's size and time; queue those unchanged since the last scan.

        Raises OSError when the inbox cannot be read.
        """
        current, present = self._candidates()
        self._told &= present
        queued = set(self.ready)
        ready = [n for n, sig in current.items() if self._seen.get(n) == sig and n not in queued]
        self.ready.extend(sorted(ready))
        self.waiting = {n for n in current if n not in ready and n not in queued}
        self._seen = current
        self.scans += 1

    def _candidates(self) -> tuple[dict[str, tuple[int, int]], set[str]]:
        """``({name: (size, mtime_ns)} of spreadsheets, every name present)``."""
        current: dict[str, tuple[int, int]] = {}
        present: set[str] = set()
        with os.scandir(self.inbox) as entries:
            for entry in entries:
                present.add(entry.name)
                try:
                    if entry.is_dir(follow_symlinks=False):
                        continue
                    kind = df.classify(entry.name, hidden=df.is_hidden(entry))
                    if kind == df.OTHER:
                        self.refuse(
                            entry.name,
                            "not a spreadsheet pertbook reads: " + ", ".join(df.ACCEPTED_SUFFIXES),
                        )
                    if kind != df.TAKE:
                        continue
                    st = entry.stat(follow_symlinks=False)
                except FileNotFoundError:
                    continue
                if not stat.S_ISREG(st.st_mode):
                    self.refuse(entry.name, kind_of(st.st_mode))
                    continue
                current[entry.name] = (st.st_size, st.st_mtime_ns)
        return current, present

    def refuse(self, name: str, why: str) -> None:
        """Leave ``name`` in the inbox; say why in the log, once while it stays there.

        ``why`` is a kind of file (``"a named pipe (FIFO)"``, from ``folder.kind_of``) or
        a reason in words.
        """
        self.waiting.discard(name)
        if name in self._told:
            return
        self._told.add(name)
        if why.startswith("a "):
            why = f"{why}, not a regular file: drop the file itself"
        self.log.info("%s: ignored (%s)", name, why)

    def taken(self, name: str) -> None:
        """``name`` was picked from ``ready``: it must look complete afresh next time."""
        self._seen.pop(name, None)

    def hold(self, name: str) -> None:
        """``name`` cannot be opened yet (its writer holds it): wait for a later scan."""
        self.waiting.add(name)
