"""Estimates strip cells against ``check --json``."""

from __future__ import annotations

from covariscope.views.estimates import estimate_cells, evalue_text
from covariscope.views.format import DASH, number


def test_cells_show_the_json_estimates(demo_study):
    _, result, js = demo_study
    cells = {c.key: c for c in estimate_cells(result)}
    for key in ("crude", "proposed", "recommended"):
        e = js["estimates"][key]
        value = e["ratio"] if e["ratio"] is not None else e["coef"]
        assert cells[key].value == number(value)
        lo, hi = e["ratio_ci"] or e["ci"]
        assert cells[key].ci == f"95% CI {number(lo)} to {number(hi)}"
    text, tip = evalue_text(result)
    assert text.startswith(number(js["evalue"]["estimate"]))
    assert "E-value" in tip


def test_no_result_gives_dashes():
    assert all(c.value == DASH for c in estimate_cells(None))
    assert evalue_text(None)[0] == DASH
