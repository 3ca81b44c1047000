"""The analysis engine entry point: ``analyze(recording, model, settings) -> Analysis``.

The window, the report and the command line all call this one function.  The
result is a plain immutable bundle that carries the settings it was computed with,
so anything shown can be regenerated.

Steps (each reports progress and checks for cancellation):

1. the sensor signal and the time range; signal quality (non-finite samples,
   clipping, flat signal);
2. the speed of the reference shaft: tach pulses and their profile, or, without a
   tach channel, a speed estimated around the nominal speed;
3. the frequency table of the model at the mean speed;
4. the envelope band by the kurtogram (unless given) and the TSA of every shaft
   with residual and difference signals and indicators: the steps that need the
   time signal come first, so that it can be released once the rfft is taken;
5. ONE full-length rfft of the sensor signal, reused for the Hz spectrum, the
   zoom band, the low band (order spectrum and cepstrum) and the envelope band;
6. the squared-envelope spectrum and the matches of bearing and shaft
   frequencies; the cepstrum; then (with the rfft freed) the velocity spectrum
   and overall velocity;
7. the order spectrum of the reference shaft;
8. sideband families and their owners; suspects.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any, Callable

import numpy as np


@dataclass(frozen=True)
class Settings:
    """Processing settings of one analysis.  All fields have sensible defaults."""

    sensor_index: int = 0                          # index into model.sensors
    t_start_s: float | None = None                 # analyse only this time range
    t_end_s: float | None = None
    window: str = "hann"                           # spectrum window
    spectrum_resolution_hz: float = 0.5            # line spacing of extras["averaged_spectrum"]
    spectrum_scaling: str = "peak"                 # "peak" or "rms"
    max_order: float | None = None                 # order spectrum upper limit (None: auto)
    tsa_samples_per_rev: int | None = None         # None: automatic
    envelope_band_hz: tuple[float, float] | None = None   # None: chosen by the kurtogram
    kurtogram_max_level: int = 6
    velocity_band_hz: tuple[float, float] = (10.0, 1000.0)
    n_mesh_harmonics: int = 3
    n_sideband_orders: int = 3
    alarm_threshold: float = 0.5                   # suspects below this score are not listed


ProgressFn = Callable[[float, str], None]
CancelFn = Callable[[], bool]

SCHEMA = "gearbench.analysis/1"
#: Fewer revolutions than this and a shaft's TSA is skipped (common practice, no source).
MIN_TSA_REVS = 3
#: Speed spread (max - min) / mean above which a warning is given (common practice, no source).
SPEED_SPREAD_WARN = 0.10
#: Above this speed spread the envelope families are searched order-tracked (the
#: 1-2 % bearing slip tolerance would be exceeded; common practice, no source).
ENVELOPE_ORDER_TRACK_SPREAD = 0.02
#: Non-finite samples above this fraction of the record make the analysis fail.
MAX_NONFINITE_FRACTION = 0.05
#: Rahmonic prominence (mean rahmonic peak over the cepstrum's robust spread)
#: mapped to a support of 0..1 (common practice, no source).
CEPSTRUM_PROMINENCE_RAMP = (6.0, 20.0)
CAUTION = (
    "Guidance for a qualified analyst: confirm every finding on the views, and defer to local codes, "
    "the manufacturer's instructions and licensed practice."
)


@dataclass(frozen=True)
class ShaftTSA:
    """TSA of one shaft with its derived signals and indicators."""

    shaft: str
    shaft_hz: float
    shaft_order: float
    n_revs: int
    samples_per_rev: int
    angle_deg: np.ndarray
    average: np.ndarray
    residual: np.ndarray
    difference: np.ndarray
    teeth: tuple[tuple[str, int], ...]             # (gear label, teeth) of gears on this shaft
    indicators: dict[str, float]                   # rms, kurtosis, fm0, fm4, na4, m6a, m8a, er


@dataclass(frozen=True)
class Analysis:
    """Everything computed for one recording, model and settings."""

    settings: Settings
    model: Any                                     # dsp.model.GearTrain
    recording: dict[str, Any]                      # path, sha256, sample_rate_hz, duration_s, channels, sensor
    frequencies: Any                               # dsp.kinematics.FrequencyTable at the mean speed
    speed: Any                                     # dsp.tach.SpeedProfile
    tach: Any                                      # dsp.tach.TachPulses or None
    spectrum: Any                                  # dsp.spectrum.Spectrum (sensor units)
    velocity_spectrum: Any                         # dsp.spectrum.Spectrum (mm/s)
    order_spectrum: Any                            # dsp.orders.OrderSpectrum (reference shaft orders)
    tsa: tuple[ShaftTSA, ...]
    envelope: Any                                  # dsp.envelope.EnvelopeSpectrum
    kurtogram: Any                                 # dsp.envelope.Kurtogram or None
    cepstrum: Any                                  # dsp.cepstrum.Cepstrum
    overall: dict[str, Any]                        # rms, peak, crest_factor, kurtosis, velocity_rms_mm_s, clipped
    sidebands: tuple[Any, ...]                     # dsp.sidebands.SidebandFamily
    envelope_matches: tuple[Any, ...]              # frequencies found in the envelope spectrum
    suspects: tuple[Any, ...]                      # dsp.suspects.Suspect, ranked
    warnings: tuple[str, ...] = ()
    extras: dict[str, Any] = field(default_factory=dict)

    def tsa_for(self, shaft: str) -> ShaftTSA | None:
        for item in self.tsa:
            if item.shaft == shaft:
                return item
        return None

    def to_json_dict(self) -> dict[str, Any]:
        """The ``gearbench analyze --json`` document (plain JSON types, no NaN).

        Keys: ``schema, recording, speed, shafts, meshes, planetary, bearings,
        overall, tsa, sidebands, envelope, suspects, warnings`` (see
        ``design.md``), plus ``caution`` and ``settings``.
        """
        from .plain import plain_json

        return plain_json(_json_dict(self))


# ---------------------------------------------------------------------------
# helpers


class _Steps:
    """Progress reporting and cancellation between steps."""

    def __init__(self, progress: ProgressFn | None, cancel: CancelFn | None):
        self.progress = progress
        self.cancel = cancel

    def check(self) -> None:
        if self.cancel is not None and self.cancel():
            from .errors import Cancelled

            raise Cancelled("analysis cancelled")

    def __call__(self, fraction: float, text: str) -> None:
        self.check()
        if self.progress is not None:
            self.progress(float(fraction), text)


def _ramp(x: float, lo: float, hi: float) -> float:
    return float(np.clip((x - lo) / (hi - lo), 0.0, 1.0))


def _readonly(a: np.ndarray) -> np.ndarray:
    a = np.asarray(a)
    if a.flags.writeable and a.base is None:
        a.setflags(write=False)
    elif a.flags.writeable:
        a = a.copy()
        a.setflags(write=False)
    return a


def _time_range(settings: Settings, n_frames: int, fs: float) -> tuple[int, int]:
    from .errors import AnalysisError

    t0 = 0.0 if settings.t_start_s is None else float(settings.t_start_s)
    t1 = n_frames / fs if settings.t_end_s is None else float(settings.t_end_s)
    if not (math.isfinite(t0) and math.isfinite(t1)) or t0 < 0 or t1 <= t0:
        raise AnalysisError(
            f"time range {t0:g} s to {t1:g} s is empty or outside the recording (0 to {n_frames / fs:g} s); "
            "give a start before the end, inside the recording"
        )
    i0 = int(round(t0 * fs))
    i1 = min(n_frames, int(round(t1 * fs)))
    if i1 - i0 < 64:
        raise AnalysisError(
            f"time range {t0:g} s to {t1:g} s holds {max(i1 - i0, 0)} samples; choose a longer range"
        )
    return i0, i1


def reference_speed(recording, model, x: np.ndarray | None, i0: int, i1: int, reference: str,
                    warn: list[str]):
    """Speed profile of the reference shaft (time 0 at sample ``i0``) and the tach pulses.

    From the tach channel when it gives pulses; else, with ``tach.nominal_rpm``, estimated
    from the mesh phase of the sensor signal ``x`` (:func:`dsp.speed_estimate.estimate_speed`,
    the first sensor's signal when ``x`` is None), else the nominal speed held constant.
    Every fallback and a tach far from the nominal speed add a sentence to ``warn``.
    ``gearbench analyze`` and ``gearbench info`` both use it, so they agree.

    Returns
    -------
    (SpeedProfile, TachPulses or None, SpeedEstimate or None)
        The profile; the tach pulses when the tach gave it; the mesh-phase estimate
        (:class:`dsp.speed_estimate.SpeedEstimate`: method, mesh, harmonic) when that did.
    """
    from .errors import AnalysisError, TachError
    from .tach import detect_pulses, nominal_mismatch, nominal_profile, speed_profile

    fs = float(recording.sample_rate_hz)

    tach = model.tach
    duration = (i1 - i0) / fs
    rpm = tach.nominal_rpm
    if tach.channel is not None:
        tx = recording.channel(int(tach.channel))[i0:i1]
        try:
            pulses = detect_pulses(tx, fs, pulses_per_rev=int(tach.pulses_per_rev or 1), edge=tach.edge or "rising")
            if pulses.n_pulses < 3:
                raise TachError(
                    f"the tach channel {tach.channel} gives {pulses.n_pulses} pulses in the range analysed; "
                    "check tach.channel and tach.pulses_per_rev, or analyse a longer range"
                )
        except TachError as exc:
            if rpm is None or not rpm > 0:
                raise
            # an unusable tach with a nominal speed: go on as without a tach channel, and say so
            warn.append(f"tach channel {tach.channel} unusable ({exc}); the speed below comes from the "
                        f"gear mesh and tach.nominal_rpm instead: check the tach wiring and channel number.")
        else:
            profile = speed_profile(pulses, reference)
            warn.extend(nominal_mismatch(60.0 * profile.mean_hz, rpm))
            if pulses.n_repaired or pulses.n_rejected:
                warn.append(
                    f"tach repaired: {pulses.n_repaired} missing pulses inserted and {pulses.n_rejected} extra "
                    f"pulses removed out of {pulses.n_found} found; check the tach signal if these are many."
                )
            warn.extend(f"tach: {w}" for w in pulses.warnings)
            return profile, pulses, None
    if rpm is None or not rpm > 0:
        raise TachError(
            "the model has neither a tach channel nor a nominal speed; give tach.channel or tach.nominal_rpm",
        )
    from .speed_estimate import estimate_speed

    try:
        if x is None:
            x = _estimation_signal(recording, model, i0, i1)
        est = estimate_speed(x, fs, model, nominal_rpm=float(rpm), reference_shaft=reference)
    except (TachError, AnalysisError) as exc:
        warn.append(f"speed estimate failed ({exc}); the nominal speed {rpm:g} rpm is used as constant.")
    else:
        if est.method == "nominal":
            warn.append(f"no tach channel and no mesh line clear enough to follow: the nominal speed {rpm:g} rpm "
                        "is assumed constant; orders and TSA are only as good as that assumption.")
        else:
            warn.append(f"no tach channel: the speed was estimated from harmonic {est.harmonic} of {est.mesh} "
                        f"({est.method}, {est.snr_db:.0f} dB above its band), mean {60 * est.mean_hz:.1f} rpm "
                        f"against {rpm:g} rpm nominal; check it on the speed view.")
        return est.profile, None, est
    profile = nominal_profile(float(rpm), duration, reference)
    warn.append(
        f"no tach channel: the nominal speed {rpm:g} rpm is assumed constant; orders and TSA are only as "
        "good as that assumption."
    )
    return profile, None, None


def _estimation_signal(recording, model, i0: int, i1: int) -> np.ndarray:
    """The first sensor's signal over samples ``i0:i1``, non-finite samples set to 0."""
    from .errors import AnalysisError
    from .recording import sensor_signal

    if not model.sensors:
        raise AnalysisError("the model has no sensor to estimate the speed from")
    x = sensor_signal(recording, model.sensors[0])[i0:i1]
    return np.where(np.isfinite(x), x, np.float32(0)).astype(np.float32, copy=False)


#: Samples per block for the whole-record moments (keeps float64 temporaries small).
_BLOCK = 1 << 16


def _overall(x: np.ndarray, velocity_rms: float, quality) -> dict[str, Any]:
    """RMS, peak, crest factor and Pearson kurtosis of the whole record, in one pass of blocks.

    The same formulas as :mod:`dsp.indicators` (``rms`` keeps the mean,
    kurtosis ``N sum d^4 / (sum d^2)^2`` with ``d = x - mean``).  Each block's
    central moments (float64) are merged into the running ones with the pairwise
    update formulas, so the record is read once (a long record does not fit in the
    cache) and no full-length float64 copy is made.

    References
    ----------
    .. [1] P. Pebay, "Formulas for robust, one-pass parallel computation of
       covariances and arbitrary-order statistical moments", Sandia report
       SAND2008-6212, 2008 (eqs. 1.1-1.4: merging the central moments of two sets).
    """
    n = x.size
    s2 = peak = 0.0
    na = 0
    mean = m2 = m3 = m4 = 0.0
    for i in range(0, n, _BLOCK):
        b = x[i:i + _BLOCK].astype(np.float64)
        nb = b.size
        peak = max(peak, float(np.max(np.abs(b))))
        s2 += float(np.dot(b, b))
        mb = float(b.sum()) / nb
        b -= mb
        d2 = b * b
        m2b, m3b, m4b = float(d2.sum()), float(np.dot(d2, b)), float(np.dot(d2, d2))
        nn = na + nb
        delta = mb - mean
        m4 += (m4b + delta**4 * na * nb * (na * na - na * nb + nb * nb) / nn**3
               + 6.0 * delta**2 * (na * na * m2b + nb * nb * m2) / nn**2 + 4.0 * delta * (na * m3b - nb * m3) / nn)
        m3 += m3b + delta**3 * na * nb * (na - nb) / nn**2 + 3.0 * delta * (na * m2b - nb * m2) / nn
        m2 += m2b + delta**2 * na * nb / nn
        mean += delta * nb / nn
        na = nn
    rms = math.sqrt(s2 / n)
    return {
        "rms": rms,
        "peak": peak,
        "crest_factor": peak / rms if rms > 0 else math.nan,
        "kurtosis": n * m4 / (m2 * m2) if m2 > 0 else math.nan,
        "velocity_rms_mm_s": float(velocity_rms),
        "clipped": bool(quality.clipped),
        "clipped_fraction": float(quality.clipped_fraction),
    }


def _smooth_length(n: int) -> int:
    """Smallest even 2^a 3^b 5^c >= n (fast FFT length)."""
    best = None
    p2 = 2
    while p2 < 2 * n:
        p3 = p2
        while p3 < 2 * n:
            p5 = p3
            while p5 < n:
                p5 *= 5
            best = p5 if best is None else min(best, p5)
            p3 *= 3
        p2 *= 2
    return int(best)


#: Revolutions per order-spectrum segment at most (resolution 1/2048 order is
#: far finer than any sideband spacing of a real train); longer records are
#: processed in chunks and power-averaged so the cost grows linearly.
ORDER_SEGMENT_REVS = 2048


def _sub_profile(profile, t0: float, t1: float):
    """The speed profile over ``t0..t1`` (s, same clock as ``profile``), with time 0 at ``t0``.

    The knots inside the span are kept and the span's ends added; the angle origin
    moves to ``t0``, which a power spectrum does not see.
    """
    from .tach import SpeedProfile

    knots = getattr(profile, "knot_times_s", None)
    knots = np.asarray(profile.times_s if knots is None else knots)
    inner = knots[(knots > t0) & (knots < t1)]
    t = np.concatenate([[t0], inner, [t1]])
    return SpeedProfile.from_knots(t - t0, profile.angle_rev(t), shaft=profile.shaft, source=profile.source)


def _order_spectrum(x, fs: float, profile, max_order: float, check: Callable[[], None] | None = None):
    """Order spectrum of the reference shaft (Hann window, ``dsp.orders.order_spectrum``).

    Up to ``2.5 R`` revolutions (``R = ORDER_SEGMENT_REVS``) one segment holds every
    whole revolution.  A longer record is cut into chunks of about ``2 R``
    revolutions, each power-averaged over segments of ``R`` revolutions with 50 %
    overlap, and the chunks are power-averaged too, so the time grows linearly
    with the record and the resolution stays ``1/R`` order.
    """
    import dataclasses

    from .orders import order_spectrum

    total = float(profile.n_revs)
    if total <= 2.5 * ORDER_SEGMENT_REVS:  # one segment of every whole revolution (finest resolution)
        return order_spectrum(x, fs, profile, max_order=max_order, window="hann")
    from .envelope import smooth_floor

    seg = smooth_floor(ORDER_SEGMENT_REVS)
    n_chunks = int(total // (2 * seg))
    edges = np.linspace(0.0, total, n_chunks + 1)
    power = None
    n_avg = 0
    first = None
    for a0, a1 in zip(edges[:-1], edges[1:]):
        if check is not None:
            check()  # cancellation inside the long loop
        # profile times share the signal's clock (sample i at i / fs); angle 0 is the first pulse
        i0 = max(0, int(math.floor(float(profile.time_s(a0)) * fs)))
        i1 = min(x.size, int(math.ceil(float(profile.time_s(a1)) * fs)) + 1)
        sub = _sub_profile(profile, i0 / fs, (i1 - 1) / fs)
        part = order_spectrum(x[i0:i1], fs, sub, max_order=max_order, order_resolution=1.0 / seg, window="hann")
        p = np.asarray(part.amplitude, dtype=np.float64) ** 2 * part.n_averages
        power = p if power is None else power + p
        n_avg += part.n_averages
        first = first or part
    amp = np.sqrt(power / n_avg).astype(np.asarray(first.amplitude).dtype)
    amp.setflags(write=False)
    return dataclasses.replace(first, amplitude=amp, n_averages=n_avg)


def _low_band(full, f_keep_hz: float):
    """The band 0..f_keep_hz of the shared rfft as the rfft of a shorter, decimated signal.

    Keeping the first ``m`` bins of the rfft of ``n`` samples and reading them as the
    rfft of ``n' = 2 (m' - 1)`` samples (bins ``m..m'-1`` zero) is an ideal low-pass
    and resampling to ``fs n'/n`` (scaled by ``n'/n`` so amplitudes stay).  Returns
    ``(FullSpectrum, signal)`` or ``None`` when no decimation is possible.
    """
    from .spectrum import FullSpectrum

    df = full.fs / full.n
    m = int(math.ceil(f_keep_hz / df)) + 1
    n_out = _smooth_length(2 * int(math.ceil(m / 0.8)))   # 20 % guard band of zeros below the new Nyquist
    m_out = n_out // 2 + 1
    if n_out >= 0.6 * full.n or m >= full.X.size:
        return None
    X = np.zeros(m_out, dtype=full.X.dtype)
    X[:m] = full.X[:m]
    X *= X.real.dtype.type(n_out / full.n)
    X.setflags(write=False)
    fs_out = full.fs * n_out / full.n
    import scipy.fft

    y = scipy.fft.irfft(X, n_out).astype(np.float32, copy=False)
    return FullSpectrum(X=X, n=n_out, fs=fs_out), y


def _derived(res, name: str, table, model, settings: Settings) -> ShaftTSA:
    """Residual, difference and indicators of one shaft's TSA (``dsp.tsa.TSA``)."""
    from . import indicators as ind
    from .kinematics import gears_on_shaft
    from .tsa import difference_signal, regular_signal, residual_signal

    gears = gears_on_shaft(model, name)
    teeth = tuple((g.label, int(g.teeth)) for g in gears)
    # a sun gear meshes at Z_s (f_sun - f_carrier): not synchronous with its own shaft
    mesh_teeth = tuple(sorted({int(g.teeth) for g in gears if getattr(g, "role", "") != "sun"}))
    avg = np.asarray(res.average)
    spr = int(res.samples_per_rev)
    if mesh_teeth:
        residual = np.asarray(residual_signal(avg, mesh_teeth=mesh_teeth))
        difference = np.asarray(difference_signal(avg, mesh_teeth=mesh_teeth))
        regular = np.asarray(regular_signal(avg, mesh_teeth=mesh_teeth))
    else:  # no gear turns synchronously with this shaft: remove the mean and the first orders
        residual = np.asarray(residual_signal(avg, mesh_teeth=(spr // 2 + 1,)))
        difference = residual
        regular = avg - residual - avg.mean()
    h_max = settings.n_mesh_harmonics
    mesh_orders = [h * z for z in mesh_teeth for h in range(1, h_max + 1) if h * z < spr // 2]
    values = {
        "rms": ind.rms(avg - avg.mean()),
        "kurtosis": ind.kurtosis(avg),
        "fm0": ind.fm0(avg, mesh_orders, samples_per_rev=spr) if mesh_orders else math.nan,
        "fm4": ind.fm4(difference),
        "na4": ind.na4(residual),
        "m6a": ind.m6a(difference),
        "m8a": ind.m8a(difference),
        "er": ind.energy_ratio(difference, regular),
    }
    values = {k: float(v) for k, v in values.items()}
    return ShaftTSA(
        shaft=name,
        shaft_hz=float(table.shaft_hz(name)),
        shaft_order=float(res.shaft_order),
        n_revs=int(res.n_revs),
        samples_per_rev=spr,
        angle_deg=_readonly(np.asarray(res.angle_deg)),
        average=_readonly(avg),
        residual=_readonly(residual),
        difference=_readonly(difference),
        teeth=teeth,
        indicators=values,
    )


def _carriers(table, model):
    """Mesh carriers and candidate shafts (spacings in reference orders) for the sideband search."""
    from .sidebands import Carrier

    orders = {s.name: s.order for s in table.shafts}
    out = []
    for m in table.meshes:
        out.append(Carrier(m.name, m.gmf_order, ((m.driver, orders[m.driver]), (m.driven, orders[m.driven]))))
    for p in table.planetary:
        sun, car = p.sun_shaft, p.carrier_shaft
        # sun gear turns relative to the carrier; the carrier shows through planet passing
        rel = abs(orders[sun] - orders[car])
        out.append(Carrier(p.name, p.mesh_hz / table.reference_hz, ((sun, rel), (car, orders[car])),
                           expected_owner=car))
    return out


def _choose_band(kurt, table, settings: Settings, nyq: float, warn: list[str]) -> tuple[float, float]:
    """The kurtogram band of largest kurtosis that lies above the gear mesh lines and is wide enough.

    The band must start above the highest mesh harmonic analysed (plus its
    sidebands), where the discrete gear lines would otherwise beat with each
    other in the envelope, and be at least 4.5 times the highest bearing defect
    frequency wide so that four harmonics fit in the envelope spectrum
    (band at least about 3 times the highest fault frequency, common practice,
    no source; Randall & Antoni 2011 for the choice by kurtosis).
    """
    gmfs = [m.gmf_hz for m in table.meshes] + [p.mesh_hz for p in table.planetary]
    spacing = max((sh.hz for sh in table.shafts), default=0.0)
    lo_min = (settings.n_mesh_harmonics * max(gmfs) + (settings.n_sideband_orders + 1) * spacing) if gmfs else 0.0
    defects = [max(b.bpfo_hz, b.bpfi_hz, 2 * b.bsf_hz) for b in table.bearings]
    width_min = 4.5 * max(defects + [4 * spacing])
    lo_min = min(lo_min, 0.5 * nyq)
    width_min = min(width_min, 0.5 * nyq)
    best = None
    for kurts, edges in zip(kurt.kurtosis, kurt.band_edges_hz):
        kurts = np.asarray(kurts, dtype=float)
        edges = np.asarray(edges, dtype=float)
        for i, k in enumerate(kurts):
            lo, hi = float(edges[i]), float(edges[i + 1])
            if lo >= lo_min and hi - lo >= width_min and np.isfinite(k) and (best is None or k > best[0]):
                best = (float(k), lo, hi)
    if best is None:
        lo = max(lo_min, 0.5 * nyq)
        warn.append(f"no kurtogram band lies above the mesh harmonics; the envelope uses {lo:.0f}-{nyq:.0f} Hz.")
        return (lo, nyq * 0.98)
    return (best[1], best[2])


def _order_tracked_envelope(full, band_hz, profile, band_source: str):
    """Squared-envelope spectrum resampled to the reference shaft angle, in Hz at the mean speed.

    The complex envelope of the band (cut from the shared rfft) is squared,
    resampled at equal steps of the reference shaft angle (linear interpolation
    of the smooth squared envelope; computed order tracking of the envelope) and
    transformed; the order axis is multiplied by the mean speed so that the lines
    fall where the frequency table of the mean speed puts them however the speed
    wandered.

    References
    ----------
    .. [1] R. B. Randall, J. Antoni, "Rolling element bearing diagnostics - A
       tutorial", Mech. Syst. Signal Process. 25 (2011) 485-520 (order track first
       when the speed varies).
    .. [2] K. R. Fyfe, E. D. S. Munck, "Analysis of computed order tracking",
       Mech. Syst. Signal Process. 11(2) (1997) 187-205.
    """
    from .envelope import EnvelopeSpectrum, analytic_band_from_rfft

    band = analytic_band_from_rfft(full, band_hz, decimate=True)
    c = band.values
    e2 = (c.real.astype(np.float64) ** 2 + c.imag.astype(np.float64) ** 2)
    t = np.arange(e2.size) / band.sample_rate_hz
    a0 = float(profile.angle_rev(t[0]))
    a1 = float(profile.angle_rev(t[-1]))
    first, last = math.ceil(a0), math.floor(a1)
    n_revs = last - first
    p = int(2 ** math.ceil(math.log2(max(band.sample_rate_hz / profile.min_hz, 8))))
    theta = first + np.arange(n_revs * p) / p
    y = np.interp(profile.time_s(theta), t, e2)
    y -= y.mean()
    amp = np.abs(np.fft.rfft(y)) * (2.0 / y.size)
    order = np.arange(amp.size) / n_revs
    ro = order * profile.mean_hz
    ro.setflags(write=False)
    amp.setflags(write=False)
    return EnvelopeSpectrum(freq_hz=ro, amplitude=amp, band_hz=band.band_hz, band_source=band_source, squared=True,
                            sample_rate_hz=p * profile.mean_hz, window="rectangular", scaling="peak")


def _envelope_targets(table):
    from .suspects import EnvelopeTarget

    targets = [EnvelopeTarget(f"shaft:{s.name}", "shaft rate", f"{s.name} rate", s.name, s.hz, None, 0.0)
               for s in table.shafts]
    for b in table.bearings:
        comp = f"bearing:{b.name}"
        targets += [
            EnvelopeTarget(comp, "bearing outer race", "BPFO", b.shaft, b.bpfo_hz),
            EnvelopeTarget(comp, "bearing inner race", "BPFI", b.shaft, b.bpfi_hz, b.shaft_hz),
            EnvelopeTarget(comp, "bearing rolling element", "2xBSF", b.shaft, 2 * b.bsf_hz, b.ftf_hz),
            EnvelopeTarget(comp, "bearing cage", "FTF", b.shaft, b.ftf_hz),
        ]
    return targets


def _envelope_peaks(freq_hz, amplitude, matches, n_peaks: int = 10, min_gap_lines: int = 3) -> list[dict[str, Any]]:
    """The largest local maxima of the envelope spectrum, labelled.

    Peaks closer than ``min_gap_lines`` lines or 1 % of their frequency to a
    larger one (a line broadened by bearing slip) are left out.

    A line claimed by several families gets the label of the family with the
    most clear harmonics, then the one whose lines lie closest to its expected
    values.
    """
    f = np.asarray(freq_hz, dtype=float)
    a = np.asarray(amplitude, dtype=float)
    if a.size < 3:
        return []
    inner = np.flatnonzero((a[1:-1] > a[:-2]) & (a[1:-1] >= a[2:])) + 1
    inner = inner[f[inner] > 0]
    chosen: list[int] = []
    for i in inner[np.argsort(a[inner])[::-1]]:
        if all(abs(int(i) - j) > max(min_gap_lines, 0.01 * i) for j in chosen):
            chosen.append(int(i))
        if len(chosen) == n_peaks:
            break
    df = f[1] - f[0]

    def rank(m):
        dev = [abs(h.found_hz / (h.harmonic * m.expected_hz) - 1) for h in m.hits if h.clear] or [1.0]
        return (m.n_clear, -float(np.mean(dev)))

    from .suspects import counted_hits

    labels: dict[int, str] = {}
    for m in sorted(matches, key=rank):  # the best family writes last
        for h in counted_hits(m.hits, df):
            labels[int(round(h.found_hz / df))] = f"{h.harmonic}x {m.label} ({m.component})"
    # higher harmonics of a family that stands clear (two harmonics or more)
    for m in sorted(matches, key=rank, reverse=True):
        hits = counted_hits(m.hits, df)
        if len(hits) < 2:
            continue
        base = hits[0].found_hz
        for i in chosen:
            k = int(round(f[i] / base))
            if i not in labels and k >= 1 and abs(f[i] - k * base) <= max(1.5 * df, 0.01 * k * base):
                labels[i] = f"{k}x {m.label} ({m.component})"
    return [{"hz": float(f[i]), "amplitude": float(a[i]), "label": labels.get(i)} for i in sorted(chosen)]


# ---------------------------------------------------------------------------
# analyze


def analyze(recording, model, settings: Settings = Settings(), progress: ProgressFn | None = None,
            cancel: CancelFn | None = None) -> Analysis:
    """Analyse one recording against its gear-train model.

    Parameters
    ----------
    recording : dsp.recording.Recording
        The recording (raw channels).
    model : dsp.model.GearTrain
        The gear-train model; its sensors, tach, shafts, meshes and bearings.
    settings : Settings
        Processing settings (sensor, time range, window, envelope band, ...).
    progress : callable, optional
        ``progress(fraction, text)`` called between steps, fraction 0..1.
    cancel : callable, optional
        ``cancel()`` returning True stops the analysis with
        :class:`dsp.errors.Cancelled` at the next check.

    Returns
    -------
    Analysis

    Raises
    ------
    AnalysisError
        The sensor index, the time range or the signal cannot be analysed
        (flat, mostly non-finite).
    TachError
        Neither tach pulses nor a nominal speed give the speed.
    Cancelled
        ``cancel()`` returned True.

    Notes
    -----
    Non-finite samples (up to 5 % of the range) are set to zero in a copy with
    a warning; more make the analysis fail.  A shaft that turns fewer than 3
    times in the range gets no TSA (warning); the other results stay.  The
    suspects are an aid to the analyst's judgement, not a verdict.

    References
    ----------
    .. [1] R. B. Randall, *Vibration-based Condition Monitoring*, Wiley, 2011
       (the sequence: order tracking, TSA, envelope, cepstrum).
    .. [2] R. B. Randall, J. Antoni, "Rolling element bearing diagnostics - A
       tutorial", Mech. Syst. Signal Process. 25 (2011) 485-520.
    """
    from .kinematics import frequency_table, shaft_orders
    from .sidebands import measure_sidebands
    from .suspects import rank_suspects, score_components

    step = _Steps(progress, cancel)
    warn: list[str] = []
    step(0.0, "reading the sensor signal")
    sensor, fs, i0, i1, x, quality = _signal(recording, model, settings, warn)

    step(0.05, "speed of the reference shaft")
    reference = model.tach.shaft or model.shafts[0].name
    profile, pulses, estimate = reference_speed(recording, model, x, i0, i1, reference, warn)
    spread = (profile.max_hz - profile.min_hz) / profile.mean_hz if profile.mean_hz > 0 else 0.0
    if spread > SPEED_SPREAD_WARN:
        warn.append(
            f"speed spread too large for Hz spectra: the reference shaft ran from {60 * profile.min_hz:.0f} to "
            f"{60 * profile.max_hz:.0f} rpm ({100 * spread:.0f} %); trust the order spectrum and TSA, "
            "not the Hz spectrum."
        )
    table = frequency_table(model, float(profile.mean_hz), reference)
    orders = {k: abs(float(v)) for k, v in shaft_orders(model, reference).items()}
    _nyquist_warnings(table, fs, spread, settings, warn)

    # Memory: the steps that need the time signal (kurtogram, TSA, moments) run first, so
    # that the signal is released when the full-length rfft has been taken; the Hz spectrum
    # and the velocity spectrum are made after the parts that need the rfft are done.
    kurt = None
    if settings.envelope_band_hz is None:
        step(0.1, "envelope band (kurtogram)")
        from .envelope import fast_kurtogram

        kurt = fast_kurtogram(x, fs, max_level=settings.kurtogram_max_level)

    tsas = _tsa_step(x, fs, profile, orders, table, model, settings, warn, step)

    step(0.5, "spectrum")
    overall = _overall(x, math.nan, quality)
    full = _rfft(x, fs)
    max_order = _max_order(table, settings, fs, profile)
    low = _low_band(full, 1.3 * max_order * profile.max_hz)
    low_full, lx, lfs = (low[0], low[1], low[0].fs) if low is not None else (full, x, fs)
    del low, x  # the time signal is no longer needed (lx keeps it when no decimation was possible)
    max_order = float(min(max_order, 0.45 * lfs / profile.max_hz))
    spectrum, zoom = _spectra(full, sensor, settings, table)

    step(0.6, "envelope")
    env, env_tracked, kurt, matches = _envelope_step(full, fs, table, settings, profile, spread, warn, kurt)
    # the cepstrum of the low band (mesh harmonics and their sidebands) from the shared rfft
    from .cepstrum import cepstrum_from_rfft

    ceps = cepstrum_from_rfft(low_full)
    del full, low_full  # everything that needs the full-length rfft has it now
    vel, velocity_rms = _velocity(fs, sensor, settings, spectrum)
    overall["velocity_rms_mm_s"] = velocity_rms
    averaged = _averaged_spectrum(spectrum, settings)

    step(0.7, "order spectrum")
    ospec = _order_spectrum(lx, lfs, profile, max_order, check=step.check)
    del lx

    step(0.8, "cepstrum rahmonics")
    ceps_prominence, ceps_support = _cepstrum_support(ceps, table)
    support = {k: v for k, v in ceps_support.items() if np.isfinite(v)}

    step(0.87, "sideband families")
    rel_err = 0.0 if profile.source == "tach" else (0.005 if profile.source == "estimated" else 0.02)
    fams = measure_sidebands(
        np.asarray(ospec.order), np.asarray(ospec.amplitude), _carriers(table, model),
        reference_hz=table.reference_hz, n_mesh_harmonics=settings.n_mesh_harmonics,
        n_sideband_orders=settings.n_sideband_orders, relative_speed_error=rel_err,
        tsa_std={t.shaft: t.indicators.get("rms", math.nan) for t in tsas}, cepstrum_support=support,
    )

    step(0.95, "suspects")
    suspects = rank_suspects(tsas, fams, matches, threshold=settings.alarm_threshold, cepstrum_support=support)
    all_scores = score_components(tsas, fams, matches, cepstrum_support=support)
    step(1.0, "done")

    rec = {
        "path": recording.path,
        "sha256": recording.sha256,
        "sample_rate_hz": fs,
        "duration_s": float(recording.duration_s),
        "channels": int(recording.n_channels),
        "sensor": {"name": sensor.name, "channel": int(sensor.channel), "units": sensor.units},
        "t_start_s": i0 / fs,
        "t_end_s": i1 / fs,
    }
    return Analysis(
        settings=settings,
        model=model,
        recording=rec,
        frequencies=table,
        speed=profile,
        tach=pulses,
        spectrum=spectrum,
        velocity_spectrum=vel,
        order_spectrum=ospec,
        tsa=tuple(tsas),
        envelope=env,
        kurtogram=kurt,
        cepstrum=ceps,
        overall=overall,
        sidebands=tuple(fams),
        envelope_matches=tuple(matches),
        suspects=tuple(suspects),
        warnings=tuple(warn),
        extras={
            "zoom": zoom,
            "averaged_spectrum": averaged,
            "quality": quality,
            "cepstrum_support": ceps_support,
            "cepstrum_prominence": ceps_prominence,
            "all_scores": all_scores,
            "speed_spread": spread,
            "envelope_order_tracked": env_tracked,
            # how the speed was found without a tach (None with a tach or at the nominal speed)
            "speed_estimate": None if estimate is None else {
                "method": estimate.method, "mesh": estimate.mesh, "harmonic": estimate.harmonic},
        },
    )


# ---------------------------------------------------------------------------
# the steps of analyze


def _signal(recording, model, settings: Settings, warn: list[str]):
    """The sensor, the time range and the sensor signal, with its quality checked."""
    from .errors import AnalysisError
    from .recording import sensor_signal, signal_quality

    if not isinstance(settings, Settings):
        raise AnalysisError(f"settings must be dsp.analysis.Settings, got {type(settings).__name__}")
    if not model.sensors:
        raise AnalysisError("the model has no sensor; add a [[sensors]] block naming the accelerometer channel")
    if not 0 <= settings.sensor_index < len(model.sensors):
        raise AnalysisError(
            f"sensor index {settings.sensor_index} does not exist; the model has {len(model.sensors)} "
            f"sensor(s) (0 to {len(model.sensors) - 1})"
        )
    sensor = model.sensors[settings.sensor_index]
    fs = float(recording.sample_rate_hz)
    i0, i1 = _time_range(settings, recording.n_frames, fs)
    x = sensor_signal(recording, sensor)[i0:i1]
    quality = signal_quality(x)
    if quality.n_nonfinite:
        frac = quality.n_nonfinite / x.size
        if frac > MAX_NONFINITE_FRACTION:
            raise AnalysisError(
                f"{quality.n_nonfinite} of {x.size} samples of sensor {sensor.name!r} are NaN or infinite "
                f"({100 * frac:.1f} %); repair the file or analyse a time range without them"
            )
        x = np.where(np.isfinite(x), x, np.float32(0)).astype(np.float32)
        warn.append(
            f"{quality.n_nonfinite} samples of sensor {sensor.name!r} are NaN or infinite; they were set to 0 "
            "for this analysis, and results near them are unreliable."
        )
    if quality.flat:
        raise AnalysisError(
            f"sensor {sensor.name!r} (channel {sensor.channel}) is flat over the range analysed; "
            "check the channel number and the sensor cable"
        )
    if quality.clipped:
        warn.append(
            f"clipping invalidates kurtosis, crest factor and FM4: {100 * quality.clipped_fraction:.2f} % of the "
            f"samples of sensor {sensor.name!r} sit at the rail; re-record with a larger range if you can."
        )
    return sensor, fs, i0, i1, x, quality


def _nyquist_warnings(table, fs: float, spread: float, settings: Settings, warn: list[str]) -> None:
    nyq = fs / 2.0
    top = [(m.name, m.gmf_hz) for m in table.meshes] + [(p.name, p.mesh_hz) for p in table.planetary]
    for name, gmf in top:
        h_max = int(nyq // (gmf * (1 + spread / 2))) if gmf > 0 else settings.n_mesh_harmonics
        if h_max < settings.n_mesh_harmonics:
            warn.append(
                f"sample rate too low for the mesh harmonics asked for: {fs:g} Hz reaches harmonic {h_max} of "
                f"{name} ({gmf:.1f} Hz), not {settings.n_mesh_harmonics}; record faster or ask for fewer harmonics."
            )


def _rfft(x, fs: float):
    """The one full-length rfft of the sensor signal (``dsp.spectrum.rfft_full``)."""
    from .spectrum import rfft_full

    return rfft_full(x, fs)


def _spectra(full, sensor, settings: Settings, table):
    """What the one full rfft gives directly: the Hz spectrum and the zoom band."""
    from .spectrum import spectrum_from_rfft, zoom_spectrum

    nyq = full.fs / 2.0
    spectrum = spectrum_from_rfft(full, window=settings.window, scaling=settings.spectrum_scaling, units=sensor.units)
    zoom = None
    top = [m.gmf_hz for m in table.meshes] + [p.mesh_hz for p in table.planetary]
    if top and top[0] < nyq:
        span = max(8 * max(s.hz for s in table.shafts), 20 * full.resolution_hz)
        zoom = zoom_spectrum(full, None, top[0], span, window=settings.window, scaling=settings.spectrum_scaling,
                             units=sensor.units)
    return spectrum, zoom


def _averaged_spectrum(spectrum, settings: Settings):
    """The Hz spectrum with lines ``settings.spectrum_resolution_hz`` apart (Daniell band averaging).

    Grouped from the full-resolution spectrum (``dsp.spectrum.band_spectrum``), so it
    costs one pass over the lines and no FFT.
    """
    from .errors import AnalysisError
    from .spectrum import band_spectrum

    res = settings.spectrum_resolution_hz
    if isinstance(res, bool) or not isinstance(res, (int, float)) or not (math.isfinite(res) and res > 0):
        raise AnalysisError(f"settings.spectrum_resolution_hz={res!r} must be a positive line spacing in Hz; "
                            "give for example 0.5")
    return band_spectrum(spectrum, float(res))


def _velocity(fs: float, sensor, settings: Settings, spectrum):
    """Velocity spectrum of the Hz spectrum and the velocity RMS in its band (mm/s)."""
    from .spectrum import band_rms, velocity_spectrum

    vel = velocity_spectrum(spectrum, units=sensor.units if sensor.units in ("g", "m/s2") else "g",
                            cutoff_hz=max(2.0, 0.5 * settings.velocity_band_hz[0]))
    lo, hi = settings.velocity_band_hz
    return vel, float(band_rms(vel, lo, min(hi, fs / 2.0)))


def _max_order(table, settings: Settings, fs: float, profile) -> float:
    """Highest order of the order spectrum: the mesh harmonics asked for, below Nyquist."""
    max_gmf_order = max([m.gmf_order for m in table.meshes] + [p.mesh_hz / table.reference_hz for p in table.planetary]
                        + [1.0])
    max_order = settings.max_order
    if max_order is None:
        max_order = (settings.n_mesh_harmonics + 0.5) * max_gmf_order
    return float(min(max_order, 0.45 * fs / profile.max_hz))


def _envelope_step(full, fs: float, table, settings: Settings, profile, spread: float, warn: list[str], kurt):
    """Envelope band (user, or from the kurtogram ``kurt``), squared-envelope spectrum and the family matches."""
    from .envelope import envelope_spectrum
    from .suspects import match_envelope

    if settings.envelope_band_hz is not None:
        band = tuple(float(v) for v in settings.envelope_band_hz)
        band_source = "user"
        kurt = None
    else:
        band = _choose_band(kurt, table, settings, fs / 2.0, warn)
        band_source = "kurtogram"
    env = envelope_spectrum(full, fs, band, band_source=band_source)
    tracked = None
    if spread > ENVELOPE_ORDER_TRACK_SPREAD and profile.n_revs >= MIN_TSA_REVS:
        tracked = _order_tracked_envelope(full, band, profile, band_source)
        warn.append(
            f"the speed varied by {100 * spread:.0f} %: bearing and shaft families were searched in the "
            "order-tracked squared-envelope spectrum (Hz at the mean speed)."
        )
    searched = tracked if tracked is not None else env
    matches = match_envelope(searched.freq_hz, searched.amplitude, _envelope_targets(table))
    return env, tracked, kurt, matches


def _tsa_step(x, fs: float, profile, orders, table, model, settings: Settings, warn: list[str], step) -> list[ShaftTSA]:
    """TSA of every shaft that turns at least MIN_TSA_REVS times (full band: impacts ring high)."""
    from .tsa import tsa_shafts

    eligible: dict[str, float] = {}
    for name in [s.name for s in model.shafts]:
        revs_in_range = profile.n_revs * orders[name]
        if revs_in_range < MIN_TSA_REVS:
            warn.append(
                f"short record: shaft {name} turns {revs_in_range:.1f} times in the range analysed, fewer than "
                f"{MIN_TSA_REVS}; its TSA is skipped (analyse a longer record)."
            )
            continue
        eligible[name] = orders[name]
    tsas: list[ShaftTSA] = []
    if eligible:
        step(0.15, "TSA of shafts " + ", ".join(eligible))
        results = tsa_shafts(x, fs, profile, eligible, samples_per_rev=settings.tsa_samples_per_rev)
        for k, (name, res) in enumerate(zip(eligible, results)):
            step(0.35 + 0.1 * k / len(eligible), f"TSA indicators of shaft {name}")
            tsas.append(_derived(res, name, table, model, settings))
    return tsas


def _cepstrum_support(ceps, table) -> tuple[dict[str, float], dict[str, float]]:
    """Rahmonic prominence at each shaft's period and the support (0..1) it gives."""
    from .cepstrum import rahmonic_strength
    from .errors import GearbenchError

    prominence: dict[str, float] = {}
    support: dict[str, float] = {}
    for s in table.shafts:
        try:
            prom = float(rahmonic_strength(ceps, s.hz).prominence)
        except GearbenchError:  # the rahmonics lie beyond the cepstrum: no support either way
            prom = float("nan")
        prominence[s.name] = prom
        support[s.name] = _ramp(prom, *CEPSTRUM_PROMINENCE_RAMP) if math.isfinite(prom) else float("nan")
    return prominence, support


# ---------------------------------------------------------------------------
# JSON


def _counted(m):
    from .suspects import counted_hits

    return counted_hits(m.hits, m.resolution_hz if math.isfinite(m.resolution_hz) else 0.0)


def _matched_axes(a: Analysis):
    """The envelope spectrum the families were matched in (order-tracked when the speed varied)."""
    env = a.extras.get("envelope_order_tracked") or a.envelope
    return env.freq_hz, env.amplitude


def _json_dict(a: Analysis) -> dict[str, Any]:
    from .indicators import TSA_KEYS

    freq = a.frequencies.to_json_dict()
    sp = a.speed
    env = a.envelope
    return {
        "schema": SCHEMA,
        "recording": dict(a.recording),
        "speed": {
            "source": sp.source,
            "reference_shaft": sp.shaft,
            "mean_hz": sp.mean_hz,
            "min_hz": sp.min_hz,
            "max_hz": sp.max_hz,
            "mean_rpm": 60.0 * sp.mean_hz,
            "n_revs": sp.n_revs,
            "tach": a.tach.to_json_dict() if a.tach is not None else None,
        },
        "shafts": freq["shafts"],
        "meshes": freq["meshes"],
        "planetary": freq["planetary"],
        "bearings": freq["bearings"],
        "overall": dict(a.overall, units=a.recording["sensor"]["units"],
                        velocity_band_hz=list(a.settings.velocity_band_hz)),
        "tsa": [
            {"shaft": t.shaft, "averages": t.n_revs, "shaft_hz": t.shaft_hz, "samples_per_rev": t.samples_per_rev,
             **{k: t.indicators.get(k) for k in TSA_KEYS}}
            for t in a.tsa
        ],
        "sidebands": [
            {"mesh": f.mesh, "harmonic": f.harmonic, "carrier_hz": f.carrier_hz, "carrier_order": f.carrier_order,
             "owner_shaft": f.owner_shaft, "spacing_hz": f.spacing_hz, "spacing_order": f.spacing_order,
             "n_found": f.n_found, "expected": bool(getattr(f, "expected", False)),
             "sideband_index": f.sideband_index,
             "sideband_level_factor": f.sideband_level_factor, "candidates": f.candidates,
             "evidence": list(f.evidence)}
            for f in a.sidebands
        ],
        "envelope": {
            "band_hz": [float(v) for v in env.band_hz],
            "band_source": env.band_source,
            "peaks": _envelope_peaks(*_matched_axes(a), a.envelope_matches),
            "order_tracked": a.extras.get("envelope_order_tracked") is not None,
            "matches": [
                {"component": m.component, "kind": m.kind, "label": m.label, "shaft": m.shaft,
                 "expected_hz": m.expected_hz, "n_clear": m.n_clear,
                 "found_hz": [h.found_hz for h in _counted(m)],
                 "evidence": list(m.evidence)}
                for m in a.envelope_matches if m.found
            ],
        },
        "suspects": [
            {"component": s.component, "kind": s.kind, "score": s.score, "evidence": list(s.evidence),
             "view": s.view, "shaft": s.shaft, "caution": getattr(s, "caution", CAUTION)}
            for s in a.suspects
        ],
        "warnings": list(a.warnings),
        "caution": CAUTION,
        "settings": {k: (list(v) if isinstance(v, tuple) else v) for k, v in a.settings.__dict__.items()},
    }
