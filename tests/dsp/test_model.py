"""Model file: TOML round trip, atomic save and one test per validation message."""

from __future__ import annotations

import copy
import dataclasses
import math
import os
import tomllib
from pathlib import Path

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from dsp import model as model_mod
from dsp.errors import ModelError, Problem
from dsp.model import (
    Bearing,
    GearTrain,
    Mesh,
    Planetary,
    Sensor,
    Shaft,
    Tach,
    dumps_model,
    load_model,
    loads_model,
    model_errors,
    model_from_dict,
    model_to_dict,
    model_warnings,
    parse_model_dict,
    save_model,
    validate,
)

DATA = Path(__file__).resolve().parents[1] / "data"
MODEL_FILES = sorted(DATA.glob("*.toml"))
BASE = DATA / "two_stage_planetary.toml"


def base_dict() -> dict:
    return tomllib.loads(BASE.read_text(encoding="utf-8"))


def problems_of(d: dict, n_channels: int | None = None) -> list[Problem]:
    """Every problem of a model dict, through the public API."""
    try:
        train = model_from_dict(d)
    except ModelError as exc:
        return list(exc.problems)
    return validate(train, n_channels=n_channels)


# --- round trip -------------------------------------------------------------------


def test_model_files_exist():
    assert len(MODEL_FILES) >= 4


@pytest.mark.parametrize("path", MODEL_FILES, ids=lambda p: p.name)
def test_round_trip_load_save_load_and_save_load_save(path, tmp_path):
    train = load_model(path)
    out = tmp_path / "m.toml"
    save_model(train, out)
    again = load_model(out)
    assert again == train                                   # exact round trip (design page)
    text1 = out.read_text(encoding="utf-8")
    save_model(again, out)
    assert out.read_text(encoding="utf-8") == text1         # identical text
    assert loads_model(dumps_model(train)) == train
    assert model_from_dict(model_to_dict(train)) == train


def test_round_trip_keeps_non_default_values_and_types():
    train = GearTrain(
        name='Quote " and backslash \\ and ünïcode',
        sensors=(Sensor("a", 0, scale=1, units="m/s2", location="x\ny", direction="axial"),),
        tach=Tach(shaft="in", channel=None, pulses_per_rev=60, edge="falling", nominal_rpm=1480),
        shafts=(Shaft("in"), Shaft("out")),
        meshes=(Mesh("m", "in", 19, "out", 73),),
        bearings=(Bearing("b", "out", 9, 7.94, 39.04, contact_angle_deg=12.5),),
    )
    text = dumps_model(train)
    back = loads_model(text)
    assert back == train
    assert type(back.sensors[0].scale) is int               # 1 stays 1, not 1.0: kept as typed
    assert type(back.tach.nominal_rpm) is int
    assert dumps_model(back) == text
    assert "channel" not in tomllib.loads(text)["tach"]     # TOML has no null: omitted


def test_defaults_are_omitted_only_when_reading_back_gives_them():
    train = load_model(DATA / "pair_40_15.toml")
    d = model_to_dict(train)
    assert "direction" not in d["sensors"][0]               # "radial" is the default
    assert "contact_angle_deg" not in d["bearings"][0]
    assert d["tach"]["edge"] == "falling"
    assert d["sensors"][1]["units"] == "m/s2"


# --- atomic save --------------------------------------------------------------------


def test_save_is_atomic_and_fsyncs(tmp_path, monkeypatch):
    out = tmp_path / "m.toml"
    out.write_text("old", encoding="utf-8")
    synced: list[int] = []
    real_fsync = os.fsync
    monkeypatch.setattr(model_mod.os, "fsync", lambda fd: (synced.append(fd), real_fsync(fd)))
    save_model(load_model(BASE), out)
    assert synced, "save_model must fsync the temporary file"
    assert load_model(out) == load_model(BASE)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["m.toml"]   # no temporary file left


def test_failed_replace_leaves_old_file_and_no_temp(tmp_path, monkeypatch):
    out = tmp_path / "m.toml"
    out.write_text("old", encoding="utf-8")

    def boom(src, dst):
        raise OSError("disk full")

    monkeypatch.setattr(model_mod.os, "replace", boom)
    with pytest.raises(OSError):
        save_model(load_model(BASE), out)
    assert out.read_text(encoding="utf-8") == "old"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["m.toml"]


def test_unserialisable_model_does_not_touch_the_file(tmp_path):
    out = tmp_path / "m.toml"
    out.write_text("old", encoding="utf-8")
    bad = GearTrain(name=object())
    with pytest.raises(TypeError):
        save_model(bad, out)
    assert out.read_text(encoding="utf-8") == "old"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["m.toml"]


# --- load errors --------------------------------------------------------------------


def test_toml_syntax_error_names_line_and_column(tmp_path):
    text = 'name = "x"\n\n[tach\nshaft = "in"\n'
    with pytest.raises(ModelError) as info:
        loads_model(text)
    msg = str(info.value)
    assert "line 3" in msg and "column" in msg and "fix the TOML syntax" in msg
    p = tmp_path / "broken.toml"
    p.write_text(text, encoding="utf-8")
    with pytest.raises(ModelError, match="broken.toml.*line 3"):
        load_model(p)


def test_missing_and_non_utf8_files(tmp_path):
    with pytest.raises(ModelError, match="does not exist; check the path"):
        load_model(tmp_path / "nope.toml")
    p = tmp_path / "latin1.toml"
    p.write_bytes('name = "Gr\xfcn"\n'.encode("latin-1"))
    with pytest.raises(ModelError, match="not UTF-8"):
        load_model(p)


def test_every_problem_is_reported_at_once():
    d = base_dict()
    d["meshes"][0]["driver_teeth"] = 19.5
    d["meshes"][1]["colour"] = "red"
    d["bearings"][0]["contact_angle_deg"] = 60.0
    d["sensors"][0]["units"] = "G"
    d["extra"] = 1
    with pytest.raises(ModelError) as info:
        model_from_dict(d)
    fields = {p.field for p in info.value.problems}
    assert {"meshes[0].driver_teeth", "meshes[1].colour", "bearings[0].contact_angle_deg",
            "sensors[0].units", "extra"} <= fields
    assert "(and 4 more problems)" in str(info.value)


def test_clean_models_have_no_errors():
    for path in MODEL_FILES:
        train = load_model(path)
        assert model_errors(train) == []
    assert model_warnings(load_model(BASE)) == []


def test_parse_never_raises_for_bad_values():
    d = base_dict()
    d["meshes"][0]["driver_teeth"] = "many"
    train, problems = parse_model_dict(d)
    assert train.meshes[0].driver_teeth == "many"          # kept as read, for the form
    assert problems == []                                   # value problems are validate's job


# --- one test per validation message ----------------------------------------------


def _set(path: list, value):
    def f(d):
        target = d
        for k in path[:-1]:
            target = target[k]
        target[path[-1]] = value
    return f


def _del(path: list):
    def f(d):
        target = d
        for k in path[:-1]:
            target = target[k]
        del target[path[-1]]
    return f


def _append(section: str, item):
    def f(d):
        d.setdefault(section, []).append(copy.deepcopy(item) if not callable(item) else item(d))
    return f


def _many(*fs):
    def f(d):
        for g in fs:
            g(d)
    return f


# (id, mutation, field, fragment, severity, n_channels).  The rules come from the design
# page ("The model file", unknown keys are an error) unless a comment names another source.
CASES = [
    ("unknown top-level key", _set(["gears"], []), "gears", "unknown key 'gears'", "error", None),
    ("unknown key in mesh", _set(["meshes", 1, "teeth"], 5), "meshes[1].teeth", "unknown key 'teeth'", "error", None),
    ("unknown key in tach", _set(["tach", "ppr"], 1), "tach.ppr", "unknown key 'ppr'", "error", None),
    ("missing teeth", _del(["meshes", 1, "driven_teeth"]), "meshes[1].driven_teeth", "is missing", "error", None),
    ("missing diameter", _del(["bearings", 0, "pitch_diameter_mm"]), "bearings[0].pitch_diameter_mm",
     "is missing", "error", None),
    ("name not text", _set(["sensors", 0, "name"], 3), "sensors[0].name", "must be text", "error", None),
    ("empty name", _set(["meshes", 0, "name"], ""), "meshes[0].name", "must not be empty", "error", None),
    ("top name not text", _set(["name"], 5), "name", "must be text", "error", None),
    ("section not array", _set(["bearings"], "x"), "bearings", "array of tables", "error", None),
    ("element not table", _set(["meshes", 0], 5), "meshes[0]", "must be a table", "error", None),
    ("tach not table", _set(["tach"], 5), "tach", "must be a table", "error", None),
    ("unknown shaft in mesh", _set(["meshes", 0, "driver"], "inptu"), "meshes[0].driver",
     "unknown shaft 'inptu'", "error", None),
    ("unknown shaft in planetary", _set(["planetary", 0, "carrier_shaft"], "arm"), "planetary[0].carrier_shaft",
     "unknown shaft 'arm'", "error", None),
    ("unknown shaft in bearing", _set(["bearings", 0, "shaft"], "x"), "bearings[0].shaft",
     "unknown shaft 'x'", "error", None),
    ("duplicate shaft", _set(["shafts", 1, "name"], "input"), "shafts[1].name", "already used by shafts[0]",
     "error", None),
    ("duplicate mesh", _set(["meshes", 1, "name"], "stage 1"), "meshes[1].name", "already used by meshes[0]",
     "error", None),
    ("duplicate planetary", _append("planetary", lambda d: dict(d["planetary"][0])), "planetary[1].name",
     "already used by planetary[0]", "error", None),
    ("duplicate bearing", _append("bearings", lambda d: dict(d["bearings"][0])), "bearings[1].name",
     "already used by bearings[0]", "error", None),
    ("duplicate sensor", _append("sensors", {"name": "housing top", "channel": 2}), "sensors[1].name",
     "already used by sensors[0]", "error", None),
    ("fractional teeth", _set(["meshes", 1, "driven_teeth"], 19.5), "meshes[1].driven_teeth",
     "must be a positive whole number of teeth, got 19.5", "error", None),
    ("zero teeth", _set(["planetary", 0, "sun_teeth"], 0), "planetary[0].sun_teeth",
     "positive whole number of teeth, got 0", "error", None),
    ("negative teeth", _set(["meshes", 0, "driver_teeth"], -3), "meshes[0].driver_teeth",
     "positive whole number of teeth, got -3", "error", None),
    ("text teeth", _set(["meshes", 0, "driver_teeth"], "19"), "meshes[0].driver_teeth",
     "positive whole number of teeth, got '19'", "error", None),
    ("boolean teeth", _set(["meshes", 0, "driver_teeth"], True), "meshes[0].driver_teeth",
     "positive whole number of teeth, got True", "error", None),
    ("zero planets", _set(["planetary", 0, "planets"], 0), "planetary[0].planets",
     "positive whole number of planets", "error", None),
    ("fractional rolling elements", _set(["bearings", 0, "rolling_elements"], 9.5), "bearings[0].rolling_elements",
     "positive whole number of rolling elements", "error", None),
    # a closed loop must give one speed per shaft (domain reference 1.3: stage ratios multiply)
    ("loop with wrong ratio", _append("meshes", {"name": "shortcut", "driver": "input", "driver_teeth": 20,
                                                  "driven": "low speed", "driven_teeth": 61}),
     "meshes[2]", "mesh 'shortcut' closes a loop that gives shaft 'low speed' two different speeds", "error", None),
    # external meshes reverse the sense (domain reference 1.1); ratio 360/3233 = (20/61)(18/53)
    ("loop that locks", _append("meshes", {"name": "shortcut", "driver": "input", "driver_teeth": 360,
                                            "driven": "low speed", "driven_teeth": 3233}),
     "meshes[2]", "turn both ways", "error", None),
    ("shaft connected to nothing", _append("shafts", {"name": "spare"}), "shafts[4].name",
     "'spare' is connected to nothing", "error", None),
    ("shaft not linked to tach shaft", _many(
        _append("shafts", {"name": "a"}), _append("shafts", {"name": "b"}),
        _append("meshes", {"name": "island", "driver": "a", "driver_teeth": 10, "driven": "b", "driven_teeth": 20})),
     "shafts[4].name", "'a' is not connected to shaft 'input'", "error", None),
    ("mesh on one shaft", _set(["meshes", 0, "driven"], "input"), "meshes[0].driven",
     "same shaft as the driver", "error", None),
    ("planetary on one shaft", _set(["planetary", 0, "carrier_shaft"], "low speed"), "planetary[0].carrier_shaft",
     "same shaft as the sun", "error", None),
    # from memory: gear-design texts (Lynwander 1983): Z_r = Z_s + 2 Z_p for standard teeth
    ("ring teeth do not fit", _set(["planetary", 0, "ring_teeth"], 81), "planetary[0].ring_teeth",
     "must equal sun_teeth + 2 x planet_teeth = 80", "error", None),
    # from memory: gear-design texts: equal spacing needs (Z_s + Z_r)/N_p whole; 100/3 is not
    ("planets not equally spaced", _set(["planetary", 0, "planets"], 3), "planetary[0].planets",
     "cannot be equally spaced", "warning", None),
    # from memory: gear-design texts: neighbours clear if (Z_s+Z_p) sin(pi/N) > Z_p + 2; 50 sin 36deg = 29.4 < 32
    ("planets touch", _set(["planetary", 0, "planets"], 5), "planetary[0].planets",
     "would touch each other", "warning", None),
    # common practice, no source: a ball must be smaller than the pitch circle
    ("element as large as pitch", _set(["bearings", 0, "element_diameter_mm"], 160.0),
     "bearings[0].element_diameter_mm", "must be smaller than pitch_diameter_mm", "error", None),
    ("contact angle too large", _set(["bearings", 0, "contact_angle_deg"], 46.0), "bearings[0].contact_angle_deg",
     "from 0 to 45 degrees, got 46.0", "error", None),
    ("contact angle negative", _set(["bearings", 0, "contact_angle_deg"], -1), "bearings[0].contact_angle_deg",
     "from 0 to 45 degrees", "error", None),
    ("scale zero", _set(["sensors", 0, "scale"], 0.0), "sensors[0].scale", "positive finite number", "error", None),
    ("scale negative", _set(["sensors", 0, "scale"], -2), "sensors[0].scale", "positive finite number", "error", None),
    ("scale nan", _set(["sensors", 0, "scale"], math.nan), "sensors[0].scale", "positive finite", "error", None),
    ("scale inf", _set(["sensors", 0, "scale"], math.inf), "sensors[0].scale", "positive finite", "error", None),
    ("scale text", _set(["sensors", 0, "scale"], "2"), "sensors[0].scale", "positive finite", "error", None),
    ("bad units", _set(["sensors", 0, "units"], "G"), "sensors[0].units", "must be one of 'g', 'm/s2', got 'G'",
     "error", None),
    ("bad direction", _set(["sensors", 0, "direction"], "diagonal"), "sensors[0].direction",
     "'radial', 'axial', 'vertical', 'horizontal'", "error", None),
    ("negative channel", _set(["sensors", 0, "channel"], -1), "sensors[0].channel", "0-based channel number",
     "error", None),
    ("tach shaft unknown", _set(["tach", "shaft"], "motor"), "tach.shaft", "unknown shaft 'motor'", "error", None),
    ("tach shaft missing", _del(["tach", "shaft"]), "tach.shaft", "is missing", "error", None),
    ("no tach table", _del(["tach"]), "tach.shaft", "is missing; add a [tach] table", "error", None),
    ("tach without channel or speed", _del(["tach", "channel"]), "tach", "neither channel nor nominal_rpm",
     "error", None),
    ("pulses per rev zero", _set(["tach", "pulses_per_rev"], 0), "tach.pulses_per_rev", "at least 1, got 0",
     "error", None),
    ("pulses per rev fractional", _set(["tach", "pulses_per_rev"], 1.5), "tach.pulses_per_rev", "got 1.5",
     "error", None),
    ("bad edge", _set(["tach", "edge"], "up"), "tach.edge", "'rising', 'falling'", "error", None),
    ("negative nominal rpm", _set(["tach", "nominal_rpm"], -100.0), "tach.nominal_rpm", "positive finite",
     "error", None),
    ("sensor channel beyond recording", _set(["sensors", 0, "channel"], 3), "sensors[0].channel",
     "the recording has only 2 channel(s)", "error", 2),
    ("tach channel beyond recording", _set(["tach", "channel"], 5), "tach.channel",
     "the recording has only 2 channel(s)", "error", 2),
    ("sensor on tach channel", _set(["sensors", 0, "channel"], 1), "sensors[0].channel", "is the tach channel",
     "error", None),
    ("no shafts", _many(_set(["shafts"], []), _del(["meshes"]), _del(["planetary"]), _del(["bearings"])),
     "shafts", "has no shafts", "error", None),
    ("no sensors", _del(["sensors"]), "sensors", "no [[sensors]]", "warning", None),
]


@pytest.mark.parametrize(("mutate", "field", "fragment", "severity", "n_channels"),
                         [c[1:] for c in CASES], ids=[c[0] for c in CASES])
def test_validation_message(mutate, field, fragment, severity, n_channels):
    d = base_dict()
    assert problems_of(d, n_channels) == []                 # the base model is clean
    mutate(d)
    found = [p for p in problems_of(d, n_channels) if p.field == field and fragment in p.message]
    assert len(found) == 1, problems_of(d, n_channels)
    assert found[0].severity == severity
    assert found[0].message.strip() and "\n" not in found[0].message   # one sentence for one line


def test_warnings_do_not_stop_loading_and_are_exposed():
    text = BASE.read_text(encoding="utf-8").replace("planets = 4", "planets = 3")
    train = loads_model(text)                               # loads: only a warning
    assert [p.field for p in model_warnings(train)] == ["planetary[0].planets"]
    assert model_errors(train) == []


def test_channels_are_only_checked_against_a_recording_when_given():
    train = load_model(BASE)
    assert validate(train) == []
    assert [p.field for p in validate(train, n_channels=1)] == ["tach.channel"]


def test_validate_does_not_modify_the_model():
    train = load_model(BASE)
    broken = dataclasses.replace(train, planetary=(dataclasses.replace(train.planetary[0], ring_teeth=81),))
    before = dataclasses.astuple(broken)
    validate(broken)
    assert dataclasses.astuple(broken) == before
    assert isinstance(broken.planetary[0], Planetary)


# --- property test: any content survives save and load ------------------------------

names = st.text(max_size=12)
counts = st.integers(min_value=-5, max_value=10**6)
numbers = st.one_of(st.integers(min_value=-10**9, max_value=10**9),
                    st.floats(allow_nan=False, allow_infinity=True))


@st.composite
def trains(draw):
    return GearTrain(
        name=draw(names),
        sensors=tuple(Sensor(draw(names), draw(counts), draw(numbers), draw(st.sampled_from(["g", "m/s2", "x"])),
                             draw(names), draw(st.sampled_from(["radial", "axial", ""])))
                      for _ in range(draw(st.integers(0, 2)))),
        tach=Tach(draw(names), draw(st.one_of(st.none(), counts)), draw(counts),
                  draw(st.sampled_from(["rising", "falling"])), draw(st.one_of(st.none(), numbers))),
        shafts=tuple(Shaft(draw(names)) for _ in range(draw(st.integers(0, 3)))),
        meshes=tuple(Mesh(draw(names), draw(names), draw(counts), draw(names), draw(counts))
                     for _ in range(draw(st.integers(0, 2)))),
        planetary=tuple(Planetary(draw(names), draw(names), draw(counts), draw(counts), draw(counts),
                                  draw(counts), draw(names)) for _ in range(draw(st.integers(0, 1)))),
        bearings=tuple(Bearing(draw(names), draw(names), draw(counts), draw(numbers), draw(numbers), draw(numbers))
                       for _ in range(draw(st.integers(0, 2)))),
    )


@settings(max_examples=80, deadline=None)
@given(trains())
def test_property_any_model_round_trips_exactly(train):
    # exact round trip of the TOML text (design page); checked with tomllib as the reader
    text = dumps_model(train)
    back, problems = parse_model_dict(tomllib.loads(text))
    assert problems == []
    assert back == train
    assert [type(s.scale) for s in back.sensors] == [type(s.scale) for s in train.sensors]
    assert dumps_model(back) == text
