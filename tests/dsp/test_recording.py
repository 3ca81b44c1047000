"""Reading recordings, with soundfile as the reference decoder."""

import hashlib
import math
import tracemalloc
from dataclasses import dataclass

import numpy as np
import pytest
import soundfile as sf

import dsp.recording as recording_module
from dsp.errors import GearbenchError, RecordingError
from dsp.recording import G_N_M_S2, read_recording, sensor_signal, signal_quality, to_m_s2


@dataclass(frozen=True)
class _Sensor:  # the fields of dsp.model.Sensor that sensor_signal uses
    name: str
    channel: int
    scale: float = 1.0
    units: str = "g"


def _write(path, n_frames, n_channels, fs, subtype, rng, fmt=None):
    x = (0.5 * rng.uniform(-1, 1, (n_frames, n_channels))).astype(np.float64)
    sf.write(str(path), x, fs, subtype=subtype, format=fmt)
    return x


@pytest.mark.parametrize("name,subtype,lsb", [
    ("a.wav", "PCM_16", 2.0 ** -15),
    ("a.flac", "PCM_24", 2.0 ** -23),
    ("a.wav", "FLOAT", 0.0),
])
def test_round_trip_matches_soundfile(tmp_path, name, subtype, lsb):
    rng = np.random.default_rng(1)
    path = tmp_path / name
    x = _write(path, 5000, 3, 8000, subtype, rng)
    rec = read_recording(path)
    ref, fs = sf.read(str(path), dtype="float32", always_2d=True)
    assert rec.sample_rate_hz == fs == 8000
    assert (rec.n_channels, rec.n_frames) == (3, 5000)
    assert rec.duration_s == pytest.approx(5000 / 8000, rel=1e-15)
    assert rec.subtype == subtype and rec.format == sf.info(str(path)).format
    assert rec.data.dtype == np.float32 and rec.data.flags.c_contiguous
    # soundfile is the reference decoder: identical values.
    assert np.array_equal(rec.data, ref.T)
    # Against the values written: within one quantisation step of the subtype (half a
    # step of rounding, plus libsndfile writing with scale 2**(b-1)-1 and reading with
    # 2**(b-1), from memory: libsndfile normalisation), float32 rounding for FLOAT.
    tol = lsb if lsb else 2.0 ** -25
    assert np.max(np.abs(rec.data.astype(np.float64) - x.T)) <= tol
    # SHA-256 of the file bytes (hashlib as reference).
    assert rec.sha256 == hashlib.sha256(path.read_bytes()).hexdigest()


def test_block_reading_across_block_boundaries(tmp_path, monkeypatch):
    rng = np.random.default_rng(2)
    monkeypatch.setattr(recording_module, "BLOCK_FRAMES", 1000)
    for n_channels in (1, 2):
        path = tmp_path / f"b{n_channels}.flac"
        _write(path, 4321, n_channels, 1000, "PCM_16", rng)
        rec = read_recording(path)
        ref, _ = sf.read(str(path), dtype="float32", always_2d=True)
        assert rec.data.shape == (n_channels, 4321)
        assert np.array_equal(rec.data, ref.T)  # soundfile as reference


def test_arrays_are_read_only(tmp_path):
    rng = np.random.default_rng(3)
    path = tmp_path / "r.wav"
    _write(path, 100, 2, 1000, "PCM_16", rng)
    rec = read_recording(path)
    with pytest.raises(ValueError):
        rec.data[0, 0] = 1.0
    ch = rec.channel(1)
    assert np.shares_memory(ch, rec.data) and ch.dtype == np.float32
    with pytest.raises(ValueError):
        ch[0] = 1.0
    with pytest.raises(RecordingError, match="channel 2 does not exist"):
        rec.channel(2)


def test_no_float64_copy_of_the_file(tmp_path):
    # Decoding in blocks keeps the peak at the final float32 array plus one staging
    # block and the 256 KiB read buffer of the SHA-256 thread; a float64 copy of the
    # whole file would add twice the array (common practice, no source).
    rng = np.random.default_rng(4)
    path = tmp_path / "m.flac"
    _write(path, 200_000, 2, 10_000, "PCM_16", rng)
    tracemalloc.start()
    try:
        rec = read_recording(path)
        _, peak = tracemalloc.get_traced_memory()
    finally:
        tracemalloc.stop()
    block_bytes = recording_module.BLOCK_FRAMES * 2 * 4
    assert peak < rec.data.nbytes + block_bytes + 2 ** 18 + 64 * 1024


def test_missing_empty_corrupt_and_folder_give_recording_error(tmp_path):
    with pytest.raises(RecordingError, match="does not exist"):
        read_recording(tmp_path / "nope.flac")
    empty = tmp_path / "empty.wav"
    empty.write_bytes(b"")
    with pytest.raises(RecordingError, match="empty"):
        read_recording(empty)
    junk = tmp_path / "junk.wav"
    junk.write_bytes(np.random.default_rng(5).bytes(4096))
    with pytest.raises(RecordingError, match="cannot decode"):
        read_recording(junk)
    with pytest.raises(RecordingError, match="folder"):
        read_recording(tmp_path)


def test_truncated_flac_is_an_error_or_shorter(tmp_path):
    rng = np.random.default_rng(6)
    path = tmp_path / "t.flac"
    _write(path, 20_000, 2, 8000, "PCM_16", rng)
    cut = tmp_path / "cut.flac"
    cut.write_bytes(path.read_bytes()[: path.stat().st_size // 2])
    try:
        rec = read_recording(cut)
    except RecordingError as exc:
        assert "corrupt" in str(exc) or "truncated" in str(exc)
    else:
        assert 0 < rec.n_frames < 20_000


def test_header_only_wav_holds_no_samples(tmp_path):
    path = tmp_path / "zero.wav"
    sf.write(str(path), np.zeros((0, 2)), 8000, subtype="PCM_16")
    with pytest.raises(RecordingError, match="no samples"):
        read_recording(path)


def test_sensor_signal_scale_and_units(tmp_path):
    rng = np.random.default_rng(7)
    path = tmp_path / "s.wav"
    _write(path, 1000, 2, 1000, "FLOAT", rng)
    rec = read_recording(path)
    y = sensor_signal(rec, _Sensor("a", 1, scale=20.0))
    assert y.dtype == np.float32 and not y.flags.writeable
    assert np.array_equal(y, rec.channel(1) * np.float32(20.0))
    same = sensor_signal(rec, _Sensor("b", 0))
    assert np.shares_memory(same, rec.data)
    with pytest.raises(GearbenchError, match="scale"):
        sensor_signal(rec, _Sensor("c", 0, scale=0.0))
    a = to_m_s2(y, "g")
    assert a.dtype == np.float32
    assert G_N_M_S2 == 9.80665  # BIPM SI Brochure: g_n = 9.80665 m/s2 exactly
    np.testing.assert_allclose(a, y.astype(np.float64) * 9.80665, rtol=1e-6)  # BIPM g_n
    assert np.array_equal(to_m_s2(y, "m/s2"), y)
    with pytest.raises(GearbenchError, match="units"):
        to_m_s2(y, "mm/s")


def test_signal_quality_nan_inf_flat():
    x = np.random.default_rng(8).standard_normal(10_000).astype(np.float32)
    q = signal_quality(x)
    # Gaussian noise meets its extremes once: no clipping (common practice, no source).
    assert not q.clipped and q.n_nonfinite == 0 and not q.flat
    assert q.rms == pytest.approx(float(np.sqrt(np.mean(x.astype(np.float64) ** 2))), rel=1e-6)  # numpy reference
    assert q.peak == float(np.max(np.abs(x)))
    y = x.copy()
    y[[5, 17, 99]] = np.nan
    y[200] = np.inf
    q = signal_quality(y)
    assert q.n_nonfinite == 4 and np.isfinite(q.rms) and np.isfinite(q.peak)
    assert signal_quality(np.full(100, 0.25)).flat
    assert signal_quality(np.full(10, np.nan)).flat


def test_signal_quality_detects_clipping():
    fs, f = 10_000.0, 50.0
    t = np.arange(20_000) / fs
    s = np.sin(2 * np.pi * f * t)
    clipped = np.clip(1.25 * s, -1.0, 1.0)
    q = signal_quality(clipped)
    # Time fraction with |1.25 sin| >= 1 is 1 - (2/pi) asin(0.8) (trigonometry).
    expected = 1 - 2 / math.pi * math.asin(0.8)
    assert q.clipped
    assert abs(q.clipped_fraction - expected) < 0.002
    assert not signal_quality(s).clipped  # a clean sine meets its peak value at most twice in a row here
    # Full scale: runs just under +-1 of float-normalised PCM (|x| >= 0.999).
    near = np.clip(1.2 * s, -0.9995, 0.9995) + 1e-6 * np.random.default_rng(9).standard_normal(t.size)
    assert not signal_quality(near).clipped
    assert signal_quality(near, full_scale=1.0).clipped
    # Two samples at the rail are not a run of three.
    z = np.random.default_rng(10).uniform(-0.5, 0.5, 1000)
    z[[100, 101]] = 0.9
    assert not signal_quality(z).clipped
    z[102] = 0.9
    q = signal_quality(z)
    assert q.clipped and q.clipped_fraction == pytest.approx(3 / 1000)
