"""A PDF to verify, read from a file object: never the whole file in memory.

A record handed over by someone else may be hostile and large (a 200 MB file is
easy to make). Everything that verifies it reads through a seekable file object:
pyHanko's reader seeks to the objects it needs and hashes the signed byte ranges in
chunks, the end-of-file search walks back from the end in chunks, and an embedded
file is decoded with a bound. ``benchmarks/bench_verify.py`` measures the peak memory.
"""

from __future__ import annotations

import contextlib
import io
import os
import zlib
from collections.abc import Iterator
from pathlib import Path
from typing import IO, Any

CHUNK = 1 << 20


class Window(io.RawIOBase):
    """The first ``size`` bytes of a seekable file object, as a file object of its own
    (the PDF up to an earlier end-of-file marker, when bytes were appended after it)."""

    def __init__(self, raw: IO[bytes], size: int):
        super().__init__()
        self._raw, self._size, self._pos = raw, size, 0

    def readable(self) -> bool:
        return True

    def seekable(self) -> bool:
        return True

    def tell(self) -> int:
        return self._pos

    def seek(self, offset: int, whence: int = os.SEEK_SET) -> int:
        base = {os.SEEK_SET: 0, os.SEEK_CUR: self._pos, os.SEEK_END: self._size}[whence]
        self._pos = max(0, base + offset)
        return self._pos

    def readinto(self, buffer: Any) -> int:
        want = min(len(buffer), max(0, self._size - self._pos))
        if want == 0:
            return 0
        self._raw.seek(self._pos)
        data = self._raw.read(want)
        buffer[:len(data)] = data
        self._pos += len(data)
        return len(data)

    def read(self, size: int = -1) -> bytes:
        if size is None or size < 0:
            size = max(0, self._size - self._pos)
        buf = bytearray(min(size, max(0, self._size - self._pos)))
        n = self.readinto(buf)
        return bytes(buf[:n])


def size_of(stream: IO[bytes]) -> int:
    here = stream.tell()
    end = stream.seek(0, os.SEEK_END)
    stream.seek(here)
    return end


def eof_markers(stream: IO[bytes], limit: int = 20) -> Iterator[int]:
    """Offsets just past each ``%%EOF`` (and its end-of-line), latest first, found by
    reading backwards in chunks."""
    marker = b"%%EOF"
    end = size_of(stream)
    found = 0
    pos = end
    while pos > 0 and found < limit:
        start = max(0, pos - CHUNK)
        stream.seek(start)
        # overlap so that a marker across two chunks is seen once
        block = stream.read(min(end, pos + len(marker) - 1) - start)
        hits = []
        at = block.find(marker)
        while at >= 0:
            if start + at < pos:
                hits.append(start + at)
            at = block.find(marker, at + 1)
        for hit in reversed(hits):
            cut = hit + len(marker)
            stream.seek(cut)
            tail = stream.read(2)
            for eol in (b"\r\n", b"\n", b"\r"):
                if tail.startswith(eol):
                    cut += len(eol)
                    break
            yield cut
            found += 1
            if found >= limit:
                return
        pos = start


@contextlib.contextmanager
def opened(source: Path | str | bytes | bytearray | memoryview | IO[bytes]) -> Iterator[IO[bytes]]:
    """A seekable binary file object for a path, bytes, or an open file (left open)."""
    if isinstance(source, bytes | bytearray | memoryview):
        yield io.BytesIO(bytes(source))
    elif isinstance(source, str | Path):
        from ..errors import UserError

        try:
            handle = open(source, "rb")  # noqa: SIM115 - closed below
        except OSError as exc:
            raise UserError(f"{source}: cannot read ({exc.strerror})") from None
        try:
            yield handle
        finally:
            handle.close()
    else:
        yield source


def read_stream_bounded(stream_obj: Any, limit: int) -> bytes:
    """The decoded data of a PDF stream, at most ``limit + 1`` bytes (so a caller sees
    that it is too large without the whole of it ever being decoded). Flate and no
    filter are decoded here with a bound; any other filter chain through pyHanko, whose
    decode limits bound it too."""
    filters = stream_obj.get("/Filter")
    if filters is not None and not isinstance(filters, list | tuple):
        filters = [filters]
    names = [str(f) for f in (filters or [])]
    raw = stream_obj.encoded_data
    if not names:
        return raw[: limit + 1]
    if names == ["/FlateDecode"] and "/DecodeParms" not in stream_obj:
        out = bytearray()
        d = zlib.decompressobj()
        for k in range(0, len(raw), CHUNK):
            out += d.decompress(raw[k:k + CHUNK], limit + 1 - len(out))
            if len(out) > limit or d.unconsumed_tail:
                return bytes(out[: limit + 1])
        return bytes(out)
    return stream_obj.data[: limit + 1]
