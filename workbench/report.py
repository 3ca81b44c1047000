"""The report an analyst hands over: one recording, its analysis and the annotated evidence.

:func:`collect` gathers what goes in (a :class:`ReportInput`): the analysis, the
recording facts, the pictures (the session's snapshots with their captions and
notes, or, without a session, the default pictures drawn headlessly: spectrum,
TSA of the most suspect shaft, envelope) and the analyst's findings.
:func:`report_html` (``workbench.report_html``) turns it into one HTML text; the
same text is written as a self-contained HTML file (pictures embedded as
``data:`` URIs) or printed to PDF through Qt (``workbench.report_pdf``:
``QPdfWriter`` + ``QTextDocument``, no extra dependency).

Contents, in order: machine and measurement facts; the gear-train model and its
frequency table; overall and per-shaft indicators, each with one line on what it
means; the sideband ownership table; the suspects with their evidence (labelled
an aid to the analyst's judgement, not a verdict); every picture with its
caption and notes; the findings and recommendation; the cautions.  Every piece
of text that comes from a user or a file (model names, notes, captions,
findings, evidence) is escaped with :func:`html.escape`.

The one-line meanings of the TSA indicators follow the papers that defined them.

References
----------
.. [1] R. M. Stewart, "Some useful data analysis techniques for gearbox
   diagnostics", Report MHM/R/10/77, Institute of Sound and Vibration Research,
   University of Southampton, 1977 (FM0, FM4, the difference signal).
.. [2] H. R. Martin, "Statistical moment analysis as a means of surface damage
   detection", Proc. 7th International Modal Analysis Conference, 1989 (M6A, M8A).
.. [3] J. J. Zakrajsek, D. P. Townsend and H. J. Decker, "An analysis of gear fault
   detection methods as applied to pitting fatigue failure data", NASA TM-105950,
   1993 (NA4).
.. [4] N. S. Swansson, "Application of vibration signal analysis techniques to
   signal monitoring", Conference on Friction and Wear in Engineering, Institution
   of Engineers Australia, 1980 (energy ratio).
"""

from __future__ import annotations

import datetime as _dt
import json
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from dsp.errors import GearbenchError
from dsp.indicators import TSA_INDICATORS

#: The cautions every report ends with.
CAUTIONS = (
    "The results in this report are guidance for a qualified vibration analyst; they are not a diagnosis "
    "and not a verdict on the machine.",
    "Confirm every finding with further measurements (a repeat recording, other sensor positions, trending "
    "against earlier recordings) before acting on it.",
    "Defer to local codes, the manufacturer's instructions and licensed practice before acting on machinery.",
)
SUSPECTS_LABEL = "an aid to the analyst's judgement, not a verdict"
DEFAULT_VIEWS = ("spectrum", "tsa", "envelope")
DEFAULT_SIZE_PX = (1000, 520)

#: One line on what each overall indicator means (common practice; sources in the text).
OVERALL_MEANINGS = {
    "rms": "overall energy of the acceleration (root mean square)",
    "peak": "largest absolute sample of the record",
    "crest_factor": "peak over RMS; rises when short impacts ride on the signal (about 1.4 for a pure tone)",
    "kurtosis": "peakedness of the signal; about 3 for Gaussian noise, higher when impacts are present",
    "velocity_rms_mm_s": "broadband velocity RMS, the quantity the ISO 20816 evaluation zones use",
}
#: One line on what each TSA indicator means (sources in dsp.indicators.TSA_INDICATORS).
TSA_MEANINGS = {info.key: info.meaning for info in TSA_INDICATORS}


class ReportError(GearbenchError):
    """The report cannot be written with the input given."""


@dataclass(frozen=True)
class ReportImage:
    """One picture of the report: PNG bytes, its caption and the notes written on it."""

    title: str
    png: bytes
    caption: str = ""
    notes: tuple[str, ...] = ()
    view: str = ""


@dataclass(frozen=True)
class ReportInput:
    """Everything the report shows.

    Attributes
    ----------
    analysis : dsp.analysis.Analysis
    images : tuple of ReportImage
    findings : str
        The analyst's findings and recommendation (plain text).
    created_utc : str
        When the report was written (ISO 8601, UTC).
    session_path : str
        The session file the report came from (empty without one).
    recording_changed : bool
        The recording's SHA-256 differs from the one in the session.
    notes : tuple of str
        Sentences about the input (keys ignored in the session, pictures missing).
    severity : dsp.severity.ZoneResult, optional
        The ISO 20816-3 evaluation zone the analyst chose to show (machine group
        and foundation); shown with its caution.
    """

    analysis: Any
    images: tuple[ReportImage, ...] = ()
    findings: str = ""
    created_utc: str = ""
    session_path: str = ""
    recording_changed: bool = False
    notes: tuple[str, ...] = field(default_factory=tuple)
    severity: Any = None                       # dsp.severity.ZoneResult shown in the window, if any


def utc_now() -> str:
    return _dt.datetime.now(_dt.timezone.utc).strftime("%Y-%m-%d %H:%M UTC")


def recording_date(path: str | Path) -> str:
    """The recording file's modification time (UTC), or ``"unknown"``."""
    try:
        stamp = Path(path).stat().st_mtime
    except OSError:
        return "unknown"
    return _dt.datetime.fromtimestamp(stamp, _dt.timezone.utc).strftime("%Y-%m-%d %H:%M UTC")


def most_suspect_shaft(analysis: Any) -> str | None:
    """The shaft of the first suspect, else the reference shaft."""
    for suspect in getattr(analysis, "suspects", ()) or ():
        if getattr(suspect, "shaft", None):
            return suspect.shaft
    return getattr(analysis.frequencies, "reference_shaft", None)


def default_images(analysis: Any, recording: Any = None, *, size_px: tuple[int, int] = DEFAULT_SIZE_PX) -> list[ReportImage]:
    """The default pictures drawn headlessly: spectrum, TSA of the most suspect shaft, envelope."""
    from workbench import snapshot
    from workbench.session import MESH_SPAN, Session, default_spectrum_span_hz

    shaft = most_suspect_shaft(analysis)
    session = Session(model=analysis.model, settings=analysis.settings)
    session.selected_shaft = shaft
    span = default_spectrum_span_hz(analysis)
    top_hz = span[1] if span else None
    if span is not None:
        session.set_view_options(spectrum_zoom_hz=span)
    captions = {
        "spectrum": ("Amplitude spectrum" + (f" up to {top_hz:.0f} Hz ({MESH_SPAN:g} x the highest gear mesh "
                                             "frequency)" if session.view_options.spectrum_zoom_hz else "")
                     + f", shaft {shaft} selected, with the model's frequency lines."),
        "tsa": f"Time-synchronous average of shaft {shaft} (the shaft of the first suspect) over one revolution, "
               "with one tick per tooth of each gear on it.",
        "envelope": "Envelope spectrum of the band in the header; marks at the shaft rate and its bearings' "
                    "defect frequencies.",
    }
    titles = {"spectrum": "Spectrum", "tsa": f"TSA of shaft {shaft}", "envelope": "Envelope spectrum"}
    images = []
    for view in DEFAULT_VIEWS:
        recipe = snapshot.build_recipe(session=session, analysis=analysis, view=view, size_px=size_px)
        png = _png_bytes(snapshot.render(recipe, analysis, recording))
        images.append(ReportImage(titles[view], png, caption=captions[view], view=view))
    return images


def session_images(entries: list[dict[str, Any]]) -> tuple[list[ReportImage], list[str]]:
    """Pictures of a session's snapshots, with their captions and the notes written on them.

    A missing picture whose recipe is still there is regenerated from the recipe
    (:func:`workbench.snapshot.regenerate`).  Returns the images and sentences
    about snapshots that could not be read.
    """
    images, problems = [], []
    for entry in entries:
        png = Path(str(entry.get("png", "")))
        recipe_path = Path(str(entry.get("recipe", "")))
        if not png.is_file() and recipe_path.is_file():
            try:   # the picture was lost but its recipe is there: draw it again
                from workbench.snapshot import regenerate

                regenerate(recipe_path, png)
            except GearbenchError as exc:
                problems.append(f"the picture {png.name} is missing and cannot be regenerated ({exc})")
                continue
        try:
            data = png.read_bytes()
        except OSError:
            problems.append(f"the picture {png} of a snapshot is missing; regenerate it from its recipe")
            continue
        notes: tuple[str, ...] = ()
        if recipe_path.is_file():
            try:
                recipe = json.loads(recipe_path.read_text(encoding="utf-8"))
                notes = tuple(str(a.get("text", "")) for a in recipe.get("annotations", []) if isinstance(a, dict))
            except (OSError, ValueError, AttributeError):
                problems.append(f"the recipe {recipe_path.name} cannot be read; its notes are left out")
        view = str(entry.get("view", ""))
        images.append(ReportImage(title=f"Snapshot of the {view} view" if view else "Snapshot", png=data,
                                  caption=str(entry.get("caption", "")), notes=notes, view=view))
    return images, problems


def _png_bytes(image) -> bytes:
    from PySide6.QtCore import QBuffer, QByteArray, QIODevice

    data = QByteArray()
    buffer = QBuffer(data)
    buffer.open(QIODevice.OpenModeFlag.WriteOnly)
    if not image.save(buffer, "PNG"):
        raise ReportError("could not encode a picture of the report as PNG")
    buffer.close()
    return bytes(data.data())


def collect(recording_path: str | Path, model_path: str | Path | None = None, *,
            session_path: str | Path | None = None) -> tuple[ReportInput, Any]:
    """Analyse a recording and gather the report's input (the command-line path).

    With ``session_path``, the session's model, settings, snapshots and findings
    are used; without it the model file and default settings, and the default
    pictures are drawn.  Returns ``(ReportInput, recording)``.
    """
    from dsp.analysis import Settings, analyze
    from dsp.model import load_model
    from dsp.recording import read_recording

    recording_path = Path(recording_path)
    if not recording_path.is_file():
        raise ReportError(f"recording not found: {recording_path}; check the path")
    session = None
    notes: list[str] = []
    changed = False
    if session_path is not None:
        from workbench.session_store import load_session

        loaded = load_session(session_path, check_recording=False)
        session, notes = loaded.session, list(loaded.warnings)
    if model_path is not None:
        model = load_model(model_path)
    elif session is not None and session.model is not None:
        model = session.model
    else:
        beside = recording_path.with_suffix(".toml")
        if not beside.is_file():
            raise ReportError(f"no model for {recording_path.name}: pass --model or put {beside.name} beside it")
        model = load_model(beside)
    settings = session.settings if session is not None else Settings()
    recording = read_recording(recording_path)
    saved_sha = getattr(session, "recording_sha256", None) if session is not None else None
    if saved_sha and saved_sha != recording.sha256:
        changed = True
        notes.append("the recording's SHA-256 differs from the one saved in the session: the snapshots may "
                     "show another version of the data")
    analysis = analyze(recording, model, settings)
    from workbench.snapshot import ensure_app

    ensure_app(headless=True)
    entries = list(getattr(session, "snapshots", None) or []) if session is not None else []
    if entries:
        images, problems = session_images(entries)
        notes += problems
    else:
        images = default_images(analysis, recording)
    findings = str(getattr(session, "findings", "") or "") if session is not None else ""
    return ReportInput(analysis=analysis, images=tuple(images), findings=findings, created_utc=utc_now(),
                       session_path="" if session_path is None else str(session_path),
                       recording_changed=changed, notes=tuple(notes)), recording


def write_report(inp: ReportInput, out: str | Path) -> Path:
    """Write the report as PDF or HTML by the suffix of ``out``."""
    out = Path(out)
    suffix = out.suffix.lower()
    if suffix not in (".pdf", ".html", ".htm"):
        raise ReportError(f"output {out.name} must end in .pdf or .html")
    if not out.parent.is_dir():
        raise ReportError(f"the folder {out.parent} does not exist; create it or choose another output")
    if suffix == ".pdf":
        from workbench.report_pdf import write_pdf

        write_pdf(inp, out)
    else:
        from workbench.report_html import write_html

        write_html(inp, out)
    return out


__all__ = ["CAUTIONS", "SUSPECTS_LABEL", "OVERALL_MEANINGS", "TSA_MEANINGS", "ReportError", "ReportImage",
           "ReportInput", "collect", "default_images", "session_images", "most_suspect_shaft", "write_report",
           "recording_date", "utc_now"]
