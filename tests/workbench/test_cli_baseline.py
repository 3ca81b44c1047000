"""``gearbench analyze --baseline``: the baseline object, the severity zone and its caution."""

from __future__ import annotations

import hashlib
import json
from pathlib import Path

import pytest

from dsp.model import GearTrain, Mesh, Sensor, Shaft, Tach, save_model
from dsp.severity import CAUTION, velocity_zone
from dsp.synth import Fault, simulate, write_simulation
from workbench.cli import main


def train() -> GearTrain:
    # domain reference 1.1: a 40-tooth gear on the input shaft drives a 15-tooth pinion
    return GearTrain(
        name="cli baseline test",
        sensors=(Sensor("acc", 0, 10.0, "g"),),
        tach=Tach(shaft="input", channel=1, pulses_per_rev=1),
        shafts=(Shaft("input"), Shaft("output")),
        meshes=(Mesh("pair", "input", 40, "output", 15),),
    )


@pytest.fixture(scope="module")
def recordings(tmp_path_factory):
    folder = tmp_path_factory.mktemp("cli_baseline")
    out = {}
    for name, rpm, faults in (("healthy", 1500.0, ()), ("healthy_slow", 1300.0, ()),
                              ("tooth", 1500.0, (Fault("tooth", "pair:output", tooth=4, severity="severe"),))):
        sim = simulate(train(), rpm=rpm, duration_s=3.0, fs=12800.0, faults=faults, seed=11)
        path = folder / f"{name}.flac"
        write_simulation(sim, path, train(), scale=10.0)
        out[name] = path
    return out


def _json(capsys, argv) -> dict:
    assert main(argv) == 0
    return json.loads(capsys.readouterr().out)


def test_baseline_json_keys(recordings, capsys):
    d = _json(capsys, ["analyze", str(recordings["tooth"]), "--baseline", str(recordings["healthy"]), "--json"])
    b = d["baseline"]
    assert Path(b["path"]).name == "healthy.flac"
    assert b["sha256"] == hashlib.sha256(recordings["healthy"].read_bytes()).hexdigest()  # hashlib as reference
    assert b["indicators"] and b["grown"] is not None
    for row in b["indicators"]:
        assert {"name", "shaft", "baseline", "now", "change_ratio", "change_db", "flag"} <= set(row)
    for row in b["grown"]:
        assert {"what", "order", "baseline", "now", "change_db"} <= set(row)
    # synth: a severe tooth fault on the 15 T output pinion raises FM4 of that shaft (Stewart 1977)
    fm4 = {(r["name"], r["shaft"]): r["flag"] for r in b["indicators"]}
    assert fm4[("fm4", "output")] == "grown"
    assert fm4[("fm4", "input")] != "grown"
    assert d["suspects"][0]["component"] == "shaft:output"
    assert "suspects_without_baseline" in d       # the ranking before the baseline, kept for reference


def test_severity_zone_and_caution_in_json(recordings, capsys):
    d = _json(capsys, ["analyze", str(recordings["healthy"]), "--json", "--group", "group 1",
                       "--foundation", "flexible"])
    s = d["severity"]
    assert s["caution"] == CAUTION and "qualified analyst" in s["caution"]
    assert "FROM MEMORY" in s["source"] and s["confirmed"] is False
    # from memory: ISO 10816-3:2009 Annex A, group 1 flexible 3.5 / 7.1 / 11.0 (domain reference section 9)
    assert s["boundaries_mm_s"] == {"A/B": 3.5, "B/C": 7.1, "C/D": 11.0}
    v = d["overall"]["velocity_rms_mm_s"]
    assert s["velocity_rms_mm_s"] == pytest.approx(v, rel=1e-12)
    assert s["zone"] == velocity_zone(v, group="group 1", foundation="flexible").zone
    assert "baseline" not in d or d["baseline"] is None


def test_text_output_has_the_baseline_section_and_the_caution(recordings, capsys):
    assert main(["analyze", str(recordings["tooth"]), "--baseline", str(recordings["healthy"])]) == 0
    out = capsys.readouterr().out
    assert "Baseline " in out and "FM4" in out and "grown" in out
    assert "zone " in out.lower()
    assert CAUTION in out  # the caution wherever a zone is shown


def test_baseline_at_another_speed_compares_in_orders(recordings, capsys):
    d = _json(capsys, ["analyze", str(recordings["healthy"]), "--baseline", str(recordings["healthy_slow"]),
                       "--json"])
    b = d["baseline"]
    assert b["rpm"] == pytest.approx(1300.0, rel=1e-3) and b["current_rpm"] == pytest.approx(1500.0, rel=1e-3)
    # the same gearbox at another speed: nothing grows in orders (common practice, no source)
    assert [r["name"] for r in b["indicators"] if r["flag"] == "grown"] == []
    assert b["grown"] == []


def test_different_gearbox_exits_2_with_one_line(recordings, tmp_path, capsys):
    import shutil

    base = tmp_path / "other_gearbox.flac"
    shutil.copy(recordings["healthy"], base)
    other = GearTrain(**{**train().__dict__, "meshes": (Mesh("pair", "input", 41, "output", 15),)})
    save_model(other, base.with_suffix(".toml"))     # the baseline's own model, beside it
    code = main(["analyze", str(recordings["tooth"]), "--baseline", str(base)])
    err = capsys.readouterr().err
    assert code == 2
    assert err.count("\n") == 1 and "different gearbox" in err and "41 T" in err


def test_missing_baseline_file_exits_2(recordings, tmp_path, capsys):
    code = main(["analyze", str(recordings["tooth"]), "--baseline", str(tmp_path / "none.flac")])
    assert code == 2
    assert "baseline" in capsys.readouterr().err
