"""Load benchmark: reading a recording and its tach versus decoding the file alone.

Writes a 60 s, 51.2 kHz, 2-channel 24-bit FLAC to a temporary folder (channel 0:
accelerometer-like noise plus tones, channel 1: a 1-pulse-per-rev tach at ~25 Hz),
then measures in this one process

- t_decode: best of 3 of ``soundfile.read(path, dtype="float32")`` alone;
- t_load:   best of 3 of ``read_recording`` + ``detect_pulses`` + ``speed_profile``.

The target is t_load / t_decode <= 1.5.  Ends with one JSON line.
Run: ``python tests/benchmarks/bench_load.py``.
"""

from __future__ import annotations

import json
import tempfile
import time
import tracemalloc
from pathlib import Path

import numpy as np
import soundfile as sf

from dsp.recording import read_recording
from dsp.tach import detect_pulses, speed_profile

FS = 51_200
SECONDS = 60.0
TARGET = 1.5
REPEATS = 3


def write_flac(path: Path) -> None:
    rng = np.random.default_rng(20240601)
    n = int(FS * SECONDS)
    t = np.arange(n) / FS
    # Shaft speed wandering 2 % around 25 Hz; the tach fires once per revolution.
    angle_rev = 25.0 * t + 25.0 * 0.02 * (1 - np.cos(2 * np.pi * 0.2 * t)) / (2 * np.pi * 0.2)
    acc = (0.05 * rng.standard_normal(n)
           + 0.10 * np.sin(2 * np.pi * 19 * angle_rev)            # gear mesh, 19 teeth
           + 0.03 * np.sin(2 * np.pi * 38 * angle_rev)
           + 0.02 * np.sin(2 * np.pi * angle_rev))
    cycle = angle_rev % 1.0
    tach = np.clip(40.0 * (np.cos(2 * np.pi * (cycle - 0.5)) - np.cos(np.pi * 0.1)), 0.0, 0.9)
    tach += 0.005 * rng.standard_normal(n)
    data = np.empty((n, 2), dtype=np.float32)
    data[:, 0] = acc
    data[:, 1] = tach
    sf.write(str(path), data, FS, subtype="PCM_24")


def best_of(fn, repeats: int = REPEATS) -> float:
    best = float("inf")
    for _ in range(repeats):
        t0 = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t0)
    return best


def peak_mb(fn) -> float:
    """Peak traced memory (numpy buffers included) while ``fn`` runs, MB."""
    tracemalloc.start()
    try:
        fn()
        return tracemalloc.get_traced_memory()[1] / 1e6
    finally:
        tracemalloc.stop()


def main() -> dict:
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "bench_load.flac"
        write_flac(path)
        size_mb = path.stat().st_size / 1e6

        def decode():
            sf.read(str(path), dtype="float32")

        def load():
            rec = read_recording(path)
            pulses = detect_pulses(rec.channel(1), rec.sample_rate_hz, pulses_per_rev=1)
            prof = speed_profile(pulses, "input")
            return rec, pulses, prof

        rec, pulses, prof = load()  # warm-up: imports (scipy.interpolate), page cache
        decode()
        t_decode = best_of(decode)
        t_load = best_of(load)
        # Memory: soundfile's frame-major array, the same made channel-major (what a
        # (n_channels, n_frames) layout costs without blocks), and read_recording.
        mem_decode = peak_mb(decode)
        mem_decode_t = peak_mb(lambda: np.ascontiguousarray(sf.read(str(path), dtype="float32")[0].T))
        mem_read = peak_mb(lambda: read_recording(path))
    ratio = t_load / t_decode
    print(f"file: {SECONDS:g} s, {FS} Hz, 2 channels, PCM_24 FLAC, {size_mb:.1f} MB")
    print(f"tach: {pulses.n_found} pulses, mean {prof.mean_hz:.4f} Hz ({prof.min_hz:.3f} to {prof.max_hz:.3f})")
    print(f"decode (soundfile.read, float32): {t_decode * 1e3:.1f} ms")
    print(f"load (read_recording + detect_pulses + speed_profile): {t_load * 1e3:.1f} ms")
    print(f"ratio {ratio:.3f} (target <= {TARGET})")
    print(f"peak memory: soundfile.read {mem_decode:.1f} MB, soundfile.read + channel-major copy "
          f"{mem_decode_t:.1f} MB, read_recording {mem_read:.1f} MB (data {rec.data.nbytes / 1e6:.1f} MB)")
    result = {"bench": "load", "decode_s": round(t_decode, 4), "load_s": round(t_load, 4),
              "ratio": round(ratio, 3), "target": TARGET, "read_peak_mb": round(mem_read, 1),
              "decode_peak_mb": round(mem_decode, 1)}
    print(json.dumps(result))
    return result


if __name__ == "__main__":
    main()
