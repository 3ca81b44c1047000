"""``gearbench info RECORDING [--model M] [--json]``.

File facts (format, rate, duration, channels, SHA-256), per-channel quality (peak,
RMS, non-finite samples, clipping), tach quality (pulses found, repaired, rejected)
and the mean/min/max speed of every shaft of the model.  The model defaults to the
TOML file beside the recording (same stem).  Without a model only the file facts
are printed, with a note on what to add.  No Qt; scipy only for the speed profile.
"""

from __future__ import annotations

import argparse
import json
import math
from pathlib import Path

HELP = "file facts, tach quality and shaft speeds of a recording"

# Subtypes whose raw values soundfile normalises to [-1, 1): full scale is 1.0.
_FIXED_POINT = ("PCM_S8", "PCM_U8", "PCM_16", "PCM_24", "PCM_32", "ULAW", "ALAW", "DPCM_8", "DPCM_16")


def add_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("recording", metavar="RECORDING", help="recording file (FLAC, WAV, ...)")
    parser.add_argument("--model", metavar="M", default=None,
                        help="gear-train model file (TOML); default: the .toml file beside the recording")
    parser.add_argument("--json", action="store_true", help="print JSON instead of text")


def _finite(x: float) -> float | None:
    return float(x) if x is not None and math.isfinite(x) else None


def _model_path(recording: str, given: str | None) -> Path | None:
    if given is not None:
        return Path(given)
    beside = Path(recording).with_suffix(".toml")
    return beside if beside.is_file() else None


def _channel_roles(train, n_channels: int) -> dict[int, str]:
    roles: dict[int, str] = {}
    if train is None:
        return roles
    for s in train.sensors:
        if isinstance(s.channel, int) and 0 <= s.channel < n_channels:
            roles[s.channel] = f"sensor {s.name}"
    ch = train.tach.channel
    if isinstance(ch, int) and 0 <= ch < n_channels:
        roles[ch] = "tach"
    return roles


def _speed(rec, train, warnings: list[str]):
    """(profile, pulses) of the reference shaft, exactly as ``gearbench analyze`` finds them
    (:func:`dsp.analysis.reference_speed`); (None, None) when the model gives no speed."""
    from dsp.analysis import reference_speed

    tach = train.tach
    if tach.channel is None and tach.nominal_rpm is None:
        return None, None
    reference = tach.shaft or (train.shafts[0].name if train.shafts else "")
    profile, pulses, _estimate = reference_speed(rec, train, None, 0, rec.n_frames, reference, warnings)
    return profile, pulses


def collect(recording: str, model: str | None = None) -> dict:
    """The ``gearbench info --json`` document of a recording (and its model)."""
    from dsp.errors import GearbenchError, ModelError
    from dsp.model import load_model, validate
    from dsp.recording import read_recording, signal_quality

    rec = read_recording(recording)
    warnings: list[str] = []
    notes: list[str] = []
    model_path = _model_path(recording, model)
    train = None
    if model_path is not None:
        if not model_path.is_file():
            raise GearbenchError(f"model file {str(model_path)!r} does not exist; check the --model path")
        train = load_model(model_path)
        errors = [p for p in validate(train, n_channels=rec.n_channels) if p.severity == "error"]
        if errors:
            raise ModelError(errors)
    else:
        stem = Path(recording).with_suffix(".toml").name
        notes.append(f"no model: write {stem} beside the recording (or pass --model) with [[shafts]] and a "
                     "[tach] table (channel, shaft, pulses_per_rev, or nominal_rpm) to get shaft speeds")

    full_scale = 1.0 if rec.subtype in _FIXED_POINT else None
    roles = _channel_roles(train, rec.n_channels)
    sensors = {s.channel: s for s in train.sensors} if train is not None else {}
    channels = []
    for i in range(rec.n_channels):
        q = signal_quality(rec.channel(i), full_scale=full_scale)
        role = roles.get(i, "")
        item = {"index": i, "role": role, **q.to_json_dict()}
        item["peak"], item["rms"] = _finite(q.peak), _finite(q.rms)
        sensor = sensors.get(i)
        if sensor is not None:
            item["sensor"] = {"name": sensor.name, "units": sensor.units, "scale": sensor.scale,
                              "peak": _finite(q.peak * abs(sensor.scale)), "rms": _finite(q.rms * abs(sensor.scale))}
        channels.append(item)
        if q.n_nonfinite:
            warnings.append(f"channel {i} holds {q.n_nonfinite} NaN or infinite samples; the analysis sets them to 0 "
                            "- export the recording again or cut that stretch out")
        if q.flat:
            warnings.append(f"channel {i} is flat (every sample equal); check the wiring or the channel number")
        elif q.clipped and role != "tach":
            warnings.append(f"channel {i} is clipped ({100 * q.clipped_fraction:.3g}% of samples at the rail); "
                            "lower the input gain and record again")

    doc = {"recording": {**rec.facts(), "channel_quality": channels},
           "model": str(model_path.resolve()) if model_path is not None else None,
           "speed": None, "shafts": [], "tach": None, "warnings": warnings, "notes": notes}
    if train is None:
        return doc
    profile, pulses = _speed(rec, train, warnings)
    if profile is None:
        notes.append("the model gives no speed: add [tach] channel = N (the tach channel) or "
                     "[tach] nominal_rpm = R, with shaft = the shaft it watches")
        return doc
    doc["speed"] = profile.to_json_dict()
    doc["speed"]["mean_rpm"] = 60.0 * profile.mean_hz
    if pulses is not None:
        doc["tach"] = {"channel": train.tach.channel, "shaft": profile.shaft, **pulses.to_json_dict()}
    if train.shafts:
        from dsp.kinematics import shaft_orders

        orders = shaft_orders(train, profile.shaft)
    else:
        orders = {profile.shaft: 1.0}
    doc["shafts"] = [{"name": name, "order": order, "mean_hz": order * profile.mean_hz,
                      "rpm": 60.0 * order * profile.mean_hz, "min_hz": order * profile.min_hz,
                      "max_hz": order * profile.max_hz} for name, order in orders.items()]
    return doc


def format_text(doc: dict) -> str:
    """Readable text of an info document."""
    rec = doc["recording"]
    out = [
        f"recording  {rec['path']}",
        f"  format    {rec['format']} / {rec['subtype']}",
        f"  rate      {rec['sample_rate_hz']:g} Hz",
        f"  duration  {rec['duration_s']:.3f} s ({rec['n_frames']} frames)",
        f"  channels  {rec['channels']}",
        f"  SHA-256   {rec['sha256']}",
    ]
    if doc["model"]:
        out.append(f"model      {doc['model']}")
    out += ["", f"{'ch':>3}  {'role':<24}{'peak':>11}{'RMS':>11}{'non-finite':>12}  clipped"]
    for c in doc["recording"]["channel_quality"]:
        peak = "-" if c["peak"] is None else f"{c['peak']:.4g}"
        rms = "-" if c["rms"] is None else f"{c['rms']:.4g}"
        clip = "flat" if c["flat"] else (f"yes ({100 * c['clipped_fraction']:.3g}%)" if c["clipped"] else "no")
        out.append(f"{c['index']:>3}  {c['role'][:23]:<24}{peak:>11}{rms:>11}{c['non_finite']:>12}  {clip}")
    out.append("  (peak and RMS in raw file values; full scale 1.0 for PCM)")
    if doc["tach"]:
        t = doc["tach"]
        out += ["", f"tach       channel {t['channel']}, shaft {t['shaft']}, {t['pulses_per_rev']} pulse(s)/rev, "
                    f"{t['edge']} edge",
                f"  pulses found {t['pulses_found']}, repaired {t['pulses_repaired']}, "
                f"rejected {t['pulses_rejected']}"]
    sp = doc["speed"]
    if sp:
        out += ["", f"speed      source {sp['source']}, reference shaft {sp['reference_shaft']}, "
                    f"{sp['n_revs']} whole revolutions",
                f"  {'shaft':<18}{'mean Hz':>11}{'rpm':>11}{'min Hz':>11}{'max Hz':>11}"]
        for s in doc["shafts"]:
            out.append(f"  {s['name'][:17]:<18}{s['mean_hz']:>11.4f}{s['rpm']:>11.2f}"
                       f"{s['min_hz']:>11.4f}{s['max_hz']:>11.4f}")
    for w in doc["warnings"]:
        out.append(f"warning: {w}")
    for n in doc["notes"]:
        out.append(f"note: {n}")
    return "\n".join(out)


def run(args: argparse.Namespace) -> int:
    doc = collect(args.recording, args.model)
    if args.json:
        print(json.dumps(doc, indent=2, allow_nan=False))
    else:
        print(format_text(doc))
    return 0
