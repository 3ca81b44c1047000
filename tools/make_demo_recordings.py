"""Regenerate the bundled demo recordings in ``demo_recordings/`` from fixed seeds.

The scenario is INVENTED (a fictional quarry, "Ridgeway Aggregates"); see
``demo_recordings/README.md``.  Usage::

    python tools/make_demo_recordings.py            # all recordings
    python tools/make_demo_recordings.py 01 03      # only those whose name starts so
    python tools/make_demo_recordings.py --out DIR  # somewhere else

The same function :func:`demo_simulation` is used by the tests to check that the
committed files are what this script makes.
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
if str(ROOT) not in sys.path:  # run as a script from a checkout
    sys.path.insert(0, str(ROOT))

from dsp.model import Bearing, GearTrain, Mesh, Planetary, Sensor, Shaft, Tach  # noqa: E402
from dsp.synth import Fault, simulate, write_simulation  # noqa: E402

DEMO_DIR = ROOT / "demo_recordings"
FS_HZ = 25600.0
DURATION_S = 30.0
RPM = 1485.0
FULL_SCALE_G = 50.0

# name -> (title, faults, speed, speed_variation_pct, seed)
SCENARIOS: dict[str, tuple[str, tuple[Fault, ...], str, float, int]] = {
    "01_healthy_baseline": ("healthy baseline", (), "steady", 0.0, 101),
    "02_early_tooth_damage": ("early localized damage, input pinion tooth 7",
                              (Fault("tooth", "stage 1:input", tooth=7, severity="mild"),), "steady", 0.0, 102),
    "03_broken_tooth": ("broken tooth, intermediate wheel tooth 40",
                        (Fault("tooth", "stage 1:intermediate", tooth=40, severity="severe"),), "steady", 0.0, 103),
    "04_distributed_wear": ("distributed wear, input pinion",
                            (Fault("wear", "stage 1:input", severity="severe"),), "steady", 0.0, 104),
    "05_bearing_outer_race": ("outer race defect, bearing intermediate NDE",
                              (Fault("outer-race", "intermediate NDE", severity="severe"),), "steady", 0.0, 105),
    "06_speed_variation": ("broken tooth (as 03) with +-8 % slow speed wander",
                           (Fault("tooth", "stage 1:intermediate", tooth=40, severity="severe"),),
                           "fluctuating", 8.0, 106),
    "07_no_tach_route": ("route recording without tach, early localized damage, input pinion tooth 7",
                         (Fault("tooth", "stage 1:input", tooth=7, severity="mild"),), "fluctuating", 0.5, 102),  # seed of 02: the same damaged pinion
}

#: Recordings written without a tach channel: the model keeps nominal_rpm = RPM (the
#: nameplate) while the machine runs at RPM x (1 + offset) with the wander above.
NO_TACH: dict[str, float] = {"07_no_tach_route": -0.02}


def demo_train(title: str = "") -> GearTrain:
    """The invented reducer RD-2 of conveyor C-7 at the fictional Ridgeway Aggregates quarry."""
    name = "INVENTED demo: Ridgeway Aggregates (fictional quarry), conveyor C-7 head drive, reducer RD-2"
    if title:
        name += f" - {title}"
    return GearTrain(
        name=name,
        sensors=(Sensor(name="RD2-IS-NDE-R", channel=0, scale=FULL_SCALE_G, units="g",
                        location="intermediate shaft, non-drive-end bearing housing", direction="radial"),),
        tach=Tach(shaft="input", channel=1, pulses_per_rev=1, nominal_rpm=RPM),
        shafts=(Shaft("input"), Shaft("intermediate"), Shaft("output")),
        meshes=(Mesh(name="stage 1", driver="input", driver_teeth=23, driven="intermediate", driven_teeth=71),),
        planetary=(Planetary(name="stage 2", sun_shaft="intermediate", sun_teeth=22, planet_teeth=29,
                             planets=3, ring_teeth=80, carrier_shaft="output"),),
        bearings=(
            Bearing("input DE", "input", 9, 12.7, 58.5, 0.0),
            Bearing("intermediate NDE", "intermediate", 12, 14.29, 72.0, 0.0),
            Bearing("output DE", "output", 16, 19.05, 125.0, 0.0),
        ),
    )


def demo_simulation(stem: str):
    """``(simulation, train)`` of one demo recording, exactly as the script makes it."""
    title, faults, speed, variation, seed = SCENARIOS[stem]
    train = demo_train(title)
    rpm = RPM * (1.0 + NO_TACH.get(stem, 0.0))
    sim = simulate(train, rpm=rpm, duration_s=DURATION_S, fs=FS_HZ, faults=faults, speed=speed,
                   speed_variation_pct=variation, seed=seed)
    return sim, train


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("only", nargs="*", help="name prefixes of the recordings to make (default: all)")
    parser.add_argument("--out", type=Path, default=DEMO_DIR, help="output folder")
    args = parser.parse_args(argv)
    args.out.mkdir(parents=True, exist_ok=True)
    for stem in SCENARIOS:
        if args.only and not any(stem.startswith(p) for p in args.only):
            continue
        sim, train = demo_simulation(stem)
        path = args.out / f"{stem}.flac"
        write_simulation(sim, path, train, scale=FULL_SCALE_G, with_tach=stem not in NO_TACH)
        print(f"{path}  {path.stat().st_size / 1e6:.2f} MB  peak {abs(sim.acceleration_g).max():.2f} g")
    return 0


if __name__ == "__main__":
    sys.exit(main())
