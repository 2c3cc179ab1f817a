"""The single pass over a data file stops at the size it had, and finds zero
bytes that would silently cut a value short."""

from __future__ import annotations

import pytest

from covariscope.data import scan as scan_module
from covariscope.data.scan import scan_file
from covariscope.errors import DataError


def test_a_file_that_grows_while_read_is_reported(tmp_path, monkeypatch):
    path = tmp_path / "growing.csv"
    path.write_bytes(b"a,b\n" + b"1,2\n" * 1000)
    real_stat = scan_module.os.stat

    class Earlier:
        """The file's size as it was when the read began (smaller)."""

        def __init__(self, p):
            self._s = real_stat(p)
            self.st_size = self._s.st_size - 40

    monkeypatch.setattr(scan_module.os, "stat", lambda p: Earlier(p))
    with pytest.raises(DataError, match="changed while it was read"):
        scan_file(path)


@pytest.mark.parametrize(
    ("data", "nul_at", "tail_from"),
    [
        (b"a,b\n1,2\n", None, None),
        (b"a,b\n1,-1.22\x0016\n", (11, 2), None),
        (b"a,b\n1,2\n" + b"\0" * 10, None, 8),
        (b"a\n\0\0\n2\n" + b"\0" * 5, (2, 2), 7),
        (b"\0" * 3, None, 0),
    ],
)
def test_zero_bytes_inside_and_at_the_end(tmp_path, data, nul_at, tail_from):
    path = tmp_path / "t.csv"
    path.write_bytes(data)
    found = scan_file(path, text=True)
    assert found.nul_at == nul_at
    assert found.nul_tail_from == tail_from


def test_zero_bytes_across_blocks(tmp_path, monkeypatch):
    monkeypatch.setattr(scan_module, "BLOCK_SIZE", 4)
    path = tmp_path / "t.csv"
    path.write_bytes(b"ab\n1\0\0\0\0\0\0\0\0\n2\n")
    found = scan_file(path, text=True)
    assert found.nul_at == (4, 2)
    assert found.nul_tail_from is None
