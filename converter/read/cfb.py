"""A small, bounded reader of OLE compound files (the container of .xls and of encrypted
Office documents): the names of its streams and the bytes of one stream.

Only what the reader needs: the directory (to tell an .xls workbook from a password-
protected Office file, whose streams are ``EncryptionInfo`` and ``EncryptedPackage``) and
the workbook stream (to find each sheet's extent before a spreadsheet library lays out its
cells). Every sector chain is followed at most once per sector, so a looped or damaged
chain ends with :class:`~converter.read.limits.Damaged`, never a hang.

References
----------
[MS-CFB] Compound File Binary File Format, Microsoft Open Specifications, sections 2.2
(header), 2.3 (FAT), 2.5 (mini FAT) and 2.6 (directory entries).
"""

from __future__ import annotations

import struct
import sys
from array import array

from converter.read.limits import Damaged

SIGNATURE = b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1"
_END = 0xFFFFFFFE
_FREE = 0xFFFFFFFF
_NO_STREAM = 0xFFFFFFFF


class CompoundFile:
    """The directory and streams of a compound file held in memory.

    Examples
    --------
    >>> CompoundFile(b"not one").names
    Traceback (most recent call last):
    ...
    converter.read.limits.Damaged: not an OLE compound file
    """

    def __init__(self, data: bytes):
        if len(data) < 512 or not data.startswith(SIGNATURE):
            raise Damaged("not an OLE compound file")
        self.data = data
        shift, mini_shift = struct.unpack_from("<HH", data, 0x1E)
        if shift not in (9, 12) or mini_shift != 6:
            raise Damaged("the OLE header gives an impossible sector size")
        self.size = 1 << shift
        self.mini_size = 1 << mini_shift
        (n_fat, first_dir, _, self.cutoff, first_mini_fat, n_mini_fat, first_difat, n_difat) = (
            struct.unpack_from("<IIIIIIII", data, 0x2C)
        )
        self.fat = self._read_fat(n_fat, first_difat, n_difat)
        self.entries = self._read_directory(first_dir)
        root = self.entries[0] if self.entries else None
        if root is None or root[1] != 5:
            raise Damaged("the OLE directory has no root entry")
        self.mini_stream = self._chain_bytes(root[2], root[3]) if root[3] else b""
        self.mini_fat = (
            self._ints(self._chain_bytes(first_mini_fat, None))
            if n_mini_fat and first_mini_fat != _END
            else array("I")
        )

    @property
    def names(self) -> list[str]:
        """The names of every storage and stream (not the root)."""
        return [e[0] for e in self.entries[1:] if e[1] in (1, 2)]

    def stream(self, name: str) -> bytes | None:
        """The bytes of the first stream called ``name`` (any letter case), or None."""
        for entry_name, kind, start, size in self.entries:
            if kind == 2 and entry_name.lower() == name.lower():
                if size < self.cutoff:
                    return self._chain_bytes(start, size, mini=True)
                return self._chain_bytes(start, size)
        return None

    # ------------------------------------------------------------------ internals
    def _sector(self, index: int) -> bytes:
        start = (index + 1) * self.size
        if index >= _END - 16 or start >= len(self.data):
            raise Damaged("an OLE sector lies outside the file")
        return self.data[start : start + self.size]

    @staticmethod
    def _ints(block: bytes) -> array:
        """Little-endian 32-bit integers (an array: 4 bytes each, whatever the file size)."""
        ints = array("I", block[: len(block) // 4 * 4])
        if sys.byteorder == "big":
            ints.byteswap()
        return ints

    def _read_fat(self, n_fat: int, first_difat: int, n_difat: int) -> array:
        most = len(self.data) // self.size + 1
        if n_fat > most or n_difat > most:
            raise Damaged("the OLE header counts more sectors than the file holds")
        sectors = [s for s in self._ints(self.data[0x4C:0x200]) if s < _END - 16]
        seen: set[int] = set()
        nxt = first_difat
        while nxt < _END - 16 and len(sectors) < n_fat:
            if nxt in seen:
                raise Damaged("the OLE sector list loops")
            seen.add(nxt)
            ints = self._ints(self._sector(nxt))
            sectors.extend(s for s in ints[:-1] if s < _END - 16)
            nxt = ints[-1]
        fat = array("I")
        for s in sectors[:n_fat]:
            fat.extend(self._ints(self._sector(s)))
        return fat

    def _chain(self, start: int, table) -> list[int]:
        chain: list[int] = []
        seen: set[int] = set()
        s = start
        while s not in (_END, _FREE):
            if s >= len(table) or s in seen:
                raise Damaged("an OLE sector chain is broken or loops")
            seen.add(s)
            chain.append(s)
            s = table[s]
        return chain

    def _chain_bytes(self, start: int, size: int | None, mini: bool = False) -> bytes:
        if mini:
            chain = self._chain(start, self.mini_fat)
            step = self.mini_size
            out = b"".join(self.mini_stream[i * step : (i + 1) * step] for i in chain)
        else:
            out = b"".join(self._sector(i) for i in self._chain(start, self.fat))
        if size is not None:
            if size > len(out):
                raise Damaged("an OLE stream is shorter than its directory entry says")
            out = out[:size]
        return out

    def _read_directory(self, first: int) -> list[tuple[str, int, int, int]]:
        raw = self._chain_bytes(first, None)
        entries = []
        for off in range(0, len(raw) - 127, 128):
            name_len, kind = struct.unpack_from("<HB", raw, off + 0x40)
            start, size = struct.unpack_from("<IQ", raw, off + 0x74)
            if kind == 0:
                entries.append(("", 0, 0, 0))
                continue
            name = raw[off : off + min(max(name_len - 2, 0), 62)].decode("utf-16-le", "replace")
            if self.size == 512:
                size &= 0xFFFFFFFF  # version 3 files: the high half may hold anything
            entries.append((name, kind, start, size))
        return entries
