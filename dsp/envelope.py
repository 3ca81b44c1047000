"""Envelope analysis: analytic band, (squared) envelope spectrum, spectral kurtosis, fast kurtogram.

The demodulation band is cut from the one-sided spectrum of the signal, shifted
to zero frequency and inverse transformed (Randall's "Hilbert" method): an ideal
band-pass filter, the Hilbert transform and decimation in one step.  When the
shared rfft of the whole record exists (:func:`dsp.spectrum.rfft_full`) the
band costs only a short inverse FFT.

This module imports numpy only.

References
----------
.. [1] R. B. Randall, J. Antoni, "Rolling element bearing diagnostics - A
   tutorial", Mechanical Systems and Signal Processing 25(2):485-520, 2011.
.. [2] J. Antoni, "The spectral kurtosis: a useful tool for characterising
   non-stationary signals", Mechanical Systems and Signal Processing
   20(2):282-307, 2006.
.. [3] J. Antoni, "Fast computation of the kurtogram for the detection of
   transient faults", Mechanical Systems and Signal Processing 21(1):108-124, 2007.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from dsp.errors import AnalysisError
from dsp.spectrum import (
    FullSpectrum,
    WINDOWS,
    _as_signal,
    _check_fs,
    _check_option,
    _readonly,
    rfft_full,
    spectrum_from_rfft,
    window_values,
)

__all__ = [
    "AnalyticBand",
    "Envelope",
    "EnvelopeSpectrum",
    "SpectralKurtosis",
    "Kurtogram",
    "analytic_band_from_rfft",
    "envelope",
    "envelope_spectrum",
    "spectral_kurtosis",
    "fast_kurtogram",
    "kurtogram_map",
]


# --------------------------------------------------------------------------- results


@dataclass(frozen=True)
class AnalyticBand:
    """Complex envelope of one frequency band, shifted to zero and decimated.

    Attributes
    ----------
    values : numpy.ndarray
        Complex samples ``c[m]``; ``|c|`` is the envelope of the band-passed signal.
    sample_rate_hz : float
        Sample rate of ``values`` (lower than the signal's when decimated).
    band_hz : tuple of float
        Band actually kept, on the bins of the full record ``(lo, hi)`` in Hz.
    shift_hz : float
        Frequency moved to zero (the band's lower edge; 0 without decimation).
    """

    values: np.ndarray
    sample_rate_hz: float
    band_hz: tuple[float, float]
    shift_hz: float


@dataclass(frozen=True)
class Envelope:
    """Envelope of a band of a signal.

    Attributes
    ----------
    values : numpy.ndarray
        Real envelope ``|c|`` in the signal's units.
    analytic : numpy.ndarray
        Complex envelope ``c``.
    sample_rate_hz : float
    band_hz : tuple of float
    """

    values: np.ndarray
    analytic: np.ndarray
    sample_rate_hz: float
    band_hz: tuple[float, float]

    @property
    def time_s(self) -> np.ndarray:
        return np.arange(self.values.size) / self.sample_rate_hz


@dataclass(frozen=True)
class EnvelopeSpectrum:
    """One-sided amplitude spectrum of the (squared) envelope of a band.

    Attributes
    ----------
    freq_hz : numpy.ndarray
        Line frequencies in Hz (spacing = 1 / record length).
    amplitude : numpy.ndarray
        Peak amplitude per line (DC line = mean of the (squared) envelope), in the
        signal's units (squared units when ``squared``).
    band_hz : tuple of float
        Demodulation band in Hz.
    band_source : str
        ``"user"`` or ``"kurtogram"`` (how the band was chosen).
    squared : bool
        True for the squared-envelope spectrum (SES).
    sample_rate_hz : float
        Sample rate of the envelope signal.
    window : str
    scaling : str
    """

    freq_hz: np.ndarray
    amplitude: np.ndarray
    band_hz: tuple[float, float]
    band_source: str
    squared: bool
    sample_rate_hz: float = float("nan")
    window: str = "rectangular"
    scaling: str = "peak"


@dataclass(frozen=True)
class SpectralKurtosis:
    """STFT estimate of the spectral kurtosis.

    Attributes
    ----------
    freq_hz : numpy.ndarray
    kurtosis : numpy.ndarray
        ``<|X|^4> / <|X|^2>^2 - 2`` per line (0 for stationary Gaussian noise,
        -1 for a constant-amplitude tone; DC and Nyquist lines are real, where
        Gaussian noise reads 1).
    nperseg, noverlap, n_segments : int
    window : str
    """

    freq_hz: np.ndarray
    kurtosis: np.ndarray
    nperseg: int
    noverlap: int
    n_segments: int
    window: str


@dataclass(frozen=True)
class Kurtogram:
    """Fast kurtogram: kurtosis of the complex envelope of every band of a 1/3-binary tree.

    Attributes
    ----------
    levels : tuple of float
        0, 1, 1.585, 2, 2.585, ..., max_level (``k + log2(3) - 1`` for the
        three-way splits).
    kurtosis : tuple of numpy.ndarray
        One 1-D array per level, band by band from 0 Hz upwards.
    band_edges_hz : tuple of numpy.ndarray
        Band edges per level (``n_bands + 1`` values from 0 to fs/2).
    best_band_hz : tuple of float
        ``(lo, hi)`` of the band of largest kurtosis.
    best_level : float
    best_kurtosis : float
    sample_rate_hz : float
    max_level : int
        Deepest binary level computed (may be lower than asked, see
        :func:`fast_kurtogram`).
    n_samples : int
        Number of samples the kurtogram was computed on.
    t_start_s : float
        Start of that stretch within the signal.
    """

    levels: tuple[float, ...]
    kurtosis: tuple[np.ndarray, ...]
    band_edges_hz: tuple[np.ndarray, ...]
    best_band_hz: tuple[float, float]
    best_level: float
    best_kurtosis: float
    sample_rate_hz: float
    max_level: int
    n_samples: int
    t_start_s: float

    @property
    def best_center_hz(self) -> float:
        return 0.5 * (self.best_band_hz[0] + self.best_band_hz[1])


# --------------------------------------------------------------------------- helpers


def _fast_len(n: int) -> int:
    """Smallest 2**a 3**b 5**c >= n (a fast FFT length)."""
    n = max(1, int(n))
    best = 1 << (n - 1).bit_length()
    p5 = 1
    while p5 < best:
        p35 = p5
        while p35 < best:
            m = p35
            while m < n:
                m *= 2
            best = min(best, m)
            p35 *= 3
        p5 *= 5
    return best


def smooth_floor(n: int) -> int:
    """Largest 2**a 3**b 5**c <= n (n >= 1): a length the FFT handles fast."""
    best = 1
    p5 = 1
    while p5 <= n:
        p35 = p5
        while p35 <= n:
            m = p35
            while m * 2 <= n:
                m *= 2
            best = max(best, m)
            p35 *= 3
        p5 *= 5
    return best


def _check_band(band_hz, nyquist_hz: float) -> tuple[float, float]:
    try:
        lo, hi = (float(v) for v in band_hz)
    except (TypeError, ValueError):
        raise AnalysisError(f"band_hz={band_hz!r} must be two frequencies (lo, hi) in Hz.") from None
    if not (np.isfinite(lo) and np.isfinite(hi) and 0.0 <= lo < hi <= nyquist_hz * (1 + 1e-12)):
        raise AnalysisError(
            f"band_hz=({lo}, {hi}) must satisfy 0 <= lo < hi <= {nyquist_hz:g} Hz (the Nyquist frequency); "
            "choose a band inside the recording's range."
        )
    return lo, min(hi, nyquist_hz)


def _full_of(x_or_full, fs) -> FullSpectrum:
    if isinstance(x_or_full, FullSpectrum):
        if fs is not None and not np.isclose(float(fs), x_or_full.fs, rtol=1e-12):
            raise AnalysisError(f"fs={fs} does not match the rfft's sample rate {x_or_full.fs}; pass fs=None or the same rate.")
        return x_or_full
    if fs is None:
        raise AnalysisError("fs is missing; give the sample rate in Hz with a plain signal.")
    return rfft_full(x_or_full, fs)


# --------------------------------------------------------------------------- envelope


def analytic_band_from_rfft(full: FullSpectrum, band_hz, *, decimate: bool = True, oversample: float = 2.0) -> AnalyticBand:
    """Complex envelope of a band, cut from the shared rfft (Randall's "Hilbert" method).

    Parameters
    ----------
    full : FullSpectrum
        rfft of the whole unwindowed record (:func:`dsp.spectrum.rfft_full`).
    band_hz : (float, float)
        Band ``(lo, hi)`` in Hz; the bins inside it (inclusive) are kept.
    decimate : bool, optional
        True: shift the band's lower edge to 0 Hz and use the shortest inverse
        FFT that holds it (automatic decimation).  False: keep the band in place
        and the original sample rate; then the result equals
        ``scipy.signal.hilbert`` of the ideally band-passed signal.
    oversample : float, optional
        Output length is a fast FFT length of at least ``oversample`` times the
        band's number of bins; 2 (the default) leaves room for the squared
        envelope, whose spectrum is twice as wide as the band.

    Returns
    -------
    AnalyticBand

    Notes
    -----
    With ``X`` the rfft of ``N`` samples and ``B`` bins ``k_lo..k_hi`` in the band,
    ``Y[m] = 2 X[k_lo + m]`` for ``m < B`` (not doubled at DC or Nyquist) and
    zero elsewhere, of length ``M``; ``c = (M/N) ifft(Y)`` at ``fs M / N`` Hz.
    This is an ideal (circular) band-pass filter, the analytic signal of the
    result, and a frequency shift by ``-k_lo fs / N``, which leaves ``|c|``
    unchanged.

    References
    ----------
    .. [1] R. B. Randall, J. Antoni, "Rolling element bearing diagnostics - A
       tutorial", Mechanical Systems and Signal Processing 25(2):485-520, 2011.
    .. [2] R. B. Randall, "Vibration-based Condition Monitoring", Wiley, 2011,
       chapter on bearing diagnostics (band selection by FFT, "Hilbert" method).
    """
    n = full.n
    fs = full.fs
    lo, hi = _check_band(band_hz, fs / 2.0)
    df = fs / n
    nb = full.X.size
    k_lo = int(math.ceil(lo / df - 1e-9))
    k_hi = min(nb - 1, int(math.floor(hi / df + 1e-9)))
    n_band = k_hi - k_lo + 1
    if n_band < 2:
        raise AnalysisError(
            f"band_hz=({lo}, {hi}) holds fewer than 2 lines at {df:g} Hz resolution; widen the band or use a longer record."
        )
    band = full.X[k_lo:k_hi + 1]
    gain = np.full(n_band, 2.0, dtype=full.X.real.dtype)
    if k_lo == 0:
        gain[0] = 1.0
    if n % 2 == 0 and k_hi == n // 2:
        gain[-1] = 1.0
    if decimate:
        m = min(_fast_len(int(math.ceil(oversample * n_band))), max(n, n_band))
        m = max(m, n_band)
        y = np.zeros(m, dtype=full.X.dtype)
        y[:n_band] = band * gain
        shift = k_lo * df
    else:
        m = n
        y = np.zeros(m, dtype=full.X.dtype)
        y[k_lo:k_hi + 1] = band * gain
        shift = 0.0
    import scipy.fft  # about twice as fast as numpy's for complex64

    c = scipy.fft.ifft(y, overwrite_x=True)
    c *= full.X.real.dtype.type(m / n)
    return AnalyticBand(values=_readonly(c), sample_rate_hz=fs * m / n, band_hz=(k_lo * df, k_hi * df), shift_hz=shift)


def envelope(x_or_full, fs: float | None, band_hz, *, decimate: bool = True) -> Envelope:
    """Envelope of the band ``band_hz`` of a signal.

    Parameters
    ----------
    x_or_full : array_like or FullSpectrum
        Real signal, or its shared rfft.
    fs : float or None
        Sample rate in Hz (None allowed with a FullSpectrum).
    band_hz : (float, float)
        Demodulation band in Hz.
    decimate : bool, optional
        See :func:`analytic_band_from_rfft`.

    Returns
    -------
    Envelope

    References
    ----------
    .. [1] R. B. Randall, J. Antoni, "Rolling element bearing diagnostics - A
       tutorial", Mechanical Systems and Signal Processing 25(2):485-520, 2011.
    """
    full = _full_of(x_or_full, fs)
    band = analytic_band_from_rfft(full, band_hz, decimate=decimate)
    return Envelope(values=_readonly(np.abs(band.values)), analytic=band.values,
                    sample_rate_hz=band.sample_rate_hz, band_hz=band.band_hz)


def envelope_spectrum(
    x_or_full,
    fs: float | None,
    band_hz,
    *,
    squared: bool = True,
    band_source: str = "user",
    window: str = "rectangular",
    scaling: str = "peak",
    max_freq_hz: float | None = None,
) -> EnvelopeSpectrum:
    """Spectrum of the squared envelope (default) or of the envelope of a band.

    Parameters
    ----------
    x_or_full : array_like or FullSpectrum
        Real signal, or the shared rfft of the whole record.
    fs : float or None
        Sample rate in Hz (None allowed with a FullSpectrum).
    band_hz : (float, float)
        Demodulation band in Hz (e.g. the kurtogram's best band).
    squared : bool, optional
        True: spectrum of ``|c|^2`` (squared-envelope spectrum, SES); False:
        spectrum of ``|c|``.
    band_source : {"user", "kurtogram"}
        Recorded in the result.
    window : str, optional
        Window for the envelope's spectrum (one of :data:`dsp.spectrum.WINDOWS`).
    scaling : {"peak", "rms"}
    max_freq_hz : float, optional
        Keep only lines up to this frequency.

    Returns
    -------
    EnvelopeSpectrum
        The DC line holds the mean of the (squared) envelope; a modulation
        ``(1 + m cos 2 pi f_m t)`` of a carrier of amplitude 1 reads ``m`` at
        ``f_m`` in the envelope spectrum and ``2m`` in the SES.

    Notes
    -----
    The squared envelope is preferred: it avoids the spurious harmonics that
    the modulus creates and its spectrum estimates the cyclic spectral content
    directly [1]_.

    References
    ----------
    .. [1] R. B. Randall, J. Antoni, "Rolling element bearing diagnostics - A
       tutorial", Mechanical Systems and Signal Processing 25(2):485-520, 2011.
    """
    _check_option("band_source", band_source, ("user", "kurtogram"))
    _check_option("window", window, tuple(WINDOWS))
    full = _full_of(x_or_full, fs)
    band = analytic_band_from_rfft(full, band_hz, decimate=True)
    c = band.values
    e = (c.real * c.real + c.imag * c.imag) if squared else np.abs(c)
    spec = spectrum_from_rfft(rfft_full(e, band.sample_rate_hz), window=window, scaling=scaling)
    freq, amp = spec.freq_hz, spec.amplitude
    if max_freq_hz is not None:
        keep = freq <= float(max_freq_hz)
        freq, amp = freq[keep], amp[keep]
    return EnvelopeSpectrum(
        freq_hz=_readonly(np.array(freq)),
        amplitude=_readonly(np.array(amp)),
        band_hz=band.band_hz,
        band_source=band_source,
        squared=bool(squared),
        sample_rate_hz=band.sample_rate_hz,
        window=window,
        scaling=scaling,
    )


# --------------------------------------------------------------------------- spectral kurtosis


def spectral_kurtosis(x, fs: float, *, nperseg: int = 256, noverlap: int | None = None, window: str = "hann") -> SpectralKurtosis:
    """Spectral kurtosis by the STFT estimator.

    Parameters
    ----------
    x : array_like
        Real signal.
    fs : float
        Sample rate in Hz.
    nperseg : int, optional
        STFT segment length in samples (frequency resolution ``fs/nperseg``).
    noverlap : int, optional
        Overlap in samples; default ``3 * nperseg // 4``.
    window : str, optional
        One of :data:`dsp.spectrum.WINDOWS`.

    Returns
    -------
    SpectralKurtosis

    Notes
    -----
    ``K(f) = <|X_w(kP, f)|^4>_k / <|X_w(kP, f)|^2>_k^2 - 2`` over the segments k
    (hop P).  Stationary Gaussian noise gives 0, a constant-amplitude tone -1,
    transients large positive values.

    References
    ----------
    .. [1] J. Antoni, "The spectral kurtosis: a useful tool for characterising
       non-stationary signals", Mechanical Systems and Signal Processing
       20(2):282-307, 2006.
    """
    x = _as_signal(x)
    fs = _check_fs(fs)
    _check_option("window", window, tuple(WINDOWS))
    n = x.size
    if isinstance(nperseg, bool) or not isinstance(nperseg, (int, np.integer)) or not 4 <= nperseg <= n:
        raise AnalysisError(f"nperseg={nperseg} must be an integer from 4 to the signal length {n}.")
    if noverlap is None:
        noverlap = 3 * nperseg // 4
    if isinstance(noverlap, bool) or not isinstance(noverlap, (int, np.integer)) or not 0 <= noverlap < nperseg:
        raise AnalysisError(f"noverlap={noverlap} must be an integer from 0 to nperseg-1 ({nperseg - 1}).")
    step = nperseg - noverlap
    n_seg = 1 + (n - nperseg) // step
    if n_seg < 2:
        raise AnalysisError(f"only {n_seg} segment of {nperseg} samples fits the signal; use a shorter nperseg or a longer record.")
    w = window_values(window, nperseg)
    frames = np.lib.stride_tricks.sliding_window_view(x, nperseg)[::step][:n_seg]
    nbins = nperseg // 2 + 1
    s2 = np.zeros(nbins)
    s4 = np.zeros(nbins)
    per = max(1, (1 << 21) // nperseg)
    for i0 in range(0, n_seg, per):
        p = np.abs(np.fft.rfft(frames[i0:i0 + per] * w, axis=-1)) ** 2
        s2 += p.sum(axis=0)
        s4 += (p * p).sum(axis=0)
    s2 /= n_seg
    s4 /= n_seg
    with np.errstate(invalid="ignore", divide="ignore"):
        k = np.where(s2 > 0, s4 / np.where(s2 > 0, s2, 1.0) ** 2 - 2.0, 0.0)
    return SpectralKurtosis(
        freq_hz=_readonly(np.arange(nbins) * fs / nperseg),
        kurtosis=_readonly(k),
        nperseg=int(nperseg),
        noverlap=int(noverlap),
        n_segments=int(n_seg),
        window=window,
    )


# --------------------------------------------------------------------------- fast kurtogram

_BINARY_TAPS = 65
_TERNARY_TAPS = 97
LOG2_3_MINUS_1 = math.log2(3.0) - 1.0


def _band_filter(n_taps: int, half_width: float, center: float) -> np.ndarray:
    """Quasi-analytic FIR: Hann-windowed sinc low-pass of half-width ``half_width``
    (cycles/sample) modulated to ``center`` (cycles/sample)."""
    m = np.arange(n_taps) - (n_taps - 1) / 2.0
    h = 2.0 * half_width * np.sinc(2.0 * half_width * m) * np.hanning(n_taps)
    h /= h.sum()
    return h * np.exp(2j * np.pi * center * m)


def _kurt_rows(c: np.ndarray, guard: int = 0) -> np.ndarray:
    """Kurtosis of each row's complex envelope, leaving ``guard`` samples out at both ends."""
    if guard:
        c = c[..., guard:c.shape[-1] - guard]
    p = c.real * c.real + c.imag * c.imag
    m2 = p.mean(axis=-1, dtype=np.float64)
    m4 = (p * p).mean(axis=-1, dtype=np.float64)
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(m2 > 0, m4 / np.where(m2 > 0, m2, 1.0) ** 2 - 2.0, 0.0)


_GUARD_SAMPLES = 64


def _guard(n_node: int) -> int:
    """Samples left out at each end of a sub-band signal of ``n_node`` samples.

    The record is treated as circular, so the jump between its last and first
    sample is a transient that every band filter turns into a short burst at
    both ends of every sub-band signal; with a strong tone in the record that
    burst can dominate the kurtosis of the bands beside the tone.  The FIR
    cascade spreads the jump over about +-32 samples at each node's own rate
    (48 sufficed in our checks with a tone 100x the noise); 64 are left out,
    at most a quarter of the node at each end.
    """
    return min(_GUARD_SAMPLES, n_node // 4)


def _fold(spec: np.ndarray, d: int) -> np.ndarray:
    """Spectrum of ``y[::d]`` from the spectrum of ``y`` (last axis, length divisible by d)."""
    n = spec.shape[-1]
    out = spec.reshape(spec.shape[:-1] + (d, n // d)).sum(axis=-2)
    out *= out.real.dtype.type(1.0 / d)
    return out


def fast_kurtogram(x, fs: float, *, max_level: int = 6, max_samples: int = 2**17) -> Kurtogram:
    """Fast kurtogram after Antoni (2007): kurtosis of every band of a 1/3-binary filter tree.

    Parameters
    ----------
    x : array_like
        Real signal.
    fs : float
        Sample rate in Hz.
    max_level : int, optional
        Deepest binary level (bands of ``fs / 2**(max_level+1)`` Hz).  Limited to
        ``floor(log2(n)) - 7`` so every band keeps at least ~128 samples; the
        level actually used is in ``Kurtogram.max_level``.
    max_samples : int, optional
        Longest stretch analysed: a longer signal is analysed on its central
        ``max_samples`` samples (2**17 = 5.1 s at 25.6 kHz, 2.6 s at 51.2 kHz;
        it costs about 2 real FFTs of a 768 000-sample record, 2**18 about 4.5),
        shortened to ``3 * 2**max_level`` times a 5-smooth number (fast FFTs).  Kurtosis needs enough
        impacts, not the whole record, and this keeps the cost bounded on
        multi-million-sample recordings (where the stretch starts is in
        ``Kurtogram.t_start_s``).

    Returns
    -------
    Kurtogram

    Notes
    -----
    The tree follows [1]_: every node is split into a low and a high half by
    two quasi-analytic FIR filters and decimated by 2 (binary levels 1, 2, ...),
    and into three thirds decimated by 3 (levels ``k + log2(3) - 1`` = 1.585,
    2.585, ... from the nodes of level k - 1).  The kurtosis of each complex
    sub-band signal ``c`` is ``<|c|^4> / <|c|^2>^2 - 2`` (0 for Gaussian noise).
    Level 0 is the analytic signal of the whole band.

    Implementation choices of ours: the filters are 65- and 97-tap
    Hann-windowed sinc low-pass prototypes whose -6 dB points sit on the band
    edges, modulated to the band centres; they are applied as circular
    convolutions in the frequency domain and decimation is done by folding the
    spectrum, so the whole tree costs one FFT plus inverse FFTs of total length
    about ``2 * max_level * n`` (single precision).  The mean is removed first.
    Because the record is treated as circular, 64 samples at each end of every
    sub-band signal are left out of its kurtosis (see ``_guard``): without
    that, the jump between the record's ends turns a strong tone into a false
    "transient" in the bands beside it.

    References
    ----------
    .. [1] J. Antoni, "Fast computation of the kurtogram for the detection of
       transient faults", Mechanical Systems and Signal Processing
       21(1):108-124, 2007.
    .. [2] J. Antoni, R. B. Randall, "The spectral kurtosis: application to the
       vibratory surveillance and diagnostics of rotating machines",
       Mechanical Systems and Signal Processing 20(2):308-331, 2006.
    """
    import scipy.fft  # about twice numpy's speed on single precision

    x = _as_signal(x)
    fs = _check_fs(fs)
    if isinstance(max_level, bool) or not isinstance(max_level, (int, np.integer)) or max_level < 1:
        raise AnalysisError(f"max_level={max_level} must be a positive integer (6 is usual).")
    if isinstance(max_samples, bool) or not isinstance(max_samples, (int, np.integer)) or max_samples < 256:
        raise AnalysisError(f"max_samples={max_samples} must be an integer of at least 256.")
    n_all = x.size
    n = min(n_all, int(max_samples))
    if n < 256:
        raise AnalysisError(f"the signal has only {n_all} samples; the kurtogram needs at least 256.")
    level_cap = int(math.floor(math.log2(max(n, 2)))) - 7
    if level_cap < 1:
        raise AnalysisError(f"the signal has only {n_all} samples; the kurtogram needs at least 256.")
    levels_n = min(int(max_level), level_cap)
    # length: 3 * 2**levels_n times a 5-smooth number, so that every node's FFT is fast
    block = 3 * 2**levels_n
    n = block * smooth_floor(n // block)
    i0 = (n_all - n) // 2
    seg = np.asarray(x[i0:i0 + n], dtype=np.float64)
    seg = seg - seg.mean()
    scale = float(np.sqrt(np.mean(seg * seg)))
    if scale > 0:
        seg /= scale  # kurtosis does not depend on scale; keeps |c|**4 well inside float32
    seg = seg.astype(np.float32)

    # the tree starts from the real signal's two-sided spectrum: the quasi-analytic
    # filters select the positive frequencies (single precision is ample for kurtosis)
    half = scipy.fft.rfft(seg)
    spec = np.empty(n, dtype=half.dtype)
    spec[: half.size] = half
    spec[half.size:] = np.conj(half[1:n - half.size + 1][::-1])
    nodes = spec[None, :]  # (n_nodes, n_node) spectra; content of interest in [0, fs_node/2)
    # level 0: the analytic signal of the whole band
    analytic = np.zeros(n, dtype=half.dtype)
    analytic[: half.size] = half
    analytic[1:(n + 1) // 2] *= 2.0

    # Frequency responses on the finest grid (length n); a node of length n_node reads
    # them with stride n // n_node (the same DTFT sampled more coarsely).  The high-half
    # and the second and third thirds are the first filter shifted by n/4, n/6 and n/3
    # bins (a modulation; the constant phase it adds does not change |c|).
    h_lo = scipy.fft.fft(_band_filter(_BINARY_TAPS, 1 / 8, 1 / 8).astype(np.complex64), n)
    h_t0 = scipy.fft.fft(_band_filter(_TERNARY_TAPS, 1 / 12, 1 / 12).astype(np.complex64), n)
    resp = {
        "lo": h_lo,
        "hi": np.roll(h_lo, n // 4),
        "t0": h_t0,
        "t1": np.roll(h_t0, n // 6),
        "t2": np.roll(h_t0, n // 3),
    }
    levels: list[float] = [0.0]
    kurt: list[np.ndarray] = [_kurt_rows(scipy.fft.ifft(analytic)[None, :], _guard(n))]
    del analytic
    edges: list[np.ndarray] = [np.array([0.0, fs / 2.0])]
    for k in range(1, levels_n + 1):
        # here ``nodes`` are the 2**(k-1) bands of binary level k-1
        n_node = nodes.shape[-1]
        # binary split -> level k (2**k bands)
        stride = n // n_node
        h_lo = resp["lo"][::stride]
        h_hi = resp["hi"][::stride]
        low = _fold(nodes * h_lo, 2)
        # the high half lands on negative frequencies after decimation: shift it up by half the new rate
        high = np.roll(_fold(nodes * h_hi, 2), -(n_node // 4), axis=-1)
        # three-way split of level k-1 -> level k + log2(3) - 1 (3 * 2**(k-1) bands), for k < max level
        if k < levels_n:
            tern = []
            for i in range(3):
                h = resp[f"t{i}"][::stride]
                tern.append(_fold(nodes * h, 3))
            thirds = np.stack(tern, axis=1).reshape(-1, n_node // 3)  # band 3 j + i of node j
            k_t = _kurt_rows(scipy.fft.ifft(thirds, axis=-1), _guard(n_node // 3))
            del tern, thirds
        nodes = np.stack([low, high], axis=1).reshape(-1, n_node // 2)
        del low, high
        levels.append(float(k))
        kurt.append(_kurt_rows(scipy.fft.ifft(nodes, axis=-1), _guard(n_node // 2)))
        edges.append(np.linspace(0.0, fs / 2.0, 2**k + 1))
        if k < levels_n:
            levels.append(k + LOG2_3_MINUS_1)
            kurt.append(k_t)
            edges.append(np.linspace(0.0, fs / 2.0, 3 * 2 ** (k - 1) + 1))
    kurt = [_readonly(np.asarray(row, dtype=np.float64)) for row in kurt]
    edges = [_readonly(e) for e in edges]

    best = (-np.inf, 0, 0)
    for li, row in enumerate(kurt):
        j = int(np.argmax(row))
        if row[j] > best[0]:
            best = (float(row[j]), li, j)
    kbest, li, j = best
    return Kurtogram(
        levels=tuple(levels),
        kurtosis=tuple(kurt),
        band_edges_hz=tuple(edges),
        best_band_hz=(float(edges[li][j]), float(edges[li][j + 1])),
        best_level=float(levels[li]),
        best_kurtosis=kbest,
        sample_rate_hz=fs,
        max_level=levels_n,
        n_samples=n,
        t_start_s=i0 / fs,
    )


def kurtogram_map(kurtogram: Kurtogram) -> tuple[np.ndarray, np.ndarray, list[str]]:
    """The kurtogram as an image for display.

    Returns
    -------
    grid : numpy.ndarray, shape (n_levels, n_columns)
        Row i holds level i's kurtosis, each band repeated over the columns it
        covers (``n_columns = 3 * 2**max_level``).
    freq_edges_hz : numpy.ndarray, shape (n_columns + 1,)
        Column edges in Hz.
    labels : list of str
        Level labels ("0", "1", "1.6", "2", "2.6", ...).
    """
    n_cols = 3 * 2**kurtogram.max_level
    grid = np.empty((len(kurtogram.levels), n_cols))
    for i, row in enumerate(kurtogram.kurtosis):
        grid[i] = np.repeat(row, n_cols // row.size)
    labels = [f"{lv:.1f}".rstrip("0").rstrip(".") if lv != int(lv) else str(int(lv)) for lv in kurtogram.levels]
    return grid, np.linspace(0.0, kurtogram.sample_rate_hz / 2.0, n_cols + 1), labels
