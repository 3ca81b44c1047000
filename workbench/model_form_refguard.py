"""Guard against a reference-count leak of PySide6 6.12.0 on Python 3.11.

Measured in this project's environment (PySide6-Essentials 6.12.0, shiboken6 6.12.0,
CPython 3.11.7): every call of a Qt method that returns nothing lowers
``sys.getrefcount(None)`` by one, and every ``Signal.emit()`` lowers
``sys.getrefcount(True)`` by one, without the matching increase.  A few thousand
such calls -- minutes of editing in the side form -- bring the count to zero and the
process aborts with "Fatal Python error: none_dealloc" (or "bool_dealloc").

Python 3.12 made ``None``, ``True`` and ``False`` immortal (PEP 683), so there the
leak is harmless.  On older Pythons :func:`guard` measures the leak and, only when
it is present, raises the reference counts of these three objects by a large number
once, which is what immortality amounts to.  The objects are never freed in any
case, so this changes nothing else.  Remove this module when the project moves to
Python >= 3.12 or to a fixed PySide6.
"""

from __future__ import annotations

import ctypes
import sys

from PySide6.QtCore import QObject, Signal

SPARE_REFERENCES = 1 << 40
_done = False


class _Probe(QObject):
    ping = Signal()


def leaks() -> dict[str, float]:
    """References lost per call: ``"None"`` per void Qt call, ``"True"`` per signal emit."""
    probe = _Probe()
    n = 64
    out = {}
    before = sys.getrefcount(None)
    for _ in range(n):
        probe.setObjectName("probe")
    out["None"] = (before - sys.getrefcount(None)) / n
    before = sys.getrefcount(True)
    for _ in range(n):
        probe.ping.emit()
    out["True"] = (before - sys.getrefcount(True)) / n
    return out


def guard() -> bool:
    """Make ``None``, ``True`` and ``False`` effectively immortal if the leak is present.

    Returns True when the counts were raised (now or by an earlier call).
    """
    global _done
    if _done:
        return True
    if sys.version_info >= (3, 12) or sys.implementation.name != "cpython":
        return False
    if max(leaks().values()) < 0.5:
        return False
    for obj in (None, True, False):
        # ob_refcnt is the first field of every CPython object (Include/object.h)
        ctypes.c_ssize_t.from_address(id(obj)).value += SPARE_REFERENCES
    _done = True
    return True


guard()
