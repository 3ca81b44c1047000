"""``gearbench info``: file facts, tach quality and shaft speeds of a synthesized FLAC."""

from __future__ import annotations

import hashlib
import json
import subprocess
import sys

import numpy as np
import pytest
import soundfile as sf

from workbench.cli import main

FS = 8000
F_INPUT_HZ = 25.0  # 1500 rpm on the tach shaft

MODEL = """
name = "test pair 40/15"

[[shafts]]
name = "input"
[[shafts]]
name = "output"

[[sensors]]
name = "acc"
channel = 0
scale = 10.0

[tach]
shaft = "input"
{tach}

[[meshes]]
name = "pair"
driver = "input"
driver_teeth = 40
driven = "output"
driven_teeth = 15
"""


def _recording(path, *, flat_tach=False, seconds=3.0):
    rng = np.random.default_rng(21)
    t = np.arange(int(seconds * FS)) / FS
    acc = 0.05 * rng.standard_normal(t.size) + 0.2 * np.sin(2 * np.pi * 1000.0 * t)
    cycle = (F_INPUT_HZ * t + 0.5) % 1.0
    tach = np.where(cycle < 0.1, 0.8, 0.0) + 0.01 * rng.standard_normal(t.size)
    if flat_tach:
        tach = np.zeros_like(t)
    sf.write(str(path), np.column_stack((acc, tach)), FS, subtype="PCM_24")
    return int(seconds * F_INPUT_HZ)


def test_info_json_with_tach(tmp_path, capsys):
    rec = tmp_path / "pair.flac"
    n_pulses = _recording(rec)
    (tmp_path / "pair.toml").write_text(MODEL.replace("{tach}", "channel = 1\npulses_per_rev = 1"))
    assert main(["info", str(rec), "--json"]) == 0
    d = json.loads(capsys.readouterr().out)
    # Keys of the design page (gearbench info --json).
    assert {"path", "sha256", "sample_rate_hz", "duration_s", "channels"} <= set(d["recording"])
    assert {"source", "reference_shaft", "mean_hz", "min_hz", "max_hz"} <= set(d["speed"])
    assert {"pulses_found", "pulses_repaired", "pulses_rejected"} <= set(d["tach"])
    assert d["recording"]["sha256"] == hashlib.sha256(rec.read_bytes()).hexdigest()  # hashlib reference
    assert d["recording"]["channels"] == 2 and d["recording"]["sample_rate_hz"] == FS
    assert d["speed"]["source"] == "tach" and d["speed"]["reference_shaft"] == "input"
    assert d["tach"]["pulses_found"] == n_pulses
    assert d["tach"]["pulses_repaired"] == 0 and d["tach"]["pulses_rejected"] == 0
    shafts = {s["name"]: s for s in d["shafts"]}
    assert set(shafts) == {"input", "output"}
    assert {"name", "mean_hz", "rpm", "min_hz", "max_hz"} <= set(shafts["input"])
    assert shafts["input"]["rpm"] == pytest.approx(1500.0, rel=1e-4)   # the speed written in the file
    # 40T drives 15T: output turns 40/15 faster (domain reference 1.1).
    assert shafts["output"]["rpm"] == pytest.approx(1500.0 * 40 / 15, rel=1e-4)
    q = d["recording"]["channel_quality"]
    assert q[0]["role"] == "sensor acc" and q[1]["role"] == "tach"
    assert not q[0]["clipped"] and q[0]["non_finite"] == 0
    rms = float(np.sqrt(np.mean(sf.read(str(rec), dtype="float64")[0][:, 0] ** 2)))
    assert q[0]["rms"] == pytest.approx(rms, rel=1e-5)  # numpy on soundfile's decode as reference
    assert q[0]["sensor"]["rms"] == pytest.approx(10.0 * rms, rel=1e-5)


def test_info_text_nominal_speed(tmp_path, capsys):
    rec = tmp_path / "nom.flac"
    _recording(rec)
    model = tmp_path / "elsewhere.toml"
    model.write_text(MODEL.replace("{tach}", "nominal_rpm = 3000.0"))
    assert main(["info", str(rec), "--model", str(model)]) == 0
    out = capsys.readouterr().out
    assert "source nominal" in out and "SHA-256" in out
    assert "8000.00" in out  # 3000 rpm x 40/15 (domain reference 1.1)
    assert main(["info", str(rec), "--model", str(model), "--json"]) == 0
    d = json.loads(capsys.readouterr().out)
    assert d["tach"] is None and d["speed"]["source"] == "nominal"


def test_info_without_model_prints_facts_and_what_to_add(tmp_path, capsys):
    rec = tmp_path / "alone.wav"
    _recording(rec)
    assert main(["info", str(rec)]) == 0
    out = capsys.readouterr().out
    assert "8000 Hz" in out and "no model" in out and "alone.toml" in out


def test_info_flat_tach_without_nominal_is_one_line_exit_2(tmp_path, capsys):
    rec = tmp_path / "flat.flac"
    _recording(rec, flat_tach=True)
    (tmp_path / "flat.toml").write_text(MODEL.replace("{tach}", "channel = 1"))
    assert main(["info", str(rec)]) == 2
    err = capsys.readouterr().err.strip()
    assert len(err.splitlines()) == 1 and "nominal_rpm" in err


def test_info_flat_tach_falls_back_on_the_mesh_estimate(tmp_path, capsys):
    # as gearbench analyze does without a tach: the speed follows the mesh line (1000 Hz =
    # 40 teeth x 25 Hz), with nominal_rpm as the starting guess (Bonnardot et al. 2005)
    rec = tmp_path / "flat2.flac"
    _recording(rec, flat_tach=True)
    (tmp_path / "flat2.toml").write_text(MODEL.replace("{tach}", "channel = 1\nnominal_rpm = 1470.0"))
    assert main(["info", str(rec), "--json"]) == 0
    d = json.loads(capsys.readouterr().out)
    assert d["speed"]["source"] == "estimated"
    assert d["speed"]["mean_rpm"] == pytest.approx(60 * F_INPUT_HZ, rel=1e-3)  # the simulated 1500 rpm
    assert any("flat" in w for w in d["warnings"])


def test_info_corrupt_file_exit_2_one_line(tmp_path):
    bad = tmp_path / "bad.flac"
    bad.write_bytes(b"fLaC" + np.random.default_rng(3).bytes(3000))
    out = subprocess.run([sys.executable, "-m", "workbench", "info", str(bad)], capture_output=True, text=True)
    assert out.returncode == 2
    lines = out.stderr.strip().splitlines()
    assert len(lines) == 1 and "bad.flac" in lines[0] and "Traceback" not in out.stderr


def test_info_missing_file_and_model(tmp_path, capsys):
    assert main(["info", str(tmp_path / "none.flac")]) == 2
    assert "does not exist" in capsys.readouterr().err
    rec = tmp_path / "r.flac"
    _recording(rec, seconds=0.5)
    assert main(["info", str(rec), "--model", str(tmp_path / "none.toml")]) == 2
    assert len(capsys.readouterr().err.strip().splitlines()) == 1
