"""A layout that lines widgets up left to right and wraps them onto more lines when the space runs out.

Rows of controls above the plots use it so that a narrow window (a laptop screen)
shows the same controls on two or three lines instead of forcing the window wider.
An item added with a stretch above 0 (a caption) takes the rest of its line, or a
line of its own when its text (at least :data:`STRETCH_MIN_PX`) does not fit there.  Hidden widgets take
no room.
"""

from __future__ import annotations

from PySide6.QtCore import QPoint, QRect, QSize, Qt
from PySide6.QtWidgets import QLayout, QLayoutItem, QSizePolicy, QSpacerItem, QWidget, QWidgetItem

#: Narrowest width a stretching item (a caption) is given before it moves to a new line, px.
STRETCH_MIN_PX = 160


class FlowLayout(QLayout):
    """Items left to right, wrapped onto new lines; the height follows the width.

    Parameters
    ----------
    parent : QWidget, optional
    h_spacing, v_spacing : int
        Gaps between items on a line and between lines, px.
    """

    def __init__(self, parent: QWidget | None = None, *, h_spacing: int = 8, v_spacing: int = 4):
        super().__init__(parent)
        self._items: list[QLayoutItem] = []
        self._stretch: list[int] = []
        self.h_spacing = int(h_spacing)
        self.v_spacing = int(v_spacing)
        self.setContentsMargins(0, 0, 0, 0)

    # -- the box-layout calls the views use
    def addWidget(self, widget: QWidget, stretch: int = 0) -> None:  # noqa: N802 - QBoxLayout's name
        self.insertWidget(len(self._items), widget, stretch)

    def insertWidget(self, index: int, widget: QWidget, stretch: int = 0) -> None:  # noqa: N802
        self.addChildWidget(widget)
        self._insert(index, QWidgetItem(widget), stretch)

    def addSpacing(self, size: int) -> None:  # noqa: N802
        self._insert(len(self._items), QSpacerItem(int(size), 0, QSizePolicy.Policy.Fixed,
                                                   QSizePolicy.Policy.Minimum), 0)

    def addStretch(self, stretch: int = 1) -> None:  # noqa: N802 - nothing to stretch: lines are left aligned
        return None

    def _insert(self, index: int, item: QLayoutItem, stretch: int) -> None:
        index = max(0, min(int(index), len(self._items)))
        self._items.insert(index, item)
        self._stretch.insert(index, int(stretch))
        self.invalidate()

    # -- QLayout
    def addItem(self, item: QLayoutItem) -> None:  # noqa: N802 - Qt override
        self._items.append(item)
        self._stretch.append(0)
        self.invalidate()

    def count(self) -> int:
        return len(self._items)

    def itemAt(self, index: int) -> QLayoutItem | None:  # noqa: N802 - Qt override
        return self._items[index] if 0 <= index < len(self._items) else None

    def takeAt(self, index: int) -> QLayoutItem | None:  # noqa: N802 - Qt override
        if 0 <= index < len(self._items):
            self._stretch.pop(index)
            item = self._items.pop(index)
            self.invalidate()
            return item
        return None

    def expandingDirections(self) -> Qt.Orientation:  # noqa: N802 - Qt override
        return Qt.Orientation(0)

    def hasHeightForWidth(self) -> bool:  # noqa: N802 - Qt override
        return True

    def heightForWidth(self, width: int) -> int:  # noqa: N802 - Qt override
        return self._arrange(QRect(0, 0, width, 0), apply=False)

    def setGeometry(self, rect: QRect) -> None:  # noqa: N802 - Qt override
        super().setGeometry(rect)
        self._arrange(rect, apply=True)

    def sizeHint(self) -> QSize:  # noqa: N802 - Qt override
        """Everything on one line."""
        shown = [(item, s) for item, s in zip(self._items, self._stretch) if not item.isEmpty()]
        width = sum(self._hint(item, s).width() for item, s in shown) + self.h_spacing * max(len(shown) - 1, 0)
        height = max((self._hint(item, s).height() for item, s in shown), default=0)
        m = self.contentsMargins()
        return QSize(width + m.left() + m.right(), height + m.top() + m.bottom())

    def minimumSize(self) -> QSize:  # noqa: N802 - Qt override
        """The widest single item: everything else can wrap."""
        size = QSize(0, 0)
        for item, s in zip(self._items, self._stretch):
            if not item.isEmpty():
                width = min(item.minimumSize().width(), STRETCH_MIN_PX) if s > 0 else item.minimumSize().width()
                size = size.expandedTo(QSize(width, item.minimumSize().height()))
        m = self.contentsMargins()
        return size + QSize(m.left() + m.right(), m.top() + m.bottom())

    # -- placement
    @staticmethod
    def _hint(item: QLayoutItem, stretch: int) -> QSize:
        hint = item.sizeHint()
        if stretch > 0:
            # the text's own width: a caption with an Ignored width policy reports 0 through its layout item
            widget = item.widget()
            wanted = widget.sizeHint().width() if widget is not None else hint.width()
            hint.setWidth(max(wanted, STRETCH_MIN_PX, item.minimumSize().width()))
        return hint

    def _arrange(self, rect: QRect, *, apply: bool) -> int:
        """Place the items in ``rect`` (when ``apply``); returns the height used, px."""
        m = self.contentsMargins()
        area = rect.adjusted(m.left(), m.top(), -m.right(), -m.bottom())
        right = area.x() + max(area.width(), 1)
        lines: list[list[tuple[QLayoutItem, int, int]]] = [[]]     # (item, x, width) per line
        x = area.x()
        for item, stretch in zip(self._items, self._stretch):
            if item.isEmpty():
                continue
            width = min(self._hint(item, stretch).width(), area.width())
            if lines[-1] and x + width > right:
                lines.append([])
                x = area.x()
            if stretch > 0:
                width = max(right - x, width)
            lines[-1].append((item, x, width))
            x += width + self.h_spacing
        y = area.y()
        for line in lines:
            if not line:
                continue
            heights = [item.heightForWidth(w) if item.hasHeightForWidth() else item.sizeHint().height()
                       for item, _, w in line]
            line_height = max(heights)
            if apply:
                for (item, left, width), height in zip(line, heights):
                    top = y + (line_height - height) // 2
                    item.setGeometry(QRect(QPoint(left, top), QSize(width, height)))
            y += line_height + self.v_spacing
        used = y - area.y() - (self.v_spacing if any(lines) else 0)
        return max(used, 0) + m.top() + m.bottom()


__all__ = ["FlowLayout", "STRETCH_MIN_PX"]
