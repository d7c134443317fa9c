"""Looking at the inbox: which dropped files are complete and may be claimed.

A file is complete when it shows the same size and modification time at two scans in a
row (a file still being saved or copied keeps changing). Office lock and temporary files,
hidden files and sub-folders are passed over in silence; other file types are noted in
the log once. Claiming (a rename into a job folder) is the loop's job.
"""

from __future__ import annotations

import logging
import os
from collections import deque
from pathlib import Path

from converter.drop import folder as df


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
        self._told_other: set[str] = set()

    def scan(self) -> None:
        """Note each candidate's size and time; queue those unchanged since the last scan.

        Raises OSError when the inbox cannot be read.
        """
        current, present = self._candidates()
        self._told_other &= present
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
                    if kind == df.TAKE and entry.is_symlink():
                        kind = df.OTHER
                    if kind == df.OTHER:
                        self._tell_other(entry.name)
                    if kind != df.TAKE:
                        continue
                    st = entry.stat(follow_symlinks=False)
                except FileNotFoundError:
                    continue
                current[entry.name] = (st.st_size, st.st_mtime_ns)
        return current, present

    def _tell_other(self, name: str) -> None:
        if name not in self._told_other:
            self._told_other.add(name)
            self.log.info("%s: ignored (not a spreadsheet pertbook reads: %s)",
                          name, ", ".join(df.ACCEPTED_SUFFIXES))

    def taken(self, name: str) -> None:
        """``name`` was picked from ``ready``: it must look complete afresh next time."""
        self._seen.pop(name, None)

    def hold(self, name: str) -> None:
        """``name`` cannot be opened yet (its writer holds it): wait for a later scan."""
        self.waiting.add(name)
