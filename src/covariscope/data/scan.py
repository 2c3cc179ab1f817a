"""One streaming pass over a data file: its SHA-256 and, for text, its encoding.

The file is opened read-only, in binary mode, and read once in blocks; the
same blocks feed the hash and the encoding check, so a large CSV costs one
extra pass rather than two.
"""

from __future__ import annotations

import codecs
import hashlib
import os
from dataclasses import dataclass
from pathlib import Path

from covariscope.data.progress import Steps
from covariscope.errors import DataError

__all__ = ["BLOCK_SIZE", "FileScan", "scan_file"]

BLOCK_SIZE = 1 << 20
# The five byte values that cp1252 leaves undefined; a file holding any of
# them is read as latin-1, which maps every byte.
_CP1252_UNDEFINED = (b"\x81", b"\x8d", b"\x8f", b"\x90", b"\x9d")


@dataclass(frozen=True)
class FileScan:
    """What one pass over the bytes found.

    ``encoding`` is None unless the text check was asked for; it is one of
    ``"utf-8-sig"``, ``"utf-16"``, ``"utf-8"``, ``"cp1252"``, ``"latin-1"``.
    """

    sha256: str
    size: int
    head: bytes
    encoding: str | None
    #: text scans: the first zero byte (offset, 1-based line) outside a
    #: trailing run of zero bytes, and where that trailing run starts
    nul_at: tuple[int, int] | None = None
    nul_tail_from: int | None = None


class _Zeros:
    """Where zero bytes are in a stream of blocks: the first one inside the
    data, and the start of a run of them that ends the file (byte offsets;
    the line of the first is counted afterwards, only when there is one)."""

    def __init__(self) -> None:
        self.first: int | None = None
        self.tail_from: int | None = None

    def feed(self, block: bytes, offset: int) -> None:
        body = block.rstrip(b"\0")
        if body and self.tail_from is not None and self.first is None:
            # an earlier run of zeros turned out not to end the file
            self.first = self.tail_from
        if self.first is None and b"\0" in body:
            self.first = offset + body.index(b"\0")
        if len(body) < len(block):
            if body or self.tail_from is None:
                self.tail_from = offset + len(body)
        elif body:
            self.tail_from = None


def _line_of(path: Path, offset: int) -> int:
    """The 1-based line that holds byte ``offset``."""
    lines = 1
    with open(path, "rb") as handle:
        while offset > 0 and (block := handle.read(min(BLOCK_SIZE, offset))):
            lines += block.count(b"\n")
            offset -= len(block)
    return lines


def scan_file(path: Path, steps: Steps | None = None, *, text: bool = False) -> FileScan:
    """Hash ``path`` and, with ``text=True``, find the first encoding that fits.

    Parameters
    ----------
    path : Path
        The data file (opened read-only).
    steps : Steps or None
        Receives the fraction of bytes read; checked for cancellation.
    text : bool
        Also decide the text encoding: a byte-order mark wins; otherwise
        UTF-8 if every byte decodes, else cp1252, else latin-1.

    Examples
    --------
    >>> import tempfile, hashlib
    >>> with tempfile.TemporaryDirectory() as d:
    ...     p = Path(d) / "t.csv"
    ...     _ = p.write_bytes(b"a,b\\n1,2\\n")
    ...     scan_file(p, text=True).encoding
    'utf-8'
    """
    digest = hashlib.sha256()
    size = os.stat(path).st_size
    decoder = codecs.getincrementaldecoder("utf-8")()
    utf8_ok = True
    cp1252_ok = True
    head = b""
    done = 0
    zeros = _Zeros() if text else None
    with open(path, "rb") as handle:
        # read exactly the size found at the start: a file still being
        # written (or one that never ends) is reported, not followed
        while done < size and (block := handle.read(min(BLOCK_SIZE, size - done))):
            if not head:
                head = block[:65536]
            digest.update(block)
            if zeros is not None:
                zeros.feed(block, done)
            # plain ASCII (most data files) is valid in every candidate encoding
            if text and not (block.isascii() and not decoder.getstate()[0]):
                if utf8_ok:
                    try:
                        decoder.decode(block)
                    except UnicodeDecodeError:
                        utf8_ok = False
                if cp1252_ok and any(b in block for b in _CP1252_UNDEFINED):
                    cp1252_ok = False
            done += len(block)
            if steps is not None:
                steps.report(done / size if size else 1.0)
        if handle.read(1) or os.fstat(handle.fileno()).st_size != size or done != size:
            raise DataError(
                f"{path.name} changed while it was read (it was {size:,} bytes at the start); "
                "it may still be being written. Wait until it is complete, or copy it, and "
                "load it again."
            )
    if text and utf8_ok:
        try:
            decoder.decode(b"", final=True)
        except UnicodeDecodeError:
            utf8_ok = False
    encoding = None
    if text:
        encoding = _choose_encoding(head, utf8_ok, cp1252_ok)
    if zeros is None or head.startswith((codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE)):
        return FileScan(digest.hexdigest(), size, head, encoding)
    nul_at = None if zeros.first is None else (zeros.first, _line_of(path, zeros.first))
    return FileScan(digest.hexdigest(), size, head, encoding, nul_at, zeros.tail_from)


def _choose_encoding(head: bytes, utf8_ok: bool, cp1252_ok: bool) -> str:
    if head.startswith(codecs.BOM_UTF8):
        return "utf-8-sig"
    if head.startswith((codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE)):
        return "utf-16"
    if utf8_ok:
        return "utf-8"
    return "cp1252" if cp1252_ok else "latin-1"
