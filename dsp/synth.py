"""Gearbox vibration simulator: healthy or faulty recordings of a gear-train model.

:func:`simulate` turns a :class:`dsp.model.GearTrain` and a speed into one
accelerometer channel (in g) and one tachometer channel, with the truth kept
beside the data (tach pulse times, shaft angles, fault events) so that tests
and demos can check what an analysis finds.  :func:`write_simulation` writes the
result as a 24-bit FLAC file with the model TOML beside it.

The signal model is deliberately simple and every element of it is a textbook
mechanism (sources in the docstring of :func:`simulate`):

* speed profile of the reference shaft, integrated to its angle; every other
  shaft turns at its kinematic order of the reference;
* each mesh: harmonics phase-locked to tooth passing, with small amplitude and
  phase modulation at both shafts' rates (healthy run-out);
* a planetary mesh seen through the planet-pass window of a fixed sensor;
* faults: localised tooth damage, distributed wear, eccentricity and rolling
  element bearing defects (outer race, inner race, rolling element);
* a transmission path (second-order resonances), sensor noise, optional clipping;
* a tach channel with finite rise time, noise and optional missing pulses.

Conventions
-----------
Angles are in revolutions.  The reference shaft is the tach shaft of the model
(``train.tach.shaft``), or the first shaft when the model has none; ``rpm`` is
its speed.  Every shaft is at angle 0 at the first tach pulse: the reference
angle is ``-start_angle_rev`` at ``t = 0`` and reaches the integer ``k`` at tach
pulse ``k`` (rising edge, 50 % level).  Tooth ``k`` (0-based) of a gear with
``Z`` teeth spans ``[k/Z, (k+1)/Z)`` of its shaft revolution; its centre, where a
local fault acts, is at ``(k + 0.5)/Z`` rev.

Fault location (``Fault.on``)
-----------------------------
* ``"tooth"``, ``"wear"``: a shaft name (its gear in the first mesh, in file
  order, that the shaft drives or is driven by; or the sun gear of a planetary
  stage when the shaft is a sun shaft and carries no parallel gear), or
  ``"MESH:SHAFT"`` to pick the gear of shaft ``SHAFT`` in mesh or planetary stage
  ``MESH`` (e.g. ``"stage 1:intermediate"``).
* ``"eccentricity"``: a shaft name.
* ``"outer-race"``, ``"inner-race"``, ``"rolling-element"``: a bearing name.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any

import numpy as np

from .errors import AnalysisError, ModelError, Problem, RecordingError

FAULT_KINDS = ("tooth", "wear", "eccentricity", "outer-race", "inner-race", "rolling-element")
SEVERITIES = ("mild", "severe")
SPEEDS = ("steady", "fluctuating", "ramp")

# Channel layout of every simulation.
ACCEL_CHANNEL = 0
TACH_CHANNEL = 1
TACH_HIGH = 0.5            # file value of a tach pulse (arbitrary units)


@dataclass(frozen=True)
class Fault:
    """One simulated fault.

    Parameters
    ----------
    kind : str
        ``"tooth"``, ``"wear"``, ``"eccentricity"``, ``"outer-race"``,
        ``"inner-race"`` or ``"rolling-element"``.
    on : str
        Shaft name, ``"MESH:SHAFT"`` (tooth, wear) or bearing name (bearing
        faults); see the module docstring.
    tooth : int
        0-based damaged tooth for ``"tooth"``; its centre is at
        ``(tooth + 0.5)/Z`` rev of the gear's shaft.
    severity : str
        ``"mild"`` or ``"severe"``.
    """

    kind: str
    on: str
    tooth: int = 0
    severity: str = "mild"


@dataclass(frozen=True)
class Simulation:
    """A simulated recording and its truth.

    Attributes
    ----------
    data : ndarray, float32, shape (n_channels, n_frames)
        Channel ``accel_channel`` is acceleration in g; channel ``tach_channel``
        is the tach signal (0 low, :data:`TACH_HIGH` high).  Read-only.
    fs : float
        Sample rate in Hz.
    channels : tuple of str
        What each row of ``data`` holds (``"acceleration_g"``, ``"tach"``).
    reference_shaft : str
        Shaft whose speed ``rpm`` gives and whose angle the tach marks.
    shaft_orders : dict
        Speed of each shaft divided by the reference shaft's speed.
    reference_angle_rev : ndarray, float64, shape (n_frames,)
        Truth angle of the reference shaft at every sample (rev), read-only.
    reference_hz : ndarray, float64, shape (n_frames,)
        Truth speed of the reference shaft at every sample (Hz), read-only.
    tach_times_s : ndarray
        Truth times of every once-per-rev mark (s), missing pulses included.
    tach_missing : ndarray of bool
        True where the pulse of ``tach_times_s`` was left out of the tach channel.
    faults : tuple of Fault
    fault_events_s : tuple of ndarray
        For each fault, the truth times of its impacts (empty for faults
        without impacts: wear, eccentricity).
    parameters : dict
        Every argument of :func:`simulate`, for regeneration.
    """

    data: np.ndarray
    fs: float
    channels: tuple[str, ...]
    reference_shaft: str
    shaft_orders: dict[str, float]
    reference_angle_rev: np.ndarray
    reference_hz: np.ndarray
    tach_times_s: np.ndarray
    tach_missing: np.ndarray
    faults: tuple[Fault, ...]
    fault_events_s: tuple[np.ndarray, ...]
    parameters: dict[str, Any] = field(default_factory=dict)
    accel_channel: int = ACCEL_CHANNEL
    tach_channel: int = TACH_CHANNEL

    @property
    def n_frames(self) -> int:
        return int(self.data.shape[1])

    @property
    def duration_s(self) -> float:
        return self.n_frames / self.fs

    @property
    def acceleration_g(self) -> np.ndarray:
        """The accelerometer channel in g (read-only view)."""
        return self.data[self.accel_channel]

    @property
    def tach(self) -> np.ndarray:
        """The tach channel (read-only view)."""
        return self.data[self.tach_channel]

    def shaft_angle_rev(self, shaft: str) -> np.ndarray:
        """Truth angle of ``shaft`` at every sample (rev, 0 at the first tach pulse)."""
        if shaft not in self.shaft_orders:
            raise AnalysisError(f"unknown shaft {shaft!r}; choose one of: {', '.join(self.shaft_orders)}")
        return self.shaft_orders[shaft] * self.reference_angle_rev


# ---------------------------------------------------------------------------
# Kinematics (from dsp.kinematics)
# ---------------------------------------------------------------------------


def _shaft_orders(train, reference_shaft: str) -> dict[str, float]:
    from .kinematics import shaft_orders

    return {k: abs(float(v)) for k, v in shaft_orders(train, reference_shaft).items()}


def bearing_orders(bearing) -> dict[str, float]:
    """Defect frequencies of a bearing as orders of its shaft (outer ring fixed).

    Returns ``{"bpfo", "bpfi", "bsf", "ftf"}`` from
    :func:`dsp.kinematics.bearing_frequencies` at a shaft rate of 1 Hz.

    References
    ----------
    .. [1] R. B. Randall and J. Antoni, "Rolling element bearing diagnostics - A
       tutorial", Mechanical Systems and Signal Processing 25 (2011) 485-520.
    """
    from .kinematics import bearing_frequencies

    f = bearing_frequencies(1.0, bearing.rolling_elements, bearing.element_diameter_mm,
                            bearing.pitch_diameter_mm, bearing.contact_angle_deg)
    return {"bpfo": f.bpfo_hz, "bpfi": f.bpfi_hz, "bsf": f.bsf_hz, "ftf": f.ftf_hz}


# ---------------------------------------------------------------------------
# Parameters of the model (amplitudes in g).  Plain constants, documented here.
# ---------------------------------------------------------------------------

_MESH_AMPLITUDE_G = 0.40        # first stage; each further stage x 0.7
_HARMONIC_GAINS = (1.0, 0.45, 0.2)
_HEALTHY_AM = 0.04              # run-out amplitude modulation at each shaft rate
_HEALTHY_PM_RAD = 0.03          # run-out phase modulation at each shaft rate
_HEALTHY_TOOTH_AM = 0.02        # manufacturing tooth-to-tooth amplitude error (std)
_HEALTHY_TOOTH_PM_RAD = 0.02    # manufacturing tooth-to-tooth phase error (std)
_SHAFT_1X_G = 0.03              # residual unbalance per shaft, at its own rate
_TOOTH_RESONANCE_HZ, _TOOTH_DAMPING = 3800.0, 0.03
_BEARING_RESONANCE_HZ, _BEARING_DAMPING = 5200.0, 0.03
_PATH = ((1800.0, 0.05, 0.6), (4300.0, 0.04, 0.4))   # (Hz, damping ratio, gain) of the transmission path

# severity -> parameters
_TOOTH = {  # AM dip, PM (rad), window sigma (tooth pitches), impact peak (g)
    "mild": (0.10, 0.06, 0.6, 0.03),
    "severe": (0.8, 0.6, 1.0, 1.4),
}
_WEAR = {  # gain of harmonics >= 2, random AM std, random PM std (rad)
    "mild": (2.0, 0.08, 0.05),
    "severe": (4.0, 0.2, 0.15),
}
_ECCENTRICITY = {"mild": (0.15, 0.08), "severe": (0.45, 0.25)}    # AM depth, PM (rad)
_BEARING_G = {"mild": 0.35, "severe": 1.5}                        # impact peak (g)
_BEARING_SLIP = 0.01            # mean slip of the rolling elements (fraction)
_BEARING_JITTER = 0.01          # std of the inter-impact interval (fraction)


# ---------------------------------------------------------------------------
# Small vectorised building blocks
# ---------------------------------------------------------------------------


def _resonator(f_hz: float, damping: float, fs: float):
    """``(b, a)`` of a second-order resonance by impulse invariance.

    Impulse response ``exp(-zeta w t) sin(w_d t)`` sampled at ``fs`` and scaled to a
    peak near 1, so an impulse of height ``A`` rings with a peak near ``A``.
    The resonance is moved to ``0.4 fs`` when it lies above that.
    """
    f_hz = min(f_hz, 0.4 * fs)
    w = 2 * math.pi * f_hz
    wd = w * math.sqrt(1 - damping**2)
    r = math.exp(-damping * w / fs)
    b = np.array([0.0, r * math.sin(wd / fs)])
    a = np.array([1.0, -2 * r * math.cos(wd / fs), r * r])
    # peak of the continuous envelope is ~1 at the first quarter period
    return b, a


def _place_impulses(times_s: np.ndarray, heights: np.ndarray, fs: float, n: int) -> np.ndarray:
    """Impulse train on ``n`` samples; each impulse split linearly between two samples."""
    pos = np.asarray(times_s) * fs
    i0 = np.floor(pos).astype(np.int64)
    frac = pos - i0
    keep = (i0 >= 0) & (i0 + 1 < n)
    i0, frac, h = i0[keep], frac[keep], np.asarray(heights, dtype=np.float64)[keep]
    out = np.bincount(i0, weights=h * (1 - frac), minlength=n)
    out += np.bincount(i0 + 1, weights=h * frac, minlength=n)
    return out[:n]


def _tooth_profile(angle_rev: np.ndarray, teeth: int, rng) -> tuple[np.ndarray, np.ndarray]:
    """Two random profiles (unit std per tooth), linear between tooth centres,
    periodic in one revolution of the gear; ``angle_rev`` in [0, 1) (float32).

    The profiles are tabulated at 64 points per tooth and looked up (one gather of
    complex64 for both), much faster than interpolating every sample.
    """
    per_tooth = rng.standard_normal((2, teeth))
    padded = np.concatenate([per_tooth[:, -1:], per_tooth, per_tooth[:, :1]], axis=1)
    xp = (np.arange(teeth + 2) - 0.5) / teeth                    # tooth centres, one extra each side
    m = 64 * teeth
    grid = (np.arange(m) + 0.5) / m
    table = (np.interp(grid, xp, padded[0]) + 1j * np.interp(grid, xp, padded[1])).astype(np.complex64)
    idx = (angle_rev * np.float32(m)).astype(np.int32)
    np.minimum(idx, m - 1, out=idx)
    z = np.take(table, idx)
    return z.real, z.imag


def _wrap(x: np.ndarray) -> np.ndarray:
    """Wrap to [-0.5, 0.5)."""
    return x - np.floor(x + 0.5)


def _speed_profile(rpm: float, n: int, fs: float, speed: str, variation_pct: float, rng) -> np.ndarray:
    """Reference shaft speed (Hz) at every sample."""
    f0 = rpm / 60.0
    v = variation_pct / 100.0
    if speed == "steady" or v == 0.0:
        return np.full(n, f0)
    t = np.arange(n) / fs
    if speed == "ramp":
        dur = n / fs
        return f0 * (1.0 - v + 2.0 * v * t / dur)
    # fluctuating: three slow sinusoids with random frequencies (0.03-0.25 Hz) and
    # phases, normalised so that the largest deviation is exactly v (float32 trig).
    freqs = rng.uniform(0.03, 0.25, 3)
    phases = rng.uniform(0, 2 * np.pi, 3)
    wander = np.zeros(n, dtype=np.float32)
    for fq, ph in zip(freqs, phases):
        cycles = fq * t + ph / (2 * np.pi)
        cycles -= np.floor(cycles)
        wander += np.sin(np.float32(2 * np.pi) * cycles.astype(np.float32))
    wander /= np.max(np.abs(wander))
    return f0 * (1.0 + v * wander.astype(np.float64))


# ---------------------------------------------------------------------------
# Gears of the model
# ---------------------------------------------------------------------------


@dataclass(frozen=True)
class _Gear:
    """One gear a tooth or wear fault can sit on."""

    stage: int                 # index into the list of stages (meshes, then planetary)
    shaft: str
    teeth: int
    rel_order: float           # order of the angle the teeth are counted in (shaft, or sun relative to carrier)
    contacts: int              # contacts per relative revolution of one tooth (1, or planets for a sun)


def _stages(train):
    """Stages in file order: parallel meshes, then planetary stages."""
    return [("mesh", m) for m in train.meshes] + [("planetary", p) for p in train.planetary]


def _find_gear(train, orders, on: str) -> _Gear:
    stages = _stages(train)
    stage_name, _, shaft = on.rpartition(":")
    if not stage_name:
        shaft = on
    shaft = shaft.strip()
    stage_name = stage_name.strip()
    if shaft not in orders:
        raise AnalysisError(f"unknown shaft {shaft!r} for the fault; choose one of: {', '.join(orders)}")
    if stage_name and stage_name not in [s.name for _, s in stages]:
        raise AnalysisError(f"unknown mesh {stage_name!r} for the fault; choose one of: "
                            f"{', '.join(s.name for _, s in stages)}")
    for i, (kind, s) in enumerate(stages):
        if stage_name and s.name != stage_name:
            continue
        if kind == "mesh" and shaft in (s.driver, s.driven):
            teeth = s.driver_teeth if shaft == s.driver else s.driven_teeth
            return _Gear(i, shaft, int(teeth), orders[shaft], 1)
        if kind == "planetary" and shaft == s.sun_shaft:
            return _Gear(i, shaft, int(s.sun_teeth), orders[shaft] - orders[s.carrier_shaft], int(s.planets))
    where = f" in {stage_name!r}" if stage_name else ""
    raise AnalysisError(f"shaft {shaft!r} carries no gear{where} that can be simulated with a tooth fault "
                        "(parallel gears and planetary suns are supported); choose another shaft")


# ---------------------------------------------------------------------------
# simulate
# ---------------------------------------------------------------------------


def _check(train, rpm, duration_s, fs, faults, speed, speed_variation_pct, missing_tach_pct, noise_g=0.0):
    if not train.shafts:
        raise ModelError([Problem("shafts", "the model has no shafts; add at least one [[shafts]] block")])
    if speed not in SPEEDS:
        raise AnalysisError(f"Invalid value for 'speed': allowed {', '.join(map(repr, SPEEDS))}, got {speed!r}")
    if not (rpm is not None and math.isfinite(rpm) and rpm > 0):
        raise AnalysisError(f"{rpm=} must be a positive speed in rpm; give --rpm or nominal_rpm in the model")
    if not (math.isfinite(duration_s) and duration_s > 0):
        raise AnalysisError(f"{duration_s=} must be a positive duration in seconds")
    if not (math.isfinite(fs) and fs >= 1000):
        raise AnalysisError(f"{fs=} must be a sample rate of at least 1000 Hz")
    if not (0 <= speed_variation_pct < 50):
        raise AnalysisError(f"{speed_variation_pct=} must be between 0 and 50 percent")
    if not (0 <= missing_tach_pct <= 100):
        raise AnalysisError(f"{missing_tach_pct=} must be between 0 and 100 percent")
    if not (math.isfinite(noise_g) and noise_g >= 0):
        raise AnalysisError(f"{noise_g=} must be an RMS noise of 0 g or more")
    for f in faults:
        if not isinstance(f, Fault):
            raise AnalysisError(f"faults must be Fault objects, got {f!r}")
        if f.kind not in FAULT_KINDS:
            raise AnalysisError(f"Invalid fault kind: allowed {', '.join(FAULT_KINDS)}, got {f.kind!r}")
        if f.severity not in SEVERITIES:
            raise AnalysisError(f"Invalid fault severity: allowed 'mild', 'severe', got {f.severity!r}")


def simulate(train, *, rpm: float | None = None, duration_s: float = 10.0, fs: float = 25600.0,
             faults=(), speed: str = "steady", speed_variation_pct: float = 0.0, seed: int = 0,
             noise_g: float = 0.03, clip_g: float | None = None, missing_tach_pct: float = 0.0,
             tach_noise: float = 0.005, tach_rise_samples: float = 3.0, tach_duty: float = 0.05,
             start_angle_rev: float = 0.25, n_harmonics: int = 3) -> Simulation:
    """Simulate one recording (accelerometer + tach) of a gear train.

    Parameters
    ----------
    train : dsp.model.GearTrain
        The gear-train model.  Its tach shaft is the reference shaft.
    rpm : float, optional
        Mean speed of the reference shaft in rpm; defaults to
        ``train.tach.nominal_rpm``.
    duration_s : float
        Length of the recording in s.
    fs : float
        Sample rate in Hz.
    faults : sequence of Fault
        Faults to add; empty for a healthy machine.
    speed : {"steady", "fluctuating", "ramp"}
        Speed profile of the reference shaft.  ``"fluctuating"``: slow random
        wander (three sinusoids of 0.03-0.25 Hz with random phases) whose largest
        deviation is ``speed_variation_pct``; ``"ramp"``: linear from
        ``-speed_variation_pct`` to ``+speed_variation_pct`` around ``rpm``.
    speed_variation_pct : float
        Peak speed deviation in percent of ``rpm``.
    seed : int
        Seed of ``numpy.random.default_rng``; equal seeds give equal data.
    noise_g : float
        RMS of the white sensor noise in g.
    clip_g : float, optional
        Clip the acceleration at +-``clip_g`` (an overloaded sensor).
    missing_tach_pct : float
        Percentage of tach pulses left out (a dirty tape); the truth keeps them.
    tach_noise : float
        RMS noise of the tach channel (file units; the pulse is :data:`TACH_HIGH`).
    tach_rise_samples : float
        Rise and fall time of a tach pulse in samples.
    tach_duty : float
        Width of a tach pulse as a fraction of a revolution.
    start_angle_rev : float
        Reference shaft angle before its first tach mark at ``t = 0`` (rev).
    n_harmonics : int
        Mesh harmonics simulated per stage (at most 3 carry healthy amplitude;
        further ones get 0.1 of the fundamental).

    Returns
    -------
    Simulation

    Notes
    -----
    *Speed.*  The reference speed ``f(t)`` is integrated (cumulative sum) to the
    reference angle ``theta(t)``; shaft ``s`` turns at ``theta_s = o_s theta`` with
    ``o_s`` from ``dsp.kinematics.shaft_orders`` (Randall 2011, ch. gear signals).

    *Mesh.*  A parallel stage with driver ``a`` of ``Z_a`` teeth gives
    ``sum_h A_h (1 + AM(t)) cos(2 pi h Z_a theta_a + h PM(t) + beta_h)``, phase
    locked to tooth passing.  A healthy gear has a few percent of AM and PM at
    both shafts' rates (run-out), giving small first sidebands, and 2 % random
    tooth-to-tooth errors (manufacturing) on both gears [1]_.

    *Planetary stage (ring fixed).*  The mesh phase is ``Z_r theta_c``; each
    planet ``p`` is seen through a window centred on the sensor when the carrier
    angle is ``p/N_p`` and carries the mesh phase shift ``h Z_r p / N_p`` of its
    position, so the sum shows sidebands at multiples of the planet-pass
    frequency ``N_p f_c``, asymmetric about the mesh frequency [2]_.

    *Localised tooth damage.*  A Gaussian window ``w`` in shaft angle, centred
    on the damaged tooth (``(k + 0.5)/Z`` rev), reduces the mesh amplitude by
    ``a w`` and shifts its phase by ``p w`` (McFadden's amplitude and phase
    modulation of a cracked tooth [3]_), and every time the tooth meshes an
    impact excites a structural resonance (3.8 kHz, damping 3 %) [1]_.

    *Distributed wear.*  Raised mesh harmonics (h >= 2) and a random, smooth
    tooth-to-tooth amplitude and phase modulation that repeats every revolution
    of the worn gear: a broad family of sidebands at its shaft rate [1]_.

    *Eccentricity.*  Sinusoidal AM (and PM) of every mesh of the shaft at the
    shaft rate [1]_.

    *Bearing faults.*  Impacts at the defect rate (BPFO, BPFI, 2 x BSF) of the
    bearing's shaft, slowed by a 1 % mean slip and with a 1 % random jitter of
    each interval, exciting a resonance (5.2 kHz, damping 3 %).  Inner-race
    impacts are amplitude-modulated at the shaft rate (load zone), rolling
    element impacts at the cage rate [4]_.

    *Transmission path and sensor.*  The sum passes through the path ``1 +
    sum_i g_i R_i`` with second-order resonances ``R_i`` (1.8 kHz and 4.3 kHz);
    white sensor noise is added; clipping is optional.

    *Tach.*  One pulse per reference revolution, rising edge (50 % level) at
    the integer angles, linear edges of ``tach_rise_samples``, noise.

    Resonances above ``0.4 fs`` are moved to ``0.4 fs``.  Everything is vectorised
    (no Python loop over samples, teeth or impacts).  Angles are float64; each is
    reduced modulo one revolution before the trigonometry, which runs in float32
    (about 30 times faster than float64 here; phase error below 1e-6 rad).
    Amplitudes do not change with speed.

    References
    ----------
    .. [1] R. B. Randall, Vibration-based Condition Monitoring, Wiley, 2011,
       chapters on gear and bearing signals.
    .. [2] P. D. McFadden and J. D. Smith, "An explanation for the asymmetry of
       the modulation sidebands about the tooth meshing frequency in epicyclic
       gear vibration", Proc. IMechE Part C 199 (1985) 65-70.
    .. [3] P. D. McFadden, "Detecting fatigue cracks in gears by amplitude and
       phase demodulation of the meshing vibration", J. Vib. Acoust. Stress
       Reliab. Des. 108 (1986) 165-170.
    .. [4] R. B. Randall and J. Antoni, "Rolling element bearing diagnostics - A
       tutorial", Mechanical Systems and Signal Processing 25 (2011) 485-520.
    """
    import scipy.signal

    faults = tuple(faults)
    if rpm is None:
        rpm = train.tach.nominal_rpm
    _check(train, rpm, duration_s, fs, faults, speed, speed_variation_pct, missing_tach_pct, noise_g)
    reference = train.tach.shaft or train.shafts[0].name
    names = train.shaft_names()
    if reference not in names:
        raise ModelError([Problem("tach.shaft", f"shaft {reference!r} is not one of the shafts "
                                                f"({', '.join(names)}); name an existing shaft")])
    orders = _shaft_orders(train, reference)
    rng = np.random.default_rng(seed)
    n = int(round(duration_s * fs))
    fs = float(fs)

    # --- speed and angle -------------------------------------------------
    # Angles stay float64 (long records); everything reduced modulo one
    # revolution and all trigonometry run in float32, which is ~30x faster.
    f_ref = _speed_profile(float(rpm), n, fs, speed, float(speed_variation_pct), rng)
    steady = speed == "steady" or speed_variation_pct == 0
    if steady:
        theta = f_ref[0] * (np.arange(n) / fs) - start_angle_rev
    else:
        theta = np.empty(n)
        theta[0] = 0.0
        np.cumsum((f_ref[1:] + f_ref[:-1]) * (0.5 / fs), out=theta[1:])
        theta -= start_angle_rev
    t_of = np.arange(n) / fs

    def times_at(theta_events):
        return np.interp(theta_events, theta, t_of)

    rev_cache: dict[float, np.ndarray] = {}

    def rev32(order: float) -> np.ndarray:
        """Angle ``order x theta`` modulo 1 rev, float32 (cached)."""
        key = float(order)
        if key not in rev_cache:
            rev_cache[key] = _frac_mul(theta, key).astype(np.float32)
        return rev_cache[key]

    def shaft_phase(order: float) -> np.ndarray:
        """2 pi x shaft angle modulo one revolution (rad, float32)."""
        return _TWO_PI32 * rev32(order)

    # --- per-stage modulation, built up by the faults --------------------
    stages = _stages(train)
    n_st = len(stages)
    am: list[np.ndarray | None] = [None] * n_st      # additive AM (None: none)
    pm: list[np.ndarray | None] = [None] * n_st
    harmonic_gain = [np.ones(max(n_harmonics, 1)) for _ in range(n_st)]

    def add_mod(i, a=None, p=None):
        if a is not None:
            am[i] = a if am[i] is None else np.add(am[i], a, out=am[i])
        if p is not None:
            pm[i] = p if pm[i] is None else np.add(pm[i], p, out=pm[i])

    impact_t_tooth, impact_h_tooth = [], []
    impact_t_brg, impact_h_brg = [], []
    fault_events: list[np.ndarray] = []
    acc = np.zeros(n, dtype=np.float32)

    # healthy run-out: AM/PM at each shaft rate of each stage
    for i, (kind, s) in enumerate(stages):
        shafts = (s.driver, s.driven) if kind == "mesh" else (s.sun_shaft, s.carrier_shaft)
        for sh in shafts:
            ph = shaft_phase(orders[sh])
            psi_a, psi_p = rng.uniform(0, 2 * np.pi, 2)
            add_mod(i, _F32(_HEALTHY_AM) * np.cos(ph + _F32(psi_a)),
                    _F32(_HEALTHY_PM_RAD) * np.cos(ph + _F32(psi_p)))
        if kind == "mesh":  # manufacturing tooth-to-tooth errors of both gears
            for sh, z in ((s.driver, s.driver_teeth), (s.driven, s.driven_teeth)):
                prof_a, prof_p = _tooth_profile(rev32(orders[sh]), int(z), rng)
                add_mod(i, _F32(_HEALTHY_TOOTH_AM) * prof_a, _F32(_HEALTHY_TOOTH_PM_RAD) * prof_p)

    for f in faults:
        events = np.zeros(0)
        if f.kind in ("tooth", "wear"):
            g = _find_gear(train, orders, f.on)
            if f.kind == "tooth":
                if not (isinstance(f.tooth, (int, np.integer)) and 0 <= f.tooth < g.teeth):
                    raise AnalysisError(f"tooth {f.tooth!r} does not exist on the {g.teeth}-tooth gear of "
                                        f"{g.shaft!r}; give a tooth from 0 to {g.teeth - 1}")
                dip, pmr, sigma, impact = _TOOTH[f.severity]
                centre = (f.tooth + 0.5) / g.teeth
                # distance to the damaged tooth in tooth pitches, counted in contact periods
                x = _wrap((rev32(g.rel_order) - _F32(centre)) * _F32(g.contacts))
                d_pitch = x * _F32(g.teeth / g.contacts / sigma)
                w = np.exp(_F32(-0.5) * d_pitch * d_pitch)
                add_mod(g.stage, _F32(-dip) * w, _F32(pmr) * w)
                # one impact each time the tooth meshes
                span = theta[-1] * g.rel_order
                j = np.arange(math.floor(theta[0] * g.rel_order * g.contacts) - 1,
                              math.ceil(span * g.contacts) + 1)
                ev_theta = (centre + j / g.contacts) / g.rel_order
                ev_theta = ev_theta[(ev_theta > theta[0]) & (ev_theta < theta[-1])]
                events = times_at(ev_theta)
                impact_t_tooth.append(events)
                impact_h_tooth.append(np.full(events.size, impact))
            else:
                gain, a_std, p_std = _WEAR[f.severity]
                harmonic_gain[g.stage][1:] *= gain
                # smooth random profile over the teeth, periodic in one gear revolution
                prof_a, prof_p = _tooth_profile(rev32(g.rel_order), g.teeth, rng)
                add_mod(g.stage, _F32(a_std) * prof_a, _F32(p_std) * prof_p)
        elif f.kind == "eccentricity":
            if f.on not in orders:
                raise AnalysisError(f"unknown shaft {f.on!r} for the fault; choose one of: {', '.join(orders)}")
            depth, pmr = _ECCENTRICITY[f.severity]
            ph = shaft_phase(orders[f.on])
            hit = False
            for i, (kind, s) in enumerate(stages):
                on_stage = (s.driver, s.driven) if kind == "mesh" else (s.sun_shaft, s.carrier_shaft)
                if f.on in on_stage:
                    add_mod(i, _F32(depth) * np.cos(ph), _F32(pmr) * np.sin(ph))
                    hit = True
            if not hit:
                raise AnalysisError(f"shaft {f.on!r} carries no gear, so eccentricity cannot show; "
                                    "choose a shaft of a mesh")
            acc += _F32(depth * 0.3) * np.cos(ph)
        else:
            bearings = {b.name: b for b in train.bearings}
            if f.on not in bearings:
                known = ", ".join(bearings) or "none in the model"
                raise AnalysisError(f"unknown bearing {f.on!r} for the {f.kind} fault; choose one of: {known}")
            b = bearings[f.on]
            if b.shaft not in orders:
                raise ModelError([Problem("bearings", f"bearing {b.name!r} sits on unknown shaft {b.shaft!r}")])
            bo = bearing_orders(b)
            o_shaft = orders[b.shaft]
            rate = {"outer-race": bo["bpfo"], "inner-race": bo["bpfi"], "rolling-element": 2 * bo["bsf"]}[f.kind]
            rate *= 1.0 - _BEARING_SLIP
            # events in the bearing shaft's angle, with a random jitter of each interval
            span = (theta[-1] - theta[0]) * o_shaft
            n_ev = int(math.ceil(span * rate * 1.1)) + 4
            intervals = (1.0 / rate) * (1.0 + _BEARING_JITTER * rng.standard_normal(n_ev))
            ev_shaft = theta[0] * o_shaft + rng.uniform(0, 1 / rate) + np.cumsum(intervals)
            ev_shaft = ev_shaft[ev_shaft < theta[-1] * o_shaft]
            events = times_at(ev_shaft / o_shaft)
            height = np.full(events.size, _BEARING_G[f.severity])
            if f.kind == "inner-race":
                height *= 0.35 + 0.65 * 0.5 * (1 + np.cos(2 * np.pi * ev_shaft))
            elif f.kind == "rolling-element":
                height *= 0.35 + 0.65 * 0.5 * (1 + np.cos(2 * np.pi * bo["ftf"] * ev_shaft))
            impact_t_brg.append(events)
            impact_h_brg.append(height)
        fault_events.append(np.asarray(events))

    # --- gear meshes -----------------------------------------------------
    beta = rng.uniform(0, 2 * np.pi, (n_st, max(n_harmonics, 1)))
    for i, (kind, s) in enumerate(stages):
        amp = _MESH_AMPLITUDE_G * 0.7**i
        gains = np.array([_HARMONIC_GAINS[h] if h < len(_HARMONIC_GAINS) else 0.1 for h in range(n_harmonics)])
        amps = amp * gains * harmonic_gain[i][:n_harmonics]
        a_mod = None if am[i] is None else am[i] + _F32(1.0)
        if kind == "mesh":
            mesh_rev = rev32(orders[s.driver] * s.driver_teeth)
            acc += _harmonic_sum(mesh_rev, pm[i], amps, beta[i, :n_harmonics], a_mod)
        else:
            o_c = orders[s.carrier_shaft]
            mesh_rev = rev32(o_c * s.ring_teeth)
            carrier = rev32(o_c)
            inv_width = _F32(s.planets / 0.25)
            for p in range(s.planets):
                pos = p / s.planets
                u = _wrap(carrier - _F32(pos)) * inv_width
                win = np.exp(_F32(-0.5) * u * u)
                shift = _F32((s.ring_teeth * pos) % 1.0)
                a_p = win if a_mod is None else win * a_mod
                acc += _harmonic_sum(mesh_rev - shift, pm[i], amps, beta[i, :n_harmonics], a_p)
    for sh, o in orders.items():
        acc += _F32(_SHAFT_1X_G) * np.cos(shaft_phase(o) + _F32(rng.uniform(0, 2 * np.pi)))
    rev_cache.clear()

    # --- impacts through resonances --------------------------------------
    if impact_t_tooth:
        imp = _place_impulses(np.concatenate(impact_t_tooth), np.concatenate(impact_h_tooth), fs, n)
        b, a = _resonator(_TOOTH_RESONANCE_HZ, _TOOTH_DAMPING, fs)
        acc += scipy.signal.lfilter(b, a, imp).astype(np.float32)
    if impact_t_brg:
        imp = _place_impulses(np.concatenate(impact_t_brg), np.concatenate(impact_h_brg), fs, n)
        b, a = _resonator(_BEARING_RESONANCE_HZ, _BEARING_DAMPING, fs)
        acc += scipy.signal.lfilter(b, a, imp).astype(np.float32)

    # --- transmission path, sensor ---------------------------------------
    accel = acc.copy()
    for f_hz, zeta, gain in _PATH:
        f_hz = min(f_hz, 0.4 * fs)
        b, a = scipy.signal.iirpeak(f_hz, Q=1 / (2 * zeta), fs=fs)
        accel += _F32(gain) * scipy.signal.lfilter(b, a, acc).astype(np.float32)
    accel += _F32(noise_g) * rng.standard_normal(n, dtype=np.float32)
    if clip_g is not None:
        np.clip(accel, -clip_g, clip_g, out=accel)

    # --- tach ------------------------------------------------------------
    k_first = math.ceil(theta[0])
    k_last = math.floor(theta[-1])
    pulse_k = np.arange(k_first, k_last + 1)
    tach_times = times_at(pulse_k.astype(np.float64))
    missing = rng.random(pulse_k.size) < missing_tach_pct / 100.0
    # rise time as an angle (rev)
    r_rev = _F32(tach_rise_samples * f_ref[0] / fs) if steady else (tach_rise_samples / fs * f_ref).astype(np.float32)
    d = _wrap(theta).astype(np.float32)                  # signed angle to the nearest mark
    level = np.clip(_F32(0.5) + d / r_rev, 0, 1) * np.clip(_F32(0.5) + (_F32(tach_duty) - d) / r_rev, 0, 1)
    if missing.any():
        nearest = np.floor(theta + 0.5).astype(np.int64)
        level[np.isin(nearest, pulse_k[missing])] = 0.0
    tach = _F32(TACH_HIGH) * level
    tach += _F32(tach_noise) * rng.standard_normal(n, dtype=np.float32)

    data = np.stack([accel, tach]).astype(np.float32, copy=False)
    for arr in (data, theta, f_ref, tach_times, missing):
        arr.setflags(write=False)
    for ev in fault_events:
        ev.setflags(write=False)
    params = dict(rpm=float(rpm), duration_s=float(duration_s), fs=fs, speed=speed,
                  speed_variation_pct=float(speed_variation_pct), seed=int(seed), noise_g=float(noise_g),
                  clip_g=clip_g, missing_tach_pct=float(missing_tach_pct), tach_noise=float(tach_noise),
                  tach_rise_samples=float(tach_rise_samples), tach_duty=float(tach_duty),
                  start_angle_rev=float(start_angle_rev), n_harmonics=int(n_harmonics))
    return Simulation(data=data, fs=fs, channels=("acceleration_g", "tach"), reference_shaft=reference,
                      shaft_orders=dict(orders), reference_angle_rev=theta, reference_hz=f_ref,
                      tach_times_s=tach_times, tach_missing=missing, faults=faults,
                      fault_events_s=tuple(fault_events), parameters=params)


_F32 = np.float32
_TWO_PI32 = np.float32(2 * np.pi)


def _frac_mul(theta: np.ndarray, order: float) -> np.ndarray:
    """``order * theta`` modulo 1 (rev, float64), so that float32 trig keeps precision."""
    x = order * theta
    x -= np.floor(x)
    return x


def _harmonic_sum(mesh_rev: np.ndarray, pm, amps: np.ndarray, phases: np.ndarray, a_mod) -> np.ndarray:
    """``a_mod x sum_h amps_h cos(h (2 pi mesh_rev + pm) + phases_h)``, float32."""
    arg = _TWO_PI32 * mesh_rev
    if pm is not None:
        arg += pm
    out = _F32(amps[0]) * np.cos(arg + _F32(phases[0]))
    for h in range(1, len(amps)):
        out += _F32(amps[h]) * np.cos(_F32(h + 1) * arg + _F32(phases[h]))
    if a_mod is not None:
        out *= a_mod
    return out


# ---------------------------------------------------------------------------
# Writing
# ---------------------------------------------------------------------------

_NICE_SCALES = (1.0, 2.0, 5.0, 10.0, 20.0, 50.0, 100.0, 200.0, 500.0, 1000.0, 2000.0, 5000.0)


def _save_model(train, path: Path) -> None:
    from . import model

    model.save_model(train, path)


def write_simulation(sim: Simulation, path, train, *, scale: float | None = None,
                     sensor_name: str = "simulated", location: str = "", direction: str = "radial",
                     with_tach: bool = True):
    """Write a simulation as 24-bit FLAC plus its model TOML (same stem).

    The accelerometer channel is stored as ``g / scale`` so that file value x
    ``scale`` = g; the tach channel is stored as it is.  The model written beside
    the file is ``train`` with its sensors and tach set to the simulated channels
    (sensor 0 on channel :data:`ACCEL_CHANNEL`; tach on channel
    :data:`TACH_CHANNEL`, the reference shaft, one pulse per revolution).

    Parameters
    ----------
    sim : Simulation
    path : str or Path
        The ``.flac`` file to write; the model goes to ``path.with_suffix(".toml")``.
    train : dsp.model.GearTrain
        The model that was simulated.
    scale : float, optional
        Full scale in g (g per file unit).  By default the first sensor's scale
        of ``train`` when the data fits in it, else the smallest of 1, 2, 5, 10,
        20, 50, ... g that leaves 20 % headroom.
    sensor_name, location, direction : str
        Used for the sensor when ``train`` has none.
    with_tach : bool
        When False, write the accelerometer channel alone (a route recording
        without a tachometer); the model written has no tach channel and keeps
        ``train.tach.nominal_rpm`` (the nameplate speed) when it is set, else the
        simulated mean speed, so that analysis has to estimate the speed.

    Returns
    -------
    dsp.model.GearTrain
        The model as written.

    Raises
    ------
    RecordingError
        When the data does not fit in the full scale given, or the file cannot
        be written.
    """
    import soundfile

    from .model import Sensor, Tach

    path = Path(path)
    if path.suffix.lower() != ".flac":
        raise RecordingError(f"output {str(path)!r} must end in .flac; give a .flac file name")
    peak = float(np.max(np.abs(sim.acceleration_g))) if sim.n_frames else 0.0
    if scale is None:
        given = train.sensors[0].scale if train.sensors else None
        if given is not None and given > 0 and peak < 0.999 * given:
            scale = float(given)
        else:
            scale = next((s for s in _NICE_SCALES if peak * 1.2 <= s), math.ceil(peak * 1.2))
    if not (scale > 0 and math.isfinite(scale)):
        raise RecordingError(f"{scale=} must be a positive full scale in g")
    if peak >= scale:
        raise RecordingError(f"the simulated acceleration peaks at {peak:.3g} g, beyond the full scale of "
                             f"{scale:g} g; give a larger scale")
    if train.sensors:
        s0 = replace(train.sensors[0], channel=ACCEL_CHANNEL, scale=float(scale), units="g")
    else:
        s0 = Sensor(name=sensor_name, channel=ACCEL_CHANNEL, scale=float(scale), units="g",
                    location=location, direction=direction)
    if with_tach:
        tach = replace(train.tach, shaft=sim.reference_shaft, channel=TACH_CHANNEL, pulses_per_rev=1,
                       edge="rising", nominal_rpm=sim.parameters.get("rpm", train.tach.nominal_rpm))
        frames = np.empty((sim.n_frames, 2), dtype=np.float64)
        frames[:, ACCEL_CHANNEL] = sim.acceleration_g / scale
        frames[:, TACH_CHANNEL] = sim.tach
    else:
        nominal = train.tach.nominal_rpm or sim.parameters.get("rpm")
        tach = replace(train.tach, shaft=sim.reference_shaft, channel=None, pulses_per_rev=1,
                       edge="rising", nominal_rpm=float(nominal))
        s0 = replace(s0, channel=0)
        frames = (sim.acceleration_g / scale).astype(np.float64)[:, None]
    out_train = replace(train, sensors=(s0,), tach=tach)
    try:
        soundfile.write(str(path), frames, int(round(sim.fs)), subtype="PCM_24", format="FLAC")
    except (OSError, RuntimeError, soundfile.LibsndfileError) as exc:
        raise RecordingError(f"cannot write {str(path)!r} ({exc}); check the folder and the sample rate") from None
    _save_model(out_train, path.with_suffix(".toml"))
    return out_train


__all__ = ["Fault", "Simulation", "simulate", "write_simulation", "bearing_orders",
           "FAULT_KINDS", "SEVERITIES", "SPEEDS"]
