"""``gearbench analyze``: summary, JSON, options, one-line errors and light imports."""

from __future__ import annotations

import json
import subprocess
import sys

import pytest

from dsp.model import Bearing, GearTrain, Mesh, Sensor, Shaft, Tach
from dsp.synth import Fault, simulate, write_simulation
from workbench.cli import main


def train() -> GearTrain:
    # Domain reference sec. 1.3: 1500 rpm input, 20T -> 61T, 18T -> 53T; CWRU 6205 geometry (sec. 2)
    return GearTrain(
        name="cli analyze test",
        sensors=(Sensor("acc", 0, 10.0, "g"),),
        tach=Tach(shaft="in", channel=1, pulses_per_rev=1),
        shafts=(Shaft("in"), Shaft("mid"), Shaft("out")),
        meshes=(Mesh("s1", "in", 20, "mid", 61), Mesh("s2", "mid", 18, "out", 53)),
        bearings=(Bearing("mid brg", "mid", 9, 0.3126, 1.537, 0.0),),
    )


@pytest.fixture(scope="module")
def recordings(tmp_path_factory):
    folder = tmp_path_factory.mktemp("analyze")
    out = {}
    for name, faults in (("healthy", ()), ("tooth", (Fault("tooth", "s1:mid", tooth=5, severity="severe"),))):
        sim = simulate(train(), rpm=1500.0, duration_s=5.0, fs=12800.0, faults=faults, seed=7)
        path = folder / f"{name}.flac"
        write_simulation(sim, path, train(), scale=10.0)
        out[name] = path
    return out


def test_summary_of_a_healthy_recording(recordings, capsys):
    assert main(["analyze", str(recordings["healthy"])]) == 0  # model: the .toml beside the file
    out = capsys.readouterr().out
    assert "Speed (tach): shaft in 1500.0 rpm" in out  # simulator truth
    assert "TSA per shaft:" in out and "FM4" in out
    assert "Suspects: none above the alarm threshold." in out  # simulator truth: healthy
    assert "qualified analyst" in out and "licensed practice" in out


def test_json_of_a_faulted_recording(recordings, capsys):
    assert main(["analyze", str(recordings["tooth"]), "--json"]) == 0
    d = json.loads(capsys.readouterr().out)
    assert d["schema"] == "gearbench.analysis/1"  # design.md
    assert d["suspects"][0]["component"] == "shaft:mid"  # simulator truth: tooth 5 of the 61 T wheel
    assert d["suspects"][0]["kind"] == "localized tooth damage"
    assert d["speed"]["mean_hz"] == pytest.approx(25.0, rel=1e-3)
    assert d["recording"]["sensor"] == {"name": "acc", "channel": 0, "units": "g"}


def test_band_and_model_options(recordings, tmp_path, capsys):
    model = recordings["healthy"].with_suffix(".toml")
    moved = tmp_path / "elsewhere.toml"
    moved.write_text(model.read_text())
    assert main(["analyze", str(recordings["healthy"]), "--model", str(moved), "--band", "2000", "4000",
                 "--channel", "0", "--json"]) == 0
    env = json.loads(capsys.readouterr().out)["envelope"]
    assert env["band_source"] == "user"
    assert env["band_hz"][0] == pytest.approx(2000.0, abs=1.0)


def test_baseline_comparison(recordings, capsys):
    assert main(["analyze", str(recordings["tooth"]), "--baseline", str(recordings["healthy"]), "--json"]) == 0
    d = json.loads(capsys.readouterr().out)
    base = d["baseline"]
    # simulator truth: the tooth fault is on shaft mid; the healthy file is the same gearbox
    assert base["path"].endswith("healthy.flac")
    assert "mid" in base["shafts_grown"]
    fm4 = next(r for r in base["indicators"] if r["name"] == "fm4" and r["shaft"] == "mid")
    assert fm4["flag"] == "grown" and fm4["now"] > fm4["baseline"]
    assert d["suspects"][0]["component"] == "shaft:mid"
    assert "suspects_without_baseline" in d


@pytest.mark.parametrize("args,message", [
    (["--channel", "5"], "no sensor of the model is on channel 5"),
    (["--band", "4000", "2000"], "is not a band"),
    (["--model", "nowhere.toml"], "not found"),
    (["--baseline", "nowhere.flac"], "baseline recording"),
])
def test_bad_input_is_one_line_with_status_2(recordings, capsys, args, message):
    assert main(["analyze", str(recordings["healthy"]), *args]) == 2
    err = capsys.readouterr().err
    assert message in err
    assert err.count("\n") == 1 and err.startswith("gearbench: ")


def test_missing_model_beside_the_recording(tmp_path, recordings, capsys):
    lonely = tmp_path / "lonely.flac"
    lonely.write_bytes(recordings["healthy"].read_bytes())
    assert main(["analyze", str(lonely)]) == 2
    assert "give --model M" in capsys.readouterr().err


def test_command_module_imports_lightly():
    code = ("import sys, workbench.commands.analyze\n"
            "heavy = [m for m in sys.modules if m.split('.')[0] in ('scipy', 'PySide6', 'pyqtgraph')\n"
            "         or m.startswith('dsp.')]\n"
            "print(','.join(heavy))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == ""  # DEVELOPERS.md: subcommands import heavy modules only when they run


def test_folders_are_named_as_folders(recordings, tmp_path, capsys):
    assert main(["analyze", str(tmp_path)]) == 2
    assert "is a folder" in capsys.readouterr().err
    assert main(["analyze", str(recordings["healthy"]), "--model", str(tmp_path)]) == 2
    assert "is a folder" in capsys.readouterr().err


def test_wide_indicator_values_keep_the_columns_apart():
    from workbench.commands.analyze import _num

    # a value too wide for its column falls back to 3 significant digits (common practice, no source)
    assert _num(4.3815957327e9, ".2f", 7) == "4.38e+09"
    assert _num(3.16, ".2f", 7) == "3.16"
    assert _num(float("nan"), ".2f", 7) == "-"
