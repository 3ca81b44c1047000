"""Snapshots: a view saved as PNG and SVG with a recipe that regenerates it.

A snapshot is three files with one stem: ``NAME.png``, ``NAME.svg`` and the recipe
``NAME.json`` (schema ``"gearbench.snapshot/1"``).  The recipe holds everything
the picture depends on: the recording (path, SHA-256, sensor and its channel), the
time range and processing settings (:class:`dsp.analysis.Settings` as a dict), the
gear-train model as TOML text, the view name and options (axis units, log or
linear, selected shaft, TSA signal kind, the plot's visible range), the picture
size, the cursors, the annotations, the caption and the program version.

:func:`regenerate` (``gearbench snapshot RECIPE.json -o OUT.png``) reads the
recording, refuses it when its SHA-256 differs from the recipe's (unless told to
go on), runs :func:`dsp.analysis.analyze` with the recipe's settings and draws the
same view at the same size with the same options, cursors and annotations.  The
window saves its snapshots through the very same drawing function
(:func:`render`), from the analysis it shows, so the saved picture and the
regenerated one come from one code path.

The picture is the view's plots stacked (the control row is not drawn) under one
header line with the view's title and its caption.

:class:`workbench.document_actions.SnapshotGallery` lists the snapshots of a session
with a thumbnail and an editable caption.
"""

from __future__ import annotations

import dataclasses
import datetime as _dt
import html
import json
import math
import re
from pathlib import Path
from typing import Any

from dsp.errors import GearbenchError
from workbench.session import plain_json as _jsonable
from workbench.views import VIEW_CLASSES, view_class

SCHEMA = "gearbench.snapshot/1"
DEFAULT_SIZE_PX = (1100, 620)
MIN_SIZE_PX, MAX_SIZE_PX = 200, 8000
HEADER_PX = 26


class SnapshotError(GearbenchError):
    """A snapshot recipe cannot be used, or its picture cannot be written."""


# ---------------------------------------------------------------------- recipe
def build_recipe(*, session: Any, analysis: Any, view: str, size_px: tuple[int, int],
                 x_range: tuple[float, float] | None = None, y_range: tuple[float, float] | None = None,
                 caption: str = "", cursors: list[dict] | None = None,
                 annotations: list[dict] | None = None, overlays: dict[str, bool] | None = None,
                 base_dir: str | Path | None = None) -> dict[str, Any]:
    """The recipe of a snapshot of ``view`` as the analysis and the session show it now.

    Parameters
    ----------
    session : workbench.session.Session
        Gives the view options and the selected shaft.
    analysis : dsp.analysis.Analysis
        Gives the recording facts, the settings and the model it was computed with.
    view : str
        Session view name.
    size_px : (int, int)
        Width and height of the drawn view in pixels.
    x_range, y_range : (float, float), optional
        The main plot's visible range in its view coordinates (log10 on a log axis).
    caption : str
        The analyst's caption.
    cursors, annotations : list of dict, optional
        Plain-data cursors and annotations; only those of ``view`` are kept.
    overlays : dict, optional
        Model overlay families and whether each is shown.
    base_dir : path, optional
        Folder of the recipe file: the recording is also stored relative to it.
    """
    from dsp import __version__
    from dsp.model import dumps_model

    if view not in VIEW_CLASSES:
        raise SnapshotError(f"unknown view {view!r}; choose one of: {', '.join(VIEW_CLASSES)}")
    rec = dict(analysis.recording)
    path = Path(rec.get("path", ""))
    recording = {"path": str(path.resolve()) if str(path) else "", "sha256": rec.get("sha256"),
                 "channel": (rec.get("sensor") or {}).get("channel"), "sensor": (rec.get("sensor") or {}).get("name")}
    if base_dir is not None and str(path):
        try:
            recording["relative_path"] = str(Path(_relpath(path.resolve(), Path(base_dir).resolve())))
        except ValueError:
            pass
    settings = analysis.settings
    options = _jsonable(dataclasses.asdict(session.view_options))
    options["selected_shaft"] = session.selected_shaft
    return {
        "schema": SCHEMA,
        "program": {"name": "gearbench", "version": __version__},
        "created_utc": _dt.datetime.now(_dt.timezone.utc).strftime("%Y-%m-%dT%H:%M:%SZ"),
        "caption": str(caption),
        "recording": recording,
        "time_range_s": None if settings.t_start_s is None and settings.t_end_s is None
        else [settings.t_start_s, settings.t_end_s],
        "settings": _jsonable(dataclasses.asdict(settings)),
        "model": {"toml": dumps_model(analysis.model)},
        "view": {
            "name": view,
            "options": options,
            "size_px": [int(size_px[0]), int(size_px[1])],
            "x_range": None if x_range is None else [float(v) for v in x_range],
            "y_range": None if y_range is None else [float(v) for v in y_range],
            "overlays": dict(overlays or {}),
        },
        "cursors": [dict(c) for c in (cursors or []) if c.get("view", view) == view],
        "annotations": [dict(a) for a in (annotations or []) if a.get("view") == view],
    }


def _relpath(path: Path, start: Path) -> str:
    import os

    return os.path.relpath(path, start)


def load_recipe(path: str | Path) -> dict[str, Any]:
    """Read and check a recipe file (JSON only; nothing in it is executed).

    Raises
    ------
    SnapshotError
        One sentence when the file is missing, not JSON or not a snapshot recipe.
    """
    path = Path(path)
    try:
        data = json.loads(path.read_text(encoding="utf-8"))
    except OSError as exc:
        raise SnapshotError(f"cannot read the recipe {path} ({exc.strerror}); check the path") from None
    except (UnicodeDecodeError, json.JSONDecodeError):
        raise SnapshotError(f"the recipe {path.name} is not valid JSON; give the .json file saved with the snapshot") from None
    check_recipe(data, source=path.name)
    return data


def check_recipe(data: Any, *, source: str = "the recipe") -> None:
    """Check the types of a recipe's parts; raise :class:`SnapshotError` naming the first problem."""
    def bad(what: str) -> SnapshotError:
        return SnapshotError(f"{source}: {what}; regenerate needs a recipe saved by gearbench")

    if not isinstance(data, dict):
        raise bad("not a JSON object")
    if data.get("schema") != SCHEMA:
        raise bad(f"schema {data.get('schema')!r} is not {SCHEMA!r}")
    for key, types in (("recording", dict), ("settings", dict), ("model", dict), ("view", dict),
                       ("cursors", list), ("annotations", list), ("caption", str)):
        if not isinstance(data.get(key), types):
            raise bad(f"{key!r} is missing or has the wrong type")
    if not isinstance(data["recording"].get("path"), str) or not data["recording"]["path"]:
        raise bad("'recording.path' is missing")
    if not isinstance(data["model"].get("toml"), str):
        raise bad("'model.toml' is missing")
    view = data["view"]
    if view.get("name") not in VIEW_CLASSES:
        raise bad(f"'view.name' {view.get('name')!r} is not one of {', '.join(VIEW_CLASSES)}")
    size = view.get("size_px")
    if not (isinstance(size, list) and len(size) == 2 and all(isinstance(v, int) and not isinstance(v, bool)
                                                                and MIN_SIZE_PX <= v <= MAX_SIZE_PX for v in size)):
        raise bad(f"'view.size_px' must be two whole numbers from {MIN_SIZE_PX} to {MAX_SIZE_PX}")
    for key in ("x_range", "y_range"):
        value = view.get(key)
        if value is not None and not (isinstance(value, list) and len(value) == 2
                                      and all(_finite_number(v) for v in value) and value[0] < value[1]):
            raise bad(f"'view.{key}' must be [low, high] with low < high")
    if not isinstance(view.get("options", {}), dict):
        raise bad("'view.options' must be an object")
    for item in data["annotations"]:
        if not (isinstance(item, dict) and _finite_number(item.get("x")) and _finite_number(item.get("y"))
                and isinstance(item.get("text"), str)):
            raise bad("an annotation needs numbers x, y and a text")


def _finite_number(value: Any) -> bool:
    return isinstance(value, (int, float)) and not isinstance(value, bool) and math.isfinite(value)


def settings_from_dict(data: dict[str, Any]) -> Any:
    """:class:`dsp.analysis.Settings` from a dict (lists become tuples; unknown keys are an error)."""
    from dsp.analysis import Settings

    names = {f.name for f in dataclasses.fields(Settings)}
    unknown = sorted(set(data) - names)
    if unknown:
        raise SnapshotError(f"unknown settings in the recipe: {', '.join(unknown)}; "
                            "it was saved by a newer gearbench, update this one")
    try:
        return Settings(**{k: tuple(v) if isinstance(v, list) else v for k, v in data.items()})
    except (TypeError, ValueError) as exc:
        raise SnapshotError(f"the recipe's settings cannot be used ({exc})") from None


def session_for_recipe(recipe: dict[str, Any], model: Any) -> Any:
    """A fresh session that shows the recipe's view with its options."""
    from workbench.session import Session, ViewOptions

    options = dict(recipe["view"].get("options") or {})
    shaft = options.pop("selected_shaft", None)
    known = {f.name for f in dataclasses.fields(ViewOptions)}
    values = {k: tuple(v) if isinstance(v, list) else v for k, v in options.items() if k in known}
    try:
        view_options = ViewOptions(**values)
    except (TypeError, ValueError) as exc:
        raise SnapshotError(f"the recipe's view options cannot be used ({exc})") from None
    session = Session(model=model, settings=settings_from_dict(recipe["settings"]), view_options=view_options,
                      current_view=recipe["view"]["name"])
    session.cursors = [dict(c) for c in recipe.get("cursors") or []]
    if shaft is not None and model is not None and shaft in model.shaft_names():
        session.selected_shaft = shaft
    elif model is not None and model.shafts:
        names = model.shaft_names()
        session.selected_shaft = model.tach.shaft if model.tach.shaft in names else names[0]
    return session


# ---------------------------------------------------------------------- drawing
def ensure_app(*, headless: bool = False):
    """The running ``QApplication``, or a new one.

    A new one uses Qt's offscreen platform when ``headless`` (the command line) or
    when there is no display; ``QT_QPA_PLATFORM`` set by the user wins.
    """
    import os
    import sys

    from PySide6.QtWidgets import QApplication

    no_display = not os.environ.get("DISPLAY") and not os.environ.get("WAYLAND_DISPLAY")
    if QApplication.instance() is None and (headless or (no_display and sys.platform.startswith("linux"))):
        os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")

    app = QApplication.instance() or QApplication([sys.argv[0] if sys.argv else "gearbench"])
    from workbench import theme

    theme.configure_pyqtgraph()
    return app


def quiet_platform_notes() -> None:
    """Drop the offscreen platform's "does not support propagateSizeHints()" notes (command line only).

    Every other Qt message still goes to stderr.
    """
    import sys

    from PySide6.QtCore import qInstallMessageHandler

    def handler(_kind, _context, message: str) -> None:
        if "propagateSizeHints" not in message:
            print(message, file=sys.stderr)

    qInstallMessageHandler(handler)


def make_view(recipe: dict[str, Any], analysis: Any, recording: Any = None):
    """Build the recipe's view on a fresh session, draw the analysis and apply options, cursors and annotations.

    Returns ``(view, session)``; the caller closes the view.
    """
    from PySide6.QtCore import Qt
    from PySide6.QtWidgets import QApplication, QLayout

    app = QApplication.instance()
    name = recipe["view"]["name"]
    cls = view_class(name)
    session = session_for_recipe(recipe, analysis.model)
    view = cls(session)
    view.setAttribute(Qt.WidgetAttribute.WA_DontShowOnScreen, True)
    width, height = recipe["view"]["size_px"]
    # the size of the recipe even below the control row's minimum (the controls are not drawn)
    view.layout().setSizeConstraint(QLayout.SizeConstraint.SetNoConstraint)
    view.setMinimumSize(0, 0)
    view.resize(int(width), int(height))
    view.show()
    view.show_analysis(analysis, recording)
    _apply_overlays(view, recipe["view"].get("overlays") or {})
    _apply_cursors(view, recipe.get("cursors") or [])
    _apply_annotations(view, session, recipe.get("annotations") or [])
    app.processEvents()
    _apply_ranges(view, recipe["view"])
    app.processEvents()
    return view, session


def _apply_ranges(view: Any, spec: dict[str, Any]) -> None:
    plot = getattr(view, "plot", None)
    if plot is None:
        return
    x_range, y_range = spec.get("x_range"), spec.get("y_range")
    if x_range is not None:
        plot.setXRange(*x_range, padding=0)
    if y_range is not None:
        plot.setYRange(*y_range, padding=0)


def _apply_overlays(view: Any, overlays: dict[str, bool]) -> None:
    overlay = getattr(view, "overlay", None)
    if overlay is None or not hasattr(overlay, "set_family_visible"):
        return
    for family, on in overlays.items():
        if family in getattr(overlay, "families", lambda: ())():
            overlay.set_family_visible(family, bool(on))


def _apply_cursors(view: Any, cursors: list[dict]) -> None:
    if not cursors:
        return
    cursor_set = getattr(view, "cursor_set", None)
    try:
        if cursor_set is None:
            from workbench.cursors import CursorSet

            cursor_set = CursorSet(view.plot, view=view.name, parent=view)
            view._snapshot_cursor_set = cursor_set
        cursor_set.from_list(cursors)
    except (ValueError, TypeError, KeyError) as exc:
        raise SnapshotError(f"a cursor of the recipe cannot be drawn ({exc})") from None


def _apply_annotations(view: Any, session: Any, annotations: list[dict]) -> None:
    if not annotations or getattr(view, "plot", None) is None:
        return
    from workbench.annotations import AnnotationLayer, view_axes

    layer = AnnotationLayer(view.plot, view.name, parent=view)
    layer.set_axes(view_axes(view))
    try:
        layer.set_annotations(annotations)
    except (ValueError, TypeError, KeyError) as exc:
        raise SnapshotError(f"an annotation of the recipe cannot be drawn ({exc})") from None
    view._snapshot_annotations = layer


def _plot_widgets(view: Any) -> list:
    import pyqtgraph as pg

    return [w for w in view.findChildren(pg.PlotWidget) if w.isVisible()]


def _header_text(view: Any, caption: str = "") -> str:
    shown = re.sub(r"<[^>]+>", "", getattr(getattr(view, "caption", None), "text", lambda: "")())
    parts = [view.title, html.unescape(shown).strip(), caption.strip()]
    return "  |  ".join(p for p in parts if p)


def _paint(view: Any, painter, width: int, header: str) -> None:
    from PySide6.QtCore import QRect, QRectF, Qt
    from PySide6.QtGui import QColor, QFont

    from workbench import theme

    painter.fillRect(QRect(0, 0, width, _picture_height(view)), QColor("#FFFFFF"))
    font = QFont(painter.font())
    font.setPointSizeF(9.5)
    painter.setFont(font)
    painter.setPen(QColor(theme.FOREGROUND))
    painter.drawText(QRect(8, 0, width - 16, HEADER_PX), int(Qt.AlignmentFlag.AlignVCenter | Qt.AlignmentFlag.AlignLeft),
                     header)
    y = HEADER_PX
    for widget in _plot_widgets(view):
        # QGraphicsView.render draws the scene as the view shows it (vector output in SVG)
        source = widget.viewport().rect()
        widget.render(painter, QRectF(0, y, source.width(), source.height()), source,
                      Qt.AspectRatioMode.IgnoreAspectRatio)
        y += widget.height()


def _picture_height(view: Any) -> int:
    return HEADER_PX + sum(w.height() for w in _plot_widgets(view))


def render(recipe: dict[str, Any], analysis: Any, recording: Any = None):
    """Draw the recipe's view of ``analysis`` as a ``QImage`` (RGB32).

    ``recording`` (a :class:`dsp.recording.Recording`) is needed by the waveform view only.
    """
    from PySide6.QtGui import QImage, QPainter

    ensure_app()
    view, _session = make_view(recipe, analysis, recording)
    try:
        width = view.width()
        image = QImage(width, _picture_height(view), QImage.Format.Format_RGB32)
        painter = QPainter(image)
        try:
            _paint(view, painter, width, _header_text(view, recipe.get("caption", "")))
        finally:
            painter.end()
        return image
    finally:
        view.close()
        view.deleteLater()


def render_svg(recipe: dict[str, Any], analysis: Any, path: str | Path, recording: Any = None) -> Path:
    """Draw the recipe's view of ``analysis`` into an SVG file."""
    from PySide6.QtCore import QRect, QSize
    from PySide6.QtGui import QPainter
    from PySide6.QtSvg import QSvgGenerator

    ensure_app()
    path = Path(path)
    view, _session = make_view(recipe, analysis, recording)
    try:
        width, height = view.width(), _picture_height(view)
        generator = QSvgGenerator()
        generator.setFileName(str(path))
        generator.setSize(QSize(width, height))
        generator.setViewBox(QRect(0, 0, width, height))
        generator.setTitle(recipe.get("caption") or view.title)
        generator.setDescription(f"gearbench snapshot of the {view.title} view")
        painter = QPainter(generator)
        try:
            _paint(view, painter, width, _header_text(view, recipe.get("caption", "")))
        finally:
            painter.end()
    finally:
        view.close()
        view.deleteLater()
    if not path.is_file():
        raise SnapshotError(f"could not write {path}; check the folder is writable")
    return path


def save_picture(recipe: dict[str, Any], analysis: Any, out: str | Path, recording: Any = None) -> Path:
    """Write the picture as PNG or SVG (by the file suffix)."""
    out = Path(out)
    suffix = out.suffix.lower()
    if suffix not in (".png", ".svg"):
        raise SnapshotError(f"output {out.name} must end in .png or .svg")
    if not out.parent.is_dir():
        raise SnapshotError(f"the folder {out.parent} does not exist; create it or choose another output")
    if suffix == ".svg":
        return render_svg(recipe, analysis, out, recording)
    image = render(recipe, analysis, recording)
    if not image.save(str(out), "PNG"):
        raise SnapshotError(f"could not write {out}; check the folder is writable")
    return out


# ---------------------------------------------------------------------- regenerate
def recipe_recording_path(recipe: dict[str, Any], recipe_path: str | Path | None = None) -> Path:
    """The recording of a recipe: beside the recipe when moved with it, else the saved absolute path."""
    rec = recipe["recording"]
    relative = rec.get("relative_path")
    if relative and recipe_path is not None:
        candidate = (Path(recipe_path).parent / relative)
        if candidate.is_file():
            return candidate
    return Path(rec["path"])


def analysis_for_recipe(recipe: dict[str, Any], recipe_path: str | Path | None = None, *,
                        allow_changed: bool = False):
    """Read the recipe's recording, check its SHA-256 and run the analysis with the recipe's settings.

    Returns ``(recording, analysis)``.
    """
    from dsp.analysis import analyze
    from dsp.model import loads_model
    from dsp.recording import read_recording

    path = recipe_recording_path(recipe, recipe_path)
    if not path.is_file():
        raise SnapshotError(f"the recording {path} of the recipe is missing; put it back or edit recording.path")
    recording = read_recording(path)
    saved = recipe["recording"].get("sha256")
    if saved and recording.sha256 != saved and not allow_changed:
        raise SnapshotError(f"the recording {path.name} changed since the snapshot (SHA-256 "
                            f"{recording.sha256[:12]}... instead of {str(saved)[:12]}...); "
                            "pass --allow-changed to draw it anyway")
    model = loads_model(recipe["model"]["toml"])
    return recording, analyze(recording, model, settings_from_dict(recipe["settings"]))


def regenerate(recipe_path: str | Path, out: str | Path, *, allow_changed: bool = False) -> Path:
    """Regenerate a snapshot picture from its recipe file (PNG or SVG by the suffix of ``out``)."""
    recipe = load_recipe(recipe_path)
    recording, analysis = analysis_for_recipe(recipe, recipe_path, allow_changed=allow_changed)
    ensure_app(headless=True)
    return save_picture(recipe, analysis, out, recording)


# ---------------------------------------------------------------------- from the window
def view_state(view: Any) -> dict[str, Any]:
    """Size, visible range and overlay families of a view on screen."""
    plot = getattr(view, "plot", None)
    state: dict[str, Any] = {"size_px": (max(view.width(), MIN_SIZE_PX), max(view.height(), MIN_SIZE_PX))}
    if plot is not None:
        (x0, x1), (y0, y1) = plot.getViewBox().viewRange()
        state["x_range"], state["y_range"] = (x0, x1), (y0, y1)
    overlay = getattr(view, "overlay", None)
    if overlay is not None and hasattr(overlay, "family_visible"):
        state["overlays"] = {f: bool(overlay.family_visible(f)) for f in overlay.families()}
    return state


def take_snapshot(*, session: Any, analysis: Any, view: Any, folder: str | Path, caption: str = "",
                  stem: str | None = None, recording: Any = None) -> dict[str, Any]:
    """Save a snapshot of a view on screen: recipe JSON, PNG and SVG in ``folder``.

    Returns the session entry ``{id, recipe, png, svg, caption, view}`` (paths as text).
    """
    from workbench.session_store import atomic_write_text

    if analysis is None:
        raise SnapshotError("nothing to snapshot yet: wait for the analysis to finish")
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    stem = stem or _next_stem(folder, view.name)
    state = view_state(view)
    recipe = build_recipe(session=session, analysis=analysis, view=view.name, caption=caption,
                          cursors=list(getattr(session, "cursors", None) or []),
                          annotations=list(getattr(session, "annotations", None) or []),
                          base_dir=folder, **state)
    recipe_path = folder / f"{stem}.json"
    png, svg = folder / f"{stem}.png", folder / f"{stem}.svg"
    save_picture(recipe, analysis, png, recording)
    render_svg(recipe, analysis, svg, recording)
    recipe["files"] = {"png": png.name, "svg": svg.name}
    atomic_write_text(recipe_path, json.dumps(recipe, indent=2, sort_keys=True) + "\n")
    return {"id": stem, "recipe": str(recipe_path), "png": str(png), "svg": str(svg), "caption": caption,
            "view": view.name}


def set_caption(entry: dict[str, Any], caption: str) -> dict[str, Any]:
    """A snapshot entry with a new caption; the recipe file on disk is updated too (atomically)."""
    from workbench.session_store import atomic_write_text

    path = Path(entry["recipe"])
    if path.is_file():
        recipe = load_recipe(path)
        recipe["caption"] = caption
        atomic_write_text(path, json.dumps(recipe, indent=2, sort_keys=True) + "\n")
    return dict(entry, caption=caption)


def _next_stem(folder: Path, view: str) -> str:
    n = 1
    while (folder / f"snapshot-{n:03d}-{view}.json").exists():
        n += 1
    return f"snapshot-{n:03d}-{view}"


__all__ = ["SCHEMA", "SnapshotError", "build_recipe", "load_recipe", "check_recipe", "settings_from_dict",
           "session_for_recipe", "make_view", "render", "render_svg", "save_picture", "regenerate",
           "analysis_for_recipe", "take_snapshot", "set_caption", "view_state"]
