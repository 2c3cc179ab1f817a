"""The rationale page: one page, legible, nothing outside the page box.

Page count and text are read back with pypdf, an outside reader of the PDF.
"""

from __future__ import annotations

import shutil
import subprocess
from pathlib import Path

import pytest
from pypdf import PdfReader

from covariscope.model.project import load_project
from covariscope.report.layout import MIN_BODY_PT
from covariscope.report.painter import render_image, write_pdf
from covariscope.study import run_study
from covariscope.views.check_json import study_to_json
from covariscope.views.report_content import build_content, format_interval, format_number

DEMO = Path(__file__).resolve().parents[2] / "demo_data" / "demo_project.json"
POINTS = {"a4": (595.3, 841.9), "letter": (612.0, 792.0)}


def _text(pdf: Path) -> tuple[int, str, tuple[float, float]]:
    reader = PdfReader(str(pdf))
    box = reader.pages[0].mediabox
    text = " ".join(" ".join(page.extract_text() or "" for page in reader.pages).split())
    return len(reader.pages), text, (float(box.width), float(box.height))


def _first_page_text(pdf: Path) -> str:
    return " ".join((PdfReader(str(pdf)).pages[0].extract_text() or "").split())


def _appendix_text(pdf: Path) -> str:
    pages = PdfReader(str(pdf)).pages[1:]
    return " ".join(" ".join(p.extract_text() or "" for p in pages).split())


def test_notes_are_printed_whole(qapp, tmp_path, make):
    # notes of a few sentences fit page one whole, wrapped in their cell
    project = make.project(8, 200)
    assert all(len(n.note) == 200 for n in project.diagram.covariates)
    record: list = []
    pdf = write_pdf(make.result(project), project, tmp_path / "notes.pdf", record=record)
    pages, text, _ = _text(pdf)
    assert pages == 1
    assert not record[0].plan.cut_notes
    for node in project.diagram.covariates:
        assert " ".join(node.note.split()) in text


def _pdf_runs(pdf: Path) -> tuple[list[tuple[float, float, float, str]], tuple[float, float]]:
    """Every text run pypdf finds: (x, y, size in pt, text), in PDF points."""
    page = PdfReader(str(pdf)).pages[0]
    runs: list[tuple[float, float, float, str]] = []

    def visit(text, cm, tm, _font, size):
        if text.strip():
            x = cm[0] * tm[4] + cm[2] * tm[5] + cm[4]
            y = cm[1] * tm[4] + cm[3] * tm[5] + cm[5]
            scale = (abs(cm[0] * tm[0] + cm[2] * tm[1]) + abs(cm[1] * tm[2] + cm[3] * tm[3])) / 2
            runs.append((x, y, size * scale, text.strip()))

    page.extract_text(visitor_text=visit)
    return runs, (float(page.mediabox.width), float(page.mediabox.height))


def _check_pdf_text(pdf: Path, record) -> None:
    """Read back by pypdf, an outside reader: every run starts inside the page
    box, and only diagram labels are set below the 7 pt floor."""
    runs, (width, height) = _pdf_runs(pdf)
    assert runs
    diagram = {i.text for i in record.items if i.kind == "diagram"}
    for x, y, size, text in runs:
        assert 0 <= x <= width, (text, x)
        assert 0 <= y <= height, (text, y)
        if size < MIN_BODY_PT - 1e-6:
            assert " ".join(text.split()) in diagram, f"{text!r} is {size:.2f} pt"


def _check_record(record, *, covariates: int) -> None:
    page = record.page_rect
    body = [i for i in record.items if i.kind != "diagram"]
    for item in record.items:
        assert page.contains(item.rect), f"{item.text!r} at {item.rect} is outside {page}"
    for item in body:
        assert item.size_pt >= MIN_BODY_PT, f"{item.text!r} is {item.size_pt} pt"
    # no two text lines of the page body overlap (crowding or clipped cells)
    ordered = sorted(body, key=lambda i: (i.rect.top(), i.rect.left()))
    for n, a in enumerate(ordered):
        for b in ordered[n + 1 :]:
            if b.rect.top() >= a.rect.bottom():
                break
            overlap = a.rect.intersected(b.rect)
            assert overlap.width() < 0.5 or overlap.height() < 0.5, (a.text, b.text)
    assert record.plan.hidden_rows == 0
    assert (
        len([i for i in body if i.bold and i.text.startswith(("Adjust", "Keep", "Excl"))])
        <= covariates
    )


@pytest.fixture(scope="module")
def demo():
    if not DEMO.exists():
        pytest.skip("demo project not present")
    project = load_project(DEMO)
    result = run_study(project)
    return project, result, study_to_json(result)


@pytest.mark.parametrize("page", ["a4", "letter"])
def test_demo_pdf_is_one_page_with_the_checked_numbers(qapp, tmp_path, demo, page):
    project, result, checked = demo
    _check_demo_page(tmp_path, project, result, checked, page)


def test_demo_ratio_page_shows_the_checked_ratios(qapp, tmp_path, demo):
    project = demo[0]
    result = run_study(project, family="logistic")
    checked = study_to_json(result)
    assert build_content(result, project).ratio
    _check_demo_page(tmp_path, project, result, checked, "a4")


def _check_demo_page(tmp_path, project, result, checked, page):
    record: list = []
    pdf = write_pdf(result, project, tmp_path / "demo.pdf", page=page, record=record)
    pages, text, size = _text(pdf)
    assert pages == 1
    assert size == pytest.approx(POINTS[page], abs=1.0)
    content = build_content(result, project)
    nodes = {n.id: n for n in project.diagram.nodes}
    assert nodes[checked["exposure"]].label in text
    assert nodes[checked["outcome"]].label in text
    for node_id in checked["covariates"]:
        assert result.verdicts[node_id].label in text
    for key in ("crude", "recommended"):
        e = checked["estimates"][key]
        if content.ratio:
            value, (lo, hi) = e["ratio"], e["ratio_ci"]
        else:
            value, (lo, hi) = e["coef"], e["ci"]
        assert f"{value:.{content.decimals}f}" in text
        assert format_interval(lo, hi, content.decimals) in text
    # a short demo has room for every covariate's name and role in full
    for row in content.covariates:
        assert row.label in text
        assert row.role in text
    assert "…" not in text
    # findings name covariates by label, never by the id the file uses
    for line in content.disagreements:
        name, _, reason = line.partition(": ")
        assert name in {n.label for n in project.diagram.covariates}
        assert not reason.startswith("Review")  # the verdict column already says so
        assert " ".join(line.split()) in text
    _check_record(record[0], covariates=len(checked["covariates"]))
    _check_pdf_text(pdf, record[0])


@pytest.mark.parametrize("page", ["a4", "letter"])
def test_forty_nodes_with_long_notes_fit_one_legible_page(qapp, tmp_path, big_study, page):
    result, project = big_study
    assert len(project.diagram) == 40
    assert all(len(n.note) == 2000 for n in project.diagram.covariates)
    record: list = []
    pdf = write_pdf(result, project, tmp_path / "big.pdf", page=page, record=record)
    pages, text, _ = _text(pdf)
    # page one is the rationale; the notes too long for it continue whole in an appendix
    assert pages >= 2
    text = _first_page_text(pdf)
    content = build_content(result, project)
    assert content.exposure in text
    assert content.outcome in text
    for row in content.covariates:
        assert row.verdict in text
    for row in content.estimates[::2]:  # crude and recommended
        assert row.estimate in text
        assert row.interval in text
    plan = record[0].plan
    assert plan.body_pt >= MIN_BODY_PT
    assert plan.note_lines <= 1  # notes were shortened ...
    assert "…" in text  # ... with an ellipsis ...
    assert "printed whole in the appendix (page 2)" in text  # ... and page one says so
    appendix = _appendix_text(pdf)
    for node in project.diagram.covariates:
        assert " ".join(node.note.split()) in appendix
    assert plan.capped_findings is None  # every finding is still listed
    for line in content.disagreements:
        assert line in text
    # labels and roles take the room a one-line note gives up
    for row in content.covariates:
        assert row.label in text
        assert row.role in text
    _check_record(record[0], covariates=len(content.covariates))
    _check_pdf_text(pdf, record[0])


def test_short_content_keeps_the_largest_text(qapp, make):
    # no notes: nothing asks for smaller text (notes are printed whole, and
    # long ones take the room of a smaller body size first)
    project = make.project(8, 0)
    result = make.result(project)
    _, record = render_image(build_content(result, project))
    assert record.plan.body_pt == 9.0
    _check_record(record, covariates=8)


def test_page_renders_to_png(qapp, tmp_path, small_study):
    result, project = small_study
    pdf = write_pdf(result, project, tmp_path / "page.pdf")
    png = tmp_path / "page.png"
    if shutil.which("pdftoppm"):
        subprocess.run(
            ["pdftoppm", "-png", "-r", "60", "-singlefile", str(pdf), str(tmp_path / "page")],
            check=True,
        )
    else:
        image, _ = render_image(build_content(result, project), dpi=60)
        assert image.save(str(png))
    assert png.exists()
    assert png.stat().st_size > 10_000


def test_printer_uses_the_same_page(qapp, tmp_path, small_study):
    printing = pytest.importorskip("PySide6.QtPrintSupport")
    from covariscope.report.painter import print_rationale

    result, project = small_study
    printer = printing.QPrinter(printing.QPrinter.PrinterMode.HighResolution)
    printer.setOutputFormat(printing.QPrinter.OutputFormat.PdfFormat)
    printer.setOutputFileName(str(tmp_path / "printed.pdf"))
    record = print_rationale(printer, result, project)
    del printer
    pages, text, _ = _text(tmp_path / "printed.pdf")
    assert pages == 1
    assert "Effect of Night-shift work on Systolic blood pressure" in text
    _check_record(record, covariates=8)


def test_unknown_paper_size_is_refused_plainly(qapp, tmp_path, small_study):
    from covariscope.errors import CovariscopeError

    result, project = small_study
    with pytest.raises(CovariscopeError, match="not a paper size"):
        write_pdf(result, project, tmp_path / "x.pdf", page="a3")
    with pytest.raises(CovariscopeError, match="does not exist"):
        write_pdf(result, project, tmp_path / "missing" / "x.pdf")
    assert format_number(1.0, 2) == "1.00"
