"""The document of the workbench: what the analyst has open and chosen.

A :class:`Session` holds the recording path, the gear-train model, the processing
settings (which carry the time range and the envelope band), the selected shaft and
the view options.  Views and panels never talk to each other: they change the
session, and the session tells every subscriber what changed with a small
:class:`SessionEvent`.  The session imports no Qt, so it can be saved, loaded and
tested without a display; :meth:`Session.to_dict` gives plain JSON types.

Derived results (the :class:`dsp.analysis.Analysis`) are not part of the document:
they can always be recomputed from it.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Callable, Iterable

from dsp.analysis import Settings
from dsp.plain import plain_json
from workbench.views import VIEW_CLASSES

SCHEMA = "gearbench.session/1"

VIEW_NAMES = tuple(VIEW_CLASSES)          # one registry of views: workbench.views.VIEW_CLASSES
SPECTRUM_X_UNITS = ("hz", "cpm", "order")
SPECTRUM_Y_UNITS = ("g", "m/s2", "mm/s")
SPECTRUM_LINES = ("fine", "averaged")     # full-record lines, or extras["averaged_spectrum"]
TSA_SIGNALS = ("average", "residual", "difference")

# Event kinds a subscriber may receive.
EVENT_KINDS = ("recording", "model", "settings", "shaft", "view_options", "view",
               "cursors", "annotations", "snapshots", "findings", "baseline", "severity")


@dataclass(frozen=True)
class ViewOptions:
    """Display choices that do not change the analysis."""

    spectrum_x: str = "hz"                 # one of SPECTRUM_X_UNITS
    spectrum_units: str = "g"              # one of SPECTRUM_Y_UNITS
    spectrum_log_y: bool = True
    spectrum_zoom_hz: tuple[float, float] | None = None   # shown band, None: whole spectrum
    spectrum_lines: str = "fine"           # one of SPECTRUM_LINES (Hz and CPM axes of an acceleration)
    tsa_signal: str = "average"            # one of TSA_SIGNALS
    show_kurtogram: bool = False

    def __post_init__(self) -> None:
        _check_choice("spectrum_x", self.spectrum_x, SPECTRUM_X_UNITS)
        _check_choice("spectrum_units", self.spectrum_units, SPECTRUM_Y_UNITS)
        _check_choice("spectrum_lines", self.spectrum_lines, SPECTRUM_LINES)
        _check_choice("tsa_signal", self.tsa_signal, TSA_SIGNALS)
        if self.spectrum_zoom_hz is not None:
            lo, hi = (float(v) for v in self.spectrum_zoom_hz)
            if not lo < hi:
                raise ValueError(f"spectrum_zoom_hz={self.spectrum_zoom_hz} must be (low, high) with low < high")
            object.__setattr__(self, "spectrum_zoom_hz", (lo, hi))


@dataclass(frozen=True)
class SessionEvent:
    """One change of the document: ``kind`` is one of ``EVENT_KINDS``, ``value`` the new value."""

    kind: str
    value: Any


Listener = Callable[[SessionEvent], None]


def _check_choice(name: str, value: Any, allowed: Iterable[str]) -> None:
    allowed = tuple(allowed)
    if value not in allowed:
        raise ValueError(f"Invalid value for {name!r}: allowed {', '.join(map(repr, allowed))}, got {value!r}")


@dataclass
class Session:
    """The open document.  Change it only through its ``set_...`` methods.

    Each setter notifies subscribers only when the value really changes, so a view
    that writes back the value it was just given does not start a loop.
    """

    recording_path: Path | None = None
    model_path: Path | None = None
    model: Any = None                       # dsp.model.GearTrain or None
    settings: Settings = field(default_factory=Settings)
    selected_shaft: str | None = None
    view_options: ViewOptions = field(default_factory=ViewOptions)
    current_view: str = "spectrum"
    # the analyst's work, saved beside the core by workbench.session_store (plain data)
    recording_sha256: str | None = None
    baseline_path: str | None = None
    cursors: list[dict[str, Any]] = field(default_factory=list)
    annotations: list[dict[str, Any]] = field(default_factory=list)
    snapshots: list[dict[str, Any]] = field(default_factory=list)
    findings: str = ""
    # the severity box's choices: {"group": ..., "foundation": ..., "band_hz": [lo, hi]} or None (defaults)
    severity: dict[str, Any] | None = None
    _listeners: list[tuple[Listener, frozenset[str] | None]] = field(default_factory=list, repr=False, compare=False)

    # ------------------------------------------------------------------ observers
    def subscribe(self, listener: Listener, kinds: Iterable[str] | None = None) -> Callable[[], None]:
        """Call ``listener(event)`` on every change (or only on ``kinds``); returns an unsubscribe function."""
        wanted = None if kinds is None else frozenset(kinds)
        if wanted is not None:
            for kind in wanted:
                _check_choice("kinds", kind, EVENT_KINDS)
        entry = (listener, wanted)
        self._listeners.append(entry)

        def unsubscribe() -> None:
            if entry in self._listeners:
                self._listeners.remove(entry)

        return unsubscribe

    def _emit(self, kind: str, value: Any) -> None:
        event = SessionEvent(kind, value)
        for listener, wanted in list(self._listeners):
            if wanted is None or kind in wanted:
                listener(event)

    # ------------------------------------------------------------------ setters
    def set_recording(self, path: str | Path | None) -> None:
        """Open another recording: the time range is reset to the whole record."""
        path = None if path is None else Path(path)
        if path == self.recording_path:
            return
        self.recording_path = path
        self._emit("recording", path)
        self.set_time_range(None)

    def set_model(self, model: Any, path: str | Path | None = ...) -> None:
        """Replace the gear-train model; keeps the selected shaft when the new model still has it.

        ``path`` is the model file it came from (``None``: not from a file); leave it out
        to keep the current ``model_path`` (an edit in the form).
        """
        if path is not ...:
            self.model_path = None if path is None else Path(path)
        if model == self.model:
            return
        self.model = model
        names = tuple(model.shaft_names()) if model is not None else ()
        if self.selected_shaft not in names:
            self.selected_shaft = _default_shaft(model)
            # subscribers learn the shaft after the model, so they can find it in it
            self._emit("model", model)
            self._emit("shaft", self.selected_shaft)
            return
        self._emit("model", model)

    def set_settings(self, settings: Settings) -> None:
        if not isinstance(settings, Settings):
            raise TypeError(f"settings must be dsp.analysis.Settings, got {type(settings).__name__}")
        if settings == self.settings:
            return
        self.settings = settings
        self._emit("settings", settings)

    def update_settings(self, **changes: Any) -> None:
        """Change some processing settings (``dataclasses.replace`` semantics)."""
        self.set_settings(dataclasses.replace(self.settings, **changes))

    def set_time_range(self, range_s: tuple[float, float] | None) -> None:
        """Limit the analysis to ``(start_s, end_s)``; ``None`` analyses the whole record."""
        if range_s is None:
            self.update_settings(t_start_s=None, t_end_s=None)
            return
        start_s, end_s = (float(v) for v in range_s)
        if not end_s > start_s:
            raise ValueError(f"time range ({start_s}, {end_s}) must have end_s > start_s")
        self.update_settings(t_start_s=start_s, t_end_s=end_s)

    @property
    def time_range_s(self) -> tuple[float, float] | None:
        if self.settings.t_start_s is None and self.settings.t_end_s is None:
            return None
        return (self.settings.t_start_s, self.settings.t_end_s)

    def set_envelope_band(self, band_hz: tuple[float, float] | None) -> None:
        """Demodulate in ``(low_hz, high_hz)``; ``None`` lets the kurtogram choose."""
        if band_hz is not None:
            lo, hi = (float(v) for v in band_hz)
            if not 0.0 <= lo < hi:
                raise ValueError(f"envelope band ({lo}, {hi}) must satisfy 0 <= low_hz < high_hz")
            band_hz = (lo, hi)
        self.update_settings(envelope_band_hz=band_hz)

    def select_shaft(self, name: str | None) -> None:
        """Select a shaft everywhere; the name must be a shaft of the model."""
        if name == self.selected_shaft:
            return
        if name is not None and (self.model is None or name not in self.model.shaft_names()):
            known = ", ".join(self.model.shaft_names()) if self.model is not None else "none"
            raise ValueError(f"unknown shaft {name!r}; the model has: {known}")
        self.selected_shaft = name
        self._emit("shaft", name)

    def set_view_options(self, **changes: Any) -> None:
        options = dataclasses.replace(self.view_options, **changes)
        if options == self.view_options:
            return
        self.view_options = options
        self._emit("view_options", options)

    def set_current_view(self, name: str) -> None:
        _check_choice("view", name, VIEW_NAMES)
        if name == self.current_view:
            return
        self.current_view = name
        self._emit("view", name)

    def set_cursors(self, items: list[dict[str, Any]]) -> None:
        """Replace the cursor list (plain dicts, one ``view`` key each)."""
        self._set_list("cursors", items)

    def set_annotations(self, items: list[dict[str, Any]]) -> None:
        """Replace the annotation list (plain dicts, see ``workbench.annotations.Annotation``)."""
        self._set_list("annotations", items)

    def set_snapshots(self, items: list[dict[str, Any]]) -> None:
        """Replace the snapshot list (``id, recipe, png, svg, caption, view`` each)."""
        self._set_list("snapshots", items)

    def set_baseline(self, path: str | Path | None) -> None:
        """The healthy baseline recording of the same gearbox to compare with (``None``: none)."""
        value = None if path is None else str(path)
        if value != self.baseline_path:
            self.baseline_path = value
            self._emit("baseline", value)

    def set_severity(self, *, group: str, foundation: str, band_hz: tuple[float, float]) -> None:
        """The severity box's choices (machine group, foundation, velocity band in Hz)."""
        value = {"group": str(group), "foundation": str(foundation),
                 "band_hz": [float(band_hz[0]), float(band_hz[1])]}
        if value != self.severity:
            self.severity = value
            self._emit("severity", dict(value))

    def set_findings(self, text: str) -> None:
        """The analyst's findings and recommendation (plain text)."""
        if not isinstance(text, str):
            raise TypeError(f"findings must be str, got {type(text).__name__}")
        if text != self.findings:
            self.findings = text
            self._emit("findings", text)

    def _set_list(self, kind: str, items: list[dict[str, Any]]) -> None:
        items = [dict(item) for item in items]
        if items != getattr(self, kind):
            setattr(self, kind, items)
            self._emit(kind, items)

    # ------------------------------------------------------------------ JSON
    def to_dict(self) -> dict[str, Any]:
        """Plain JSON types (str, float, int, bool, None, list, dict)."""
        return {
            "schema": SCHEMA,
            "recording_path": None if self.recording_path is None else str(self.recording_path),
            "model_path": None if self.model_path is None else str(self.model_path),
            "model": None if self.model is None else _model_to_dict(self.model),
            "settings": _jsonable(dataclasses.asdict(self.settings)),
            "selected_shaft": self.selected_shaft,
            "view_options": _jsonable(dataclasses.asdict(self.view_options)),
            "current_view": self.current_view,
        }

    @classmethod
    def from_dict(cls, data: dict[str, Any]) -> "Session":
        """Rebuild a session from :meth:`to_dict` output; unknown keys are an error."""
        if data.get("schema") != SCHEMA:
            raise ValueError(f"not a gearbench session (schema {data.get('schema')!r}, expected {SCHEMA!r})")
        known = {"schema", "recording_path", "model_path", "model", "settings", "selected_shaft",
                 "view_options", "current_view"}
        unknown = sorted(set(data) - known)
        if unknown:
            raise ValueError(f"unknown session keys: {', '.join(unknown)}; remove them or update gearbench")
        settings = _dataclass_from_dict(Settings, data.get("settings") or {})
        options = _dataclass_from_dict(ViewOptions, data.get("view_options") or {})
        model = None if data.get("model") is None else _model_from_dict(data["model"])
        session = cls(
            recording_path=None if data.get("recording_path") is None else Path(data["recording_path"]),
            model_path=None if data.get("model_path") is None else Path(data["model_path"]),
            model=model,
            settings=settings,
            view_options=options,
        )
        shaft = data.get("selected_shaft")
        session.selected_shaft = shaft if model is not None and shaft in model.shaft_names() else _default_shaft(model)
        view = data.get("current_view", "spectrum")
        _check_choice("current_view", view, VIEW_NAMES)
        session.current_view = view
        return session


def _default_shaft(model: Any) -> str | None:
    """The tach shaft when the model names one, else the first shaft."""
    if model is None or not model.shafts:
        return None
    names = model.shaft_names()
    tach_shaft = getattr(getattr(model, "tach", None), "shaft", "")
    return tach_shaft if tach_shaft in names else names[0]


_jsonable = plain_json


def _dataclass_from_dict(cls: type, data: dict[str, Any]) -> Any:
    names = {f.name: f for f in dataclasses.fields(cls)}
    unknown = sorted(set(data) - set(names))
    if unknown:
        raise ValueError(f"unknown {cls.__name__} keys: {', '.join(unknown)}")
    values = {}
    for key, value in data.items():
        # JSON has no tuples: band pairs come back as lists
        values[key] = tuple(value) if isinstance(value, list) else value
    return cls(**values)


def _model_to_dict(model: Any) -> dict[str, Any]:
    try:
        from dsp.model import model_to_dict
    except ImportError:  # the model module may not offer it yet
        return _jsonable(dataclasses.asdict(model))
    return _jsonable(model_to_dict(model))


def _model_from_dict(data: dict[str, Any]) -> Any:
    from dsp.model import model_from_dict

    return model_from_dict(data)


#: The default spectrum band reaches this many times the highest gear mesh frequency:
#: the mesh harmonics the analysis measures (3 by default) and their sidebands.
MESH_SPAN = 3.5


def default_spectrum_span_hz(analysis: Any) -> tuple[float, float] | None:
    """The spectrum band an analyst looks at first: 0 to MESH_SPAN x the highest mesh frequency.

    None when the model has no mesh or that band reaches the Nyquist frequency anyway.
    The window opens each recording's spectrum on it; the report's default picture uses it.
    """
    table = analysis.frequencies
    meshes_hz = [m.gmf_hz for m in getattr(table, "meshes", ()) or ()]
    meshes_hz += [p.mesh_hz for p in getattr(table, "planetary", ()) or ()]
    if not meshes_hz:
        return None
    top_hz = MESH_SPAN * max(meshes_hz)
    nyquist_hz = 0.5 * float(analysis.recording.get("sample_rate_hz", 0.0) or 0.0)
    if nyquist_hz and top_hz >= nyquist_hz:
        return None
    return (0.0, top_hz)
