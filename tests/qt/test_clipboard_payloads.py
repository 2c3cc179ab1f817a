"""Whatever another program puts on the clipboard under our type, Paste
either adds valid nodes or says the clipboard holds none."""

from __future__ import annotations

import json

import pytest
from PySide6.QtCore import QMimeData

from covariscope.qt.clipboard import SELECTION_MIME, selection_from_mime


def _mime(raw: bytes) -> QMimeData:
    mime = QMimeData()
    mime.setData(SELECTION_MIME, raw)
    return mime


GOOD = {"nodes": [{"id": "a", "x": 1.0, "y": 2.0}, {"id": "b"}], "arrows": [["a", "b"]]}


# every bad payload the model refuses is in tests/model/test_selection.py;
# these check that the clipboard wrapper hands the bytes over unchanged
@pytest.mark.parametrize(
    "raw",
    [
        b"[" * 100_000 + b"]" * 100_000,  # nested past any recursion limit
        b'{"nodes": [{"id": "a", "id": "b"}]}',
        b'{"nodes": [{"id": "a"}, {"id": "b"}], "arrows": [["a", "b"], ["b", "a"]]}',  # cycle
        b"",
    ],
)
def test_a_bad_payload_is_no_selection(qapp, raw):
    assert selection_from_mime(_mime(raw)) is None


def test_other_clipboard_content_is_no_selection(qapp):
    mime = QMimeData()
    mime.setText("a\nb")
    assert selection_from_mime(mime) is None
    assert selection_from_mime(None) is None


def test_a_good_payload_comes_back_checked(qapp):
    clip = selection_from_mime(_mime(json.dumps(GOOD).encode()))
    assert clip is not None
    assert [n["id"] for n in clip["nodes"]] == ["a", "b"]
    assert clip["arrows"] == [["a", "b"]]


def test_paste_of_an_over_deep_payload_says_so(qtbot, window):
    from PySide6.QtWidgets import QApplication

    QApplication.clipboard().setMimeData(_mime(b"[" * 50_000 + b"]" * 50_000))
    assert window.paste() == []
    assert window.isVisible()
