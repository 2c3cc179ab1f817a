"""The "Independence claims" panel: the diagram's claims as the data judge them.

A thin widget over :func:`covariscope.views.claims.claims_view`: a summary
line, a table (failed claims first, by strength), the chosen claim's sentence
and suggestion, and the caution.  Choosing a failed claim asks the canvas to
draw its suggested link (signal :attr:`ClaimsPanel.suggestion_chosen`).
"""

from __future__ import annotations

from typing import Any

from PySide6.QtCore import Qt, Signal
from PySide6.QtGui import QBrush, QColor, QFont
from PySide6.QtWidgets import (
    QAbstractItemView,
    QComboBox,
    QFrame,
    QHBoxLayout,
    QHeaderView,
    QLabel,
    QSpinBox,
    QSplitter,
    QTableWidget,
    QTableWidgetItem,
    QTextBrowser,
    QVBoxLayout,
    QWidget,
)

from covariscope.qt.tables import filling
from covariscope.study.result import StudyResult
from covariscope.views.claims import ClaimRow, claims_view
from covariscope.vocabulary import CORRECTION_TERMS

__all__ = ["ClaimsPanel"]

_HEADERS = ("Data", "Pair", "Independent given", "Strength [95% CI]", "Adjusted p", "Test")
_FAILED_TINT = QColor("#F6E3EE")
_HINT = "Choose a claim to read it in full; a failed one shows its suggested link on the diagram."


class ClaimsPanel(QWidget):
    """The diagram's independence claims, tested on the analytic sample."""

    #: (a, b, arrows) of a chosen failed claim, or None
    suggestion_chosen = Signal(object)
    #: analysis settings the analyst changed here, e.g. {"claim_limit": 400}
    settings_changed = Signal(object)

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setObjectName("claimsPanel")
        self.summary = QLabel("No analysis yet.")
        self.summary.setWordWrap(True)
        self.table = QTableWidget(0, len(_HEADERS))
        self.table.setObjectName("claimsTable")
        self.table.setHorizontalHeaderLabels(list(_HEADERS))
        self.table.setSelectionBehavior(QAbstractItemView.SelectionBehavior.SelectRows)
        self.table.setSelectionMode(QAbstractItemView.SelectionMode.SingleSelection)
        self.table.setEditTriggers(QAbstractItemView.EditTrigger.NoEditTriggers)
        self.table.verticalHeader().hide()
        self.table.setWordWrap(False)
        header = self.table.horizontalHeader()
        for c in range(len(_HEADERS)):
            header.setSectionResizeMode(c, QHeaderView.ResizeMode.ResizeToContents)
        header.setSectionResizeMode(2, QHeaderView.ResizeMode.Stretch)
        self.table.itemSelectionChanged.connect(self._chosen)
        self.detail = QTextBrowser()
        self.detail.setObjectName("claimDetail")
        self.detail.setFrameShape(QFrame.Shape.NoFrame)
        self.caution = QLabel("")
        self.caution.setWordWrap(True)
        self.caution.setObjectName("claimsCaution")
        italic = QFont(self.caution.font())
        italic.setItalic(True)
        self.caution.setFont(italic)
        self.detail.setMinimumWidth(220)
        rows = self.table.verticalHeader()
        rows.setDefaultSectionSize(self.table.fontMetrics().height() + 8)
        rows.setSectionResizeMode(QHeaderView.ResizeMode.Fixed)
        # the chosen claim's words beside the table, so the table keeps the height
        split = QSplitter(Qt.Orientation.Horizontal)
        split.addWidget(self.table)
        split.addWidget(self.detail)
        split.setStretchFactor(0, 3)
        split.setStretchFactor(1, 1)
        split.setChildrenCollapsible(False)
        self.correction = QComboBox()
        self.correction.setObjectName("claimCorrection")
        for term in CORRECTION_TERMS.values():
            self.correction.addItem(term.short, term.code)
            self.correction.setItemData(
                self.correction.count() - 1, term.explanation, Qt.ItemDataRole.ToolTipRole
            )
        self.correction.activated.connect(self._correction_chosen)
        self.limit = QSpinBox()
        self.limit.setObjectName("claimLimit")
        self.limit.setRange(1, 100_000)
        self.limit.setToolTip("Most claims tested; raise it when the diagram implies more.")
        self.limit.editingFinished.connect(self._limit_chosen)
        top = QHBoxLayout()
        top.addWidget(self.summary, 1)
        top.addWidget(QLabel("Correction:"))
        top.addWidget(self.correction)
        top.addWidget(QLabel("Most claims:"))
        top.addWidget(self.limit)
        layout = QVBoxLayout(self)
        layout.setContentsMargins(4, 4, 4, 4)
        layout.addLayout(top)
        layout.addWidget(split, 1)
        layout.addWidget(self.caution)
        self._rows: tuple[ClaimRow, ...] = ()
        self._shown: Any = self  # the result on show (``self``: none yet)
        self._limit_shown = 0

    @property
    def rows(self) -> tuple[ClaimRow, ...]:
        return self._rows

    def refresh(self, result: StudyResult | None) -> None:
        """Show the claims of a study result (None: no analysis yet).

        The same result again changes nothing, so a chosen claim and its
        suggested link stay while the diagram is only rearranged."""
        if result is self._shown:
            return
        self._shown = result
        view = claims_view(result)
        self.summary.setText(view.summary)
        self.caution.setText(view.caution)
        self._rows = view.rows
        self.table.blockSignals(True)
        with filling(self.table):
            self.table.clearContents()
            self.table.setRowCount(len(view.rows))
            for r, row in enumerate(view.rows):
                cells = (row.status, row.pair, row.given, row.strength, row.p_adjusted, row.test)
                for c, text in enumerate(cells):
                    item = QTableWidgetItem(text)
                    item.setToolTip(f"{row.sentence} {row.suggestion}".strip())
                    if row.failed:
                        item.setBackground(QBrush(_FAILED_TINT))
                        if c == 0:
                            bold = QFont(item.font())
                            bold.setBold(True)
                            item.setFont(bold)
                    self.table.setItem(r, c, item)
        self.table.clearSelection()
        self.table.blockSignals(False)
        self.detail.setPlainText(_HINT if view.rows else "")
        self.suggestion_chosen.emit(None)

    def sync_settings(self, correction: str, limit: int) -> None:
        """Show the project's correction and claim limit (without echoing a change)."""
        self.correction.blockSignals(True)
        self.limit.blockSignals(True)
        index = self.correction.findData(correction)
        self.correction.setCurrentIndex(max(index, 0))
        self.limit.setValue(limit)
        self.correction.blockSignals(False)
        self.limit.blockSignals(False)
        self._limit_shown = limit

    def _correction_chosen(self, index: int) -> None:
        self.settings_changed.emit({"claim_correction": self.correction.itemData(index)})

    def _limit_chosen(self) -> None:
        if self.limit.value() != self._limit_shown:
            self._limit_shown = self.limit.value()
            self.settings_changed.emit({"claim_limit": self.limit.value()})

    def choose(self, index: int) -> None:
        """Select a row (as a click would)."""
        self.table.selectRow(index)

    def _chosen(self) -> None:
        rows = sorted({i.row() for i in self.table.selectedIndexes()})
        if not rows or rows[0] >= len(self._rows):
            self.detail.setPlainText(_HINT if self._rows else "")
            self.suggestion_chosen.emit(None)
            return
        row = self._rows[rows[0]]
        self.detail.setPlainText(f"{row.sentence} {row.suggestion}".strip())
        self.suggestion_chosen.emit((row.a, row.b, row.arrows) if row.failed else None)
