import os
import stat

import pytest

from dsp.files import atomic_path, atomic_write_text


def test_replaced_file_keeps_its_permissions_and_no_temp_is_left(tmp_path):
    out = tmp_path / "report.pdf"
    out.write_text("old")
    os.chmod(out, 0o640)
    atomic_write_text(out, "new")
    assert out.read_text() == "new"
    # POSIX: a rename keeps the new inode's mode, so the old mode must be copied (common practice, no source)
    assert stat.S_IMODE(out.stat().st_mode) == 0o640
    assert [p.name for p in tmp_path.iterdir()] == ["report.pdf"]


def test_a_failing_writer_leaves_the_old_file(tmp_path):
    out = tmp_path / "session.json"
    out.write_text("old")
    with pytest.raises(RuntimeError):
        with atomic_path(out) as tmp:
            with open(tmp, "w") as fh:
                fh.write("half")
            raise RuntimeError("printer jammed")
    assert out.read_text() == "old"
    assert [p.name for p in tmp_path.iterdir()] == ["session.json"]
