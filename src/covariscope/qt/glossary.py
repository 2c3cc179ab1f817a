"""The glossary window (F1): roles, verdicts, every review-table column with
its formula, the guides and the concepts, from the vocabulary."""

from __future__ import annotations

from PySide6.QtWidgets import QDialog, QDialogButtonBox, QTextBrowser, QVBoxLayout, QWidget

from covariscope.views.glossary import glossary_html

__all__ = ["GlossaryWindow"]


class GlossaryWindow(QDialog):
    """A non-modal window that stays open beside the main window."""

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setObjectName("glossaryWindow")
        self.setWindowTitle("Covariscope glossary")
        self.setModal(False)
        self.browser = QTextBrowser()
        self.browser.setObjectName("glossaryText")
        self.browser.setOpenLinks(False)  # anchors scroll within the page
        self.browser.anchorClicked.connect(lambda url: self.show_section(url.fragment()))
        self.browser.setHtml(glossary_html())
        buttons = QDialogButtonBox(QDialogButtonBox.StandardButton.Close)
        buttons.rejected.connect(self.close)
        layout = QVBoxLayout(self)
        layout.addWidget(self.browser, 1)
        layout.addWidget(buttons)
        self.resize(620, 640)

    def show_section(self, anchor: str) -> None:
        """Scroll to a section: ``"columns"``, ``"roles"``, ``"verdicts"``, …"""
        self.browser.scrollToAnchor(anchor)

    def text(self) -> str:
        """The glossary's plain text (for tests and copying)."""
        return self.browser.toPlainText()
