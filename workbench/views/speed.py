"""Speed view: the speed profile of the selected shaft in rpm, repaired tach pulses marked.

The caption says where the speed came from in plain words: the tach, an estimate from
the phase of a mesh line (no tach), or the nominal speed (no tach).  The legend entry
for repaired tach pulses appears only when pulses were repaired.
"""

from __future__ import annotations


import numpy as np
import pyqtgraph as pg

from workbench import theme
from workbench.views.base import AnalysisView

N_POINTS = 2000
def speed_source_text(profile, estimate=None) -> str:
    """Where the speed came from, in the analyst's words.

    ``"speed from the tach"``, ``"speed estimated from the stage 1 mesh phase (no tach)"``
    or ``"nominal speed (no tach)"``; ``estimate`` is ``Analysis.extras["speed_estimate"]``
    (method, mesh, harmonic) when the speed was estimated.
    """
    source = getattr(profile, "source", "")
    if source == "tach":
        return "speed from the tach"
    if source == "estimated":
        if estimate and estimate.get("mesh"):
            harmonic = int(estimate.get("harmonic") or 1)
            what = "phase" if "phase" in str(estimate.get("method", "")) else "line"
            mesh = estimate["mesh"]
            which = f"{mesh} mesh" if harmonic == 1 else f"{mesh} mesh harmonic {harmonic}"
            return f"speed estimated from the {which} {what} (no tach)"
        return "speed estimated from a mesh line (no tach)"
    if source == "nominal":
        return "nominal speed (no tach)"
    return f"speed from {source}"


class SpeedView(AnalysisView):
    name = "speed"
    title = "Speed"

    def __init__(self, session, parent=None):
        super().__init__(session, parent)
        self.finish_controls()
        self.plot = self.add_plot(x_label="time (s)", y_label="speed (rpm)")
        self.curve = self.plot.plot(pen=pg.mkPen(theme.SHAFT_COLOURS[0], width=2))
        self.repaired = self.plot.plot(pen=None, symbol="x", symbolSize=10,
                                       symbolPen=pg.mkPen(theme.MARK_REPAIRED, width=2), symbolBrush=None)
        self.legend = self.plot.addLegend(offset=(-10, 10))
        self.legend.addItem(self.curve, "speed")
        self._legend_repaired = False     # the repaired-pulse entry is listed only when pulses were repaired

    def data_items(self):
        return [self.curve]

    def refresh(self) -> None:
        analysis = self.analysis
        profile = getattr(analysis, "speed", None)
        if profile is None:
            return
        shaft = self.session.selected_shaft or profile.shaft
        ratio = self._ratio(profile.shaft, shaft)
        t = np.linspace(profile.t_start_s, profile.t_end_s, N_POINTS)
        rpm = np.asarray(profile.speed_hz(t), dtype=float) * ratio * 60.0
        colour = theme.shaft_colour(analysis.model, shaft)
        self.curve.setPen(pg.mkPen(colour, width=2))
        self.curve.setData(t, rpm)
        self.plot.setLabel("left", f"{shaft} speed (rpm)")
        pulses = getattr(analysis, "tach", None)
        n_repaired = 0
        if pulses is not None and np.any(pulses.repaired):
            times = np.asarray(pulses.times_s)[np.asarray(pulses.repaired, dtype=bool)]
            inside = (times >= profile.t_start_s) & (times <= profile.t_end_s)
            times = times[inside]
            n_repaired = times.size
            self.repaired.setData(times, np.asarray(profile.speed_hz(times), dtype=float) * ratio * 60.0)
        else:
            self.repaired.setData([], [])
        self._show_repaired_in_legend(n_repaired > 0)
        self.caption.setText(
            f"{shaft}: mean {profile.mean_hz * ratio * 60:.1f} rpm, "
            f"range {profile.min_hz * ratio * 60:.1f} to {profile.max_hz * ratio * 60:.1f} rpm; "
            + speed_source_text(profile, (getattr(analysis, "extras", None) or {}).get("speed_estimate"))
            + (f"; {n_repaired} tach pulse{'s' if n_repaired != 1 else ''} repaired" if pulses is not None else ""))
        span = float(np.ptp(rpm))
        mid = float(np.mean(rpm))
        pad = max(span * 0.2, abs(mid) * 0.01, 1.0)
        self.plot.setYRange(float(rpm.min()) - pad, float(rpm.max()) + pad, padding=0)
        self.plot.setXRange(profile.t_start_s, profile.t_end_s, padding=0.01)

    def legend_texts(self) -> list[str]:
        """The legend's entries, top to bottom."""
        return [label.text for _, label in self.legend.items]

    def _show_repaired_in_legend(self, show: bool) -> None:
        if show and not self._legend_repaired:
            self.legend.addItem(self.repaired, "repaired tach pulse")
        elif not show and self._legend_repaired:
            self.legend.removeItem(self.repaired)
        self._legend_repaired = show

    def _ratio(self, tach_shaft: str, shaft: str) -> float:
        """Speed of ``shaft`` per unit speed of the tach shaft, from the frequency table."""
        f_tach = self.shaft_rate_hz(tach_shaft)
        f_shaft = self.shaft_rate_hz(shaft)
        if not f_tach or f_shaft is None:
            return 1.0
        return f_shaft / f_tach
