"""Baseline panel: the comparison with a healthy baseline, and the severity box.

(The controller that analyses the baseline and the grey overlays are in
:mod:`workbench.baseline_controller`.)

Top: the indicator table (baseline / now / change as a ratio and in dB / flag) of
:class:`dsp.baseline.BaselineComparison`, the mesh harmonics and sideband families
that grew (largest growth first), and the comparison's notes.  A check box switches
the baseline overlays on the views (``overlay_toggled``).

Bottom: the severity box.  The broadband velocity RMS of the current analysis over a
band the user sets, the machine group and foundation the user chooses, and the
evaluation zone of :func:`dsp.severity.velocity_zone` with its source.  The caution
text (:data:`dsp.severity.CAUTION`) is always visible wherever a zone is shown.

The panel only displays: the velocity for another band is a band sum over the
spectrum the analysis already holds (:func:`dsp.severity.overall_velocity_rms`).
"""

from __future__ import annotations

import math
from typing import Any

from PySide6.QtCore import Qt, Signal
from PySide6.QtGui import QFont
from PySide6.QtWidgets import (QCheckBox, QComboBox, QDoubleSpinBox, QFormLayout, QGroupBox, QHBoxLayout, QLabel,
                               QVBoxLayout, QWidget)

from dsp import severity
from workbench import theme
from workbench.results_panel import fill_table as _fill
from workbench.results_panel import fmt
from workbench.results_panel import make_table as _table

#: Colour of every baseline curve (the theme's context-curve grey).
BASELINE_COLOUR = theme.CURVE_SECONDARY

INDICATOR_COLUMNS = ["indicator", "shaft", "baseline", "now", "ratio", "change dB", "flag"]
GROWN_COLUMNS = ["what grew", "order", "baseline", "now", "change dB"]
NO_BASELINE_TEXT = "No baseline loaded. File > Load baseline recording... compares this recording with a " \
                   "healthy recording of the same gearbox."
DB_NOTE = "dB: 20 log10 of the ratio for amplitudes (RMS, velocity, crest factor, FM0, ER); " \
          "10 log10 for kurtosis, FM4, NA4*, M6A, M8A."


def _db(value: float) -> str:
    return "n/a" if value is None or not math.isfinite(value) else f"{value:+.1f}"


class BaselinePanel(QWidget):
    """Comparison table, grown families and the severity box."""

    overlay_toggled = Signal(bool)
    severity_changed = Signal(str, str, float, float)   # group, foundation, band lo Hz, band hi Hz

    def __init__(self, parent: QWidget | None = None):
        super().__init__(parent)
        self.analysis: Any = None
        self.comparison: Any = None
        self.zone: severity.ZoneResult | None = None
        layout = QVBoxLayout(self)
        layout.setContentsMargins(4, 4, 4, 4)

        # --- comparison ---------------------------------------------------------
        box = QGroupBox("Change since the baseline")
        inner = QVBoxLayout(box)
        inner.setContentsMargins(4, 4, 4, 4)
        self.baseline_label = QLabel(NO_BASELINE_TEXT)
        self.baseline_label.setWordWrap(True)
        self.baseline_label.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
        self.show_overlay = QCheckBox("Baseline on the views (grey)")
        self.show_overlay.setChecked(True)
        self.show_overlay.setToolTip("Show the baseline's order spectrum, TSA and envelope spectrum as grey curves "
                                     "on the views; compared in orders of the reference shaft")
        self.show_overlay.setEnabled(False)
        self.show_overlay.toggled.connect(self.overlay_toggled)
        self.indicators = _table(INDICATOR_COLUMNS)
        self.grown = _table(GROWN_COLUMNS)
        self.db_note = QLabel(DB_NOTE)
        self.db_note.setWordWrap(True)
        self.notes = QLabel("")
        self.notes.setWordWrap(True)
        for w in (self.baseline_label, self.show_overlay):
            inner.addWidget(w)
        inner.addWidget(self.indicators, 3)
        inner.addWidget(self.db_note)
        inner.addWidget(self.grown, 2)
        inner.addWidget(self.notes)

        # --- severity ------------------------------------------------------------
        sbox = QGroupBox("Severity guidance (ISO 20816-3)")
        form = QFormLayout(sbox)
        form.setContentsMargins(4, 4, 4, 4)
        # a narrow dock puts a field under its label instead of cutting the caution text at the right
        form.setRowWrapPolicy(QFormLayout.RowWrapPolicy.WrapLongRows)
        self.band_lo = QDoubleSpinBox()
        self.band_hi = QDoubleSpinBox()
        for spin, value in ((self.band_lo, 10.0), (self.band_hi, 1000.0)):
            spin.setRange(0.5, 100000.0)
            spin.setDecimals(1)
            spin.setSuffix(" Hz")
            spin.setValue(value)
            spin.setKeyboardTracking(False)
            spin.valueChanged.connect(self._options_changed)
        band_row = QHBoxLayout()
        band_row.addWidget(self.band_lo)
        band_row.addWidget(QLabel("to"))
        band_row.addWidget(self.band_hi)
        band_widget = QWidget()
        band_widget.setLayout(band_row)
        band_row.setContentsMargins(0, 0, 0, 0)
        self.group = QComboBox()
        for i, g in enumerate(severity.GROUPS):
            self.group.addItem(f"{g} ({'large' if g == 'group 1' else 'medium'})", g)
            self.group.setItemData(i, severity.GROUP_MEANINGS[g], Qt.ItemDataRole.ToolTipRole)
        self.group.setToolTip("; ".join(f"{g}: {severity.GROUP_MEANINGS[g]}" for g in severity.GROUPS))
        self.group.setCurrentIndex(severity.GROUPS.index("group 2"))
        self.foundation = QComboBox()
        for f in severity.FOUNDATIONS:
            self.foundation.addItem(f, f)
        self.group.currentIndexChanged.connect(self._options_changed)
        self.foundation.currentIndexChanged.connect(self._options_changed)
        self.velocity_label = QLabel("-")
        self.velocity_label.setWordWrap(True)
        self.zone_label = QLabel("no recording analysed")
        self.zone_label.setWordWrap(True)
        font = QFont(self.zone_label.font())
        font.setBold(True)
        self.zone_label.setFont(font)
        self.source_label = QLabel(severity.SOURCE)
        self.source_label.setWordWrap(True)
        self.caution_label = QLabel(severity.CAUTION)
        self.caution_label.setWordWrap(True)
        self.caution_label.setStyleSheet(f"background: {theme.BANNER_WARNING}; padding: 4px;")
        form.addRow("velocity band", band_widget)
        form.addRow("machine group", self.group)
        form.addRow("foundation", self.foundation)
        form.addRow("velocity RMS", self.velocity_label)
        form.addRow("zone", self.zone_label)
        form.addRow(self.caution_label)          # right under the zone, so it is seen with it
        form.addRow("source", self.source_label)
        # the severity box first: short, and its caution stays in sight above the long table
        layout.addWidget(sbox, 2)
        layout.addWidget(box, 3)

    # --- public ---------------------------------------------------------------------

    def options(self) -> tuple[str, str, tuple[float, float]]:
        """(group, foundation, band in Hz) chosen in the severity box."""
        return (self.group.currentData(), self.foundation.currentData(),
                (float(self.band_lo.value()), float(self.band_hi.value())))

    def set_options(self, *, group: str | None = None, foundation: str | None = None,
                    band_hz: tuple[float, float] | None = None) -> None:
        """Set the severity choices (from a session) without emitting ``severity_changed`` per field."""
        widgets = (self.group, self.foundation, self.band_lo, self.band_hi)
        for w in widgets:
            w.blockSignals(True)
        try:
            if group is not None and group in severity.GROUPS:
                self.group.setCurrentIndex(severity.GROUPS.index(group))
            if foundation is not None and foundation in severity.FOUNDATIONS:
                self.foundation.setCurrentIndex(severity.FOUNDATIONS.index(foundation))
            if band_hz is not None:
                self.band_lo.setValue(float(band_hz[0]))
                self.band_hi.setValue(float(band_hz[1]))
        finally:
            for w in widgets:
                w.blockSignals(False)
        self._update_zone()

    def show_analysis(self, analysis: Any) -> None:
        """The current analysis: fills the severity box."""
        self.analysis = analysis
        self._update_zone()

    def show_comparison(self, comparison: Any) -> None:
        """A :class:`dsp.baseline.BaselineComparison`, or None to clear."""
        self.comparison = comparison
        if comparison is None:
            self.baseline_label.setText(NO_BASELINE_TEXT)
            self.indicators.setRowCount(0)
            self.grown.setRowCount(0)
            self.notes.setText("")
            self.show_overlay.setEnabled(False)
            return
        c = comparison
        self.baseline_label.setText(
            f"Baseline {c.baseline_path} ({c.baseline_rpm:.0f} rpm; now {c.current_rpm:.0f} rpm), "
            f"SHA-256 {c.baseline_sha256[:12]}...  Flags: amplitudes at {c.thresholds.amplitude_ratio:g}x, "
            f"kurtosis / FM4 / NA4* at baseline + {c.thresholds.moment_delta:g}, M6A / M8A at "
            f"{c.thresholds.high_moment_ratio:g}x.")
        model = getattr(self.analysis, "model", None)
        rows, colours = [], []
        for r in c.indicators:
            rows.append([r.label, r.shaft or "overall", fmt(r.baseline), fmt(r.now), fmt(r.change_ratio),
                         _db(r.change_db), r.flag])
            colours.append(theme.shaft_colour(model, r.shaft) if r.shaft else None)
        _fill(self.indicators, rows, colours, colour_column=1)
        for i, r in enumerate(c.indicators):
            item = self.indicators.item(i, 6)
            item.setToolTip(f"{r.rule}; dB as {r.db_kind}")
            if r.flag == "grown":
                font = QFont(item.font())
                font.setBold(True)
                for col in range(self.indicators.columnCount()):
                    self.indicators.item(i, col).setFont(font)
        rows = [[g.what, f"{g.order:.3f}", fmt(g.baseline), fmt(g.now), _db(g.change_db)] for g in c.grown]
        if not rows:
            rows = [["no mesh harmonic or sideband family grew", "", "", "", ""]]
        _fill(self.grown, rows)
        self.notes.setText("\n".join(f"Note: {n}" for n in c.notes))
        self.show_overlay.setEnabled(True)

    # --- internals ----------------------------------------------------------------------

    def _options_changed(self, *_args) -> None:
        group, foundation, band = self.options()
        self._update_zone()
        self.severity_changed.emit(group, foundation, band[0], band[1])

    def _update_zone(self) -> None:
        from dsp.errors import GearbenchError

        group, foundation, band = self.options()
        self.zone = None
        if self.analysis is None:
            self.velocity_label.setText("-")
            self.zone_label.setText("no recording analysed")
            self.caution_label.setVisible(True)
            return
        try:
            v = severity.overall_velocity_rms(self.analysis, band)
            self.zone = severity.velocity_zone(v, group=group, foundation=foundation, band_hz=band)
        except GearbenchError as exc:
            self.velocity_label.setText("-")
            self.zone_label.setText(str(exc))
            self.caution_label.setVisible(True)
            return
        z = self.zone
        b = z.boundaries_mm_s
        self.velocity_label.setText(f"{z.velocity_rms_mm_s:.2f} mm/s RMS ({band[0]:g} to {band[1]:g} Hz)")
        self.zone_label.setText(f"Zone {z.zone}: {z.meaning}  (A/B {b[0]:g}, B/C {b[1]:g}, C/D {b[2]:g} mm/s; "
                                f"{z.boundary_rule})")
        self.source_label.setText(z.source)
        self.caution_label.setText(z.caution)
        self.caution_label.setVisible(True)


def __getattr__(name: str) -> Any:
    """The controller and the overlays live in :mod:`workbench.baseline_controller`; still importable here."""
    if name in ("BaselineController", "BaselineOverlays"):
        from workbench import baseline_controller

        return getattr(baseline_controller, name)
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
