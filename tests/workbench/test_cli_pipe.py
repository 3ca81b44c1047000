"""A reader that stops early (``gearbench ... | head``) ends the output quietly."""

import os
import subprocess
import sys
from pathlib import Path

import pytest

DEMO_MODEL = Path(__file__).resolve().parents[2] / "demo_recordings" / "03_broken_tooth.toml"


@pytest.mark.parametrize("argv", [["frequencies", str(DEMO_MODEL), "--json"],
                                  ["frequencies", str(DEMO_MODEL)]])
def test_closed_pipe_gives_no_traceback(argv):
    read_end, write_end = os.pipe()
    os.close(read_end)                      # the reader has gone before the first write
    try:
        run = subprocess.run([sys.executable, "-m", "workbench", *argv], stdout=write_end,
                             stderr=subprocess.PIPE, text=True, timeout=60)
    finally:
        os.close(write_end)
    # POSIX: writing to a pipe without a reader fails with EPIPE (common practice, no source)
    assert "Traceback" not in run.stderr
    assert run.returncode == 0
