"""The analysis engine entry point: ``analyze(recording, model, settings) -> Analysis``.

The window, the report and the command line all call this one function.  The
result is a plain immutable bundle that carries the settings it was computed with,
so anything shown can be regenerated.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any, Callable

import numpy as np


@dataclass(frozen=True)
class Settings:
    """Processing settings of one analysis.  All fields have sensible defaults."""

    sensor_index: int = 0                          # index into model.sensors
    t_start_s: float | None = None                 # analyse only this time range
    t_end_s: float | None = None
    window: str = "hann"                           # spectrum window
    spectrum_resolution_hz: float = 0.5            # averaged-spectrum line spacing
    spectrum_scaling: str = "peak"                 # "peak" or "rms"
    max_order: float | None = None                 # order spectrum upper limit (None: auto)
    tsa_samples_per_rev: int | None = None         # None: automatic
    envelope_band_hz: tuple[float, float] | None = None   # None: chosen by the kurtogram
    kurtogram_max_level: int = 6
    velocity_band_hz: tuple[float, float] = (10.0, 1000.0)
    n_mesh_harmonics: int = 3
    n_sideband_orders: int = 3
    alarm_threshold: float = 0.5                   # suspects below this score are not listed


ProgressFn = Callable[[float, str], None]
CancelFn = Callable[[], bool]


@dataclass(frozen=True)
class ShaftTSA:
    """TSA of one shaft with its derived signals and indicators."""

    shaft: str
    shaft_hz: float
    shaft_order: float
    n_revs: int
    samples_per_rev: int
    angle_deg: np.ndarray
    average: np.ndarray
    residual: np.ndarray
    difference: np.ndarray
    teeth: tuple[tuple[str, int], ...]             # (gear label, teeth) of gears on this shaft
    indicators: dict[str, float]                   # rms, kurtosis, fm0, fm4, na4, m6a, m8a, er


@dataclass(frozen=True)
class Analysis:
    """Everything computed for one recording, model and settings."""

    settings: Settings
    model: Any                                     # dsp.model.GearTrain
    recording: dict[str, Any]                      # path, sha256, sample_rate_hz, duration_s, channels, sensor
    frequencies: Any                               # dsp.kinematics.FrequencyTable at the mean speed
    speed: Any                                     # dsp.tach.SpeedProfile
    tach: Any                                      # dsp.tach.TachPulses or None
    spectrum: Any                                  # dsp.spectrum.Spectrum (sensor units)
    velocity_spectrum: Any                         # dsp.spectrum.Spectrum (mm/s)
    order_spectrum: Any                            # dsp.orders.OrderSpectrum (reference shaft orders)
    tsa: tuple[ShaftTSA, ...]
    envelope: Any                                  # dsp.envelope.EnvelopeSpectrum
    kurtogram: Any                                 # dsp.envelope.Kurtogram or None
    cepstrum: Any                                  # dsp.cepstrum.Cepstrum
    overall: dict[str, Any]                        # rms, peak, crest_factor, kurtosis, velocity_rms_mm_s, clipped
    sidebands: tuple[Any, ...]                     # dsp.sidebands.SidebandFamily
    envelope_matches: tuple[Any, ...]              # frequencies found in the envelope spectrum
    suspects: tuple[Any, ...]                      # dsp.suspects.Suspect, ranked
    warnings: tuple[str, ...] = ()
    extras: dict[str, Any] = field(default_factory=dict)

    def tsa_for(self, shaft: str) -> ShaftTSA | None:
        for item in self.tsa:
            if item.shaft == shaft:
                return item
        return None
