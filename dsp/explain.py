"""Read a spectrum against the gear-train model: what is this line, which shaft spaces this family.

Pure functions for the cursors and readouts of the workbench (no Qt here):

- :func:`tolerance_hz`: how far a line may sit from a model frequency and still
  be called a match;
- :func:`model_lines`: every model frequency as one flat list (shaft-rate
  harmonics, mesh harmonics with the sidebands of the shafts carrying the gears,
  planetary frequencies and bearing defect frequencies with their harmonics);
- :func:`match_spacing`: which shaft's rate (or planet-pass frequency) equals a
  sideband spacing;
- :func:`explain_peak`: which model frequencies explain a peak, best first;
- :func:`nearest_peak` and :func:`amplitude_at`: read a spectrum array at a
  cursor without recomputing anything (FFT lines or band-averaged lines,
  :func:`band_peak_amplitude`).

Axes.  Every function works on the axis the caller shows.  Frequencies given to
and returned by these functions are in *display units*: Hz times ``scale``.
``scale=1`` reads a Hz axis, ``scale=60`` a CPM axis and ``scale=1/f_ref``
(:func:`axis_scale`) an order axis, where ``f_ref`` is the rate of the shaft
whose orders are shown.  On an order axis the model lines are exact whatever the
speed did, because every model frequency is a fixed multiple of each shaft's
rate; on a Hz axis they hold at the table's (mean) speed.  The parameter names
keep ``_hz`` for the common case.

Everything searched for here is a characteristic frequency of the model; the
result is an aid to the analyst's reading, not a verdict.

References
----------
.. [1] R. B. Randall, "A new method of modeling gear faults", J. Mech. Design
   104 (1982) 259-267 (sidebands at shaft rates around mesh harmonics).
.. [2] R. B. Randall, *Vibration-based Condition Monitoring*, Wiley, 2011,
   gear-signal and bearing chapters.
.. [3] P. D. McFadden and J. D. Smith, "An explanation for the asymmetry of the
   modulation sidebands about the tooth meshing frequency in epicyclic gear
   vibration", Proc. IMechE C 199 (1985) 65-70 (planet-pass sidebands).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import lru_cache
from typing import Any

import numpy as np

from .errors import AnalysisError

#: Tolerance floor in frequency lines (common practice, no source): a line can
#: sit half a line off its bin, and a window main lobe spreads it over about
#: two lines, so 1.5 lines catches a true match without catching neighbours.
TOLERANCE_LINES = 1.5
#: Text given when no model frequency explains a peak.
NO_MATCH = "no model match"
#: Weight of one step of complexity (each harmonic above the first and each
#: sideband order) against one tolerance of error when ranking explanations
#: (common practice, no source: prefer the simpler of two near-equal readings).
COMPLEXITY_WEIGHT = 0.15

_AXES = ("hz", "cpm", "order")


# --------------------------------------------------------------------------- results


@dataclass(frozen=True)
class SpacingMatch:
    """A rate that equals a sideband spacing.

    ``shaft`` is the shaft name for ``kind == "shaft rate"`` and the planetary
    stage name for ``kind == "planet pass"``; ``rate_hz`` is that rate in display
    units; ``mismatch_hz = spacing - rate`` (display units) and
    ``mismatch_pct = 100 * mismatch / rate``.
    """

    shaft: str
    rate_hz: float
    mismatch_hz: float
    mismatch_pct: float
    kind: str = "shaft rate"
    label: str = ""


@dataclass(frozen=True)
class ModelLine:
    """One model frequency, with what it is.

    ``group`` is the overlay family: ``"mesh harmonics"``, ``"sidebands"``,
    ``"shaft harmonics"``, ``"planetary"`` or ``"bearings"``.  ``family`` names
    the element (``"mesh:stage 1"``, ``"shaft:input"``, ``"planetary:stage 2
    planet pass"``, ``"bearing:IS DE bpfo"``); ``harmonic`` the multiple of its
    base frequency; ``sideband_k`` the signed sideband order (0 for none);
    ``shaft`` the shaft that spaces the sidebands, turns at the shaft rate or
    carries the bearing (``None`` otherwise); ``hz`` the frequency in Hz at the
    table's speed.
    """

    hz: float
    text: str
    group: str
    family: str
    harmonic: int
    sideband_k: int = 0
    shaft: str | None = None


@dataclass(frozen=True)
class Explanation:
    """One reading of a peak: ``text`` such as ``"2 x GMF stage 2 - 1 x intermediate shaft rate, 0.2 Hz off"``.

    ``hz`` is the model frequency and ``error_hz = peak - model`` (display
    units); the other fields are those of :class:`ModelLine`.
    """

    text: str
    hz: float
    error_hz: float
    family: str
    harmonic: int
    sideband_k: int
    shaft: str | None
    group: str = ""


# --------------------------------------------------------------------------- helpers


def _positive(name: str, value: Any, *, allow_zero: bool = False, allow_inf: bool = False) -> float:
    try:
        v = float(value)
    except (TypeError, ValueError):
        v = math.nan
    if math.isnan(v) or (math.isinf(v) and not allow_inf) or v < 0 or (v == 0 and not allow_zero):
        need = "zero or more" if allow_zero else "more than zero"
        raise AnalysisError(f"{name}={value!r} must be a finite number {need}; pass a valid value")
    return v


def axis_scale(table, axis: str, *, order_shaft: str | None = None) -> float:
    """Display units per Hz for a spectrum axis.

    Parameters
    ----------
    table : dsp.kinematics.FrequencyTable
        Gives the shaft rates.
    axis : {"hz", "cpm", "order"}
    order_shaft : str, optional
        Shaft whose orders the axis shows (default: the table's reference shaft).

    Returns
    -------
    float
        1 for Hz, 60 for CPM, ``1 / f_shaft`` for orders.
    """
    if axis not in _AXES:
        raise AnalysisError(f"Invalid value for 'axis': allowed 'hz', 'cpm', 'order', got {axis!r}")
    if axis == "hz":
        return 1.0
    if axis == "cpm":
        return 60.0
    rate = table.reference_hz if order_shaft is None else table.shaft_hz(order_shaft)
    return 1.0 / float(rate)


def speed_spread_frac(min_hz: float, mean_hz: float, max_hz: float) -> float:
    """Largest relative departure of the speed from its mean: ``max(max - mean, mean - min) / mean``."""
    mean = _positive("mean_hz", mean_hz)
    return max(float(max_hz) - mean, mean - float(min_hz), 0.0) / mean


def tolerance_hz(freq_hz: float, *, resolution_hz: float, speed_spread_frac: float = 0.0) -> float:
    """How far a line may sit from a model frequency and still match it.

    ``max(1.5 * resolution_hz, |freq_hz| * speed_spread_frac)``: the larger of
    one and a half spectral lines and the shift the speed spread gives this
    frequency (a line at ``f`` for the mean speed lies anywhere within
    ``f * (1 +- spread)`` when the speed wanders).  Common practice, no source.

    Parameters
    ----------
    freq_hz : float
        Frequency of the line (display units).
    resolution_hz : float
        Line spacing of the spectrum (same units), > 0.
    speed_spread_frac : float
        Largest relative departure of the speed from its mean
        (:func:`speed_spread_frac`); 0 on an order axis or for a steady speed.

    Returns
    -------
    float
        Tolerance in the units of ``freq_hz``.
    """
    res = _positive("resolution_hz", resolution_hz)
    spread = _positive("speed_spread_frac", speed_spread_frac, allow_zero=True)
    return max(TOLERANCE_LINES * res, abs(float(freq_hz)) * spread)


# --------------------------------------------------------------------------- model lines


def _fmt_mult(n: int, what: str) -> str:
    return f"{n} x {what}"


@lru_cache(maxsize=32)
def model_lines(table, *, n_harmonics: int = 5, n_sidebands: int = 3) -> tuple[ModelLine, ...]:
    """Every model frequency of ``table`` as :class:`ModelLine` (Hz at the table's speed).

    Parameters
    ----------
    table : dsp.kinematics.FrequencyTable
    n_harmonics : int
        Harmonics ``1..n_harmonics`` of shaft rates, mesh frequencies,
        planetary and bearing frequencies.
    n_sidebands : int
        Sidebands ``k = 1..n_sidebands`` on each side of each mesh harmonic.

    Returns
    -------
    tuple of ModelLine
        Shaft-rate harmonics; mesh harmonics ``h GMF`` of every parallel mesh
        and planetary mesh; their sidebands ``h GMF +- k f`` for each shaft
        carrying a gear of that mesh (driver and driven; sun and carrier shafts
        and the planet-pass frequency for a planetary stage, [2]_); planetary
        frequencies (carrier, planet spin, planet pass, sun, planet and ring
        fault); bearing BPFO, BPFI, BSF, FTF and their harmonics; hunting-tooth
        and assembly-phase frequencies (fundamental only).

    References
    ----------
    .. [1] R. B. Randall, "A new method of modeling gear faults", J. Mech.
       Design 104 (1982) 259-267.
    .. [2] P. D. McFadden and J. D. Smith, Proc. IMechE C 199 (1985) 65-70.
    """
    if not (isinstance(n_harmonics, int) and n_harmonics >= 1):
        raise AnalysisError(f"n_harmonics={n_harmonics!r} must be a whole number of at least 1")
    if not (isinstance(n_sidebands, int) and n_sidebands >= 0):
        raise AnalysisError(f"n_sidebands={n_sidebands!r} must be a whole number of at least 0")
    out: list[ModelLine] = []
    rate = {s.name: float(s.hz) for s in table.shafts}
    for s in table.shafts:
        for h in range(1, n_harmonics + 1):
            out.append(ModelLine(h * s.hz, _fmt_mult(h, f"{s.name} shaft rate"), "shaft harmonics",
                                 f"shaft:{s.name}", h, 0, s.name))

    def mesh_family(name: str, label: str, gmf: float, spacings: list[tuple[str, str, float]]) -> None:
        for h in range(1, n_harmonics + 1):
            base = _fmt_mult(h, label)
            out.append(ModelLine(h * gmf, base, "mesh harmonics", f"mesh:{name}", h, 0, None))
            for owner, what, f in spacings:
                for k in range(1, n_sidebands + 1):
                    for sign in (-1, 1):
                        text = f"{base} {'-' if sign < 0 else '+'} {_fmt_mult(k, what)}"
                        out.append(ModelLine(h * gmf + sign * k * f, text, "sidebands", f"mesh:{name}",
                                             h, sign * k, owner))

    for m in table.meshes:
        spacings = [(sh, f"{sh} shaft rate", rate[sh]) for sh in dict.fromkeys((m.driver, m.driven))]
        mesh_family(m.name, f"GMF {m.name}", float(m.gmf_hz), spacings)
    for g in table.planetary:
        spacings = [(sh, f"{sh} shaft rate", rate[sh]) for sh in dict.fromkeys((g.sun_shaft, g.carrier_shaft))
                    if sh in rate]
        spacings.append((g.carrier_shaft or None, f"{g.name} planet pass", float(g.planet_pass_hz)))
        mesh_family(g.name, f"mesh {g.name}", float(g.mesh_hz), spacings)
        for kind, f in (("carrier", g.carrier_hz), ("planet spin", g.planet_spin_hz),
                        ("planet pass", g.planet_pass_hz), ("sun fault", g.sun_fault_hz),
                        ("planet fault", g.planet_fault_hz), ("ring fault", g.ring_fault_hz)):
            for h in range(1, n_harmonics + 1):
                out.append(ModelLine(h * float(f), _fmt_mult(h, f"{g.name} {kind}"), "planetary",
                                     f"planetary:{g.name} {kind}", h, 0, g.carrier_shaft or None))
    for b in table.bearings:
        for kind, f in (("BPFO", b.bpfo_hz), ("BPFI", b.bpfi_hz), ("BSF", b.bsf_hz), ("FTF", b.ftf_hz)):
            for h in range(1, n_harmonics + 1):
                out.append(ModelLine(h * float(f), _fmt_mult(h, f"{b.name} {kind}"), "bearings",
                                     f"bearing:{b.name} {kind.lower()}", h, 0, b.shaft))
    for r in table.rows:
        if r.kind in ("hunting tooth", "assembly phase"):
            out.append(ModelLine(float(r.hz), f"1 x {r.label}", "mesh harmonics", f"mesh:{r.owner} {r.kind}",
                                 1, 0, None))
    return tuple(x for x in out if x.hz > 0)


@lru_cache(maxsize=32)
def _line_arrays(table, n_harmonics: int, n_sidebands: int) -> tuple[tuple[ModelLine, ...], np.ndarray, np.ndarray]:
    lines = model_lines(table, n_harmonics=n_harmonics, n_sidebands=n_sidebands)
    hz = np.array([x.hz for x in lines], dtype=float)
    complexity = np.array([(x.harmonic - 1) + abs(x.sideband_k) for x in lines], dtype=float)
    return lines, hz, complexity


# --------------------------------------------------------------------------- matching


def match_spacing(spacing_hz: float, table, *, tolerance_hz: float, scale: float = 1.0,
                  include_planet_pass: bool = True) -> list[SpacingMatch]:
    """Shafts whose rate equals a sideband spacing, best first.

    Parameters
    ----------
    spacing_hz : float
        Measured spacing of a sideband family (display units).
    table : dsp.kinematics.FrequencyTable
    tolerance_hz : float
        Largest accepted ``|spacing - rate|`` (display units; see
        :func:`tolerance_hz`); ``math.inf`` ranks every rate.
    scale : float
        Display units per Hz (:func:`axis_scale`).
    include_planet_pass : bool
        Also try each planetary stage's planet-pass frequency.

    Returns
    -------
    list of SpacingMatch
        Only the rates within the tolerance, smallest ``|mismatch|`` first;
        empty when none fits.

    References
    ----------
    .. [1] R. B. Randall, *Vibration-based Condition Monitoring*, Wiley, 2011
       (ownership of a sideband family by its spacing).
    """
    spacing = _positive("spacing_hz", spacing_hz)
    tol = _positive("tolerance_hz", tolerance_hz, allow_zero=True, allow_inf=True)
    sc = _positive("scale", scale)
    candidates = [(s.name, float(s.hz) * sc, "shaft rate", f"{s.name} shaft rate") for s in table.shafts]
    if include_planet_pass:
        candidates += [(g.name, float(g.planet_pass_hz) * sc, "planet pass", f"{g.name} planet pass")
                       for g in table.planetary]
    out = []
    for name, rate, kind, label in candidates:
        diff = spacing - rate
        if abs(diff) <= tol and rate > 0:
            out.append(SpacingMatch(name, rate, diff, 100.0 * diff / rate, kind, label))
    out.sort(key=lambda m: abs(m.mismatch_hz))
    return out


def explain_peak(freq_hz: float, table, *, tolerance_hz: float, n_harmonics: int = 5, n_sidebands: int = 3,
                 scale: float = 1.0, max_results: int = 8) -> list[Explanation]:
    """Model frequencies that explain a peak, best first.

    Parameters
    ----------
    freq_hz : float
        Frequency of the peak (display units).
    table : dsp.kinematics.FrequencyTable
    tolerance_hz : float
        Largest accepted ``|peak - model|`` (display units, :func:`tolerance_hz`).
    n_harmonics, n_sidebands : int
        Extent of the model lines searched (:func:`model_lines`).
    scale : float
        Display units per Hz (:func:`axis_scale`).
    max_results : int
        Longest list returned.

    Returns
    -------
    list of Explanation
        Empty when nothing is within the tolerance (show :data:`NO_MATCH`).
        Ranked by ``|error| / tolerance + 0.15 * complexity`` where complexity
        counts harmonics above the first and sideband orders, so that of two
        near-equal readings the simpler comes first (common practice, no
        source).  Text such as ``"1 x GMF main pair - 1 x input shaft rate,
        0.0 Hz off"`` (the unit word follows ``scale``: Hz, CPM or orders).

    References
    ----------
    .. [1] R. B. Randall, *Vibration-based Condition Monitoring*, Wiley, 2011.
    """
    f = float(freq_hz)
    if not math.isfinite(f):
        raise AnalysisError(f"freq_hz={freq_hz!r} must be a finite number; place the cursor on the spectrum")
    tol = _positive("tolerance_hz", tolerance_hz, allow_zero=True)
    sc = _positive("scale", scale)
    lines, hz, complexity = _line_arrays(table, int(n_harmonics), int(n_sidebands))
    model = hz * sc
    err = f - model
    hit = np.flatnonzero(np.abs(err) <= tol)
    if hit.size == 0:
        return []
    rank = np.abs(err[hit]) / max(tol, 1e-300) + COMPLEXITY_WEIGHT * complexity[hit]
    order = hit[np.argsort(rank, kind="stable")][:max_results]
    unit = _unit_word(sc)
    out = []
    for i in order:
        line = lines[i]
        e = float(err[i])
        out.append(Explanation(f"{line.text}, {_fmt_value(abs(e), sc)} {unit} off", float(model[i]), e,
                               line.family, line.harmonic, line.sideband_k, line.shaft, line.group))
    return out


def best_text(explanations: list[Explanation]) -> str:
    """The text of the best explanation, or :data:`NO_MATCH`."""
    return explanations[0].text if explanations else NO_MATCH


def _unit_word(scale: float) -> str:
    if scale == 1.0:
        return "Hz"
    if scale == 60.0:
        return "CPM"
    return "orders"


def _fmt_value(v: float, scale: float) -> str:
    if scale in (1.0, 60.0):
        return f"{v:.1f}"
    return f"{v:.3f}"


# --------------------------------------------------------------------------- reading arrays


def _axis(freq_hz, amplitude) -> tuple[np.ndarray, np.ndarray]:
    f = np.asarray(freq_hz)
    a = np.asarray(amplitude)
    if f.ndim != 1 or a.shape != f.shape or f.size < 1:
        raise AnalysisError(f"freq_hz and amplitude must be 1-D arrays of one length, got shapes {f.shape} "
                            f"and {a.shape}; pass the spectrum's axis and amplitude")
    return f, a


def bin_index(freq_hz, f0_hz):
    """Index of the line nearest to ``f0_hz`` on the increasing axis ``freq_hz`` (vectorised, O(log n))."""
    f = np.asarray(freq_hz)
    if np.ndim(f0_hz) == 0:   # scalar fast path (cursor readouts call this on every move)
        x = float(f0_hz)
        j = min(max(int(np.searchsorted(f, x)), 1), max(f.size - 1, 1))
        lo, hi = min(j - 1, f.size - 1), min(j, f.size - 1)
        return lo if abs(x - f[lo]) <= abs(f[hi] - x) else hi
    x = np.asarray(f0_hz, dtype=float)
    i = np.clip(np.searchsorted(f, x), 1, max(f.size - 1, 1))
    lo = np.clip(i - 1, 0, f.size - 1)
    hi = np.clip(i, 0, f.size - 1)
    pick = np.where(np.abs(x - f[lo]) <= np.abs(f[hi] - x), lo, hi)
    return int(pick) if pick.ndim == 0 else pick


def amplitude_at(freq_hz, amplitude, f0_hz):
    """Amplitude of the line nearest to ``f0_hz`` (no interpolation: the spectrum's own value).

    Parameters
    ----------
    freq_hz : ndarray
        Increasing axis (any display units).
    amplitude : ndarray
        Amplitude per line.
    f0_hz : float or ndarray
        Where to read (same units as ``freq_hz``).

    Returns
    -------
    float or ndarray
    """
    f, a = _axis(freq_hz, amplitude)
    i = bin_index(f, f0_hz)
    return float(a[i]) if np.ndim(i) == 0 else a[i].astype(float)


#: Kinds of spectral lines :func:`nearest_peak` reads: ``"fft"`` lines of one windowed FFT (a
#: tone is a window-shaped peak over a few lines) and ``"band"`` lines, each the RMS of a band
#: of finer lines (a tone sits flat in one line or is split between two).
LINES = ("fft", "band")


def band_peak_amplitude(amplitude, index: int) -> float:
    """Amplitude of a tone read on band-averaged lines: the power sum of its line and the larger neighbour.

    Each band-averaged line holds the RMS of its band (``dsp.spectrum.band_spectrum``),
    so a tone's power lands in one line, or is split between two adjacent lines when
    it sits near their common edge (each then reads down to ``1/sqrt(2)`` of the
    tone, -3 dB).  The root of the summed squares of the peak line and its larger
    neighbour gives the tone's amplitude in both cases (Parseval's relation), to
    within the noise power of one line.  The log-parabola refinement used on
    window-shaped peaks of FFT lines does not apply to these flat-topped bands.

    Parameters
    ----------
    amplitude : ndarray
        Amplitude per line (linear, peak or RMS scaling), 1-D.
    index : int
        The peak line.

    Returns
    -------
    float
        ``sqrt(a[index]**2 + max(a[index - 1], a[index + 1])**2)`` (a missing
        neighbour at either end counts as 0), in the units of ``amplitude``.

    References
    ----------
    .. [1] A. V. Oppenheim and R. W. Schafer, *Discrete-Time Signal Processing*, 3rd ed.,
       Pearson, 2010, Sec. 8.5 (Parseval's relation for the DFT).
    """
    a = np.asarray(amplitude)
    if a.ndim != 1 or a.size < 1:
        raise AnalysisError(f"amplitude must be a 1-D array of at least one line, got shape {a.shape}; "
                            "pass the spectrum's amplitude")
    k = int(index)
    if not 0 <= k < a.size:
        raise AnalysisError(f"index={index!r} is outside the {a.size} lines of the spectrum; pass a line index")
    left = float(a[k - 1]) if k > 0 else 0.0
    right = float(a[k + 1]) if k + 1 < a.size else 0.0
    return float(math.hypot(float(a[k]), max(left, right)))


def nearest_peak(freq_hz, amplitude, f0_hz: float, *, search_hz: float, lines: str = "fft") -> tuple[float, float]:
    """The largest local maximum within ``f0_hz +- search_hz``, read as the kind of lines says.

    Parameters
    ----------
    freq_hz : ndarray
        Increasing, evenly spaced axis (any display units).
    amplitude : ndarray
        Amplitude per line (>= 0).
    f0_hz : float
        Centre of the search.
    search_hz : float
        Half-width of the search (same units); at least the nearest line is used.
    lines : {"fft", "band"}
        ``"fft"``: lines of one windowed FFT; the peak is refined by a parabola
        through the logarithms of three amplitudes ([1]_).  ``"band"``: band-averaged
        lines (each the RMS of a band of finer lines); the peak is the line's
        centre and its amplitude the power sum of the line and its larger
        neighbour (:func:`band_peak_amplitude`, Parseval's relation [2]_), since a
        tone near the edge of two bands is split between them.

    Returns
    -------
    (f, a) : tuple of float
        Frequency and amplitude of the peak: the largest local maximum in
        reach, or the largest line when the reach holds no local maximum
        (a slope).  With ``lines="fft"``, when that line is a local
        maximum with positive neighbours, a parabola through the logarithms of
        the three amplitudes gives the peak position and height ([1]_); else
        the line itself is returned.  With ``lines="band"``: the line's centre
        and :func:`band_peak_amplitude` of that line.

    References
    ----------
    .. [1] J. O. Smith and X. Serra, "PARSHL: an analysis/synthesis program for
       non-harmonic sounds based on a sinusoidal representation", Proc. ICMC
       1987 (quadratic interpolation of the log-magnitude spectrum).
    .. [2] A. V. Oppenheim and R. W. Schafer, *Discrete-Time Signal Processing*, 3rd ed.,
       Pearson, 2010, Sec. 8.5 (Parseval's relation for the DFT).
    """
    if lines not in LINES:
        raise AnalysisError(f"Invalid value for 'lines': allowed {', '.join(map(repr, LINES))}, got {lines!r}")
    f, a = _axis(freq_hz, amplitude)
    search = _positive("search_hz", search_hz, allow_zero=True)
    x = float(f0_hz)
    i0 = int(np.searchsorted(f, x - search, side="left"))
    i1 = int(np.searchsorted(f, x + search, side="right"))
    if i1 <= i0:
        i = bin_index(f, x)
        i0, i1 = i, i + 1
    # local maxima in reach (neighbours outside the window count), the largest wins
    j0, j1 = max(i0 - 1, 0), min(i1 + 1, f.size)
    seg = np.asarray(a[j0:j1], dtype=float)
    inner = np.arange(i0 - j0, i1 - j0)
    left = np.where(inner > 0, seg[np.maximum(inner - 1, 0)], -np.inf)
    right = np.where(inner < seg.size - 1, seg[np.minimum(inner + 1, seg.size - 1)], -np.inf)
    peaks = inner[(seg[inner] >= left) & (seg[inner] >= right)]
    pick = peaks if peaks.size else inner
    i = j0 + int(pick[np.argmax(seg[pick])])
    if lines == "band":
        return float(f[i]), band_peak_amplitude(a, i)
    if 0 < i < f.size - 1:
        y0, y1, y2 = float(a[i - 1]), float(a[i]), float(a[i + 1])
        if y1 >= y0 and y1 >= y2 and min(y0, y1, y2) > 0:
            l0, l1, l2 = math.log(y0), math.log(y1), math.log(y2)
            den = l0 - 2.0 * l1 + l2
            if den < 0:
                p = 0.5 * (l0 - l2) / den
                df = 0.5 * (float(f[i + 1]) - float(f[i - 1]))
                return float(f[i]) + p * df, math.exp(l1 - 0.25 * (l0 - l2) * p)
    return float(f[i]), float(a[i])
