"""Severity guidance: evaluation zones of broadband casing velocity (ISO 20816-3).

ISO 20816-3:2022 (which replaced ISO 10816-3) sorts the broadband RMS velocity
measured on the bearing housings of industrial machines above 15 kW into four
evaluation zones, A to D, with boundaries that depend on the machine group and on
whether the foundation is rigid or flexible.

**The boundary values below are quoted FROM MEMORY** (ISO 10816-3:2009 Annex A,
believed unchanged in ISO 20816-3; project domain reference, section 9).  They
have NOT been confirmed against the purchased standard, and web charts disagree
with one another.  Every result carries that note (``ZoneResult.source``) and the
:data:`CAUTION` text, and the zone is guidance for a qualified analyst only.

Convention at a boundary: **a value equal to a boundary belongs to the upper
(worse) zone** (zone B starts at the A/B value itself, etc.).  The standard's
tables give the boundary values alone; we choose the conservative side so that a
reading sitting exactly on a limit is never reported as the better zone.

Gear units have their own part (ISO 20816-9:2020) and broadband casing velocity
says nothing specific about gear-mesh or bearing-defect components: the zone is
context, not a diagnosis of the gearbox.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

from .errors import AnalysisError

GROUPS = ("group 1", "group 2")
FOUNDATIONS = ("rigid", "flexible")
ZONES = ("A", "B", "C", "D")

#: Zone boundaries A/B, B/C, C/D in mm/s RMS, per (machine group, foundation).
#: FROM MEMORY: ISO 10816-3:2009 Annex A as quoted in the project domain
#: reference, section 9; believed unchanged in ISO 20816-3:2022; NOT confirmed.
ZONE_BOUNDARIES_MM_S: dict[tuple[str, str], tuple[float, float, float]] = {
    ("group 1", "rigid"): (2.3, 4.5, 7.1),
    ("group 1", "flexible"): (3.5, 7.1, 11.0),
    ("group 2", "rigid"): (1.4, 2.8, 4.5),
    ("group 2", "flexible"): (2.3, 4.5, 7.1),
}

#: What each machine group covers (from memory, domain reference section 9).
GROUP_MEANINGS = {
    "group 1": "large machines, 300 kW to 50 MW, or shaft height 315 mm and above",
    "group 2": "medium machines, 15 kW to 300 kW, or shaft height 160 mm to 315 mm",
}

#: Zone meanings (from memory, domain reference section 9).
ZONE_MEANINGS = {
    "A": "the vibration of newly commissioned machines normally falls in this zone",
    "B": "acceptable for unrestricted long-term operation",
    "C": "not normally suitable for long-term continuous operation; plan remedial action",
    "D": "vibration severe enough to cause damage to the machine",
}

SOURCE = (
    "ISO 20816-3:2022 / ISO 10816-3:2009 Annex A, broadband RMS velocity on bearing housings; "
    "zone boundaries FROM MEMORY, not confirmed against the purchased standard"
)

#: Shown wherever a zone is shown (JSON, text output, the window).
CAUTION = (
    "Zone boundaries quoted from ISO 20816-3 / ISO 10816-3 are guidance values for broadband casing "
    "vibration of typical machines. They are not acceptance criteria unless agreed between supplier and "
    "purchaser, they do not address gear-mesh or bearing-defect components, and machine-specific baselines, "
    "trends, and manufacturer limits take precedence. Values shown are reproduced for orientation only; "
    "consult the current edition of the standard. The boundary values used here are quoted from memory and "
    "have not been checked against the standard. This is guidance for a qualified analyst; local codes, the "
    "manufacturer's limits and licensed practice take precedence."
)

#: Below this speed the standard's measurement band starts at 2 Hz instead of 10 Hz
#: (from memory, domain reference section 9).
LOW_SPEED_RPM = 600.0


def _check_choice(name: str, value: str, allowed: tuple[str, ...]) -> str:
    v = str(value).strip().lower()
    if v not in allowed:
        raise AnalysisError(
            f"Invalid value for {name!r}: allowed {', '.join(repr(a) for a in allowed)}, got {value!r}"
        )
    return v


@dataclass(frozen=True)
class ZoneResult:
    """The evaluation zone of one broadband velocity value.

    Attributes
    ----------
    zone : str
        ``"A"``, ``"B"``, ``"C"`` or ``"D"``.
    velocity_rms_mm_s : float
        The value classified, mm/s RMS.
    group, foundation : str
        Machine group and foundation used.
    boundaries_mm_s : tuple of float
        A/B, B/C, C/D boundaries in mm/s RMS (from memory, see :data:`SOURCE`).
    meaning : str
        What the zone means.
    source : str
        Where the boundaries come from and how sure they are.
    caution : str
        :data:`CAUTION`: show it wherever the zone is shown.
    band_hz : tuple of float or None
        Band of the velocity value, when known.
    boundary_rule : str
        Which zone a value on a boundary belongs to.
    confirmed : bool
        False: the boundary values are quoted from memory.
    """

    zone: str
    velocity_rms_mm_s: float
    group: str
    foundation: str
    boundaries_mm_s: tuple[float, float, float]
    meaning: str
    source: str = SOURCE
    caution: str = CAUTION
    band_hz: tuple[float, float] | None = None
    boundary_rule: str = "a value equal to a boundary belongs to the upper (worse) zone"
    confirmed: bool = False
    zone_meanings: dict[str, str] = field(default_factory=lambda: dict(ZONE_MEANINGS))

    def to_json_dict(self) -> dict[str, Any]:
        """Plain JSON types: the ``severity`` object of ``gearbench analyze --json``."""
        return {
            "zone": self.zone,
            "velocity_rms_mm_s": self.velocity_rms_mm_s,
            "band_hz": list(self.band_hz) if self.band_hz is not None else None,
            "group": self.group,
            "foundation": self.foundation,
            "boundaries_mm_s": {"A/B": self.boundaries_mm_s[0], "B/C": self.boundaries_mm_s[1],
                                "C/D": self.boundaries_mm_s[2]},
            "meaning": self.meaning,
            "boundary_rule": self.boundary_rule,
            "source": self.source,
            "confirmed": self.confirmed,
            "caution": self.caution,
        }

    def summary(self) -> str:
        """One line: zone, value, group, foundation and the source note."""
        band = f" ({self.band_hz[0]:g}-{self.band_hz[1]:g} Hz)" if self.band_hz else ""
        b = self.boundaries_mm_s
        return (f"zone {self.zone}: {self.velocity_rms_mm_s:.2f} mm/s RMS{band}, {self.group}, "
                f"{self.foundation} foundation (A/B {b[0]:g}, B/C {b[1]:g}, C/D {b[2]:g} mm/s): {self.meaning}")


def zone_boundaries(group: str = "group 2", foundation: str = "rigid") -> tuple[float, float, float]:
    """A/B, B/C and C/D zone boundaries in mm/s RMS (from memory, see module notes)."""
    g = _check_choice("group", group, GROUPS)
    f = _check_choice("foundation", foundation, FOUNDATIONS)
    return ZONE_BOUNDARIES_MM_S[(g, f)]


def velocity_zone(velocity_rms_mm_s: float, *, group: str = "group 2", foundation: str = "rigid",
                  band_hz: tuple[float, float] | None = None) -> ZoneResult:
    """Evaluation zone of a broadband RMS velocity on a bearing housing.

    Parameters
    ----------
    velocity_rms_mm_s : float
        Broadband RMS velocity in mm/s (10-1000 Hz, or 2-1000 Hz below about
        600 rpm, see :func:`recommended_band_hz`).
    group : {"group 1", "group 2"}
        Machine group: 1 = large (300 kW to 50 MW), 2 = medium (15 kW to 300 kW).
    foundation : {"rigid", "flexible"}
        Foundation class of the machine.
    band_hz : tuple of float, optional
        Band of the value, recorded in the result.

    Returns
    -------
    ZoneResult

    Raises
    ------
    AnalysisError
        For an unknown group or foundation, or a velocity that is negative or
        not finite.

    Notes
    -----
    Zone ``A`` when ``v < A/B``, ``B`` when ``A/B <= v < B/C``, ``C`` when
    ``B/C <= v < C/D``, ``D`` when ``v >= C/D``: a value on a boundary belongs
    to the upper zone.  The boundaries are quoted from memory (ISO 10816-3:2009
    Annex A) and are not confirmed.

    References
    ----------
    .. [1] ISO 20816-3:2022, "Mechanical vibration - Measurement and evaluation
       of machine vibration - Part 3: Industrial machinery with a power rating
       above 15 kW and operating speeds between 120 r/min and 30 000 r/min".
    .. [2] ISO 10816-3:2009, Annex A (zone boundary values; quoted from memory).
    """
    g = _check_choice("group", group, GROUPS)
    f = _check_choice("foundation", foundation, FOUNDATIONS)
    v = float(velocity_rms_mm_s)
    if not (math.isfinite(v) and v >= 0):
        raise AnalysisError(
            f"velocity_rms_mm_s={velocity_rms_mm_s!r} must be a finite value of at least 0 mm/s; "
            "check the velocity band and the sensor scale"
        )
    b = ZONE_BOUNDARIES_MM_S[(g, f)]
    zone = "A" if v < b[0] else "B" if v < b[1] else "C" if v < b[2] else "D"
    band = None if band_hz is None else (float(band_hz[0]), float(band_hz[1]))
    return ZoneResult(zone=zone, velocity_rms_mm_s=v, group=g, foundation=f, boundaries_mm_s=b,
                      meaning=ZONE_MEANINGS[zone], band_hz=band)


def recommended_band_hz(rpm: float) -> tuple[float, float]:
    """Measurement band for the broadband velocity: 2-1000 Hz below 600 rpm, else 10-1000 Hz.

    From memory (domain reference section 9, ISO 10816-3 / ISO 20816-3).
    """
    return (2.0, 1000.0) if float(rpm) < LOW_SPEED_RPM else (10.0, 1000.0)


def overall_velocity_rms(analysis, band_hz: tuple[float, float] = (10.0, 1000.0)) -> float:
    """Broadband RMS velocity (mm/s) of an analysis over a band.

    Parameters
    ----------
    analysis : dsp.analysis.Analysis
        Its acceleration ``spectrum`` (g or m/s2, full resolution) is integrated.
    band_hz : tuple of float
        Band in Hz; the upper edge is limited to the Nyquist frequency.

    Returns
    -------
    float
        ``sqrt(sum_k V_rms[k]^2 / ENBW_bins)`` over the band, mm/s, with
        ``V = A / (2 pi f)`` (lines below ``max(2, lo/2)`` Hz set to zero, as
        :func:`dsp.analysis.analyze` does).  Equal to
        ``analysis.overall["velocity_rms_mm_s"]`` when ``band_hz`` is the
        analysis's ``settings.velocity_band_hz``; that value is returned then.

    References
    ----------
    .. [1] G. Heinzel, A. Ruediger, R. Schilling, "Spectrum and spectral density
       estimation by the Discrete Fourier transform (DFT)", 2002 (band RMS from
       an amplitude spectrum with the window's ENBW).
    """
    from .spectrum import band_rms, velocity_spectrum

    lo, hi = (float(band_hz[0]), float(band_hz[1]))
    if not (math.isfinite(lo) and math.isfinite(hi) and 0 < lo < hi):
        raise AnalysisError(f"velocity band {lo:g} to {hi:g} Hz is not a band; give 0 < LO < HI in Hz")
    settings = getattr(analysis, "settings", None)
    given = getattr(settings, "velocity_band_hz", None)
    overall = getattr(analysis, "overall", None) or {}
    if given is not None and (float(given[0]), float(given[1])) == (lo, hi) and "velocity_rms_mm_s" in overall:
        return float(overall["velocity_rms_mm_s"])
    spec = analysis.spectrum
    units = spec.units if spec.units in ("g", "m/s2") else "g"
    nyq = 0.5 * float(spec.sample_rate_hz)
    if lo >= nyq:
        raise AnalysisError(f"velocity band starts at {lo:g} Hz, above the Nyquist frequency {nyq:g} Hz; "
                            "give a lower band")
    vel = velocity_spectrum(spec, units=units, cutoff_hz=max(2.0, 0.5 * lo))
    return float(band_rms(vel, lo, min(hi, nyq)))
