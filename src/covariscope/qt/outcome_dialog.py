"""Choosing the outcome columns the model family reads (Cox time and event,
a binary outcome for the logistic and risk-ratio models, an offset)."""

from __future__ import annotations

from collections.abc import Sequence

from PySide6.QtWidgets import (
    QComboBox,
    QDialog,
    QDialogButtonBox,
    QFormLayout,
    QLabel,
    QVBoxLayout,
    QWidget,
)

from covariscope.model.project import Project
from covariscope.views.outcome_settings import OUTCOME_FIELDS
from covariscope.vocabulary import family_term

__all__ = ["OutcomeColumnsDialog"]

_NONE = "(none)"


class OutcomeColumnsDialog(QDialog):
    """One chooser per setting the project's family reads; :meth:`values`
    gives key → column (None: not set)."""

    def __init__(
        self, project: Project, columns: Sequence[str], parent: QWidget | None = None
    ) -> None:
        super().__init__(parent)
        family = project.analysis.family
        self.setWindowTitle("Outcome columns")
        chosen = project.analysis.family_columns.get(family, {})
        intro = QLabel(
            f"The {family_term(family).model} reads these columns. Change the model family "
            "under Analysis ▸ Model family; each family keeps its own choice."
        )
        intro.setWordWrap(True)
        form = QFormLayout()
        self.combos: dict[str, QComboBox] = {}
        for key, label, tip in OUTCOME_FIELDS.get(family, ()):
            combo = QComboBox()
            combo.addItem(_NONE, None)
            for column in columns:
                combo.addItem(column, column)
            combo.setCurrentIndex(max(combo.findData(chosen.get(key)), 0))
            combo.setToolTip(tip)
            form.addRow(label, combo)
            self.combos[key] = combo
        buttons = QDialogButtonBox(
            QDialogButtonBox.StandardButton.Ok | QDialogButtonBox.StandardButton.Cancel
        )
        buttons.accepted.connect(self.accept)
        buttons.rejected.connect(self.reject)
        layout = QVBoxLayout(self)
        layout.addWidget(intro)
        layout.addLayout(form)
        layout.addWidget(buttons)

    def choose(self, key: str, column: str | None) -> None:
        """Pick a column as a user would (tests)."""
        combo = self.combos[key]
        combo.setCurrentIndex(max(combo.findData(column), 0))

    def values(self) -> dict[str, str | None]:
        return {key: combo.currentData() for key, combo in self.combos.items()}
