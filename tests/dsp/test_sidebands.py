"""Sideband families and their owner shaft, on angle-domain signals built with numpy."""

import numpy as np
import pytest

from dsp.errors import AnalysisError
from dsp.indicators import sideband_index, sideband_level_factor
from dsp.sidebands import Carrier, measure_sidebands

P = 256          # samples per reference revolution
R = 80           # reference revolutions
Z1, Z2 = 19, 73  # a hunting pair (gcd 1)
R2 = Z1 / Z2     # driven shaft order


def order_spectrum(x, samples_per_rev, window="hann"):
    """Peak-scaled one-sided amplitude spectrum of an angle-domain signal, in orders."""
    n = x.size
    w = np.hanning(n + 1)[:-1] if window == "hann" else np.ones(n)
    amp = np.abs(np.fft.rfft(x * w)) * 2 / w.sum()
    return np.fft.rfftfreq(n, 1 / samples_per_rev), amp


def gear_signal(mod_rate, *, depth=0.4, seed=0, noise=0.05, extra_rate=None):
    rng = np.random.default_rng(seed)
    th = np.arange(P * R) / P
    mod = 1 + depth * np.cos(2 * np.pi * mod_rate * th) if mod_rate else np.ones_like(th)
    if extra_rate:
        mod = mod + 0.25 * np.cos(2 * np.pi * 2 * extra_rate * th + 0.3)
    x = mod * (np.cos(2 * np.pi * Z1 * th) + 0.5 * np.cos(2 * np.pi * 2 * Z1 * th + 1.0))
    return x + noise * rng.standard_normal(th.size)


CARRIER = Carrier("stage 1", float(Z1), (("input", 1.0), ("intermediate", R2)))


@pytest.mark.parametrize("owner,rate", [("input", 1.0), ("intermediate", R2)])
@pytest.mark.parametrize("seed", [1, 2, 3])
def test_owner_is_the_modulating_shaft(owner, rate, seed):
    o, a = order_spectrum(gear_signal(rate, seed=seed), P)
    fams = measure_sidebands(o, a, [CARRIER], reference_hz=25.0, n_mesh_harmonics=2)
    assert [f.harmonic for f in fams] == [1, 2]
    for f in fams:
        # Randall 2011, gear-signal chapter: AM at a shaft rate gives sidebands spaced by that rate
        assert f.owner_shaft == owner
        other = "intermediate" if owner == "input" else "input"
        assert f.candidates[owner] > f.candidates[other] + 0.2
        assert f.n_found >= 2
        # AM depth 0.4 on a unit carrier -> sidebands 0.2 (product-to-sum identity, from memory: any trig table)
    assert np.allclose(fams[0].amplitudes[:, 0], 0.2, rtol=0.05)
    assert fams[0].spacing_hz == pytest.approx(25.0 * rate, rel=1e-12)
    assert fams[0].carrier_hz == pytest.approx(25.0 * Z1, rel=1e-12)


def test_no_modulation_no_owner():
    o, a = order_spectrum(gear_signal(None, seed=4), P)
    fams = measure_sidebands(o, a, [CARRIER], reference_hz=25.0, n_mesh_harmonics=2)
    # common practice, no source: a pure carrier on noise has no sideband family to own
    assert all(f.owner_shaft is None for f in fams)
    assert all(f.n_found <= 1 for f in fams)


def test_integer_ratio_prefers_the_parsimonious_owner():
    # driven shaft at exactly 1/3 of the input: every input sideband is also a
    # 3k-th sideband of the driven shaft.  Modulation at the slow shaft must not
    # be given to the fast one, and the other way round.
    carrier = Carrier("pair", 21.0, (("input", 1.0), ("slow", 1 / 3)))
    for rate, owner in ((1.0, "input"), (1 / 3, "slow")):
        rng = np.random.default_rng(5)
        th = np.arange(P * R) / P
        x = (1 + 0.4 * np.cos(2 * np.pi * rate * th) + 0.2 * np.cos(2 * np.pi * 2 * rate * th)) \
            * np.cos(2 * np.pi * 21 * th) + 0.02 * rng.standard_normal(th.size)
        o, a = order_spectrum(x, P)
        fam = measure_sidebands(o, a, [carrier], reference_hz=10.0, n_mesh_harmonics=1)[0]
        assert fam.owner_shaft == owner  # common practice, no source: the family's own spacing explains it


def test_sideband_index_and_level_factor_match_reference_values():
    # Domain reference sec. 4 check: TSA = cos20t + 0.1cos19t + 0.1cos21t: SI = 0.1, SLF = 0.280056
    th = np.arange(1024 * 8) / 1024
    x = np.cos(2 * np.pi * 20 * th) + 0.1 * np.cos(2 * np.pi * 19 * th) + 0.1 * np.cos(2 * np.pi * 21 * th)
    o, a = order_spectrum(x, 1024, window="rect")
    one_rev = x[:1024]
    std = float(np.std(one_rev))
    fam = measure_sidebands(o, a, [Carrier("m", 20.0, (("s", 1.0),))], reference_hz=1.0,
                            n_mesh_harmonics=1, tsa_std={"s": std})[0]
    assert fam.sideband_index == pytest.approx(0.1, abs=1e-9)  # Večeř et al. 2005 via domain reference sec. 4
    assert fam.sideband_level_factor == pytest.approx(0.280056, abs=1e-6)  # domain reference sec. 4 [computed]
    # and the same as the indicator functions of dsp.indicators
    assert fam.sideband_index == pytest.approx(sideband_index(0.1, 0.1), abs=1e-9)
    assert fam.sideband_level_factor == pytest.approx(sideband_level_factor(0.1, 0.1, std), abs=1e-9)


def test_orders_tolerate_a_relative_speed_error():
    # A spectrum built at an assumed constant speed 0.3 % off: lines sit 0.3 % away
    # from the expected orders; the tolerance must follow relative_speed_error.
    th = np.arange(P * R) / P * 1.003
    rng = np.random.default_rng(6)
    x = (1 + 0.4 * np.cos(2 * np.pi * R2 * th)) * np.cos(2 * np.pi * Z1 * th) + 0.05 * rng.standard_normal(th.size)
    o, a = order_spectrum(x, P)
    tight = measure_sidebands(o, a, [CARRIER], reference_hz=25.0, n_mesh_harmonics=1)[0]
    loose = measure_sidebands(o, a, [CARRIER], reference_hz=25.0, n_mesh_harmonics=1, relative_speed_error=0.005)[0]
    assert tight.owner_shaft is None  # common practice, no source: lines 15 lines off are missed
    assert loose.owner_shaft == "intermediate"


def test_evidence_has_numbers_and_inputs_are_not_modified():
    o, a = order_spectrum(gear_signal(R2, seed=7), P)
    a.setflags(write=False)
    fam = measure_sidebands(o, a, [CARRIER], reference_hz=25.0, n_mesh_harmonics=1)[0]
    assert any("owner: shaft intermediate" in e for e in fam.evidence)
    assert all(any(ch.isdigit() for ch in e) for e in fam.evidence)
    assert not fam.amplitudes.flags.writeable


def test_bad_input_raises_clear_error():
    with pytest.raises(AnalysisError, match="order spectrum"):
        measure_sidebands(np.arange(4.0), np.ones(4), [CARRIER], reference_hz=1.0)
    with pytest.raises(AnalysisError, match="at least 1"):
        measure_sidebands(np.arange(100.0), np.ones(100), [CARRIER], reference_hz=1.0, n_sideband_orders=0)
