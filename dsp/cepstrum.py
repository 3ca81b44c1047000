"""Real cepstrum, rahmonics of shaft-rate families, and cepstral editing.

A family of spectral lines with uniform spacing ``df`` (gear-mesh sidebands at a
shaft rate, harmonics of a shaft or of a bearing fault) shows in the cepstrum as
peaks ("rahmonics") at quefrencies ``1/df, 2/df, ...``.

This module imports numpy only.

References
----------
.. [1] B. P. Bogert, M. J. R. Healy, J. W. Tukey, "The quefrency alanysis of time
   series for echoes: cepstrum, pseudo-autocovariance, cross-cepstrum and saphe
   cracking", Proc. Symposium on Time Series Analysis, Wiley, pp. 209-243, 1963.
.. [2] R. B. Randall, "A history of cepstrum analysis and its application to
   mechanical problems", Mechanical Systems and Signal Processing 97:3-19, 2017.
.. [3] A. V. Oppenheim, R. W. Schafer, "From frequency to quefrency: a history
   of the cepstrum", IEEE Signal Processing Magazine 21(5):95-106, 2004.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from dsp.errors import AnalysisError
from dsp.spectrum import FullSpectrum, _readonly, rfft_full

__all__ = [
    "Cepstrum",
    "Rahmonics",
    "real_cepstrum",
    "cepstrum_from_rfft",
    "rahmonic_positions",
    "rahmonic_strength",
    "edit_cepstrum",
]

_EPS_RELATIVE = 1e-10


@dataclass(frozen=True)
class Cepstrum:
    """Real cepstrum of a record (first half; the real cepstrum is even).

    Attributes
    ----------
    quefrency_s : numpy.ndarray
        Quefrency of each value in seconds (``m / fs``, m = 0..n//2).
    values : numpy.ndarray
        ``c[m] = IFFT(ln(|X| + eps))[m]`` (dimensionless).
    sample_rate_hz : float
        Quefrency sample rate: the quefrency step is ``1 / sample_rate_hz``
        (the signal's sample rate, or ``2 max_freq_hz`` for a band-limited cepstrum).
    eps : float
        Constant added to ``|X|`` before the logarithm.
    n : int
        Length of the inverse FFT (the signal's length, unless band-limited).
    """

    quefrency_s: np.ndarray
    values: np.ndarray
    sample_rate_hz: float
    eps: float
    n: int


@dataclass(frozen=True)
class Rahmonics:
    """Cepstrum peaks found near the rahmonics ``k / shaft_hz``.

    Attributes
    ----------
    shaft_hz : float
    expected_s : numpy.ndarray
        ``k / shaft_hz`` for k = 1..n, in seconds.
    quefrency_s : numpy.ndarray
        Where the largest value within the tolerance was found.
    values : numpy.ndarray
        The largest cepstrum value within ``tolerance_s`` of each rahmonic.
    tolerance_s : numpy.ndarray
        Half-width of each search window in seconds.
    floor : float
        Robust spread of the cepstrum (1.4826 x median absolute deviation)
        between half the first and beyond the last rahmonic: a noise yardstick.
    """

    shaft_hz: float
    expected_s: np.ndarray
    quefrency_s: np.ndarray
    values: np.ndarray
    tolerance_s: np.ndarray
    floor: float

    @property
    def strength(self) -> float:
        """Mean peak value of the rahmonics."""
        return float(np.mean(self.values))

    @property
    def prominence(self) -> float:
        """``strength / floor`` (nan when the floor is zero)."""
        return self.strength / self.floor if self.floor > 0 else float("nan")

    @property
    def support(self) -> float:
        """0..1 score: 0 up to a prominence of 3 (three robust standard deviations,
        a common practice threshold), rising linearly to 1 at a prominence of 10."""
        p = self.prominence
        if not np.isfinite(p):
            return 0.0
        return float(np.clip((p - 3.0) / 7.0, 0.0, 1.0))

    def __float__(self) -> float:
        """``float(rahmonics)`` is :attr:`support` (0..1)."""
        return self.support


def _eps_for(mag: np.ndarray, eps: float | None) -> float:
    if eps is None:
        top = float(np.max(mag)) if mag.size else 0.0
        return _EPS_RELATIVE * top if top > 0 else 1e-300
    eps = float(eps)
    if not (np.isfinite(eps) and eps > 0):
        raise AnalysisError(f"eps={eps} must be a small positive number added to |X| before the logarithm.")
    return eps


def cepstrum_from_rfft(full: FullSpectrum, *, eps: float | None = None, max_freq_hz: float | None = None) -> Cepstrum:
    """Real cepstrum from the shared rfft of the whole record (one inverse FFT).

    Parameters
    ----------
    full : FullSpectrum
        From :func:`dsp.spectrum.rfft_full`.
    eps : float, optional
        Added to ``|X|`` before the logarithm to avoid ``ln 0``; default
        ``1e-10 * max|X|`` (200 dB below the largest line).
    max_freq_hz : float, optional
        Use the log spectrum only up to this frequency (e.g. the highest mesh
        harmonic of interest).  The inverse FFT is then shorter and the
        quefrency step becomes ``1 / (2 max_freq_hz)`` s instead of ``1/fs``;
        the longest quefrency (half the record) is unchanged.

    Returns
    -------
    Cepstrum

    Notes
    -----
    ``c = IFFT(ln(|X| + eps))`` with the inverse real FFT of length ``n``; only
    quefrencies ``0 .. n//2`` are kept because the real cepstrum of a real
    signal is even.  With ``max_freq_hz`` the bins ``0 .. K`` (``K`` the bin of
    ``max_freq_hz``) are inverse transformed with length ``2K``, as if the
    signal had been low-pass filtered and resampled at ``2 max_freq_hz``.

    References
    ----------
    .. [1] R. B. Randall, "A history of cepstrum analysis and its application
       to mechanical problems", Mechanical Systems and Signal Processing
       97:3-19, 2017.
    .. [2] B. P. Bogert, M. J. R. Healy, J. W. Tukey, "The quefrency alanysis of
       time series for echoes", Proc. Symposium on Time Series Analysis, 1963.
    """
    X = full.X
    n = full.n
    fs_q = full.fs
    if max_freq_hz is not None:
        f_max = float(max_freq_hz)
        if not (np.isfinite(f_max) and f_max > 0):
            raise AnalysisError(f"max_freq_hz={max_freq_hz} must be a positive frequency in Hz.")
        k = int(round(f_max / full.resolution_hz))
        if k < X.size - 1:
            k = max(k, 2)
            X = X[: k + 1]
            n = 2 * k
            fs_q = n * full.resolution_hz
    import scipy.fft  # about twice as fast as numpy's for float32 (the shared rfft is complex64)

    mag = np.abs(X)
    e = _eps_for(mag, eps)
    mag += mag.dtype.type(e)
    c = scipy.fft.irfft(np.log(mag, out=mag), n=n, overwrite_x=True)
    half = c[: n // 2 + 1].copy()
    return Cepstrum(
        quefrency_s=_readonly(np.arange(half.size) / fs_q),
        values=_readonly(half),
        sample_rate_hz=fs_q,
        eps=e,
        n=n,
    )


def real_cepstrum(x, fs: float, *, eps: float | None = None) -> Cepstrum:
    """Real cepstrum ``IFFT(ln(|FFT(x)| + eps))`` of a signal.

    Parameters
    ----------
    x : array_like
        Real signal (float32 stays float32).
    fs : float
        Sample rate in Hz.
    eps : float, optional
        See :func:`cepstrum_from_rfft`.

    Returns
    -------
    Cepstrum

    References
    ----------
    .. [1] R. B. Randall, "A history of cepstrum analysis and its application
       to mechanical problems", Mechanical Systems and Signal Processing
       97:3-19, 2017.
    .. [2] A. V. Oppenheim, R. W. Schafer, "From frequency to quefrency: a
       history of the cepstrum", IEEE Signal Processing Magazine 21(5):95-106, 2004.
    """
    return cepstrum_from_rfft(rfft_full(x, fs), eps=eps)


def rahmonic_positions(shaft_hz: float, n: int = 5) -> np.ndarray:
    """Quefrencies ``k / shaft_hz`` (k = 1..n) in seconds where a shaft's family shows."""
    shaft_hz = float(shaft_hz)
    if not (np.isfinite(shaft_hz) and shaft_hz > 0):
        raise AnalysisError(f"shaft_hz={shaft_hz} must be a positive shaft rate in Hz.")
    if int(n) < 1:
        raise AnalysisError(f"n={n} must be at least 1 rahmonic.")
    return np.arange(1, int(n) + 1) / shaft_hz


def rahmonic_strength(
    cepstrum: Cepstrum,
    shaft_hz: float,
    n: int = 3,
    *,
    tolerance: float = 0.01,
    min_samples: int = 2,
) -> Rahmonics:
    """Peak cepstrum values near the first ``n`` rahmonics of a shaft rate.

    Parameters
    ----------
    cepstrum : Cepstrum
    shaft_hz : float
        Shaft rate (the line spacing of its sideband family) in Hz.
    n : int, optional
        Number of rahmonics.
    tolerance : float, optional
        Relative half-width of each search window (0.01 = +-1 % of ``k/shaft_hz``,
        room for speed variation) ...
    min_samples : int, optional
        ... but at least this many samples each side.

    Returns
    -------
    Rahmonics
        Peak values and where they were found; ``.strength`` (mean peak value),
        ``.prominence`` (strength over the cepstrum's robust spread) and
        ``.support`` (0..1, also given by ``float(result)``).

    Examples
    --------
    >>> r = rahmonic_strength(cepstrum_from_rfft(full), shaft_hz=50.0, n=3)  # doctest: +SKIP
    >>> r.quefrency_s, r.support                                             # doctest: +SKIP

    References
    ----------
    .. [1] R. B. Randall, "A new method of modeling gear faults", Journal of
       Mechanical Design 104:259-267, 1982.
    .. [2] R. B. Randall, "A history of cepstrum analysis and its application
       to mechanical problems", Mechanical Systems and Signal Processing
       97:3-19, 2017.
    """
    expected = rahmonic_positions(shaft_hz, n)
    fs = cepstrum.sample_rate_hz
    q_max = cepstrum.quefrency_s[-1]
    if expected[-1] > q_max:
        raise AnalysisError(
            f"rahmonic {n} of {shaft_hz:g} Hz lies at {expected[-1]:.4g} s, beyond the cepstrum's {q_max:.4g} s; "
            "use fewer rahmonics or a longer record."
        )
    v = np.asarray(cepstrum.values, dtype=np.float64)
    tol_s = np.maximum(float(tolerance) * expected, int(min_samples) / fs)
    found_q = np.empty(expected.size)
    found_v = np.empty(expected.size)
    for i, (q, tol) in enumerate(zip(expected, tol_s)):
        i0 = max(1, int(np.floor((q - tol) * fs)))
        i1 = min(v.size - 1, int(np.ceil((q + tol) * fs)))
        j = i0 + int(np.argmax(v[i0:i1 + 1]))
        found_q[i] = j / fs
        found_v[i] = v[j]
    a = max(1, int(0.5 * expected[0] * fs))
    b = min(v.size, int((expected[-1] + 0.5 * expected[0]) * fs) + 1)
    seg = v[a:b]
    floor = float(1.4826 * np.median(np.abs(seg - np.median(seg)))) if seg.size else float("nan")
    return Rahmonics(
        shaft_hz=float(shaft_hz),
        expected_s=_readonly(expected),
        quefrency_s=_readonly(found_q),
        values=_readonly(found_v),
        tolerance_s=_readonly(tol_s),
        floor=floor,
    )


def edit_cepstrum(
    x,
    fs: float,
    shaft_hz,
    *,
    n_rahmonics: int | None = None,
    notch_samples: int = 2,
    notch_relative: float = 0.005,
    eps: float | None = None,
) -> np.ndarray:
    """Remove discrete families (shaft harmonics, gear sidebands) from a signal by cepstral editing.

    Parameters
    ----------
    x : array_like
        Real signal.
    fs : float
        Sample rate in Hz.
    shaft_hz : float or sequence of float
        Line spacings of the families to remove (shaft rates, mesh frequency...).
    n_rahmonics : int, optional
        Rahmonics notched per family; default all up to half the record.
    notch_samples : int, optional
        Minimum half-width of each notch in samples ...
    notch_relative : float, optional
        ... or this fraction of the rahmonic's quefrency, whichever is larger.
    eps : float, optional
        See :func:`cepstrum_from_rfft`.

    Returns
    -------
    numpy.ndarray
        The edited signal (same length and dtype as ``x``): the real cepstrum is
        notched at ``k / shaft_hz``, transformed back to a log-amplitude
        spectrum, exponentiated, recombined with the ORIGINAL phase and inverse
        transformed.

    Notes
    -----
    Editing the real cepstrum changes only the amplitude spectrum; the phase is
    kept, so impulsive (bearing) content not belonging to the notched families
    survives.  This is the pre-whitening / discrete-component removal step
    before envelope analysis.

    References
    ----------
    .. [1] R. B. Randall, N. Sawalhi, "A new method for separating discrete
       components from a signal", Sound & Vibration 45(5):6-9, 2011.
    .. [2] R. B. Randall, "A history of cepstrum analysis and its application
       to mechanical problems", Mechanical Systems and Signal Processing
       97:3-19, 2017.
    """
    full = rfft_full(x, fs)
    n = full.n
    spacings = np.atleast_1d(np.asarray(shaft_hz, dtype=np.float64))
    if spacings.size == 0 or not np.all(np.isfinite(spacings) & (spacings > 0)):
        raise AnalysisError(f"shaft_hz={shaft_hz!r} must be one or more positive frequencies in Hz.")
    mag = np.abs(full.X).astype(np.float64)
    e = _eps_for(mag, eps)
    c = np.fft.irfft(np.log(mag + e), n=n)
    half = n // 2
    for f in spacings:
        k_max = int(np.floor(half / fs * f))
        if n_rahmonics is not None:
            k_max = min(k_max, int(n_rahmonics))
        for k in range(1, k_max + 1):
            q = k * fs / f  # in samples
            w = max(float(notch_samples), notch_relative * q)
            i0 = max(1, int(np.floor(q - w)))
            i1 = min(half, int(np.ceil(q + w)))
            c[i0:i1 + 1] = 0.0
            c[n - i1:n - i0 + 1] = 0.0  # the even mirror
    log_mag = np.fft.rfft(c).real
    edited = np.exp(log_mag) * np.exp(1j * np.angle(full.X))
    out = np.fft.irfft(edited, n=n)
    return out.astype(full.X.real.dtype, copy=False)
