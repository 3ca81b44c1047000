"""``gearbench frequencies MODEL [--rpm R] [--shaft NAME] [--json]``.

Prints every characteristic frequency of a gear-train model at one speed: shaft
rates, gear mesh frequencies with hunting-tooth and assembly-phase frequencies,
planetary-stage frequencies and bearing defect frequencies, in Hz, cycles per
minute and orders of the reference shaft.  Without ``--rpm`` the model's
``tach.nominal_rpm`` is used.  No Qt, no scipy: it starts fast.
"""

from __future__ import annotations

import argparse
import json
import math

HELP = "every characteristic frequency of a gear-train model at a speed"


def add_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("model", metavar="MODEL", help="gear-train model file (TOML)")
    parser.add_argument("--rpm", type=float, default=None,
                        help="speed of the reference shaft in rev/min (default: the model's tach.nominal_rpm)")
    parser.add_argument("--shaft", metavar="NAME", default=None,
                        help="reference shaft that turns at --rpm (default: the shaft the tach watches)")
    parser.add_argument("--json", action="store_true", help="print JSON instead of a table")


def _table(headers: list[str], rows: list[list[str]], right: set[int]) -> list[str]:
    widths = [max(len(h), *(len(r[i]) for r in rows)) if rows else len(h) for i, h in enumerate(headers)]

    def line(cells: list[str]) -> str:
        return "  ".join(c.rjust(w) if i in right else c.ljust(w)
                         for i, (c, w) in enumerate(zip(cells, widths))).rstrip()

    return [line(headers), line(["-" * w for w in widths])] + [line(r) for r in rows]


def _num(x: float, digits: int = 4) -> str:
    return f"{x:.{digits}f}" if math.isfinite(x) else "-"


def _cpm(hz: float) -> str:
    return _num(hz * 60.0, 2)


def format_table(table, train_name: str = "") -> str:
    """Readable aligned text of a :class:`dsp.kinematics.FrequencyTable`."""
    out: list[str] = []
    title = f"{train_name}: " if train_name else ""
    out.append(f"{title}reference shaft {table.reference_shaft!r} at {table.reference_rpm:g} rpm "
               f"({table.reference_hz:.4f} Hz); order = multiple of the reference shaft rate")
    out.append("")
    out.append("Shafts")
    sense = {1: "same", -1: "opposite"}
    out += _table(["shaft", "Hz", "rpm", "order", "sense"],
                  [[s.name, _num(s.hz), _num(s.rpm, 2), _num(s.order), sense[s.direction]] for s in table.shafts],
                  {1, 2, 3})
    if table.meshes:
        out += ["", "Meshes"]
        out += _table(["mesh", "teeth", "GMF Hz", "GMF CPM", "order", "hunting tooth Hz", "phases", "phase Hz"],
                      [[m.name, f"{m.driver_teeth}/{m.driven_teeth}", _num(m.gmf_hz), _cpm(m.gmf_hz),
                        _num(m.gmf_order), _num(m.hunting_tooth_hz), str(m.assembly_phases),
                        _num(m.assembly_phase_hz) if m.assembly_phases > 1 else "-"] for m in table.meshes],
                      {1, 2, 3, 4, 5, 6, 7})
    if table.planetary:
        out += ["", "Planetary stages (ring fixed)"]
        rows = []
        for g in table.planetary:
            for label, f in (("carrier", g.carrier_hz), ("mesh", g.mesh_hz),
                             ("planet spin (vs carrier)", g.planet_spin_hz),
                             ("planet pass", g.planet_pass_hz), ("sun fault", g.sun_fault_hz),
                             ("planet fault (one flank)", g.planet_fault_hz),
                             ("planet fault (both flanks)", g.planet_fault_two_flank_hz),
                             ("ring fault", g.ring_fault_hz)):
                rows.append([g.name, label, _num(f), _cpm(f), _num(f / table.reference_hz)])
        out += _table(["stage", "frequency", "Hz", "CPM", "order"], rows, {2, 3, 4})
    if table.bearings:
        out += ["", "Bearings (outer ring fixed)"]
        rows = []
        for b in table.bearings:
            for label, f in (("BPFO", b.bpfo_hz), ("BPFI", b.bpfi_hz), ("BSF", b.bsf_hz),
                             ("2xBSF", 2 * b.bsf_hz), ("FTF", b.ftf_hz)):
                rows.append([b.name, b.shaft, label, _num(f), _cpm(f), _num(f / table.reference_hz)])
        out += _table(["bearing", "shaft", "frequency", "Hz", "CPM", "order"], rows, {3, 4, 5})
    return "\n".join(out)


def run(args: argparse.Namespace) -> int:
    from dsp.errors import GearbenchError
    from dsp.kinematics import frequency_table
    from dsp.model import load_model, model_warnings
    import sys

    rpm = args.rpm
    if rpm is not None and not (math.isfinite(rpm) and rpm > 0):
        raise GearbenchError(f"--rpm must be a positive speed in rev/min, got {rpm:g}")
    train = load_model(args.model)
    if args.shaft is not None and args.shaft not in train.shaft_names():
        raise GearbenchError(f"--shaft {args.shaft!r} is not a shaft of the model; choose one of "
                             f"{', '.join(train.shaft_names())}")
    if rpm is None:
        nominal, tach_shaft = train.tach.nominal_rpm, train.tach.shaft
        if nominal is None:
            raise GearbenchError("the model has no tach.nominal_rpm; give the speed with --rpm R")
        if args.shaft is not None and args.shaft != tach_shaft:
            raise GearbenchError(f"tach.nominal_rpm is the speed of {tach_shaft!r}, not of {args.shaft!r}; "
                                 f"give --rpm R for {args.shaft!r} or leave out --shaft")
        rpm = float(nominal)
    table = frequency_table(train, rpm / 60.0, args.shaft)
    warnings = [str(p) for p in model_warnings(train)]

    if args.json:
        d = table.to_json_dict()
        d["warnings"] = warnings
        print(json.dumps(d, indent=2))
    else:
        print(format_table(table, train.name))
        for w in warnings:
            print(f"warning: {w}", file=sys.stderr)
    return 0
