"""``gearbench simulate MODEL [--fault KIND --on NAME ...] -o OUT.flac``.

Simulates a recording of the gear-train model (one accelerometer channel in g
and, unless ``--no-tach``, one tach channel on the model's tach shaft) with :func:`dsp.synth.simulate`,
healthy or with one fault, and writes ``OUT.flac`` (24-bit) and ``OUT.toml`` (the
model with its sensor and tach set to the simulated channels).
"""

from __future__ import annotations

import argparse
from pathlib import Path

HELP = "simulate a recording of a gear-train model, healthy or with a fault"

_KINDS = ("tooth", "wear", "eccentricity", "outer-race", "inner-race", "rolling-element")


def add_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("model", metavar="MODEL", help="gear-train model file (TOML)")
    parser.add_argument("-o", "--output", metavar="OUT.flac", required=True,
                        help="FLAC file to write; the model goes beside it as OUT.toml")
    parser.add_argument("--fault", choices=_KINDS, default=None,
                        help="fault to add (default: a healthy machine)")
    parser.add_argument("--on", metavar="NAME", default=None,
                        help="where the fault is: a shaft (its gear in its first mesh), MESH:SHAFT, "
                             "or a bearing name for bearing faults")
    parser.add_argument("--tooth", metavar="K", type=int, default=0,
                        help="damaged tooth for --fault tooth, 0-based (default 0)")
    parser.add_argument("--severity", choices=("mild", "severe"), default="mild",
                        help="fault severity (default mild)")
    parser.add_argument("--rpm", type=float, default=None,
                        help="speed of the tach shaft in rev/min (default: the model's nominal_rpm)")
    parser.add_argument("--speed", choices=("steady", "fluctuating", "ramp"), default=None,
                        help="speed profile (default: steady, or fluctuating when --speed-variation is given)")
    parser.add_argument("--speed-variation", metavar="PCT", type=float, default=0.0,
                        help="largest speed deviation in percent of --rpm (default 0)")
    parser.add_argument("--duration", metavar="S", type=float, default=10.0,
                        help="length in seconds (default 10)")
    parser.add_argument("--rate", metavar="HZ", type=float, default=25600.0,
                        help="sample rate in Hz (default 25600)")
    parser.add_argument("--seed", metavar="N", type=int, default=0,
                        help="random seed; equal seeds give equal files (default 0)")
    parser.add_argument("--noise", metavar="G", type=float, default=0.03,
                        help="RMS sensor noise in g (default 0.03)")
    parser.add_argument("--missing-tach", metavar="PCT", type=float, default=0.0,
                        help="percentage of tach pulses to leave out (default 0)")
    parser.add_argument("--no-tach", action="store_true",
                        help="write the accelerometer channel only, like a route recording; the model "
                             "written keeps nominal_rpm and has no tach channel")


def _check_options(args: argparse.Namespace) -> None:
    """Refuse out-of-range numbers naming the option the user typed (dsp names its parameters)."""
    import math

    from dsp.errors import AnalysisError

    checks = (
        ("--rpm", args.rpm, lambda v: v is None or v > 0, "a positive speed in rev/min"),
        ("--duration", args.duration, lambda v: v > 0, "a positive length in seconds"),
        ("--rate", args.rate, lambda v: v >= 1000, "a sample rate of at least 1000 Hz"),
        ("--noise", args.noise, lambda v: v >= 0, "an RMS noise of 0 g or more"),
        ("--speed-variation", args.speed_variation, lambda v: 0 <= v < 50, "a percentage from 0 to below 50"),
        ("--missing-tach", args.missing_tach, lambda v: 0 <= v <= 100, "a percentage from 0 to 100"),
    )
    for option, value, ok, what in checks:
        if value is not None and (not math.isfinite(value) or not ok(value)):
            raise AnalysisError(f"{option} {value:g} is out of range; give {what}")


def run(args: argparse.Namespace) -> int:
    from dsp.errors import AnalysisError, RecordingError
    from dsp.model import load_model
    from dsp.synth import Fault, simulate, write_simulation

    out = Path(args.output)
    if out.suffix.lower() != ".flac":
        raise RecordingError(f"output {str(out)!r} must end in .flac; give a name like OUT.flac")
    if not out.parent.exists():
        raise RecordingError(f"folder {str(out.parent)!r} does not exist; create it or choose another output")
    if (args.fault is None) != (args.on is None):
        raise AnalysisError("--fault and --on go together; give both (e.g. --fault tooth --on input) or neither")
    _check_options(args)
    train = load_model(args.model)
    rpm = args.rpm if args.rpm is not None else train.tach.nominal_rpm
    if rpm is None:
        raise AnalysisError("the model has no tach.nominal_rpm; give the speed with --rpm")
    speed = args.speed or ("fluctuating" if args.speed_variation > 0 else "steady")
    faults = ()
    if args.fault is not None:
        faults = (Fault(args.fault, args.on, tooth=args.tooth, severity=args.severity),)
    sim = simulate(train, rpm=rpm, duration_s=args.duration, fs=args.rate, faults=faults, speed=speed,
                   speed_variation_pct=args.speed_variation, seed=args.seed, noise_g=args.noise,
                   missing_tach_pct=args.missing_tach)
    written = write_simulation(sim, out, train, with_tach=not args.no_tach)
    what = "healthy" if not faults else f"{args.severity} {args.fault} fault on {args.on!r}"
    speed_text = (f"no tach, nominal {written.tach.nominal_rpm:g} rpm, running at {rpm:g} rpm" if args.no_tach
                  else f"tach on {sim.reference_shaft!r} at {rpm:g} rpm")
    print(f"wrote {out} ({sim.duration_s:g} s at {sim.fs:g} Hz, {what}, "
          f"full scale {written.sensors[0].scale:g} g, {speed_text}) and {out.with_suffix('.toml')}")
    return 0
