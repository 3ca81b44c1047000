"""Gear-train model: dataclasses, TOML load/save, validation.

The model file is TOML with the keys documented in DEVELOPERS.md ("The model
file").  Dataclasses are frozen; edit with :func:`dataclasses.replace`.
Field values are kept exactly as read (a tooth count typed as ``19.5`` stays
``19.5``) so that :func:`validate` can name the field that is wrong.
"""

from __future__ import annotations

import math
import os
from dataclasses import MISSING as MISSING_DC, dataclass, field, fields
from pathlib import Path
from typing import Any

try:  # Python 3.11+
    import tomllib
except ModuleNotFoundError:  # pragma: no cover - Python 3.10
    import tomli as tomllib

from .errors import ModelError, Problem

UNITS = ("g", "m/s2")
DIRECTIONS = ("radial", "axial", "vertical", "horizontal")
EDGES = ("rising", "falling")


@dataclass(frozen=True)
class Sensor:
    """One accelerometer channel of the recording."""

    name: str
    channel: int
    scale: float = 1.0          # physical units per file sample value
    units: str = "g"            # "g" or "m/s2"
    location: str = ""
    direction: str = "radial"


@dataclass(frozen=True)
class Tach:
    """The speed reference: a tach channel, or a nominal speed when there is none."""

    shaft: str = ""
    channel: int | None = None
    pulses_per_rev: int = 1
    edge: str = "rising"
    nominal_rpm: float | None = None


@dataclass(frozen=True)
class Shaft:
    name: str


@dataclass(frozen=True)
class Mesh:
    """A parallel-axis (external) gear pair.  An idler is two meshes sharing a shaft."""

    name: str
    driver: str
    driver_teeth: int
    driven: str
    driven_teeth: int


@dataclass(frozen=True)
class Planetary:
    """A planetary stage with the ring gear fixed: sun in, carrier out."""

    name: str
    sun_shaft: str
    sun_teeth: int
    planet_teeth: int
    planets: int
    ring_teeth: int
    carrier_shaft: str


@dataclass(frozen=True)
class Bearing:
    """A rolling-element bearing, inner ring turning with ``shaft``, outer ring fixed."""

    name: str
    shaft: str
    rolling_elements: int
    element_diameter_mm: float
    pitch_diameter_mm: float
    contact_angle_deg: float = 0.0


@dataclass(frozen=True)
class GearTrain:
    """The whole model file."""

    name: str = ""
    sensors: tuple[Sensor, ...] = ()
    tach: Tach = field(default_factory=Tach)
    shafts: tuple[Shaft, ...] = ()
    meshes: tuple[Mesh, ...] = ()
    planetary: tuple[Planetary, ...] = ()
    bearings: tuple[Bearing, ...] = ()

    def shaft_names(self) -> tuple[str, ...]:
        return tuple(s.name for s in self.shafts)


# Section name -> element class, in file order.
SECTIONS: dict[str, type] = {
    "sensors": Sensor,
    "shafts": Shaft,
    "meshes": Mesh,
    "planetary": Planetary,
    "bearings": Bearing,
}


# ---------------------------------------------------------------------------
# Field descriptions come from the dataclasses themselves (names, defaults),
# so parsing, dumping and the unknown-key check cannot drift apart.
# ---------------------------------------------------------------------------

_MISSING = object()


def _field_names(cls: type) -> tuple[str, ...]:
    return tuple(f.name for f in fields(cls))


def _defaults(cls: type) -> dict[str, Any]:
    """Default value of each field of ``cls``; fields without one map to ``_MISSING``."""
    out: dict[str, Any] = {}
    for f in fields(cls):
        if f.default is not MISSING_DC:
            out[f.name] = f.default
        elif f.default_factory is not MISSING_DC:  # type: ignore[misc]
            out[f.name] = f.default_factory()  # type: ignore[misc]
        else:
            out[f.name] = _MISSING
    return out


# Required fields are the dataclass fields without a default; ``tach.shaft``
# is required as well (its default "" only exists so that Tach() can be built).
_REQUIRED_EXTRA = {Tach: ("shaft",)}
_TOP_KEYS = ("name", "sensors", "tach", "shafts", "meshes", "planetary", "bearings")


def _required(cls: type) -> tuple[str, ...]:
    req = tuple(n for n, d in _defaults(cls).items() if d is _MISSING)
    return req + _REQUIRED_EXTRA.get(cls, ())


# ---------------------------------------------------------------------------
# dict <-> GearTrain
# ---------------------------------------------------------------------------


def _build(cls: type, table: dict[str, Any], path: str, problems: list[Problem]):
    """Build one element from a TOML table, noting unknown keys; keep values as read."""
    names = _field_names(cls)
    for key in table:
        if key not in names:
            problems.append(Problem(
                f"{path}.{key}",
                f"unknown key {key!r}; remove it or check the spelling "
                f"(allowed keys: {', '.join(names)})",
            ))
    kwargs = {}
    for n, default in _defaults(cls).items():
        if n in table:
            value = table[n]
            kwargs[n] = tuple(value) if isinstance(value, list) else value
        else:
            kwargs[n] = None if default is _MISSING else default
    return cls(**kwargs)


def parse_model_dict(d: dict[str, Any]) -> tuple[GearTrain, list[Problem]]:
    """Build a :class:`GearTrain` from a plain dict without raising.

    Returns the train (values kept exactly as given; missing required keys are
    ``None``) and the structural problems found while reading: unknown keys and
    sections of the wrong shape.  Value problems are left to :func:`validate`.
    """
    problems: list[Problem] = []
    if not isinstance(d, dict):
        raise ModelError([Problem("", f"the model must be a TOML table of keys, got {type(d).__name__}")])
    for key in d:
        if key not in _TOP_KEYS:
            problems.append(Problem(
                key,
                f"unknown key {key!r}; remove it or check the spelling "
                f"(allowed top-level keys: {', '.join(_TOP_KEYS)})",
            ))
    kwargs: dict[str, Any] = {}
    if "name" in d:
        kwargs["name"] = d["name"]
    for section, cls in SECTIONS.items():
        if section not in d:
            continue
        items = d[section]
        if not isinstance(items, list):
            problems.append(Problem(
                section,
                f"must be an array of tables written as [[{section}]] blocks, got {type(items).__name__}",
            ))
            continue
        built = []
        for i, item in enumerate(items):
            path = f"{section}[{i}]"
            if not isinstance(item, dict):
                problems.append(Problem(path, f"must be a table of keys written as a [[{section}]] block, got {item!r}"))
                continue
            built.append(_build(cls, item, path, problems))
        kwargs[section] = tuple(built)
    if "tach" in d:
        if isinstance(d["tach"], dict):
            kwargs["tach"] = _build(Tach, d["tach"], "tach", problems)
        else:
            problems.append(Problem("tach", f"must be a table written as a [tach] block, got {d['tach']!r}"))
    return GearTrain(**kwargs), problems


def model_from_dict(d: dict[str, Any]) -> GearTrain:
    """Build and validate a :class:`GearTrain` from a plain dict (the parsed TOML).

    Raises
    ------
    ModelError
        Listing every problem (unknown keys, missing keys, bad values) when at
        least one has severity ``"error"``.  Warnings do not raise; get them with
        :func:`model_warnings`.
    """
    train, problems = parse_model_dict(d)
    problems = problems + validate(train)
    if any(p.severity == "error" for p in problems):
        raise ModelError(problems)
    return train


def _element_to_dict(obj: Any, required: tuple[str, ...]) -> dict[str, Any]:
    out: dict[str, Any] = {}
    defaults = _defaults(type(obj))
    for n, default in defaults.items():
        value = getattr(obj, n)
        if value is None:
            continue  # TOML has no null: absent means "not given"
        if (
            n not in required
            and default is not _MISSING
            and type(value) is type(default)
            and value == default
        ):
            continue  # equals its default: reading it back gives the same value
        out[n] = list(value) if isinstance(value, tuple) else value
    return out


def model_to_dict(train: GearTrain) -> dict[str, Any]:
    """Plain dict of the model, in file order, omitting keys equal to their defaults.

    Keys are omitted only when reading the dict back gives an equal value of the
    same type, so ``model_from_dict(model_to_dict(t)) == t`` for any valid model.
    """
    out: dict[str, Any] = {}
    if train.name != "":
        out["name"] = train.name
    if train.sensors:
        out["sensors"] = [_element_to_dict(s, _required(Sensor)) for s in train.sensors]
    tach = _element_to_dict(train.tach, ())
    if tach:
        out["tach"] = tach
    for section in ("shafts", "meshes", "planetary", "bearings"):
        items = getattr(train, section)
        if items:
            cls = SECTIONS[section]
            out[section] = [_element_to_dict(x, _required(cls)) for x in items]
    return out


def loads_model(text: str) -> GearTrain:
    """Read a model from TOML text.

    Raises
    ------
    ModelError
        On invalid TOML syntax (with line and column), or listing every problem
        of the model when at least one is an error.
    """
    try:
        d = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise ModelError([Problem("", f"the model is not valid TOML ({exc}); fix the TOML syntax")]) from None
    return model_from_dict(d)


def load_model(path: str | Path) -> GearTrain:
    """Read a model file (UTF-8 TOML).  See :func:`loads_model`."""
    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise ModelError([Problem("", f"model file {str(path)!r} does not exist; check the path")]) from None
    except UnicodeDecodeError:
        raise ModelError([Problem("", f"model file {str(path)!r} is not UTF-8 text; save it as UTF-8 TOML")]) from None
    except OSError as exc:
        raise ModelError([Problem("", f"cannot read model file {str(path)!r} ({exc.strerror}); check the path and permissions")]) from None
    if not text.strip():
        raise ModelError([Problem("", f"model file {str(path)!r} is empty; write the gear-train model in it "
                                      "(see demo_recordings/*.toml) or choose another file")])
    try:
        return loads_model(text)
    except ModelError as exc:
        if len(exc.problems) == 1 and exc.problems[0].field == "":
            p = exc.problems[0]
            raise ModelError([Problem("", f"{path.name}: {p.message}", p.severity)]) from None
        raise


def dumps_model(train: GearTrain) -> str:
    """The model as TOML text (``tomli_w``); reading it back gives an equal train."""
    import tomli_w

    return tomli_w.dumps(model_to_dict(train))


def save_model(train: GearTrain, path: str | Path) -> None:
    """Write the model to ``path`` atomically.

    The text goes to a temporary file in the same folder, is flushed and
    fsync'ed, then replaces ``path`` with :func:`os.replace`, so a crash leaves
    either the old file or the new one, never half of one.  The model is not
    validated here (a half-finished model can be saved); see :func:`validate`.
    """
    from .files import atomic_write_text

    text = dumps_model(train)   # serialise first: a model that cannot be written leaves the file alone
    atomic_write_text(path, text)


# ---------------------------------------------------------------------------
# Validation
# ---------------------------------------------------------------------------


def _is_int(v: Any) -> bool:
    return isinstance(v, int) and not isinstance(v, bool)


def _is_number(v: Any) -> bool:
    return isinstance(v, (int, float)) and not isinstance(v, bool)


class _Checker:
    """Collects problems; small helpers that each check one kind of value."""

    def __init__(self) -> None:
        self.problems: list[Problem] = []

    def add(self, path: str, message: str, severity: str = "error") -> None:
        self.problems.append(Problem(path, message, severity))

    def present(self, path: str, value: Any, what: str) -> bool:
        if value is None:
            self.add(path, f"is missing; add {path.rsplit('.', 1)[-1]} = <{what}>")
            return False
        return True

    def text(self, path: str, value: Any, *, required: bool = True) -> bool:
        if required and not self.present(path, value, "text"):
            return False
        if not isinstance(value, str):
            self.add(path, f"must be text in quotes, got {value!r}")
            return False
        if required and not value.strip():
            self.add(path, "must not be empty; give it a name")
            return False
        return True

    def positive_int(self, path: str, value: Any, what: str) -> bool:
        if not self.present(path, value, what):
            return False
        if _is_int(value) and value > 0:
            return True
        self.add(path, f"must be a positive whole number of {what}, got {value!r}")
        return False

    def channel(self, path: str, value: Any) -> bool:
        if not self.present(path, value, "channel number"):
            return False
        if _is_int(value) and value >= 0:
            return True
        self.add(path, f"must be a 0-based channel number (0, 1, 2, ...), got {value!r}")
        return False

    def positive_number(self, path: str, value: Any, what: str) -> bool:
        if not self.present(path, value, what):
            return False
        if _is_number(value) and math.isfinite(value) and value > 0:
            return True
        self.add(path, f"must be a positive finite number ({what}), got {value!r}")
        return False

    def choice(self, path: str, value: Any, allowed: tuple[str, ...]) -> bool:
        if value in allowed and isinstance(value, str):
            return True
        self.add(path, f"must be one of {', '.join(repr(a) for a in allowed)}, got {value!r}")
        return False


def validate(train: GearTrain, *, n_channels: int | None = None) -> list[Problem]:
    """Every problem of the model at once, each naming its field path.

    Parameters
    ----------
    train : GearTrain
        The model, values as read.
    n_channels : int, optional
        Number of channels in the recording; when given, sensor and tach
        channels beyond it are reported.

    Returns
    -------
    list of Problem
        Errors (``severity="error"``, the model cannot be used) and warnings
        (``"warning"``: unequal planet spacing, planets that may touch, no sensor).
        Empty when the model is clean.

    Notes
    -----
    The planetary geometry checks follow the usual rules for a standard,
    unshifted stage: ``Z_r = Z_s + 2 Z_p``; equal spacing needs
    ``(Z_s + Z_r) / N_p`` to be a whole number; neighbouring planets clear when
    ``(Z_s + Z_p) sin(pi / N_p) > Z_p + 2`` (addendum of one module).

    References
    ----------
    .. [1] D. Lynwander, *Gear Drive Systems: Design and Application*,
       Marcel Dekker, 1983 (planetary assembly conditions).
    """
    c = _Checker()
    if not isinstance(train.name, str):
        c.add("name", f"must be text in quotes, got {train.name!r}")

    shaft_names: list[str] = []
    _check_duplicates(c, "shafts", train.shafts)
    for i, s in enumerate(train.shafts):
        if c.text(f"shafts[{i}].name", s.name):
            shaft_names.append(s.name)
    known = set(shaft_names)

    def shaft_ref(path: str, value: Any) -> bool:
        if not c.text(path, value):
            return False
        if value not in known:
            hint = f"one of {', '.join(repr(n) for n in dict.fromkeys(shaft_names))}" if shaft_names else "add it under [[shafts]]"
            c.add(path, f"refers to unknown shaft {value!r}; use {hint}")
            return False
        return True

    # --- tach ---------------------------------------------------------------
    t = train.tach
    tach_shaft_ok = False
    if t.shaft is None or t.shaft == "":
        c.add("tach.shaft", "is missing; add a [tach] table with shaft = <name of the shaft the tach watches>")
    else:
        tach_shaft_ok = shaft_ref("tach.shaft", t.shaft)
    tach_channel_ok = False
    if t.channel is not None:
        tach_channel_ok = c.channel("tach.channel", t.channel)
        if tach_channel_ok and n_channels is not None and t.channel >= n_channels:
            c.add("tach.channel", f"is {t.channel} but the recording has only {n_channels} channel(s) "
                                  f"(0 to {n_channels - 1}); pick an existing channel")
    if t.nominal_rpm is not None:
        c.positive_number("tach.nominal_rpm", t.nominal_rpm, "rpm")
    if t.channel is None and t.nominal_rpm is None:
        c.add("tach", "gives neither channel nor nominal_rpm; add channel = <tach channel> "
                      "or nominal_rpm = <shaft speed> when there is no tach")
    if not (_is_int(t.pulses_per_rev) and t.pulses_per_rev >= 1):
        c.add("tach.pulses_per_rev", f"must be a whole number of pulses per revolution of at least 1, got {t.pulses_per_rev!r}")
    c.choice("tach.edge", t.edge, EDGES)

    # --- sensors ------------------------------------------------------------
    if not train.sensors:
        c.add("sensors", "the model has no [[sensors]]; add one per accelerometer channel before analysing a recording", "warning")
    _check_duplicates(c, "sensors", train.sensors)
    for i, s in enumerate(train.sensors):
        p = f"sensors[{i}]"
        c.text(f"{p}.name", s.name)
        if c.channel(f"{p}.channel", s.channel):
            if n_channels is not None and s.channel >= n_channels:
                c.add(f"{p}.channel", f"is {s.channel} but the recording has only {n_channels} channel(s) "
                                      f"(0 to {n_channels - 1}); pick an existing channel")
            if tach_channel_ok and s.channel == t.channel:
                c.add(f"{p}.channel", f"is the tach channel ({t.channel}); a sensor needs its own accelerometer channel")
        c.positive_number(f"{p}.scale", s.scale, "physical units per file sample value")
        c.choice(f"{p}.units", s.units, UNITS)
        c.text(f"{p}.location", s.location, required=False)
        c.choice(f"{p}.direction", s.direction, DIRECTIONS)

    # --- meshes -------------------------------------------------------------
    edges: list[tuple[str, str, float, int, str, str]] = []  # (a, b, f_b/f_a, dir, label, path)
    touched: set[str] = set()   # shafts some mesh or stage refers to (even if it has other problems)
    incomplete = False          # some mesh or stage could not join the speed graph
    _check_duplicates(c, "meshes", train.meshes)
    for i, m in enumerate(train.meshes):
        p = f"meshes[{i}]"
        c.text(f"{p}.name", m.name)
        ok_a = shaft_ref(f"{p}.driver", m.driver)
        ok_b = shaft_ref(f"{p}.driven", m.driven)
        ok_za = c.positive_int(f"{p}.driver_teeth", m.driver_teeth, "teeth")
        ok_zb = c.positive_int(f"{p}.driven_teeth", m.driven_teeth, "teeth")
        touched.update(x for x, ok in ((m.driver, ok_a), (m.driven, ok_b)) if ok)
        incomplete |= not (ok_a and ok_b and ok_za and ok_zb)
        if ok_a and ok_b and m.driver == m.driven:
            c.add(f"{p}.driven", f"is the same shaft as the driver ({m.driver!r}); a mesh joins two different shafts")
        elif ok_a and ok_b and ok_za and ok_zb:
            edges.append((m.driver, m.driven, m.driver_teeth / m.driven_teeth, -1, f"mesh {m.name!r}", p))

    # --- planetary ----------------------------------------------------------
    _check_duplicates(c, "planetary", train.planetary)
    for i, g in enumerate(train.planetary):
        p = f"planetary[{i}]"
        c.text(f"{p}.name", g.name)
        ok_s = shaft_ref(f"{p}.sun_shaft", g.sun_shaft)
        ok_c = shaft_ref(f"{p}.carrier_shaft", g.carrier_shaft)
        ok_zs = c.positive_int(f"{p}.sun_teeth", g.sun_teeth, "teeth")
        ok_zp = c.positive_int(f"{p}.planet_teeth", g.planet_teeth, "teeth")
        ok_zr = c.positive_int(f"{p}.ring_teeth", g.ring_teeth, "teeth")
        ok_n = c.positive_int(f"{p}.planets", g.planets, "planets")
        if ok_zs and ok_zp and ok_zr and g.ring_teeth != g.sun_teeth + 2 * g.planet_teeth:
            c.add(f"{p}.ring_teeth",
                  f"must equal sun_teeth + 2 x planet_teeth = {g.sun_teeth + 2 * g.planet_teeth} for the gears "
                  f"to fit, got {g.ring_teeth}; check the three tooth counts")
        if ok_zs and ok_zr and ok_n and (g.sun_teeth + g.ring_teeth) % g.planets != 0:
            c.add(f"{p}.planets",
                  f"{g.planets} planets cannot be equally spaced: (sun_teeth + ring_teeth) / planets = "
                  f"{(g.sun_teeth + g.ring_teeth) / g.planets:g} is not a whole number; check the planet count",
                  "warning")
        if ok_zs and ok_zp and ok_n and g.planets > 1:
            if (g.sun_teeth + g.planet_teeth) * math.sin(math.pi / g.planets) <= g.planet_teeth + 2:
                c.add(f"{p}.planets",
                      f"{g.planets} planets of {g.planet_teeth} teeth around a {g.sun_teeth}-tooth sun would "
                      "touch each other; check the planet count and tooth counts", "warning")
        touched.update(x for x, ok in ((g.sun_shaft, ok_s), (g.carrier_shaft, ok_c)) if ok)
        incomplete |= not (ok_s and ok_c and ok_zs and ok_zr)
        if ok_s and ok_c and g.sun_shaft == g.carrier_shaft:
            c.add(f"{p}.carrier_shaft", f"is the same shaft as the sun ({g.sun_shaft!r}); sun and carrier turn on different shafts")
        elif ok_s and ok_c and ok_zs and ok_zr:
            edges.append((g.sun_shaft, g.carrier_shaft, g.sun_teeth / (g.sun_teeth + g.ring_teeth), +1,
                          f"planetary stage {g.name!r}", p))

    # --- bearings -----------------------------------------------------------
    _check_duplicates(c, "bearings", train.bearings)
    for i, b in enumerate(train.bearings):
        p = f"bearings[{i}]"
        c.text(f"{p}.name", b.name)
        shaft_ref(f"{p}.shaft", b.shaft)
        c.positive_int(f"{p}.rolling_elements", b.rolling_elements, "rolling elements")
        ok_d = c.positive_number(f"{p}.element_diameter_mm", b.element_diameter_mm, "mm")
        ok_D = c.positive_number(f"{p}.pitch_diameter_mm", b.pitch_diameter_mm, "mm")
        if ok_d and ok_D and b.element_diameter_mm >= b.pitch_diameter_mm:
            c.add(f"{p}.element_diameter_mm",
                  f"must be smaller than pitch_diameter_mm ({b.pitch_diameter_mm} mm), got {b.element_diameter_mm} mm; "
                  "check the two diameters")
        a = b.contact_angle_deg
        if not (_is_number(a) and math.isfinite(a) and 0 <= a <= 45):
            c.add(f"{p}.contact_angle_deg", f"must be an angle from 0 to 45 degrees, got {a!r}")

    # --- graph: connections and loop consistency ----------------------------
    _check_graph(c, shaft_names, edges, touched, incomplete, t.shaft if tach_shaft_ok else None)
    return c.problems


def _check_duplicates(c: _Checker, section: str, items: tuple) -> None:
    seen: dict[Any, int] = {}
    for i, x in enumerate(items):
        name = x.name
        if not isinstance(name, str) or not name:
            continue
        if name in seen:
            c.add(f"{section}[{i}].name",
                  f"{name!r} is already used by {section}[{seen[name]}]; give each entry its own name")
        else:
            seen[name] = i


def _check_graph(c: _Checker, shaft_names: list[str], edges: list, touched: set[str],
                 incomplete: bool, reference: str | None) -> None:
    """Report unconnected shafts and loops whose speed ratios disagree.

    Connections are added in file order (meshes, then planetary stages); the
    first one that joins two shafts already linked "closes the loop" and is the
    one named.  ``incomplete`` (some mesh or stage has bad fields) suppresses
    the reachability report, which would only repeat those problems.
    """
    if not shaft_names:
        c.add("shafts", "the model has no shafts; add at least one [[shafts]] block")
        return
    index = {n: i for i, n in enumerate(shaft_names)}
    if len(shaft_names) > 1:
        for n in shaft_names:
            if n not in touched:
                c.add(f"shafts[{index[n]}].name",
                      f"shaft {n!r} is connected to nothing; add a mesh or planetary stage that uses it, or remove it")
    # group[n] = name of n's group; rate/sense of n relative to its group's first shaft
    group = {n: n for n in shaft_names}
    rate = {n: 1.0 for n in shaft_names}
    sense = {n: 1 for n in shaft_names}
    members = {n: [n] for n in shaft_names}
    for a, b, ratio, direction, label, path in edges:
        r_b, s_b = rate[a] * ratio, sense[a] * direction   # what the connection implies for b
        if group[a] == group[b]:
            if not math.isclose(rate[b], r_b, rel_tol=1e-9):
                c.add(path, f"the {label} closes a loop that gives shaft {b!r} two different speeds: "
                            f"{ratio:.6g} times shaft {a!r} through this connection but {rate[b] / rate[a]:.6g} "
                            "through the others; check the tooth counts or remove the extra connection")
            elif sense[b] != s_b:
                c.add(path, f"the {label} closes a loop that makes shaft {b!r} turn both ways at once "
                            "(such a train would lock); check the connections")
            continue
        # merge b's group into a's, rescaling it so that b gets r_b, s_b
        k, flip, old = r_b / rate[b], s_b * sense[b], group[b]
        for n in members.pop(old):
            group[n] = group[a]
            rate[n] *= k
            sense[n] *= flip
            members[group[a]].append(n)
    if incomplete:
        return
    start = reference if reference is not None else shaft_names[0]
    for n in shaft_names:
        if group[n] != group[start] and n in touched:
            c.add(f"shafts[{index[n]}].name",
                  f"shaft {n!r} is not connected to shaft {start!r}, so its speed is unknown; "
                  "add the mesh or planetary stage that links them")


def model_warnings(train: GearTrain, *, n_channels: int | None = None) -> list[Problem]:
    """The problems of severity ``"warning"`` (the model is usable; the user should look)."""
    return [p for p in validate(train, n_channels=n_channels) if p.severity == "warning"]


def model_errors(train: GearTrain, *, n_channels: int | None = None) -> list[Problem]:
    """The problems of severity ``"error"`` (the model cannot be used as it is)."""
    return [p for p in validate(train, n_channels=n_channels) if p.severity == "error"]
