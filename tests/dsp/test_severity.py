"""Tests of dsp.severity: ISO 20816-3 / ISO 10816-3 velocity zones and broadband velocity.

The zone boundary values are FROM MEMORY (ISO 10816-3:2009 Annex A as quoted in the
project domain reference, section 9) and NOT confirmed against the purchased standard.
"""

from __future__ import annotations

import json
import math
from types import SimpleNamespace

import numpy as np
import pytest

from dsp.errors import AnalysisError
from dsp.severity import (
    CAUTION,
    ZONE_BOUNDARIES_MM_S,
    overall_velocity_rms,
    recommended_band_hz,
    velocity_zone,
    zone_boundaries,
)
from dsp.spectrum import rfft_full, spectrum_from_rfft

# from memory: ISO 10816-3:2009 Annex A, domain reference section 9 (not confirmed)
BOUNDARIES = {
    ("group 1", "rigid"): (2.3, 4.5, 7.1),
    ("group 1", "flexible"): (3.5, 7.1, 11.0),
    ("group 2", "rigid"): (1.4, 2.8, 4.5),
    ("group 2", "flexible"): (2.3, 4.5, 7.1),
}

CASES = [(g, f, i) for (g, f) in BOUNDARIES for i in range(3)]


@pytest.mark.parametrize("group,foundation,i", CASES)
def test_zone_at_and_around_each_boundary(group, foundation, i):
    b = BOUNDARIES[(group, foundation)][i]
    lower, upper = "ABCD"[i], "ABCD"[i + 1]
    # from memory: ISO 10816-3:2009 Annex A, domain reference section 9 (values not confirmed)
    assert velocity_zone(b - 0.01, group=group, foundation=foundation).zone == lower
    # our documented choice: a value on a boundary belongs to the upper (worse) zone
    assert velocity_zone(b, group=group, foundation=foundation).zone == upper
    assert velocity_zone(b + 0.01, group=group, foundation=foundation).zone == upper
    assert velocity_zone(math.nextafter(b, 0.0), group=group, foundation=foundation).zone == lower


@pytest.mark.parametrize("group,foundation", list(BOUNDARIES))
def test_table_values_and_extremes(group, foundation):
    # from memory: ISO 10816-3:2009 Annex A, domain reference section 9 (values not confirmed)
    assert zone_boundaries(group, foundation) == BOUNDARIES[(group, foundation)]
    assert ZONE_BOUNDARIES_MM_S[(group, foundation)] == BOUNDARIES[(group, foundation)]
    assert velocity_zone(0.0, group=group, foundation=foundation).zone == "A"
    assert velocity_zone(50.0, group=group, foundation=foundation).zone == "D"


def test_zone_result_carries_meaning_source_and_caution():
    z = velocity_zone(3.0, group="group 2", foundation="rigid", band_hz=(10, 1000))
    assert z.zone == "C"  # from memory: group 2 rigid B/C 2.8, C/D 4.5 (domain reference section 9)
    # zone meanings, from memory (domain reference section 9)
    assert "long-term" in z.meaning and "not" in z.meaning
    assert "FROM MEMORY" in z.source and "20816-3" in z.source
    assert z.confirmed is False
    d = z.to_json_dict()
    json.dumps(d, allow_nan=False)
    assert d["caution"] == CAUTION and d["confirmed"] is False and "FROM MEMORY" in d["source"]
    assert d["boundaries_mm_s"] == {"A/B": 1.4, "B/C": 2.8, "C/D": 4.5}
    assert "upper" in d["boundary_rule"]
    assert z.band_hz == (10.0, 1000.0)


def test_caution_wording():
    # domain reference section 9, "Caution wording for the report" (quoted there)
    assert "not acceptance criteria unless agreed between supplier and purchaser" in CAUTION
    assert "do not address gear-mesh or bearing-defect components" in CAUTION
    assert "consult the current edition of the standard" in CAUTION
    # the project's own additions (brief): qualified analyst, local codes, manufacturer, licensed practice
    for words in ("qualified analyst", "local codes", "manufacturer's limits", "licensed practice",
                  "quoted from memory"):
        assert words in CAUTION


@pytest.mark.parametrize("kw", [{"group": "group 3"}, {"foundation": "soft"}])
def test_unknown_choice_is_refused_with_the_allowed_values(kw):
    with pytest.raises(AnalysisError, match="allowed"):
        velocity_zone(1.0, **kw)


@pytest.mark.parametrize("v", [-0.1, float("nan"), float("inf")])
def test_bad_velocity_is_refused(v):
    with pytest.raises(AnalysisError, match="mm/s"):
        velocity_zone(v)


def test_recommended_band():
    # from memory: domain reference section 9 (10-1000 Hz, or 2-1000 Hz below about 600 r/min)
    assert recommended_band_hz(1485) == (10.0, 1000.0)
    assert recommended_band_hz(300) == (2.0, 1000.0)


def _fake_analysis(x, fs, band=(10.0, 1000.0)):
    spec = spectrum_from_rfft(rfft_full(np.asarray(x), fs), window="hann", units="g")
    return SimpleNamespace(spectrum=spec, settings=SimpleNamespace(velocity_band_hz=band), overall={})


def test_overall_velocity_of_a_1g_tone_at_100hz():
    fs, n = 4096.0, 16384
    t = np.arange(n) / fs
    a = _fake_analysis(np.sin(2 * np.pi * 100.0 * t), fs)
    # domain reference section 8: 1 g peak at 100 Hz -> 11.0364 mm/s RMS
    assert overall_velocity_rms(a, (10.0, 1000.0)) == pytest.approx(11.0364, rel=1e-4)
    # a band without the tone holds only the window's leakage (Hann: 3 lines, Harris 1978)
    assert overall_velocity_rms(a, (200.0, 1000.0)) < 1e-9


def test_low_speed_band_keeps_a_5hz_component():
    fs, n = 4096.0, 65536
    t = np.arange(n) / fs
    a = _fake_analysis(0.01 * np.sin(2 * np.pi * 5.0 * t), fs)
    # v = a / (2 pi f) (domain reference section 8): 0.01 g peak at 5 Hz = 2.2073 mm/s RMS.
    # The Hann window's side lines (5 +- 0.0625 Hz) are divided by their own frequency,
    # an error of order (0.0625 / 5)**2: tolerance 1e-3.
    expected = 0.01 * 9.80665 / (2 * np.pi * 5.0) * 1e3 / np.sqrt(2)
    assert overall_velocity_rms(a, (2.0, 1000.0)) == pytest.approx(expected, rel=1e-3)
    assert overall_velocity_rms(a, (10.0, 1000.0)) < 1e-3 * expected


def test_analysis_band_returns_the_stored_value_and_bad_bands_are_refused():
    a = SimpleNamespace(spectrum=None, settings=SimpleNamespace(velocity_band_hz=(10.0, 1000.0)),
                        overall={"velocity_rms_mm_s": 2.5})
    assert overall_velocity_rms(a, (10, 1000)) == 2.5
    with pytest.raises(AnalysisError, match="band"):
        overall_velocity_rms(a, (100, 10))
