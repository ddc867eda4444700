"""Opening line files: plain or compressed (``.gz``, ``.bz2``, ``.xz``, ``.zip``), hashed in the
same pass as the read, and cut into blocks of whole lines for the record parser of
:mod:`specforce.io.linerecords`.
"""

from __future__ import annotations

import bz2
import gzip
import lzma
import os
import zipfile

from ..errors import LineRecordError


class _HashingReader:
    """A raw binary reader that feeds every byte it returns to a hash object."""

    def __init__(self, raw, hasher):
        self._raw = raw
        self._hasher = hasher

    def read(self, n=-1):
        data = self._raw.read(n)
        self._hasher.update(data)
        return data

    def readinto(self, buf):
        n = self._raw.readinto(buf)
        self._hasher.update(memoryview(buf)[:n])
        return n

    def readable(self):
        return True

    def finish(self):
        """Hash whatever the decompressor left unread (trailing bytes)."""
        while True:
            data = self._raw.read(1 << 20)
            if not data:
                break
            self._hasher.update(data)


def _open_streams(path, hasher=None):
    """Yield (display name, binary stream, file on disk) for a plain or compressed file.

    If ``hasher`` is given (a :mod:`hashlib` object), it receives the bytes of
    the file as stored on disk, in the same pass as the read. The file on disk
    (None for a zip member) tells how far a damaged file was read.
    """
    path = os.fspath(path)
    if not os.path.exists(path):
        raise FileNotFoundError(f"{path}: no such line file")
    low = path.lower()
    if low.endswith(".zip"):
        if hasher is not None:
            with open(path, "rb") as raw:
                for piece in iter(lambda: raw.read(1 << 22), b""):
                    hasher.update(piece)
        with zipfile.ZipFile(path) as zf:
            members = sorted(n for n in zf.namelist() if not n.endswith("/"))
            if not members:
                raise LineRecordError(f"{path}: the zip archive holds no files", path=path)
            for name in members:
                with zf.open(name) as fh:
                    yield f"{path}:{name}", fh, None
        return
    wrapper = {
        ".gz": lambda f: gzip.GzipFile(fileobj=f, mode="rb"),
        ".bz2": lambda f: bz2.BZ2File(f, "rb"),
        ".xz": lambda f: lzma.LZMAFile(f, "rb"),
    }
    with open(path, "rb") as raw:
        src = _HashingReader(raw, hasher) if hasher is not None else raw
        for suffix, cls in wrapper.items():
            if low.endswith(suffix):
                with cls(src) as fh:
                    yield path, fh, raw
                break
        else:
            yield path, src, raw
        if hasher is not None:
            src.finish()


def _iter_byte_blocks(stream, chunk_bytes):
    """Yield buffers of whole lines (each ending in LF) from a binary stream.

    Chunks are not copied: a line split between two reads is yielded on its own.
    """
    tail = b""
    while True:
        data = stream.read(chunk_bytes)
        if not data:
            break
        view = memoryview(data)
        first = data.find(b"\n")
        if first < 0:
            tail += data
            continue
        if tail:
            yield tail + data[: first + 1]
            view = view[first + 1 :]
            tail = b""
        last = data.rfind(b"\n")
        cut = last + 1 - (len(data) - len(view))
        if cut > 0:
            yield view[:cut]
        tail = data[last + 1 :]
    if tail:
        yield tail + b"\n"
