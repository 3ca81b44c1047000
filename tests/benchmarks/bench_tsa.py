"""Benchmark of dsp.tsa: speed against reading the file, accuracy, and a plain baseline.

Run:  python tests/benchmarks/bench_tsa.py [--duration 60] [--fs 51200]

1. A 60 s, 51.2 kHz accelerometer signal of a 3-shaft train (input 25 Hz wandering
   +-3 %, stages 19/73 and 22/67) is written as a mono 24-bit FLAC to a temporary
   folder.  The floor is ``soundfile.read(float32)`` + one ``scipy.fft.rfft`` of the
   channel (best of 3).
2. In the same process: the TSA of all three shafts with ``dsp.tsa.tsa_shafts`` from
   the tach-style speed profile (``dsp.tach.SpeedProfile`` with one knot per input
   revolution), best of 3, and its ratio to the floor (target <= 1).
3. Accuracy: a shaft-periodic signal with harmonics up to 0.4 fs at the top speed and
   the speed wandering +-3 % (exact angle law), 8 s long; max |TSA - truth| / max |truth|
   (target 1e-3).
4. Baseline: per revolution, cut at whole samples, ``scipy.signal.resample`` to P
   points, average; its time for the three shafts and its error on the signal of 3.

Prints the figures and ends with one JSON line.  ``measure(...)`` returns the same dict.
"""

from __future__ import annotations

import json
import os
import sys
import tempfile
import time

import numpy as np

F_IN_HZ = 25.0
WANDER = 0.03
F_WANDER_HZ = 0.2
ORDERS = {"input": 1.0, "intermediate": 19 / 73, "output": 19 / 73 * 22 / 67}


class _Law:
    """Exact input-shaft angle law (rev) with +-WANDER speed wander; profile duck type."""

    def __init__(self, duration_s: float):
        self.shaft, self.source = "input", "tach"
        self.t_start_s, self.t_end_s = 0.0, duration_s
        self.mean_hz, self.min_hz, self.max_hz = F_IN_HZ, F_IN_HZ * (1 - WANDER), F_IN_HZ * (1 + WANDER)
        self.n_revs = int(self.angle_rev(duration_s))

    def angle_rev(self, t_s):
        t = np.asarray(t_s, dtype=float)
        w = 2 * np.pi * F_WANDER_HZ
        return F_IN_HZ * t + F_IN_HZ * WANDER * (1 - np.cos(w * t)) / w

    def speed_hz(self, t_s):
        return F_IN_HZ * (1 + WANDER * np.sin(2 * np.pi * F_WANDER_HZ * np.asarray(t_s, dtype=float)))

    def time_s(self, angle_rev):
        a = np.asarray(angle_rev, dtype=float)
        t = a / F_IN_HZ
        for _ in range(40):
            t = t - (self.angle_rev(t) - a) / self.speed_hz(t)
        return t


def _best(fn, repeats: int) -> tuple[float, object]:
    best, out = float("inf"), None
    for _ in range(repeats):
        t0 = time.perf_counter()
        out = fn()
        best = min(best, time.perf_counter() - t0)
    return best, out


def _train_signal(fs: float, duration_s: float, rng) -> tuple[np.ndarray, _Law]:
    law = _Law(duration_s)
    t = np.arange(int(round(duration_s * fs))) / fs
    th = law.angle_rev(t)
    x = 0.3 * rng.standard_normal(t.size)
    for name, r in ORDERS.items():
        for k, a in ((1, 0.3), (2, 0.2), (7, 0.1)):
            x += a * np.cos(2 * np.pi * k * r * th + k)
    x += 0.5 * np.cos(2 * np.pi * 19 * th) + 0.4 * np.cos(2 * np.pi * 22 * ORDERS["intermediate"] * th)
    return (x / np.max(np.abs(x)) * 0.9).astype(np.float32), law


def _tach_profile(law: _Law):
    from dsp.tach import SpeedProfile

    n = int(law.angle_rev(law.t_end_s))
    tk = law.time_s(np.arange(n + 1, dtype=float))
    return SpeedProfile.from_knots(tk, np.arange(n + 1, dtype=float), shaft="input", source="tach")


def baseline_tsa(x, fs, profile, shaft_order, samples_per_rev):
    """Plain TSA: cut each revolution at whole samples, resample to P points, average."""
    import scipy.signal

    n_revs = int(np.floor(profile.angle_rev(min(profile.t_end_s, (len(x) - 1) / fs)) * shaft_order)) - 1
    edges = np.rint(profile.time_s(np.arange(1, n_revs + 2) / shaft_order) * fs).astype(int)
    acc = np.zeros(samples_per_rev)
    for i0, i1 in zip(edges[:-1], edges[1:]):
        acc += scipy.signal.resample(np.asarray(x[i0:i1], dtype=np.float64), samples_per_rev)
    return acc / n_revs


def _accuracy(fs: float, duration_s: float, rng) -> tuple[float, float, dict]:
    from dsp.tsa import tsa

    law = _Law(duration_s)
    k_max = int(0.4 * fs / law.max_hz)
    orders = np.arange(1, k_max + 1)
    amps = rng.uniform(0.2, 1.0, orders.size)
    phases = rng.uniform(0, 2 * np.pi, orders.size)
    t = np.arange(int(round(duration_s * fs))) / fs
    th = law.angle_rev(t)
    x = np.zeros(t.size)
    for k, a, p in zip(orders, amps, phases):   # direct sum, exact
        x += a * np.cos(2 * np.pi * k * th + p)
    res = tsa(x, fs, law, shaft="input")
    theta = np.arange(res.samples_per_rev) / res.samples_per_rev
    truth = np.zeros(res.samples_per_rev)
    for k, a, p in zip(orders, amps, phases):
        truth += a * np.cos(2 * np.pi * k * theta + p)
    err = float(np.max(np.abs(res.average - truth)) / np.max(np.abs(truth)))
    base = baseline_tsa(x, fs, law, 1.0, res.samples_per_rev)
    base_err = float(np.max(np.abs(base - truth)) / np.max(np.abs(truth)))
    return err, base_err, {"n_harmonics": int(k_max), "n_revs": res.n_revs, "samples_per_rev": res.samples_per_rev}


def measure(duration_s: float = 60.0, fs: float = 51200.0, repeats: int = 3,
            accuracy_duration_s: float = 8.0, seed: int = 0, verbose: bool = True) -> dict:
    """Run the benchmark; returns a dict of figures (seconds, ratios, relative errors)."""
    import soundfile
    import scipy.fft

    from dsp.tsa import tsa_shafts

    rng = np.random.default_rng(seed)
    x, law = _train_signal(fs, duration_s, rng)
    profile = _tach_profile(law)
    with tempfile.TemporaryDirectory() as tmp:
        path = os.path.join(tmp, "train.flac")
        soundfile.write(path, x, int(fs), subtype="PCM_24")

        def floor():
            data, _ = soundfile.read(path, dtype="float32")
            return scipy.fft.rfft(data)

        data, _ = soundfile.read(path, dtype="float32")
        # floor and TSA timed alternately (best of `repeats` each), so that a change in
        # the machine's load during the run affects both alike
        floor_s = tsa_s = float("inf")
        results = None
        for _ in range(repeats):
            dt, _ = _best(floor, 1)
            floor_s = min(floor_s, dt)
            dt, results = _best(lambda: tsa_shafts(data, fs, profile, ORDERS), 1)
            tsa_s = min(tsa_s, dt)
    base_s, _ = _best(lambda: [baseline_tsa(data, fs, profile, r.shaft_order, r.samples_per_rev)
                               for r in results], 1)
    err, base_err, info = _accuracy(fs, accuracy_duration_s, rng)
    out = {
        "benchmark": "tsa",
        "duration_s": duration_s,
        "sample_rate_hz": fs,
        "floor_s": round(floor_s, 4),
        "tsa_all_shafts_s": round(tsa_s, 4),
        "ratio_to_floor": round(tsa_s / floor_s, 3),
        "target_ratio": 1.0,
        "accuracy_max_rel_error": float(f"{err:.3g}"),
        "target_accuracy": 1e-3,
        "baseline_s": round(base_s, 4),
        "baseline_ratio_to_floor": round(base_s / floor_s, 3),
        "baseline_max_rel_error": float(f"{base_err:.3g}"),
        "shafts": [{"shaft": r.shaft, "samples_per_rev": r.samples_per_rev, "n_revs": r.n_revs} for r in results],
        "accuracy_signal": {"duration_s": accuracy_duration_s, **info},
    }
    if verbose:
        print(f"floor (read FLAC + rfft), best of {repeats}: {floor_s * 1e3:8.1f} ms")
        print(f"TSA of 3 shafts, best of {repeats}:          {tsa_s * 1e3:8.1f} ms  ratio {tsa_s / floor_s:.2f} (target <= 1)")
        print(f"baseline (whole-sample cut + resample):     {base_s * 1e3:8.1f} ms  ratio {base_s / floor_s:.2f}")
        print(f"accuracy, harmonics to 0.4 fs, +-3 % wander: {err:.2e} (target 1e-3); baseline {base_err:.2e}")
    return out


def main(argv=None) -> int:
    import argparse

    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--duration", type=float, default=60.0)
    ap.add_argument("--fs", type=float, default=51200.0)
    ap.add_argument("--repeats", type=int, default=3)
    args = ap.parse_args(argv)
    out = measure(args.duration, args.fs, args.repeats)
    print(json.dumps(out))
    return 0


if __name__ == "__main__":
    sys.path.insert(0, os.path.abspath(os.path.join(os.path.dirname(__file__), "..", "..")))
    sys.exit(main())
