"""Computed order tracking: angular resampling and the order spectrum.

A signal sampled in time is resampled at equal increments of shaft angle, so that
components locked to the shaft (gear mesh, shaft harmonics) become fixed lines in
the spectrum of the resampled signal even when the speed wanders.

Resampling: the times of the angle samples come from the speed profile
(``profile.time_s``); the signal is low-pass filtered first when the angular
sampling rate can fall below the time sampling rate (zero-phase, in the frequency
domain), upsampled in the same step when its band reaches above fs/16, and then
interpolated with a 4-point cubic Lagrange polynomial.  With the content below 1/16
of the (upsampled) sampling rate, the Lagrange remainder bounds the interpolation
error by ``(2 pi / 16)**4 * 9/16 / 24 = 5.6e-4`` of a component's amplitude.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .errors import AnalysisError, GearbenchError

__all__ = ["AngularSignal", "OrderSpectrum", "angular_resample", "order_spectrum"]

_NU_MAX = 1.0 / 16.0         # highest content / sampling rate fed to the cubic interpolator
_CHUNK = 1 << 18             # angle samples interpolated at once, at most
_CHUNK_SPAN = 1 << 17        # signal samples (before upsampling) a chunk spans, about
_SCALINGS = ("peak", "rms")


@dataclass(frozen=True)
class AngularSignal:
    """A signal resampled at equal shaft-angle increments.

    Attributes
    ----------
    values : numpy.ndarray
        Resampled signal, signal units, ``n_revs * samples_per_rev`` samples (read-only).
    samples_per_rev : int
        Angle samples per revolution of the shaft, ``P``.
    n_revs : int
        Whole revolutions resampled.
    shaft_order : float
        Shaft speed / tach-shaft speed.
    rev_start : int
        First revolution, counted from the profile's angle 0.
    max_order : float
        Highest shaft order kept by the anti-aliasing filter (lower than ``P/2``).
    lowpass_hz : float or None
        Cut-off of the anti-aliasing low-pass, Hz; None when none was needed.
    upsample : int
        Upsampling factor applied before the cubic interpolation.
    t_start_s, t_end_s : float
        Times of the first and last revolution boundary, s.
    """

    values: np.ndarray
    samples_per_rev: int
    n_revs: int
    shaft_order: float
    rev_start: int = 0
    max_order: float = float("nan")
    lowpass_hz: float | None = None
    upsample: int = 1
    t_start_s: float = 0.0
    t_end_s: float = 0.0

    @property
    def angle_rev(self) -> np.ndarray:
        """Shaft angle of each sample, revolutions."""
        return self.rev_start + np.arange(self.values.size, dtype=np.float64) / self.samples_per_rev


@dataclass(frozen=True)
class OrderSpectrum:
    """Amplitude spectrum of an angle-resampled signal, against shaft order.

    Attributes
    ----------
    order : numpy.ndarray
        Orders of the shaft, ``k / n_revs`` (read-only).
    amplitude : numpy.ndarray
        Amplitude, signal units, zero-to-peak (``scaling="peak"``) or RMS (read-only).
    shaft_order : float
        Shaft speed / tach-shaft speed.
    samples_per_rev : int
        Angle samples per revolution used.
    n_revs : int
        Revolutions per analysed segment (order resolution = 1 / n_revs).
    window : str
    scaling : str
    n_averages : int
        Segments averaged (power average).
    max_order : float
        Highest order shown.
    enbw_orders : float
        Equivalent noise bandwidth of one line, orders.
    """

    order: np.ndarray
    amplitude: np.ndarray
    shaft_order: float
    samples_per_rev: int
    n_revs: int
    window: str
    scaling: str = "peak"
    n_averages: int = 1
    max_order: float = float("nan")
    enbw_orders: float = float("nan")

    @property
    def order_resolution(self) -> float:
        return 1.0 / self.n_revs


# ---------------------------------------------------------------------------------------


def _check_inputs(x, fs, profile, shaft_order):
    arr = np.asarray(x)
    if arr.ndim != 1:
        raise AnalysisError(f"x must be one channel (a 1-D array), got shape {arr.shape}; pass one channel")
    if not np.issubdtype(arr.dtype, np.number) or np.iscomplexobj(arr):
        raise AnalysisError(f"x must hold real numbers, got dtype {arr.dtype}")
    fs = float(fs)
    if not (math.isfinite(fs) and fs > 0):
        raise AnalysisError(f"sample rate {fs} Hz must be positive; check the recording header")
    r = float(shaft_order)
    if not (math.isfinite(r) and r > 0):
        raise AnalysisError(f"shaft_order={r} must be a positive speed ratio; check the gear-train model")
    for name in ("time_s", "angle_rev", "t_start_s", "t_end_s", "min_hz", "max_hz"):
        if not hasattr(profile, name):
            raise GearbenchError(f"profile lacks '{name}'; pass a dsp.tach.SpeedProfile")
    if not np.all(np.isfinite(arr)):
        raise AnalysisError("the signal contains NaN or infinite samples; repair or cut them out first")
    return arr, fs, r


def _lagrange4(y: np.ndarray, u: np.ndarray) -> np.ndarray:
    """4-point cubic Lagrange interpolation of ``y`` at fractional indices ``u`` (1 <= u <= len-3)."""
    i = np.floor(u).astype(np.int64)
    m = u - i
    mp1, mm1, mm2 = m + 1.0, m - 1.0, m - 2.0
    out = y[i - 1] * (-m * mm1 * mm2 / 6.0)
    out += y[i] * (mp1 * mm1 * mm2 / 2.0)
    out += y[i + 1] * (-mp1 * m * mm2 / 2.0)
    out += y[i + 2] * (mp1 * m * mm1 / 6.0)
    return out


def _prepare(x: np.ndarray, fs: float, lowpass_hz: float | None) -> tuple[np.ndarray, int]:
    """Low-pass (zero phase, cosine edge over the top 5 % of the band) and upsample.

    The extended record is padded to a fast FFT length (``scipy.fft.next_fast_len``;
    the extra samples continue the odd extension at the end) so that neither the
    forward nor the ``U``-times longer inverse FFT runs at a length with large prime
    factors.
    """
    nu = (lowpass_hz if lowpass_hz is not None else fs / 2) / fs
    U = 1
    while nu / U > _NU_MAX:
        U *= 2
    if lowpass_hz is None and U == 1:
        return np.asarray(x, dtype=np.float64), 1
    import scipy.fft

    xd = np.asarray(x, dtype=np.float64)
    n = xd.shape[0]
    # odd (point-symmetric) extension at both ends keeps the signal and its slope continuous
    # across the FFT's wrap-around, so the zero-phase filter does not ring at the record ends
    pad = min(n - 1, max(1024, n // 8))
    m = scipy.fft.next_fast_len(n + 2 * pad, real=True)
    pad_b = m - n - pad                                  # >= pad: the end takes the extra samples
    ext = np.empty(m)
    ext[:pad] = 2 * xd[0] - xd[pad:0:-1]
    ext[pad:pad + n] = xd
    tail = xd[-2:-pad_b - 2:-1]                          # as many as the record holds
    ext[pad + n:pad + n + tail.size] = 2 * xd[-1] - tail
    if tail.size < pad_b:                                # a short record: hold the last value
        ext[pad + n + tail.size:] = ext[pad + n + tail.size - 1]
    X = scipy.fft.rfft(ext)
    del ext
    if lowpass_hz is not None:
        f1 = lowpass_hz
        f0 = 0.95 * f1
        df = fs / m
        k0 = min(int(math.floor(f0 / df)) + 1, X.size)   # first bin with f > f0
        k1 = min(int(math.ceil(f1 / df)), X.size)        # first bin with f >= f1
        f = np.arange(k0, k1) * df
        X[k0:k1] *= 0.5 * (1 + np.cos(np.pi * (f - f0) / (f1 - f0)))
        X[k1:] = 0.0
    y = scipy.fft.irfft(X, n=m * U, overwrite_x=True)
    y = y[pad * U: (pad + n) * U]
    y *= U
    return y, U


def _power_spectrum(v: np.ndarray, w: np.ndarray, P: int) -> np.ndarray:
    """``abs(rfft(v * w))**2`` (float64) of a real record of ``L = N P`` samples and its window.

    When ``L`` has a large prime factor (the number of revolutions ``N`` often is
    one) a single FFT of length ``L`` is slow (Bluestein); the record is then
    transformed as an ``N x P`` array: FFTs of length ``N`` down the columns,
    twiddle factors, FFTs of length ``P`` along the rows (the Cooley-Tukey index
    map), in blocks of columns and rows so that no full-length temporary besides
    the ``N x P`` spectrum is made; the same bins to rounding in about half the time.

    References
    ----------
    .. [1] J. W. Cooley and J. W. Tukey, "An algorithm for the machine calculation of
       complex Fourier series", Mathematics of Computation 19(90), 297-301, 1965.
    """
    import scipy.fft

    L = v.size
    n_out = L // 2 + 1
    if P < 2 or L % P or scipy.fft.next_fast_len(L, real=True) == L or L // P < 2:
        p = np.abs(scipy.fft.rfft(np.multiply(v, w, dtype=np.float64), overwrite_x=True))
        p *= p
        return p
    N = L // P
    v2, w2 = v.reshape(N, P), w.reshape(N, P)
    A = np.empty((N, P), dtype=np.complex128)            # A[k1, n1], sample n = P n2 + n1
    cols = max(1, (1 << 15) // N)
    for c0 in range(0, P, cols):
        c1 = min(c0 + cols, P)
        A[:, c0:c1] = scipy.fft.fft(np.multiply(v2[:, c0:c1], w2[:, c0:c1], dtype=np.float64), axis=0)
    n1 = np.arange(P, dtype=np.float64)
    rows = max(1, (1 << 15) // P)
    for r0 in range(0, N, rows):                         # twiddles exp(-2 pi i k1 n1 / L), then the rows
        r1 = min(r0 + rows, N)
        blk = A[r0:r1]
        blk *= np.exp((-2j * np.pi / L) * np.outer(np.arange(r0, r1, dtype=np.float64), n1))
        A[r0:r1] = scipy.fft.fft(blk, axis=1)             # X[k1 + N k2] = A[k1, k2]
    p = np.empty(n_out)
    for k2 in range(P):
        a = N * k2
        if a >= n_out:
            break
        col = A[: min(N, n_out - a), k2]
        p[a:a + col.size] = col.real * col.real + col.imag * col.imag
    return p


def angular_resample(x, fs, profile, *, shaft_order: float = 1.0, samples_per_rev: int, rev_start: int | None = None,
                     n_revs: int | None = None, max_order: float | None = None) -> AngularSignal:
    """Resample a signal at equal increments of shaft angle (computed order tracking).

    Parameters
    ----------
    x : array_like
        One channel, signal units; sample ``i`` at time ``i / fs`` s.  Not modified.
    fs : float
        Sampling rate, Hz.
    profile : SpeedProfile
        Speed profile of the tach shaft (:class:`dsp.tach.SpeedProfile`).
    shaft_order : float, optional
        Speed of the resampled shaft / speed of the tach shaft.
    samples_per_rev : int
        Angle samples per revolution of the shaft, ``P`` (even, >= 4).
    rev_start : int, optional
        First revolution (from the profile's angle 0); default the first whole
        revolution with data on both sides of it (0 when the signal starts before the
        profile's angle 0).
    n_revs : int, optional
        Revolutions to resample; default all whole revolutions in the data.
    max_order : float, optional
        Highest shaft order to keep (must be below ``P/2``).  Default: as high as the
        anti-aliasing allows, ``0.45 P min_speed / max_speed`` (and below fs/2).

    Returns
    -------
    AngularSignal

    Notes
    -----
    Angle sample ``j`` is at shaft angle ``rev_start + j / P`` revolutions, i.e. at
    tach angle ``(rev_start + j / P) / shaft_order``, reached at
    ``profile.time_s(...)``.  When the angular sampling rate ``P f(t)`` can fall
    below the time sampling rate, the signal is first low-pass filtered at
    ``max_order x highest shaft speed`` so that no component above ``P/2`` orders
    aliases; revolutions within the filter's settling time of either record end
    (60 / cut-off s, at most 10 % of the record) are then left out.  Interpolation: 4-point cubic Lagrange on the (upsampled) signal, error
    below 5.6e-4 of a component's amplitude (module docstring).

    References
    ----------
    .. [1] K. R. Fyfe and E. D. S. Munck, "Analysis of computed order tracking",
       Mechanical Systems and Signal Processing 11(2), 187-205, 1997.
    """
    arr, fs, r = _check_inputs(x, fs, profile, shaft_order)
    P = int(samples_per_rev)
    if P < 4 or P % 2:
        raise AnalysisError(f"samples_per_rev={samples_per_rev} must be an even number >= 4")
    f_min = float(profile.min_hz) * r
    f_max = float(profile.max_hz) * r
    if not (f_min > 0 and f_max >= f_min):
        raise AnalysisError("the speed profile has no positive speed; check the tach")
    if max_order is None:
        k = 0.45 * P * f_min / f_max
        k = min(k, 0.45 * fs / f_max)
    else:
        k = float(max_order)
        if not (0 < k < P / 2):
            raise AnalysisError(f"max_order={max_order} must be positive and below samples_per_rev/2 = {P / 2}; "
                                "raise samples_per_rev or lower max_order")
    # the cosine edge of the low-pass starts at 95 % of its cut-off: put that start at the
    # highest kept order at top speed, and never above the angular Nyquist at the lowest speed
    lowpass = min(k * f_max / 0.95, 0.5 * P * f_min)
    if lowpass >= 0.5 * fs:
        lowpass = None
    n = arr.shape[0]
    t0 = max(float(profile.t_start_s), 0.0)
    t1 = min(float(profile.t_end_s), (n - 1) / fs)
    # keep clear of the record ends: the 4-point stencil needs 2 samples, and after the
    # low-pass the filter's settling time (60 / cut-off s: 3 / transition width) is unreliable
    margin = 3.0 / fs
    if lowpass is not None:
        margin = max(margin, min(60.0 / lowpass, 0.1 * (t1 - t0)))
    th0 = float(profile.angle_rev(t0 + margin)) * r
    th1 = float(profile.angle_rev(t1 - margin)) * r
    first = math.ceil(th0 - 1e-12)
    a = first if rev_start is None else int(rev_start)
    if a < first:
        raise AnalysisError(f"rev_start={rev_start} lies before the data (first whole revolution "
                            f"{first}); choose a later revolution")
    avail = int(math.floor(th1 + 1e-12)) - a
    if avail < 1:
        raise AnalysisError("the record holds less than one whole revolution of this shaft after rev_start; "
                            "use a longer recording or an earlier rev_start")
    N = avail if n_revs is None else int(n_revs)
    if not 1 <= N <= avail:
        raise AnalysisError(f"n_revs={n_revs} must be between 1 and {avail} (whole revolutions available)")
    # Work in segments of angle samples so that memory stays bounded for long records:
    # each segment filters/upsamples only its own stretch of signal plus a margin of true
    # neighbouring samples (the filter's settling length), and keeps the interior.
    seg_margin = 256 if lowpass is None else max(256, int(math.ceil(60.0 * fs / lowpass)))
    # float32 input: the result is float32, so the chunks are written straight into it
    out = np.empty(N * P, dtype=np.float32 if arr.dtype == np.float32 else np.float64)
    U = 1
    nu = (lowpass if lowpass is not None else fs / 2) / fs
    u_expected = 1
    while nu / u_expected > _NU_MAX:                     # the upsampling _prepare will choose
        u_expected *= 2
    # chunks that span about _CHUNK_SPAN upsampled samples keep each FFT cache-sized and
    # the temporaries small, so time and memory grow linearly with the record
    chunk = int(min(_CHUNK, max(4096, _CHUNK_SPAN / u_expected * P * f_min / fs)))
    for j0 in range(0, N * P, chunk):
        j1 = min(j0 + chunk, N * P)
        ang = (a + np.arange(j0, j1, dtype=np.float64) / P) / r
        u = np.asarray(profile.time_s(ang), dtype=np.float64) * fs
        i0 = max(int(math.floor(u[0])) - seg_margin, 0)
        i1 = min(int(math.ceil(u[-1])) + seg_margin, n - 1)
        y, U = _prepare(arr[i0:i1 + 1], fs, lowpass)
        out[j0:j1] = _lagrange4(y, (u - i0) * U)
    out.setflags(write=False)
    return AngularSignal(values=out, samples_per_rev=P, n_revs=N, shaft_order=r, rev_start=a,
                         max_order=float(k), lowpass_hz=lowpass, upsample=U,
                         t_start_s=float(profile.time_s(a / r)), t_end_s=float(profile.time_s((a + N) / r)))


def order_spectrum(x, fs, profile, *, shaft_order: float = 1.0, max_order: float | None = None,
                   order_resolution: float | None = None, window: str = "hann",
                   scaling: str = "peak") -> OrderSpectrum:
    """Amplitude spectrum against shaft order, from the angle-resampled signal.

    Parameters
    ----------
    x : array_like
        One channel, signal units.
    fs : float
        Sampling rate, Hz.
    profile : SpeedProfile
        Speed profile of the tach shaft.
    shaft_order : float, optional
        Speed of the analysed shaft / speed of the tach shaft.
    max_order : float, optional
        Highest order shown; default ``0.4 fs / highest shaft speed``.
    order_resolution : float, optional
        Line spacing, orders; segments of ``round(1 / order_resolution)`` revolutions
        are power-averaged with 50 % overlap.  Default: one segment of all the whole
        revolutions (finest resolution).
    window : {"hann", "rectangular", "hamming", "blackman", "blackmanharris", "flattop"}
        Periodic window, as in :func:`dsp.spectrum.window_values`.
    scaling : {"peak", "rms"}
        Zero-to-peak amplitude ``2|X|/sum(w)`` or its RMS value.

    Returns
    -------
    OrderSpectrum

    Notes
    -----
    A component locked to the shaft at order ``k`` stays on one line however the
    speed wanders, whereas the spectrum in Hz spreads it over the speed range.
    Samples per revolution: the smallest power of two above
    ``2.56 max_order max_speed / min_speed`` so the anti-aliasing filter keeps
    every order shown.

    References
    ----------
    .. [1] K. R. Fyfe and E. D. S. Munck, "Analysis of computed order tracking",
       Mechanical Systems and Signal Processing 11(2), 187-205, 1997.
    .. [2] F. J. Harris, "On the use of windows for harmonic analysis with the discrete
       Fourier transform", Proc. IEEE 66(1), 51-83, 1978.
    """
    from .spectrum import WINDOWS, window_values

    arr, fs, r = _check_inputs(x, fs, profile, shaft_order)
    if window not in WINDOWS:
        raise AnalysisError(f"Invalid value for 'window': allowed {', '.join(map(repr, WINDOWS))}, got {window!r}")
    if scaling not in _SCALINGS:
        raise AnalysisError(f"Invalid value for 'scaling': allowed 'peak', 'rms', got {scaling!r}")
    f_min = float(profile.min_hz) * r
    f_max = float(profile.max_hz) * r
    if max_order is None:
        max_order = 0.4 * fs / f_max
    max_order = float(max_order)
    if not (max_order > 0 and max_order * f_max < 0.5 * fs):
        raise AnalysisError(f"max_order={max_order} must be positive and below the Nyquist frequency "
                            f"({0.5 * fs / f_max:.1f} orders at the top speed)")
    P = 1 << max(2, math.ceil(math.log2(2.56 * max_order * f_max / f_min)))
    sig = angular_resample(arr, fs, profile, shaft_order=r, samples_per_rev=P,
                           max_order=min(max_order * 1.0, P / 2 * 0.99))
    total = sig.n_revs
    if order_resolution is None:
        seg_revs = total
    else:
        res = float(order_resolution)
        if not (res > 0 and math.isfinite(res)):
            raise AnalysisError(f"order_resolution={order_resolution} must be a positive number of orders")
        seg_revs = int(round(1.0 / res))
        if seg_revs < 1 or seg_revs > total:
            raise AnalysisError(f"order_resolution={order_resolution} needs {seg_revs} revolutions but the "
                                f"record holds {total}; use a coarser resolution or a longer recording")
    L = seg_revs * P
    hop = max(L // 2, 1)
    starts = list(range(0, total * P - L + 1, hop))
    w = window_values(window, L)
    import scipy.fft

    power = None
    v = sig.values                      # float32 or float64; the product with w is float64
    for s in starts:
        p = _power_spectrum(v[s: s + L], w, P)
        if power is None:
            power = p
        else:
            power += p
    amp = np.sqrt(power / len(starts)) * (2.0 / w.sum())
    amp[0] /= 2.0
    if L % 2 == 0:
        amp[-1] /= 2.0
    if scaling == "rms":
        amp[1:] /= math.sqrt(2.0)
    order = np.arange(amp.size, dtype=np.float64) / seg_revs
    keep = order <= max_order + 1e-12
    order, amp = order[keep], amp[keep]
    order.setflags(write=False)
    amp.setflags(write=False)
    enbw = L * float(np.sum(w * w)) / float(np.sum(w)) ** 2 / seg_revs
    return OrderSpectrum(order=order, amplitude=amp, shaft_order=r, samples_per_rev=P, n_revs=seg_revs,
                         window=window, scaling=scaling, n_averages=len(starts), max_order=max_order,
                         enbw_orders=enbw)
