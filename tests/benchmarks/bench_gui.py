"""GUI timing benchmark: start-up, every view drawn, redraw after a shaft switch, long-record panning.

Runs ``gearbench open DEMO --screenshot`` in a subprocess with ``GEARBENCH_TIMING=1``
(the window then prints wall-clock timestamps on stderr) and measures, from the moment
the process is spawned:

- first paint of the window (target <= 1.5 s),
- every view drawn on the demo (target <= 3 s),
- redraw of the visible view after selecting another shaft,

then times the waveform's min/max decimation on a 10-minute, 100 kHz record (one
redraw per pan step).  Prints the figures and ends with ONE JSON line.

Usage: ``python tests/benchmarks/bench_gui.py [--repeats N] [--no-long]``
"""

from __future__ import annotations

import argparse
import json
import os
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
DEMO = ROOT / "demo_recordings" / "03_broken_tooth.flac"
TARGET_FIRST_PAINT_S = 1.5
TARGET_ALL_VIEWS_S = 3.0


def one_run(png: Path) -> dict:
    env = dict(os.environ, QT_QPA_PLATFORM="offscreen", GEARBENCH_TIMING="1")
    t_spawn = time.time()
    proc = subprocess.run([sys.executable, "-m", "workbench", "open", str(DEMO), "--screenshot", str(png)],
                          capture_output=True, text=True, env=env, timeout=300)
    t_exit = time.time()
    if proc.returncode != 0:
        raise SystemExit(f"gearbench open failed ({proc.returncode}): {proc.stderr.strip()}")
    events = {}
    for line in proc.stderr.splitlines():
        if line.startswith("gearbench-timing "):
            record = json.loads(line.split(" ", 1)[1])
            events[record["event"]] = record
    switch = events["shaft_switch"]["seconds"]
    return {
        "first_paint_s": events["first_paint"]["t"] - t_spawn,
        "analysis_done_s": events["analysis_done"]["t"] - t_spawn,
        "all_views_drawn_s": events["views_drawn"]["t"] - t_spawn,
        "all_views_have_data": events["views_drawn"]["all_have_data"],
        "shaft_switch_max_s": max(switch.values()),
        "process_total_s": t_exit - t_spawn,
    }


def long_record_panning(minutes: float = 10.0, fs: float = 100_000.0, n_steps: int = 50) -> dict:
    import numpy as np

    from workbench.views.waveform import MinMaxDecimator

    n = int(minutes * 60 * fs)
    rng = np.random.default_rng(0)
    y = rng.standard_normal(n, dtype=np.float32)
    t0 = time.perf_counter()
    dec = MinMaxDecimator(y, fs)
    build_s = time.perf_counter() - t0
    duration_s = n / fs
    times = []
    t0 = time.perf_counter()
    dec.columns(0.0, duration_s, 1200)
    whole_s = time.perf_counter() - t0
    for width_s in (60.0, 5.0, 0.05):          # pan at three zoom levels
        for k in range(n_steps):
            start = (duration_s - width_s) * k / n_steps
            t0 = time.perf_counter()
            x, _ = dec.columns(start, start + width_s, 1200)
            times.append(time.perf_counter() - t0)
    return {"samples": n, "summary_build_s": build_s, "whole_record_redraw_s": whole_s,
            "pan_step_median_s": statistics.median(times), "pan_step_max_s": max(times)}


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeats", type=int, default=3)
    parser.add_argument("--no-long", action="store_true", help="skip the 10-minute panning test")
    args = parser.parse_args()
    runs = []
    with tempfile.TemporaryDirectory() as tmp:
        for i in range(args.repeats):
            runs.append(one_run(Path(tmp) / f"w{i}.png"))
            r = runs[-1]
            print(f"run {i + 1}: first paint {r['first_paint_s']:.2f} s, analysis {r['analysis_done_s']:.2f} s, "
                  f"every view drawn {r['all_views_drawn_s']:.2f} s, shaft switch {1000 * r['shaft_switch_max_s']:.0f} ms")
    med = {key: statistics.median(r[key] for r in runs)
           for key in ("first_paint_s", "analysis_done_s", "all_views_drawn_s", "shaft_switch_max_s", "process_total_s")}
    print(f"median first paint     {med['first_paint_s']:.2f} s (target <= {TARGET_FIRST_PAINT_S} s, "
          f"ratio {med['first_paint_s'] / TARGET_FIRST_PAINT_S:.2f})")
    print(f"median all views drawn {med['all_views_drawn_s']:.2f} s (target <= {TARGET_ALL_VIEWS_S} s, "
          f"ratio {med['all_views_drawn_s'] / TARGET_ALL_VIEWS_S:.2f})")
    print(f"median shaft switch    {1000 * med['shaft_switch_max_s']:.0f} ms (slowest shaft, visible view repainted)")
    result = {"benchmark": "gui", "repeats": args.repeats, **{f"median_{k}": round(v, 4) for k, v in med.items()},
              "first_paint_ratio": round(med["first_paint_s"] / TARGET_FIRST_PAINT_S, 3),
              "all_views_ratio": round(med["all_views_drawn_s"] / TARGET_ALL_VIEWS_S, 3),
              "all_views_have_data": all(r["all_views_have_data"] for r in runs)}
    if not args.no_long:
        pan = long_record_panning()
        print(f"10 min at 100 kHz: summary built in {pan['summary_build_s']:.2f} s, whole-record redraw "
              f"{1000 * pan['whole_record_redraw_s']:.1f} ms, pan step median {1000 * pan['pan_step_median_s']:.2f} ms, "
              f"max {1000 * pan['pan_step_max_s']:.2f} ms")
        result.update({f"long_{k}": (round(v, 5) if isinstance(v, float) else v) for k, v in pan.items()})
    print(json.dumps(result))
    return 0


if __name__ == "__main__":
    sys.exit(main())
