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
    with open(path, "rb") as handle:
        while block := handle.read(BLOCK_SIZE):
            if not head:
                head = block[:65536]
            digest.update(block)
            if text:
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
    if text and utf8_ok:
        try:
            decoder.decode(b"", final=True)
        except UnicodeDecodeError:
            utf8_ok = False
    encoding = None
    if text:
        encoding = _choose_encoding(head, utf8_ok, cp1252_ok)
    return FileScan(digest.hexdigest(), size, head, encoding)


def _choose_encoding(head: bytes, utf8_ok: bool, cp1252_ok: bool) -> str:
    if head.startswith(codecs.BOM_UTF8):
        return "utf-8-sig"
    if head.startswith((codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE)):
        return "utf-16"
    if utf8_ok:
        return "utf-8"
    return "cp1252" if cp1252_ok else "latin-1"
