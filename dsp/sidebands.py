"""Sideband families around gear-mesh harmonics and which shaft owns them.

A gear that is eccentric, worn or cracked modulates the mesh vibration once per
revolution of the shaft it sits on, so the mesh harmonics ``h * GMF`` carry
sidebands at ``h * GMF +- k * f_shaft``.  Deciding *which* shaft's rate spaces the
family tells the analyst which gear to suspect.

Everything here works in **orders of the reference shaft** (the abscissa of the
order spectrum), so a speed drift during the record does not smear the lines:
each shaft's rate is a fixed multiple of the reference rate.  Hz values are
reported beside the orders, at the mean speed.

The measurement, per mesh harmonic and per candidate shaft:

1. the carrier order ``h * gmf_order`` and sideband orders ``carrier +- k * spacing``
   for ``k = 1..n_sideband_orders``;
2. the amplitude of each sideband: the largest line within a tolerance that
   follows the order resolution (at least 1.5 lines) and, when the speed is not
   known sample by sample, the relative speed uncertainty times the order;
3. the local noise floor: the median of the order spectrum over the
   neighbourhood of the family (the lines are a small share of that band,
   so the median ignores them);
4. how many sidebands stand clear of the floor: at least ``clear_db`` (6 dB,
   common practice, no source) and at least the level that noise alone passes
   with 1 % probability in the window searched (:func:`detection_threshold_db`);
5. a score per candidate, from 0 to 1: each sideband position scores 0 at
   ``clear_db`` above the floor rising to 1 at 40 dB more.  A position that
   coincides with a line of another candidate's family (or another mesh
   harmonic) goes to the family that reaches it with the lower sideband order,
   because sidebands fall with their order; equal orders share it.  Lines of
   an expected family (planet passing in a planetary stage) always stay with it.
   The score is the mean over the ``2 * n_sideband_orders`` positions.
   Cepstral support (rahmonic strength at the shaft period) breaks near ties.

The owner is the candidate with the highest score, if that score reaches
``min_owner_score``, at least two of its sidebands stand clear and the carrier
itself stands clear of the floor; otherwise no shaft owns the family (``owner_shaft=None``).
The result is an aid to the analyst's reading of the spectrum, not a verdict.

References
----------
.. [1] R. B. Randall, "A new method of modeling gear faults", J. Mech. Design
   104 (1982) 259-267 (sidebands at shaft rates around mesh harmonics).
.. [2] R. B. Randall, *Vibration-based Condition Monitoring*, Wiley, 2011,
   gear-signal chapter (sideband families, ownership by spacing).
.. [3] P. Večeř, M. Kreidl, R. Šmíd, "Condition indicators for gearbox condition
   monitoring systems", Acta Polytechnica 45(6), 2005 (sideband index and
   sideband level factor).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Mapping, Sequence

import numpy as np

from .errors import AnalysisError

#: A sideband must stand this many dB above the local floor to count
#: (common practice, no source).
CLEAR_DB = 6.0
#: Strength rises from 0 at ``CLEAR_DB`` to 1 at ``CLEAR_DB + STRONG_SPAN_DB``.
STRONG_SPAN_DB = 40.0
#: A family needs at least this score, and two clear sidebands, to be given an
#: owner (two sidebands 26 dB above the floor out of six give 0.17; common
#: practice, no source).
MIN_OWNER_SCORE = 0.1
MIN_OWNER_SIDEBANDS = 2
#: False-alarm probability per search window of the adaptive threshold
#: (see :func:`detection_threshold_db`).
FALSE_ALARM = 0.01


def detection_threshold_db(n_bins: int, false_alarm: float = FALSE_ALARM, minimum_db: float = CLEAR_DB) -> float:
    """Level above the median floor that noise alone exceeds with probability ``false_alarm``.

    The amplitude of a noise-only spectral line is Rayleigh distributed, so
    ``P(A > t * median) = 2 ** (-t**2)`` for one line and, for the largest of
    ``n_bins`` independent lines, about ``n_bins * 2 ** (-t**2)``.  Solving for
    ``t`` gives ``t**2 = log2(n_bins / false_alarm)``.

    Parameters
    ----------
    n_bins : int
        Number of lines searched for the peak.
    false_alarm : float
        Allowed probability that noise alone passes.
    minimum_db : float
        Lower bound of the threshold (dB).

    Returns
    -------
    float
        Threshold in dB above the median.

    References
    ----------
    .. [1] S. M. Kay, *Fundamentals of Statistical Signal Processing, Vol. II:
       Detection Theory*, Prentice Hall, 1998 (Rayleigh envelope of Gaussian noise).
    """
    t2 = math.log2(max(n_bins, 1) / false_alarm)
    return max(minimum_db, 10.0 * math.log10(t2))


@dataclass(frozen=True)
class Carrier:
    """One mesh whose harmonics are searched for sidebands.

    Parameters
    ----------
    mesh : str
        Mesh (or planetary stage) name.
    gmf_order : float
        Mesh frequency in orders of the reference shaft.
    candidates : tuple of (str, float)
        ``(shaft name, spacing in reference orders)`` of every shaft that may
        modulate this mesh (the shafts carrying its gears).
    expected_owner : str, optional
        A shaft whose family is present in a healthy machine: the carrier of a
        planetary stage, whose planets pass a fixed sensor once per carrier
        turn each (McFadden & Smith 1985).  Families it owns are reported but
        marked ``expected``.
    """

    mesh: str
    gmf_order: float
    candidates: tuple[tuple[str, float], ...]
    expected_owner: str | None = None


@dataclass(frozen=True)
class SidebandFamily:
    """The sideband family around one mesh harmonic and its owner shaft.

    Amplitudes are in the units of the order spectrum (the sensor's units,
    peak).  ``amplitudes[0, k-1]`` is the lower sideband ``carrier - k*spacing``,
    ``amplitudes[1, k-1]`` the upper one, for the owner shaft (or the best
    candidate when no shaft owns the family).
    """

    mesh: str
    harmonic: int
    carrier_hz: float
    carrier_order: float
    carrier_amplitude: float
    owner_shaft: str | None
    spacing_hz: float
    spacing_order: float
    n_found: int
    amplitudes: np.ndarray
    floor: float
    sideband_index: float
    sideband_level_factor: float
    candidates: dict[str, float]
    evidence: tuple[str, ...]
    n_clear_by_candidate: dict[str, int] = field(default_factory=dict)
    expected: bool = False          # the owner's family is normal (planet passing)
    tolerance_order: float = 0.0
    clear_db: float = CLEAR_DB

    @property
    def sideband_ratio(self) -> float:
        """Mean first-order sideband amplitude over the carrier amplitude."""
        if not self.carrier_amplitude > 0:
            return float("nan")
        return float(np.mean(self.amplitudes[:, 0]) / self.carrier_amplitude)


def _window_max(order: np.ndarray, amplitude: np.ndarray, center: float, tol: float) -> tuple[float, float, int]:
    """Largest line within ``center +- tol``: (amplitude, order, lines searched)."""
    lo = int(np.searchsorted(order, center - tol, side="left"))
    hi = int(np.searchsorted(order, center + tol, side="right"))
    if hi <= lo:
        i = int(np.clip(np.searchsorted(order, center), 0, order.size - 1))
        return float(amplitude[i]), float(order[i]), 1
    j = lo + int(np.argmax(amplitude[lo:hi]))
    return float(amplitude[j]), float(order[j]), hi - lo


def _strength(level: float, floor: float, clear_db: float) -> float:
    """0 at ``clear_db`` above the floor, rising to 1 over the next ``STRONG_SPAN_DB`` (40 dB)."""
    if not (level > 0 and floor > 0):
        return 0.0
    excess = 20.0 * math.log10(level / floor)
    return float(np.clip((excess - clear_db) / STRONG_SPAN_DB, 0.0, 1.0))


def _share_weight(k: int, k_other: int) -> float:
    """Weight of a sideband line that another family (or a carrier, ``k_other = 0``) also explains.

    Sideband amplitudes fall with their order, so the family that reaches the line
    with the lower order is the likelier explanation: it takes the line (1), the
    other gets nothing (0); equal orders share it (0.5).
    """
    if k < k_other:
        return 1.0
    if k > k_other:
        return 0.0
    return 0.5


def _db(level: float, floor: float) -> float:
    if not (level > 0 and floor > 0):
        return float("-inf")
    return 20.0 * math.log10(level / floor)


def measure_sidebands(
    order: np.ndarray,
    amplitude: np.ndarray,
    carriers: Sequence[Carrier],
    *,
    reference_hz: float,
    n_mesh_harmonics: int = 3,
    n_sideband_orders: int = 3,
    relative_speed_error: float = 0.0,
    clear_db: float = CLEAR_DB,
    false_alarm: float = FALSE_ALARM,
    min_owner_score: float = MIN_OWNER_SCORE,
    tsa_std: Mapping[str, float] | None = None,
    cepstrum_support: Mapping[str, float] | None = None,
) -> tuple[SidebandFamily, ...]:
    """Measure sideband families around mesh harmonics and decide their owner.

    Parameters
    ----------
    order : ndarray
        Order axis of the order spectrum (orders of the reference shaft),
        evenly spaced and increasing.
    amplitude : ndarray
        Amplitude at each order (sensor units, peak).
    carriers : sequence of Carrier
        The meshes with their candidate shafts and spacings (orders).
    reference_hz : float
        Mean rate of the reference shaft (Hz), used to report Hz values.
    n_mesh_harmonics : int
        Mesh harmonics ``h = 1..n_mesh_harmonics`` searched.
    n_sideband_orders : int
        Sidebands ``k = 1..n_sideband_orders`` on each side.
    relative_speed_error : float
        Relative uncertainty of the orders (0 when the order axis comes from a
        tach; the speed spread when a constant speed was assumed).  Widens the
        search tolerance to ``relative_speed_error * order``.
    clear_db : float
        A sideband counts when it stands this many dB above the local floor,
        or more when the search window is wide (see ``false_alarm``).
    false_alarm : float
        Probability that noise alone passes the threshold in one search window;
        the threshold is :func:`detection_threshold_db` of the window's lines,
        at least ``clear_db``.
    min_owner_score : float
        Smallest best score (0..1) for which an owner is named.
    tsa_std : mapping of str to float, optional
        Standard deviation of each shaft's TSA (sensor units), for the sideband
        level factor; NaN when missing.
    cepstrum_support : mapping of str to float, optional
        Rahmonic strength at each shaft's period, 0..1; breaks near ties
        (adds up to 0.05 to the score).

    Returns
    -------
    tuple of SidebandFamily
        One family per mesh harmonic whose sidebands fit inside the order axis.

    Notes
    -----
    Sideband index ``SI = (SB_-1 + SB_+1) / 2`` and sideband level factor
    ``SLF = (SB_-1 + SB_+1) / sigma_TSA`` follow Večeř et al. 2005 [1]_, measured
    on the owner's first-order sidebands.

    References
    ----------
    .. [1] P. Večeř, M. Kreidl, R. Šmíd, "Condition indicators for gearbox
       condition monitoring systems", Acta Polytechnica 45(6), 2005.
    .. [2] R. B. Randall, *Vibration-based Condition Monitoring*, Wiley, 2011.
    """
    order = np.asarray(order, dtype=float)
    amplitude = np.asarray(amplitude, dtype=float)
    if order.ndim != 1 or order.shape != amplitude.shape or order.size < 8:
        raise AnalysisError(
            f"the order spectrum has {order.size} lines or mismatched axes; "
            "use a longer record or a higher maximum order"
        )
    if n_mesh_harmonics < 1 or n_sideband_orders < 1:
        raise AnalysisError(
            f"{n_mesh_harmonics=} and {n_sideband_orders=} must be at least 1; fix the settings"
        )
    d_order = float(order[1] - order[0])
    tsa_std = dict(tsa_std or {})
    cepstrum_support = dict(cepstrum_support or {})
    K = int(n_sideband_orders)
    all_carrier_orders = [c.gmf_order * h for c in carriers for h in range(1, n_mesh_harmonics + 1)]

    def tolerance(at_order: float) -> float:
        return max(1.5 * d_order, relative_speed_error * abs(at_order))

    families: list[SidebandFamily] = []
    for carrier in carriers:
        cands = [(name, float(sp)) for name, sp in carrier.candidates if sp > 0]
        if not cands:
            continue
        max_sp = max(sp for _, sp in cands)
        for h in range(1, n_mesh_harmonics + 1):
            c_order = carrier.gmf_order * h
            if c_order + (K + 1) * max_sp > order[-1]:
                break
            tol_c = tolerance(c_order)
            carrier_amp, _, n_c = _window_max(order, amplitude, c_order, tol_c)
            # local floor: median over the neighbourhood of the widest family
            half = max((K + 1) * max_sp, 40 * d_order)
            lo = int(np.searchsorted(order, c_order - half))
            hi = int(np.searchsorted(order, c_order + half))
            hood = amplitude[lo:hi]
            floor = float(np.median(hood)) if hood.size else float("nan")

            scores: dict[str, float] = {}
            n_clear: dict[str, int] = {}
            amps: dict[str, np.ndarray] = {}
            notes: dict[str, str] = {}
            for name, sp in cands:
                tol = min(tolerance(c_order + K * sp), sp / 3.0)
                if sp < 2.5 * d_order:
                    scores[name] = 0.0
                    n_clear[name] = 0
                    amps[name] = np.full((2, K), np.nan)
                    notes[name] = (
                        f"{name} spacing {sp:.4f} orders is below the order resolution "
                        f"({d_order:.4f}); a longer record would resolve it"
                    )
                    continue
                # lines that would be present whichever candidate owned the family
                # (order, tolerance, k of that line in its own family; 0 for a carrier)
                foreign: list[tuple[float, float, int]] = [(o, tolerance(o), 0) for o in all_carrier_orders]
                for other, osp in cands:
                    if other == name or osp <= 0:
                        continue
                    o_tol = min(tolerance(c_order + K * osp), osp / 3.0)
                    n_other = int(math.ceil((K + 0.5) * sp / osp)) + 1
                    # lines of the expected (healthy) family belong to it whatever their order
                    k_of = (lambda kk: 0) if other == carrier.expected_owner else (lambda kk: kk)
                    for kk in range(1, n_other + 1):
                        foreign.append((c_order - kk * osp, o_tol, k_of(kk)))
                        foreign.append((c_order + kk * osp, o_tol, k_of(kk)))
                a = np.empty((2, K))
                total = 0.0
                count = 0
                for k in range(1, K + 1):
                    for side, sign in ((0, -1.0), (1, 1.0)):
                        target = c_order + sign * k * sp
                        level, _, n_bins = _window_max(order, amplitude, target, tol)
                        a[side, k - 1] = level
                        thr = detection_threshold_db(n_bins, false_alarm, clear_db)
                        s = _strength(level, floor, thr)
                        if _db(level, floor) >= thr:
                            count += 1
                        ks = [fk for fo, ft, fk in foreign if abs(target - fo) <= tol + ft]
                        total += s * _share_weight(k, min(ks)) if ks else s
                score = total / (2 * K)
                support = cepstrum_support.get(name)
                if support is not None and np.isfinite(support):
                    score += 0.05 * float(np.clip(support, 0.0, 1.0))
                scores[name] = float(min(score, 1.0))
                n_clear[name] = count
                amps[name] = a
            best = max(scores, key=lambda n: scores[n])
            carrier_clear = _db(carrier_amp, floor) >= detection_threshold_db(n_c, false_alarm, clear_db)
            owner = (
                best
                if scores[best] >= min_owner_score and n_clear[best] >= MIN_OWNER_SIDEBANDS and carrier_clear
                else None
            )
            chosen = owner or best
            sp_o = dict(cands)[chosen]
            a = amps[chosen]
            sb1 = float(a[0, 0] + a[1, 0]) if np.all(np.isfinite(a[:, 0])) else float("nan")
            si = sb1 / 2.0
            std = tsa_std.get(chosen)
            slf = sb1 / std if std and std > 0 else float("nan")
            c_hz = c_order * reference_hz
            evidence = [
                f"{carrier.mesh} harmonic {h}: carrier at {c_order:.3f} orders "
                f"({c_hz:.1f} Hz), amplitude {carrier_amp:.3g}, local floor {floor:.3g}"
                f" ({_db(carrier_amp, floor):.1f} dB above it)."
            ]
            for name, sp in cands:
                if name in notes:
                    evidence.append(notes[name] + ".")
                    continue
                evidence.append(
                    f"spacing {sp:.4f} orders ({sp * reference_hz:.2f} Hz, shaft {name}): "
                    f"{n_clear[name]} of {2 * K} sidebands stand clear of the floor "
                    f"(at least {detection_threshold_db(3, false_alarm, clear_db):.0f} dB); first pair {_db(amps[name][0, 0], floor):.1f} / "
                    f"{_db(amps[name][1, 0], floor):.1f} dB; score {scores[name]:.2f}."
                )
            if owner:
                others = ", ".join(f"{n} {s:.2f}" for n, s in scores.items() if n != owner)
                evidence.append(
                    f"owner: shaft {owner} (score {scores[owner]:.2f}"
                    + (f" against {others}" if others else "") + ")."
                )
                if owner == carrier.expected_owner:
                    evidence.append(
                        f"this family is expected: planets passing the sensor modulate {carrier.mesh} "
                        f"at the rate of shaft {owner} in a healthy machine too."
                    )
            else:
                why = (
                    "the carrier does not stand clear of the floor"
                    if not carrier_clear
                    else f"the best score {scores[best]:.2f} ({best}, {n_clear[best]} clear sidebands) "
                    f"is below {min_owner_score:.2f} or has fewer than {MIN_OWNER_SIDEBANDS} clear sidebands"
                )
                evidence.append(f"no shaft owns this family: {why}.")
            ro = np.asarray(a, dtype=float)
            ro.setflags(write=False)
            families.append(
                SidebandFamily(
                    mesh=carrier.mesh,
                    harmonic=h,
                    carrier_hz=float(c_hz),
                    carrier_order=float(c_order),
                    carrier_amplitude=float(carrier_amp),
                    owner_shaft=owner,
                    spacing_hz=float(sp_o * reference_hz),
                    spacing_order=float(sp_o),
                    n_found=int(n_clear[chosen]),
                    amplitudes=ro,
                    floor=floor,
                    sideband_index=float(si),
                    sideband_level_factor=float(slf),
                    candidates=scores,
                    evidence=tuple(evidence),
                    n_clear_by_candidate=n_clear,
                    expected=bool(owner is not None and owner == carrier.expected_owner),
                    tolerance_order=float(tolerance(c_order)),
                    clear_db=float(clear_db),
                )
            )
    return tuple(families)
