"""Benchmark of the simulator (not collected by pytest; run as a script).

Simulates 60 s at 51.2 kHz of a three-stage train (two parallel stages and a
planetary stage, with a tooth fault and a bearing fault), best of 3; writes it as
FLAC; times decoding the file plus one rfft of the accelerometer channel (best
of 3).  Prints the real-time factor (target >= 10) and the ratio
simulate / (decode + rfft) (target <= 15), then ONE JSON line.

    python tests/benchmarks/bench_synth.py [--duration 60] [--rate 51200]
"""

from __future__ import annotations

import argparse
import json
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import soundfile

ROOT = Path(__file__).resolve().parents[2]
if str(ROOT) not in sys.path:
    sys.path.insert(0, str(ROOT))

from dsp.model import Bearing, GearTrain, Mesh, Planetary, Shaft, Tach  # noqa: E402
from dsp.synth import Fault, simulate, write_simulation  # noqa: E402


def three_stage() -> GearTrain:
    return GearTrain(
        name="benchmark three-stage reducer",
        tach=Tach(shaft="input", nominal_rpm=1480.0),
        shafts=(Shaft("input"), Shaft("intermediate"), Shaft("sun"), Shaft("carrier")),
        meshes=(Mesh("stage 1", "input", 19, "intermediate", 73),
                Mesh("stage 2", "intermediate", 22, "sun", 67)),
        planetary=(Planetary("stage 3", "sun", 21, 36, 3, 93, "carrier"),),
        bearings=(Bearing("IS DE", "intermediate", 9, 7.94, 39.04, 0.0),),
    )


def best_of(n, fn):
    times, out = [], None
    for _ in range(n):
        t0 = time.perf_counter()
        out = fn()
        times.append(time.perf_counter() - t0)
    return min(times), out


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description="simulator benchmark")
    parser.add_argument("--duration", type=float, default=60.0)
    parser.add_argument("--rate", type=float, default=51200.0)
    parser.add_argument("--repeat", type=int, default=3)
    args = parser.parse_args(argv)
    train = three_stage()
    faults = (Fault("tooth", "stage 2:sun", tooth=11, severity="severe"), Fault("outer-race", "IS DE"))
    simulate(train, duration_s=0.1, fs=args.rate, faults=faults)  # warm up: imports
    t_sim, sim = best_of(args.repeat, lambda: simulate(
        train, duration_s=args.duration, fs=args.rate, faults=faults, speed="fluctuating",
        speed_variation_pct=3.0, seed=1))
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "bench.flac"
        t0 = time.perf_counter()
        write_simulation(sim, path, train)
        t_write = time.perf_counter() - t0
        size_mb = path.stat().st_size / 1e6

        def decode_fft():
            data, _ = soundfile.read(str(path), dtype="float32", always_2d=True)
            return np.fft.rfft(data[:, 0])

        t_ref, _ = best_of(args.repeat, decode_fft)
    realtime = args.duration / t_sim
    ratio = t_sim / t_ref
    print(f"simulate {args.duration:g} s at {args.rate:g} Hz, three stages: {t_sim:.3f} s (best of {args.repeat})")
    print(f"real-time factor: {realtime:.1f} (target >= 10)")
    print(f"write FLAC: {t_write:.3f} s, {size_mb:.1f} MB; decode + one rfft: {t_ref:.3f} s")
    print(f"simulate / (decode + rfft): {ratio:.2f} (target <= 15)")
    print(json.dumps({"benchmark": "synth", "duration_s": args.duration, "fs_hz": args.rate,
                      "simulate_s": round(t_sim, 4), "decode_fft_s": round(t_ref, 4),
                      "write_s": round(t_write, 4), "flac_mb": round(size_mb, 2),
                      "realtime_factor": round(realtime, 2), "ratio_to_decode_fft": round(ratio, 3),
                      "ok": bool(realtime >= 10 and ratio <= 15)}))
    return 0


if __name__ == "__main__":
    sys.exit(main())
