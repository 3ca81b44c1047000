"""Tests of workbench.flow_layout: controls wrap onto new lines instead of widening the window."""

from __future__ import annotations

from PySide6.QtWidgets import QLabel, QPushButton, QWidget

from workbench.flow_layout import STRETCH_MIN_PX, FlowLayout


def _row(qtbot, n=6):
    host = QWidget()
    qtbot.addWidget(host)
    layout = FlowLayout(host, h_spacing=8, v_spacing=4)
    buttons = [QPushButton(f"button number {i}") for i in range(n)]
    for b in buttons:
        layout.addWidget(b)
    caption = QLabel("a caption that says what is shown")
    layout.addWidget(caption, 1)
    host.show()
    return host, layout, buttons, caption


def test_narrow_width_wraps_and_minimum_is_the_widest_item(qtbot):
    host, layout, buttons, caption = _row(qtbot)
    widest = max(b.sizeHint().width() for b in buttons)
    # common practice, no source: a flow layout is as narrow as its widest item
    assert layout.minimumSize().width() == max(widest, min(caption.minimumSizeHint().width(), STRETCH_MIN_PX))
    one_line = layout.heightForWidth(layout.sizeHint().width())
    assert one_line == max(b.sizeHint().height() for b in buttons + [caption])
    narrow = widest + 10
    host.resize(narrow, layout.heightForWidth(narrow))
    qtbot.waitUntil(lambda: buttons[-1].geometry().y() > 0)
    # every button on a line of its own, none past the right edge
    assert len({b.geometry().y() for b in buttons}) == len(buttons)
    assert all(b.geometry().right() < narrow for b in buttons)
    assert layout.heightForWidth(narrow) > 3 * one_line


def test_caption_takes_the_rest_of_its_line(qtbot):
    host, layout, buttons, caption = _row(qtbot, n=2)
    width = layout.sizeHint().width() + 200
    host.resize(width, layout.heightForWidth(width))
    qtbot.waitUntil(lambda: caption.geometry().width() > 0)
    # same line, centred on it
    assert abs(caption.geometry().center().y() - buttons[0].geometry().center().y()) <= 1
    assert caption.geometry().right() == width - 1                      # up to the right edge


def test_hidden_widgets_take_no_room(qtbot):
    host, layout, buttons, caption = _row(qtbot, n=3)
    full = layout.sizeHint().width()
    buttons[1].hide()
    assert layout.sizeHint().width() == full - buttons[1].sizeHint().width() - 8
