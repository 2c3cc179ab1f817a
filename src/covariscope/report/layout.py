"""Fitting the rationale onto exactly one page.

:func:`plan_page` measures every string with :class:`QFontMetricsF` on the
target paint device and places it as a single-line :class:`TextItem`, so the
painter draws only what was measured: nothing can overflow its cell or the
page.  When the content is long the plan first gives the diagram less
height and lowers the body text (never below :data:`MIN_BODY_PT`) with every
note printed whole; only when that cannot fit does it shorten the notes
(ending them with an ellipsis), say so on the page, and continue them whole
on an appendix page (:func:`plan_appendix`).  If even shortened notes do not
fit, findings lists and finally table rows are cut, each cut said on the page.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field

from PySide6.QtCore import QRectF, Qt
from PySide6.QtGui import QFont, QFontDatabase, QFontMetricsF, QPaintDevice

from covariscope.views.report_content import RationaleContent

__all__ = [
    "MIN_BODY_PT",
    "Fonts",
    "PagePlan",
    "Shade",
    "TextItem",
    "plan_appendix",
    "plan_page",
    "wrap_text",
]

#: Body text is never smaller than this (issue 6).
MIN_BODY_PT = 7.0
_BODY_SIZES = (9.0, 8.5, 8.0, 7.5, 7.0)
_NOTE_LINES = (3, 2, 1, 0)  # 0: one line for every cell
#: as many note lines as a note needs (the note printed whole); one more:
#: whole, in a wider note column
_NOTE_WHOLE = 10_000
_DIAGRAM_SHARE = (0.42, 0.18)  # largest and smallest, of the page height
_FINDING_CAPS = (None, 6, 3, 1)
_FAMILIES = ("DejaVu Sans", "Noto Sans", "Liberation Sans", "Arial", "Helvetica")
_ELLIPSIS = "…"


@dataclass(frozen=True)
class TextItem:
    """One measured line of text: ``rect`` is its full box on the device."""

    rect: QRectF
    text: str
    size_pt: float
    bold: bool = False
    italic: bool = False
    kind: str = "body"  # body | heading | title | diagram
    grey: bool = False


@dataclass(frozen=True)
class Shade:
    """A filled band behind table rows or headers."""

    rect: QRectF
    level: int  # 0 header, 1 zebra row


@dataclass
class PagePlan:
    """Where everything goes; the painter draws it as is."""

    items: list[TextItem] = field(default_factory=list)
    shades: list[Shade] = field(default_factory=list)
    rules: list[tuple[float, float, float]] = field(default_factory=list)  # (x0, x1, y)
    diagram_rect: QRectF = field(default_factory=QRectF)
    body_pt: float = 9.0
    note_lines: int = 3
    diagram_share: float = 0.0
    hidden_rows: int = 0
    capped_findings: int | None = None
    height: float = 0.0
    #: the labels of covariates whose note was shortened here (whole in the appendix)
    cut_notes: list[str] = field(default_factory=list)


def _family() -> str:
    available = set(QFontDatabase.families())
    for name in _FAMILIES:
        if name in available:
            return name
    return QFontDatabase.systemFont(QFontDatabase.SystemFont.GeneralFont).family()


class Fonts:
    """Fonts at one body size, measured on one paint device."""

    def __init__(self, body_pt: float, device: QPaintDevice, family: str | None = None) -> None:
        self.body_pt = body_pt
        self.device = device
        self.family = family or _family()
        self._cache: dict[tuple[float, bool, bool], tuple[QFont, QFontMetricsF]] = {}

    def get(
        self, size_pt: float, bold: bool = False, italic: bool = False
    ) -> tuple[QFont, QFontMetricsF]:
        key = (size_pt, bold, italic)
        if key not in self._cache:
            font = QFont(self.family)
            # the device draws whole pixels: round up, so text set at the 7 pt
            # floor is never written smaller than 7 pt (58.3 px at 600 dpi
            # would otherwise become 58 px, 6.96 pt)
            dpi = self.device.logicalDpiY() or 72
            font.setPixelSize(max(1, math.ceil(size_pt * dpi / 72.0 - 1e-6)))
            font.setBold(bold)
            font.setItalic(italic)
            # kerning and hinting differences between measuring and drawing stay
            # out of the way when the text is laid out at design metrics
            font.setHintingPreference(QFont.HintingPreference.PreferNoHinting)
            # no ligatures, so the PDF text reads back letter for letter ("ff", not "ﬀ")
            font.setStyleStrategy(QFont.StyleStrategy.PreferNoShaping)
            self._cache[key] = (font, QFontMetricsF(font, self.device))
        return self._cache[key]

    def metrics(self, size_pt: float, bold: bool = False, italic: bool = False) -> QFontMetricsF:
        return self.get(size_pt, bold, italic)[1]


def _elide(fm: QFontMetricsF, text: str, width: float) -> str:
    if fm.horizontalAdvance(text) <= width:
        return text
    out = fm.elidedText(text, Qt.TextElideMode.ElideRight, width)
    # elidedText may return an empty string when not even "…" fits
    return out if out and fm.horizontalAdvance(out) <= width else ""


def wrap_text(
    text: str,
    fm: QFontMetricsF,
    width: float,
    max_lines: int | None = None,
    *,
    break_words: bool = True,
) -> list[str]:
    """Greedy word wrap into lines no wider than ``width``; the last allowed
    line ends in an ellipsis when the text does not fit.  A word wider than
    the line is broken by characters, or with ``break_words=False`` cut with
    an ellipsis."""
    words = text.split()
    if not words:
        return []
    lines: list[str] = []
    current = ""
    for n, word in enumerate(words):
        if max_lines is not None and len(lines) >= max_lines:
            # enough lines: the rest only decides where the ellipsis goes
            current = " ".join([current, *words[n:]]).strip()
            break
        trial = f"{current} {word}" if current else word
        if fm.horizontalAdvance(trial) <= width:
            current = trial
            continue
        if current:
            lines.append(current)
        if not break_words and fm.horizontalAdvance(word) > width:
            lines.append(_elide(fm, word, width) or _ELLIPSIS)
            current = ""
            if max_lines is not None and len(lines) >= max_lines:
                break
            continue
        # a word wider than the line is broken by characters
        while fm.horizontalAdvance(word) > width and len(word) > 1:
            cut = len(word) - 1
            while cut > 1 and fm.horizontalAdvance(word[:cut]) > width:
                cut -= 1
            lines.append(word[:cut])
            word = word[cut:]
        current = word
    if current:
        lines.append(current)
    if max_lines is not None and len(lines) > max_lines:
        kept = lines[: max_lines - 1] if max_lines > 1 else []
        rest = " ".join(lines[len(kept) :])
        kept.append(_elide(fm, rest + _ELLIPSIS, width) if rest else _ELLIPSIS)
        # the ellipsis must show that something was cut even if the cut fell on a space
        if not kept[-1].endswith(_ELLIPSIS):
            kept[-1] = _elide(fm, kept[-1] + _ELLIPSIS, width)
        lines = [line for line in kept if line]
    return lines


class _Composer:
    """Places lines top-down from a cursor; records every item."""

    def __init__(self, plan: PagePlan, fonts: Fonts, left: float, top: float, width: float) -> None:
        self.plan = plan
        self.fonts = fonts
        self.left = left
        self.width = width
        self.y = top

    def line(
        self,
        text: str,
        x: float,
        size: float,
        *,
        bold: bool = False,
        italic: bool = False,
        kind: str = "body",
        grey: bool = False,
        y: float | None = None,
    ) -> float:
        fm = self.fonts.metrics(size, bold, italic)
        top = self.y if y is None else y
        if text:
            rect = QRectF(x, top, fm.horizontalAdvance(text), fm.height())
            self.plan.items.append(TextItem(rect, text, size, bold, italic, kind, grey))
        return fm.lineSpacing()

    def paragraph(
        self,
        text: str,
        size: float,
        *,
        x: float | None = None,
        width: float | None = None,
        bold: bool = False,
        italic: bool = False,
        max_lines: int | None = None,
        kind: str = "body",
        grey: bool = False,
        indent: float = 0.0,
    ) -> None:
        x = self.left if x is None else x
        width = self.width if width is None else width
        fm = self.fonts.metrics(size, bold, italic)
        lines = wrap_text(text, fm, width - indent, max_lines) or [""]
        for i, line in enumerate(lines):
            self.y += self.line(
                line,
                x + (indent if i else 0.0),
                size,
                bold=bold,
                italic=italic,
                kind=kind,
                grey=grey,
            )


def _cap(lines: Sequence[str], cap: int | None, what: str) -> list[str]:
    if cap is None or len(lines) <= cap:
        return list(lines)
    return [*lines[:cap], f"… and {len(lines) - cap} more {what} (see covariscope check)."]


def _two_line_width(text: str, fm: QFontMetricsF) -> float:
    """The narrowest width that holds ``text`` in at most two lines."""
    words = text.split()
    best = fm.horizontalAdvance(text)
    for k in range(1, len(words)):
        best = min(
            best,
            max(
                fm.horizontalAdvance(" ".join(words[:k])), fm.horizontalAdvance(" ".join(words[k:]))
            ),
        )
    return best


def _table_columns(
    content: RationaleContent,
    fonts: Fonts,
    width: float,
    size: float,
    compact: bool,
    whole_notes: bool = False,
) -> list[float] | None:
    """Column widths.  Numbers get what they need and are never cut.  Labels,
    roles and verdicts first get one full line each; when that is too wide
    the note gives way to a floor, then verdicts, roles and labels go down to
    two lines (never in ``compact``, where every cell has one line), and only
    then do labels and roles go down to a floor and get an ellipsis.  With
    ``whole_notes`` the note keeps a third of the width, so that notes
    printed whole wrap into a few lines rather than many."""
    fm = fonts.metrics(size)
    fb = fonts.metrics(size, bold=True)
    pad = fm.averageCharWidth() * 1.2
    headers = content.covariate_headers
    rows = content.covariates

    def full(i: int, values: Sequence[str], metrics: QFontMetricsF = fm) -> float:
        need = max((metrics.horizontalAdvance(v) for v in values), default=0.0)
        return max(_two_line_width(headers[i], fb), need) + pad

    def two_lines(i: int, values: Sequence[str], metrics: QFontMetricsF = fm) -> float:
        need = max((_two_line_width(v, metrics) for v in values), default=0.0)
        return max(_two_line_width(headers[i], fb), need) + pad

    fi = fonts.metrics(size, italic=True)
    labels = [r.label for r in rows]
    # unmeasured covariates are set in italics, which may run wider
    italic_labels = [r.label for r in rows if not r.measured]
    roles = [r.role for r in rows]
    verdicts = [r.verdict for r in rows]
    widths = [
        max(full(0, [r.key for r in rows]), fm.horizontalAdvance("00") + pad),
        max(full(1, labels), full(1, italic_labels, fi)),
        full(2, [r.sets for r in rows]),
        full(3, roles),
        full(4, [r.change for r in rows]),
        full(5, [r.se_inflation for r in rows]),
        full(6, [r.vif for r in rows]),
        full(7, verdicts, fb),
    ]
    # the note column needs room only for the notes there are; long notes are
    # cut first, down to a stub that still shows how the note begins
    note_need = full(8, [r.note for r in rows])
    share = 0.33 if whole_notes else (0.10 if compact else 0.15)
    note_floor = min(note_need, width * share)
    floors: list[tuple[int, float]] = []
    if not compact:
        floors += [
            (7, two_lines(7, verdicts, fb)),
            (3, two_lines(3, roles)),
            (1, max(two_lines(1, labels), two_lines(1, italic_labels, fi))),
        ]
    floor_pt = {i: max(width * 0.08, _two_line_width(headers[i], fb) + pad) for i in (1, 3)}
    floors += [(1, floor_pt[1]), (3, floor_pt[3])]

    excess = sum(widths) + note_floor - width
    for i, floor in floors:
        if excess <= 0:
            break
        give = min(excess, max(0.0, widths[i] - floor))
        widths[i] -= give
        excess -= give
    if excess > 0:
        return None
    widths.append(width - sum(widths))
    return widths


def _compose(
    content: RationaleContent,
    page: QRectF,
    device: QPaintDevice,
    body: float,
    share: float,
    note_lines: int,
    finding_cap: int | None,
    row_cap: int | None,
) -> PagePlan:
    fonts = Fonts(body, device)
    plan = PagePlan(
        body_pt=body, note_lines=note_lines, diagram_share=share, capped_findings=finding_cap
    )
    c = _Composer(plan, fonts, page.left(), page.top(), page.width())
    fm = fonts.metrics(body)
    # at the one-line floor the sections sit a little closer
    gap = fm.lineSpacing() * (0.45 if note_lines == 0 else 0.6)
    small_gap = fm.lineSpacing() * 0.25

    # -- header --------------------------------------------------------------------
    c.y += c.line(content.title.upper(), page.left(), body, bold=True, kind="heading", grey=True)
    c.paragraph(content.question, body + 5, bold=True, max_lines=2, kind="title")
    c.paragraph(content.measure, body, max_lines=2)
    c.y += small_gap
    plan.rules.append((page.left(), page.right(), c.y))
    c.y += gap

    # -- diagram beside data, adjustment set and estimates ----------------------------
    col_gap = fm.averageCharWidth() * 3
    left_w = page.width() * 0.5 - col_gap / 2
    right_x = page.left() + left_w + col_gap
    right_w = page.right() - right_x
    band_top = c.y
    c.line("Diagram as drawn", page.left(), body, bold=True, kind="heading")
    legend = (
        "boxed: in the proposed set · dashed: unmeasured · dotted line: proxy link · "
        "a number stands for that row of the covariate table"
    )
    legend_lines = wrap_text(legend, fonts.metrics(body, italic=True), left_w, 3)
    y = band_top + fm.lineSpacing()
    for line in legend_lines:
        y += c.line(line, page.left(), body, italic=True, grey=True, y=y)
    diagram_top = y + small_gap

    right = _Composer(plan, fonts, right_x, band_top, right_w)
    for heading, lines, cap in (
        ("Data", content.data, None),
        ("Adjustment set", content.adjustment, finding_cap if finding_cap is not None else 8),
    ):
        right.y += right.line(heading, right_x, body, bold=True, kind="heading")
        for text in _cap(lines, cap, "lines"):
            right.paragraph(text, body, max_lines=4, indent=fm.averageCharWidth() * 2)
        right.y += small_gap
    right.y += right.line(content.estimates_caption, right_x, body, bold=True, kind="heading")
    fb = fonts.metrics(body, bold=True)
    name_w = max([fb.horizontalAdvance(r.name) for r in content.estimates] + [0.0])
    name_w += fm.averageCharWidth() * 2
    est_w = (
        max(
            [fm.horizontalAdvance(r.estimate) for r in content.estimates]
            + [fm.horizontalAdvance("Estimate")]
        )
        + fm.averageCharWidth() * 2
    )
    n_w = max([fm.horizontalAdvance(f"n {r.n}") for r in content.estimates if r.n] + [0.0])
    ci_w = right_w - name_w - est_w - n_w
    for r in content.estimates:
        ci_lines = wrap_text(r.interval, fm, ci_w, 2) or [""]
        top = right.y
        right.line(r.name, right_x, body, bold=True, y=top)
        right.line(r.estimate, right_x + name_w, body, y=top)
        for i, line in enumerate(ci_lines):
            right.line(line, right_x + name_w + est_w, body, y=top + i * fm.lineSpacing())
        right.line(r.n and f"n {r.n}", right_x + name_w + est_w + ci_w, body, y=top)
        right.y = top + len(ci_lines) * fm.lineSpacing()
    right.y += small_gap
    right.paragraph(content.evalue, body, max_lines=5)

    min_diagram = page.height() * share
    diagram_bottom = max(diagram_top + min_diagram, right.y)
    plan.diagram_rect = QRectF(page.left(), diagram_top, left_w, diagram_bottom - diagram_top)
    c.y = diagram_bottom + gap

    # -- covariate table -------------------------------------------------------------
    compact = note_lines == 0
    widths = _table_columns(
        content, fonts, page.width(), body, compact, whole_notes=note_lines > _NOTE_WHOLE
    )
    if widths is None:  # the table cannot be this wide at this size
        plan.height = float("inf")
        return plan
    xs = [page.left()]
    for w in widths[:-1]:
        xs.append(xs[-1] + w)
    pad = fm.averageCharWidth() * 0.6
    rows = list(content.covariates)
    if row_cap is not None and row_cap < len(rows):
        plan.hidden_rows = len(rows) - row_cap
        rows = rows[:row_cap]
    note_width = widths[-1] - 2 * pad + 0.5
    plan.cut_notes = [
        r.label for r in rows if len(wrap_text(r.note, fm, note_width)) > max(1, note_lines)
    ]
    caption = content.table_caption
    if plan.cut_notes:
        caption += f" Notes ending in {_ELLIPSIS} are printed whole in the appendix (page 2)."
    c.y += c.line("Covariates", page.left(), body, bold=True, kind="heading")
    c.paragraph(caption, body, italic=True, grey=True, max_lines=3)
    c.y += small_gap
    head_top = c.y
    head_h = 0.0
    for i, header in enumerate(content.covariate_headers):
        wrapped = wrap_text(header, fb, widths[i] - 2 * pad + 0.5, 2)
        for k, line in enumerate(wrapped):
            c.line(
                line, xs[i] + pad, body, bold=True, y=head_top + small_gap + k * fm.lineSpacing()
            )
        head_h = max(head_h, len(wrapped) * fm.lineSpacing())
    head_h += 2 * small_gap
    plan.shades.append(Shade(QRectF(page.left(), head_top, page.width(), head_h), 0))
    c.y = head_top + head_h
    wrap = 1 if compact else 2
    row_pad = small_gap * (0.25 if compact else 1.0)
    for index, row in enumerate(rows):
        cells = (
            (row.key, 1, False, False),
            (row.label, wrap, False, not row.measured),
            (row.sets, 1, False, False),
            (row.role, wrap, False, False),
            (row.change, 1, False, False),
            (row.se_inflation, 1, False, False),
            (row.vif, 1, False, False),
            (row.verdict, 1 if compact else 3, True, False),
            (row.note, max(1, note_lines), False, False),
        )
        top = c.y
        height = 0.0
        for i, (text, max_lines, bold, italic) in enumerate(cells):
            f = fonts.metrics(body, bold, italic)
            # half a device pixel of slack: widths were measured with the same metrics
            wrapped = wrap_text(text, f, widths[i] - 2 * pad + 0.5, max_lines)
            for k, line in enumerate(wrapped):
                c.line(
                    line,
                    xs[i] + pad,
                    body,
                    bold=bold,
                    italic=italic,
                    y=top + row_pad + k * fm.lineSpacing(),
                )
            height = max(height, len(wrapped) * fm.lineSpacing())
        height += 2 * row_pad
        if index % 2:
            plan.shades.append(Shade(QRectF(page.left(), top, page.width(), height), 1))
        c.y = top + height
    if plan.hidden_rows:
        c.y += small_gap
        c.paragraph(
            f"… {plan.hidden_rows} more covariates not shown for lack of room "
            "(see covariscope check).",
            body,
            italic=True,
        )
    plan.rules.append((page.left(), page.right(), c.y))
    c.y += gap

    # -- findings ---------------------------------------------------------------------
    indent = fm.averageCharWidth() * 2
    for heading, lines, what in (
        ("Collinearity (groups and the member kept)", content.collinearity, "groups"),
        ("Where the diagram and the data disagree", content.disagreements, "findings"),
        ("Residual confounding (curved continuous confounders)", content.residual, "checks"),
        ("Effect modification (not confounding)", content.modification, "modifiers"),
        ("Notes from the analysis", content.messages, "notes"),
    ):
        if not lines:
            continue
        c.y += c.line(heading, page.left(), body, bold=True, kind="heading")
        for text in _cap(lines, finding_cap, what):
            c.paragraph("• " + text, body, max_lines=3, indent=indent)
        c.y += small_gap
    if content.diagram_checks:
        c.paragraph(content.diagram_checks, body, max_lines=3)
        c.y += small_gap
    c.paragraph(content.thresholds, body, max_lines=2)
    c.y += small_gap
    c.y += c.line("Cautions", page.left(), body, bold=True, kind="heading")
    for text in content.cautions:
        c.paragraph("• " + text, body, max_lines=2, indent=indent)

    # -- footer at the page foot --------------------------------------------------------
    foot_h = fm.lineSpacing()
    c.y += gap
    plan.height = c.y + foot_h - page.top()
    foot_y = page.bottom() - fm.height()
    c.line(_elide(fm, content.footer, page.width()), page.left(), body, grey=True, y=foot_y)
    return plan


def plan_page(content: RationaleContent, page: QRectF, device: QPaintDevice) -> PagePlan:
    """Lay the content out on ``page`` (device coordinates of ``device``).

    At each body size from 9 pt down to 7 pt it tries the smallest diagram
    with three, two, then one line of note per covariate; the first that fits
    wins and the diagram then grows into the room left.  At the 7 pt floor
    it cuts the findings lists and, last, table rows (saying so on the page),
    so the result always fits one page.
    """
    height = page.height()
    low, high = _DIAGRAM_SHARE[-1], _DIAGRAM_SHARE[0]
    # the notes are the analyst's justification: whole, at any body size that holds them
    # (first in the note column's usual width, then in a wider one)
    for body in _BODY_SIZES:
        for whole in (_NOTE_WHOLE, _NOTE_WHOLE + 1):
            attempt = _compose(content, page, device, body, low, whole, None, None)
            if attempt.height <= height:
                return _grow(content, page, device, attempt, high)
    for body in _BODY_SIZES:
        # labels, roles and verdicts keep two lines until the 7 pt floor
        for notes in _NOTE_LINES[:-1]:
            attempt = _compose(content, page, device, body, low, notes, None, None)
            if attempt.height <= height:
                return _grow(content, page, device, attempt, high)
    # a smaller diagram before fewer findings: the findings are the argument
    for cap in _FINDING_CAPS:
        for share in (low, 0.14):
            attempt = _compose(content, page, device, MIN_BODY_PT, share, 0, cap, None)
            if attempt.height <= height:
                return _grow(content, page, device, attempt, high)
    for share in (0.14, 0.10):
        attempt = _compose(content, page, device, MIN_BODY_PT, share, 0, _FINDING_CAPS[-1], None)
        if attempt.height <= height:
            return attempt
    for keep in range(len(content.covariates) - 1, -1, -1):
        attempt = _compose(content, page, device, MIN_BODY_PT, low, 0, _FINDING_CAPS[-1], keep)
        if attempt.height <= height:
            break
    return attempt


def _grow(
    content: RationaleContent, page: QRectF, device: QPaintDevice, plan: PagePlan, high: float
) -> PagePlan:
    """The same plan with the diagram taking the height left over (up to ``high``)."""
    spare = page.height() - plan.height - 1.0  # a pixel of slack for rounding
    share = min(high, plan.diagram_rect.height() / page.height() + spare / page.height())
    if share <= plan.diagram_share:
        return plan
    grown = _compose(
        content, page, device, plan.body_pt, share, plan.note_lines, plan.capped_findings, None
    )
    return grown if grown.height <= page.height() else plan


def plan_appendix(
    content: RationaleContent, page: QRectF, device: QPaintDevice, body: float
) -> list[PagePlan]:
    """The appendix: every covariate's note in full, over as many pages as
    they need (used when page one had to shorten notes)."""
    fonts = Fonts(body, device)
    fm = fonts.metrics(body)
    plans: list[PagePlan] = []

    def new_page() -> _Composer:
        plan = PagePlan(body_pt=body, note_lines=_NOTE_WHOLE)
        plans.append(plan)
        c = _Composer(plan, fonts, page.left(), page.top(), page.width())
        title = "Appendix — the analyst's notes in full (continued from page 1)"
        c.y += c.line(title.upper(), page.left(), body, bold=True, kind="heading", grey=True)
        c.y += fm.lineSpacing() * 0.5
        return c

    c = new_page()
    for row in content.covariates:
        if not row.note:
            continue
        text = f"{row.key}. {row.label}: {row.note}"
        need = len(wrap_text(text, fm, page.width())) * fm.lineSpacing()
        if c.y + need > page.bottom() and c.plan.items[1:]:
            c = new_page()
        c.paragraph(text, body)
        c.y += fm.lineSpacing() * 0.4
    for plan in plans:
        plan.height = page.height()
    return plans
