"""Tests of dsp.baseline: a recording compared with a healthy baseline of the same gearbox."""

from __future__ import annotations

import dataclasses
import hashlib
import json
import math
from pathlib import Path

import numpy as np
import pytest

from dsp.analysis import Settings, analyze
from dsp.baseline import (
    ALSO_HIGH_EVIDENCE,
    BaselineComparison,
    Thresholds,
    check_same_gearbox,
    compare,
    na4_star,
)
from dsp.errors import GearbenchError
from dsp.model import load_model
from dsp.recording import read_recording
from dsp.synth import Fault, simulate, write_simulation

ROOT = Path(__file__).resolve().parents[2]
DEMO = ROOT / "demo_recordings"
PAIR = ROOT / "tests" / "data" / "pair_40_15.toml"
TSA_ROWS = ("rms", "kurtosis", "fm0", "fm4", "na4", "m6a", "m8a", "er")


def _analyse_file(flac: Path, toml: Path | None = None):
    return analyze(read_recording(flac), load_model(toml or flac.with_suffix(".toml")), Settings())


@pytest.fixture(scope="module")
def demo():
    """Demo 01 (healthy) as baseline, demo 03 (broken tooth 40 of the intermediate wheel)."""
    base = _analyse_file(DEMO / "01_healthy_baseline.flac")
    broken = _analyse_file(DEMO / "03_broken_tooth.flac")
    return base, broken, compare(broken, base)


def _simulate(tmp: Path, name: str, train, *, rpm: float, seed: int, faults=(), duration_s=5.0, fs=25600.0,
              output_impacts_g: float = 0.0):
    sim = simulate(train, rpm=rpm, duration_s=duration_s, fs=fs, seed=seed, faults=faults)
    if output_impacts_g:
        # a driven machine that knocks once per turn of the output shaft: an impact
        # exciting a 2.5 kHz resonance (3 % damping) at every whole output revolution
        x = np.array(sim.data, dtype=np.float64)
        turns = np.flatnonzero(np.diff(np.floor(sim.shaft_angle_rev("output"))) > 0) + 1
        tt = np.arange(int(0.01 * fs)) / fs
        ring = np.exp(-2 * np.pi * 2500 * 0.03 * tt) * np.sin(2 * np.pi * 2500 * tt)
        pulses = np.zeros(x.shape[1])
        pulses[turns] = output_impacts_g
        x[sim.accel_channel] += np.convolve(pulses, ring)[: x.shape[1]]
        x = x.astype(np.float32)
        x.setflags(write=False)
        sim = dataclasses.replace(sim, data=x)
    path = tmp / f"{name}.flac"
    write_simulation(sim, path, train)
    return _analyse_file(path)


@pytest.fixture(scope="module")
def speeds(tmp_path_factory):
    """The demo gearbox (same seed: same tooth errors) at 1485 rpm, and at 1300 rpm healthy and broken."""
    tmp = tmp_path_factory.mktemp("speeds")
    train = load_model(DEMO / "01_healthy_baseline.toml")
    base = _simulate(tmp, "base_1485", train, rpm=1485.0, seed=7)
    slow = _simulate(tmp, "healthy_1300", train, rpm=1300.0, seed=7)
    broken = _simulate(tmp, "broken_1300", train, rpm=1300.0, seed=7,
                       faults=(Fault("tooth", "stage 1:intermediate", tooth=40, severity="severe"),))
    return base, slow, broken


# --- NA4* -----------------------------------------------------------------------------


def test_na4_star_known_values():
    theta = np.arange(1024) / 1024
    s = np.sin(2 * np.pi * 5 * theta)
    # domain reference section 4: M = 1, r = 2 sin 5 theta gives NA4 = 1.5 (the kurtosis of a sine)
    assert na4_star(2 * s, 2 * s) == pytest.approx(1.5, abs=1e-12)
    # NA4* (Decker, Handschuh & Zakrajsek 1994, from memory): the fourth moment of the current
    # residual over the squared variance of the good gearbox: E[(2 sin)^4] / (E[sin^2])^2 = 6 / 0.25
    assert na4_star(2 * s, s) == pytest.approx(24.0, abs=1e-12)


def test_na4_star_of_gaussian_noise_against_an_equal_baseline():
    rng = np.random.default_rng(20260)
    r = rng.standard_normal(2**16)
    b = rng.standard_normal(2**16)
    # Gaussian kurtosis 3 (domain reference section 4); std of the estimate about sqrt(24/N) = 0.02,
    # and the two variances differ by about sqrt(2/N) each: tolerance 0.15
    assert na4_star(r, b) == pytest.approx(3.0, abs=0.15)
    assert math.isnan(na4_star(r, np.zeros(16)))


# --- demo 01 against demo 03 ----------------------------------------------------------------


def test_broken_tooth_shows_on_the_intermediate_shaft_only(demo):
    base, broken, cmp = demo
    # demo_recordings/README.md: 03 is a broken tooth on the 71 T wheel of shaft "intermediate";
    # FM4 about 3.3 in 01 and about 96 in 03 (measured there)
    for name in ("fm4", "na4", "er", "m6a"):
        assert cmp.indicator(name, "intermediate").flag == "grown", name
    assert cmp.indicator("fm4", "intermediate").baseline == pytest.approx(3.3, abs=0.5)
    assert cmp.indicator("fm4", "intermediate").now > 50
    # the healthy shafts do not grow (demo README: only the intermediate wheel is damaged)
    for shaft in ("input", "output"):
        grown = [r.name for r in cmp.indicators if r.shaft == shaft and r.flag == "grown"]
        assert grown == [], (shaft, grown)
    # sidebands spaced at the intermediate rate (8.02 Hz = order 0.3239) grew, no other family did
    fams = [g for g in cmp.grown if g.kind == "sideband family"]
    assert fams and {g.shaft for g in fams} == {"intermediate"}  # demo README, 03
    assert all(g.spacing_order == pytest.approx(23 / 71, rel=1e-9) for g in fams)  # 23 T / 71 T (README)
    assert cmp.shafts_grown() == ("intermediate",)
    # ranked by growth in dB
    dbs = [g.change_db for g in cmp.grown]
    assert dbs == sorted(dbs, reverse=True)
    assert cmp.suspects[0].component == "shaft:intermediate"


def test_change_columns_follow_their_definitions(demo):
    _, _, cmp = demo
    for r in cmp.indicators:
        if not (math.isfinite(r.baseline) and math.isfinite(r.now)) or r.baseline <= 0:
            continue
        ratio = r.now / r.baseline
        assert r.change_ratio == pytest.approx(ratio, rel=1e-12)
        # 20 log10 for amplitude-like indicators, 10 log10 for normalised moments (module docs)
        factor = 20.0 if r.name in ("rms", "crest_factor", "velocity_rms_mm_s", "fm0", "er") else 10.0
        assert r.db_kind == f"{int(factor)}log10"
        assert r.change_db == pytest.approx(factor * np.log10(ratio), rel=1e-9, abs=1e-12)
    # NA4* is normalised by the baseline residual variance (Decker et al. 1994, from memory)
    base, broken, _ = demo
    rb = np.asarray(base.tsa_for("intermediate").residual, dtype=float)
    rc = np.asarray(broken.tsa_for("intermediate").residual, dtype=float)
    expected = np.mean((rc - rc.mean()) ** 4) / np.var(rb) ** 2
    assert cmp.indicator("na4", "intermediate").now == pytest.approx(expected, rel=1e-9)


def test_json_document(demo):
    _, _, cmp = demo
    d = cmp.to_json_dict()
    json.dumps(d, allow_nan=False)
    sha = hashlib.sha256((DEMO / "01_healthy_baseline.flac").read_bytes()).hexdigest()
    assert d["sha256"] == sha  # hashlib as the reference
    assert Path(d["path"]).name == "01_healthy_baseline.flac"
    assert {"name", "shaft", "baseline", "now", "change_ratio", "change_db", "flag"} <= set(d["indicators"][0])
    assert d["grown"] and {"what", "order", "baseline", "now", "change_db"} <= set(d["grown"][0])
    names = {(r["name"], r["shaft"]) for r in d["indicators"]}
    assert {("rms", None), ("crest_factor", None), ("kurtosis", None), ("velocity_rms_mm_s", None)} <= names
    assert {(n, "intermediate") for n in TSA_ROWS} <= names


def test_overlays_are_on_the_current_axes_and_read_only(demo):
    base, broken, cmp = demo
    assert cmp.baseline_order_amplitude.shape == cmp.order.shape
    assert not cmp.baseline_order_amplitude.flags.writeable
    # the mesh line at order 23 (23 T input pinion, demo README) keeps its height in the overlay
    o = np.asarray(base.order_spectrum.order)
    near = np.abs(o - 23.0) < 0.01
    peak_base = float(np.max(np.asarray(base.order_spectrum.amplitude)[near]))
    near_c = np.abs(cmp.order - 23.0) < 0.01
    assert float(np.nanmax(cmp.baseline_order_amplitude[near_c])) == pytest.approx(peak_base, rel=1e-9)
    for shaft in ("input", "intermediate"):
        assert cmp.baseline_tsa[shaft].shape == cmp.tsa_angle_deg[shaft].shape
    assert cmp.baseline_envelope_amplitude.shape == cmp.envelope_order.shape


def test_a_recording_against_itself_changes_nothing(demo):
    base, _, _ = demo
    cmp = compare(base, base)
    assert all(r.flag in ("ok", "n/a") for r in cmp.indicators)
    assert all(r.change_db == 0.0 for r in cmp.indicators if math.isfinite(r.change_db))
    assert cmp.grown == () and cmp.shafts_grown() == ()


def test_thresholds_are_adjustable(demo):
    base, broken, _ = demo
    lax = compare(broken, base, thresholds=Thresholds(moment_delta=500.0, growth_db=40.0))
    assert lax.indicator("fm4", "intermediate").flag == "ok"
    assert lax.grown == ()
    assert lax.to_json_dict()["thresholds"]["moment_delta"] == 500.0


@pytest.mark.parametrize("kw", [{"amplitude_ratio": 0.5}, {"growth_db": -1.0}, {"drop_ratio": 2.0},
                                {"n_sideband_orders": 0}])
def test_bad_thresholds_are_refused(kw):
    with pytest.raises(GearbenchError):
        Thresholds(**kw)


# --- different speed ------------------------------------------------------------------------


def test_unchanged_gearbox_at_another_speed_gives_no_flags(speeds):
    base, slow, _ = speeds
    cmp = compare(slow, base)
    assert cmp.baseline_rpm == pytest.approx(1485.0, rel=1e-3) and cmp.current_rpm == pytest.approx(1300.0, rel=1e-3)
    # the same gearbox: nothing grows when compared in orders (common practice, no source)
    assert [(r.name, r.shaft) for r in cmp.indicators if r.flag == "grown"] == []
    assert cmp.grown == ()
    assert any("speeds differ" in n for n in cmp.notes)
    # mesh harmonics line up in orders: h x 23 for the 23 T input pinion (domain reference 1.1)
    for h in (1, 2, 3):
        sel = np.abs(cmp.order - 23.0 * h) < 0.5
        k_now = np.argmax(np.where(sel, np.asarray(slow.order_spectrum.amplitude), -1))
        k_base = np.nanargmax(np.where(sel, cmp.baseline_order_amplitude, -1))
        resolution = cmp.order[1] - cmp.order[0]
        assert abs(cmp.order[k_now] - 23.0 * h) <= 1.01 * resolution
        assert abs(cmp.order[k_base] - 23.0 * h) <= 1.01 * resolution
    mesh = [x for x in cmp.lines if x.kind == "mesh harmonic" and x.mesh == "stage 1"]
    assert len(mesh) == 3 and all(abs(x.change_db) < 6.0 for x in mesh)


def test_broken_tooth_at_another_speed_shows_on_its_shaft(speeds):
    base, _, broken = speeds
    cmp = compare(broken, base)
    # synth: severe tooth fault on the intermediate wheel
    assert cmp.indicator("fm4", "intermediate").flag == "grown"
    for shaft in ("input", "output"):
        assert [r.name for r in cmp.indicators if r.shaft == shaft and r.flag == "grown"] == []
    assert {g.shaft for g in cmp.grown if g.kind == "sideband family"} <= {"intermediate"}
    assert cmp.suspects and cmp.suspects[0].component == "shaft:intermediate"


# --- synchronous impacts from the driven machine ------------------------------------------------


def test_impacts_present_in_the_baseline_are_scored_down(tmp_path):
    train = load_model(PAIR)
    kw = dict(rpm=1500.0, duration_s=4.0, fs=12800.0, output_impacts_g=0.8)
    base = _simulate(tmp_path, "knock_base", train, seed=1, **kw)
    now = _simulate(tmp_path, "knock_now", train, seed=2, **kw)
    clean = _simulate(tmp_path, "clean_base", train, rpm=1500.0, duration_s=4.0, fs=12800.0, seed=1)
    # without a baseline the knocking reads as tooth damage on the output shaft (FM4 well above 3,
    # Stewart 1977)
    before = {s.component: s for s in now.suspects}
    assert "shaft:output" in before
    assert now.tsa_for("output").indicators["fm4"] > 6
    cmp = compare(now, base)
    after = {(s.component, s.kind): s for s in cmp.suspects}
    assert ("shaft:output", "localized tooth damage") not in after
    rescored = {(s.component, s.kind): s for s in _all(cmp, now, base)}
    loc = rescored[("shaft:output", "localized tooth damage")]
    assert loc.score < before["shaft:output"].score
    assert any(ALSO_HIGH_EVIDENCE in e for e in loc.evidence)
    # against a clean baseline the same knocking has grown: scored up, with the evidence
    cmp2 = compare(now, clean)
    up = {(s.component, s.kind): s for s in cmp2.suspects}[("shaft:output", "localized tooth damage")]
    assert up.score >= before["shaft:output"].score
    assert any("grown since the baseline" in e for e in up.evidence)


def _all(cmp: BaselineComparison, now, base):
    from dsp.baseline import rerank_suspects

    return rerank_suspects(now, base, cmp.indicators, cmp.lines, thresholds=cmp.thresholds, threshold=0.0)


# --- different gearboxes ----------------------------------------------------------------------


def test_different_gearbox_is_refused_naming_the_difference(demo):
    base, broken, _ = demo
    m = base.model
    other_teeth = dataclasses.replace(m, meshes=(dataclasses.replace(m.meshes[0], driven_teeth=70),))
    with pytest.raises(GearbenchError, match=r"different gearbox: mesh .*71 T.*70 T|different gearbox: mesh .*70 T.*71 T"):
        compare(broken, dataclasses.replace(base, model=other_teeth))
    other_shaft = dataclasses.replace(m, shafts=m.shafts + (type(m.shafts[0])("spare"),))
    with pytest.raises(GearbenchError, match="spare"):
        check_same_gearbox(m, other_shaft)
    p = m.planetary[0]
    other_planets = dataclasses.replace(m, planetary=(dataclasses.replace(p, planets=4),))
    with pytest.raises(GearbenchError, match="planetary stage"):
        check_same_gearbox(m, other_planets)
    # a renamed mesh is the same gearbox
    renamed = dataclasses.replace(m, meshes=(dataclasses.replace(m.meshes[0], name="first stage"),))
    assert check_same_gearbox(m, renamed) == []


def test_baseline_in_other_units_is_converted(tmp_path):
    train = load_model(PAIR)
    sim = simulate(train, rpm=1500.0, duration_s=3.0, fs=12800.0, seed=3)
    path = tmp_path / "pair.flac"
    model = write_simulation(sim, path, train)
    recording = read_recording(path)
    in_g = analyze(recording, model, Settings())
    s = model.sensors[0]
    # the same file read as m/s2: 1 g = 9.80665 m/s2 (exact, 3rd CGPM 1901; domain reference section 8)
    in_si = dataclasses.replace(model, sensors=(dataclasses.replace(s, units="m/s2", scale=s.scale * 9.80665),))
    base = analyze(recording, in_si, Settings())
    cmp = compare(in_g, base)
    assert any("converted" in n for n in cmp.notes)
    for name, shaft in (("rms", None), ("rms", "input"), ("rms", "output"), ("kurtosis", None)):
        assert cmp.indicator(name, shaft).change_ratio == pytest.approx(1.0, rel=1e-5)
    assert cmp.grown == ()
    near = np.abs(cmp.order - 40.0) < 0.01   # the mesh line at order 40 (40 T input gear)
    np.testing.assert_allclose(np.nanmax(cmp.baseline_order_amplitude[near]),
                               np.max(np.asarray(in_g.order_spectrum.amplitude)[near]), rtol=1e-5)
