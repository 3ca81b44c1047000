"""The committed demo recordings are what tools/make_demo_recordings.py makes.

Only 01 (healthy), 03 (broken tooth) and 07 (no tach) are regenerated here, to stay
fast; the other files are checked for format, size and their model.  07 is also analysed:
the speed must be estimated from the mesh (its README section is the reference).
"""

from __future__ import annotations

import importlib.util
from dataclasses import replace
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
                     "04_distributed_wear", "05_bearing_outer_race", "06_speed_variation",
                     "07_no_tach_route"]
    assert (DEMO / "README.md").is_file()
    for stem in STEMS:
        assert (DEMO / f"{stem}.flac").is_file(), stem
        assert (DEMO / f"{stem}.toml").is_file(), stem


@pytest.mark.parametrize("stem", STEMS)
def test_demo_file_format_and_model(stem):
    path = DEMO / f"{stem}.flac"
    info = soundfile.info(str(path))
    assert (info.format, info.subtype) == ("FLAC", "PCM_24")
    no_tach = stem in TOOL.NO_TACH
    assert info.samplerate == 25600 and info.channels == (1 if no_tach else 2)
    assert info.frames == 30 * 25600
    assert path.stat().st_size <= 5_000_000
    title = TOOL.SCENARIOS[stem][0]
    model = load_model(path.with_suffix(".toml"))
    expected = TOOL.demo_train(title)
    if no_tach:  # README 07: no tach channel, the nameplate speed only
        expected = replace(expected, tach=replace(expected.tach, channel=None))
        assert model.tach.nominal_rpm == 1485.0
    assert model == expected
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


def test_regenerated_no_tach_file_equals_the_committed_file():
    sim, train = TOOL.demo_simulation("07_no_tach_route")
    data, fs = soundfile.read(str(DEMO / "07_no_tach_route.flac"), dtype="float64", always_2d=True)
    assert fs == sim.fs and data.shape == (sim.n_frames, 1)
    lsb = 2.0**-23  # one step of a 24-bit file
    assert np.max(np.abs(data[:, 0] * train.sensors[0].scale - sim.acceleration_g)) <= train.sensors[0].scale * lsb
    # README 07: the machine runs 2 % below the 1485 rpm nameplate, wandering by +-0.5 %
    truth_rpm = 60.0 * sim.reference_hz
    assert truth_rpm.mean() == pytest.approx(0.98 * 1485.0, rel=2e-3)
    assert truth_rpm.max() / truth_rpm.min() - 1 == pytest.approx(0.01, rel=0.2)


def test_no_tach_demo_is_analysed_with_the_estimated_speed():
    from dsp.analysis import analyze
    from dsp.recording import read_recording

    path = DEMO / "07_no_tach_route.flac"
    sim, _ = TOOL.demo_simulation("07_no_tach_route")
    a = analyze(read_recording(path), load_model(path.with_suffix(".toml")))
    assert a.speed.source == "estimated"
    # README 07: speed from the stage 1 mesh phase within 0.1 % of the simulated truth
    # (Bonnardot et al. 2005 track the speed from the mesh phase)
    assert a.speed.mean_hz == pytest.approx(float(sim.reference_hz.mean()), rel=1e-3)
    # README 07 (the fault of 02): the input pinion is the first suspect, local tooth damage
    assert a.suspects, "README 07: shaft:input must be ranked"
    assert (a.suspects[0].component, a.suspects[0].kind) == ("shaft:input", "localized tooth damage")

