"""Suspect components ranked with their evidence: an aid to the analyst's judgement.

The ranking combines what the other analysis steps measured:

* TSA indicators per shaft (FM4, NA4, M6A, kurtosis): a local tooth fault makes
  the difference/residual signal of its shaft impulsive once per revolution,
  so FM4 and NA4 rise above the Gaussian value 3 [1]_ [2]_;
* sideband families owned by the shaft (:mod:`dsp.sidebands`): distributed
  wear and eccentricity modulate the mesh at the shaft rate, so sidebands grow
  and the higher mesh harmonics grow against the first [3]_;
* matches in the squared-envelope spectrum: bearing defect frequencies
  (BPFO, BPFI with shaft-rate sidebands, BSF, FTF) and their harmonics with a
  1-2 % slip tolerance [4]_, and the shaft rate of a gear whose broken tooth
  strikes once per revolution.

Each contribution is a ramp from 0 to 1 between two thresholds documented
beside the constant; the score of a component is a weighted sum, 0..1.
Only components at or above the alarm threshold are listed, best first; a
healthy recording gives an empty list.

**This is an aid to the analyst's judgement, not a verdict.**  Every suspect
carries that sentence (``Suspect.caution``).

References
----------
.. [1] R. M. Stewart, "Some useful data analysis techniques for gearbox
   diagnostics", ISVR report MHM/R/10/77, 1977 (FM4).
.. [2] J. J. Zakrajsek, D. P. Townsend, H. J. Decker, "An analysis of gear fault
   detection methods as applied to pitting fatigue failure data",
   NASA TM-105950, 1993 (NA4).
.. [3] R. B. Randall, *Vibration-based Condition Monitoring*, Wiley, 2011,
   gear-signal chapter (sidebands and harmonic growth with wear).
.. [4] R. B. Randall, J. Antoni, "Rolling element bearing diagnostics - A
   tutorial", Mech. Syst. Signal Process. 25 (2011) 485-520.
.. [5] N. S. Swansson, "Application of vibration signal analysis techniques to
   signal monitoring", Conf. Friction and Wear in Engineering, IEAust, 1980
   (energy ratio; bibliographic details from memory).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Mapping, Sequence

import numpy as np

from .sidebands import detection_threshold_db

CAUTION = (
    "This ranking is an aid to the analyst's judgement, not a verdict: confirm it "
    "on the views and defer to local codes, the manufacturer's instructions and licensed practice."
)

KINDS = (
    "localized tooth damage",
    "distributed wear or eccentricity",
    "bearing outer race",
    "bearing inner race",
    "bearing rolling element",
    "bearing cage",
)

# --- thresholds (lo, hi) of the ramps -------------------------------------------
#: FM4 of a healthy gear is about 3 (Gaussian difference signal, Stewart 1977);
#: manufacturing errors and faults elsewhere in the train leak into it and
#: commonly lift it to 4-5, so the ramp runs from 5 to 9 (common practice, no source).
FM4_RAMP = (5.0, 9.0)
#: NA4 is about 3 for a healthy gear (Zakrajsek et al. 1993); same ramp,
#: common practice, no source.
NA4_RAMP = (5.0, 9.0)
#: M6A is 15 for Gaussian data (Martin 1989, moment algebra); ramp common
#: practice, no source.
M6A_RAMP = (50.0, 150.0)
#: Above this FM4 an impulsive signal is taken as local damage even when the
#: wear evidence is strong (common practice, no source).
FM4_SURELY_LOCAL = (10.0, 30.0)
#: Energy ratio rms(difference)/rms(regular) (Swansson 1980): a few percent for a
#: healthy gear, rising with wear spread over the teeth (common practice, no source).
ER_RAMP = (0.1, 0.3)
#: First-order sideband level against its carrier, dB: healthy gears commonly
#: stay below about -20 dB; eccentricity and wear bring them within a few dB
#: (common practice, no source).
SIDEBAND_RATIO_DB_RAMP = (-20.0, -8.0)
#: Second mesh harmonic against the first: growth past the first is a wear
#: pattern (Randall 2011, gear chapter; thresholds common practice, no source).
HARMONIC_GROWTH_RAMP = (0.6, 1.2)
#: Envelope harmonics standing clear (out of N searched) for a bearing family.
ENVELOPE_HARMONICS_RAMP = (1.0, 3.0)
#: Excess of the strongest bearing line over the local floor, dB (common
#: practice, no source).
ENVELOPE_EXCESS_DB_RAMP = (12.0, 30.0)
#: A bearing family this many dB below a shaft family that dominates the
#: envelope is in its shadow (weighted by half; common practice, no source).
SHADOW_DB = 20.0
#: Slip of rolling elements: observed bearing frequencies deviate 1-2 % from the
#: kinematic values (Randall & Antoni 2011).
BEARING_SLIP = 0.02
#: False-alarm probability per searched window used for the adaptive envelope
#: threshold (see :func:`detection_threshold_db`).
FALSE_ALARM = 0.01


def ramp(x: float, lo: float, hi: float) -> float:
    """0 below ``lo``, 1 above ``hi``, linear between (NaN gives 0)."""
    if x is None or not np.isfinite(x):
        return 0.0
    return float(np.clip((x - lo) / (hi - lo), 0.0, 1.0))


# --- envelope matches -------------------------------------------------------------


@dataclass(frozen=True)
class EnvelopeTarget:
    """A frequency family to look for in the squared-envelope spectrum."""

    component: str                 # "bearing:NAME" or "shaft:NAME"
    kind: str                      # one of KINDS, or "shaft rate"
    label: str                     # "BPFO", "BPFI", "BSF", "FTF", "1x input"
    shaft: str
    hz: float
    sideband_hz: float | None = None   # shaft rate for BPFI, FTF for BSF
    slip: float = BEARING_SLIP


@dataclass(frozen=True)
class HarmonicHit:
    """One harmonic of a target searched in the envelope spectrum."""

    harmonic: int
    expected_hz: float
    found_hz: float
    amplitude: float
    floor: float
    excess_db: float
    threshold_db: float
    clear: bool
    coincides_with: str | None = None


@dataclass(frozen=True)
class EnvelopeMatch:
    """A target family and what the envelope spectrum shows of it."""

    component: str
    kind: str
    label: str
    shaft: str
    expected_hz: float
    slip: float
    hits: tuple[HarmonicHit, ...]
    n_clear: int                   # clear harmonics not explained by a shaft family
    n_sidebands_clear: int         # sidebands at sideband_hz around clear harmonics
    sideband_hz: float | None
    evidence: tuple[str, ...]
    resolution_hz: float = float("nan")

    @property
    def found(self) -> bool:
        return self.n_clear >= 1

    @property
    def best_excess_db(self) -> float:
        vals = [h.excess_db for h in self.hits if h.clear and h.coincides_with is None]
        return max(vals) if vals else float("-inf")


def _peak_in(freq_hz: np.ndarray, amplitude: np.ndarray, lo_hz: float, hi_hz: float):
    lo = int(np.searchsorted(freq_hz, lo_hz, side="left"))
    hi = int(np.searchsorted(freq_hz, hi_hz, side="right"))
    if hi <= lo:
        i = int(np.clip(np.searchsorted(freq_hz, 0.5 * (lo_hz + hi_hz)), 0, freq_hz.size - 1))
        return i, 1
    return lo + int(np.argmax(amplitude[lo:hi])), hi - lo


def _floor_at(freq_hz: np.ndarray, amplitude: np.ndarray, f_hz: float, df: float) -> float:
    half = max(0.1 * f_hz, 40 * df)
    lo = int(np.searchsorted(freq_hz, f_hz - half))
    hi = int(np.searchsorted(freq_hz, f_hz + half))
    seg = amplitude[max(lo, 1):hi]
    return float(np.median(seg)) if seg.size else float("nan")


def counted_hits(hits: Sequence[HarmonicHit], df: float) -> tuple[HarmonicHit, ...]:
    """The clear harmonics that line up with a clear fundamental (those a family counts).

    A family counts only when its fundamental stands clear; harmonic ``h`` then
    counts when it is clear and lies within 1 % (at least 1.5 lines) of
    ``h`` times the fundamental found, so that the lines share one slip.
    """
    if not hits or not (hits[0].clear and hits[0].coincides_with is None):
        return ()
    base = hits[0].found_hz
    return tuple(h for h in hits if h.clear and h.coincides_with is None
                 and abs(h.found_hz - h.harmonic * base) <= max(1.5 * df, 0.01 * h.harmonic * base))


def _consistent_harmonics(hits: Sequence[HarmonicHit], df: float) -> int:
    return len(counted_hits(hits, df))


def match_envelope(
    freq_hz: np.ndarray,
    amplitude: np.ndarray,
    targets: Sequence[EnvelopeTarget],
    *,
    n_harmonics: int = 4,
    false_alarm: float = FALSE_ALARM,
) -> tuple[EnvelopeMatch, ...]:
    """Look for each target family (and its harmonics) in an envelope spectrum.

    Parameters
    ----------
    freq_hz : ndarray
        Frequency axis of the squared-envelope spectrum (Hz), evenly spaced.
    amplitude : ndarray
        Its amplitude.
    targets : sequence of EnvelopeTarget
        Bearing defect frequencies and shaft rates.  Shaft targets are matched
        first; a bearing line that falls on a harmonic of a shaft family that is
        itself present is marked ``coincides_with`` and not counted.
    n_harmonics : int
        Harmonics searched per target.
    false_alarm : float
        False-alarm probability per search window (see
        :func:`detection_threshold_db`).

    Returns
    -------
    tuple of EnvelopeMatch
        One per target, in the order given.

    Notes
    -----
    Harmonic ``h`` of a bearing frequency ``f`` is searched within
    ``h * f * (1 +- slip)`` (slip 2 %, Randall & Antoni 2011 [1]_), at least
    +-1.5 lines; a shaft harmonic within +-1.5 lines.  A line is clear when it
    passes :func:`dsp.sidebands.detection_threshold_db` for the window searched.
    A family counts only when its fundamental is clear, and its harmonics only
    when they line up with the fundamental found (one common slip), so that a
    high harmonic of one bearing frequency is not taken for another family.  The floor is the median
    of the spectrum over +-10 % around the line (at least 40 lines).

    References
    ----------
    .. [1] R. B. Randall, J. Antoni, "Rolling element bearing diagnostics - A
       tutorial", Mech. Syst. Signal Process. 25 (2011) 485-520.
    """
    freq_hz = np.asarray(freq_hz, dtype=float)
    amplitude = np.asarray(amplitude, dtype=float)
    if freq_hz.size < 8:
        return tuple(EnvelopeMatch(t.component, t.kind, t.label, t.shaft, t.hz, t.slip, (), 0, 0,
                                   t.sideband_hz, ("the envelope spectrum is too short to search",))
                     for t in targets)
    df = float(freq_hz[1] - freq_hz[0])
    f_max = float(freq_hz[-1])

    def search(f_hz: float, slip: float) -> HarmonicHit | None:
        half = max(1.5 * df, slip * f_hz)
        if f_hz + half > f_max or f_hz - half <= 0:
            return None
        i, n = _peak_in(freq_hz, amplitude, f_hz - half, f_hz + half)
        floor = _floor_at(freq_hz, amplitude, f_hz, df)
        level = float(amplitude[i])
        excess = 20 * math.log10(level / floor) if level > 0 and floor > 0 else float("-inf")
        thr = detection_threshold_db(n, false_alarm)
        return HarmonicHit(0, f_hz, float(freq_hz[i]), level, floor, excess, thr, bool(excess >= thr))

    order_idx = sorted(range(len(targets)), key=lambda i: 0 if targets[i].kind == "shaft rate" else 1)
    present_shafts: dict[str, float] = {}
    results: dict[int, EnvelopeMatch] = {}
    for idx in order_idx:
        t = targets[idx]
        is_shaft = t.kind == "shaft rate"
        hits: list[HarmonicHit] = []
        for h in range(1, n_harmonics + 1):
            hit = search(h * t.hz, 0.0 if is_shaft else t.slip)
            if hit is None:
                break
            coincide = None
            if not is_shaft and hit.clear:
                for name, f_s in present_shafts.items():
                    m = round(hit.found_hz / f_s)
                    if m >= 1 and abs(hit.found_hz - m * f_s) <= 1.5 * df + 0.002 * hit.found_hz:
                        coincide = f"{m}x shaft {name}"
                        break
            hits.append(HarmonicHit(h, hit.expected_hz, hit.found_hz, hit.amplitude, hit.floor,
                                    hit.excess_db, hit.threshold_db, hit.clear, coincide))
        n_clear = _consistent_harmonics(hits, df)
        n_sb = 0
        if t.sideband_hz and t.sideband_hz > 0:
            for h in hits:
                if not (h.clear and h.coincides_with is None):
                    continue
                for sign in (-1.0, 1.0):
                    sb = search(h.found_hz + sign * t.sideband_hz, 0.0)
                    if sb is not None and sb.clear:
                        n_sb += 1
        if is_shaft and n_clear >= 2 and hits and hits[0].clear:
            present_shafts[t.shaft] = t.hz
        ev = []
        if hits:
            parts = ", ".join(
                f"{h.harmonic}x at {h.found_hz:.2f} Hz {h.excess_db:+.1f} dB"
                + (" (clear)" if h.clear and h.coincides_with is None else "")
                + (f" (on {h.coincides_with})" if h.coincides_with else "")
                for h in hits
            )
            ev.append(
                f"{t.label} of {t.component} expected at {t.hz:.2f} Hz"
                + (f" +-{100 * t.slip:.0f} %" if not is_shaft else "")
                + f": {n_clear} of {len(hits)} harmonics stand clear of the envelope floor ({parts})."
            )
            if t.sideband_hz:
                ev.append(f"{n_sb} sidebands at +-{t.sideband_hz:.2f} Hz stand clear around those harmonics.")
        else:
            ev.append(f"{t.label} of {t.component} ({t.hz:.2f} Hz) lies outside the envelope spectrum.")
        results[idx] = EnvelopeMatch(t.component, t.kind, t.label, t.shaft, float(t.hz), float(t.slip),
                                     tuple(hits), int(n_clear), int(n_sb), t.sideband_hz, tuple(ev), df)
    return tuple(results[i] for i in range(len(targets)))


# --- suspects ---------------------------------------------------------------------


@dataclass(frozen=True)
class Suspect:
    """One suspect component with its score and evidence.

    ``score`` (0..1) ranks suspects; it is not a probability.  ``view`` names
    the view that best shows the evidence.  An aid to the analyst's judgement,
    not a verdict (``caution``).
    """

    component: str                 # "shaft:NAME" or "bearing:NAME"
    kind: str                      # one of KINDS
    score: float
    evidence: tuple[str, ...]
    view: str                      # "tsa" | "spectrum" | "envelope" | "cepstrum"
    shaft: str
    contributions: dict[str, float] = field(default_factory=dict)
    caution: str = CAUTION


def _gear_suspects(
    tsa: Sequence,
    sidebands: Sequence,
    envelope_matches: Sequence[EnvelopeMatch],
    cepstrum_support: Mapping[str, float],
) -> list[Suspect]:
    out: list[Suspect] = []
    shaft_env = {m.shaft: m for m in envelope_matches if m.kind == "shaft rate"}
    by_mesh: dict[str, dict[int, float]] = {}
    for f in sidebands:
        by_mesh.setdefault(f.mesh, {})[f.harmonic] = f.carrier_amplitude
    for item in tsa:
        name = item.shaft
        ind = item.indicators
        fm4 = float(ind.get("fm4", float("nan")))
        na4 = float(ind.get("na4", float("nan")))
        m6a = float(ind.get("m6a", float("nan")))
        owned = [f for f in sidebands if f.owner_shaft == name and not getattr(f, "expected", False)]
        sb_score = max((f.candidates.get(name, 0.0) for f in owned), default=0.0)
        env = shaft_env.get(name)
        env_score = ramp(env.n_clear, *ENVELOPE_HARMONICS_RAMP) if env is not None else 0.0
        ceps = float(np.clip(cepstrum_support.get(name, 0.0) or 0.0, 0.0, 1.0))

        er = float(ind.get("er", float("nan")))
        ratio_db = -math.inf
        growth = 0.0
        for f in owned:
            r = f.sideband_ratio
            if r > 0 and np.isfinite(r):
                ratio_db = max(ratio_db, 20 * math.log10(r))
            carriers = by_mesh.get(f.mesh, {})
            if carriers.get(1, 0) > 0 and 2 in carriers:
                growth = max(growth, carriers[2] / carriers[1])
        wear = 0.55 * ramp(er, *ER_RAMP) + 0.45 * ramp(growth, *HARMONIC_GROWTH_RAMP)
        fam = ramp(sb_score, 0.15, 0.5)

        # localized tooth damage: impulsive TSA difference / residual signal,
        # unless the same shaft shows the wear pattern and FM4 stays moderate
        impulsive = max(ramp(fm4, *FM4_RAMP), ramp(na4, *NA4_RAMP), 0.8 * ramp(m6a, *M6A_RAMP))
        support = 0.5 * sb_score + 0.5 * env_score
        # an impulsive TSA alone reaches 0.55; the impact seen once per revolution in the
        # envelope and a sideband family at the shaft rate corroborate it
        loc = impulsive * (0.55 + 0.45 * support) + 0.1 * support * (impulsive > 0)
        damp = 1.0 - 0.5 * wear * (1.0 - ramp(fm4, *FM4_SURELY_LOCAL))
        loc = float(np.clip(loc * damp, 0.0, 1.0))
        ev = [
            f"TSA of shaft {name} over {item.n_revs} revolutions: FM4 {fm4:.2f}, NA4 {na4:.2f}, "
            f"M6A {m6a:.1f} (about 3, 3 and 15 for a healthy gear)."
        ]
        if owned:
            ev.append(
                f"shaft {name} owns {len(owned)} sideband famil{'y' if len(owned) == 1 else 'ies'} "
                f"(best ownership score {sb_score:.2f}: "
                + "; ".join(f"{f.mesh} h{f.harmonic} {f.n_found} clear" for f in owned) + ")."
            )
        if env is not None and env.n_clear:
            ev.append(f"the envelope shows {env.n_clear} clear harmonics of shaft {name}'s rate "
                      f"({env.expected_hz:.2f} Hz): an impact once per revolution.")
        if ceps > 0:
            ev.append(f"cepstrum rahmonic at shaft {name}'s period: strength {ceps:.2f}.")
        if damp < 0.95:
            ev.append(f"the wear pattern (energy ratio {er:.2f}, second mesh harmonic {growth:.2f} of the first) "
                      f"with FM4 only {fm4:.1f} points to wear rather than one damaged tooth.")
        out.append(
            Suspect(f"shaft:{name}", "localized tooth damage", round(loc, 4), tuple(ev), "tsa", name,
                    {"impulsive": impulsive, "sidebands": sb_score, "envelope": env_score, "wear": wear})
        )

        # distributed wear or eccentricity: families owned by the shaft with the
        # wear pattern (energy ratio, harmonic growth) or strong first sidebands
        dist = fam * max(wear, ramp(ratio_db, *SIDEBAND_RATIO_DB_RAMP))
        dist = float(np.clip(dist + 0.05 * ceps * fam * (dist > 0), 0.0, 1.0))
        ev2 = [
            f"TSA of shaft {name}: energy ratio {er:.3f} (a few percent for a healthy gear), FM4 {fm4:.2f}."
        ]
        if owned:
            ev2.append(
                f"sideband families owned by shaft {name}: best ownership score {sb_score:.2f}, "
                f"first-order sidebands {ratio_db:.1f} dB relative to their carrier."
            )
            if growth > 0:
                ev2.append(f"second mesh harmonic at {growth:.2f} of the first.")
        else:
            ev2.append(f"shaft {name} owns no sideband family.")
        view = "cepstrum" if ceps > 0.5 and fam > 0 else "spectrum"
        out.append(
            Suspect(f"shaft:{name}", "distributed wear or eccentricity", round(dist, 4), tuple(ev2), view, name,
                    {"families": fam, "ratio_db": ratio_db, "growth": growth, "er": er})
        )
    return out


def _deviation(m: EnvelopeMatch) -> float:
    """Mean relative distance of the clear lines of a match from their expected harmonics."""
    d = [abs(h.found_hz / (h.harmonic * m.expected_hz) - 1.0) for h in m.hits
         if h.clear and h.coincides_with is None]
    return float(np.mean(d)) if d else math.inf


def _shares_lines(a: EnvelopeMatch, b: EnvelopeMatch) -> bool:
    fa = [h.found_hz for h in a.hits if h.clear and h.coincides_with is None]
    fb = [h.found_hz for h in b.hits if h.clear and h.coincides_with is None]
    return any(abs(x - y) <= 0.002 * max(x, y) for x in fa for y in fb)


def _family_level(m: EnvelopeMatch) -> float:
    vals = [h.amplitude for h in m.hits if h.clear and h.coincides_with is None]
    return float(np.max(vals)) if vals else 0.0


def _bearing_suspects(envelope_matches: Sequence[EnvelopeMatch]) -> list[Suspect]:
    out = []
    bearing = [m for m in envelope_matches if m.component.startswith("bearing:")]
    shafts = [m for m in envelope_matches if m.kind == "shaft rate" and m.n_clear >= 2]
    for m in bearing:
        harm = ramp(m.n_clear, *ENVELOPE_HARMONICS_RAMP)
        excess = ramp(m.best_excess_db, *ENVELOPE_EXCESS_DB_RAMP)
        score = 0.5 * harm + 0.5 * excess
        ev = list(m.evidence)
        if m.n_clear < 2:
            score *= 0.5
        if m.kind == "bearing inner race":
            score *= 0.85 + 0.15 * ramp(m.n_sidebands_clear, 0, 2)
        if m.kind == "bearing rolling element":
            # a rolling element turns with the cage: its impacts are modulated at FTF
            score *= 0.6 + 0.4 * ramp(m.n_sidebands_clear, 0, 2)
        if m.kind == "bearing cage":
            # a cage fault seldom shows as its own envelope family (common practice, no source)
            score *= 0.8
        if m.found and 1.5 * m.resolution_hz > 2 * m.slip * m.expected_hz:
            score *= 0.5
            ev.append(f"the envelope lines are {m.resolution_hz:.3f} Hz apart, too coarse to tell {m.label} "
                      f"({m.expected_hz:.2f} Hz) within its {100 * m.slip:.0f} % slip; a longer record would.")
        level = _family_level(m)
        for s in shafts:
            ref = _family_level(s)
            if level > 0 and ref > 0 and 20 * math.log10(ref / level) >= SHADOW_DB:
                score *= 0.5
                ev.append(f"its lines are {20 * math.log10(ref / level):.0f} dB below the harmonics of shaft "
                          f"{s.shaft}'s rate, which dominate the envelope; they may be side effects of that family.")
                break
        # two defect frequencies of one bearing that nearly coincide claim the same
        # lines: the family whose expected values lie closer keeps the claim
        for other in bearing:
            if other is m or other.component != m.component or other.n_clear == 0 or m.n_clear == 0:
                continue
            if _shares_lines(m, other) and _deviation(other) < _deviation(m):
                score *= 0.7
                ev.append(
                    f"its lines are also those of {other.label} ({other.expected_hz:.2f} Hz), which lies "
                    f"closer to them ({100 * _deviation(other):.2f} % against {100 * _deviation(m):.2f} %)."
                )
        out.append(Suspect(m.component, m.kind, round(float(min(score, 1.0)), 4), tuple(ev), "envelope", m.shaft,
                           {"harmonics": harm, "excess": excess}))
    return out


def score_components(
    tsa: Sequence,
    sidebands: Sequence,
    envelope_matches: Sequence[EnvelopeMatch],
    *,
    cepstrum_support: Mapping[str, float] | None = None,
) -> tuple[Suspect, ...]:
    """Score every (component, kind) pair, listed or not, best first.

    Parameters are those of :func:`rank_suspects`, without the threshold.
    """
    items = _gear_suspects(tsa, sidebands, envelope_matches, dict(cepstrum_support or {}))
    items += _bearing_suspects(envelope_matches)
    return tuple(sorted(items, key=lambda s: -s.score))


def rank_suspects(
    tsa: Sequence,
    sidebands: Sequence,
    envelope_matches: Sequence[EnvelopeMatch],
    *,
    threshold: float = 0.5,
    cepstrum_support: Mapping[str, float] | None = None,
) -> tuple[Suspect, ...]:
    """Rank suspect components; an aid to the analyst's judgement, not a verdict.

    Parameters
    ----------
    tsa : sequence of dsp.analysis.ShaftTSA
        TSA per shaft, with ``indicators`` holding ``fm4``, ``na4``, ``m6a``.
    sidebands : sequence of dsp.sidebands.SidebandFamily
        Sideband families with their owners.
    envelope_matches : sequence of EnvelopeMatch
        Bearing and shaft families searched in the squared-envelope spectrum.
    threshold : float
        Alarm threshold (0..1): suspects below it are not listed.
    cepstrum_support : mapping of str to float, optional
        Rahmonic strength (0..1) at each shaft's period.

    Returns
    -------
    tuple of Suspect
        Suspects at or above ``threshold``, best first; one entry per component
        (its best kind).  Empty when nothing passes, as for a healthy gearbox.

    Notes
    -----
    Scores (0..1), thresholds in the module constants:

    * wear pattern ``w = 0.55 ramp(ER; 0.1, 0.3) + 0.45 ramp(H2/H1; 0.6, 1.2)``
      (energy ratio of the shaft's TSA; second over first mesh harmonic of the
      meshes whose families the shaft owns);
    * localized tooth damage = ``(impulsive * (0.55 + 0.45 s) + 0.1 s) *
      (1 - 0.5 w (1 - ramp(FM4; 10, 30)))`` where
      ``impulsive = max(ramp(FM4; 5, 9), ramp(NA4; 5, 9), 0.8 ramp(M6A; 50, 150))``
      and ``s`` averages the sideband-ownership and envelope shaft-rate support;
    * distributed wear or eccentricity = ``ramp(ownership; 0.15, 0.5) *
      max(w, ramp(first sideband / carrier dB; -20, -8))``;
    * bearing = ``0.5 ramp(clear harmonics; 1, 3) + 0.5 ramp(excess dB; 12, 30)``,
      halved with fewer than two clear harmonics, halved again when a shaft
      family 20 dB stronger dominates the envelope, halved again when the
      envelope resolution is coarser than the slip window; cage x 0.8; inner
      race weighted by shaft-rate sidebands, rolling element by cage-rate
      sidebands; of two
      defect frequencies of one bearing claiming the same lines, the farther
      one is weighted by 0.7.

    References
    ----------
    .. [1] R. M. Stewart, ISVR report MHM/R/10/77, 1977 (FM4).
    .. [2] J. J. Zakrajsek et al., NASA TM-105950, 1993 (NA4).
    .. [3] R. B. Randall, J. Antoni, MSSP 25 (2011) 485-520 (bearing envelope
       analysis, slip).
    """
    best: dict[str, Suspect] = {}
    for s in score_components(tsa, sidebands, envelope_matches, cepstrum_support=cepstrum_support):
        if s.score >= threshold and s.component not in best:
            best[s.component] = s
    return tuple(sorted(best.values(), key=lambda s: -s.score))
