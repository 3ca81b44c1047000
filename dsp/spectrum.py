"""Amplitude spectra: windows, scaling, averaging, zoom band and integration.

Two ways in:

* plain functions that take the signal (:func:`amplitude_spectrum`,
  :func:`zoom_spectrum`), and
* "from the rfft" variants that reuse ONE full-length real FFT of the
  unwindowed signal (:func:`rfft_full` -> :class:`FullSpectrum`, then
  :func:`spectrum_from_rfft`, :func:`zoom_spectrum`).  Every window offered here
  is a cosine-sum window, so its spectrum is a short convolution of the
  unwindowed rfft (3 taps for Hann, 5 for the flat-top) and costs no second FFT.

Scaling follows Harris (1978) and Heinzel et al. (2002): a sinusoid of amplitude
``A`` centred on a bin reads ``A`` (``scaling="peak"``) or ``A/sqrt(2)``
(``scaling="rms"``) whatever the window.

This module imports numpy at load time; :func:`rfft_full` imports ``scipy.fft``
when called (its float32 transform is about twice as fast as numpy's).  The
full-length steps work in blocks of :data:`_BLOCK_BINS` lines so that their
temporaries stay small whatever the record length.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from dsp.errors import AnalysisError

__all__ = [
    "WINDOWS",
    "WindowInfo",
    "Spectrum",
    "FullSpectrum",
    "G_N_M_S2",
    "window_values",
    "window_properties",
    "amplitude_spectrum",
    "rfft_full",
    "spectrum_from_rfft",
    "zoom_spectrum",
    "band_spectrum_from_rfft",
    "band_spectrum",
    "integrate_spectrum",
    "velocity_spectrum",
    "band_rms",
    "rms_amplitude",
    "power_spectral_density",
    "to_cpm",
    "to_orders",
]

#: Standard acceleration of gravity in m/s^2 (exact by definition, 3rd CGPM 1901).
G_N_M_S2 = 9.80665

# Cosine-sum coefficients a_k of the periodic windows
# w[n] = sum_k (-1)**k * a_k * cos(2 pi k n / N), n = 0..N-1 (scipy's convention,
# sym=False).  Values as in scipy.signal.windows (Harris 1978 for the classical
# ones; D'Antona & Ferrero 2006 for scipy's 5-term flat-top).
WINDOWS: dict[str, tuple[float, ...]] = {
    "rectangular": (1.0,),
    "hann": (0.5, 0.5),
    "hamming": (0.54, 0.46),
    "blackman": (0.42, 0.50, 0.08),
    "blackmanharris": (0.35875, 0.48829, 0.14128, 0.01168),
    "flattop": (0.21557895, 0.41663158, 0.277263158, 0.083578947, 0.006947368),
}

_SCALINGS = ("peak", "rms")
_DETRENDS = ("constant", "linear", False, None)
_AVERAGES = ("mean", "max")
_UNITS = ("g", "m/s2")
_INTEGRALS = ("velocity", "displacement")
_CHUNK_ELEMENTS = 1 << 22  # samples per block when averaging segments
_BLOCK_BINS = 1 << 16      # lines per block in the full-length steps (bounded temporaries)


# --------------------------------------------------------------------------- checks


def _check_option(name: str, value, allowed) -> None:
    if value not in allowed:
        listed = ", ".join(repr(a) for a in allowed)
        raise AnalysisError(f"Invalid value for {name!r}: allowed {listed}, got {value!r}; pass one of these.")


def _check_fs(fs) -> float:
    fs = float(fs)
    if not np.isfinite(fs) or fs <= 0:
        raise AnalysisError(f"fs={fs} must be a positive sample rate in Hz; check the recording's sample rate.")
    return fs


def _as_signal(x, name: str = "x") -> np.ndarray:
    """1-D float32/float64 view of ``x`` (never a writable alias of the caller's data)."""
    a = np.asarray(x)
    if a.ndim != 1:
        raise AnalysisError(f"{name} must be a 1-D signal, got an array of shape {a.shape}; pass one channel.")
    if a.dtype != np.float32 and a.dtype != np.float64:
        if np.iscomplexobj(a):
            raise AnalysisError(f"{name} must be real-valued, got {a.dtype}; pass the real signal.")
        a = a.astype(np.float64)
    if a.size == 0:
        raise AnalysisError(f"{name} is empty; select a longer part of the recording.")
    if not np.isfinite(a).all():
        bad = int(a.size - np.count_nonzero(np.isfinite(a)))
        raise AnalysisError(f"{name} holds {bad} non-finite samples; repair or cut that part of the recording.")
    return a


def _readonly(a: np.ndarray) -> np.ndarray:
    a.flags.writeable = False
    return a


# --------------------------------------------------------------------------- windows


@dataclass(frozen=True)
class WindowInfo:
    """Figures of merit of a periodic DFT window of length ``n`` (Harris 1978).

    Attributes
    ----------
    window : str
    n : int
        Window length in samples.
    coherent_gain : float
        ``sum(w) / n`` (1 for the rectangular window).
    enbw_bins : float
        Equivalent noise bandwidth in bins, ``n * sum(w**2) / sum(w)**2``.
    scalloping_loss_db : float
        ``-20 log10(|W(1/2 bin)| / |W(0)|)`` in dB: the amplitude lost by a tone
        falling half-way between two bins.
    processing_loss_db : float
        Worst-case processing loss, ``scalloping_loss_db + 10 log10(enbw_bins)``.
    """

    window: str
    n: int
    coherent_gain: float
    enbw_bins: float
    scalloping_loss_db: float
    processing_loss_db: float


def window_values(window: str, n: int, dtype=np.float64) -> np.ndarray:
    """Periodic ("DFT-even", ``sym=False``) window of ``n`` samples.

    Parameters
    ----------
    window : {"rectangular", "hann", "hamming", "blackman", "blackmanharris", "flattop"}
    n : int
        Length in samples.
    dtype : numpy dtype, optional

    Returns
    -------
    numpy.ndarray
        ``w[k] = sum_j (-1)**j a_j cos(2 pi j k / n)`` with the coefficients of
        :data:`WINDOWS`; equal to ``scipy.signal.windows.get_window(window, n)``.

    References
    ----------
    .. [1] F. J. Harris, "On the use of windows for harmonic analysis with the
       discrete Fourier transform", Proc. IEEE 66(1):51-83, 1978.
    .. [2] G. D'Antona, A. Ferrero, "Digital Signal Processing for Measurement
       Systems", Springer, 2006 (the 5-term flat-top of scipy).
    """
    _check_option("window", window, tuple(WINDOWS))
    n = int(n)
    if n < 1:
        raise AnalysisError(f"n={n} must be a positive window length in samples.")
    phase = np.arange(n, dtype=np.float64)
    phase *= 2.0 * np.pi
    phase /= n
    coeffs = WINDOWS[window]
    w = np.full(n, float(coeffs[0]))         # the k = 0 term: a_0 cos(0) = a_0 exactly
    term = np.empty(n)
    for k, a in enumerate(coeffs[1:], start=1):  # in place: two temporaries whatever the length
        np.multiply(phase, k, out=term)
        np.cos(term, out=term)
        term *= (-1) ** k * a
        w += term
    del phase, term
    return w.astype(dtype, copy=False)


def window_properties(window: str, n: int = 4096) -> WindowInfo:
    """Coherent gain, ENBW and scalloping loss of a periodic window.

    Parameters
    ----------
    window : str
        One of :data:`WINDOWS`.
    n : int, optional
        Window length in samples (the figures hardly depend on it for n >= 64).

    Returns
    -------
    WindowInfo

    Notes
    -----
    ``CG = sum(w)/n``, ``ENBW = n sum(w^2)/sum(w)^2`` bins and
    ``SL = -20 log10 |sum_k w[k] exp(-j pi k / n)| / sum(w)`` dB.

    References
    ----------
    .. [1] F. J. Harris, "On the use of windows for harmonic analysis with the
       discrete Fourier transform", Proc. IEEE 66(1):51-83, 1978, Table I.
    """
    w = window_values(window, n)
    s1 = float(w.sum())
    s2 = float(np.dot(w, w))
    half = abs(np.sum(w * np.exp(-1j * np.pi * np.arange(n) / n)))
    enbw = n * s2 / s1**2
    sl = -20.0 * np.log10(half / s1)
    return WindowInfo(window, n, s1 / n, enbw, sl, sl + 10.0 * np.log10(enbw))


# --------------------------------------------------------------------------- results


@dataclass(frozen=True)
class Spectrum:
    """A one-sided amplitude spectrum and the parameters that made it.

    Attributes
    ----------
    freq_hz : numpy.ndarray
        Frequencies of the lines in Hz.
    amplitude : numpy.ndarray
        Zero-to-peak (``scaling="peak"``) or RMS (``scaling="rms"``) amplitude of
        a sinusoid centred on each line, in ``units``.
    window : str
    nperseg : int
        Segment (FFT) length in samples.
    noverlap : int
        Overlap between segments in samples.
    n_averages : int
        Number of segments averaged.
    scaling : str
        ``"peak"`` or ``"rms"``.
    enbw_hz : float
        Equivalent noise bandwidth of one line in Hz.
    sample_rate_hz : float
        Sample rate of the signal analysed.
    units : str
        Amplitude units label (free text, e.g. ``"g"``, ``"mm/s"``).
    detrend : str or bool
        Detrending applied to each segment.
    average : str
        ``"mean"`` (power average), ``"max"`` (peak hold) or ``"band"`` (each
        line is the power of a band of full-resolution lines, see
        :func:`band_spectrum_from_rfft`).
    line_spacing_hz : float
        Line spacing when it is not ``fs / nperseg`` (band spectra); nan otherwise.
    """

    freq_hz: np.ndarray
    amplitude: np.ndarray
    window: str
    nperseg: int
    noverlap: int
    n_averages: int
    scaling: str
    enbw_hz: float
    sample_rate_hz: float = float("nan")
    units: str = ""
    detrend: str | bool = False
    average: str = "mean"
    line_spacing_hz: float = float("nan")

    @property
    def resolution_hz(self) -> float:
        """Line spacing in Hz."""
        if np.isfinite(self.line_spacing_hz):
            return self.line_spacing_hz
        return self.sample_rate_hz / self.nperseg

    @property
    def enbw_bins(self) -> float:
        """Equivalent noise bandwidth in lines."""
        return self.enbw_hz / self.resolution_hz


@dataclass(frozen=True)
class FullSpectrum:
    """The rfft of a whole, unwindowed signal, kept for reuse.

    Attributes
    ----------
    X : numpy.ndarray
        ``scipy.fft.rfft(x)``, equal to ``numpy.fft.rfft(x)`` to rounding (complex64
        for float32 input, else complex128), read-only, ``n // 2 + 1`` bins.
    n : int
        Number of samples of the signal.
    fs : float
        Sample rate in Hz.
    """

    X: np.ndarray
    n: int
    fs: float

    @property
    def freq_hz(self) -> np.ndarray:
        """Bin frequencies in Hz (``k * fs / n``)."""
        f = np.arange(self.X.size, dtype=np.float64)
        f *= self.fs / self.n
        return f

    @property
    def resolution_hz(self) -> float:
        return self.fs / self.n


# --------------------------------------------------------------------------- helpers


def _one_sided_scale(n_bins: int, nfft: int, s1: float, scaling: str) -> np.ndarray:
    """Factor turning ``|X_w[k]|`` into an amplitude (see module notes)."""
    scale = np.full(n_bins, 2.0 / s1)
    scale[0] = 1.0 / s1
    if nfft % 2 == 0:
        scale[-1] = 1.0 / s1
    if scaling == "rms":
        scale[1:] /= np.sqrt(2.0)
        if nfft % 2 == 0:
            scale[-1] = 1.0 / s1
    return scale


def _detrend_segments(seg: np.ndarray, detrend) -> np.ndarray:
    if detrend == "constant":
        return seg - seg.mean(axis=-1, keepdims=True)
    if detrend == "linear":
        n = seg.shape[-1]
        t = np.arange(n, dtype=seg.dtype) - (n - 1) / 2.0
        tt = float(np.dot(t, t)) if n > 1 else 1.0
        slope = (seg @ t) / tt
        return seg - seg.mean(axis=-1, keepdims=True) - slope[..., None] * t
    return seg


def rms_amplitude(spectrum: Spectrum) -> np.ndarray:
    """RMS value of the sinusoid each line stands for (DC and Nyquist are not divided by sqrt 2)."""
    return _rms_block(spectrum, np.asarray(spectrum.freq_hz), np.asarray(spectrum.amplitude))


def _rms_block(spectrum: Spectrum, f: np.ndarray, a: np.ndarray) -> np.ndarray:
    """:func:`rms_amplitude` of the lines at ``f`` with amplitudes ``a`` (a block of ``spectrum``)."""
    a = np.asarray(a, dtype=np.float64)
    if spectrum.scaling == "rms":
        return a.copy()
    out = a / np.sqrt(2.0)
    fs = spectrum.sample_rate_hz
    if f.size and float(f.min()) > 0.0 and float(f.max()) < fs / 2.0 - 1e-9 * fs:
        return out                                     # neither a DC nor a Nyquist line here
    nyquist = np.isclose(f, spectrum.sample_rate_hz / 2.0, rtol=0, atol=1e-9 * spectrum.sample_rate_hz)
    edge = (f == 0.0) | ((spectrum.nperseg % 2 == 0) & (spectrum.average != "band") & nyquist)
    out[edge] = a[edge]
    return out


# --------------------------------------------------------------------------- spectra


def amplitude_spectrum(
    x,
    fs: float,
    *,
    window: str = "hann",
    nperseg: int | None = None,
    noverlap: int | None = None,
    scaling: str = "peak",
    detrend: str | bool = "constant",
    average: str = "mean",
    units: str = "",
) -> Spectrum:
    """One-sided amplitude spectrum, averaged over overlapping segments.

    Parameters
    ----------
    x : array_like, shape (n,)
        Real signal in any units (float32 stays float32).
    fs : float
        Sample rate in Hz.
    window : str, optional
        One of :data:`WINDOWS` (periodic windows).
    nperseg : int, optional
        Segment length in samples; the line spacing is ``fs / nperseg`` Hz.
        Default: the whole signal (one segment, finest resolution).
    noverlap : int, optional
        Overlap in samples; default ``nperseg // 2``.
    scaling : {"peak", "rms"}
        ``"peak"``: a sinusoid of amplitude A centred on a line reads A;
        ``"rms"``: it reads A/sqrt(2).
    detrend : {"constant", "linear", False}
        Removal of each segment's mean or straight line before windowing.
    average : {"mean", "max"}
        ``"mean"`` averages the segments' power (Welch) and takes the square root;
        ``"max"`` keeps the largest amplitude of every line (peak hold).
    units : str, optional
        Units label stored in the result.

    Returns
    -------
    Spectrum

    Notes
    -----
    With ``X`` the DFT of one windowed segment and ``S1 = sum(w)``:
    ``A_pk[k] = 2 |X[k]| / S1`` for ``0 < k < nperseg/2`` and ``|X[k]| / S1`` at
    DC and Nyquist; ``A_rms = A_pk / sqrt(2)`` except at DC and Nyquist.  The mean
    average returns ``sqrt(mean_segments(A**2))``, so ``A_rms**2`` equals
    ``scipy.signal.welch(..., scaling="spectrum")`` with the same window and
    segments.  The equivalent noise bandwidth is ``fs * sum(w**2) / S1**2`` Hz.

    References
    ----------
    .. [1] F. J. Harris, "On the use of windows for harmonic analysis with the
       discrete Fourier transform", Proc. IEEE 66(1):51-83, 1978.
    .. [2] P. D. Welch, "The use of fast Fourier transform for the estimation of
       power spectra", IEEE Trans. Audio Electroacoust. 15(2):70-73, 1967.
    .. [3] G. Heinzel, A. Ruediger, R. Schilling, "Spectrum and spectral density
       estimation by the Discrete Fourier transform (DFT)", Max-Planck-Institut
       fuer Gravitationsphysik, 2002.
    """
    x = _as_signal(x)
    fs = _check_fs(fs)
    _check_option("window", window, tuple(WINDOWS))
    _check_option("scaling", scaling, _SCALINGS)
    _check_option("detrend", detrend, _DETRENDS)
    _check_option("average", average, _AVERAGES)
    n = x.size
    if nperseg is None:
        nperseg = n
    if isinstance(nperseg, bool) or not isinstance(nperseg, (int, np.integer)) or not 1 <= nperseg <= n:
        raise AnalysisError(
            f"nperseg={nperseg} must be an integer between 1 and the signal length {n}; "
            "choose a coarser resolution or a longer record."
        )
    nperseg = int(nperseg)
    if noverlap is None:
        noverlap = nperseg // 2
    if isinstance(noverlap, bool) or not isinstance(noverlap, (int, np.integer)) or not 0 <= noverlap < nperseg:
        raise AnalysisError(f"noverlap={noverlap} must be an integer from 0 to nperseg-1 ({nperseg - 1}).")
    noverlap = int(noverlap)
    step = nperseg - noverlap
    n_seg = 1 + (n - nperseg) // step

    dtype = x.dtype
    w = window_values(window, nperseg, dtype=dtype)
    s1, s2 = _cosine_sums(window, nperseg)
    n_bins = nperseg // 2 + 1
    scale = _one_sided_scale(n_bins, nperseg, s1, scaling)

    if n_seg == 1:
        seg = _detrend_segments(x[:nperseg], detrend)
        acc = np.abs(np.fft.rfft(seg * w)) ** 2
    else:
        frames = np.lib.stride_tricks.sliding_window_view(x, nperseg)[::step][:n_seg]
        acc = np.zeros(n_bins, dtype=np.float64)
        per = max(1, _CHUNK_ELEMENTS // nperseg)
        for i0 in range(0, n_seg, per):
            seg = _detrend_segments(frames[i0:i0 + per], detrend) * w
            p = np.abs(np.fft.rfft(seg, axis=-1)) ** 2
            if average == "mean":
                acc += p.sum(axis=0, dtype=np.float64)
            else:
                np.maximum(acc, p.max(axis=0), out=acc)
        if average == "mean":
            acc /= n_seg
    amp = (np.sqrt(acc) * scale).astype(dtype, copy=False)
    freq = np.arange(n_bins) * (fs / nperseg)
    return Spectrum(
        freq_hz=_readonly(freq),
        amplitude=_readonly(np.ascontiguousarray(amp)),
        window=window,
        nperseg=nperseg,
        noverlap=noverlap if n_seg > 1 else 0,
        n_averages=n_seg,
        scaling=scaling,
        enbw_hz=fs * s2 / s1**2,
        sample_rate_hz=fs,
        units=units,
        detrend=detrend if detrend else False,
        average=average,
    )


def rfft_full(x, fs: float) -> FullSpectrum:
    """One rfft of the whole unwindowed signal, to be shared by later steps.

    Parameters
    ----------
    x : array_like, shape (n,)
        Real signal (float32 gives complex64 bins).
    fs : float
        Sample rate in Hz.

    Returns
    -------
    FullSpectrum
    """
    import scipy.fft

    x = _as_signal(x)
    fs = _check_fs(fs)
    X = scipy.fft.rfft(x)
    return FullSpectrum(X=_readonly(X), n=int(x.size), fs=fs)


def _windowed_bins(full: FullSpectrum, window: str, k0: int = 0, k1: int | None = None) -> np.ndarray:
    """Bins k0..k1-1 of the rfft of ``x * w`` computed from the unwindowed rfft.

    For w[n] = sum_j (-1)**j a_j cos(2 pi j n / N):
    ``Xw[k] = a_0 X[k] + sum_{j>=1} (-1)**j (a_j / 2) (X[k-j] + X[k+j])``,
    with ``X[-k] = conj(X[k])`` and ``X[N-k] = conj(X[k])``.
    """
    coeffs = WINDOWS[window]
    X = full.X
    n = full.n
    nb = X.size
    if k1 is None:
        k1 = nb
    ctype = X.real.dtype.type
    if len(coeffs) == 1:
        return X[k0:k1] * ctype(coeffs[0])
    m = len(coeffs) - 1

    def bins(a: int, b: int) -> np.ndarray:
        """X at indices a..b-1; outside 0..nb-1, X[i] = X[i mod n] = conj(X[n - i mod n])."""
        lo, hi = max(a, 0), min(b, nb)

        def wrapped(idx: np.ndarray) -> np.ndarray:
            j = idx % n
            mirror = j >= nb
            vals = X[np.where(mirror, n - j, j)]
            return np.where(mirror, np.conj(vals), vals)

        parts = []
        if a < 0:
            parts.append(wrapped(np.arange(a, min(b, 0))))
        if hi > lo:
            parts.append(X[lo:hi])
        if b > nb:
            parts.append(wrapped(np.arange(max(a, nb), b)))
        return parts[0] if len(parts) == 1 else np.concatenate(parts)

    ext = bins(k0 - m, k1 + m)
    width = k1 - k0
    out = ext[m:m + width] * ctype(coeffs[0])
    for j in range(1, m + 1):
        c = ctype((-1) ** j * coeffs[j] / 2.0)
        pair = ext[m - j:m - j + width] + ext[m + j:m + j + width]
        pair *= c
        out += pair
    return out


def _cosine_sums(window: str, n: int) -> tuple[float, float]:
    """``(sum(w), sum(w**2))`` of a periodic cosine-sum window, in closed form.

    ``sum(w) = a_0 n`` and ``sum(w**2) = n (a_0**2 + sum_{j>=1} a_j**2 / 2)``
    (exact when ``n > 2 * (number of terms - 1)``, else summed directly).
    """
    a = WINDOWS[window]
    if n <= 2 * (len(a) - 1):
        w = window_values(window, n)
        s1, s2 = float(w.sum()), float(np.dot(w, w))
    else:
        s1, s2 = a[0] * n, n * (a[0] ** 2 + sum(c * c for c in a[1:]) / 2.0)
    if not s1 > 1e-12 * n:
        raise AnalysisError(f"a {window} window of {n} samples sums to zero; use more samples or the rectangular window.")
    return s1, s2


def _amplitude_from_bins(xw: np.ndarray, k0: int, n: int, s1: float, scaling: str) -> np.ndarray:
    """Scale ``|Xw|`` of bins k0.. into a one-sided amplitude (in the bins' real dtype)."""
    amp = np.abs(xw)
    factor = 2.0 / s1 if scaling == "peak" else np.sqrt(2.0) / s1
    amp *= amp.dtype.type(factor)
    edge = 1.0 / s1
    if k0 == 0 and amp.size:
        amp[0] = abs(xw[0]) * edge
    if n % 2 == 0:
        k_nyq = n // 2
        if k0 <= k_nyq < k0 + amp.size:
            amp[k_nyq - k0] = abs(xw[k_nyq - k0]) * edge
    return amp


def _full_amplitude(full: FullSpectrum, window: str, s1: float, scaling: str) -> np.ndarray:
    """One-sided amplitude of every bin of the windowed rfft, block by block.

    The same arithmetic as ``_amplitude_from_bins(_windowed_bins(full, window), ...)``
    done on blocks of :data:`_BLOCK_BINS` lines, so the complex temporaries stay small.
    """
    nb = full.X.size
    amp = np.empty(nb, dtype=full.X.real.dtype)
    for k0 in range(0, nb, _BLOCK_BINS):
        k1 = min(k0 + _BLOCK_BINS, nb)
        amp[k0:k1] = _amplitude_from_bins(_windowed_bins(full, window, k0, k1), k0, full.n, s1, scaling)
    return amp


def spectrum_from_rfft(full: FullSpectrum, *, window: str = "hann", scaling: str = "peak", units: str = "") -> Spectrum:
    """Single-segment amplitude spectrum at full resolution from the shared rfft.

    Parameters
    ----------
    full : FullSpectrum
        From :func:`rfft_full`.
    window : str, optional
        One of :data:`WINDOWS`.
    scaling : {"peak", "rms"}
    units : str, optional

    Returns
    -------
    Spectrum
        Equal (to rounding) to ``amplitude_spectrum(x, fs, window=window,
        detrend=False)``; no second FFT is made.

    Notes
    -----
    The periodic Hann window is ``w[n] = 0.5 - 0.5 cos(2 pi n / N)``, so the
    rfft of ``x w`` is the 3-tap convolution
    ``Xw[k] = 0.5 X[k] - 0.25 X[k-1] - 0.25 X[k+1]`` of the unwindowed rfft
    ``X``; every cosine-sum window (the flat-top has 5 coefficients) works the
    same way with ``(-1)**j a_j / 2`` taps.  Bins beyond the ends are taken
    from the conjugate symmetry of the DFT of a real signal.

    References
    ----------
    .. [1] F. J. Harris, "On the use of windows for harmonic analysis with the
       discrete Fourier transform", Proc. IEEE 66(1):51-83, 1978 (windows as
       sums of cosines applied in the frequency domain).
    """
    _check_option("window", window, tuple(WINDOWS))
    _check_option("scaling", scaling, _SCALINGS)
    n = full.n
    s1, s2 = _cosine_sums(window, n)
    amp = _full_amplitude(full, window, s1, scaling)
    return _record_spectrum(full, full.freq_hz, amp, window, scaling, units, enbw_hz=full.fs * s2 / s1**2)



def _record_spectrum(full, freq_hz, amplitude, window: str, scaling: str, units: str, *, enbw_hz: float,
                     **fields) -> Spectrum:
    """A :class:`Spectrum` taken from the one rfft of the whole record (one segment, no overlap)."""
    values = dict(n_averages=1, average="mean")
    values.update(fields)
    return Spectrum(freq_hz=_readonly(freq_hz), amplitude=_readonly(amplitude), window=window, nperseg=full.n,
                    noverlap=0, scaling=scaling, enbw_hz=enbw_hz, sample_rate_hz=full.fs, units=units,
                    detrend=False, **values)

def zoom_spectrum(
    x_or_full,
    fs: float | None,
    center_hz: float,
    span_hz: float,
    *,
    window: str = "hann",
    scaling: str = "peak",
    units: str = "",
) -> Spectrum:
    """High-resolution band of a spectrum: the lines of one long FFT near ``center_hz``.

    Parameters
    ----------
    x_or_full : array_like or FullSpectrum
        The signal, or the shared rfft from :func:`rfft_full` (then no FFT is made).
    fs : float or None
        Sample rate in Hz (may be None when a FullSpectrum is given).
    center_hz, span_hz : float
        Band ``[center_hz - span_hz/2, center_hz + span_hz/2]`` in Hz, clipped to
        ``[0, fs/2]``.
    window : str, optional
    scaling : {"peak", "rms"}
    units : str, optional

    Returns
    -------
    Spectrum
        Lines spaced ``fs / n`` Hz (the whole record is one segment).

    Notes
    -----
    A zoom by "band of a long FFT": the resolution is that of the full record,
    and only the band's lines are windowed (cosine-sum convolution, see
    :func:`spectrum_from_rfft`).
    """
    if isinstance(x_or_full, FullSpectrum):
        full = x_or_full
        if fs is not None and not np.isclose(float(fs), full.fs, rtol=1e-12):
            raise AnalysisError(f"fs={fs} does not match the rfft's sample rate {full.fs}; pass fs=None or the same rate.")
    else:
        full = rfft_full(x_or_full, fs)
    _check_option("window", window, tuple(WINDOWS))
    _check_option("scaling", scaling, _SCALINGS)
    center_hz = float(center_hz)
    span_hz = float(span_hz)
    nyq = full.fs / 2.0
    if not (np.isfinite(span_hz) and span_hz > 0):
        raise AnalysisError(f"span_hz={span_hz} must be a positive width in Hz.")
    if not (np.isfinite(center_hz) and 0.0 <= center_hz <= nyq):
        raise AnalysisError(f"center_hz={center_hz} must lie between 0 and the Nyquist frequency {nyq} Hz.")
    df = full.resolution_hz
    k0 = max(0, int(np.floor((center_hz - span_hz / 2.0) / df)))
    k1 = min(full.X.size, int(np.ceil((center_hz + span_hz / 2.0) / df)) + 1)
    n = full.n
    xw = _windowed_bins(full, window, k0, k1)
    s1, s2 = _cosine_sums(window, n)
    amp = _amplitude_from_bins(xw, k0, n, s1, scaling)
    return _record_spectrum(full, np.arange(k0, k1) * df, amp, window, scaling, units,
                            enbw_hz=full.fs * s2 / s1**2)


def band_spectrum_from_rfft(
    full: FullSpectrum,
    resolution_hz: float,
    *,
    window: str = "hann",
    scaling: str = "peak",
    units: str = "",
) -> Spectrum:
    """Coarser-resolution spectrum from the shared rfft, with no further FFT.

    Parameters
    ----------
    full : FullSpectrum
        From :func:`rfft_full`.
    resolution_hz : float
        Wanted line spacing in Hz; rounded to a whole number ``m`` of the full
        record's lines (``m * fs / n``, at least one line).
    window : str, optional
        Window applied to the whole record before grouping (by the cosine-sum
        convolution of :func:`spectrum_from_rfft`).
    scaling : {"peak", "rms"}
    units : str, optional

    Returns
    -------
    Spectrum
        Line ``j`` (at ``j m fs / n`` Hz) is the RMS of the band of full-resolution
        lines ``j m - m/2 .. j m + m/2``: ``sqrt(sum A_rms[k]**2 / ENBW_bins)``
        (times sqrt 2 with ``scaling="peak"``, except line 0 which holds DC).
        ``average="band"``, ``enbw_hz`` equals the line spacing, so
        :func:`band_rms` of the result is exact.

    Notes
    -----
    This is frequency-domain averaging of the periodogram (Daniell's method)
    rather than Welch's segment averaging.  Its variance reduction is similar
    (``m`` lines per band instead of ``m`` segments).  Readings differ from a
    Welch spectrum in two ways: a tone inside one band reads its true amplitude
    wherever it falls in the band (no scalloping), but a tone on a band edge
    splits its power between two lines (reads ``A/sqrt 2`` in each, -3 dB); and
    broadband noise reads ``10 log10(ENBW_bins)`` lower than Welch with the same
    window (1.76 dB for Hann), because each line is a band power.

    References
    ----------
    .. [1] P. J. Daniell, discussion of "On the theoretical specification and
       sampling properties of autocorrelated time-series", J. Royal Statistical
       Society Suppl. 8(1):88-90, 1946.
    .. [2] G. Heinzel, A. Ruediger, R. Schilling, "Spectrum and spectral density
       estimation by the Discrete Fourier transform (DFT)", 2002.
    """
    _check_option("window", window, tuple(WINDOWS))
    _check_option("scaling", scaling, _SCALINGS)
    resolution_hz = float(resolution_hz)
    df = full.resolution_hz
    if not (np.isfinite(resolution_hz) and resolution_hz > 0):
        raise AnalysisError(f"resolution_hz={resolution_hz} must be a positive line spacing in Hz.")
    m = max(1, int(round(resolution_hz / df)))
    n = full.n
    s1, s2 = _cosine_sums(window, n)
    enbw_bins = n * s2 / s1**2
    amp = _amplitude_from_bins(_windowed_bins(full, window), 0, n, s1, "rms")
    power = amp.astype(np.float64) ** 2 / enbw_bins
    starts = np.concatenate(([0], np.arange(m - m // 2, power.size, m)))
    line = np.sqrt(np.add.reduceat(power, starts))
    if scaling == "peak":
        line[1:] *= np.sqrt(2.0)
    freq = np.arange(line.size) * (m * df)
    return _record_spectrum(full, freq, line.astype(full.X.real.dtype, copy=False), window, scaling, units,
                            enbw_hz=m * df, n_averages=m, average="band", line_spacing_hz=m * df)


def band_spectrum(spectrum: Spectrum, resolution_hz: float, *, scaling: str | None = None) -> Spectrum:
    """Coarser-resolution spectrum by grouping the lines of a one-segment spectrum.

    The same band spectrum as :func:`band_spectrum_from_rfft` (line ``j`` is the
    RMS of the full-resolution lines ``j m - m/2 .. j m + m/2``), made from a
    spectrum already at the full record's resolution (for example the one of
    :func:`spectrum_from_rfft`) instead of from the rfft, block by block: no
    further FFT and no full-length temporary.

    Parameters
    ----------
    spectrum : Spectrum
        A single-segment spectrum (``n_averages == 1``, ``average="mean"``).
    resolution_hz : float
        Wanted line spacing in Hz; rounded to a whole number ``m`` of lines.
    scaling : {"peak", "rms"}, optional
        Scaling of the result; default that of ``spectrum``.

    Returns
    -------
    Spectrum
        ``average="band"``, ``enbw_hz`` equal to the line spacing (so
        :func:`band_rms` of the result is exact), ``n_averages = m``.

    References
    ----------
    .. [1] P. J. Daniell, discussion of "On the theoretical specification and
       sampling properties of autocorrelated time-series", J. Royal Statistical
       Society Suppl. 8(1):88-90, 1946.
    .. [2] G. Heinzel, A. Ruediger, R. Schilling, "Spectrum and spectral density
       estimation by the Discrete Fourier transform (DFT)", 2002.
    """
    scaling = spectrum.scaling if scaling is None else scaling
    _check_option("scaling", scaling, _SCALINGS)
    if spectrum.n_averages != 1 or spectrum.average != "mean":
        raise AnalysisError("band_spectrum needs a single-segment spectrum at the record's resolution "
                            "(spectrum_from_rfft); pass that one, not an averaged spectrum.")
    resolution_hz = float(resolution_hz)
    if not (np.isfinite(resolution_hz) and resolution_hz > 0):
        raise AnalysisError(f"resolution_hz={resolution_hz} must be a positive line spacing in Hz.")
    df = spectrum.resolution_hz
    m = max(1, int(round(resolution_hz / df)))
    f = np.asarray(spectrum.freq_hz)
    amp = np.asarray(spectrum.amplitude)
    size = amp.size
    enbw_bins = spectrum.enbw_bins
    first = min(m - m // 2, size)                      # line 0 holds bins 0 .. first - 1
    bounds = np.concatenate(([0], np.arange(first, size, m), [size]))
    n_lines = bounds.size - 1
    line = np.empty(n_lines)
    per_block = max(1, _BLOCK_BINS // m)               # lines per block
    for j0 in range(0, n_lines, per_block):
        j1 = min(j0 + per_block, n_lines)
        a, b = int(bounds[j0]), int(bounds[j1])
        r = _rms_block(spectrum, f[a:b], amp[a:b])
        line[j0:j1] = np.add.reduceat(r * r, bounds[j0:j1] - a)
    line /= enbw_bins
    np.sqrt(line, out=line)
    if scaling == "peak":
        line[1:] *= np.sqrt(2.0)
    freq = np.arange(n_lines) * (m * df)
    return Spectrum(
        freq_hz=_readonly(freq),
        amplitude=_readonly(line.astype(amp.dtype if amp.dtype == np.float32 else np.float64, copy=False)),
        window=spectrum.window,
        nperseg=spectrum.nperseg,
        noverlap=0,
        n_averages=m,
        scaling=scaling,
        enbw_hz=m * df,
        sample_rate_hz=spectrum.sample_rate_hz,
        units=spectrum.units,
        detrend=False,
        average="band",
        line_spacing_hz=m * df,
    )


# --------------------------------------------------------------------------- integration, band RMS


def integrate_spectrum(freq_hz, amplitude, *, units: str = "g", to: str = "velocity", cutoff_hz: float = 2.0) -> np.ndarray:
    """Integrate an acceleration amplitude spectrum to velocity or displacement.

    Parameters
    ----------
    freq_hz : array_like
        Line frequencies in Hz.
    amplitude : array_like
        Acceleration amplitude per line (peak or RMS, unchanged by this function)
        in ``units``.
    units : {"g", "m/s2"}
        Units of ``amplitude``; ``1 g = 9.80665 m/s^2`` exactly.
    to : {"velocity", "displacement"}
        Velocity is returned in mm/s, displacement in micrometres.
    cutoff_hz : float, optional
        Lines below this frequency (and DC) are set to zero to avoid the
        low-frequency blow-up of ``1/f`` and ``1/f^2``.

    Returns
    -------
    numpy.ndarray
        ``v = a / (2 pi f)`` (mm/s) or ``d = a / (2 pi f)^2`` (um), same shape and
        floating dtype as ``amplitude``.
    """
    _check_option("units", units, _UNITS)
    _check_option("to", to, _INTEGRALS)
    f = np.asarray(freq_hz, dtype=np.float64)
    a = np.asarray(amplitude)
    if f.shape != a.shape:
        raise AnalysisError(f"freq_hz has shape {f.shape} but amplitude has {a.shape}; pass arrays of one spectrum.")
    cutoff_hz = float(cutoff_hz)
    if not np.isfinite(cutoff_hz) or cutoff_hz < 0:
        raise AnalysisError(f"cutoff_hz={cutoff_hz} must be zero or a positive frequency in Hz.")
    out_dtype = a.dtype if a.dtype in (np.float32, np.float64) else np.float64
    out = np.empty(a.shape, dtype=out_dtype)
    fr, ar, orr = f.reshape(-1), a.reshape(-1), out.reshape(-1)
    for i in range(0, fr.size, _BLOCK_BINS):  # float64 arithmetic in blocks: small temporaries
        fb = fr[i:i + _BLOCK_BINS]
        a_si = ar[i:i + _BLOCK_BINS].astype(np.float64) * (G_N_M_S2 if units == "g" else 1.0)
        if fb.size and float(fb.min()) >= cutoff_hz and float(fb.min()) > 0:
            keep = None                                # every line of the block is kept
            omega = 2.0 * np.pi * fb
        else:
            keep = (fb >= cutoff_hz) & (fb > 0)
            omega = 2.0 * np.pi * np.where(keep, fb, 1.0)
        if to == "velocity":
            ob = a_si / omega * 1e3
        else:
            ob = a_si / omega**2 * 1e6
        if keep is not None:
            ob[~keep] = 0.0
        orr[i:i + _BLOCK_BINS] = ob
    return out


def velocity_spectrum(spectrum: Spectrum, *, units: str = "g", cutoff_hz: float = 2.0, to: str = "velocity") -> Spectrum:
    """The :class:`Spectrum` of velocity (mm/s) or displacement (um) of an acceleration spectrum."""
    amp = integrate_spectrum(spectrum.freq_hz, spectrum.amplitude, units=units, to=to, cutoff_hz=cutoff_hz)
    return replace(spectrum, amplitude=_readonly(amp), units="mm/s" if to == "velocity" else "um")


def band_rms(spectrum: Spectrum, lo_hz: float, hi_hz: float) -> float:
    """Overall RMS of the lines between ``lo_hz`` and ``hi_hz`` (inclusive).

    Parameters
    ----------
    spectrum : Spectrum
    lo_hz, hi_hz : float
        Band edges in Hz.

    Returns
    -------
    float
        ``sqrt(sum_k A_rms[k]**2 / ENBW_bins)`` in the spectrum's units.

    Notes
    -----
    Dividing by the window's ENBW (in lines) corrects for the power a window
    spreads over neighbouring lines, so a tone or broadband noise gives its true
    RMS.  For the rectangular window over the whole band this is Parseval's
    theorem.

    References
    ----------
    .. [1] G. Heinzel, A. Ruediger, R. Schilling, "Spectrum and spectral density
       estimation by the Discrete Fourier transform (DFT)", 2002, section 10.
    """
    lo_hz, hi_hz = float(lo_hz), float(hi_hz)
    if not hi_hz >= lo_hz:
        raise AnalysisError(f"band [{lo_hz}, {hi_hz}] Hz is empty; give lo_hz <= hi_hz.")
    f = np.asarray(spectrum.freq_hz)
    amp = np.asarray(spectrum.amplitude)
    total = 0.0
    for i in range(0, f.size, _BLOCK_BINS):  # in blocks: no full-length float64 copy
        fb = f[i:i + _BLOCK_BINS]
        sel = (fb >= lo_hz) & (fb <= hi_hz)
        if sel.any():
            a = _rms_block(spectrum, fb, amp[i:i + _BLOCK_BINS])[sel]
            total += float(np.sum(a * a))
    return float(np.sqrt(total / spectrum.enbw_bins))


def power_spectral_density(spectrum: Spectrum) -> np.ndarray:
    """One-sided power spectral density ``A_rms**2 / enbw_hz`` in units^2/Hz.

    Equals ``G[k] = 2 |X[k]|^2 / (fs sum(w^2))`` (not doubled at DC or Nyquist),
    the same as ``scipy.signal.welch(..., scaling="density")`` for the same
    segments (Heinzel et al. 2002).
    """
    a = rms_amplitude(spectrum)
    return a * a / spectrum.enbw_hz


def to_cpm(freq_hz):
    """Frequency in cycles per minute (``freq_hz * 60``)."""
    return np.asarray(freq_hz) * 60.0


def to_orders(freq_hz, shaft_hz: float):
    """Frequency as orders of a shaft (``freq_hz / shaft_hz``)."""
    shaft_hz = float(shaft_hz)
    if not (np.isfinite(shaft_hz) and shaft_hz > 0):
        raise AnalysisError(f"shaft_hz={shaft_hz} must be a positive shaft rate in Hz.")
    return np.asarray(freq_hz) / shaft_hz
