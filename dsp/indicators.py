"""Overall and gear condition indicators: plain functions on 1-D arrays.

Definitions follow the surveys of Lebold et al. (2000) and Vecer, Kreidl & Smid
(2005), which collect the originals of Stewart (1977, FM0/FM4), Martin (1989,
M6A/M8A), Zakrajsek et al. (1993, NA4) and Swansson (1980, energy ratio).

Conventions of this module:

* every function returns a Python ``float``; arithmetic is done in float64
  whatever the input dtype;
* a statistic that would divide by zero (a constant signal, a zero reference)
  returns ``nan`` instead; it never raises for that and never returns ``inf``;
* empty or non-finite input raises :class:`dsp.errors.AnalysisError`.

References
----------
.. [1] M. Lebold, K. McClintic, R. Campbell, C. Byington, K. Maynard, "Review of
   vibration analysis methods for gearbox diagnostics and prognostics",
   Proc. 54th Meeting of the Society for Machinery Failure Prevention
   Technology, pp. 623-634, 2000.
.. [2] P. Vecer, M. Kreidl, R. Smid, "Condition indicators for gearbox condition
   monitoring systems", Acta Polytechnica 45(6), 2005.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Sequence
from dataclasses import dataclass

import numpy as np

from dsp.errors import AnalysisError

__all__ = [
    "rms",
    "peak",
    "crest_factor",
    "kurtosis",
    "normalized_moment",
    "fm0",
    "fm4",
    "m6a",
    "m8a",
    "na4",
    "energy_ratio",
    "sideband_index",
    "sideband_level_factor",
    "order_amplitude",
    "IndicatorInfo",
    "TSA_INDICATORS",
    "TSA_KEYS",
]

NAN = float("nan")


@dataclass(frozen=True)
class IndicatorInfo:
    """What one indicator is, for tables, the report and the baseline comparison.

    ``key`` is the name in ``ShaftTSA.indicators`` and in the JSON output;
    ``healthy`` is the value of a healthy gear where one is known (Gaussian
    difference signal), else ``None``.
    """

    key: str
    label: str
    meaning: str
    healthy: float | None = None


#: The per-shaft TSA indicators, in display order.  Adding an indicator: write its
#: function here, compute it in ``dsp.analysis`` (``_shaft_tsa``) and add a row here;
#: the results panel, the command line and the report read this table.
TSA_INDICATORS: tuple[IndicatorInfo, ...] = (
    IndicatorInfo("rms", "RMS", "RMS of the time-synchronous average of the shaft"),
    IndicatorInfo("kurtosis", "kurtosis",
                  "kurtosis of the average; rises with a local event once per revolution", 3.0),
    IndicatorInfo("fm0", "FM0", "peak-to-peak of the average over the mesh harmonic amplitudes; "
                  "rises with heavy wear or a major defect (Stewart 1977)"),
    IndicatorInfo("fm4", "FM4", "kurtosis of the difference signal; about 3 for a healthy gear, "
                  "rises with a local tooth defect (Stewart 1977)", 3.0),
    IndicatorInfo("na4", "NA4", "kurtosis of the residual signal over the variance averaged along "
                  "the run; tracks a defect as it grows (Zakrajsek et al. 1993)", 3.0),
    IndicatorInfo("m6a", "M6A", "sixth moment of the difference signal; about 15 when healthy, "
                  "more sensitive to peaks than FM4 (Martin 1989)", 15.0),
    IndicatorInfo("m8a", "M8A", "eighth moment of the difference signal; about 105 when healthy, "
                  "more sensitive still (Martin 1989)", 105.0),
    IndicatorInfo("er", "ER", "energy ratio: RMS of the difference signal over RMS of the regular "
                  "meshing; rises with heavy distributed wear (Swansson 1980)"),
)
TSA_KEYS: tuple[str, ...] = tuple(i.key for i in TSA_INDICATORS)


def _vec(x, name: str = "x") -> np.ndarray:
    a = np.asarray(x, dtype=np.float64)
    if a.ndim != 1:
        raise AnalysisError(f"{name} must be a 1-D signal, got an array of shape {a.shape}; pass one record.")
    if a.size == 0:
        raise AnalysisError(f"{name} is empty; an indicator needs at least one sample.")
    if not np.isfinite(a).all():
        raise AnalysisError(f"{name} holds non-finite samples; repair or cut that part of the signal first.")
    return a


def _central_sums(a: np.ndarray, orders: Iterable[int]) -> dict[int, float]:
    d = a - a.mean()
    d2 = d * d
    out = {2: float(d2.sum())}
    for k in orders:
        out[k] = float(np.sum(d2 ** (k // 2))) if k % 2 == 0 else float(np.sum(d**k))
    return out


def rms(x) -> float:
    """Root mean square ``sqrt(mean(x**2))`` in the units of ``x``.

    The mean is NOT removed (remove it first if the DC offset is not wanted).
    """
    a = _vec(x)
    return float(np.sqrt(np.mean(a * a)))


def peak(x) -> float:
    """Largest absolute value ``max|x|`` (zero-to-peak) in the units of ``x``."""
    return float(np.max(np.abs(_vec(x))))


def crest_factor(x) -> float:
    """Crest factor ``max|x| / rms(x)`` (sqrt 2 for a sine); ``nan`` for an all-zero signal.

    References
    ----------
    .. [1] P. Vecer, M. Kreidl, R. Smid, "Condition indicators for gearbox
       condition monitoring systems", Acta Polytechnica 45(6), 2005.
    """
    a = _vec(x)
    r = float(np.sqrt(np.mean(a * a)))
    if r == 0.0:
        return NAN
    return float(np.max(np.abs(a))) / r


def normalized_moment(x, order: int, *, atol: float = 0.0) -> float:
    """``N**(k/2-1) sum (x - mean)**k / (sum (x - mean)**2)**(k/2)`` for even ``k``.

    ``order=4`` is the Pearson kurtosis, 6 and 8 are Martin's M6A and M8A.
    Returns ``nan`` for a constant signal (zero variance).  A signal whose
    standard deviation is at most ``atol`` (same units as ``x``) counts as
    constant: pass e.g. ``atol=1e-9 * rms(tsa)`` when ``x`` is a difference
    signal computed by FFT, whose "zero" keeps rounding residue.
    """
    if order < 2 or order % 2:
        raise AnalysisError(f"order={order} must be an even integer >= 2.")
    a = _vec(x)
    n = a.size
    s = _central_sums(a, [order])
    m2 = s[2] / n
    # relative test: a "constant" signal may keep rounding residue around its mean
    if m2 <= max(float(atol), 8 * np.finfo(np.float64).eps * float(np.max(np.abs(a)))) ** 2:
        return NAN
    return (s[order] / n) / m2 ** (order // 2)


def kurtosis(x, *, atol: float = 0.0) -> float:
    """Pearson kurtosis ``N sum (x - mean)^4 / (sum (x - mean)^2)^2``.

    A Gaussian reads 3, a sine 1.5, a square wave 1.0.  Equal to
    ``scipy.stats.kurtosis(x, fisher=False, bias=True)``.  ``nan`` for a
    constant signal.

    References
    ----------
    .. [1] K. Pearson, "Das Fehlergesetz und seine Verallgemeinerungen durch
       Fechner und Pearson. A rejoinder", Biometrika 4:169-212, 1905.
    .. [2] P. Vecer, M. Kreidl, R. Smid, "Condition indicators for gearbox
       condition monitoring systems", Acta Polytechnica 45(6), 2005.
    """
    return normalized_moment(x, 4, atol=atol)


def order_amplitude(signal, order: float, *, samples_per_rev: int | None = None) -> float:
    """Zero-to-peak amplitude of one shaft order in a synchronous signal.

    Parameters
    ----------
    signal : array_like
        Whole revolutions of an angle-domain signal (e.g. a TSA).
    order : float
        Shaft order; the nearest FFT line is read.
    samples_per_rev : int, optional
        Samples per revolution (default: the whole array is one revolution).

    Returns
    -------
    float
        ``2 |X[k]| / N`` at ``k = round(order * N / samples_per_rev)`` (``|X[0]|/N`` at DC).
    """
    a = _vec(signal, "signal")
    n = a.size
    spr = n if samples_per_rev is None else int(samples_per_rev)
    if spr <= 0:
        raise AnalysisError(f"samples_per_rev={samples_per_rev} must be a positive number of samples.")
    k = int(round(float(order) * n / spr))
    if not 0 <= k <= n // 2:
        raise AnalysisError(f"order={order} is outside 0..{spr // 2}, the orders {spr} samples per revolution can hold.")
    X = np.fft.rfft(a)
    scale = 1.0 if k == 0 or (n % 2 == 0 and k == n // 2) else 2.0
    return float(scale * abs(X[k]) / n)


def fm0(tsa, mesh_orders: Sequence[float] | float, *, samples_per_rev: int | None = None) -> float:
    """FM0: peak-to-peak of the TSA over the sum of the mesh-harmonic amplitudes.

    Parameters
    ----------
    tsa : array_like
        Time-synchronous average (whole revolutions).
    mesh_orders : sequence of float
        Shaft orders of the mesh harmonics ``h * Z``, h = 1..H (e.g. ``[20, 40]``).
    samples_per_rev : int, optional
        Samples per revolution (default: ``len(tsa)``, one revolution).

    Returns
    -------
    float
        ``(max(tsa) - min(tsa)) / sum_h P_h`` (2.0 for a pure mesh tone); ``nan``
        when the mesh harmonics are all zero.

    References
    ----------
    .. [1] R. M. Stewart, "Some useful data analysis techniques for gearbox
       diagnostics", Report MHM/R/10/77, Institute of Sound and Vibration
       Research, University of Southampton, 1977.
    .. [2] M. Lebold et al., "Review of vibration analysis methods for gearbox
       diagnostics and prognostics", Proc. 54th MFPT, pp. 623-634, 2000.
    """
    a = _vec(tsa, "tsa")
    orders = [mesh_orders] if np.isscalar(mesh_orders) else list(mesh_orders)
    if not orders:
        raise AnalysisError("mesh_orders is empty; give the shaft orders of the mesh harmonics, e.g. [Z, 2Z].")
    total = sum(order_amplitude(a, o, samples_per_rev=samples_per_rev) for o in orders)
    if total == 0.0:
        return NAN
    return float(a.max() - a.min()) / total


def fm4(d, *, atol: float = 0.0) -> float:
    """FM4: Pearson kurtosis of the difference signal ``d`` (3 for Gaussian noise).

    References
    ----------
    .. [1] R. M. Stewart, "Some useful data analysis techniques for gearbox
       diagnostics", Report MHM/R/10/77, ISVR, University of Southampton, 1977.
    .. [2] P. Vecer, M. Kreidl, R. Smid, "Condition indicators for gearbox
       condition monitoring systems", Acta Polytechnica 45(6), 2005.
    """
    return normalized_moment(d, 4, atol=atol)


def m6a(d, *, atol: float = 0.0) -> float:
    """M6A: ``N^2 sum (d - mean)^6 / (sum (d - mean)^2)^3`` (15 Gaussian, 2.5 sine).

    References
    ----------
    .. [1] H. R. Martin, "Statistical moment analysis as a means of surface
       damage detection", Proc. 7th International Modal Analysis Conference,
       pp. 1016-1021, 1989.
    """
    return normalized_moment(d, 6, atol=atol)


def m8a(d, *, atol: float = 0.0) -> float:
    """M8A: ``N^3 sum (d - mean)^8 / (sum (d - mean)^2)^4`` (105 Gaussian, 4.375 sine).

    References
    ----------
    .. [1] H. R. Martin, "Statistical moment analysis as a means of surface
       damage detection", Proc. 7th International Modal Analysis Conference,
       pp. 1016-1021, 1989.
    """
    return normalized_moment(d, 8, atol=atol)


def na4(r, history: Sequence | None = None, *, atol: float = 0.0) -> float:
    """NA4: fourth moment of the current residual over the run-averaged variance squared.

    Parameters
    ----------
    r : array_like
        Residual signal of the current record (record M of the run).
    history : sequence of array_like, optional
        Residual signals of the EARLIER records of the run (records 1..M-1),
        not including ``r``.  None: M = 1, and NA4 equals the kurtosis of ``r``.

    Returns
    -------
    float
        ``N sum_i (r_iM - mean_M)^4 / ((1/M) sum_j sum_i (r_ij - mean_j)^2)^2``;
        ``nan`` when the run-averaged variance is zero (standard deviation at
        most ``atol``).

    Notes
    -----
    Records of different lengths are allowed: each record contributes its
    variance (``sum_i (r_ij - mean_j)^2 / N_j``), so the denominator reads
    ``(N * mean_j var_j)^2``, identical to the published form for equal lengths.

    References
    ----------
    .. [1] J. J. Zakrajsek, D. P. Townsend, H. J. Decker, "An analysis of gear
       fault detection methods as applied to pitting fatigue failure data",
       NASA TM-105950, 1993.
    """
    a = _vec(r, "r")
    records = [a] + [_vec(h, f"history[{i}]") for i, h in enumerate(history or [])]
    mean_var = float(np.mean([np.var(rec) for rec in records]))
    scale = max(float(np.max(np.abs(rec))) for rec in records)
    if mean_var <= max(float(atol), 8 * np.finfo(np.float64).eps * scale) ** 2:
        return NAN
    d = a - a.mean()
    return float(np.mean((d * d) ** 2)) / mean_var**2


def energy_ratio(d, regular) -> float:
    """Energy ratio ``rms(d) / rms(regular)`` of the difference and regular signals.

    ``nan`` when the regular signal is all zero.

    References
    ----------
    .. [1] N. S. Swansson, "Application of vibration signal analysis techniques
       to signal monitoring", Conference on Friction and Wear in Engineering,
       Institution of Engineers Australia, pp. 262-267, 1980.
    .. [2] P. Vecer, M. Kreidl, R. Smid, "Condition indicators for gearbox
       condition monitoring systems", Acta Polytechnica 45(6), 2005.
    """
    num = rms(d)
    den = rms(regular)
    if den == 0.0:
        return NAN
    return num / den


def sideband_index(sb_minus: float, sb_plus: float) -> float:
    """Sideband index: mean of the first-order sideband amplitudes about the GMF.

    Parameters
    ----------
    sb_minus, sb_plus : float
        Amplitudes of the sidebands at ``GMF - f_shaft`` and ``GMF + f_shaft``.

    Returns
    -------
    float
        ``(sb_minus + sb_plus) / 2`` in the amplitudes' units.

    References
    ----------
    .. [1] M. Lebold et al., "Review of vibration analysis methods for gearbox
       diagnostics and prognostics", Proc. 54th MFPT, pp. 623-634, 2000.
    """
    return (float(sb_minus) + float(sb_plus)) / 2.0


def sideband_level_factor(sb_minus: float, sb_plus: float, tsa_std: float) -> float:
    """Sideband level factor: sum of the first-order sidebands over the TSA's standard deviation.

    Returns
    -------
    float
        ``(sb_minus + sb_plus) / tsa_std`` (dimensionless); ``nan`` when
        ``tsa_std`` is zero.

    References
    ----------
    .. [1] M. Lebold et al., "Review of vibration analysis methods for gearbox
       diagnostics and prognostics", Proc. 54th MFPT, pp. 623-634, 2000.
    .. [2] P. Vecer, M. Kreidl, R. Smid, "Condition indicators for gearbox
       condition monitoring systems", Acta Polytechnica 45(6), 2005.
    """
    s = float(tsa_std)
    if s == 0.0 or not math.isfinite(s):
        return NAN
    return (float(sb_minus) + float(sb_plus)) / s
