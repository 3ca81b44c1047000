"""The numeric core must stay free of Qt and of the desktop package."""

import subprocess
import sys


def test_import_dsp_loads_no_qt():
    # Convention 1 of our code (MNE-Python keeps the same kind of check).
    code = (
        "import sys, importlib, pkgutil, dsp\n"
        "for m in pkgutil.iter_modules(dsp.__path__):\n"
        "    importlib.import_module('dsp.' + m.name)\n"
        "bad = [m for m in sys.modules if m.split('.')[0] in ('PySide6', 'pyqtgraph', 'workbench', 'shiboken6')]\n"
        "print(','.join(bad))\n"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == ""


def test_cli_and_session_import_without_qt():
    code = (
        "import sys, workbench.cli\n"
        "bad = [m for m in sys.modules if m.split('.')[0] in ('PySide6', 'pyqtgraph', 'shiboken6')]\n"
        "print(','.join(bad))\n"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == ""
