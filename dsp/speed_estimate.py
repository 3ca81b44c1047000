"""Shaft speed from the vibration signal when the recording has no tach.

Three levels, best first:

``"mesh phase"``
    A gear-mesh harmonic that stands clear of the noise within +-search_pct of its
    nominal frequency is band-pass filtered (FFT band shifted to 0 Hz), its phase is
    unwrapped and divided by the mesh order: that is the reference shaft's angle at
    every instant (Bonnardot et al. 2005).  The profile follows the speed wander.
``"spectrum peak"``
    The mesh line is found but its phase cannot be followed: the mean speed comes
    from the power centroid of the line (constant-speed profile).
``"nominal"``
    Nothing stands clear: the nominal speed is used as given.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np

from .errors import AnalysisError

__all__ = ["SpeedEstimate", "MeshLine", "estimate_speed", "mesh_lines"]

METHODS = ("mesh phase", "spectrum peak", "nominal")


@dataclass(frozen=True)
class MeshLine:
    """A mesh harmonic that can carry the speed.

    Attributes
    ----------
    mesh : str
        Mesh or planetary stage name.
    harmonic : int
        Harmonic number h.
    order : float
        Frequency / reference-shaft speed (h x teeth x shaft order).
    """

    mesh: str
    harmonic: int
    order: float
    planetary: bool = False


@dataclass(frozen=True)
class SpeedEstimate:
    """Result of :func:`estimate_speed`.

    Attributes
    ----------
    profile : SpeedProfile
        Speed profile of the reference shaft (source ``"estimated"``, or ``"nominal"``
        when method is ``"nominal"``).
    method : {"mesh phase", "spectrum peak", "nominal"}
    mesh : str
        Mesh whose harmonic was used ("" for the nominal method).
    harmonic : int
        Harmonic used (0 for the nominal method).
    mesh_order : float
        Order of that harmonic on the reference shaft.
    nominal_hz, mean_hz : float
        Nominal and estimated mean speed of the reference shaft, Hz.
    snr_db : float
        Quality: the line's smoothed power peak over the median power of its search
        band, dB (nan for the nominal method).
    phase_noise_rad : float
        Quality of the mesh-phase method: RMS phase noise of the demodulated
        harmonic, rad, from second differences (nan otherwise).
    band_hz : tuple of float
        Pass band used for the demodulation, Hz.
    """

    profile: object
    method: str
    mesh: str
    harmonic: int
    mesh_order: float
    nominal_hz: float
    mean_hz: float
    snr_db: float = float("nan")
    phase_noise_rad: float = float("nan")
    band_hz: tuple[float, float] = (float("nan"), float("nan"))

    @property
    def offset_pct(self) -> float:
        """Estimated mean speed relative to the nominal, percent."""
        return 100.0 * (self.mean_hz / self.nominal_hz - 1.0)


def mesh_lines(train, reference_shaft: str, *, n_harmonics: int = 3) -> list[MeshLine]:
    """Mesh harmonics of a train as orders of the reference shaft.

    Parallel meshes: ``h Z_driver r_driver``; planetary stages (ring fixed):
    ``h Z_ring r_carrier``, with shaft orders ``r`` from
    :func:`dsp.kinematics.shaft_orders`.
    """
    from .kinematics import shaft_orders

    orders = shaft_orders(train, reference_shaft)
    out = []
    for m in train.meshes:
        base = orders[m.driver] * m.driver_teeth
        out += [MeshLine(m.name, h, h * base) for h in range(1, n_harmonics + 1)]
    for g in train.planetary:
        base = orders[g.carrier_shaft] * g.ring_teeth
        out += [MeshLine(g.name, h, h * base, True) for h in range(1, n_harmonics + 1)]
    return out


def _smooth(p: np.ndarray, width: int) -> np.ndarray:
    if width <= 1:
        return p
    k = np.ones(width) / width
    return np.convolve(p, k, mode="same")


def _constant_profile(hz: float, duration_s: float, shaft: str, source: str):
    from .tach import SpeedProfile

    return SpeedProfile.from_knots([0.0, duration_s], [0.0, hz * duration_s], shaft=shaft, source=source)


def estimate_speed(x, fs, train, *, nominal_rpm: float, reference_shaft: str, search_pct: float = 10.0,
                   n_harmonics: int = 3, min_snr_db: float = 12.0) -> SpeedEstimate:
    """Estimate the reference shaft's speed profile from a gearbox vibration signal.

    Parameters
    ----------
    x : array_like
        One accelerometer channel; sample ``i`` at ``i / fs`` s.  Not modified.
    fs : float
        Sampling rate, Hz.
    train : GearTrain
        The gear-train model (meshes, planetary stages).
    nominal_rpm : float
        Nominal speed of ``reference_shaft``, rpm.
    reference_shaft : str
        Shaft whose speed is estimated (order 1).
    search_pct : float, optional
        The true mean speed lies within +-search_pct % of the nominal (default 10).
    n_harmonics : int, optional
        Mesh harmonics tried per mesh (default 3).
    min_snr_db : float, optional
        A mesh harmonic must stand this far above the median of its search band.

    Returns
    -------
    SpeedEstimate

    Notes
    -----
    Every mesh harmonic whose search band ``F (1 +- search_pct/100)`` lies below
    0.45 fs and holds no other mesh line is scored by the peak of its smoothed power
    spectrum over the band's median (``snr_db``); parallel meshes above ``min_snr_db``
    are preferred to planetary ones (whose spectrum is shaped by the planets passing).  For the best one the occupied band
    (power above 1 % of the peak, plus two shaft rates) is cut out of the record's FFT,
    shifted to 0 Hz and inverse transformed; the unwrapped phase plus the shift,
    divided by ``2 pi x order``, is the reference shaft's angle in revolutions
    (knots of the profile at the decimated rate, record ends trimmed by a few
    periods of the band).  Phase changes faster than half the shaft rate are removed
    (they come from the gear's own modulation and from noise), so the profile tracks
    speed changes slower than that.

    References
    ----------
    .. [1] F. Bonnardot, M. El Badaoui, R. B. Randall, J. Daniere and F. Guillet,
       "Use of the acceleration signal of a gearbox in order to perform angular
       resampling (with limited speed fluctuation)", Mechanical Systems and Signal
       Processing 19(4), 766-785, 2005.
    .. [2] P. D. McFadden and J. D. Smith, "An explanation for the asymmetry of the
       modulation sidebands about the tooth meshing frequency in epicyclic gear
       vibration", Proc. IMechE C 199(1), 65-70, 1985.
    """
    arr = np.asarray(x)
    if arr.ndim != 1 or arr.size < 64:
        raise AnalysisError("x must be one channel with at least 64 samples; pass one accelerometer channel")
    if not np.all(np.isfinite(arr)):
        raise AnalysisError("the signal contains NaN or infinite samples; repair or cut them out first")
    fs = float(fs)
    if not (math.isfinite(fs) and fs > 0):
        raise AnalysisError(f"sample rate {fs} Hz must be positive; check the recording header")
    rpm = float(nominal_rpm)
    if not (math.isfinite(rpm) and rpm > 0):
        raise AnalysisError(f"nominal speed {rpm} rpm must be positive; set tach.nominal_rpm in the model",
                            field="tach.nominal_rpm")
    s = float(search_pct) / 100.0
    if not (0 < s < 0.5):
        raise AnalysisError(f"search_pct={search_pct} must be between 0 and 50 percent")
    f_nom = rpm / 60.0
    n = arr.shape[0]
    duration = n / fs
    lines = mesh_lines(train, reference_shaft, n_harmonics=int(n_harmonics))
    nominal = SpeedEstimate(profile=_constant_profile(f_nom, duration, reference_shaft, "nominal"),
                            method="nominal", mesh="", harmonic=0, mesh_order=float("nan"),
                            nominal_hz=f_nom, mean_hz=f_nom)
    if not lines:
        return nominal
    import scipy.fft

    xd = np.asarray(arr, dtype=np.float64)
    xd = xd - xd.mean()
    X = scipy.fft.rfft(xd)
    w = np.hanning(n)   # windowed power only for scoring the lines
    pw = np.abs(scipy.fft.rfft(xd * w)) ** 2
    df = fs / n
    best = None
    for line in lines:
        F = line.order * f_nom
        lo, hi = F * (1 - s), F * (1 + s)
        if hi >= 0.45 * fs or lo <= 0:
            continue
        clash = any(abs(o.order - line.order) > 1e-9 * line.order and
                    abs(o.order * f_nom - F) < 2 * s * F for o in lines)
        if clash:
            continue
        k_lo, k_hi = int(math.ceil(lo / df)), int(math.floor(hi / df))
        if k_hi - k_lo < 8:
            continue
        band = pw[k_lo:k_hi + 1]
        sm = _smooth(band, max(1, int(round(0.002 * F / df))))
        med = float(np.median(band))
        if med <= 0:
            continue
        snr = 10 * math.log10(float(sm.max()) / med)
        # a parallel mesh that stands clear beats any planetary line: a fixed sensor sees the
        # planetary mesh modulated by the planets passing, so its strongest line is often a
        # sideband at f_m +- k N_p f_c rather than f_m itself (McFadden & Smith 1985)
        rank = (snr >= min_snr_db and not line.planetary, snr)
        if best is None or rank > best[-1]:
            best = (snr, line, k_lo, k_hi, sm, rank)
    if best is None or best[0] < min_snr_db:
        return nominal if best is None else replace(nominal, snr_db=best[0])
    snr, line, k_lo, k_hi, sm, _ = best
    # power centroid of the occupied band -> mean speed ("spectrum peak" level)
    occ = np.nonzero(sm >= 0.01 * sm.max())[0]
    o_lo, o_hi = k_lo + occ[0], k_lo + occ[-1]
    pb = pw[o_lo:o_hi + 1]
    fc = float(np.sum(np.arange(o_lo, o_hi + 1) * pb) / np.sum(pb)) * df
    mean_peak = fc / line.order
    peak_est = SpeedEstimate(profile=_constant_profile(mean_peak, duration, reference_shaft, "estimated"),
                             method="spectrum peak", mesh=line.mesh, harmonic=line.harmonic,
                             mesh_order=line.order, nominal_hz=f_nom, mean_hz=mean_peak, snr_db=snr)
    # phase demodulation of the harmonic ("mesh phase" level)
    margin = 2.0 * f_nom * (1 + s)               # two shaft rates for the sidebands
    b_lo = max(o_lo * df - margin, line.order * f_nom * (1 - s))
    b_hi = min(o_hi * df + margin, line.order * f_nom * (1 + s))
    kc = int(round(fc / df))
    j_lo, j_hi = int(math.floor(b_lo / df)), int(math.ceil(b_hi / df))
    half = max(kc - j_lo, j_hi - kc)
    M = scipy.fft.next_fast_len(int(2.5 * half) + 8)
    Z = np.zeros(M, dtype=complex)
    Z[: j_hi - kc + 1] = X[kc:j_hi + 1]
    Z[M - (kc - j_lo):] = X[j_lo:kc]
    z = scipy.fft.ifft(Z)
    fs_d = fs * M / n
    t = np.arange(M) / fs_d
    phase = np.unwrap(np.angle(z)) + 2 * np.pi * (kc * df) * t
    trim = min(M // 8, int(math.ceil(3 * fs_d / max(b_hi - b_lo, df))))
    sel = slice(trim, M - trim)
    ph = phase[sel]
    d2 = np.diff(ph, 2)
    noise = float(np.sqrt(np.mean(d2 * d2) / 6.0)) if d2.size else float("nan")
    # keep the slow speed changes only: phase wobble at the shaft rate and above comes from
    # the gear's own modulation (sidebands) and noise, not from speed (low-pass at f/2)
    line_fit = ph[0] + (ph[-1] - ph[0]) * np.arange(ph.size) / (ph.size - 1)
    dev = scipy.fft.rfft(ph - line_fit)
    f_dev = np.arange(dev.size) * fs_d / ph.size
    dev[f_dev > 0.5 * f_nom * (1 - s)] = 0.0
    ph = line_fit + scipy.fft.irfft(dev, n=ph.size)
    angle = ph / (2 * np.pi * line.order)
    tk = t[sel]
    if angle.size < 4 or not np.all(np.diff(angle) > 0):
        return peak_est
    from .tach import SpeedProfile

    prof = SpeedProfile.from_knots(tk, angle - angle[0], shaft=reference_shaft, source="estimated")
    if abs(prof.mean_hz / f_nom - 1) > s * 1.5:
        return peak_est
    return SpeedEstimate(profile=prof, method="mesh phase", mesh=line.mesh, harmonic=line.harmonic,
                         mesh_order=line.order, nominal_hz=f_nom, mean_hz=prof.mean_hz, snr_db=snr,
                         phase_noise_rad=noise, band_hz=(j_lo * df, j_hi * df))
