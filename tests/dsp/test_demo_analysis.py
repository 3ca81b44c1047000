"""``analyze`` on every bundled demo recording finds what demo_recordings/README.md says.

The README is the outside reference here: it states the simulated truth of each file
(speed, faulted component, where the evidence shows).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from dsp.analysis import analyze
from dsp.model import load_model
from dsp.recording import read_recording

DEMO = Path(__file__).resolve().parents[2] / "demo_recordings"
RPM = 1485.0  # README: motor 1485 rpm nominal, tach on shaft "input"


def _analyze(stem: str):
    path = DEMO / f"{stem}.flac"
    if not path.exists():
        pytest.skip(f"{path.name} is not in this checkout; run tools/make_demo_recordings.py")
    return analyze(read_recording(path), load_model(path.with_suffix(".toml")))


@pytest.fixture(scope="module")
def results():
    cache: dict[str, object] = {}

    def get(stem: str):
        if stem not in cache:
            cache[stem] = _analyze(stem)
        return cache[stem]

    return get


STEMS = ["01_healthy_baseline", "02_early_tooth_damage", "03_broken_tooth", "04_distributed_wear",
         "05_bearing_outer_race", "06_speed_variation"]


@pytest.mark.parametrize("stem", STEMS)
def test_speed_and_shafts(results, stem):
    a = results(stem)
    assert a.speed.source == "tach"
    assert a.speed.shaft == "input"
    # README "Frequencies at 1485 rpm": input 24.75 Hz, intermediate 8.0176 Hz, output 1.7293 Hz
    tol = 2e-3 if stem != "06_speed_variation" else 0.02
    assert a.speed.mean_hz * 60 == pytest.approx(RPM, rel=tol)
    assert a.frequencies.shaft_hz("intermediate") / a.speed.mean_hz == pytest.approx(8.0176 / 24.75, rel=1e-4)
    assert a.frequencies.shaft_hz("output") / a.speed.mean_hz == pytest.approx(1.7293 / 24.75, rel=1e-4)
    assert [t.shaft for t in a.tsa] == ["input", "intermediate", "output"]
    assert a.overall["clipped"] is False  # README: the files never clip


def test_healthy_baseline_has_no_suspect(results):
    a = results("01_healthy_baseline")
    assert a.suspects == ()  # README 01: "What to find: nothing"
    for shaft in ("input", "intermediate"):
        # README 01: FM4 of input and intermediate near 3 (measured 3.0 and 3.3)
        assert a.tsa_for(shaft).indicators["fm4"] == pytest.approx(3.15, abs=0.6)


def test_early_tooth_damage_on_input(results):
    a = results("02_early_tooth_damage")
    top = a.suspects[0]
    # README 02: suspect shaft:input, local tooth damage; FM4 of input about 7.9, intermediate near normal
    assert (top.component, top.kind) == ("shaft:input", "localized tooth damage")
    assert a.tsa_for("input").indicators["fm4"] > 6.0
    assert a.tsa_for("intermediate").indicators["fm4"] < 5.0
    assert top.view == "tsa"


@pytest.mark.parametrize("stem", ["03_broken_tooth", "06_speed_variation"])
def test_broken_tooth_on_intermediate(results, stem):
    a = results(stem)
    top = a.suspects[0]
    # README 03/06: suspect shaft:intermediate, local tooth damage, FM4 far above 3 (about 94);
    # the stage 1 family is spaced at the intermediate rate (8.02 Hz, order 0.3239)
    assert (top.component, top.kind) == ("shaft:intermediate", "localized tooth damage")
    assert a.tsa_for("intermediate").indicators["fm4"] > 30
    fam = next(f for f in a.sidebands if f.mesh == "stage 1" and f.harmonic == 1)
    assert fam.owner_shaft == "intermediate"
    assert fam.spacing_order == pytest.approx(0.3239, abs=1e-4)
    # README 03: damage at tooth 40 of 71, about 205 deg
    mid = a.tsa_for("intermediate")
    peak_deg = mid.angle_deg[int(np.argmax(np.abs(mid.difference)))]
    assert abs((peak_deg - 205.4 + 180) % 360 - 180) < 3 * 360 / 71


def test_speed_variation_is_reported(results):
    a = results("06_speed_variation")
    # README 06: the motor speed wanders by up to +-8 %
    assert (a.speed.max_hz - a.speed.min_hz) / a.speed.mean_hz == pytest.approx(0.16, abs=0.05)
    assert any("speed spread" in w for w in a.warnings)


def test_distributed_wear_on_input(results):
    a = results("04_distributed_wear")
    top = a.suspects[0]
    # README 04: suspect shaft:input, distributed wear; 2xGMF larger than GMF (0.70 g against 0.34 g)
    assert (top.component, top.kind) == ("shaft:input", "distributed wear or eccentricity")
    h1, h2 = (next(f for f in a.sidebands if f.mesh == "stage 1" and f.harmonic == h) for h in (1, 2))
    assert h2.carrier_amplitude / h1.carrier_amplitude == pytest.approx(0.70 / 0.34, rel=0.2)
    assert h1.owner_shaft == "input"  # README 04: many small sidebands at 24.75 Hz (input rate)
    assert [s.component for s in a.suspects].count("shaft:input") == 1


def test_outer_race_on_intermediate_nde(results):
    a = results("05_bearing_outer_race")
    top = a.suspects[0]
    # README 05: suspect bearing:intermediate NDE, outer race; peak at about 38.2 Hz with harmonics
    assert (top.component, top.kind) == ("bearing:intermediate NDE", "bearing outer race")
    assert top.view == "envelope"
    m = next(m for m in a.envelope_matches if m.component == "bearing:intermediate NDE" and m.label == "BPFO")
    first = next(h for h in m.hits if h.harmonic == 1)
    assert first.clear and first.found_hz == pytest.approx(38.2, abs=0.3)
    assert m.n_clear >= 3
    # README 05: the envelope band comes from the kurtogram and lies above the gear mesh lines
    # (3 x 569.25 Hz; Randall & Antoni 2011: demodulate where the impacts ring, not the gears)
    lo, hi = a.envelope.band_hz
    assert a.envelope.band_source == "kurtogram" and lo > 3 * 569.25
    assert len(a.suspects) == 1


def test_speed_variation_without_the_tach():
    # README 06 with the tach channel ignored: the speed comes from the stage 1 mesh phase
    # (Bonnardot et al. 2005) and the broken tooth of the intermediate wheel is still found
    import dataclasses

    path = DEMO / "06_speed_variation.flac"
    if not path.exists():
        pytest.skip("06_speed_variation.flac is not in this checkout")
    model = load_model(path.with_suffix(".toml"))
    model = dataclasses.replace(model, tach=dataclasses.replace(model.tach, channel=None, nominal_rpm=RPM))
    a = analyze(read_recording(path), model)
    assert a.speed.source == "estimated"
    assert (a.speed.max_hz - a.speed.min_hz) / a.speed.mean_hz == pytest.approx(0.16, abs=0.05)  # README 06: +-8 %
    assert (a.suspects[0].component, a.suspects[0].kind) == ("shaft:intermediate", "localized tooth damage")


def test_route_recording_without_tach(results):
    a = results("07_no_tach_route")
    # README 07: no tach; speed estimated from the stage 1 mesh, 1455.2 rpm (2 % below the
    # 1485 rpm nameplate), range about 1448 to 1461 rpm; suspect shaft:input, local tooth damage
    assert a.speed.source == "estimated"
    assert a.speed.mean_hz * 60 == pytest.approx(1455.2, abs=1.5)
    assert 60 * a.speed.min_hz == pytest.approx(1448.0, abs=3) and 60 * a.speed.max_hz == pytest.approx(1460.8, abs=3)
    assert any("estimated" in w and "1485" in w for w in a.warnings)
    assert (a.suspects[0].component, a.suspects[0].kind) == ("shaft:input", "localized tooth damage")
    # the frequencies follow the real speed: stage 1 GMF about 557.8 Hz, not 569.25 Hz
    assert a.frequencies.meshes[0].gmf_hz == pytest.approx(557.8, abs=0.5)
