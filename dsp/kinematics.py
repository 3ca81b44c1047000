"""Gear-train kinematics: shaft rates and every characteristic frequency.

Turns a :class:`dsp.model.GearTrain` and one reference speed into shaft rates,
gear-mesh frequencies (GMF), hunting-tooth and assembly-phase frequencies,
planetary-stage frequencies and rolling-element bearing defect frequencies,
collected in one :class:`FrequencyTable`.

Orders are multiples of the reference shaft's rate.  Rates are positive
magnitudes; the sense of rotation is given separately by
:func:`shaft_directions` (+1 same sense as the reference shaft, -1 opposite).
Only light imports here (no scipy): the ``frequencies`` command must start fast.
"""

from __future__ import annotations

import math
import numbers
from collections import deque
from dataclasses import dataclass
from typing import Any, Iterable

from .errors import AnalysisError, ModelError, Problem
from .model import GearTrain, validate

_KINEMATIC_SECTIONS = ("shafts", "meshes", "planetary", "bearings")


# ---------------------------------------------------------------------------
# Result types
# ---------------------------------------------------------------------------


@dataclass(frozen=True)
class GearOnShaft:
    """A toothed member turning with a shaft, for TSA tooth ticks.

    ``teeth`` is the number of mesh cycles per revolution of the shaft: the
    tooth count of a gear, or for a planet carrier the ring tooth count
    (relative to the carrier, the fixed ring passes ``Z_r`` teeth per carrier
    revolution, so the mesh repeats ``Z_r`` times per carrier turn).
    ``role`` is ``"driver"``, ``"driven"``, ``"sun"`` or ``"ring"``.
    """

    label: str
    teeth: int
    mesh: str
    role: str = "driver"


@dataclass(frozen=True)
class FrequencyRow:
    """One characteristic frequency.

    ``owner_kind`` is ``"shaft"``, ``"mesh"``, ``"gear"``, ``"planetary"`` or
    ``"bearing"``; ``owner`` is that element's name; ``kind`` says what the
    frequency is (``"shaft rate"``, ``"gmf"``, ``"hunting tooth"``,
    ``"assembly phase"``, ``"carrier"``, ``"planet spin"``, ``"planet pass"``,
    ``"sun fault"``, ``"planet fault"``, ``"ring fault"``, ``"bpfo"``,
    ``"bpfi"``, ``"bsf"``, ``"ftf"``); ``order`` is ``hz`` divided by the
    reference shaft rate; ``harmonic`` is the multiple of the base frequency.
    """

    label: str
    hz: float
    order: float
    owner_kind: str
    owner: str
    kind: str
    harmonic: int = 1


@dataclass(frozen=True)
class ShaftRate:
    """Rate of one shaft: ``hz``, ``rpm``, ``order`` (vs the reference shaft), sense of rotation."""

    name: str
    hz: float
    rpm: float
    order: float
    direction: int = 1


@dataclass(frozen=True)
class HuntingTooth:
    """Hunting-tooth facts of a gear pair (see :func:`hunting_tooth`)."""

    assembly_phases: int
    hunting_tooth_hz: float
    assembly_phase_hz: float
    hunting: bool


@dataclass(frozen=True)
class MeshFrequencies:
    """Frequencies of a parallel-axis gear pair."""

    name: str
    driver: str
    driven: str
    driver_teeth: int
    driven_teeth: int
    gmf_hz: float
    gmf_order: float
    hunting_tooth_hz: float
    assembly_phases: int
    assembly_phase_hz: float
    driver_hz: float = math.nan
    driven_hz: float = math.nan


@dataclass(frozen=True)
class PlanetaryFrequencies:
    """Frequencies of a planetary stage with the ring fixed (sun in, carrier out).

    ``planet_spin_hz`` is the planet rate relative to the carrier;
    ``planet_abs_hz`` the absolute planet rate, signed (negative: opposite
    sense to the sun).  ``planet_fault_hz`` is for a fault on one flank
    (``f_m / Z_p``); ``planet_fault_two_flank_hz`` for a tooth fault that
    meets both sun and ring (``2 f_m / Z_p``).
    """

    name: str
    sun_hz: float
    carrier_hz: float
    planet_spin_hz: float
    planet_abs_hz: float
    mesh_hz: float
    planet_pass_hz: float
    sun_fault_hz: float
    planet_fault_hz: float
    ring_fault_hz: float
    planet_fault_two_flank_hz: float = math.nan
    sun_teeth: int = 0
    planet_teeth: int = 0
    ring_teeth: int = 0
    planets: int = 0
    sun_shaft: str = ""
    carrier_shaft: str = ""


@dataclass(frozen=True)
class BearingFrequencies:
    """Defect frequencies of a rolling-element bearing (outer ring fixed).

    ``bsf_hz`` is the ball (roller) spin frequency itself; a defect on a ball
    strikes both races and often shows at ``2 * bsf_hz``.
    """

    name: str
    shaft: str
    shaft_hz: float
    bpfo_hz: float
    bpfi_hz: float
    bsf_hz: float
    ftf_hz: float


# ---------------------------------------------------------------------------
# Formulas on plain numbers
# ---------------------------------------------------------------------------


def hunting_tooth(z1: int, z2: int, gmf_hz: float) -> HuntingTooth:
    """Hunting-tooth and assembly-phase frequencies of a gear pair.

    Parameters
    ----------
    z1, z2 : int
        Tooth counts of the two gears.
    gmf_hz : float
        Gear mesh frequency of the pair, Hz.

    Returns
    -------
    HuntingTooth
        ``assembly_phases = gcd(z1, z2)``; ``hunting_tooth_hz = gmf * N_A / (z1 z2)``
        (a given tooth pair meets again after ``lcm(z1, z2)`` mesh cycles);
        ``assembly_phase_hz = gmf / N_A``; ``hunting`` is True when ``N_A == 1``
        (every tooth meets every tooth).

    References
    ----------
    .. [1] W. C. Foiles, "Gear Frequencies Using the Euclidean Algorithm",
       Vibration Institute (Saudi Arabian Chapter).
    .. [2] R. B. Randall, *Vibration-based Condition Monitoring*, Wiley, 2011,
       chapter on gear signals.
    """
    n_a = math.gcd(int(z1), int(z2))
    return HuntingTooth(
        assembly_phases=n_a,
        hunting_tooth_hz=gmf_hz * n_a / (z1 * z2),
        assembly_phase_hz=gmf_hz / n_a,
        hunting=n_a == 1,
    )


def mesh_frequencies(driver_hz: float, driver_teeth: int, driven_teeth: int, *,
                     name: str = "", driver: str = "", driven: str = "",
                     reference_hz: float | None = None) -> MeshFrequencies:
    """Frequencies of an external parallel-axis gear pair.

    Parameters
    ----------
    driver_hz : float
        Rate of the driver shaft, Hz.
    driver_teeth, driven_teeth : int
        Tooth counts.
    name, driver, driven : str, optional
        Mesh and shaft names carried into the result.
    reference_hz : float, optional
        Reference shaft rate for ``gmf_order``; default ``driver_hz``.

    Returns
    -------
    MeshFrequencies
        ``driven_hz = driver_hz * Z_driver / Z_driven``,
        ``gmf_hz = driver_hz * Z_driver = driven_hz * Z_driven``, plus the
        hunting-tooth facts of :func:`hunting_tooth`.

    References
    ----------
    .. [1] R. B. Randall, *Vibration-based Condition Monitoring*, Wiley, 2011,
       chapter on gear signals.
    """
    gmf = driver_hz * driver_teeth
    ht = hunting_tooth(driver_teeth, driven_teeth, gmf)
    ref = driver_hz if reference_hz is None else reference_hz
    return MeshFrequencies(
        name=name, driver=driver, driven=driven,
        driver_teeth=driver_teeth, driven_teeth=driven_teeth,
        gmf_hz=gmf, gmf_order=gmf / ref,
        hunting_tooth_hz=ht.hunting_tooth_hz, assembly_phases=ht.assembly_phases,
        assembly_phase_hz=ht.assembly_phase_hz,
        driver_hz=driver_hz, driven_hz=driver_hz * driver_teeth / driven_teeth,
    )


def planetary_frequencies(sun_hz: float, sun_teeth: int, planet_teeth: int, ring_teeth: int,
                          planets: int, *, name: str = "", sun_shaft: str = "",
                          carrier_shaft: str = "") -> PlanetaryFrequencies:
    """Frequencies of a planetary stage with a fixed ring, sun input, carrier output.

    Parameters
    ----------
    sun_hz : float
        Absolute sun rate, Hz.
    sun_teeth, planet_teeth, ring_teeth : int
        Tooth counts ``Z_s, Z_p, Z_r``.
    planets : int
        Number of planets ``N_p``.

    Returns
    -------
    PlanetaryFrequencies

    Notes
    -----
    Willis relation with the ring fixed: ``f_c = f_s Z_s / (Z_s + Z_r)``.
    Mesh frequency ``f_m = Z_r f_c = Z_s (f_s - f_c)``; planet spin relative
    to the carrier ``f_m / Z_p``, absolute ``f_c - f_m / Z_p``; planet pass
    ``N_p f_c``; local faults: sun ``N_p f_m / Z_s``, planet ``f_m / Z_p``
    (one flank) or ``2 f_m / Z_p`` (both), ring ``N_p f_m / Z_r``.

    References
    ----------
    .. [1] Z. Feng and M. J. Zuo, "Vibration signal models for fault diagnosis
       of planetary gearboxes", J. Sound Vib. 331(22), 4919-4939, 2012.
    .. [2] P. D. McFadden and J. D. Smith, "An explanation for the asymmetry of
       the modulation sidebands about the tooth meshing frequency in
       epicyclic gear vibration", Proc. IMechE C 199, 65-70, 1985.
    """
    carrier = sun_hz * sun_teeth / (sun_teeth + ring_teeth)
    f_m = ring_teeth * carrier
    spin = f_m / planet_teeth
    return PlanetaryFrequencies(
        name=name, sun_hz=sun_hz, carrier_hz=carrier, planet_spin_hz=spin,
        planet_abs_hz=carrier - spin, mesh_hz=f_m, planet_pass_hz=planets * carrier,
        sun_fault_hz=planets * f_m / sun_teeth, planet_fault_hz=spin,
        ring_fault_hz=planets * f_m / ring_teeth, planet_fault_two_flank_hz=2.0 * spin,
        sun_teeth=sun_teeth, planet_teeth=planet_teeth, ring_teeth=ring_teeth,
        planets=planets, sun_shaft=sun_shaft, carrier_shaft=carrier_shaft,
    )


def bearing_frequencies(shaft_hz: float, n: int, d_mm: float, D_mm: float,  # noqa: N803
                        contact_angle_deg: float = 0.0, *, name: str = "",
                        shaft: str = "") -> BearingFrequencies:
    """Rolling-element bearing defect frequencies, outer ring fixed.

    Parameters
    ----------
    shaft_hz : float
        Inner-ring rate relative to the outer ring, Hz.
    n : int
        Number of rolling elements.
    d_mm, D_mm : float
        Rolling-element diameter and pitch diameter, mm (any common unit works).
    contact_angle_deg : float
        Contact angle, degrees.

    Returns
    -------
    BearingFrequencies
        With ``r = (d/D) cos(phi)``: ``BPFO = n f/2 (1 - r)``,
        ``BPFI = n f/2 (1 + r)``, ``FTF = f/2 (1 - r)``,
        ``BSF = D/(2d) f (1 - r^2)``.  Real bearings slip, so observed lines sit
        about 1-2 % away from these.

    References
    ----------
    .. [1] R. B. Randall and J. Antoni, "Rolling element bearing
       diagnostics - A tutorial", Mech. Syst. Signal Process. 25(2), 485-520, 2011.
    """
    r = d_mm / D_mm * math.cos(math.radians(contact_angle_deg))
    return BearingFrequencies(
        name=name, shaft=shaft, shaft_hz=shaft_hz,
        bpfo_hz=n * shaft_hz / 2.0 * (1.0 - r),
        bpfi_hz=n * shaft_hz / 2.0 * (1.0 + r),
        bsf_hz=D_mm / (2.0 * d_mm) * shaft_hz * (1.0 - r * r),
        ftf_hz=shaft_hz / 2.0 * (1.0 - r),
    )


# ---------------------------------------------------------------------------
# The train as a graph of shafts
# ---------------------------------------------------------------------------


def _check_kinematics(train: GearTrain) -> None:
    problems = [p for p in validate(train)
                if p.severity == "error" and p.field.split("[")[0].split(".")[0] in _KINEMATIC_SECTIONS]
    if problems:
        raise ModelError(problems)


def _edges(train: GearTrain) -> Iterable[tuple[str, str, float, int]]:
    """(shaft a, shaft b, rate_b / rate_a, sense change) for every connection."""
    for m in train.meshes:
        yield m.driver, m.driven, m.driver_teeth / m.driven_teeth, -1   # external mesh reverses
    for g in train.planetary:
        yield g.sun_shaft, g.carrier_shaft, g.sun_teeth / (g.sun_teeth + g.ring_teeth), +1


def _walk(train: GearTrain, reference_shaft: str) -> tuple[dict[str, float], dict[str, int]]:
    _check_kinematics(train)
    names = train.shaft_names()
    if reference_shaft not in names:
        raise ModelError([Problem(
            "", f"unknown reference shaft {reference_shaft!r}; choose one of {', '.join(repr(n) for n in names)}")])
    adjacency: dict[str, list[tuple[str, float, int]]] = {n: [] for n in names}
    for a, b, ratio, sense in _edges(train):
        adjacency[a].append((b, ratio, sense))
        adjacency[b].append((a, 1.0 / ratio, sense))
    order = {reference_shaft: 1.0}
    direction = {reference_shaft: 1}
    queue = deque([reference_shaft])
    while queue:
        a = queue.popleft()
        for b, ratio, sense in adjacency[a]:
            if b not in order:
                order[b] = order[a] * ratio
                direction[b] = direction[a] * sense
                queue.append(b)
    missing = [n for n in names if n not in order]
    if missing:
        raise ModelError([Problem(
            f"shafts[{names.index(n)}].name",
            f"shaft {n!r} is not connected to shaft {reference_shaft!r}, so its speed is unknown; "
            "add the mesh or planetary stage that links them") for n in missing])
    return {n: order[n] for n in names}, {n: direction[n] for n in names}


def shaft_orders(train: GearTrain, reference_shaft: str) -> dict[str, float]:
    """Each shaft's rate divided by the reference shaft's rate (positive magnitudes).

    Parameters
    ----------
    train : GearTrain
    reference_shaft : str
        Name of the shaft whose rate is order 1.

    Returns
    -------
    dict
        Shaft name -> order, in model order.  An external mesh multiplies the
        rate by ``Z_driver / Z_driven``; a planetary stage (ring fixed) gives the
        carrier ``Z_s / (Z_s + Z_r)`` of the sun rate.

    Raises
    ------
    ModelError
        If the shafts, meshes, planetary stages or bearings have errors, the
        reference shaft is unknown, or a shaft is not connected to it.

    References
    ----------
    .. [1] R. B. Randall, *Vibration-based Condition Monitoring*, Wiley, 2011.
    """
    return _walk(train, reference_shaft)[0]


def shaft_directions(train: GearTrain, reference_shaft: str) -> dict[str, int]:
    """Sense of rotation of each shaft relative to the reference: +1 same, -1 opposite.

    An external mesh reverses the sense; a planetary stage with a fixed ring
    keeps it (sun and carrier turn the same way).
    """
    return _walk(train, reference_shaft)[1]


def gears_on_shaft(train: GearTrain, shaft: str) -> list[GearOnShaft]:
    """The toothed members turning with ``shaft``, for TSA tooth ticks.

    Mesh gears give their tooth count.  A planetary sun shaft gives the sun;
    a carrier shaft gives the ring tooth count (mesh cycles per carrier
    revolution, see :class:`GearOnShaft`).
    """
    if shaft not in train.shaft_names():
        raise ModelError([Problem(
            "", f"unknown shaft {shaft!r}; choose one of {', '.join(repr(n) for n in train.shaft_names())}")])
    out: list[GearOnShaft] = []
    for m in train.meshes:
        if m.driver == shaft:
            out.append(GearOnShaft(f"{m.name} driver ({m.driver_teeth}T)", m.driver_teeth, m.name, "driver"))
        if m.driven == shaft:
            out.append(GearOnShaft(f"{m.name} driven ({m.driven_teeth}T)", m.driven_teeth, m.name, "driven"))
    for g in train.planetary:
        if g.sun_shaft == shaft:
            out.append(GearOnShaft(f"{g.name} sun ({g.sun_teeth}T)", g.sun_teeth, g.name, "sun"))
        if g.carrier_shaft == shaft:
            out.append(GearOnShaft(f"{g.name} ring mesh per carrier rev ({g.ring_teeth}T)",
                                   g.ring_teeth, g.name, "ring"))
    return out


# ---------------------------------------------------------------------------
# The table
# ---------------------------------------------------------------------------


@dataclass(frozen=True)
class FrequencyTable:
    """Every characteristic frequency of a train at one speed.

    Build it with :func:`frequency_table`.  ``rows`` holds the fundamental
    (``harmonic == 1``) of each frequency; :meth:`harmonics` gives families
    for overlays.
    """

    reference_shaft: str
    reference_hz: float
    rows: tuple[FrequencyRow, ...]
    shafts: tuple[ShaftRate, ...]
    meshes: tuple[MeshFrequencies, ...]
    planetary: tuple[PlanetaryFrequencies, ...]
    bearings: tuple[BearingFrequencies, ...]

    @property
    def reference_rpm(self) -> float:
        return self.reference_hz * 60.0

    def shaft_hz(self, name: str) -> float:
        """Rate of shaft ``name``, Hz."""
        for s in self.shafts:
            if s.name == name:
                return s.hz
        raise AnalysisError(f"unknown shaft {name!r}; choose one of {', '.join(s.name for s in self.shafts)}")

    def select(self, *, owner_kind: str | None = None, owner: str | None = None,
               kind: str | None = None) -> tuple[FrequencyRow, ...]:
        """Rows matching every criterion given."""
        return tuple(r for r in self.rows
                     if (owner_kind is None or r.owner_kind == owner_kind)
                     and (owner is None or r.owner == owner)
                     and (kind is None or r.kind == kind))

    @staticmethod
    def harmonics(row: FrequencyRow, n_harmonics: int) -> tuple[FrequencyRow, ...]:
        """Harmonics 1..``n_harmonics`` of ``row`` (labels get a ``2x`` style prefix)."""
        if not (isinstance(n_harmonics, int) and n_harmonics >= 1):
            raise AnalysisError(f"n_harmonics must be a whole number of at least 1, got {n_harmonics!r}")
        return tuple(
            FrequencyRow(row.label if h == 1 else f"{h}x {row.label}", row.hz * h, row.order * h,
                         row.owner_kind, row.owner, row.kind, h)
            for h in range(1, n_harmonics + 1))

    def families(self, n_harmonics: int, **criteria: Any) -> tuple[FrequencyRow, ...]:
        """Harmonics 1..``n_harmonics`` of every row matching ``criteria`` (see :meth:`select`)."""
        return tuple(x for r in self.select(**criteria) for x in self.harmonics(r, n_harmonics))

    def sidebands(self, mesh: str, shaft: str, *, harmonic: int = 1,
                  n_orders: int = 3) -> tuple[tuple[int, float], ...]:
        """Sideband positions ``harmonic * GMF + k * f_shaft`` for k = -n_orders..n_orders.

        ``mesh`` names a parallel mesh or a planetary stage (its mesh frequency).
        """
        carrier = None
        for m in self.meshes:
            if m.name == mesh:
                carrier = m.gmf_hz
        for g in self.planetary:
            if g.name == mesh:
                carrier = g.mesh_hz
        if carrier is None:
            raise AnalysisError(f"unknown mesh {mesh!r}; choose one of "
                                f"{', '.join([m.name for m in self.meshes] + [g.name for g in self.planetary])}")
        f = self.shaft_hz(shaft)
        return tuple((k, harmonic * carrier + k * f) for k in range(-n_orders, n_orders + 1))

    def to_json_dict(self) -> dict[str, Any]:
        """The ``shafts``, ``meshes``, ``planetary`` and ``bearings`` keys of the JSON output."""
        return {
            "reference_shaft": self.reference_shaft,
            "reference_hz": self.reference_hz,
            "reference_rpm": self.reference_rpm,
            "shafts": [{"name": s.name, "mean_hz": s.hz, "rpm": s.rpm, "order": s.order,
                        "direction": s.direction} for s in self.shafts],
            "meshes": [{"name": m.name, "driver": m.driver, "driven": m.driven,
                        "driver_teeth": m.driver_teeth, "driven_teeth": m.driven_teeth,
                        "gmf_hz": m.gmf_hz, "gmf_order": m.gmf_order,
                        "hunting_tooth_hz": m.hunting_tooth_hz, "assembly_phases": m.assembly_phases,
                        "assembly_phase_hz": m.assembly_phase_hz} for m in self.meshes],
            "planetary": [{"name": g.name, "sun_shaft": g.sun_shaft, "carrier_shaft": g.carrier_shaft,
                           "sun_hz": g.sun_hz, "carrier_hz": g.carrier_hz,
                           "planet_spin_hz": g.planet_spin_hz, "planet_abs_hz": g.planet_abs_hz,
                           "mesh_hz": g.mesh_hz, "planet_pass_hz": g.planet_pass_hz,
                           "sun_fault_hz": g.sun_fault_hz, "planet_fault_hz": g.planet_fault_hz,
                           "planet_fault_two_flank_hz": g.planet_fault_two_flank_hz,
                           "ring_fault_hz": g.ring_fault_hz} for g in self.planetary],
            "bearings": [{"name": b.name, "shaft": b.shaft, "shaft_hz": b.shaft_hz,
                          "bpfo_hz": b.bpfo_hz, "bpfi_hz": b.bpfi_hz, "bsf_hz": b.bsf_hz,
                          "ftf_hz": b.ftf_hz} for b in self.bearings],
        }


def frequency_table(train: GearTrain, reference_hz: float,
                    reference_shaft: str | None = None) -> FrequencyTable:
    """Every characteristic frequency of ``train`` with ``reference_shaft`` at ``reference_hz``.

    Parameters
    ----------
    train : GearTrain
    reference_hz : float
        Rate of the reference shaft, Hz (rpm / 60).
    reference_shaft : str, optional
        Default: the shaft the tach watches (``train.tach.shaft``).

    Returns
    -------
    FrequencyTable
        Shaft rates; per mesh GMF, hunting tooth and (when the pair has more
        than one assembly phase) assembly-phase frequency; per planetary stage
        carrier, planet spin, mesh, planet pass and local-fault frequencies;
        per bearing BPFO, BPFI, BSF and FTF.  Orders are relative to the
        reference shaft.

    Raises
    ------
    AnalysisError
        If ``reference_hz`` is not a positive finite number.
    ModelError
        If the kinematic part of the model has errors or the shaft is unknown.

    References
    ----------
    .. [1] R. B. Randall, *Vibration-based Condition Monitoring*, Wiley, 2011.
    .. [2] R. B. Randall and J. Antoni, "Rolling element bearing
       diagnostics - A tutorial", Mech. Syst. Signal Process. 25(2), 485-520, 2011.
    .. [3] Z. Feng and M. J. Zuo, J. Sound Vib. 331(22), 4919-4939, 2012.
    """
    if isinstance(reference_hz, bool) or not isinstance(reference_hz, numbers.Real) \
            or not math.isfinite(reference_hz) or reference_hz <= 0:
        raise AnalysisError(f"the reference speed must be a positive finite number of Hz, got {reference_hz!r}")
    reference_hz = float(reference_hz)
    if reference_shaft is None:
        reference_shaft = train.tach.shaft
        if not reference_shaft:
            raise ModelError([Problem("tach.shaft", "is missing; name the shaft the tach watches, "
                                                    "or give the reference shaft explicitly")])
    orders, senses = _walk(train, reference_shaft)
    hz = {n: o * reference_hz for n, o in orders.items()}
    rows: list[FrequencyRow] = []

    def row(label: str, f: float, owner_kind: str, owner: str, kind: str) -> None:
        rows.append(FrequencyRow(label, f, f / reference_hz, owner_kind, owner, kind, 1))

    shafts = tuple(ShaftRate(n, hz[n], hz[n] * 60.0, orders[n], senses[n]) for n in orders)
    for s in shafts:
        row(f"{s.name} shaft", s.hz, "shaft", s.name, "shaft rate")

    meshes = []
    for m in train.meshes:
        mf = mesh_frequencies(hz[m.driver], m.driver_teeth, m.driven_teeth, name=m.name,
                              driver=m.driver, driven=m.driven, reference_hz=reference_hz)
        meshes.append(mf)
        row(f"{m.name} GMF", mf.gmf_hz, "mesh", m.name, "gmf")
        row(f"{m.name} hunting tooth", mf.hunting_tooth_hz, "mesh", m.name, "hunting tooth")
        if mf.assembly_phases > 1:
            row(f"{m.name} assembly phase", mf.assembly_phase_hz, "mesh", m.name, "assembly phase")

    planetary = []
    for g in train.planetary:
        pf = planetary_frequencies(hz[g.sun_shaft], g.sun_teeth, g.planet_teeth, g.ring_teeth, g.planets,
                                   name=g.name, sun_shaft=g.sun_shaft, carrier_shaft=g.carrier_shaft)
        planetary.append(pf)
        row(f"{g.name} carrier", pf.carrier_hz, "planetary", g.name, "carrier")
        row(f"{g.name} mesh", pf.mesh_hz, "planetary", g.name, "gmf")
        row(f"{g.name} planet spin", pf.planet_spin_hz, "planetary", g.name, "planet spin")
        row(f"{g.name} planet pass", pf.planet_pass_hz, "planetary", g.name, "planet pass")
        row(f"{g.name} sun fault", pf.sun_fault_hz, "planetary", g.name, "sun fault")
        row(f"{g.name} planet fault", pf.planet_fault_hz, "planetary", g.name, "planet fault")
        row(f"{g.name} ring fault", pf.ring_fault_hz, "planetary", g.name, "ring fault")

    bearings = []
    for b in train.bearings:
        bf = bearing_frequencies(hz[b.shaft], b.rolling_elements, b.element_diameter_mm,
                                 b.pitch_diameter_mm, b.contact_angle_deg, name=b.name, shaft=b.shaft)
        bearings.append(bf)
        for kind, f in (("bpfo", bf.bpfo_hz), ("bpfi", bf.bpfi_hz), ("bsf", bf.bsf_hz), ("ftf", bf.ftf_hz)):
            row(f"{b.name} {kind.upper()}", f, "bearing", b.name, kind)

    return FrequencyTable(reference_shaft, reference_hz, tuple(rows), shafts, tuple(meshes),
                          tuple(planetary), tuple(bearings))
