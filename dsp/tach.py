"""Tachometer pulses, their repair, and the speed profile (time <-> shaft angle).

:func:`detect_pulses` finds the edges of a tach or encoder signal with a Schmitt
trigger and times them to a fraction of a sample; it then rejects extra pulses
(glitches, double triggers) and inserts missing ones against a sliding local median
of the pulse interval.  :func:`speed_profile` turns the pulses into a
:class:`SpeedProfile`, a smooth monotone map between time and tach-shaft angle in
revolutions.  :func:`nominal_profile` builds a constant-speed profile when there is
no tach.  :func:`fyfe_munck_fit` / :func:`fyfe_munck_time` give the constant
angular-acceleration law of computed order tracking.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from functools import cached_property
from typing import NamedTuple

import numpy as np

from .errors import GearbenchError, TachError

EDGES = ("rising", "falling")
SOURCES = ("tach", "nominal", "estimated")

#: An interval shorter than this fraction of the local median interval is an extra pulse.
SHORT_INTERVAL = 0.6
#: An interval within this distance of an integer multiple m >= 2 of the local median holds m-1 missing pulses.
MULTIPLE_TOLERANCE = 0.25
#: Speed change between consecutive revolutions above which order tracking cannot follow.
MAX_REV_CHANGE = 0.20
#: A pulse narrower than this fraction of the median pulse width is a glitch (spike), not a
#: mark on the shaft (common practice, no source); applied when the median width is at
#: least GLITCH_MIN_MEDIAN_SAMPLES, so that narrow but genuine pulses are never judged.
GLITCH_WIDTH = 0.25
GLITCH_MIN_MEDIAN_SAMPLES = 8


# ---------------------------------------------------------------------------------------------
# Pulse detection


@dataclass(frozen=True, eq=False)
class TachPulses:
    """Pulse times of a tach channel after repair.

    Attributes
    ----------
    times_s : numpy.ndarray
        Pulse times, s from the first sample, float64, increasing, read-only.
    repaired : numpy.ndarray
        bool, same length: True for pulses inserted by the repair.
    n_found : int
        Edges found by the trigger, before repair.
    n_repaired : int
        Pulses inserted where some were missing.
    n_rejected : int
        Extra pulses removed (glitches, double triggers).
    pulses_per_rev : int
    threshold : float
        Trigger level, signal units.
    edge : str
        ``"rising"`` or ``"falling"``.
    hysteresis : float
        Width of the Schmitt-trigger band around ``threshold``, signal units.
    low_level, high_level : float
        Robust low and high levels of the signal (percentiles).
    sample_rate_hz : float
    warnings : tuple of str
        Quality warnings (fast speed change, gaps that could not be repaired).
    """

    times_s: np.ndarray
    repaired: np.ndarray
    n_found: int
    n_repaired: int
    n_rejected: int
    pulses_per_rev: int
    threshold: float
    edge: str
    hysteresis: float = 0.0
    low_level: float = float("nan")
    high_level: float = float("nan")
    sample_rate_hz: float = float("nan")
    warnings: tuple[str, ...] = ()

    @property
    def n_pulses(self) -> int:
        return int(self.times_s.size)

    def to_json_dict(self) -> dict:
        return {
            "pulses_found": self.n_found,
            "pulses_repaired": self.n_repaired,
            "pulses_rejected": self.n_rejected,
            "pulses": self.n_pulses,
            "pulses_per_rev": self.pulses_per_rev,
            "edge": self.edge,
            "threshold": self.threshold,
            "hysteresis": self.hysteresis,
            "warnings": list(self.warnings),
        }


def _levels(x: np.ndarray) -> tuple[float, float]:
    """Robust low and high levels of a two-level signal.

    The midpoint of the extremes splits the samples in two groups; the levels are the
    medians of the groups (taken on a strided subset of long signals, for speed), so
    noise on the levels and the pulse duty cycle do not move them.
    """
    finite_all = bool(np.isfinite(x).all())
    mn = float(x.min()) if finite_all else float(np.nanmin(np.where(np.isfinite(x), x, np.nan)))
    mx = float(x.max()) if finite_all else float(np.nanmax(np.where(np.isfinite(x), x, np.nan)))
    if not (np.isfinite(mn) and np.isfinite(mx)):
        return float("nan"), float("nan")
    mid = 0.5 * (mn + mx)
    step = max(1, x.size // 100_000)
    sub = x[::step]
    low = sub[sub < mid]
    high = sub[sub >= mid]
    lo = float(np.median(low)) if low.size else mn
    hi = float(np.median(high)) if high.size else mx
    return lo, hi


def _entries(mask: np.ndarray) -> np.ndarray:
    """Indices i where ``mask`` turns True (``mask[i]`` and not ``mask[i-1]``); 0 if it starts True."""
    idx = np.flatnonzero(mask[1:] > mask[:-1]) + 1     # True > False only where it turns True
    if mask.size and mask[0]:
        idx = np.concatenate(([0], idx))
    return idx


def _schmitt_edges(y: np.ndarray, threshold: float, hysteresis: float) -> np.ndarray:
    """Sub-sample times (in samples) of rising threshold crossings of ``y`` with hysteresis."""
    return _schmitt_pulses(y, threshold, hysteresis)[0]


def _schmitt_pulses(y: np.ndarray, threshold: float, hysteresis: float) -> tuple[np.ndarray, np.ndarray]:
    """Rising-edge times (samples, sub-sample) and pulse widths (samples, inf for the last open pulse).

    The width of a pulse runs from its entry above the hysteresis band to the next
    entry below it.
    """
    upper = threshold + 0.5 * hysteresis
    lower = threshold - 0.5 * hysteresis
    above = y > upper
    below = y < lower
    up = _entries(above)
    down = _entries(below)
    if up.size == 0 or down.size == 0:
        return np.empty(0), np.empty(0)
    # Merge the two event lists; a rising edge is an entry above that follows an entry below.
    idx = np.concatenate((up, down))
    kind = np.concatenate((np.ones(up.size, bool), np.zeros(down.size, bool)))
    order = np.argsort(idx, kind="stable")
    idx, kind = idx[order], kind[order]
    is_edge = np.zeros(idx.size, bool)
    is_edge[1:] = kind[1:] & ~kind[:-1]
    edge_idx = idx[is_edge]
    if edge_idx.size == 0:
        return np.empty(0), np.empty(0)
    nxt = np.searchsorted(down, edge_idx, side="right")
    width = np.full(edge_idx.size, np.inf)
    closed = nxt < down.size
    width[closed] = down[nxt[closed]] - edge_idx[closed]
    # The threshold crossing that belongs to each edge: the last j < edge with
    # y[j] <= threshold < y[j+1] (it exists: the signal was below the band before).
    over = y > threshold
    cross = np.flatnonzero(over[1:] > over[:-1])
    pos = np.searchsorted(cross, edge_idx - 1, side="right") - 1
    ok = pos >= 0
    j = cross[pos[ok]]
    y0 = y[j].astype(np.float64)
    y1 = y[j + 1].astype(np.float64)
    frac = (threshold - y0) / (y1 - y0)        # y1 > threshold >= y0, so y1 - y0 > 0
    return j + np.clip(frac, 0.0, 1.0), width[ok]


def _local_median(d: np.ndarray, half: int) -> np.ndarray:
    """Median of ``d`` over a centred sliding window of ``2*half+1`` values (ends use the first/last full window)."""
    w = 2 * half + 1
    if d.size <= w:
        return np.full(d.size, np.median(d))
    m = np.median(np.lib.stride_tricks.sliding_window_view(d, w), axis=1)
    return np.concatenate((np.full(half, m[0]), m, np.full(half, m[-1])))


def _reject_extra(t: np.ndarray, half: int) -> tuple[np.ndarray, int]:
    """Remove pulses that make an interval much shorter than the local median."""
    n_rejected = 0
    for _ in range(50):
        if t.size < 3:
            break
        d = np.diff(t)
        med = _local_median(d, half)
        short = np.flatnonzero(d < SHORT_INTERVAL * med)
        if short.size == 0:
            break
        # Keep non-adjacent short intervals only in this pass (the rest are seen next pass).
        keep = np.ones(short.size, bool)
        keep[1:] = np.diff(short) > 1
        short = short[keep]
        drop = []
        for k in short:  # interval k lies between pulses k and k+1; few of them
            # Candidate 1: drop pulse k+1 -> interval t[k+2]-t[k]; candidate 2: drop pulse k -> t[k+1]-t[k-1].
            # At the ends, judge by the interval that would remain next to the short one.
            target = med[k]
            c1 = abs((t[k + 2] - t[k]) - target) if k + 2 < t.size else abs(d[k - 1] - target)
            c2 = abs((t[k + 1] - t[k - 1]) - target) if k >= 1 else abs(d[k + 1] - target)
            drop.append(k + 1 if c1 <= c2 else k)
        drop = np.unique(drop)
        t = np.delete(t, drop)
        n_rejected += drop.size
    return t, n_rejected


def _insert_missing(t: np.ndarray, half: int) -> tuple[np.ndarray, np.ndarray, int]:
    """Insert the pulses missing from intervals close to an integer multiple m >= 2 of the local median.

    The m-1 inserted pulses are evenly spaced in shaft angle: their times come from a
    cubic of time against pulse count through the two pulses found on each side of the
    gap, so a speed that changes across the gap is followed (evenly spaced in time
    when the speed is constant).
    """
    d = np.diff(t)
    med = _local_median(d, half)
    ratio = d / med
    m = np.rint(ratio)
    gap = (m >= 2) & (np.abs(ratio - m) <= MULTIPLE_TOLERANCE)
    n_gaps_left = int(np.count_nonzero((ratio > 1.5) & ~gap))
    if not gap.any():
        return t, np.zeros(t.size, bool), n_gaps_left
    steps = np.where(gap, m, 1).astype(np.int64)
    count = np.concatenate(([0], np.cumsum(steps)))          # pulse count of each pulse found
    out = np.empty(int(count[-1]) + 1)
    repaired = np.ones(out.size, bool)
    out[count] = t
    repaired[count] = False
    missing = np.flatnonzero(repaired)
    # Each missing pulse: cubic (4-point Lagrange) of time against count through the two
    # pulses found on each side of its gap (fewer at the ends of the train).
    k = np.searchsorted(count, missing) - 1                  # gap between found pulses k and k+1
    npts = min(4, t.size)
    base = np.clip(k - 1, 0, t.size - npts)
    idx = base[:, None] + np.arange(npts)[None, :]
    xs = count[idx].astype(np.float64)
    ys = t[idx]
    q = missing.astype(np.float64)[:, None]
    est = np.zeros(missing.size)
    for j in range(npts):
        w = np.ones(missing.size)
        for i in range(npts):
            if i != j:
                w *= (q[:, 0] - xs[:, i]) / (xs[:, j] - xs[:, i])
        est += w * ys[:, j]
    # Keep the result inside its gap and in order (guards against wild extrapolation).
    lo_t, hi_t = t[k], t[k + 1]
    frac = (missing - count[k]) / (count[k + 1] - count[k])
    linear = lo_t + frac * (hi_t - lo_t)
    ok = (est > lo_t) & (est < hi_t)
    out[missing] = np.where(ok, est, linear)
    if not np.all(np.diff(out) > 0):  # pathological: fall back on even spacing in time
        out[missing] = linear
    return out, repaired, n_gaps_left


def _speed_warnings(t: np.ndarray, ppr: int, n_gaps_left: int) -> list[str]:
    warnings = []
    if t.size >= 2 * ppr + 1:
        period = t[ppr:] - t[:-ppr]          # one revolution ending at each pulse
        change = np.abs(period[ppr:] / period[:-ppr] - 1.0)
        worst = float(change.max())
        if worst > MAX_REV_CHANGE:
            k = int(np.argmax(change))
            warnings.append(
                f"speed changes by {100 * worst:.0f}% between consecutive revolutions near t = {t[k + ppr]:.3f} s, "
                f"faster than order tracking can follow (> {100 * MAX_REV_CHANGE:.0f}%); "
                "check the tach signal or analyse a steadier stretch"
            )
    if n_gaps_left:
        warnings.append(
            f"{n_gaps_left} long gap{'s' if n_gaps_left > 1 else ''} between tach pulses could not be repaired "
            "(not close to a whole number of pulse intervals); check the tach channel and threshold"
        )
    return warnings


#: How to go on without a usable tach (the analysis then estimates the speed from a mesh).
_NO_TACH_HINT = ("without a working tach, remove tach.channel from the model and keep tach.nominal_rpm "
                 "so that the speed is estimated from the gear mesh")


def detect_pulses(x, fs, *, pulses_per_rev: int = 1, edge: str = "rising", threshold: float | None = None,
                  hysteresis: float | None = None, window: int | None = None) -> TachPulses:
    """Find tach or encoder pulses, time them to a fraction of a sample, and repair the train.

    Parameters
    ----------
    x : array_like
        Tach channel (any units), 1-D.
    fs : float
        Sampling rate, Hz.
    pulses_per_rev : int
        Pulses per revolution of the tach shaft (1 for a keyphasor, tens for an encoder).
    edge : {"rising", "falling"}
        Edge that marks a pulse.
    threshold : float, optional
        Trigger level, signal units.  Default: midway between the robust low and high
        levels (medians of the samples below and above the midpoint of the extremes).
    hysteresis : float, optional
        Width of the Schmitt-trigger band centred on ``threshold``: the signal must
        go below ``threshold - hysteresis/2`` before a new edge can count above
        ``threshold + hysteresis/2``.  Default: 20 % of the high-low swing.
    window : int, optional
        Number of neighbouring intervals in the local median used for repair
        (default ``max(15, 2 * pulses_per_rev + 1)``).

    Returns
    -------
    TachPulses

    Raises
    ------
    TachError
        The channel is flat or gives fewer than 3 pulses.

    Notes
    -----
    Edge times are the linear interpolation of the threshold crossing between the
    two samples that straddle it.  A pulse narrower than a quarter of the median
    pulse width (median of 8 samples or more) is a spike, not a mark, and is
    rejected first.  Repair: an interval shorter than 0.6 times the
    local median interval means an extra pulse; of its two pulses the one whose
    removal leaves an interval closest to the median is dropped.  An interval within
    0.25 of an integer multiple m >= 2 of the local median receives m-1 pulses evenly
    spaced in angle (times from a cubic of time against pulse count through two found
    pulses each side: even spacing in time at constant speed, and a speed change
    across the gap is followed).
    The local median slides along the train, so a wandering speed is followed.

    References
    ----------
    .. [1] K. R. Fyfe and E. D. S. Munck, "Analysis of computed order tracking",
       Mechanical Systems and Signal Processing 11(2), 187-205, 1997 (accurate pulse
       timing governs order-tracking accuracy; threshold-crossing interpolation is
       common practice).
    """
    x = np.asarray(x)
    if x.ndim != 1:
        raise TachError(f"the tach signal must be one channel (1-D), got shape {x.shape}; pass one channel")
    if not np.issubdtype(x.dtype, np.floating):
        x = x.astype(np.float64)
    fs = float(fs)
    if not fs > 0:
        raise TachError(f"{fs=} must be a positive sampling rate in Hz")
    if isinstance(pulses_per_rev, bool) or int(pulses_per_rev) != pulses_per_rev or pulses_per_rev < 1:
        raise TachError(f"{pulses_per_rev=} must be a whole number >= 1; fix tach.pulses_per_rev in the model",
                        field="tach.pulses_per_rev")
    ppr = int(pulses_per_rev)
    if edge not in EDGES:
        raise TachError(f"Invalid value for 'edge': allowed 'rising', 'falling', got {edge!r}", field="tach.edge")

    lo, hi = _levels(x)
    swing = hi - lo
    if not np.isfinite(swing) or swing <= 1e-9 * max(abs(hi), abs(lo), 1e-30) or swing == 0:
        raise TachError(
            "the tach channel is flat (no pulses); check the channel number and wiring or, "
            + _NO_TACH_HINT
        )
    thr = 0.5 * (lo + hi) if threshold is None else float(threshold)
    hyst = 0.2 * swing if hysteresis is None else float(hysteresis)
    if hyst < 0:
        raise TachError(f"{hysteresis=} must be >= 0 (signal units)")

    if edge == "rising":
        edges, widths = _schmitt_pulses(x, thr, hyst)
    else:
        edges, widths = _schmitt_pulses(np.negative(x), -thr, hyst)
    n_found = int(edges.size)
    n_glitches = 0
    finite_w = widths[np.isfinite(widths)]
    if finite_w.size >= 3:
        med_w = float(np.median(finite_w))
        if med_w >= GLITCH_MIN_MEDIAN_SAMPLES:
            glitch = widths < GLITCH_WIDTH * med_w
            n_glitches = int(np.count_nonzero(glitch))
            if n_glitches and edges.size - n_glitches >= 3:
                edges = edges[~glitch]
            else:
                n_glitches = 0
    if n_found < 3:
        raise TachError(
            f"the tach channel gives {n_found} pulse{'s' if n_found != 1 else ''} (at least 3 needed); "
            "check the channel, edge and threshold or, " + _NO_TACH_HINT
        )
    t = edges / fs

    half = (max(15, 2 * ppr + 1) if window is None else max(3, int(window))) // 2
    t, n_rejected = _reject_extra(t, half)
    n_rejected += n_glitches
    if t.size < 3:
        raise TachError(
            "after removing glitches fewer than 3 tach pulses remain; check the tach channel or, "
            + _NO_TACH_HINT
        )
    t, repaired, n_gaps_left = _insert_missing(t, half)
    warnings = _speed_warnings(t, ppr, n_gaps_left)
    n_repaired = int(np.count_nonzero(repaired))
    if n_repaired + n_rejected > 0.1 * t.size:
        warnings.append(
            f"{n_repaired} pulses inserted and {n_rejected} removed out of {n_found} found (more than 10 %); "
            "check the tach threshold, edge and pulses_per_rev"
        )
    t.setflags(write=False)
    repaired.setflags(write=False)
    return TachPulses(
        times_s=t,
        repaired=repaired,
        n_found=n_found,
        n_repaired=n_repaired,
        n_rejected=int(n_rejected),
        pulses_per_rev=ppr,
        threshold=thr,
        edge=edge,
        hysteresis=hyst,
        low_level=lo,
        high_level=hi,
        sample_rate_hz=fs,
        warnings=tuple(warnings),
    )


# ---------------------------------------------------------------------------------------------
# Speed profile


class Knots(NamedTuple):
    """Knots of a speed profile: times (s) and tach-shaft angles (rev)."""

    times_s: np.ndarray
    angle_rev: np.ndarray


@dataclass(frozen=True, eq=False)
class SpeedProfile:
    """Smooth monotone map between time and the angle of one shaft.

    The angle is in revolutions of ``shaft`` and is 0 at ``t_start_s`` (the first
    pulse for a tach profile).  Between the knots the angle follows a monotone C1
    piecewise-cubic (PCHIP, Fritsch & Carlson) through ``(times_s, angle_rev)``;
    outside them it continues at the end speeds.  :meth:`time_s` is the exact
    inverse of :meth:`angle_rev` (Newton on the cubic of each segment).

    Attributes
    ----------
    shaft : str
    source : {"tach", "nominal", "estimated"}
    t_start_s, t_end_s : float
        Time span covered by the knots, s.
    mean_hz : float
        Revolutions per second over the span (angle covered / time).
    min_hz, max_hz : float
        Slowest and fastest speed, Hz, from whole-revolution averages (or from the
        knots when less than two revolutions are covered).
    n_revs : int
        Whole revolutions covered.
    knot_times_s, knot_angle_rev : numpy.ndarray
        Knots (s, rev), float64, strictly increasing, read-only; also ``knots``.

    References
    ----------
    .. [1] F. N. Fritsch and R. E. Carlson, "Monotone piecewise cubic interpolation",
       SIAM J. Numer. Anal. 17(2), 238-246, 1980 (scipy.interpolate.PchipInterpolator).
    """

    shaft: str
    source: str
    t_start_s: float
    t_end_s: float
    mean_hz: float
    min_hz: float
    max_hz: float
    n_revs: int
    knot_times_s: np.ndarray = field(repr=False)
    knot_angle_rev: np.ndarray = field(repr=False)

    @property
    def knots(self) -> "Knots":
        """The knots as ``Knots(times_s, angle_rev)`` (read-only arrays)."""
        return Knots(self.knot_times_s, self.knot_angle_rev)

    # -- constructors --------------------------------------------------------------------
    @classmethod
    def from_knots(cls, times_s, angle_rev, *, shaft: str, source: str = "estimated") -> "SpeedProfile":
        """Build a profile from knots of (time, angle).

        Parameters
        ----------
        times_s : array_like
            Strictly increasing times, s (at least 2).
        angle_rev : array_like
            Strictly increasing shaft angles, revolutions; shifted so the first is 0.
        shaft : str
        source : {"tach", "nominal", "estimated"}
        """
        t = np.array(times_s, dtype=np.float64, copy=True).ravel()
        a = np.array(angle_rev, dtype=np.float64, copy=True).ravel()
        if source not in SOURCES:
            raise GearbenchError(f"Invalid value for 'source': allowed {', '.join(map(repr, SOURCES))}, got {source!r}")
        if t.size != a.size:
            raise TachError(f"speed profile knots differ in length ({t.size} times, {a.size} angles); pass pairs")
        if t.size < 2:
            raise TachError("a speed profile needs at least 2 knots (time, angle); give more pulses")
        if not (np.isfinite(t).all() and np.isfinite(a).all()):
            raise TachError("speed profile knots contain NaN or infinity; remove them")
        if not (np.all(np.diff(t) > 0) and np.all(np.diff(a) > 0)):
            raise TachError("speed profile knots must increase strictly in time and angle; "
                            "the shaft must keep turning one way")
        a -= a[0]
        t.setflags(write=False)
        a.setflags(write=False)
        duration = t[-1] - t[0]
        mean_hz = a[-1] / duration
        n_revs = int(math.floor(a[-1] + 1e-9))
        proto = cls(shaft=shaft, source=source, t_start_s=float(t[0]), t_end_s=float(t[-1]),
                    mean_hz=float(mean_hz), min_hz=float(mean_hz), max_hz=float(mean_hz),
                    n_revs=n_revs, knot_times_s=t, knot_angle_rev=a)
        if n_revs >= 2:
            rev_t = proto.time_s(np.arange(n_revs + 1, dtype=np.float64))
            rev_hz = 1.0 / np.diff(rev_t)
        else:
            rev_hz = np.diff(a) / np.diff(t)
        object.__setattr__(proto, "min_hz", float(rev_hz.min()))
        object.__setattr__(proto, "max_hz", float(rev_hz.max()))
        return proto

    # -- interpolants (built once, lazily) -----------------------------------------------------
    @cached_property
    def _forward(self):
        from scipy.interpolate import CubicHermiteSpline, PchipInterpolator

        t, a = self.knot_times_s, self.knot_angle_rev
        pchip = PchipInterpolator(t, a, extrapolate=False)
        if t.size < 3:
            return pchip
        # PCHIP's one-sided end formula gives a zero (or near-zero) end slope when the
        # speed changes fast across the last intervals; a turning shaft has positive
        # speed, so an end slope under 10 % of its interval's secant slope is replaced
        # by the secant (still monotone: 0 < d <= 3 x secant).
        d = pchip.derivative()(t)
        sec0 = (a[1] - a[0]) / (t[1] - t[0])
        sec1 = (a[-1] - a[-2]) / (t[-1] - t[-2])
        bad0 = not d[0] > 0.1 * sec0
        bad1 = not d[-1] > 0.1 * sec1
        if not (bad0 or bad1):
            return pchip
        d = d.copy()
        if bad0:
            d[0] = sec0
        if bad1:
            d[-1] = sec1
        return CubicHermiteSpline(t, a, d, extrapolate=False)

    @cached_property
    def _inverse_guess(self):
        from scipy.interpolate import PchipInterpolator

        return PchipInterpolator(self.knot_angle_rev, self.knot_times_s, extrapolate=False)

    @cached_property
    def _end_speeds(self) -> tuple[float, float]:
        d = self._forward.derivative()
        return float(d(self.knot_times_s[0])), float(d(self.knot_times_s[-1]))

    # -- evaluation ----------------------------------------------------------------------------
    def angle_rev(self, t_s):
        """Shaft angle, revolutions, at times ``t_s`` (s); 0 at ``t_start_s``."""
        t = np.asarray(t_s, dtype=np.float64)
        out = np.asarray(self._forward(t), dtype=np.float64)
        t0, t1 = self.knot_times_s[0], self.knot_times_s[-1]
        v0, v1 = self._end_speeds
        out = np.where(t < t0, (t - t0) * v0, out)
        out = np.where(t > t1, self.knot_angle_rev[-1] + (t - t1) * v1, out)
        return out if out.ndim else float(out)

    def speed_hz(self, t_s):
        """Shaft speed, Hz (revolutions per second), at times ``t_s`` (s)."""
        t = np.asarray(t_s, dtype=np.float64)
        tc = np.clip(t, self.knot_times_s[0], self.knot_times_s[-1])
        out = np.asarray(self._forward(tc, 1), dtype=np.float64)
        return out if out.ndim else float(out)

    def time_s(self, angle_rev):
        """Times, s, at which the shaft reaches ``angle_rev`` (revolutions); inverse of :meth:`angle_rev`."""
        a = np.asarray(angle_rev, dtype=np.float64)
        scalar = a.ndim == 0
        a = np.atleast_1d(a)
        knots_t, knots_a = self.knot_times_s, self.knot_angle_rev
        v0, v1 = self._end_speeds
        out = np.empty(a.shape)
        lo = a < knots_a[0]
        hi = a > knots_a[-1]
        mid = ~(lo | hi)
        out[lo] = knots_t[0] + (a[lo] - knots_a[0]) / v0
        out[hi] = knots_t[-1] + (a[hi] - knots_a[-1]) / v1
        if mid.any():
            am = a[mid]
            fwd = self._forward
            seg = np.clip(np.searchsorted(knots_a, am, side="right") - 1, 0, knots_a.size - 2)
            c = fwd.c[:, seg]                     # cubic coefficients, highest power first
            h = knots_t[seg + 1] - knots_t[seg]
            s = np.clip(np.asarray(self._inverse_guess(am)) - knots_t[seg], 0.0, h)
            for _ in range(8):
                # c[3] is the angle at the segment's left knot, so compare with the full angle.
                f = ((c[0] * s + c[1]) * s + c[2]) * s + c[3] - am
                df = (3 * c[0] * s + 2 * c[1]) * s + c[2]
                step = np.where(df > 0, f / np.where(df > 0, df, 1.0), 0.0)
                s_new = np.clip(s - step, 0.0, h)
                if np.all(np.abs(s_new - s) <= 1e-15 * (1.0 + np.abs(knots_t[seg]))):
                    s = s_new
                    break
                s = s_new
            out[mid] = knots_t[seg] + s
        return float(out[0]) if scalar else out

    def to_json_dict(self) -> dict:
        return {
            "source": self.source,
            "reference_shaft": self.shaft,
            "mean_hz": self.mean_hz,
            "min_hz": self.min_hz,
            "max_hz": self.max_hz,
            "t_start_s": self.t_start_s,
            "t_end_s": self.t_end_s,
            "n_revs": self.n_revs,
        }


def _savgol2_centre(n_points: int) -> np.ndarray:
    """Centre weights of a quadratic least-squares fit over ``n_points`` (odd) equally spaced points."""
    h = n_points // 2
    j = np.arange(-h, h + 1, dtype=np.float64)
    return (3.0 * (3 * h * h + 3 * h - 1) - 15.0 * j * j) / ((2 * h - 1) * (2 * h + 1) * (2 * h + 3))


def _smooth_times(t: np.ndarray, n_points: int) -> np.ndarray:
    """Local quadratic least-squares smoothing of pulse times against pulse count (Savitzky-Golay)."""
    h = n_points // 2
    if n_points < 5 or t.size < 2 * n_points:
        return t
    c = _savgol2_centre(2 * h + 1)
    out = t.copy()
    # The kernel is symmetric, so convolution equals correlation.
    out[h:-h] = np.convolve(t, c, mode="valid")
    k = np.arange(2 * h + 1, dtype=np.float64)
    head = np.polyval(np.polyfit(k, t[:2 * h + 1] - t[0], 2), k[:h]) + t[0]
    tail = np.polyval(np.polyfit(k, t[-(2 * h + 1):] - t[-1], 2), k[-h:]) + t[-1]
    out[:h] = head
    out[-h:] = tail
    if not np.all(np.diff(out) > 0):  # smoothing broke the order: keep the pulses as found
        return t
    return out


def speed_profile(pulses: TachPulses, shaft: str, *, smooth_pulses: int | None = None) -> SpeedProfile:
    """Speed profile of the tach shaft from its pulses (pulse k at angle k / pulses_per_rev).

    Parameters
    ----------
    pulses : TachPulses
    shaft : str
        Name of the shaft the tach watches.
    smooth_pulses : int, optional
        Number of pulses in a local quadratic least-squares fit of pulse time against
        pulse count (Savitzky-Golay smoothing) applied before the interpolant, which
        cuts the timing jitter of encoders whose pulses are only a few samples apart.
        Default: one revolution (``pulses_per_rev + 1``, made odd) when there are 8 or
        more pulses per revolution, none for a keyphasor.  0 turns it off.

    Notes
    -----
    The fit is exact for pulse times quadratic in the pulse count, so a steady speed
    change over one revolution is followed; the residual is of third order in the
    window length.  The first and last half-windows use one quadratic fit each.

    References
    ----------
    .. [1] A. Savitzky and M. J. E. Golay, "Smoothing and differentiation of data by
       simplified least squares procedures", Analytical Chemistry 36(8), 1627-1639, 1964.
    """
    ppr = int(pulses.pulses_per_rev)
    if smooth_pulses is None:
        smooth_pulses = ppr + 1 if ppr >= 8 else 0
    n = int(smooth_pulses)
    if n < 0:
        raise TachError(f"{smooth_pulses=} must be >= 0 (0: no smoothing)")
    t = np.asarray(pulses.times_s, dtype=np.float64)
    if n >= 5:
        t = _smooth_times(t, n | 1)
    a = np.arange(t.size, dtype=np.float64) / ppr
    return SpeedProfile.from_knots(t, a, shaft=shaft, source="tach")


def nominal_profile(rpm: float, duration_s: float, shaft: str) -> SpeedProfile:
    """Constant-speed profile from t = 0 to ``duration_s`` at ``rpm``.

    Parameters
    ----------
    rpm : float
        Shaft speed, revolutions per minute (> 0).
    duration_s : float
        Length of the recording, s (> 0).
    shaft : str
    """
    rpm = float(rpm)
    duration_s = float(duration_s)
    if not (math.isfinite(rpm) and rpm > 0):
        raise TachError(f"nominal speed {rpm} rpm must be positive; fix tach.nominal_rpm in the model",
                        field="tach.nominal_rpm")
    if not (math.isfinite(duration_s) and duration_s > 0):
        raise TachError(f"{duration_s=} must be positive; the recording holds no time")
    hz = rpm / 60.0
    return SpeedProfile.from_knots([0.0, duration_s], [0.0, hz * duration_s], shaft=shaft, source="nominal")


# ---------------------------------------------------------------------------------------------
# Fyfe & Munck constant-acceleration law


def fyfe_munck_fit(t1, t2, t3, dphi):
    """Fit ``theta(t) = b0 + b1 t + b2 t^2`` through three pulses at angles 0, dphi, 2 dphi.

    Parameters
    ----------
    t1, t2, t3 : float or array_like
        Times of three consecutive pulses, s.
    dphi : float
        Angle between pulses (e.g. 2*pi rad, or 1 rev, for once per revolution).

    Returns
    -------
    (b0, b1, b2) : tuple
        Coefficients in angle units, angle/s and angle/s^2.

    Notes
    -----
    Solved in closed form by divided differences (the 3x3 Vandermonde system).

    References
    ----------
    .. [1] K. R. Fyfe and E. D. S. Munck, "Analysis of computed order tracking",
       Mechanical Systems and Signal Processing 11(2), 187-205, 1997.
    """
    t1, t2, t3, dphi = (np.asarray(v, dtype=np.float64) for v in (t1, t2, t3, dphi))
    s12 = dphi / (t2 - t1)
    s23 = dphi / (t3 - t2)
    b2 = (s23 - s12) / (t3 - t1)
    b1 = s12 - b2 * (t1 + t2)
    b0 = -b1 * t1 - b2 * t1 * t1
    as_float = (lambda v: float(v)) if b2.ndim == 0 else (lambda v: v)
    return as_float(b0), as_float(b1), as_float(b2)


def fyfe_munck_time(theta, b):
    """Time at which ``theta(t) = b0 + b1 t + b2 t^2`` reaches ``theta``.

    ``t = [sqrt(4 b2 (theta - b0) + b1^2) - b1] / (2 b2)``, evaluated in the
    equivalent form ``2 (theta - b0) / (sqrt(b1^2 + 4 b2 (theta - b0)) + b1)``
    that stays accurate as b2 -> 0.

    Parameters
    ----------
    theta : float or array_like
        Angle, same units as the fit.
    b : tuple (b0, b1, b2)
        From :func:`fyfe_munck_fit`.

    References
    ----------
    .. [1] K. R. Fyfe and E. D. S. Munck, "Analysis of computed order tracking",
       Mechanical Systems and Signal Processing 11(2), 187-205, 1997.
    """
    b0, b1, b2 = (np.asarray(v, dtype=np.float64) for v in b)
    dtheta = np.asarray(theta, dtype=np.float64) - b0
    out = 2.0 * dtheta / (np.sqrt(b1 * b1 + 4.0 * b2 * dtheta) + b1)
    return float(out) if out.ndim == 0 else out


#: A tach speed outside these ratios to ``tach.nominal_rpm`` is suspect (common practice, no
#: source: induction motors run a few percent below synchronous speed, drives rarely beyond +-20 %).
NOMINAL_RATIO = (0.8, 1.25)


def nominal_mismatch(rpm: float, nominal_rpm: float | None) -> list[str]:
    """A warning when the tach speed is far from the model's nominal speed.

    A tach that reads far from the nameplate usually means the wrong channel (sensor and
    tach swapped) or a wrong ``pulses_per_rev``; every frequency would then be wrong.

    Parameters
    ----------
    rpm : float
        Mean speed measured by the tach, rpm.
    nominal_rpm : float or None
        ``tach.nominal_rpm`` of the model; no check without it.
    """
    if nominal_rpm is None or not nominal_rpm > 0 or not math.isfinite(rpm):
        return []
    ratio = rpm / nominal_rpm
    if NOMINAL_RATIO[0] <= ratio <= NOMINAL_RATIO[1]:
        return []
    return [f"the tach gives {rpm:.6g} rpm, {ratio:.3g} times tach.nominal_rpm {nominal_rpm:g}; check tach.channel "
            "(are the sensor and tach channels swapped?) and tach.pulses_per_rev before trusting any frequency"]
