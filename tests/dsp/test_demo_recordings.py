"""The committed demo recordings are what tools/make_demo_recordings.py makes.

Only 01 (healthy) and 03 (broken tooth) are regenerated here, to stay fast; the
other files are checked for format, size and their model.
"""

from __future__ import annotations

import importlib.util
from pathlib import Path

import numpy as np
import pytest
import soundfile

from dsp.model import load_model

ROOT = Path(__file__).resolve().parents[2]
DEMO = ROOT / "demo_recordings"


def _tool():
    spec = importlib.util.spec_from_file_location("make_demo_recordings", ROOT / "tools" / "make_demo_recordings.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


TOOL = _tool()
STEMS = list(TOOL.SCENARIOS)


def test_every_scenario_is_committed_with_its_model_and_readme():
    assert STEMS == ["01_healthy_baseline", "02_early_tooth_damage", "03_broken_tooth",
                     "04_distributed_wear", "05_bearing_outer_race", "06_speed_variation"]
    assert (DEMO / "README.md").is_file()
    for stem in STEMS:
        assert (DEMO / f"{stem}.flac").is_file(), stem
        assert (DEMO / f"{stem}.toml").is_file(), stem


@pytest.mark.parametrize("stem", STEMS)
def test_demo_file_format_and_model(stem):
    path = DEMO / f"{stem}.flac"
    info = soundfile.info(str(path))
    assert (info.format, info.subtype) == ("FLAC", "PCM_24")
    assert info.samplerate == 25600 and info.channels == 2
    assert info.frames == 30 * 25600
    assert path.stat().st_size <= 5_000_000
    title = TOOL.SCENARIOS[stem][0]
    model = load_model(path.with_suffix(".toml"))
    assert model == TOOL.demo_train(title)
    assert "INVENTED" in model.name and "fictional" in model.name


@pytest.mark.parametrize("stem", ["01_healthy_baseline", "03_broken_tooth"])
def test_regenerated_samples_equal_the_committed_file(stem):
    sim, train = TOOL.demo_simulation(stem)
    scale = train.sensors[0].scale
    data, fs = soundfile.read(str(DEMO / f"{stem}.flac"), dtype="float64", always_2d=True)
    assert fs == sim.fs
    lsb = 2.0**-23  # one step of a 24-bit file (libsndfile maps full scale to +-1)
    accel_err = np.max(np.abs(data[:, 0] * scale - sim.acceleration_g))
    tach_err = np.max(np.abs(data[:, 1] - sim.tach))
    assert accel_err <= scale * lsb  # 24-bit quantisation: half a step, plus float32 rounding
    assert tach_err <= lsb
