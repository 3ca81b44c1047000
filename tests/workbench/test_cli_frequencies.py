"""``gearbench frequencies``: table, JSON, and one-line errors with exit status 2."""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest

from workbench.cli import main

DATA = Path(__file__).resolve().parents[1] / "data"
PAIR = str(DATA / "pair_40_15.toml")
PLANETARY = str(DATA / "two_stage_planetary.toml")


def test_table_lists_every_section(capsys):
    assert main(["frequencies", PLANETARY, "--rpm", "1500"]) == 0
    out = capsys.readouterr().out
    for heading in ("Shafts", "Meshes", "Planetary stages", "Bearings"):
        assert heading in out
    assert "500.0000" in out          # stage 1 GMF = 25 Hz x 20 teeth (domain reference 1.3)
    assert "147.5410" in out          # stage 2 GMF 147.541 Hz (domain reference 1.3)
    assert "30000.00" in out          # 500 Hz in CPM


def test_table_columns_are_aligned(capsys):
    assert main(["frequencies", PLANETARY, "--rpm", "1500"]) == 0
    lines = capsys.readouterr().out.splitlines()
    i = lines.index("Shafts")
    header, rule, *rows = lines[i + 1:i + 6]
    # every right-aligned number column ends where its header ends
    for word in ("Hz", "rpm", "order"):
        end = header.index(word) + len(word)
        assert all(r[end - 1].isdigit() for r in rows), rows


def test_json_for_the_40_15_pair(capsys):
    assert main(["frequencies", PAIR, "--rpm", "3000", "--json"]) == 0
    d = json.loads(capsys.readouterr().out)
    assert {"shafts", "meshes", "planetary", "bearings"} <= set(d)      # design page, frequencies --json
    out = {s["name"]: s for s in d["shafts"]}["output"]
    assert out["rpm"] == pytest.approx(8000.0, rel=1e-9)                 # domain reference 1.1
    m = d["meshes"][0]
    assert m["gmf_hz"] == pytest.approx(2000.0, rel=1e-12)               # domain reference 1.1
    assert m["assembly_phases"] == 5                                     # Foiles: gcd(40, 15)
    assert m["hunting_tooth_hz"] == pytest.approx(16.6666667, rel=1e-8)  # domain reference 1.4
    b = d["bearings"][0]
    assert {"name", "shaft", "bpfo_hz", "bpfi_hz", "bsf_hz", "ftf_hz"} <= set(b)
    assert b["bpfi_hz"] / out["mean_hz"] == pytest.approx(5.4152, rel=1e-4)  # CWRU 6205, via quotations


def test_shaft_option_sets_the_reference(capsys):
    assert main(["frequencies", PAIR, "--rpm", "8000", "--shaft", "output", "--json"]) == 0
    d = json.loads(capsys.readouterr().out)
    assert d["reference_shaft"] == "output"
    inp = {s["name"]: s for s in d["shafts"]}["input"]
    assert inp["rpm"] == pytest.approx(3000.0, rel=1e-9)                 # domain reference 1.1 inverted
    assert d["meshes"][0]["gmf_hz"] == pytest.approx(2000.0, rel=1e-9)


def test_model_warnings_go_to_stderr(tmp_path, capsys):
    text = Path(PLANETARY).read_text(encoding="utf-8").replace("planets = 4", "planets = 3")
    p = tmp_path / "m.toml"
    p.write_text(text, encoding="utf-8")
    assert main(["frequencies", str(p), "--rpm", "1500"]) == 0
    assert "cannot be equally spaced" in capsys.readouterr().err


@pytest.mark.parametrize(
    ("args", "fragment"),
    [
        (["--shaft", "nope"], "--shaft 'nope' is not a shaft of the model"),
        (["--rpm", "-5"], "--rpm must be a positive speed"),
        (["--rpm", "nan"], "--rpm must be a positive speed"),
    ],
)
def test_bad_arguments_exit_2_with_one_line(args, fragment, capsys):
    argv = ["frequencies", PAIR, "--rpm", "3000"] + args
    assert main(argv) == 2
    err = capsys.readouterr().err
    assert fragment in err
    assert len(err.strip().splitlines()) == 1


def test_bad_model_exits_2_with_one_line(tmp_path, capsys):
    text = Path(PAIR).read_text(encoding="utf-8").replace("driven_teeth = 15", "driven_teeth = 15.5\nhelix = 1")
    p = tmp_path / "bad.toml"
    p.write_text(text, encoding="utf-8")
    assert main(["frequencies", str(p), "--rpm", "3000"]) == 2
    err = capsys.readouterr().err.strip()
    assert len(err.splitlines()) == 1
    assert "meshes[0].helix" in err and "more problem" in err


def test_missing_and_broken_files_exit_2(tmp_path, capsys):
    assert main(["frequencies", str(tmp_path / "none.toml"), "--rpm", "3000"]) == 2
    assert "does not exist" in capsys.readouterr().err
    p = tmp_path / "syntax.toml"
    p.write_text("[[shafts]\nname = 'a'\n", encoding="utf-8")
    assert main(["frequencies", str(p), "--rpm", "3000"]) == 2
    assert "fix the TOML syntax" in capsys.readouterr().err


def test_command_starts_without_scipy_or_qt():
    code = (
        "import sys\n"
        "from workbench.cli import main\n"
        f"rc = main(['frequencies', {PAIR!r}, '--rpm', '3000', '--json'])\n"
        "bad = [m for m in sys.modules if m.split('.')[0] in ('scipy', 'PySide6', 'pyqtgraph')]\n"
        "sys.stderr.write(','.join(bad))\n"
        "sys.exit(rc)\n"
    )
    res = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=60)
    assert res.returncode == 0
    assert res.stderr.strip() == ""       # design page: light commands avoid heavy imports
    assert json.loads(res.stdout)["meshes"][0]["gmf_hz"] == pytest.approx(2000.0)


def test_rpm_defaults_to_the_nominal_speed_of_the_model(tmp_path, capsys):
    text = Path(PAIR).read_text(encoding="utf-8")
    assert main(["frequencies", PAIR, "--json"]) == 2          # pair_40_15 has no nominal_rpm
    assert "give the speed with --rpm" in capsys.readouterr().err
    p = tmp_path / "nominal.toml"
    p.write_text(text.replace("[tach]", "[tach]\nnominal_rpm = 3000.0", 1), encoding="utf-8")
    assert main(["frequencies", str(p), "--json"]) == 0
    d = json.loads(capsys.readouterr().out)
    assert d["meshes"][0]["gmf_hz"] == pytest.approx(2000.0, rel=1e-9)   # domain reference 1.1: 40 x 50 Hz
    assert main(["frequencies", str(p), "--shaft", "output"]) == 2      # the nominal speed is the tach shaft's
    assert "give --rpm R for 'output'" in capsys.readouterr().err


def test_a_reader_that_stops_early_gets_no_traceback():
    # `gearbench frequencies ... | head -1`: the pipe closes before the table is written
    proc = subprocess.Popen([sys.executable, "-m", "workbench", "frequencies", PAIR, "--rpm", "3000", "--json"],
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE)
    proc.stdout.close()
    err = proc.stderr.read().decode()
    proc.wait(timeout=60)
    proc.stderr.close()
    assert "Traceback" not in err and "BrokenPipeError" not in err, err  # common practice, no source
