"""``gearbench analyze RECORDING [--model M] [--channel C] [--json] [--band LO HI] [--baseline B]``.

Runs :func:`dsp.analysis.analyze` on one recording and prints a readable summary
(speed, shafts, overall levels, TSA indicators per shaft, sideband owners,
suspects with their evidence, warnings) or the JSON document of
``Analysis.to_json_dict()``.  The model defaults to the TOML file beside the
recording.  With ``--baseline B`` a healthy recording of the same gearbox is
analysed too and compared (:func:`dsp.baseline.compare`): the JSON gets a
``baseline`` object and the suspects are re-ranked with it.  The ``severity``
object (and a readable line) gives the ISO 20816-3 evaluation zone of the
broadband velocity for ``--group`` and ``--foundation`` (:mod:`dsp.severity`; the
zone boundaries are quoted from memory), always with its caution.  No Qt is
imported; scipy only when the analysis runs.
"""

from __future__ import annotations

import argparse
import math
from pathlib import Path

HELP = "analyse a recording against its gear-train model"

CAUTION_LINE = (
    "Guidance for a qualified analyst, not a verdict: confirm on the views, and defer to local codes, "
    "the manufacturer's instructions and licensed practice."
)


def add_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("recording", metavar="RECORDING", help="recording file (FLAC, WAV, ...)")
    parser.add_argument("--model", metavar="M", default=None,
                        help="gear-train model file (TOML); default: the .toml file beside the recording")
    parser.add_argument("--channel", metavar="C", type=int, default=None,
                        help="analyse the sensor on this recording channel (0-based; default: the first sensor)")
    parser.add_argument("--band", metavar=("LO", "HI"), type=float, nargs=2, default=None,
                        help="envelope band in Hz (default: chosen by the kurtogram)")
    parser.add_argument("--baseline", metavar="B", default=None,
                        help="a healthy recording of the same gearbox to compare with (its model: the .toml "
                             "beside it, else the model of RECORDING)")
    parser.add_argument("--group", choices=("group 1", "group 2"), default="group 2",
                        help="machine group for the severity zone: 'group 1' large (300 kW to 50 MW), "
                             "'group 2' medium (15 kW to 300 kW; default)")
    parser.add_argument("--foundation", choices=("rigid", "flexible"), default="rigid",
                        help="foundation class for the severity zone (default: rigid)")
    parser.add_argument("--velocity-band", metavar=("LO", "HI"), type=float, nargs=2, default=None,
                        help="band of the overall velocity in Hz (default 10 1000; the standard uses 2 1000 "
                             "below about 600 rpm)")
    parser.add_argument("--json", action="store_true", help="print the analysis as JSON")


def _num(x, fmt: str = ".3g", width: int | None = None) -> str:
    """``x`` in ``fmt``; ``-`` for a missing value; 3 significant digits when too wide."""
    if x is None or (isinstance(x, float) and not math.isfinite(x)):
        return "-"
    text = format(x, fmt)
    if width is not None and len(text) >= width:
        text = format(x, ".3g")
    return text


def format_summary(d: dict, baseline_lines: list[str] | None = None) -> str:
    """Readable text of an analysis JSON document (``Analysis.to_json_dict()``).

    ``baseline_lines`` (from ``BaselineComparison.summary_lines()``) go before the suspects.
    """
    out: list[str] = []
    rec, sp = d["recording"], d["speed"]
    out.append(f"Recording {rec['path']}")
    out.append(f"  {rec['duration_s']:.2f} s at {rec['sample_rate_hz']:g} Hz, {rec['channels']} channel{'s' if rec['channels'] != 1 else ''}; "
               f"sensor {rec['sensor']['name']!r} on channel {rec['sensor']['channel']}")
    out.append(f"Speed ({sp['source']}): shaft {sp['reference_shaft']} {sp['mean_rpm']:.1f} rpm "
               f"({sp['mean_hz']:.3f} Hz), range {60 * sp['min_hz']:.1f} to {60 * sp['max_hz']:.1f} rpm")
    out.append("Shafts: " + ", ".join(f"{s['name']} {s['rpm']:.1f} rpm" for s in d["shafts"]))
    ov = d["overall"]
    units = ov.get("units", "")
    lo, hi = ov.get("velocity_band_hz", [None, None])
    out.append(f"Overall: RMS {_num(ov['rms'])} {units}, peak {_num(ov['peak'])} {units}, crest factor "
               f"{_num(ov['crest_factor'])}, kurtosis {_num(ov['kurtosis'])}, velocity "
               f"{_num(ov['velocity_rms_mm_s'])} mm/s RMS ({_num(lo, 'g')}-{_num(hi, 'g')} Hz)"
               + (", CLIPPED" if ov["clipped"] else ""))
    sev = d.get("severity")
    if sev:
        b = sev["boundaries_mm_s"]
        out.append(f"Severity (guidance): zone {sev['zone']} for {sev['group']}, {sev['foundation']} foundation "
                   f"(A/B {b['A/B']:g}, B/C {b['B/C']:g}, C/D {b['C/D']:g} mm/s): {sev['meaning']}")
        out.append(f"  source: {sev['source']}; {sev['boundary_rule']}")
        out.append(f"  caution: {sev['caution']}")
    if d["tsa"]:
        out.append("TSA per shaft:")
        out.append(f"  {'shaft':<14}{'revs':>6}{'RMS':>10}{'kurt':>7}{'FM0':>7}{'FM4':>7}{'NA4':>7}"
                   f"{'M6A':>8}{'M8A':>9}{'ER':>7}")
        for t in d["tsa"]:
            out.append(f"  {t['shaft']:<14}{t['averages']:>6}{_num(t['rms'], '.3g', 10):>10}"
                       f"{_num(t['kurtosis'], '.2f', 7):>7}{_num(t['fm0'], '.2f', 7):>7}"
                       f"{_num(t['fm4'], '.2f', 7):>7}{_num(t['na4'], '.2f', 7):>7}"
                       f"{_num(t['m6a'], '.1f', 8):>8}{_num(t['m8a'], '.0f', 9):>9}{_num(t['er'], '.3f', 7):>7}")
    if d["sidebands"]:
        out.append("Sideband families (owner shaft by spacing):")
        for f in d["sidebands"]:
            owner = f["owner_shaft"] or "none"
            note = " (expected: planets passing the sensor)" if f.get("expected") else ""
            out.append(f"  {f['mesh']} x{f['harmonic']} at {f['carrier_hz']:.1f} Hz: owner {owner}{note}, "
                       f"spacing {f['spacing_hz']:.2f} Hz, {f['n_found']} clear, SI {_num(f['sideband_index'])}, "
                       f"SLF {_num(f['sideband_level_factor'])}")
    env = d["envelope"]
    named = {s["component"] for s in d["suspects"]}
    shown = [m for m in env["matches"] if m["n_clear"] >= 3 or (m["n_clear"] >= 2 and m["component"] in named)]
    out.append(f"Envelope band {env['band_hz'][0]:.0f}-{env['band_hz'][1]:.0f} Hz ({env['band_source']}"
               + (", order-tracked" if env.get("order_tracked") else "") + "); "
               + (", ".join(f"{m['label']} of {m['component']} ({m['n_clear']} harmonics)" for m in shown)
                  or "no bearing or shaft family stands clear with three harmonics or more"))
    if baseline_lines:
        out.extend(baseline_lines)
    if d["suspects"]:
        out.append("Suspects (best first" + (", re-ranked with the baseline" if baseline_lines else "") + "):")
        for i, s in enumerate(d["suspects"], 1):
            out.append(f"  {i}. {s['component']}: {s['kind']} (score {s['score']:.2f}, see the {s['view']} view)")
            for e in s["evidence"]:
                out.append(f"       - {e}")
    else:
        out.append("Suspects: none above the alarm threshold.")
    for w in d["warnings"]:
        out.append(f"warning: {w}")
    out.append(CAUTION_LINE)
    return "\n".join(out)


def run(args: argparse.Namespace) -> int:
    import dataclasses
    import json

    from dsp.analysis import Settings, analyze
    from dsp.errors import GearbenchError
    from dsp.model import load_model
    from dsp.recording import read_recording

    path = Path(args.recording)
    if not path.exists():
        raise GearbenchError(f"recording {str(path)!r} not found; check the path")
    if path.is_dir():
        raise GearbenchError(f"{str(path)!r} is a folder; give the path of a recording file in it")
    model_path = Path(args.model) if args.model else path.with_suffix(".toml")
    if model_path.is_dir():
        raise GearbenchError(f"model {str(model_path)!r} is a folder; give the path of a gear-train TOML file")
    if not model_path.exists():
        raise GearbenchError(
            f"model {str(model_path)!r} not found; give --model M (a gear-train TOML)"
            + ("" if args.model else " or put a .toml with the recording's name beside it")
        )
    train = load_model(model_path)
    settings = Settings()
    if args.channel is not None:
        idx = [i for i, s in enumerate(train.sensors) if s.channel == args.channel]
        if not idx:
            have = ", ".join(str(s.channel) for s in train.sensors) or "none"
            raise GearbenchError(f"no sensor of the model is on channel {args.channel} (sensor channels: {have}); "
                                 "choose one of those or add the sensor to the model")
        settings = dataclasses.replace(settings, sensor_index=idx[0])
    if args.band is not None:
        lo, hi = args.band
        if not (0 <= lo < hi):
            raise GearbenchError(f"--band {lo:g} {hi:g} is not a band; give LO < HI in Hz")
        settings = dataclasses.replace(settings, envelope_band_hz=(float(lo), float(hi)))
    if args.velocity_band is not None:
        lo, hi = args.velocity_band
        if not (0 < lo < hi):
            raise GearbenchError(f"--velocity-band {lo:g} {hi:g} is not a band; give 0 < LO < HI in Hz")
        settings = dataclasses.replace(settings, velocity_band_hz=(float(lo), float(hi)))
    recording = read_recording(path)
    result = analyze(recording, train, settings)
    comparison = None
    if args.baseline:
        comparison = _compare(result, train, settings, Path(args.baseline))
        without = result.to_json_dict()["suspects"]
        result = dataclasses.replace(result, suspects=tuple(comparison.suspects))
    d = result.to_json_dict()
    if comparison is not None:
        d["baseline"] = comparison.to_json_dict()
        d["suspects_without_baseline"] = without
    from dsp.severity import velocity_zone

    d["severity"] = velocity_zone(result.overall["velocity_rms_mm_s"], group=args.group,
                                  foundation=args.foundation, band_hz=settings.velocity_band_hz).to_json_dict()
    if args.json:
        print(json.dumps(d, indent=2, allow_nan=False))
    else:
        print(format_summary(d, comparison.summary_lines() if comparison is not None else None))
    return 0


def _compare(result, train, settings, base_path: Path):
    """Analyse the baseline recording with the same settings and compare."""
    from dsp.analysis import analyze
    from dsp.baseline import compare
    from dsp.errors import GearbenchError
    from dsp.model import load_model
    from dsp.recording import read_recording

    if not base_path.exists():
        raise GearbenchError(f"baseline recording {str(base_path)!r} not found; check the --baseline path")
    model_path = base_path.with_suffix(".toml")
    base_train = load_model(model_path) if model_path.exists() else train
    baseline = analyze(read_recording(base_path), base_train, settings)
    return compare(result, baseline)
