"""Text-to-value rules of the model side form (no Qt here).

The form keeps every cell as the text the analyst typed.  A draft
:class:`~dsp.model.GearTrain` is built from that text with :func:`parse_cell`:
numbers become ``int``/``float``, anything else stays the typed ``str`` so that
the field can be marked and nothing typed is lost.  :func:`typing_problems`
reports text that is not a number; :func:`dsp.model.validate` reports the rest.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from typing import Any

from dsp.errors import Problem
from dsp.model import DIRECTIONS, EDGES, UNITS, Bearing, Mesh, Planetary, Sensor, Shaft, Tach

NO_TACH = "no tach"


@dataclass(frozen=True)
class Column:
    """One editable field of a model element.

    ``kind`` is ``"text"``, ``"int"``, ``"float"``, ``"shaft"`` (a shaft name picked
    from the current shafts) or ``"choice"`` (one of ``choices``).  ``default`` is
    the value used when the cell is left blank; ``None`` means blank stays blank
    (and is reported when a number is needed).
    """

    key: str
    header: str
    kind: str = "text"
    choices: tuple[str, ...] = ()
    default: Any = None
    tip: str = ""


C = Column
SECTION_COLUMNS: dict[str, tuple[Column, ...]] = {
    "sensors": (
        C("name", "Name", tip="Your name for this accelerometer, e.g. 'IS-DE-R'."),
        C("channel", "Channel", "int", tip="0-based channel of the recording."),
        C("scale", "Scale", "float", default=1.0, tip="Physical units per file sample value."),
        C("units", "Units", "choice", UNITS, tip="Units after scaling: g or m/s2."),
        C("location", "Location", default="", tip="Where the sensor sits, in plain words."),
        C("direction", "Direction", "choice", DIRECTIONS, tip="Measuring direction."),
    ),
    "shafts": (
        C("name", "Shaft", tip="A unique shaft name; renaming updates every reference to it."),
    ),
    "meshes": (
        C("name", "Name", tip="Your name for this gear pair, e.g. 'stage 1'."),
        C("driver", "Driver shaft", "shaft", tip="Shaft of the driving gear."),
        C("driver_teeth", "Driver teeth", "int", tip="Tooth count of the driving gear."),
        C("driven", "Driven shaft", "shaft", tip="Shaft of the driven gear."),
        C("driven_teeth", "Driven teeth", "int", tip="Tooth count of the driven gear."),
    ),
    "planetary": (
        C("name", "Name", tip="Your name for this planetary stage."),
        C("sun_shaft", "Sun shaft", "shaft", tip="Shaft carrying the sun gear (input)."),
        C("sun_teeth", "Sun teeth", "int"),
        C("planet_teeth", "Planet teeth", "int"),
        C("planets", "Planets", "int", tip="Number of planet gears."),
        C("ring_teeth", "Ring teeth", "int", tip="Tooth count of the fixed ring gear."),
        C("carrier_shaft", "Carrier shaft", "shaft", tip="Shaft driven by the carrier (output)."),
    ),
    "bearings": (
        C("name", "Name", tip="Your name for this bearing, e.g. 'IS DE'."),
        C("shaft", "Shaft", "shaft", tip="Shaft turning the inner ring."),
        C("rolling_elements", "Rolling elements", "int", tip="Number of balls or rollers."),
        C("element_diameter_mm", "Element dia. (mm)", "float"),
        C("pitch_diameter_mm", "Pitch dia. (mm)", "float"),
        C("contact_angle_deg", "Contact angle (deg)", "float", default=0.0),
    ),
}
TACH_COLUMNS: tuple[Column, ...] = (
    C("channel", "Tach channel", "int", tip=f"0-based channel of the tach pulses, or '{NO_TACH}'."),
    C("shaft", "Watched shaft", "shaft", tip="The shaft the tach sees once (or n times) per turn."),
    C("pulses_per_rev", "Pulses per rev", "int", default=1, tip="Tach pulses per turn of the shaft."),
    C("edge", "Edge", "choice", EDGES, tip="Pulse edge that marks the time."),
    C("nominal_rpm", "Nominal speed (rpm)", "float", tip="Shaft speed to use when there is no tach."),
)
SECTION_CLASSES: dict[str, type] = {
    "sensors": Sensor, "shafts": Shaft, "meshes": Mesh, "planetary": Planetary, "bearings": Bearing,
}
SECTION_TITLES: dict[str, str] = {
    "name": "Machine", "sensors": "Sensors", "tach": "Tach", "shafts": "Shafts",
    "meshes": "Gear meshes", "planetary": "Planetary stages", "bearings": "Bearings",
}
SECTION_NOUNS: dict[str, str] = {
    "sensors": "sensor", "shafts": "shaft", "meshes": "mesh", "planetary": "planetary", "bearings": "bearing",
}


def parse_cell(text: str, column: Column) -> Any:
    """Turn the typed ``text`` into the draft value of ``column``.

    Text kinds are kept exactly as typed.  A number field gives ``int`` or
    ``float``; text that is not a number is returned unchanged (a ``str``) so the
    draft keeps it and the field can be marked.  A blank number field gives the
    column default, or ``""`` when it has none.
    """
    if column.kind in ("text", "shaft", "choice"):
        return text
    s = text.strip()
    if s == "":
        return column.default if column.default is not None else ""
    if column.kind == "int":
        try:
            return int(s)
        except ValueError:
            pass
    try:
        return float(s)
    except ValueError:
        return text


def format_value(value: Any) -> str:
    """Text shown for a model value: shortest exact form for floats, ``""`` for None."""
    if value is None:
        return ""
    if isinstance(value, float):
        return repr(value)
    return str(value)


def typing_problem(path: str, column: Column, value: Any) -> Problem | None:
    """A :class:`Problem` when the typed value of a number field is not a usable number."""
    if column.kind not in ("int", "float"):
        return None
    what = "a whole number" if column.kind == "int" else "a number"
    example = "e.g. 19" if column.kind == "int" else "e.g. 7.94"
    if isinstance(value, str):
        if value.strip() == "":
            return Problem(path, f"is empty; it must be {what}: type one, {example}", "error")
        return Problem(path, f"'{value}' must be {what}; type digits only, {example}", "error")
    if isinstance(value, float) and not math.isfinite(value):
        return Problem(path, f"{value!r} must be a finite number; type a real value, {example}", "error")
    if column.kind == "int" and isinstance(value, float) and not value.is_integer():
        return Problem(path, f"{value!r} must be a whole number; type it without decimals, {example}", "error")
    return None


def build_elements(section: str, rows: list[list[str]]) -> tuple[tuple[Any, ...], list[Problem]]:
    """Draft elements of ``section`` from its rows of cell text, plus typing problems."""
    cls = SECTION_CLASSES[section]
    columns = SECTION_COLUMNS[section]
    elements, problems = [], []
    for i, row in enumerate(rows):
        values = {}
        for col, text in zip(columns, row):
            value = parse_cell(text, col)
            values[col.key] = value
            p = typing_problem(f"{section}[{i}].{col.key}", col, value)
            if p is not None:
                problems.append(p)
        elements.append(cls(**values))
    return tuple(elements), problems


def build_tach(texts: dict[str, str]) -> tuple[Tach, list[Problem]]:
    """Draft :class:`~dsp.model.Tach` from the tach widgets' text, plus typing problems."""
    values, problems = {}, []
    for col in TACH_COLUMNS:
        text = texts.get(col.key, "")
        if col.key == "channel" and text.strip().lower() in ("", NO_TACH):
            values[col.key] = None
            continue
        if col.key == "nominal_rpm" and text.strip() == "":
            values[col.key] = None
            continue
        value = parse_cell(text, col)
        values[col.key] = value
        p = typing_problem(f"tach.{col.key}", col, value)
        if p is not None:
            problems.append(p)
    return Tach(**values), problems


def element_texts(section: str, element: Any) -> list[str]:
    """Cell text of one model element, in column order."""
    return [format_value(getattr(element, c.key)) for c in SECTION_COLUMNS[section]]


def tach_texts(tach: Tach) -> dict[str, str]:
    """Widget text of a :class:`~dsp.model.Tach`."""
    out = {c.key: format_value(getattr(tach, c.key)) for c in TACH_COLUMNS}
    if tach.channel is None:
        out["channel"] = NO_TACH
    return out


def merge_problems(typing: list[Problem], checked: list[Problem]) -> list[Problem]:
    """Typing problems first; drop model-check problems on a field already reported."""
    seen = {p.field for p in typing}
    out = list(typing)
    for p in checked:
        if p.field in seen and p.severity == "error":
            continue
        out.append(p)
    return out


_PATH = re.compile(r"^(?P<section>[A-Za-z_]+)(?:\[(?P<index>\d+)\])?(?:\.(?P<key>[A-Za-z_0-9]+))?$")


def split_field(path: str | None) -> tuple[str, int | None, str | None] | None:
    """``"meshes[1].driven_teeth"`` -> ``("meshes", 1, "driven_teeth")``; None if unparsable."""
    m = _PATH.match(path or "")
    if m is None:
        return None
    index = m.group("index")
    return m.group("section"), (int(index) if index is not None else None), m.group("key")


def field_label(path: str | None) -> str:
    """Plain-words place of a field path: ``"Gear meshes, row 2, Driven teeth"``."""
    parts = split_field(path)
    if parts is None:
        return path or "Model"
    section, index, key = parts
    words = [SECTION_TITLES.get(section, section)]
    if index is not None:
        words.append(f"row {index + 1}")
    if key is not None:
        cols = TACH_COLUMNS if section == "tach" else SECTION_COLUMNS.get(section, ())
        words.append(next((c.header for c in cols if c.key == key), key))
    return ", ".join(words)


def group_marks(problems: list[Problem]):
    """Sort problems by where they are shown.

    Returns
    -------
    table_marks : dict
        ``section -> {(row, column_index or None): [(severity, message), ...]}``
        for the element tables (``None``: the whole row).
    widget_marks : dict
        ``"name"`` or ``"tach.<key>"`` -> ``[(severity, message), ...]``.
    section_counts : dict
        ``section -> number of problems`` (for the section titles).
    """
    table_marks: dict[str, dict] = {}
    widget_marks: dict[str, list[tuple[str, str]]] = {}
    section_counts: dict[str, int] = {}
    tach_keys = {c.key for c in TACH_COLUMNS}
    for p in problems:
        parts = split_field(p.field)
        if parts is None:
            continue
        section, index, key = parts
        section_counts[section] = section_counts.get(section, 0) + 1
        mark = (p.severity, p.message)
        if section in SECTION_COLUMNS and index is not None:
            cols = SECTION_COLUMNS[section]
            col = next((j for j, c in enumerate(cols) if c.key == key), None)
            table_marks.setdefault(section, {}).setdefault((index, col), []).append(mark)
        elif section == "tach" and key in tach_keys:
            widget_marks.setdefault(f"tach.{key}", []).append(mark)
        elif section == "name" and key is None and index is None:
            widget_marks.setdefault("name", []).append(mark)
    return table_marks, widget_marks, section_counts
