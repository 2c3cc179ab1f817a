"""The thresholds editor (guides, not rules) and the choice of the engine that reads the data."""

from __future__ import annotations

from PySide6.QtCore import Qt
from PySide6.QtWidgets import (
    QComboBox,
    QDialog,
    QDialogButtonBox,
    QDoubleSpinBox,
    QFormLayout,
    QLabel,
    QLineEdit,
    QWidget,
)

from covariscope.vocabulary import DEFAULT_THRESHOLDS, ENGINE_TERMS, Engine

__all__ = ["THRESHOLD_LABELS", "EngineDialog", "ThresholdsDialog"]

THRESHOLD_LABELS: dict[str, tuple[str, float, float, int]] = {
    # key: (label, minimum, maximum, decimals)
    "change_pct": ("Change in estimate (%)", 0.1, 1000.0, 1),
    "se_inflation_pct": ("SE inflation (%)", 0.1, 1000.0, 1),
    "vif": ("Variance inflation factor", 1.01, 1000.0, 2),
    "r2": ("Auxiliary R²", 0.01, 0.999, 3),
    "condition_index": ("Condition index", 1.0, 1000.0, 1),
    "modification_p": ("Effect modification: interaction p below", 0.001, 0.5, 3),
    "modification_ratio": ("Effect modification: stratum estimates' ratio", 1.01, 100.0, 2),
}


class ThresholdsDialog(QDialog):
    def __init__(self, thresholds: dict[str, float], parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setWindowTitle("Thresholds (guides)")
        form = QFormLayout(self)
        note = QLabel(
            "These are guides from common practice, not rules: a covariate that crosses one is "
            "flagged for a closer look, and the verdict's sentence names the guide it crossed."
        )
        note.setWordWrap(True)
        form.addRow(note)
        self.spins: dict[str, QDoubleSpinBox] = {}
        for key, (label, lo, hi, decimals) in THRESHOLD_LABELS.items():
            spin = QDoubleSpinBox()
            spin.setRange(lo, hi)
            spin.setDecimals(decimals)
            spin.setValue(float(thresholds.get(key, DEFAULT_THRESHOLDS[key])))
            spin.setToolTip(f"Default {DEFAULT_THRESHOLDS[key]:g}")
            form.addRow(label + " — guide", spin)
            self.spins[key] = spin
        buttons = QDialogButtonBox(
            QDialogButtonBox.StandardButton.Ok
            | QDialogButtonBox.StandardButton.Cancel
            | QDialogButtonBox.StandardButton.RestoreDefaults
        )
        buttons.accepted.connect(self.accept)
        buttons.rejected.connect(self.reject)
        buttons.button(QDialogButtonBox.StandardButton.RestoreDefaults).clicked.connect(
            self.restore
        )
        form.addRow(buttons)

    def restore(self) -> None:
        for key, spin in self.spins.items():
            spin.setValue(DEFAULT_THRESHOLDS[key])

    def values(self) -> dict[str, float]:
        return {key: float(spin.value()) for key, spin in self.spins.items()}


class EngineDialog(QDialog):
    """Which engine reads the project's data (saved in the project)."""

    def __init__(self, engine: str, scheduler: str, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setWindowTitle("Data engine")
        form = QFormLayout(self)
        note = QLabel(
            "Every engine gives the same numbers. A file larger than memory is read where it "
            "lies: the rows stay on disk and the database sums over them."
        )
        note.setWordWrap(True)
        form.addRow(note)
        self.engine = QComboBox()
        for e in Engine:
            self.engine.addItem(ENGINE_TERMS[e].label, e.value)
            self.engine.setItemData(
                self.engine.count() - 1, ENGINE_TERMS[e].explanation, Qt.ItemDataRole.ToolTipRole
            )
        self.engine.setCurrentIndex(max(self.engine.findData(engine), 0))
        form.addRow("Engine", self.engine)
        self.explanation = QLabel()
        self.explanation.setWordWrap(True)
        form.addRow(self.explanation)
        self.scheduler = QLineEdit(scheduler)
        self.scheduler.setPlaceholderText("tcp://host:8786 (empty: a local cluster)")
        form.addRow("Dask scheduler", self.scheduler)
        self.engine.currentIndexChanged.connect(self._sync)
        buttons = QDialogButtonBox(
            QDialogButtonBox.StandardButton.Ok | QDialogButtonBox.StandardButton.Cancel
        )
        buttons.accepted.connect(self.accept)
        buttons.rejected.connect(self.reject)
        form.addRow(buttons)
        self.setMinimumWidth(460)
        self._sync()

    def _sync(self) -> None:
        chosen = Engine(self.engine.currentData())
        self.explanation.setText(ENGINE_TERMS[chosen].explanation)
        self.scheduler.setEnabled(chosen is Engine.DASK)

    def values(self) -> tuple[str, str]:
        """The engine chosen, and the scheduler's address (kept only for Dask)."""
        engine = str(self.engine.currentData())
        return engine, self.scheduler.text().strip() if engine == Engine.DASK else ""
