"""Time-synchronous averaging (TSA) per shaft and the signals derived from it.

The TSA of a shaft is the average of its revolutions, taken in the angle domain so
that speed changes do not smear it.  Here it is computed as the Fourier series of
that average, straight from the time samples::

    c_k = (1 / N) * integral over N whole revolutions of x(t) exp(-j 2 pi k theta(t)) dtheta

where ``theta`` is the shaft angle in revolutions.  The integral is a sum over the
time samples weighted by the angle each sample spans (the derivative of the
profile), so revolution boundaries fall at any sub-sample angle and the signal itself
is never interpolated.  The window's two ends are smooth steps (an erf of standard
deviation 9 samples centred on the exact boundary time), which makes the sum
independent of where the boundary falls between samples.  The sum is folded onto
one revolution by spreading every weighted sample onto a fine angular grid (at least
32 cells per period of the highest order kept) with a linear B-spline (tent) kernel,
and one FFT of that grid gives all the ``c_k`` at once (a type-1 non-uniform FFT,
Dutt & Rokhlin 1993; the kernel is applied through the moments sum(y mu^p), p = 0, 1,
of each sample's cell fraction mu, which costs one complex accumulation per sample
and shaft).  The kernel is divided out exactly (``sinc**2``); what remains is its
aliasing, at most ``(1/31)**2 + (1/33)**2 = 2e-3`` of a component's amplitude at
the highest order kept (``2 (k / G)**2`` at order ``k`` of a grid of ``G`` cells,
1e-6 at order 3 of a 256-sample revolution), in the worst case where the sample
positions repeat from revolution to revolution (constant speed with whole samples
per revolution); when they do not repeat the aliasing spreads as noise.  Measured: a
pure order at constant speed to ~1e-6, and a pattern with harmonics up to 0.4 fs
under +-3 % speed wander to 7.5e-5 of its peak (float32 and float64 input alike;
the per-sample angle work and the grid are float32, block angles float64).

Orders are kept up to the time-domain Nyquist frequency at the shaft's highest
speed (and below ``samples_per_rev / 2``), so the average is free of angular
aliasing and is the band-limited periodic waveform sampled ``samples_per_rev``
times per revolution.

Derived signals follow domain-reference section 3.3 (Stewart 1977; Lebold et al.
2000): see :func:`regular_signal`, :func:`residual_signal`, :func:`difference_signal`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Mapping, Sequence

import numpy as np

from .errors import AnalysisError, GearbenchError

__all__ = [
    "TSA",
    "Demodulation",
    "tsa",
    "tsa_shafts",
    "default_samples_per_rev",
    "regular_signal",
    "residual_signal",
    "difference_signal",
    "demodulate",
    "tsa_comb_response",
]

# Fine-grid cells per period of the highest order kept, for the spreading step (tent
# kernel; 8 cells per output sample with a cubic kernel and four moments were 1.7x
# slower for a TSA of 3 shafts), and the samples per block
# of the cubic-Hermite evaluation of the shaft angle (see _Angles).
_OVERSAMPLE = 32
_BLOCK = 32


@dataclass(frozen=True)
class TSA:
    """Time-synchronous average of one shaft.

    Attributes
    ----------
    shaft : str
        Shaft name (free text, as given).
    shaft_order : float
        Shaft speed divided by the speed of the profile's (tach) shaft.
    samples_per_rev : int
        Angle samples per revolution of this shaft, ``P``.
    n_revs : int
        Whole revolutions averaged, ``N``.
    angle_deg : numpy.ndarray
        Angle of each sample, degrees, ``360 * p / P`` (read-only).  Angle 0 is a
        whole revolution of this shaft counted from the profile's angle 0 (the
        first tach pulse when the shaft carries the tach).
    average : numpy.ndarray
        The averaged revolution, signal units, ``P`` samples (read-only).
    rev_start : int
        Index of the first averaged revolution, counted from the profile's angle 0.
    t_start_s, t_end_s : float
        Times of the first and last revolution boundary used, s.
    max_order : int
        Highest shaft order kept in ``average``; higher orders are zero.
    sample_rate_hz : float
        Sampling rate of the input signal, Hz.
    shaft_min_hz, shaft_max_hz : float
        Slowest and fastest speed of this shaft over the averaged span, Hz.
    coefficients : numpy.ndarray
        Complex Fourier coefficients ``c_k`` of the average, k = 0 .. P/2, so that
        ``average = c_0 + 2 Re sum_k c_k exp(j 2 pi k p / P)`` (read-only).
    """

    shaft: str
    shaft_order: float
    samples_per_rev: int
    n_revs: int
    angle_deg: np.ndarray
    average: np.ndarray
    rev_start: int = 0
    t_start_s: float = 0.0
    t_end_s: float = 0.0
    max_order: int = 0
    sample_rate_hz: float = 0.0
    shaft_min_hz: float = float("nan")
    shaft_max_hz: float = float("nan")
    coefficients: np.ndarray = field(default=None, repr=False)

    @property
    def shaft_mean_hz(self) -> float:
        """Mean speed of this shaft over the averaged span, Hz."""
        span = self.t_end_s - self.t_start_s
        return self.n_revs / span if span > 0 else float("nan")

    def order_amplitude(self) -> tuple[np.ndarray, np.ndarray]:
        """Peak amplitude of each shaft order of the average.

        Returns
        -------
        order : numpy.ndarray
            Orders 0 .. P/2 of this shaft.
        amplitude : numpy.ndarray
            Zero-to-peak amplitude (``|c_0|`` at order 0, ``2 |c_k|`` above).
        """
        c = np.abs(self.coefficients) * 2.0
        c[0] /= 2.0
        return np.arange(c.size, dtype=np.float64), c


@dataclass(frozen=True)
class Demodulation:
    """Amplitude and phase demodulation of one mesh band of a TSA.

    Attributes
    ----------
    amplitude : numpy.ndarray
        Envelope ``|z|`` of the band, signal units, one value per TSA sample.
    phase_rad : numpy.ndarray
        ``unwrap(arg z) - h Z theta`` with its mean removed, radians.
    angle_deg : numpy.ndarray
        Shaft angle of each sample, degrees.
    teeth : int
        Tooth count ``Z`` of the gear.
    harmonic : int
        Mesh harmonic ``h`` demodulated.
    band_orders : tuple of int
        First and last shaft order kept (inclusive).
    """

    amplitude: np.ndarray
    phase_rad: np.ndarray
    angle_deg: np.ndarray
    teeth: int = 0
    harmonic: int = 1
    band_orders: tuple[int, int] = (0, 0)


# ---------------------------------------------------------------------------------------
# Checks


def _check_signal(x, name: str = "x") -> np.ndarray:
    arr = np.asarray(x)
    if arr.ndim != 1:
        raise AnalysisError(f"{name} must be one channel (a 1-D array), got shape {arr.shape}; pass one channel")
    if not np.issubdtype(arr.dtype, np.number) or np.iscomplexobj(arr):
        raise AnalysisError(f"{name} must hold real numbers, got dtype {arr.dtype}; pass the signal samples")
    return arr


def _check_fs(fs) -> float:
    fs = float(fs)
    if not (math.isfinite(fs) and fs > 0):
        raise AnalysisError(f"sample rate {fs} Hz must be positive; check the recording header")
    return fs


def _check_order(shaft_order, name: str = "shaft_order") -> float:
    r = float(shaft_order)
    if not (math.isfinite(r) and r > 0):
        raise AnalysisError(f"{name}={r} must be a positive speed ratio; check the gear-train model")
    return r


def _readonly(a: np.ndarray) -> np.ndarray:
    a.setflags(write=False)
    return a


def default_samples_per_rev(fs: float, shaft_max_hz: float) -> int:
    """Smallest power of two ``P >= fs / shaft_max_hz`` (at least 64).

    With this many samples per revolution the angular sampling rate is at least the
    time sampling rate at every speed up to ``shaft_max_hz``, so no bandwidth is lost.

    Parameters
    ----------
    fs : float
        Sampling rate, Hz.
    shaft_max_hz : float
        Highest speed of the shaft, Hz.
    """
    fs = _check_fs(fs)
    f = float(shaft_max_hz)
    if not (math.isfinite(f) and f > 0):
        raise AnalysisError(f"shaft speed {f} Hz must be positive; check the speed profile")
    need = fs / f
    return max(64, 1 << max(0, math.ceil(math.log2(need * (1 - 1e-12)))))


# ---------------------------------------------------------------------------------------
# The averaging core


_EDGE_SIGMA = 9.0          # smooth window edge: erf step, standard deviation in samples
_EDGE_HALF = 54            # samples on each side of a boundary that get edge weights
_CHUNK_BLOCKS = 4096       # blocks of _BLOCK samples processed at once (cache-sized work)


class _Angles:
    """Tach-shaft angle at the time samples, from the profile evaluated once per block.

    The profile is evaluated every ``_BLOCK`` samples (angle and speed); a cubic
    Hermite polynomial fills the angles in between, and the angle each sample spans
    is the speed (linear within the block) divided by fs.  For a C1 profile (PCHIP through tach pulses) the
    error is of order h^2 |jump of the 2nd derivative| / 50 in blocks that hold a
    knot, h = _BLOCK / fs: ~1e-8 rev at ordinary accelerations.  Sample ``i`` of the
    signal is at time ``i / fs``.
    """

    def __init__(self, n: int, fs: float, profile, t_range_s=None):
        t_lo = max(float(profile.t_start_s), 0.0)
        t_hi = min(float(profile.t_end_s), (n - 1) / fs)
        if t_range_s is not None:
            a, b = (float(v) for v in t_range_s)
            if not (math.isfinite(a) and math.isfinite(b) and b > a):
                raise AnalysisError(f"t_range_s={t_range_s!r} must be (start, end) with end > start, s")
            t_lo, t_hi = max(t_lo, a), min(t_hi, b)
        i_lo = int(math.ceil(t_lo * fs - 1e-9))
        i_hi = int(math.floor(t_hi * fs + 1e-9))
        n_blocks = (i_hi - i_lo) // _BLOCK
        if n_blocks < 4 * (_EDGE_HALF // _BLOCK + 2):
            raise AnalysisError(
                "the speed profile and the signal overlap by too few samples for a TSA; "
                "check the time range and that the tach belongs to this recording")
        self.fs, self.profile = fs, profile
        self.i_lo, self.n_blocks = i_lo, n_blocks
        self.n = n_blocks * _BLOCK                       # usable samples i_lo .. i_lo + n - 1
        tk = (i_lo + _BLOCK * np.arange(n_blocks + 1, dtype=np.float64)) / fs
        self.block_theta = np.asarray(profile.angle_rev(tk), dtype=np.float64)
        self.block_speed_hz = np.asarray(profile.speed_hz(tk), dtype=np.float64)
        if not (np.all(np.diff(self.block_theta) > 0) and np.all(self.block_speed_hz > 0)):
            raise AnalysisError("the speed profile does not increase over the recording; "
                                "the shaft must keep turning one way (check the tach)")
        self._om = self.block_speed_hz * (_BLOCK / fs)   # rev per block
        s = np.arange(_BLOCK, dtype=np.float64) / _BLOCK
        s2, s3 = s * s, s * s * s
        self._h = (2 * s3 - 3 * s2 + 1, s3 - 2 * s2 + s, -2 * s3 + 3 * s2, s3 - s2)
        self._h32 = tuple(h.astype(np.float32) for h in self._h)
        self._om32 = self._om.astype(np.float32)
        self._s32 = s.astype(np.float32)
        # the per-sample polynomials as matrices, so that one small matrix product per chunk
        # evaluates them: angle from the block start (h00 + h01 = 1) = [step, om0, om1] @ H,
        # plus a constant row for a shaft's start-cell fraction; speed = [om0, om1] @ D
        _, h10, h01, h11 = self._h
        self._H4 = np.stack([h01, h10, h11, np.ones(_BLOCK)]).astype(np.float32)
        self._D = (np.stack([1.0 - s, s]) / _BLOCK).astype(np.float32)

    def chunk(self, j0: int, j1: int, coef: np.ndarray, dtheta: np.ndarray):
        """Block coefficients of the angle and the angle each sample spans, blocks j0..j1-1.

        Returns ``coef`` (shape (j1 - j0, 4), float32: the block's angle step, its speed
        at both ends in rev per block, and a free last column), so that the angle of each
        sample since its block's first sample is ``coef[:, :3] @ H[:3]`` (cubic Hermite),
        and ``dtheta`` (rev spanned by each sample), float32 of shape (j1 - j0, _BLOCK),
        both written into the buffers.  The block's own angle ``block_theta[j]`` stays
        float64, so the absolute angle keeps full precision while the per-sample work is
        float32.
        """
        m = j1 - j0
        a = coef[: 4 * m].reshape(m, 4)
        a[:, 0] = self.block_theta[j0 + 1:j1 + 1] - self.block_theta[j0:j1]
        a[:, 1] = self._om32[j0:j1]
        a[:, 2] = self._om32[j0 + 1:j1 + 1]
        # angle spanned by each sample = speed x 1/fs, the speed taken linear within the
        # block (differs from the cubic's derivative by ~h^2 (3rd derivative) / speed, ~1e-6)
        dth = dtheta[: m * _BLOCK].reshape(m, _BLOCK)
        np.matmul(a[:, 1:3], self._D, out=dth)
        return a, dth

    def speed_range(self, lo_rev: float, hi_rev: float) -> tuple[float, float]:
        """Min and max speed (tach-shaft Hz) between two tach angles."""
        sel = (self.block_theta >= lo_rev) & (self.block_theta <= hi_rev)
        v = self.block_speed_hz[sel] if sel.any() else self.block_speed_hz
        return float(v.min()), float(v.max())


class _Shaft:
    """Per-shaft state of the average: revolutions used, sample ranges and the grid."""

    def __init__(self, name, r, P, ang: _Angles, n_revs, rev_start, max_order):
        fs = ang.fs
        prof = ang.profile
        self.name, self.r, self.P = name, r, P
        # first and last angle with a full smooth edge inside the data, shaft revolutions
        t_first = (ang.i_lo + _EDGE_HALF + 1) / fs
        t_last = (ang.i_lo + ang.n - 2 - _EDGE_HALF) / fs
        th_first = float(prof.angle_rev(t_first)) * r
        th_last = float(prof.angle_rev(t_last)) * r
        a = int(math.ceil(th_first - 1e-12))
        if rev_start is not None:
            if int(rev_start) < a:
                raise AnalysisError(f"rev_start={rev_start} lies before the data (first whole revolution {a}); "
                                    "choose a later revolution")
            a = int(rev_start)
        avail = int(math.floor(th_last + 1e-12)) - a
        if avail < 1:
            raise AnalysisError("the record holds less than one whole revolution of this shaft; "
                                "use a longer recording or a faster shaft")
        N = avail if n_revs is None else int(n_revs)
        if N < 1 or N > avail:
            raise AnalysisError(f"n_revs={n_revs} must be between 1 and {avail} (whole revolutions available)")
        self.a, self.N = a, N
        self.t_a = float(prof.time_s(a / r))
        self.t_b = float(prof.time_s((a + N) / r))
        # fractional sample positions of the boundaries, relative to the usable range
        self.u_a = self.t_a * fs - ang.i_lo
        self.u_b = self.t_b * fs - ang.i_lo
        # interior samples (weight 1): strictly more than _EDGE_HALF samples from both boundaries
        self.k0 = int(math.floor(self.u_a + _EDGE_HALF)) + 1
        self.k1 = int(math.ceil(self.u_b - _EDGE_HALF))          # exclusive
        smin, smax = ang.speed_range(a / r, (a + N) / r)
        self.shaft_min_hz, self.shaft_max_hz = smin * r, smax * r
        k_nyq = int(math.floor(fs / (2.0 * self.shaft_max_hz) * (1 - 1e-9)))
        kmax = min(P // 2 - 1, k_nyq)
        if max_order is not None:
            kmax = min(kmax, int(max_order))
        self.kmax = max(kmax, 0)
        # grid: at least _OVERSAMPLE cells per period of the highest order kept, a fast FFT
        # length, and at least P cells so that every coefficient up to P/2 is read off it
        import scipy.fft

        self.G = G = scipy.fft.next_fast_len(max(P, _OVERSAMPLE * max(self.kmax, 1)), real=True)
        # cells touched from a block's start cell: at most one block's angle step; a tail of
        # that many cells past G takes them without a modulo, folded back in coefficients()
        step = float(np.max(np.diff(ang.block_theta))) * r * G
        self.tail = int(math.ceil(step)) + 3
        self.fast = G + self.tail < (1 << 24)          # cell numbers exact in float32
        # linear B-spline (tent) spreading through the moments per left cell: S0 + j S1,
        # S_p = sum y mu^p
        self.grid = np.zeros(G + self.tail, dtype=np.complex64)

    def spread_blocks(self, block_theta, coef, H4, y, v, buf_a, buf_g, buf_fl, buf_n, write_real: bool):
        """Spread samples given as block angle (float64) + per-block coefficients with weights y.

        ``block_theta`` has shape (m,), ``coef`` (m, 4) (see :meth:`_Angles.chunk`), ``y``
        and the complex buffer ``v`` shape (m, _BLOCK); ``v.real`` already holds ``y``
        unless ``write_real``.
        """
        m = coef.shape[0]
        scale = self.r * self.G
        base = block_theta * scale                       # grid position of each block start
        base_int = np.floor(base)
        base_cell = np.mod(base_int, self.G)[:, None]
        a = buf_a[: 4 * m].reshape(m, 4)
        np.multiply(coef[:, :3], np.float32(scale), out=a[:, :3])
        a[:, 3] = base - base_int                        # start-cell fraction
        g = buf_g[: m * _BLOCK].reshape(m, _BLOCK)
        np.matmul(a, H4, out=g)                          # grid position from the block's start cell
        fl = buf_fl[: m * _BLOCK].reshape(m, _BLOCK)
        np.floor(g, out=fl)                              # whole cells (g >= 0)
        g -= fl                                          # fractional part mu
        # tent spreading through the moments S0, S1 of mu per left cell (one complex
        # accumulation); coefficients() turns them into the two kernel weights
        if write_real:
            v.real[...] = y
        np.multiply(y, g, out=v.imag)                    # y mu
        if self.fast:
            n = buf_n[: m * _BLOCK].reshape(m, _BLOCK)
            np.add(fl, base_cell.astype(np.float32), out=n, casting="unsafe")
        else:
            n = fl.astype(np.int64) + base_cell.astype(np.int64)
        np.add.at(self.grid, n.ravel(), v.ravel())

    def spread_exact(self, theta, y):
        """Spread a few samples with float64 angles ``theta`` (tach rev) and weights ``y``."""
        g = theta * (self.r * self.G)
        n = np.floor(g)
        mu = g - n
        c0 = n.astype(np.int64) % self.G
        np.add.at(self.grid, c0, (y + 1j * (y * mu)).astype(np.complex64))

    def add_edges(self, xs, ang: _Angles):
        """Samples within _EDGE_HALF of a boundary, weighted by a smooth (erf) step."""
        import scipy.special

        fs, prof = ang.fs, ang.profile
        idx_a = np.arange(self.k0 - 2 * _EDGE_HALF - 1, self.k0)
        idx_b = np.arange(self.k1, self.k1 + 2 * _EDGE_HALF + 1)
        idx_a = idx_a[idx_a >= 0]
        idx_b = idx_b[idx_b < ang.n]
        wa = 0.5 * (1 + scipy.special.erf((idx_a - self.u_a) / (_EDGE_SIGMA * math.sqrt(2))))
        wb = 0.5 * (1 + scipy.special.erf((self.u_b - idx_b) / (_EDGE_SIGMA * math.sqrt(2))))
        idx = np.concatenate([idx_a, idx_b])
        w = np.concatenate([wa, wb])
        t = (ang.i_lo + idx) / fs
        theta = np.asarray(prof.angle_rev(t), dtype=np.float64)
        dth = np.asarray(prof.speed_hz(t), dtype=np.float64) / fs
        y = xs[idx].astype(np.float64) * dth * w
        self.spread_exact(theta, y)

    def coefficients(self) -> np.ndarray:
        import scipy.fft

        P, G = self.P, self.G
        S0, S1 = self.grid.real.astype(np.float64), self.grid.imag.astype(np.float64)
        L = S0.size
        ext = np.zeros(L + 1)                            # ext[c] = weight sum of cell c
        ext[0:L] += S0 - S1                              # cell n: weight 1 - mu
        ext[1:L + 1] += S1                               # cell n + 1: weight mu
        folded = ext[:G].copy()                          # cells 0 .. G-1
        tail = ext[G:]                                   # cells G .. G + tail
        folded[: tail.size] += tail
        spec = scipy.fft.rfft(folded)[: P // 2 + 1]
        kk = np.arange(P // 2 + 1, dtype=np.float64)
        coef = spec * (self.r / self.N) / np.sinc(kk / G) ** 2
        coef[self.kmax + 1:] = 0.0
        return coef


def _average_shafts(xs: np.ndarray, ang: _Angles, shafts: list[_Shaft]) -> None:
    """Accumulate every shaft's grid in one pass over the signal, chunk by chunk."""
    lo = min(s.k0 for s in shafts)
    hi = max(s.k1 for s in shafts)
    j_lo, j_hi = lo // _BLOCK, -(-hi // _BLOCK)
    C = _CHUNK_BLOCKS * _BLOCK
    coef, buf_a, dtheta = np.empty(4 * _CHUNK_BLOCKS, np.float32), np.empty(4 * _CHUNK_BLOCKS, np.float32), \
        np.empty(C, np.float32)
    buf_g, buf_fl, buf_y = np.empty(C, np.float32), np.empty(C, np.float32), np.empty(C, np.float32)
    buf_v = np.empty(C, np.complex64)
    buf_n = np.empty(C, dtype=np.int32)
    for j0 in range(j_lo, j_hi, _CHUNK_BLOCKS):
        j1 = min(j0 + _CHUNK_BLOCKS, j_hi)
        m = j1 - j0
        de, y = ang.chunk(j0, j1, coef, dtheta)
        c0, c1 = j0 * _BLOCK, j1 * _BLOCK
        np.multiply(y, xs[c0:c1].reshape(m, _BLOCK), out=y)
        th0 = ang.block_theta[j0:j1]
        v = buf_v[: m * _BLOCK].reshape(m, _BLOCK)
        real_holds_y = False
        for s in shafts:
            if s.k1 <= c0 or s.k0 >= c1:
                continue
            if s.k0 > c0 or s.k1 < c1:                  # a boundary falls in this chunk
                ys = buf_y[: m * _BLOCK].reshape(m, _BLOCK)
                ys[...] = y
                flat = ys.reshape(-1)
                flat[: max(s.k0 - c0, 0)] = 0.0
                flat[max(s.k1 - c0, 0):] = 0.0
                s.spread_blocks(th0, de, ang._H4, ys, v, buf_a, buf_g, buf_fl, buf_n, True)
                real_holds_y = False
            else:
                s.spread_blocks(th0, de, ang._H4, y, v, buf_a, buf_g, buf_fl, buf_n, not real_holds_y)
                real_holds_y = True
    for s in shafts:
        s.add_edges(xs, ang)


def _make_tsa(coef, P, shaft, r, a, N, kmax, t0, t1, fs, smin, smax, dtype) -> TSA:
    avg = np.fft.irfft(coef, n=P) * P
    avg = avg.astype(dtype, copy=False)
    angle = np.arange(P, dtype=np.float64) * (360.0 / P)
    return TSA(shaft=shaft, shaft_order=r, samples_per_rev=P, n_revs=N,
               angle_deg=_readonly(angle), average=_readonly(avg), rev_start=a,
               t_start_s=t0, t_end_s=t1, max_order=kmax, sample_rate_hz=fs,
               shaft_min_hz=smin, shaft_max_hz=smax, coefficients=_readonly(coef))


def _out_dtype(x: np.ndarray):
    return np.float32 if x.dtype == np.float32 else np.float64


def tsa(x, fs, profile, *, shaft_order: float = 1.0, shaft: str = "", samples_per_rev: int | None = None,
        t_range_s: tuple[float, float] | None = None, n_revs: int | None = None,
        rev_start: int | None = None, max_order: int | None = None) -> TSA:
    """Time-synchronous average of one shaft.

    Parameters
    ----------
    x : array_like
        One channel, signal units; sample ``i`` is at time ``i / fs`` s.  Not modified.
    fs : float
        Sampling rate, Hz.
    profile : SpeedProfile
        Speed profile of the tach shaft (``angle_rev``, ``speed_hz``, ``t_start_s``,
        ``t_end_s``, ``max_hz``), see :class:`dsp.tach.SpeedProfile`.
    shaft_order : float, optional
        This shaft's speed divided by the tach shaft's speed
        (:func:`dsp.kinematics.shaft_orders`).  Shaft angle = tach angle x shaft_order.
    shaft : str, optional
        Name stored in the result.
    samples_per_rev : int, optional
        Samples per revolution ``P`` (even, >= 8).  Default: the smallest power of two
        ``>= fs / (highest shaft speed)`` so the angular sampling never loses bandwidth.
    t_range_s : (float, float), optional
        Use only this time span, s.
    n_revs : int, optional
        Number of whole revolutions to average; default all available.
    rev_start : int, optional
        First revolution (counted from the profile's angle 0); default the first
        whole revolution in the data.
    max_order : int, optional
        Highest shaft order kept; default the lower of ``P/2 - 1`` and the time
        Nyquist frequency at the shaft's highest speed.

    Returns
    -------
    TSA

    Notes
    -----
    The average is computed as its Fourier series from the time samples, each
    weighted by the angle it spans, folded onto one revolution with a non-uniform FFT
    (tent kernel, at least 32 grid cells per period of the highest order); see the module docstring.  Noise that is not synchronous with the shaft falls as ``1/sqrt(N)``
    and the comb response is :func:`tsa_comb_response`.

    References
    ----------
    .. [1] S. Braun, "The extraction of periodic waveforms by time domain averaging",
       Acustica 32, 69-77, 1975.
    .. [2] P. D. McFadden, "A revised model for the extraction of periodic waveforms by
       time domain averaging", Mechanical Systems and Signal Processing 1(1), 83-95, 1987.
    .. [3] K. R. Fyfe and E. D. S. Munck, "Analysis of computed order tracking",
       Mechanical Systems and Signal Processing 11(2), 187-205, 1997.
    .. [4] A. Dutt and V. Rokhlin, "Fast Fourier transforms for nonequispaced data",
       SIAM J. Sci. Comput. 14(6), 1368-1393, 1993.
    """
    return tsa_shafts(x, fs, profile, {shaft: shaft_order}, samples_per_rev=samples_per_rev,
                      t_range_s=t_range_s, n_revs=n_revs, rev_start=rev_start, max_order=max_order)[0]


def tsa_shafts(x, fs, profile, shaft_orders: Mapping[str, float], *,
               samples_per_rev: int | Mapping[str, int | None] | None = None,
               t_range_s: tuple[float, float] | None = None, n_revs: int | None = None,
               rev_start: int | None = None, max_order: int | None = None) -> tuple[TSA, ...]:
    """TSA of several shafts of one train, sharing the angle computation.

    Parameters
    ----------
    x, fs, profile, t_range_s, n_revs, rev_start, max_order
        As in :func:`tsa`.
    shaft_orders : mapping of str to float
        Shaft name -> speed ratio to the tach shaft (:func:`dsp.kinematics.shaft_orders`).
    samples_per_rev : int or mapping, optional
        One value for all shafts, or per shaft name; ``None`` for the default.

    Returns
    -------
    tuple of TSA
        In the order of ``shaft_orders``.
    """
    xa = _check_signal(x)
    fs = _check_fs(fs)
    if not shaft_orders:
        raise AnalysisError("no shaft given for the TSA; pass at least one shaft and its speed ratio")
    orders = {str(k): _check_order(v, f"shaft_orders[{k!r}]") for k, v in shaft_orders.items()}
    for name in ("angle_rev", "speed_hz", "t_start_s", "t_end_s", "max_hz"):
        if not hasattr(profile, name):
            raise GearbenchError(f"profile lacks '{name}'; pass a dsp.tach.SpeedProfile")
    for name in ("time_s",):
        if not hasattr(profile, name):
            raise GearbenchError(f"profile lacks '{name}'; pass a dsp.tach.SpeedProfile")
    ang = _Angles(xa.shape[0], fs, profile, t_range_s)
    xs = xa[ang.i_lo: ang.i_lo + ang.n]
    if not np.all(np.isfinite(xs)):
        raise AnalysisError("the signal contains NaN or infinite samples; repair or cut them out first")
    shafts = []
    for name, r in orders.items():
        P = samples_per_rev.get(name) if isinstance(samples_per_rev, Mapping) else samples_per_rev
        if P is None:
            P = default_samples_per_rev(fs, float(profile.max_hz) * r)
        P = int(P)
        if P < 8 or P % 2:
            raise AnalysisError(f"samples_per_rev={P} must be an even number >= 8")
        shafts.append(_Shaft(name, r, P, ang, n_revs, rev_start, max_order))
    _average_shafts(xs, ang, shafts)
    out = []
    for s in shafts:
        out.append(_make_tsa(s.coefficients(), s.P, s.name, s.r, s.a, s.N, s.kmax, s.t_a, s.t_b, fs,
                             s.shaft_min_hz, s.shaft_max_hz, _out_dtype(xa)))
    return tuple(out)


# ---------------------------------------------------------------------------------------
# Derived signals


def _teeth_list(mesh_teeth) -> tuple[int, ...]:
    if isinstance(mesh_teeth, (int, np.integer)):
        teeth = (int(mesh_teeth),)
    else:
        teeth = tuple(int(z) for z in mesh_teeth)
    for z in teeth:
        if z < 1:
            raise AnalysisError(f"mesh_teeth={z} must be a positive tooth count; check the gear-train model")
    return teeth


def _average_array(average) -> np.ndarray:
    a = average.average if isinstance(average, TSA) else average
    a = _check_signal(a, "average")
    if a.size < 8:
        raise AnalysisError(f"the average has {a.size} samples; a TSA needs at least 8 per revolution")
    return a


def _orders_mask(P: int, teeth: Sequence[int], n_shaft_orders: int, sideband_orders: int,
                 keep_sidebands: bool) -> np.ndarray:
    """Boolean mask over rfft bins 0..P/2 of the components of the regular signal."""
    n_bins = P // 2 + 1
    mask = np.zeros(n_bins, dtype=bool)
    mask[1: min(n_shaft_orders, n_bins - 1) + 1] = True
    for z in teeth:
        for h in range(1, (n_bins - 1) // z + 2):
            c = h * z
            if c < n_bins:
                mask[c] = True
            if keep_sidebands:
                for j in range(1, sideband_orders + 1):
                    for o in (c - j, c + j):
                        if 0 < o < n_bins:
                            mask[o] = True
    return mask


def _check_counts(n_shaft_orders, sideband_orders):
    if int(n_shaft_orders) < 0:
        raise AnalysisError(f"{n_shaft_orders=} must be >= 0")
    if int(sideband_orders) < 0:
        raise AnalysisError(f"{sideband_orders=} must be >= 0")


def regular_signal(average, *, mesh_teeth, n_shaft_orders: int = 2, sideband_orders: int = 1) -> np.ndarray:
    """Regular signal of a TSA: shaft orders, mesh harmonics and their sidebands only.

    Keeps, in shaft orders of the averaged shaft: orders ``1 .. n_shaft_orders``;
    every mesh harmonic ``h Z`` (h = 1, 2, ... below P/2) of every tooth count Z in
    ``mesh_teeth``; and the sidebands ``h Z +- j`` for ``j = 1 .. sideband_orders``.
    Everything else, the mean (order 0) included, is removed.

    Parameters
    ----------
    average : TSA or array_like
        One revolution, ``P`` samples.
    mesh_teeth : int or sequence of int
        Tooth counts of the gears on this shaft.
    n_shaft_orders : int, optional
        Number of shaft orders kept (default 2).
    sideband_orders : int, optional
        Sideband orders kept on each side of each mesh harmonic (default 1).

    Returns
    -------
    numpy.ndarray
        Same length and float dtype as the average.

    References
    ----------
    .. [1] R. M. Stewart, "Some useful data analysis techniques for gearbox
       diagnostics", ISVR report MHM/R/10/77, University of Southampton, 1977.
    .. [2] M. Lebold, K. McClintic, R. Campbell, C. Byington and K. Maynard, "Review of
       vibration analysis methods for gearbox diagnostics and prognostics",
       Proc. 54th Meeting of the Society for Machinery Failure Prevention Technology,
       623-634, 2000.
    """
    a = _average_array(average)
    _check_counts(n_shaft_orders, sideband_orders)
    teeth = _teeth_list(mesh_teeth)
    mask = _orders_mask(a.size, teeth, int(n_shaft_orders), int(sideband_orders), True)
    return _keep(a, mask)


def _keep(a: np.ndarray, mask: np.ndarray) -> np.ndarray:
    spec = np.fft.rfft(np.asarray(a, dtype=np.float64))
    spec[~mask] = 0.0
    out = np.fft.irfft(spec, n=a.size)
    return out.astype(a.dtype if a.dtype == np.float32 else np.float64, copy=False)


def residual_signal(average, *, mesh_teeth, n_shaft_orders: int = 2) -> np.ndarray:
    """Residual signal of a TSA (for NA4): the average minus shaft orders and mesh harmonics.

    Removes, in shaft orders: order 0 (the mean), orders ``1 .. n_shaft_orders`` and
    every mesh harmonic ``h Z`` (h = 1, 2, ... below P/2) of each tooth count in
    ``mesh_teeth``.  The sidebands ``h Z +- j`` and everything else stay.

    Parameters
    ----------
    average : TSA or array_like
    mesh_teeth : int or sequence of int
    n_shaft_orders : int, optional
        Number of shaft orders removed (default 2).

    Returns
    -------
    numpy.ndarray

    References
    ----------
    .. [1] J. J. Zakrajsek, D. P. Townsend and H. J. Decker, "An analysis of gear fault
       detection methods as applied to pitting fatigue failure data", NASA TM-105950, 1993.
    .. [2] M. Lebold et al., "Review of vibration analysis methods for gearbox
       diagnostics and prognostics", Proc. 54th MFPT, 623-634, 2000.
    """
    a = _average_array(average)
    _check_counts(n_shaft_orders, 0)
    teeth = _teeth_list(mesh_teeth)
    mask = _orders_mask(a.size, teeth, int(n_shaft_orders), 0, False)
    mask[0] = True
    return _keep(a, ~mask)


def difference_signal(average, *, mesh_teeth, n_shaft_orders: int = 2, sideband_orders: int = 1) -> np.ndarray:
    """Difference signal of a TSA (for FM4, M6A, M8A): the average minus its regular signal.

    Removes, in shaft orders: order 0 (the mean), orders ``1 .. n_shaft_orders``,
    every mesh harmonic ``h Z`` of each tooth count in ``mesh_teeth`` and the
    sidebands ``h Z +- j`` for ``j = 1 .. sideband_orders`` (first-order sidebands by
    default).  For a healthy gear what remains is noise.

    Parameters
    ----------
    average : TSA or array_like
    mesh_teeth : int or sequence of int
    n_shaft_orders : int, optional
        Number of shaft orders removed (default 2).
    sideband_orders : int, optional
        Sideband orders removed on each side of each mesh harmonic (default 1).

    Returns
    -------
    numpy.ndarray

    References
    ----------
    .. [1] R. M. Stewart, ISVR report MHM/R/10/77, University of Southampton, 1977.
    .. [2] M. Lebold et al., Proc. 54th MFPT, 623-634, 2000.
    """
    a = _average_array(average)
    _check_counts(n_shaft_orders, sideband_orders)
    teeth = _teeth_list(mesh_teeth)
    mask = _orders_mask(a.size, teeth, int(n_shaft_orders), int(sideband_orders), True)
    mask[0] = True
    return _keep(a, ~mask)


def demodulate(average, teeth: int, *, harmonic: int = 1, half_band_orders: int | None = None) -> Demodulation:
    """Amplitude and phase demodulation of one mesh harmonic of a TSA.

    The TSA spectrum is cut to the positive orders ``h Z - B .. h Z + B`` (inclusive,
    ``B = half_band_orders``, default ``Z // 2``), doubled, and inverse transformed to
    the analytic band signal ``z``.  The amplitude is ``|z|``; the phase is
    ``unwrap(arg z) - h Z theta`` (theta = 2 pi p / P) with its mean removed.  A local
    tooth fault shows as a dip in amplitude and a jump in phase at that tooth.

    Parameters
    ----------
    average : TSA or array_like
        One revolution, ``P`` samples.
    teeth : int
        Tooth count ``Z``.
    harmonic : int, optional
        Mesh harmonic ``h`` (default 1).
    half_band_orders : int, optional
        Half width ``B`` of the kept band, shaft orders (default ``Z // 2``).

    Returns
    -------
    Demodulation

    References
    ----------
    .. [1] P. D. McFadden, "Detecting fatigue cracks in gears by amplitude and phase
       demodulation of the meshing vibration", ASME J. Vib. Acoust. Stress Reliab.
       Des. 108(2), 165-170, 1986.
    """
    a = _average_array(average)
    Z = _teeth_list(teeth)[0]
    h = int(harmonic)
    if h < 1:
        raise AnalysisError(f"harmonic={h} must be 1 or more")
    B = Z // 2 if half_band_orders is None else int(half_band_orders)
    P = a.size
    c = h * Z
    if B < 1 or c + B >= P // 2 or c - B < 1:
        raise AnalysisError(f"the band {c - B}..{c + B} orders does not fit between order 1 and "
                            f"{P // 2 - 1} (P={P}); use a smaller half_band_orders or more samples per revolution")
    spec = np.fft.fft(np.asarray(a, dtype=np.float64))
    band = np.zeros_like(spec)
    band[c - B: c + B + 1] = 2.0 * spec[c - B: c + B + 1]
    z = np.fft.ifft(band)
    theta = 2.0 * np.pi * np.arange(P) / P
    phase = np.unwrap(np.angle(z)) - c * theta
    phase -= phase.mean()
    angle = np.arange(P, dtype=np.float64) * (360.0 / P)
    return Demodulation(amplitude=_readonly(np.abs(z)), phase_rad=_readonly(phase),
                        angle_deg=_readonly(angle), teeth=Z, harmonic=h, band_orders=(c - B, c + B))


def tsa_comb_response(f_hz, period_s: float, n_averages: int) -> np.ndarray:
    """Magnitude of the TSA comb filter, ``|H(f)| = |sin(pi N f T) / (N sin(pi f T))|``.

    ``|H| = 1`` at the shaft harmonics ``f = k/T``, zero at ``f = m/(N T)`` (m not a
    multiple of N); non-synchronous noise power falls by ``1/N``.

    Parameters
    ----------
    f_hz : array_like
        Frequencies, Hz.
    period_s : float
        Shaft period ``T``, s.
    n_averages : int
        Number of averaged periods ``N``.

    Returns
    -------
    numpy.ndarray
        ``|H(f)|``, same shape as ``f_hz``.

    References
    ----------
    .. [1] S. Braun, "The extraction of periodic waveforms by time domain averaging",
       Acustica 32, 69-77, 1975.
    .. [2] P. D. McFadden, "A revised model for the extraction of periodic waveforms by
       time domain averaging", Mechanical Systems and Signal Processing 1(1), 83-95, 1987.
    """
    T = float(period_s)
    N = int(n_averages)
    if not (math.isfinite(T) and T > 0):
        raise AnalysisError(f"period_s={period_s} must be a positive shaft period, s")
    if N < 1:
        raise AnalysisError(f"n_averages={n_averages} must be 1 or more")
    u = np.asarray(f_hz, dtype=np.float64) * T
    # reduce to [-0.5, 0.5) periods so that sin(pi u) is exact near the harmonics
    v = u - np.round(u)
    num = np.sin(np.pi * N * v)
    den = N * np.sin(np.pi * v)
    with np.errstate(invalid="ignore", divide="ignore"):
        h = np.where(np.abs(den) > 1e-300, num / np.where(den == 0, 1.0, den), 1.0)
    # sign flips of (-1)^(round(u)(N-1)) do not matter for the magnitude
    return np.abs(h)
