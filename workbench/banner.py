"""The banner above the views: messages of the window, coloured by how serious the worst is."""

from __future__ import annotations

import html

from PySide6.QtCore import Qt
from PySide6.QtWidgets import QLabel

from workbench import theme


def join_sentences(texts) -> str:
    """One message per line, each ending with exactly one full stop.

    ``["the speed wanders.", "check the tach"]`` gives
    ``"The speed wanders.\nCheck the tach."``: no doubled full stop and no ``".;"``.
    """
    lines = []
    for text in texts:
        text = str(text).strip().rstrip(";").rstrip()
        if not text:
            continue
        text = text[:1].upper() + text[1:]
        if not text.endswith((".", "!", "?")):
            text += "."
        lines.append(text)
    return "\n".join(lines)


class Banner(QLabel):
    """One line (or a few) of messages above the views, coloured by how serious they are."""

    COLOURS = {"info": theme.BANNER_INFO, "warning": theme.BANNER_WARNING, "error": theme.BANNER_ERROR}

    def __init__(self, parent=None):
        super().__init__(parent)
        self.setWordWrap(True)
        self.setTextFormat(Qt.TextFormat.RichText)
        self.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
        self.parts: dict[str, tuple[str, str]] = {}
        self.setVisible(False)

    def set_part(self, key: str, level: str, text: str | None) -> None:
        if text:
            self.parts[key] = (level, text)
        else:
            self.parts.pop(key, None)
        order = {"error": 0, "warning": 1, "info": 2}
        shown = sorted(self.parts.values(), key=lambda part: order[part[0]])
        self.setVisible(bool(shown))
        if shown:
            self.setStyleSheet(f"background: {self.COLOURS[shown[0][0]]}; color: {theme.FOREGROUND};"
                               " padding: 6px; border-radius: 3px;")
            # every part on its own line(s); a part with several sentences keeps one per line
            self.setText("<br>".join(html.escape(text).replace("\n", "<br>") for _, text in shown))

    def plain_text(self) -> str:
        return "\n".join(text for _, text in self.parts.values())
