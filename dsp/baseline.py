"""Comparison of a recording with a healthy baseline recording of the same gearbox.

Gear condition indicators mean most as a change from the same gearbox's own
healthy state.  A driven machine that knocks once per revolution (a crusher, a
reciprocating compressor, a loose coupling) raises TSA kurtosis and FM4 on a
perfectly sound gearbox; only a baseline tells that apart from tooth damage.

Everything is compared in **orders of the reference shaft**, so a baseline taken
at another speed lines up: mesh harmonics and sideband families sit at the same
orders whatever the speed, and each shaft's TSA is in its own angle.

:func:`compare` gives a :class:`BaselineComparison`:

* an indicator table (overall RMS, crest factor, kurtosis, velocity RMS; per
  shaft TSA RMS, kurtosis, FM0, FM4, NA4*, M6A, M8A, ER) with baseline, now,
  change as a ratio and in dB, and a flag against :class:`Thresholds`;
* the mesh harmonics and sideband families (per mesh harmonic and per shaft
  spacing) measured in both order spectra, and those that grew, ranked by
  growth in dB;
* the baseline's order spectrum, TSA per shaft and envelope spectrum (in
  orders) resampled onto the current axes, for overlays;
* the current suspects re-ranked with the baseline (:func:`rerank_suspects`).

dB convention (``IndicatorChange.db_kind``): ``20 log10`` of the ratio for
amplitude-like quantities (RMS, velocity, crest factor, FM0, ER, line and
family amplitudes); ``10 log10`` of the ratio for the normalised moments
(kurtosis, FM4, NA4*, M6A, M8A), which are ratios of powers, not amplitudes.

References
----------
.. [1] H. J. Decker, R. F. Handschuh, J. J. Zakrajsek, "An enhancement to the
   NA4 gear vibration diagnostic parameter", NASA TM-106553, 1994 (NA4*: the
   current residual normalised by the variance of the gearbox in good
   condition; bibliographic details from memory).
.. [2] J. J. Zakrajsek, D. P. Townsend, H. J. Decker, "An analysis of gear fault
   detection methods as applied to pitting fatigue failure data",
   NASA TM-105950, 1993 (NA4).
.. [3] R. M. Stewart, ISVR report MHM/R/10/77, 1977 (FM0, FM4).
.. [4] R. B. Randall, *Vibration-based Condition Monitoring*, Wiley, 2011
   (trending against the machine's own baseline; sideband growth with wear).
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass
from typing import Any, Sequence

import numpy as np

from .errors import GearbenchError
from .plain import plain_json

G_N_M_S2 = 9.80665  # standard gravity (exact, BIPM SI Brochure)

ALSO_HIGH_EVIDENCE = "also high in the baseline: synchronous impacts from the driven machine?"


@dataclass(frozen=True)
class Thresholds:
    """When a change from the baseline is flagged.  All adjustable.

    Attributes
    ----------
    amplitude_ratio : float
        Amplitude-like indicators (overall RMS, velocity RMS, crest factor, TSA
        RMS, FM0, ER) are flagged ``"grown"`` at ``now / baseline >=`` this
        (2.0 = +6 dB).  Common practice, no source (a doubling of a level over
        the machine's own baseline is the usual first alert).
    moment_delta : float
        Kurtosis-type indicators (overall and TSA kurtosis, FM4, NA4*) are
        flagged at ``now >= baseline + moment_delta`` (1.0).  Common practice,
        no source (about 3 for a healthy gear, Stewart 1977; a rise of 1 is a
        clear departure from the baseline's own scatter).
    high_moment_ratio : float
        M6A and M8A (Martin 1989) are flagged at ``now / baseline >=`` this
        (3.0: the sixth and eighth moments of a TSA scatter far more than
        the fourth, 2x is reached between healthy records).  Common practice,
        no source.
    drop_ratio : float
        A ratio indicator at or below ``drop_ratio`` times the baseline (0.5 =
        -6 dB for amplitudes), or a kurtosis-type indicator ``moment_delta``
        below it, is flagged ``"dropped"``: a large fall is worth a look too
        (sensor moved, load changed).  Common practice, no source.
    growth_db : float
        A mesh harmonic or sideband family counts as grown at ``+growth_db``
        over the baseline (6 dB).  Common practice, no source.
    clear_db : float
        A grown line or family must also stand this many dB above the local
        floor of the current order spectrum (6 dB), so that noise moving at
        the floor is not called growth.  Common practice, no source (same
        value as :data:`dsp.sidebands.CLEAR_DB`).
    high_fm4 : float
        FM4 or NA4 at or above this in the baseline is "high in the baseline"
        (5.0, the lower end of the FM4 ramp in :mod:`dsp.suspects`; common
        practice, no source).
    relative_db : float
        A sideband family counts as grown only when it also grew at least this
        many dB more than the whole band around its carrier (3 dB): a family
        that grows with its band is a louder mesh (or a speed that moved the
        band onto a resonance) carrying the same run-out, not a change of the
        shaft that spaces it.  Common practice, no source.
    also_high_factor : float
        Score factor (0.5) of a localized-damage suspect whose FM4 or NA4 was
        already at or above ``high_fm4`` in the baseline and whose FM4 did not
        grow, and of a wear suspect whose pattern the baseline already scored
        at least half as high, with nothing grown.  Common practice, no source.
    growth_bonus : float
        Largest score added to a shaft suspect for growth since the baseline
        (0.25): to "localized tooth damage" in proportion to the FM4 rise
        (ramp from ``moment_delta`` to ``moment_delta + growth_span``), to
        "distributed wear or eccentricity" in proportion to the growth of ER
        (ramp 6 to 18 dB) or of the shaft's families against their bands
        (ramp ``relative_db`` to ``relative_db + 12`` dB).  Alone it cannot
        lift a suspect over the default alarm threshold 0.5.  Common practice,
        no source.
    growth_span : float
        Width of the FM4-rise ramp (4.0, the width of the FM4 ramp in
        :mod:`dsp.suspects`).
    n_sideband_orders : int
        Sidebands ``k = 1..n`` each side measured per family (3).
    """

    amplitude_ratio: float = 2.0
    moment_delta: float = 1.0
    high_moment_ratio: float = 3.0
    drop_ratio: float = 0.5
    growth_db: float = 6.0
    clear_db: float = 6.0
    high_fm4: float = 5.0
    relative_db: float = 3.0
    also_high_factor: float = 0.5
    growth_bonus: float = 0.25
    growth_span: float = 4.0
    n_sideband_orders: int = 3

    def __post_init__(self):
        for name in ("amplitude_ratio", "high_moment_ratio"):
            v = getattr(self, name)
            if not (isinstance(v, (int, float)) and math.isfinite(v) and v > 1.0):
                raise GearbenchError(f"threshold {name}={v!r} must be a ratio above 1; give for example 2.0")
        for name in ("moment_delta", "growth_db", "clear_db", "high_fm4", "growth_bonus", "relative_db"):
            v = getattr(self, name)
            if not (isinstance(v, (int, float)) and math.isfinite(v) and v >= 0):
                raise GearbenchError(f"threshold {name}={v!r} must be a number of at least 0")
        for name in ("drop_ratio", "also_high_factor"):
            v = getattr(self, name)
            if not (isinstance(v, (int, float)) and 0 <= v <= 1):
                raise GearbenchError(f"threshold {name}={v!r} must lie between 0 and 1")
        if not (isinstance(self.growth_span, (int, float)) and self.growth_span > 0):
            raise GearbenchError(f"threshold growth_span={self.growth_span!r} must be a positive number")
        if not (isinstance(self.n_sideband_orders, int) and self.n_sideband_orders >= 1):
            raise GearbenchError(f"n_sideband_orders={self.n_sideband_orders!r} must be a whole number of at least 1")


# indicator name -> (kind, db_kind, label)
#   kind "amplitude": ratio rule with amplitude_ratio; "moment": delta rule; "high_moment": ratio rule
INDICATORS_OVERALL = (
    ("rms", "amplitude", "20log10", "overall RMS"),
    ("crest_factor", "amplitude", "20log10", "crest factor"),
    ("kurtosis", "moment", "10log10", "kurtosis"),
    ("velocity_rms_mm_s", "amplitude", "20log10", "velocity RMS (mm/s)"),
)
INDICATORS_TSA = (
    ("rms", "amplitude", "20log10", "TSA RMS"),
    ("kurtosis", "moment", "10log10", "TSA kurtosis"),
    ("fm0", "amplitude", "20log10", "FM0"),
    ("fm4", "moment", "10log10", "FM4"),
    ("na4", "moment", "10log10", "NA4*"),
    ("m6a", "high_moment", "10log10", "M6A"),
    ("m8a", "high_moment", "10log10", "M8A"),
    ("er", "amplitude", "20log10", "ER"),
)


@dataclass(frozen=True)
class IndicatorChange:
    """One row of the indicator table.

    ``shaft`` is ``None`` for the overall indicators.  ``change_db`` is
    ``20 log10(ratio)`` or ``10 log10(ratio)`` as ``db_kind`` says.  ``flag`` is
    ``"grown"``, ``"dropped"``, ``"ok"`` or ``"n/a"`` (a value missing or not
    finite); ``rule`` says which threshold was applied.
    """

    name: str
    label: str
    shaft: str | None
    baseline: float
    now: float
    change_ratio: float
    change_db: float
    db_kind: str
    flag: str
    rule: str

    @property
    def grown(self) -> bool:
        return self.flag == "grown"


@dataclass(frozen=True)
class LineChange:
    """A mesh harmonic or a sideband family measured in both order spectra.

    ``kind`` is ``"mesh harmonic"`` or ``"sideband family"``.  Amplitudes are
    in the current sensor's units (peak); a family's level is the root sum of
    squares of its sidebands (``2 * n_sideband_orders`` lines, those that
    coincide with another shaft's family or a mesh harmonic left out).
    ``order`` is the carrier order (reference shaft); ``spacing_order`` the
    family's spacing (0 for a mesh harmonic).  ``clear_db`` is the current
    level over the local floor of the current order spectrum.
    ``relative_db`` is, for a family, its growth minus the growth of the band
    around its carrier (RMS of every line within ``(K + 1)`` of the widest
    spacing): a family that grows with its band (a louder mesh carrying the
    same run-out) stays near 0 dB, a family that grows against its band
    points at a change of the shaft that spaces it.  ``grown``: a mesh
    harmonic at ``+growth_db`` and ``clear_db`` above the floor; a family
    also needs ``relative_db`` against its band.
    """

    what: str
    kind: str
    mesh: str
    harmonic: int
    shaft: str | None
    order: float
    spacing_order: float
    baseline: float
    now: float
    change_db: float
    clear_db: float
    grown: bool
    n_lines: int = 1
    relative_db: float = float("nan")


@dataclass(frozen=True)
class BaselineComparison:
    """A recording compared with the baseline of the same gearbox.

    Attributes
    ----------
    baseline_path, baseline_sha256 : str
        The baseline recording file and its SHA-256.
    current_path, current_sha256 : str
    baseline_rpm, current_rpm : float
        Mean speed of the reference shaft in each recording.
    reference_shaft : str
        Shaft whose orders are the common abscissa.
    indicators : tuple of IndicatorChange
        The indicator table (overall first, then per shaft in model order).
    lines : tuple of LineChange
        Every mesh harmonic and sideband family measured in both spectra.
    grown : tuple of LineChange
        The lines that grew, ranked by growth in dB (largest first).
    order : ndarray
        Current order axis (reference shaft orders), read-only.
    baseline_order_amplitude : ndarray
        Baseline order spectrum on ``order`` (NaN beyond the baseline's range).
    tsa_angle_deg : dict of str to ndarray
        Current TSA angle axis per shaft.
    baseline_tsa : dict of str to ndarray
        Baseline TSA per shaft on ``tsa_angle_deg[shaft]``.
    baseline_tsa_signals : dict of str to dict of str to ndarray
        Per shaft, the baseline ``"average"``, ``"residual"`` and
        ``"difference"`` signals on ``tsa_angle_deg[shaft]``.
    envelope_order : ndarray
        Current envelope spectrum axis in orders of the reference shaft.
    envelope_now : ndarray
        Current squared-envelope spectrum amplitude on ``envelope_order``.
    baseline_envelope_amplitude : ndarray
        Baseline squared-envelope spectrum on ``envelope_order`` (NaN beyond
        its range).
    envelope_bands_hz : tuple of tuple of float
        (current band, baseline band): the envelope levels compare directly
        only when the bands agree.
    suspects : tuple
        The current suspects re-ranked with the baseline (see
        :func:`rerank_suspects`), :class:`dsp.suspects.Suspect` objects.
    notes : tuple of str
        Sentences about the comparison (different sensor, band, units, ...).
    thresholds : Thresholds
        The thresholds used.
    units : str
        Units of the amplitudes (the current sensor's).
    """

    baseline_path: str
    baseline_sha256: str
    current_path: str
    current_sha256: str
    baseline_rpm: float
    current_rpm: float
    reference_shaft: str
    indicators: tuple[IndicatorChange, ...]
    lines: tuple[LineChange, ...]
    grown: tuple[LineChange, ...]
    order: np.ndarray
    baseline_order_amplitude: np.ndarray
    tsa_angle_deg: dict[str, np.ndarray]
    baseline_tsa: dict[str, np.ndarray]
    baseline_tsa_signals: dict[str, dict[str, np.ndarray]]
    envelope_order: np.ndarray
    envelope_now: np.ndarray
    baseline_envelope_amplitude: np.ndarray
    envelope_bands_hz: tuple[tuple[float, float], tuple[float, float]]
    suspects: tuple[Any, ...]
    notes: tuple[str, ...]
    thresholds: Thresholds
    units: str = ""

    def indicator(self, name: str, shaft: str | None = None) -> IndicatorChange:
        """The row of ``name`` (and ``shaft``; None for the overall rows)."""
        for row in self.indicators:
            if row.name == name and row.shaft == shaft:
                return row
        raise GearbenchError(f"no indicator {name!r} for shaft {shaft!r} in the comparison; "
                             f"choose one of {sorted({r.name for r in self.indicators})}")

    def flagged(self) -> tuple[IndicatorChange, ...]:
        """Indicator rows flagged ``"grown"``."""
        return tuple(r for r in self.indicators if r.grown)

    def shafts_grown(self) -> tuple[str, ...]:
        """Shafts with a grown TSA indicator or a grown family that points at them (``relative_db``)."""
        seen: list[str] = []
        for r in self.indicators:
            if r.grown and r.shaft and r.shaft not in seen:
                seen.append(r.shaft)
        for g in self.grown:
            if (g.kind == "sideband family" and g.shaft and g.shaft not in seen
                    and g.relative_db >= self.thresholds.relative_db):
                seen.append(g.shaft)
        return tuple(seen)

    def to_json_dict(self) -> dict[str, Any]:
        """The ``baseline`` object of ``gearbench analyze --baseline BASE --json`` (no NaN)."""
        t = self.thresholds
        d = {
            "path": self.baseline_path,
            "sha256": self.baseline_sha256,
            "rpm": self.baseline_rpm,
            "current_rpm": self.current_rpm,
            "reference_shaft": self.reference_shaft,
            "compared_in": "orders of the reference shaft",
            "indicators": [
                {"name": r.name, "label": r.label, "shaft": r.shaft, "baseline": r.baseline, "now": r.now,
                 "change_ratio": r.change_ratio, "change_db": r.change_db, "db_kind": r.db_kind,
                 "flag": r.flag, "rule": r.rule}
                for r in self.indicators
            ],
            "grown": [
                {"what": g.what, "kind": g.kind, "mesh": g.mesh, "harmonic": g.harmonic, "shaft": g.shaft,
                 "order": g.order, "spacing_order": g.spacing_order, "baseline": g.baseline, "now": g.now,
                 "change_db": g.change_db, "clear_db": g.clear_db}
                for g in self.grown
            ],
            "shafts_grown": list(self.shafts_grown()),
            "envelope_bands_hz": {"now": list(self.envelope_bands_hz[0]),
                                  "baseline": list(self.envelope_bands_hz[1])},
            "thresholds": dataclasses.asdict(t),
            "units": self.units,
            "notes": list(self.notes),
        }
        return plain_json(d)

    def summary_lines(self) -> list[str]:
        """Readable text of the comparison (for ``gearbench analyze --baseline``)."""
        out = [f"Baseline {self.baseline_path} (sha256 {self.baseline_sha256[:12]}...), "
               f"{self.baseline_rpm:.1f} rpm against {self.current_rpm:.1f} rpm now; "
               f"compared in orders of shaft {self.reference_shaft}"]
        out.append(f"  {'indicator':<22}{'shaft':<14}{'baseline':>11}{'now':>11}{'ratio':>11}{'dB':>8}  flag")
        for r in self.indicators:
            out.append(f"  {r.label:<22}{(r.shaft or '-'):<14}{_fmt(r.baseline):>11}{_fmt(r.now):>11}"
                       f"{_fmt(r.change_ratio, '.3g'):>11}{_fmt(r.change_db, '+.1f'):>8}  {r.flag}")
        out.append("  (dB: 20 log10 of the ratio for amplitudes, RMS, crest factor, FM0, ER; "
                   "10 log10 for kurtosis, FM4, NA4*, M6A, M8A)")
        if self.grown:
            out.append(f"Grown since the baseline (+{self.thresholds.growth_db:g} dB or more, "
                       f"{self.thresholds.clear_db:g} dB clear of the floor), largest first:")
            for g in self.grown:
                out.append(f"  {g.what} at order {g.order:.3f}: {_fmt(g.baseline)} -> {_fmt(g.now)} {self.units} "
                           f"({g.change_db:+.1f} dB)")
        else:
            out.append("Grown since the baseline: no mesh harmonic or sideband family.")
        for n in self.notes:
            out.append(f"note: {n}")
        return out


# ---------------------------------------------------------------------------
# helpers


def _fmt(x, spec: str = ".3g") -> str:
    if x is None or not isinstance(x, (int, float)) or not math.isfinite(x):
        return "-"
    return format(x, spec)


def _readonly(a) -> np.ndarray:
    a = np.array(a, dtype=float, copy=True)
    a.setflags(write=False)
    return a


def na4_star(residual, baseline_residual) -> float:
    """NA4*: fourth moment of the current residual over the BASELINE residual variance squared.

    Parameters
    ----------
    residual : array_like
        Residual signal of the current TSA (one revolution).
    baseline_residual : array_like
        Residual signal of the same shaft's TSA in the baseline (gearbox in
        good condition); its length may differ.

    Returns
    -------
    float
        ``mean((r - mean r)^4) / var(r_baseline)^2``; NaN when the baseline
        variance is zero.  Equals the kurtosis of ``r`` when both variances
        agree, and grows with the fourth power of the residual's amplitude.

    Notes
    -----
    NA4 (Zakrajsek et al. 1993) divides by the variance averaged over the run
    of records so far; NA4* (Decker, Handschuh & Zakrajsek 1994) uses the
    variance of the gearbox in good condition instead, so that the indicator
    keeps growing as damage spreads rather than adapting to it.

    References
    ----------
    .. [1] H. J. Decker, R. F. Handschuh, J. J. Zakrajsek, NASA TM-106553, 1994
       (from memory).
    .. [2] J. J. Zakrajsek, D. P. Townsend, H. J. Decker, NASA TM-105950, 1993.
    """
    r = np.asarray(residual, dtype=float).ravel()
    b = np.asarray(baseline_residual, dtype=float).ravel()
    if r.size < 2 or b.size < 2:
        raise GearbenchError("NA4* needs residual signals of at least 2 samples; check the TSA")
    var_b = float(np.var(b))
    scale = float(np.max(np.abs(b))) if b.size else 0.0
    if not var_b > (8 * np.finfo(float).eps * scale) ** 2:
        return float("nan")
    d = r - r.mean()
    return float(np.mean((d * d) ** 2)) / var_b**2


def _ratio_db(base: float, now: float, db_kind: str) -> tuple[float, float]:
    if not (math.isfinite(base) and math.isfinite(now)) or base <= 0 or now < 0:
        return float("nan"), float("nan")
    ratio = now / base
    if ratio <= 0:
        return ratio, float("-inf")
    factor = 20.0 if db_kind == "20log10" else 10.0
    return ratio, factor * math.log10(ratio)


def _judge(kind: str, base: float, now: float, ratio: float, t: Thresholds) -> tuple[str, str]:
    if not (math.isfinite(base) and math.isfinite(now)):
        return "n/a", "value missing"
    if kind == "moment":
        rule = f"grown at baseline + {t.moment_delta:g}"
        if now >= base + t.moment_delta:
            return "grown", rule
        if now <= base - t.moment_delta:
            return "dropped", rule
        return "ok", rule
    limit = t.amplitude_ratio if kind == "amplitude" else t.high_moment_ratio
    rule = f"grown at {limit:g}x the baseline"
    if not math.isfinite(ratio):
        return "n/a", rule
    if ratio >= limit:
        return "grown", rule
    if ratio <= t.drop_ratio:
        return "dropped", rule
    return "ok", rule


def _row(name, label, kind, db_kind, shaft, base, now, t: Thresholds) -> IndicatorChange:
    base = float(base) if base is not None else float("nan")
    now = float(now) if now is not None else float("nan")
    ratio, db = _ratio_db(base, now, db_kind)
    flag, rule = _judge(kind, base, now, ratio, t)
    return IndicatorChange(name, label, shaft, base, now, ratio, db, db_kind, flag, rule)


# ---------------------------------------------------------------------------
# same gearbox?


def _gearbox_signature(model) -> dict[str, Any]:
    return {
        "shafts": sorted(s.name for s in model.shafts),
        "meshes": sorted((m.driver, int(m.driver_teeth), m.driven, int(m.driven_teeth)) for m in model.meshes),
        "planetary": sorted((p.sun_shaft, int(p.sun_teeth), int(p.planet_teeth), int(p.planets),
                             int(p.ring_teeth), p.carrier_shaft) for p in model.planetary),
    }


def check_same_gearbox(current_model, baseline_model) -> list[str]:
    """Raise when the two models describe different gearboxes; return notes on lesser differences.

    Shafts (by name), parallel meshes (driver, teeth, driven, teeth) and
    planetary stages (sun, planet, ring teeth, planets, shafts) must agree;
    mesh names, sensors, bearings and the tach may differ (a note is returned).

    Raises
    ------
    GearbenchError
        Naming the first difference found.
    """
    a, b = _gearbox_signature(current_model), _gearbox_signature(baseline_model)
    if a["shafts"] != b["shafts"]:
        only_now = sorted(set(a["shafts"]) - set(b["shafts"]))
        only_base = sorted(set(b["shafts"]) - set(a["shafts"]))
        raise GearbenchError(
            "the baseline describes a different gearbox: shafts "
            + (f"{', '.join(only_now)} only in the current model" if only_now else "")
            + ("; " if only_now and only_base else "")
            + (f"{', '.join(only_base)} only in the baseline model" if only_base else "")
            + "; give a baseline recorded on the same gearbox with the same model"
        )
    for key, what in (("meshes", "mesh"), ("planetary", "planetary stage")):
        sa, sb = set(a[key]), set(b[key])
        if sa != sb:
            now_only = sorted(sa - sb)
            base_only = sorted(sb - sa)

            def describe(item):
                if key == "meshes":
                    return f"{item[0]} {item[1]} T -> {item[2]} {item[3]} T"
                return f"sun {item[0]} {item[1]} T, planets {item[3]} x {item[2]} T, ring {item[4]} T"

            parts = []
            if now_only:
                parts.append("current " + "; ".join(describe(i) for i in now_only))
            if base_only:
                parts.append("baseline " + "; ".join(describe(i) for i in base_only))
            raise GearbenchError(
                f"the baseline describes a different gearbox: {what} differs ({' against '.join(parts)}); "
                "give a baseline recorded on the same gearbox with the same model"
            )
    notes = []
    ba = {(x.name, x.shaft, x.rolling_elements, x.element_diameter_mm, x.pitch_diameter_mm, x.contact_angle_deg)
          for x in current_model.bearings}
    bb = {(x.name, x.shaft, x.rolling_elements, x.element_diameter_mm, x.pitch_diameter_mm, x.contact_angle_deg)
          for x in baseline_model.bearings}
    if ba != bb:
        notes.append("the bearings of the two models differ; bearing lines are compared with the current model's.")
    return notes


# ---------------------------------------------------------------------------
# spectra


def _resample_lines(src_x: np.ndarray, src_y: np.ndarray, dst_x: np.ndarray) -> np.ndarray:
    """A line spectrum on another axis: the largest source line within each destination bin.

    Where the source is coarser than the destination (no source line in a bin),
    linear interpolation is used.  Outside the source range: NaN.
    """
    src_x = np.asarray(src_x, dtype=float)
    src_y = np.asarray(src_y, dtype=float)
    dst_x = np.asarray(dst_x, dtype=float)
    out = np.interp(dst_x, src_x, src_y, left=np.nan, right=np.nan)
    if dst_x.size < 2 or src_x.size < 2:
        return out
    edges = np.empty(dst_x.size + 1)
    edges[1:-1] = 0.5 * (dst_x[1:] + dst_x[:-1])
    edges[0] = dst_x[0] - 0.5 * (dst_x[1] - dst_x[0])
    edges[-1] = dst_x[-1] + 0.5 * (dst_x[-1] - dst_x[-2])
    idx = np.searchsorted(src_x, edges, side="left")
    starts, stops = idx[:-1], idx[1:]
    has = stops > starts
    if np.any(has):
        bin_max = np.full(dst_x.size, np.nan)
        bin_max[has] = _segment_max(src_y, starts[has], stops[has])
        out = np.where(has, bin_max, out)
    return out


def _segment_max(y: np.ndarray, starts: np.ndarray, stops: np.ndarray) -> np.ndarray:
    """max(y[s:e]) for many non-empty, non-overlapping, increasing segments."""
    bounds = np.empty(2 * starts.size, dtype=np.int64)
    bounds[0::2] = starts
    bounds[1::2] = stops
    # reduceat needs indices < len(y); segments end at most at len(y)
    yy = np.append(y, -np.inf)
    red = np.maximum.reduceat(yy, bounds)
    return red[0::2]


def _window_max(order: np.ndarray, amplitude: np.ndarray, center: float, tol: float) -> float:
    lo = int(np.searchsorted(order, center - tol, side="left"))
    hi = int(np.searchsorted(order, center + tol, side="right"))
    if hi <= lo:
        i = int(np.clip(np.searchsorted(order, center), 0, order.size - 1))
        return float(amplitude[i])
    return float(np.max(amplitude[lo:hi]))


def _floor(order: np.ndarray, amplitude: np.ndarray, center: float, half: float) -> float:
    lo = int(np.searchsorted(order, center - half))
    hi = int(np.searchsorted(order, center + half))
    seg = amplitude[lo:hi]
    return float(np.median(seg)) if seg.size else float("nan")


def _unit_factor(from_units: str, to_units: str) -> float:
    if from_units == to_units:
        return 1.0
    if (from_units, to_units) == ("g", "m/s2"):
        return G_N_M_S2
    if (from_units, to_units) == ("m/s2", "g"):
        return 1.0 / G_N_M_S2
    return 1.0


def _carriers(model, reference: str) -> list[tuple[str, float, list[tuple[str, float]]]]:
    """(mesh name, carrier order, [(shaft, spacing order), ...]) of every mesh and planetary stage."""
    from .kinematics import shaft_orders

    o = {k: abs(float(v)) for k, v in shaft_orders(model, reference).items()}
    out = []
    for m in model.meshes:
        out.append((m.name, o[m.driver] * int(m.driver_teeth), [(m.driver, o[m.driver]), (m.driven, o[m.driven])]))
    for p in model.planetary:
        rel = abs(o[p.sun_shaft] - o[p.carrier_shaft])
        # mesh frequency Z_r f_c (ring fixed); sun turns at rel against the carrier
        out.append((p.name, int(p.ring_teeth) * o[p.carrier_shaft],
                    [(p.sun_shaft, rel), (p.carrier_shaft, o[p.carrier_shaft])]))
    return out


def _band_growth_db(cur_o, cur_a, base_o, base_a, center: float, half: float) -> float:
    """20 log10 of the band RMS now over the band RMS in the baseline, both over ``center +- half``.

    With one window type the sum of squared line amplitudes over a band does
    not depend on the line spacing, for tones (a tone's power spread over its
    window's lines) and for noise (more lines of proportionally less power)
    alike, so records of different length compare.
    """
    def band(o, a):
        lo = int(np.searchsorted(o, center - half))
        hi = int(np.searchsorted(o, center + half, side="right"))
        seg = a[lo:hi]
        return float(np.sum(seg * seg))

    e_now, e_base = band(cur_o, cur_a), band(base_o, base_a)
    if not (e_now > 0 and e_base > 0):
        return float("nan")
    return 10.0 * math.log10(e_now / e_base)


def _measure_lines(cur_o, cur_a, base_o, base_a, carriers, n_harm: int, t: Thresholds) -> list[LineChange]:
    d_cur = float(cur_o[1] - cur_o[0])
    d_base = float(base_o[1] - base_o[0])
    top = min(float(cur_o[-1]), float(base_o[-1]))
    K = int(t.n_sideband_orders)
    tol_c = 1.5 * d_cur
    tol_b = 1.5 * d_base
    all_carriers = [c * h for _, c, _ in carriers for h in range(1, n_harm + 1)]
    out: list[LineChange] = []
    for mesh, c_order, cands in carriers:
        max_sp = max((sp for _, sp in cands), default=0.0)
        for h in range(1, n_harm + 1):
            co = h * c_order
            if co + (K + 1) * max_sp > top:
                break
            half = max((K + 1) * max_sp, 40 * max(d_cur, d_base))
            floor_now = _floor(cur_o, cur_a, co, half)
            now = _window_max(cur_o, cur_a, co, tol_c)
            base = _window_max(base_o, base_a, co, tol_b)
            _, db = _ratio_db(base, now, "20log10")
            clear = 20 * math.log10(now / floor_now) if now > 0 and floor_now > 0 else float("nan")
            grown = bool(math.isfinite(db) and db >= t.growth_db and math.isfinite(clear) and clear >= t.clear_db)
            label = f"{mesh} {h}x mesh"
            # growth of the whole band around the carrier (every line, RMS): the
            # reference against which a family's own growth is judged
            carrier_db = _band_growth_db(cur_o, cur_a, base_o, base_a, co, (K + 1) * max_sp)
            out.append(LineChange(label, "mesh harmonic", mesh, h, None, co, 0.0, base, now, db, clear, grown))
            for shaft, sp in cands:
                # a spacing below 2.5 lines of either spectrum cannot be resolved
                if sp < 2.5 * max(d_cur, d_base):
                    continue
                tol = min(1.5 * max(d_cur, d_base), sp / 3.0)
                foreign = [(x, tol) for x in all_carriers]
                for other, osp in cands:
                    if other == shaft or osp <= 0:
                        continue
                    n_other = int(math.ceil((K + 0.5) * sp / osp)) + 1
                    for kk in range(1, n_other + 1):
                        foreign += [(co - kk * osp, tol), (co + kk * osp, tol)]
                e_now = e_base = e_floor = 0.0
                n = 0
                for k in range(1, K + 1):
                    for sign in (-1.0, 1.0):
                        target = co + sign * k * sp
                        if target <= 0 or any(abs(target - fo) <= tol + ft for fo, ft in foreign):
                            continue
                        a_now = _window_max(cur_o, cur_a, target, tol)
                        a_base = _window_max(base_o, base_a, target, tol)
                        e_now += a_now * a_now
                        e_base += a_base * a_base
                        e_floor += floor_now * floor_now
                        n += 1
                if n == 0:
                    continue
                now_f, base_f = math.sqrt(e_now), math.sqrt(e_base)
                _, db = _ratio_db(base_f, now_f, "20log10")
                clear = 10 * math.log10(e_now / e_floor) if e_now > 0 and e_floor > 0 else float("nan")
                grown = bool(math.isfinite(db) and db >= t.growth_db and math.isfinite(clear) and clear >= t.clear_db)
                label = f"{mesh} {h}x mesh sidebands at shaft {shaft} rate (+-{K})"
                rel = db - carrier_db if math.isfinite(db) and math.isfinite(carrier_db) else float("nan")
                grown = grown and bool(math.isfinite(rel) and rel >= t.relative_db)
                out.append(LineChange(label, "sideband family", mesh, h, shaft, co, sp, base_f, now_f, db, clear,
                                      grown, n, rel))
    return out


# ---------------------------------------------------------------------------
# re-ranking


def _ramp(x: float, lo: float, hi: float) -> float:
    if x is None or not math.isfinite(x):
        return 0.0
    return float(np.clip((x - lo) / (hi - lo), 0.0, 1.0))


def rerank_suspects(current, baseline, comparison_indicators: Sequence[IndicatorChange],
                    lines: Sequence[LineChange], *, thresholds: Thresholds = Thresholds(),
                    threshold: float | None = None) -> tuple[Any, ...]:
    """Re-rank the current analysis's suspects with what the baseline shows.

    Parameters
    ----------
    current : dsp.analysis.Analysis
        Its ``extras["all_scores"]`` (every component and kind scored) is
        re-scored; without it, its ``suspects``.
    baseline : dsp.analysis.Analysis or None
        The baseline analysis; its ``extras["all_scores"]`` say which
        patterns were already there.
    comparison_indicators : sequence of IndicatorChange
        The indicator table of the comparison.
    lines : sequence of LineChange
        Mesh harmonics and sideband families measured in both spectra.
    thresholds : Thresholds
    threshold : float, optional
        Alarm threshold (default: the analysis's ``settings.alarm_threshold``).

    Returns
    -------
    tuple of dsp.suspects.Suspect
        Best first, one per component, those at or above the threshold.

    Notes
    -----
    For each shaft, with ``t`` the :class:`Thresholds`:

    * "localized tooth damage": when FM4 or NA4 was already at or above
      ``t.high_fm4`` in the baseline and FM4 did not grow by ``t.moment_delta``,
      the score is multiplied by ``t.also_high_factor`` with the evidence
      "also high in the baseline: synchronous impacts from the driven
      machine?"; then ``t.growth_bonus * ramp(FM4 - FM4_baseline;
      t.moment_delta, t.moment_delta + t.growth_span)`` is added;
    * "distributed wear or eccentricity": when nothing grew (below) and the
      baseline scored the same pattern at least half as high, the score is
      multiplied by ``t.also_high_factor`` ("the pattern was already there");
      then ``t.growth_bonus * max(ramp(ER change dB; 6, 18), ramp(best
      relative growth of a grown family spaced at the shaft's rate;
      t.relative_db, t.relative_db + 12))`` is added;
    * the evidence names what grew, or says that nothing did.

    Bearing suspects are kept as they are.  An aid to the analyst's judgement,
    not a verdict.  The weights are common practice, no source.

    References
    ----------
    .. [1] R. M. Stewart, ISVR report MHM/R/10/77, 1977 (FM4: about 3 for a
       healthy gear; a change from the gearbox's own value matters).
    .. [2] R. B. Randall, *Vibration-based Condition Monitoring*, Wiley, 2011
       (judging gear signals against the machine's own baseline and trend).
    """
    t = thresholds
    if threshold is None:
        threshold = float(getattr(current.settings, "alarm_threshold", 0.5))
    items = list(current.extras.get("all_scores") or current.suspects)
    base_scores: dict[tuple[str, str], float] = {}
    if baseline is not None:
        for b in baseline.extras.get("all_scores") or baseline.suspects:
            base_scores.setdefault((b.component, b.kind), float(b.score))
    by_shaft_rows: dict[str, dict[str, IndicatorChange]] = {}
    for r in comparison_indicators:
        if r.shaft:
            by_shaft_rows.setdefault(r.shaft, {})[r.name] = r
    fams: dict[str, list[LineChange]] = {}
    for g in lines:
        if g.kind == "sideband family" and g.shaft and g.grown:
            fams.setdefault(g.shaft, []).append(g)
    out = []
    for s in items:
        if not s.component.startswith("shaft:"):
            out.append(s)
            continue
        shaft = s.component.split(":", 1)[1]
        rows = by_shaft_rows.get(shaft, {})
        if not rows:
            out.append(s)
            continue
        score = float(s.score)
        ev = list(s.evidence)
        nan = float("nan")
        fm4 = rows.get("fm4")
        d_fm4 = (fm4.now - fm4.baseline) if fm4 is not None else nan
        if s.kind == "localized tooth damage":
            base_fm4 = fm4.baseline if fm4 is not None else nan
            base_na4 = rows["na4"].baseline if "na4" in rows else nan
            high_base = any(math.isfinite(v) and v >= t.high_fm4 for v in (base_fm4, base_na4))
            if high_base and not (math.isfinite(d_fm4) and d_fm4 >= t.moment_delta):
                score *= t.also_high_factor
                ev.append(f"FM4 {base_fm4:.2f} and NA4 {base_na4:.2f} in the baseline: {ALSO_HIGH_EVIDENCE}")
            g = _ramp(d_fm4, t.moment_delta, t.moment_delta + t.growth_span)
            if g > 0:
                score += t.growth_bonus * g
                ev.append(f"grown since the baseline: FM4 {fm4.baseline:.2f} -> {fm4.now:.2f} ({d_fm4:+.2f}).")
            elif not (high_base and not d_fm4 >= t.moment_delta):
                ev.append(f"FM4 of shaft {shaft} has not grown since the baseline ({_fmt(d_fm4, '+.2f')}).")
        elif s.kind == "distributed wear or eccentricity":
            er = rows.get("er")
            g_er = _ramp(er.change_db if er is not None else nan, 6.0, 18.0)
            rel = [f for f in fams.get(shaft, []) if f.relative_db >= t.relative_db]
            g_fam = max((_ramp(f.relative_db, t.relative_db, t.relative_db + 12.0) for f in rel), default=0.0)
            g = max(g_er, g_fam)
            before = base_scores.get((s.component, s.kind), float("nan"))
            if g == 0 and score > 0 and math.isfinite(before) and before >= 0.5 * score:
                score *= t.also_high_factor
                ev.append(f"the baseline scored this pattern {before:.2f} too: it was already there "
                          "(run-out, or load from the driven machine?) and has not grown.")
            if g > 0:
                score += t.growth_bonus * g
                what = []
                if g_er > 0:
                    what.append(f"ER {er.baseline:.3f} -> {er.now:.3f} ({er.change_db:+.1f} dB)")
                what += [f"{f.what} {f.change_db:+.1f} dB ({f.relative_db:+.1f} dB against its band)"
                         for f in sorted(rel, key=lambda f: -f.relative_db)[:3]]
                ev.append("grown since the baseline: " + "; ".join(what) + ".")
            else:
                ev.append(f"neither ER nor a sideband family of shaft {shaft} has grown against its band "
                          "since the baseline.")
        out.append(dataclasses.replace(s, score=round(float(np.clip(score, 0.0, 1.0)), 4), evidence=tuple(ev)))
    best: dict[str, Any] = {}
    for s in sorted(out, key=lambda s: -s.score):
        if s.score >= threshold and s.component not in best:
            best[s.component] = s
    return tuple(sorted(best.values(), key=lambda s: -s.score))


# ---------------------------------------------------------------------------
# compare


def compare(current, baseline, *, thresholds: Thresholds = Thresholds()) -> BaselineComparison:
    """Compare an analysis with the analysis of a baseline recording of the same gearbox.

    Parameters
    ----------
    current : dsp.analysis.Analysis
        The recording under judgement.
    baseline : dsp.analysis.Analysis
        A recording of the same gearbox in good condition (any speed, any
        length; the same sensor position for the levels to compare).
    thresholds : Thresholds
        When a change is flagged.

    Returns
    -------
    BaselineComparison

    Raises
    ------
    GearbenchError
        When the two models describe different gearboxes (shafts, tooth
        counts, planetary stages), naming the difference.

    Notes
    -----
    Both order spectra are in orders of the reference shaft (the current
    model's tach shaft; a baseline referenced to another shaft is rescaled by
    the kinematic ratio), so mesh harmonics ``h Z`` and sidebands
    ``h Z +- k o_s`` sit at the same orders at any speed.  Each line is the
    largest value within 1.5 lines of its order in each spectrum, measured on
    that spectrum's own axis (no interpolation), so records of different
    length compare.  A family's level is the root sum of squares of its
    ``2K`` sidebands; positions that coincide with another shaft's family or
    a mesh harmonic are left out.  The overlay arrays are the baseline
    resampled onto the current axes (largest line per bin).

    NA4* of each shaft is the current residual normalised by the baseline
    residual's variance (Decker, Handschuh & Zakrajsek 1994 [1]_, from memory);
    its baseline value is the baseline's own NA4 (M = 1).

    References
    ----------
    .. [1] H. J. Decker, R. F. Handschuh, J. J. Zakrajsek, "An enhancement to
       the NA4 gear vibration diagnostic parameter", NASA TM-106553, 1994.
    .. [2] R. B. Randall, *Vibration-based Condition Monitoring*, Wiley, 2011.
    """
    from .kinematics import shaft_orders

    if not isinstance(thresholds, Thresholds):
        raise GearbenchError(f"thresholds must be dsp.baseline.Thresholds, got {type(thresholds).__name__}")
    notes = check_same_gearbox(current.model, baseline.model)
    t = thresholds
    reference = current.frequencies.reference_shaft
    base_ref = baseline.frequencies.reference_shaft
    # baseline orders -> current reference orders
    to_cur = 1.0
    if base_ref != reference:
        to_cur = abs(float(shaft_orders(current.model, reference)[base_ref]))
        notes.append(f"the baseline is referenced to shaft {base_ref}; its orders were rescaled to shaft {reference}.")
    units = current.recording.get("sensor", {}).get("units", "")
    b_units = baseline.recording.get("sensor", {}).get("units", "")
    uf = _unit_factor(b_units, units)
    if b_units != units:
        notes.append(f"the baseline sensor is in {b_units}, the current one in {units}; baseline amplitudes "
                     f"were converted ({uf:.5g}).")
    s_now = current.recording.get("sensor", {})
    s_base = baseline.recording.get("sensor", {})
    if s_now.get("name") != s_base.get("name") or s_now.get("channel") != s_base.get("channel"):
        notes.append(f"the sensors differ (baseline {s_base.get('name')!r} on channel {s_base.get('channel')}, "
                     f"now {s_now.get('name')!r} on channel {s_now.get('channel')}); levels compare only if "
                     "both sat at the same place.")

    # --- indicator table ---------------------------------------------------------
    rows: list[IndicatorChange] = []
    for name, kind, db_kind, label in INDICATORS_OVERALL:
        bv = baseline.overall.get(name)
        nv = current.overall.get(name)
        if name == "rms" and bv is not None:
            bv = float(bv) * uf
        rows.append(_row(name, label, kind, db_kind, None, bv, nv, t))
    for shaft in [s.name for s in current.model.shafts]:
        cur_t = current.tsa_for(shaft)
        base_t = baseline.tsa_for(shaft)
        if cur_t is None or base_t is None:
            missing = "the current recording" if cur_t is None else "the baseline"
            notes.append(f"shaft {shaft} has no TSA in {missing} (too few revolutions); its indicators are not compared.")
            continue
        for name, kind, db_kind, label in INDICATORS_TSA:
            bv = base_t.indicators.get(name)
            nv = cur_t.indicators.get(name)
            if name == "rms" and bv is not None:
                bv = float(bv) * uf
            if name == "na4":
                try:
                    nv = na4_star(np.asarray(cur_t.residual), np.asarray(base_t.residual) * uf)
                except GearbenchError:
                    nv = float("nan")
            rows.append(_row(name, label, kind, db_kind, shaft, bv, nv, t))

    # --- order spectra ------------------------------------------------------------
    cur_o = np.asarray(current.order_spectrum.order, dtype=float)
    cur_a = np.asarray(current.order_spectrum.amplitude, dtype=float)
    base_o = np.asarray(baseline.order_spectrum.order, dtype=float) * to_cur
    base_a = np.asarray(baseline.order_spectrum.amplitude, dtype=float) * uf
    n_harm = int(min(current.settings.n_mesh_harmonics, baseline.settings.n_mesh_harmonics))
    lines = _measure_lines(cur_o, cur_a, base_o, base_a, _carriers(current.model, reference), n_harm, t)
    grown = tuple(sorted((x for x in lines if x.grown), key=lambda x: -x.change_db))
    base_on_cur = _resample_lines(base_o, base_a, cur_o)

    # --- TSA overlays ---------------------------------------------------------------
    tsa_angle: dict[str, np.ndarray] = {}
    tsa_base: dict[str, np.ndarray] = {}
    tsa_signals: dict[str, dict[str, np.ndarray]] = {}
    for cur_t in current.tsa:
        base_t = baseline.tsa_for(cur_t.shaft)
        if base_t is None:
            continue
        ang = np.asarray(cur_t.angle_deg, dtype=float)
        b_ang = np.asarray(base_t.angle_deg, dtype=float)
        tsa_angle[cur_t.shaft] = _readonly(ang)
        signals = {}
        for which in ("average", "residual", "difference"):
            b_sig = np.asarray(getattr(base_t, which), dtype=float) * uf
            # periodic interpolation over one revolution
            signals[which] = _readonly(np.interp(np.mod(ang, 360.0), np.append(b_ang, b_ang[0] + 360.0),
                                                 np.append(b_sig, b_sig[0])))
        tsa_signals[cur_t.shaft] = signals
        tsa_base[cur_t.shaft] = signals["average"]

    # --- envelope spectra in orders -----------------------------------------------
    ref_now = float(current.frequencies.reference_hz)
    ref_base = float(baseline.frequencies.reference_hz)
    env_o = np.asarray(current.envelope.freq_hz, dtype=float) / ref_now
    env_b_o = np.asarray(baseline.envelope.freq_hz, dtype=float) / ref_base * to_cur
    env_factor = uf ** (2 if getattr(baseline.envelope, "squared", False) else 1)
    env_b = _resample_lines(env_b_o, np.asarray(baseline.envelope.amplitude, dtype=float) * env_factor, env_o)
    bands = (tuple(float(v) for v in current.envelope.band_hz), tuple(float(v) for v in baseline.envelope.band_hz))
    if not np.allclose(bands[0], bands[1], rtol=0.05):
        notes.append(f"the envelope bands differ (now {bands[0][0]:.0f}-{bands[0][1]:.0f} Hz, baseline "
                     f"{bands[1][0]:.0f}-{bands[1][1]:.0f} Hz); compare envelope line positions, not levels.")

    rpm_now = 60.0 * ref_now
    rpm_base = 60.0 * ref_base * to_cur
    if rpm_base > 0 and abs(rpm_now / rpm_base - 1.0) > 0.1:
        notes.append(f"the speeds differ by {100 * (rpm_now / rpm_base - 1):+.0f} %; mesh and sideband levels "
                     "change with speed and load through the structure's resonances, so read small changes "
                     "with care.")

    suspects = rerank_suspects(current, baseline, rows, lines, thresholds=t)
    return BaselineComparison(
        baseline_path=str(baseline.recording.get("path", "")),
        baseline_sha256=str(baseline.recording.get("sha256", "")),
        current_path=str(current.recording.get("path", "")),
        current_sha256=str(current.recording.get("sha256", "")),
        baseline_rpm=rpm_base,
        current_rpm=rpm_now,
        reference_shaft=reference,
        indicators=tuple(rows),
        lines=tuple(lines),
        grown=grown,
        order=_readonly(cur_o),
        baseline_order_amplitude=_readonly(base_on_cur),
        tsa_angle_deg=tsa_angle,
        baseline_tsa=tsa_base,
        baseline_tsa_signals=tsa_signals,
        envelope_order=_readonly(env_o),
        envelope_now=_readonly(current.envelope.amplitude),
        baseline_envelope_amplitude=_readonly(env_b),
        envelope_bands_hz=bands,
        suspects=suspects,
        notes=tuple(notes),
        thresholds=t,
        units=units,
    )
