"""Gear-train model: dataclasses, TOML load/save, validation.

The model file is TOML with the keys documented in DEVELOPERS.md ("The model
file").  Dataclasses are frozen; edit with :func:`dataclasses.replace`.
Field values are kept exactly as read (a tooth count typed as ``19.5`` stays
``19.5``) so that :func:`validate` can name the field that is wrong.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, fields, asdict
from pathlib import Path
from typing import Any

try:  # Python 3.11+
    import tomllib
except ModuleNotFoundError:  # pragma: no cover - Python 3.10
    import tomli as tomllib

from .errors import GearbenchError, ModelError, Problem

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
