"""The estimates strip above the diagram: crude, proposed, recommended, E-value."""

from __future__ import annotations

from PySide6.QtWidgets import QFrame, QHBoxLayout, QLabel, QVBoxLayout, QWidget

from covariscope.study.result import StudyResult
from covariscope.views.estimates import estimate_cells, evalue_text

__all__ = ["EstimatesStrip"]


class _Cell(QFrame):
    def __init__(self, title: str) -> None:
        super().__init__()
        self.setObjectName("estimateCell")
        self.title = QLabel(title)
        self.title.setObjectName("estimateTitle")
        self.value = QLabel("—")
        self.value.setObjectName("estimateValue")
        self.ci = QLabel("")
        self.ci.setObjectName("estimateCi")
        layout = QVBoxLayout(self)
        layout.setContentsMargins(8, 4, 8, 4)
        layout.setSpacing(0)
        for w in (self.title, self.value, self.ci):
            layout.addWidget(w)


class EstimatesStrip(QWidget):
    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setObjectName("estimatesStrip")
        self.measure = QLabel("Effect measure: —")
        self.measure.setObjectName("effectMeasure")
        self.cells = {
            key: _Cell(title)
            for key, title in (
                ("crude", "Crude"),
                ("proposed", "Proposed set"),
                ("recommended", "Recommended set"),
            )
        }
        self.evalue = _Cell("E-value")
        layout = QHBoxLayout(self)
        layout.setContentsMargins(4, 2, 4, 2)
        layout.addWidget(self.measure)
        for cell in self.cells.values():
            layout.addWidget(cell)
        layout.addWidget(self.evalue)
        layout.addStretch(1)

    def refresh(self, result: StudyResult | None) -> None:
        measure = result.effect_measure if result is not None else None
        self.measure.setText(f"Effect measure:\n{measure}" if measure else "Effect measure:\n—")
        for cell in estimate_cells(result):
            widget = self.cells[cell.key]
            widget.value.setText(cell.value)
            widget.ci.setText(cell.ci)
            widget.setToolTip(cell.tooltip)
        text, tip = evalue_text(result)
        self.evalue.value.setText(text.split(" (")[0])
        self.evalue.ci.setText(text[len(text.split(" (")[0]) :].strip(" ()"))
        self.evalue.setToolTip(tip)

    def texts(self) -> dict[str, str]:
        out = {k: f"{c.value.text()} {c.ci.text()}".strip() for k, c in self.cells.items()}
        out["evalue"] = self.evalue.value.text()
        return out
