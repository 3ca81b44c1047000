"""Guard against a Qt binding that corrupts the interpreter.

PySide6 6.12.0 on Python 3.11 lowers the reference count of ``None`` once per call of
a Qt method that returns nothing, and the process aborts ("none_dealloc") when it
reaches zero (measured here; pyproject.toml pins PySide6-Essentials below 6.12).
"""

import sys

from PySide6.QtCore import QObject, Signal
from PySide6.QtWidgets import QLabel


class _Emitter(QObject):
    fired = Signal(object)


def test_void_calls_and_emits_keep_reference_counts(qtbot):
    label = QLabel()
    qtbot.addWidget(label)
    emitter = _Emitter()
    before_none = sys.getrefcount(None)
    before_true = sys.getrefcount(True)
    for _ in range(2000):
        label.setText("x")
        emitter.fired.emit(True)
    # a healthy binding gives back every reference it takes (common practice, no source)
    assert sys.getrefcount(None) >= before_none - 50
    assert sys.getrefcount(True) >= before_true - 50
