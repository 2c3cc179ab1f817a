"""The messages bar above the diagram: counts by severity, the first
problem in words with its fix, and the full list on demand."""

from __future__ import annotations

from PySide6.QtCore import Qt, Signal
from PySide6.QtWidgets import (
    QHBoxLayout,
    QLabel,
    QListWidget,
    QListWidgetItem,
    QPushButton,
    QVBoxLayout,
    QWidget,
)

from covariscope.views.messages import Message, count_words

__all__ = ["MessagesBar"]

_MARK = {"problem": "Problem", "review": "Review", "caution": "Caution"}


class MessagesBar(QWidget):
    """Shows :func:`~covariscope.views.messages.window_messages`; emits
    :attr:`fix_requested` with the fix code when the user asks for the fix."""

    fix_requested = Signal(str)

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setObjectName("messagesBar")
        self.counts = QLabel("No messages")
        self.counts.setObjectName("messageCounts")
        self.headline = QLabel("")
        self.headline.setObjectName("messageHeadline")
        self.headline.setWordWrap(True)
        self.headline.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
        self._fix = ""
        self.fix_button = QPushButton("")
        self.fix_button.hide()
        self.fix_button.clicked.connect(lambda: self.fix_requested.emit(self._fix))
        self.toggle = QPushButton("Show all")
        self.toggle.setCheckable(True)
        self.toggle.toggled.connect(self._show_list)
        self.list = QListWidget()
        self.list.setWordWrap(True)
        self.list.setMaximumHeight(160)
        self.list.hide()
        top = QHBoxLayout()
        top.setContentsMargins(0, 0, 0, 0)
        top.addWidget(self.counts)
        top.addWidget(self.headline, 1)
        top.addWidget(self.fix_button)
        top.addWidget(self.toggle)
        layout = QVBoxLayout(self)
        layout.setContentsMargins(6, 3, 6, 3)
        layout.addLayout(top)
        layout.addWidget(self.list)
        self.messages: list[Message] = []
        self._filled = False

    def refresh(self, messages: list[Message]) -> None:
        if self._filled and list(messages) == self.messages:
            return  # the same lines: no restyling, no new list
        self._filled = True
        self.messages = list(messages)
        self.counts.setText(count_words(self.messages))
        problems = [m for m in self.messages if m.severity == "problem"]
        first = problems[0] if problems else None
        self.setProperty("severity", "problem" if first else "")
        self.style().polish(self)
        self.headline.setText(first.text if first else "")
        self._fix = first.fix if first else ""
        self.fix_button.setText(first.fix_label if first else "")
        self.fix_button.setVisible(bool(first and first.fix))
        self.toggle.setEnabled(bool(self.messages))
        self.list.clear()
        for m in self.messages:
            item = QListWidgetItem(f"{_MARK[m.severity]}: {m.text}")
            item.setData(Qt.ItemDataRole.UserRole, m.severity)
            self.list.addItem(item)

    def _show_list(self, shown: bool) -> None:
        self.list.setVisible(shown)
        self.toggle.setText("Hide" if shown else "Show all")
