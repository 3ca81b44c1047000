"""Session files on disk: atomic save, load with validation, autosave and recovery.

A session file (schema ``"gearbench.session/1"``) is the whole document as JSON:
the keys of :meth:`workbench.session.Session.to_dict` (recording path, model,
settings, selected shaft, view options) plus the analyst's work kept beside them
(:data:`EXTRA_KEYS`): the recording's SHA-256, the baseline path, cursors,
annotations, snapshots, the findings text and the severity box's choices.

A session file is data only.  It is read with :func:`json.loads` and nothing in it
is executed or imported; every value is checked for its type before it is used.
Unknown keys are ignored and reported in :attr:`LoadedSession.warnings`.  A file
that cannot be read gives one :class:`SessionFileError` sentence and is left
untouched (it is only ever opened for reading).

Writes are atomic: the text goes to a temporary file in the same folder, which is
flushed, ``fsync``-ed and then renamed over the target with :func:`os.replace`, so
a crash leaves either the old file or the new one, never half of one.

Autosave: :class:`Autosaver` writes the document every :data:`AUTOSAVE_INTERVAL_S`
seconds while it has unsaved changes, to ``NAME.autosave.json`` beside the session
file, or (for a session never saved) to a per-recording file in the application
data folder the caller gives (the window passes Qt's ``AppDataLocation``).  On the
next start :func:`recovery_candidate` finds an autosave newer than its session.

No Qt is imported here; the window drives :class:`Autosaver` with a timer.
"""

from __future__ import annotations

import hashlib
import json
import logging
import math
import os
import time
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Callable

from dsp.errors import GearbenchError

log = logging.getLogger(__name__)

SCHEMA = "gearbench.session/1"
AUTOSAVE_SUFFIX = ".autosave.json"
AUTOSAVE_INTERVAL_S = 30.0
#: Keys :meth:`Session.to_dict` writes (the document core, owned by workbench.session).
CORE_KEYS = ("schema", "recording_path", "model_path", "model", "settings", "selected_shaft",
             "view_options", "current_view")
#: The analyst's work kept beside the core, with its JSON type and empty value.
EXTRA_KEYS: dict[str, tuple[type | tuple[type, ...], Any]] = {
    "recording_sha256": ((str, type(None)), None),
    "baseline_path": ((str, type(None)), None),
    "cursors": (list, []),
    "annotations": (list, []),
    "snapshots": (list, []),
    "findings": (str, ""),
    "severity": ((dict, type(None)), None),
}
#: Fields of one annotation and their JSON types (see workbench.annotations.Annotation).
ANNOTATION_FIELDS: dict[str, tuple[type, ...]] = {
    "id": (str,), "view": (str,), "kind": (str,), "x": (int, float), "y": (int, float), "text": (str,),
    "x_units": (str,), "y_units": (str,),
}
#: Fields of one snapshot entry of the session (see workbench.snapshot).
SNAPSHOT_FIELDS: dict[str, tuple[type, ...]] = {
    "id": (str,), "recipe": (str,), "png": (str,), "caption": (str,), "view": (str,),
}


class SessionFileError(GearbenchError):
    """A session file cannot be read or does not hold a gearbench session."""


@dataclass(frozen=True)
class LoadedSession:
    """What :func:`load_session` gives back.

    Attributes
    ----------
    session : workbench.session.Session
        The document, with the extra keys set as attributes.
    path : Path
        The file read.
    warnings : tuple of str
        Sentences about keys ignored or values dropped; the document is usable.
    recording_changed : bool
        True when the recording's SHA-256 differs from the one saved (see
        :func:`recording_status`).
    """

    session: Any
    path: Path
    warnings: tuple[str, ...] = ()
    recording_changed: bool = False


# ---------------------------------------------------------------------- writing
def atomic_write_text(path: str | Path, text: str) -> Path:
    """Write ``text`` (UTF-8) to ``path`` atomically (:func:`dsp.files.atomic_write_text`).

    Raises
    ------
    SessionFileError
        When the folder is missing or not writable (the old file, if any, is kept).
    """
    from dsp import files

    try:
        return files.atomic_write_text(path, text)
    except OSError as exc:
        raise SessionFileError(f"cannot write {path} ({exc.strerror}); choose a folder you can write to") from None


def session_to_document(session: Any) -> dict[str, Any]:
    """The JSON document of a session: :meth:`Session.to_dict` plus :data:`EXTRA_KEYS`.

    Extra values come from the session's attributes of the same name (missing ones
    are written empty), so the document is complete whatever the session class
    already writes itself.  File paths are written absolute.
    """
    doc = dict(session.to_dict())
    for key, (_types, empty) in EXTRA_KEYS.items():
        value = getattr(session, key, None)
        if value is None:
            value = doc.get(key, _copy_empty(empty))
        doc[key] = _plain(value)
    for key in ("recording_path", "model_path", "baseline_path"):
        if isinstance(doc.get(key), str) and doc[key] and not Path(doc[key]).is_absolute():
            doc[key] = str(Path(doc[key]).resolve())   # a session opened from another folder still finds them
    doc["schema"] = SCHEMA
    return doc


def dumps_session(session: Any) -> str:
    """The session file text (sorted keys, two-space indent, a final newline)."""
    return json.dumps(session_to_document(session), indent=2, sort_keys=True, allow_nan=False) + "\n"


def save_session(session: Any, path: str | Path) -> Path:
    """Save ``session`` to ``path`` atomically; records the recording's SHA-256 when it is missing."""
    if getattr(session, "recording_sha256", None) is None and getattr(session, "recording_path", None):
        try:
            session.recording_sha256 = file_sha256(session.recording_path)
        except OSError:
            pass   # a missing recording is saved as is; loading flags it
    return atomic_write_text(path, dumps_session(session))


# ---------------------------------------------------------------------- reading
def load_session(path: str | Path, *, check_recording: bool = True) -> LoadedSession:
    """Read a session file: JSON only, types checked, unknown keys ignored with a warning.

    Parameters
    ----------
    path : str or Path
        The session file.  It is only opened for reading.
    check_recording : bool
        Compare the recording's SHA-256 with the one saved (sets
        ``recording_changed`` and adds a warning when it differs).

    Raises
    ------
    SessionFileError
        One sentence when the file is missing, not JSON or not a gearbench session.
    """
    path = Path(path)
    try:
        raw = path.read_bytes()
    except OSError as exc:
        raise SessionFileError(f"cannot read the session file {path} ({exc.strerror}); check the path") from None
    try:
        data = json.loads(raw.decode("utf-8"))
    except (UnicodeDecodeError, json.JSONDecodeError) as exc:
        where = f" at line {exc.lineno}" if isinstance(exc, json.JSONDecodeError) else ""
        raise SessionFileError(f"the session file {path.name} is damaged (not valid JSON{where}); "
                               "open its autosave or another copy, the file was left as it is") from None
    session, warnings = session_from_document(data, source=path.name)
    changed = False
    if check_recording:
        status = recording_status(session)
        if status is not None:
            changed = status.startswith("the recording changed")
            warnings.append(status)
    for text in warnings:
        log.warning("%s: %s", path.name, text)
    return LoadedSession(session=session, path=path, warnings=tuple(warnings), recording_changed=changed)


def session_from_document(data: Any, *, source: str = "the session") -> tuple[Any, list[str]]:
    """Build a :class:`workbench.session.Session` from a parsed session document.

    Returns the session and a list of warning sentences.  Raises
    :class:`SessionFileError` when the document cannot be used at all.
    """
    from workbench.session import Session

    if not isinstance(data, dict):
        raise SessionFileError(f"{source} is not a gearbench session (a JSON object was expected); "
                               "choose a .json file saved by gearbench")
    if data.get("schema") != SCHEMA:
        raise SessionFileError(f"{source} is not a gearbench session (schema {data.get('schema')!r}, "
                               f"expected {SCHEMA!r}); choose a session file saved by gearbench")
    warnings: list[str] = []
    core_known = set(CORE_KEYS) | set(_session_core_keys(Session))
    unknown = sorted(set(data) - core_known - set(EXTRA_KEYS))
    if unknown:
        warnings.append(f"ignored unknown keys in {source}: {', '.join(unknown)}")
    core = {k: v for k, v in data.items() if k in core_known}
    for key, types in (("recording_path", (str, type(None))), ("model_path", (str, type(None))),
                       ("model", (dict, type(None))), ("settings", (dict, type(None))),
                       ("selected_shaft", (str, type(None))), ("view_options", (dict, type(None))),
                       ("current_view", (str,))):
        if key in core and not isinstance(core[key], types):
            raise SessionFileError(f"{source}: {key!r} has the wrong type ({type(core[key]).__name__}); "
                                   "the file was not written by gearbench or was edited by hand")
    _drop_unknown_fields(core, "settings", "dsp.analysis", "Settings", source, warnings)
    _drop_unknown_fields(core, "view_options", "workbench.session", "ViewOptions", source, warnings)
    try:
        session = Session.from_dict(core)
    except GearbenchError as exc:
        raise SessionFileError(f"{source}: {exc}") from None
    except (ValueError, TypeError, KeyError) as exc:
        raise SessionFileError(f"{source} holds a value gearbench cannot use ({exc}); "
                               "fix it in a text editor or start a new session") from None
    for key, (types, empty) in EXTRA_KEYS.items():
        value = data.get(key, _copy_empty(empty))
        if not isinstance(value, types):
            warnings.append(f"ignored {key!r} in {source}: expected {_type_names(types)}, "
                            f"got {type(value).__name__}")
            value = _copy_empty(empty)
        if key == "annotations":
            value = _valid_items(value, ANNOTATION_FIELDS, key, source, warnings)
        elif key == "snapshots":
            value = _valid_items(value, SNAPSHOT_FIELDS, key, source, warnings)
        elif key == "cursors":
            value = _valid_items(value, {}, key, source, warnings)
        setattr(session, key, value)
    return session, warnings


def _drop_unknown_fields(core: dict[str, Any], key: str, module: str, cls_name: str, source: str,
                         warnings: list[str]) -> None:
    """Leave out fields of a nested dataclass dict this version does not know (a newer file)."""
    import dataclasses
    import importlib

    value = core.get(key)
    cls = getattr(importlib.import_module(module), cls_name, None)
    if not isinstance(value, dict) or cls is None:
        return
    fields = {f.name: f for f in dataclasses.fields(cls)}
    unknown = sorted(set(value) - set(fields))
    if unknown:
        warnings.append(f"ignored unknown {key} keys in {source}: {', '.join(unknown)}")
    kept = {}
    for name, item in value.items():
        if name not in fields:
            continue
        f = fields[name]
        default = f.default if f.default is not dataclasses.MISSING else f.default_factory()  # type: ignore[misc]
        if _same_kind(item, default):
            kept[name] = item
        else:
            warnings.append(f"ignored {key}.{name} in {source}: {type(item).__name__} where "
                            f"{type(default).__name__ if default is not None else 'a number, a pair or null'} belongs")
    core[key] = kept


def _same_kind(value: Any, default: Any) -> bool:
    """A JSON value fits a dataclass field when it has the kind of the field's default.

    Numbers fit numbers (never booleans), pairs fit tuples, and a field whose
    default is ``None`` takes ``None``, a number or a pair of numbers.
    """
    def number(v: Any) -> bool:
        return isinstance(v, (int, float)) and not isinstance(v, bool) and math.isfinite(v)

    def numbers(v: Any) -> bool:
        return isinstance(v, list) and all(number(x) for x in v)

    if default is None:
        return value is None or number(value) or numbers(value)
    if isinstance(default, bool):
        return isinstance(value, bool)
    if isinstance(default, (int, float)):
        return number(value) and (isinstance(default, float) or float(value).is_integer())
    if isinstance(default, str):
        return isinstance(value, str)
    if isinstance(default, tuple):
        return numbers(value) and len(value) == len(default)
    return value is None or isinstance(value, type(default))


def _session_core_keys(session_cls: Any) -> tuple[str, ...]:
    """Keys the session class writes itself (it may learn new ones after this module)."""
    try:
        return tuple(session_cls().to_dict())
    except Exception:  # noqa: BLE001 - a broken default session must not stop loading
        return ()


def _valid_items(items: list, fields: dict[str, tuple[type, ...]], key: str, source: str,
                 warnings: list[str]) -> list[dict[str, Any]]:
    """Keep the dicts whose listed fields have the right types; say how many were dropped."""
    kept, dropped = [], 0
    for item in items:
        ok = isinstance(item, dict) and all(isinstance(k, str) for k in item)
        for name, types in fields.items():
            if not ok:
                break
            value = item.get(name)
            ok = isinstance(value, types) and not isinstance(value, bool)
            if ok and isinstance(value, float):
                ok = math.isfinite(value)
        if ok:
            kept.append(item)
        else:
            dropped += 1
    if dropped:
        warnings.append(f"ignored {dropped} {key} entr{'y' if dropped == 1 else 'ies'} in {source} "
                        "with missing or wrongly typed fields")
    return kept


# ---------------------------------------------------------------------- recording check
def file_sha256(path: str | Path) -> str:
    """SHA-256 of a file in hex (read in 1 MiB blocks)."""
    digest = hashlib.sha256()
    with open(path, "rb") as fh:
        for block in iter(lambda: fh.read(1 << 20), b""):
            digest.update(block)
    return digest.hexdigest()


def recording_status(session: Any) -> str | None:
    """A sentence when the session's recording is missing or changed since it was saved, else ``None``."""
    path = getattr(session, "recording_path", None)
    saved = getattr(session, "recording_sha256", None)
    if path is None:
        return None
    path = Path(path)
    if not path.is_file():
        return f"the recording {path} is missing; open it from its new place or restore it"
    if not saved:
        return None
    actual = file_sha256(path)
    if actual != saved:
        return (f"the recording changed since the session was saved (SHA-256 {actual[:12]}... instead of "
                f"{saved[:12]}...); results may differ from the saved snapshots, check the file")
    return None


# ---------------------------------------------------------------------- autosave
def autosave_path(*, session_path: str | Path | None = None, recording_path: str | Path | None = None,
                  app_data_dir: str | Path | None = None) -> Path | None:
    """Where the autosave of a document goes.

    ``NAME.autosave.json`` beside a saved session; for a session never saved, a file
    named after the recording (and a hash of its full path, so two recordings with
    the same name do not share it) in ``app_data_dir/autosave``; ``None`` when
    neither is known.
    """
    if session_path is not None:
        session_path = Path(session_path)
        stem = session_path.name[:-len(".json")] if session_path.name.endswith(".json") else session_path.name
        return session_path.with_name(stem + AUTOSAVE_SUFFIX)
    if recording_path is not None and app_data_dir is not None:
        full = str(Path(recording_path).resolve())
        tag = hashlib.sha256(full.encode("utf-8")).hexdigest()[:12]
        return Path(app_data_dir) / "autosave" / f"{Path(recording_path).stem}-{tag}{AUTOSAVE_SUFFIX}"
    return None


def write_autosave(session: Any, path: str | Path) -> Path:
    """Write the autosave file (atomic; the folder is created when missing)."""
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    return atomic_write_text(path, dumps_session(session))


def recovery_candidate(*, session_path: str | Path | None = None, recording_path: str | Path | None = None,
                       app_data_dir: str | Path | None = None) -> Path | None:
    """The autosave to offer on start: it exists and is newer than its session file (or there is none)."""
    auto = autosave_path(session_path=session_path, recording_path=recording_path, app_data_dir=app_data_dir)
    if auto is None or not auto.is_file():
        return None
    if session_path is not None and Path(session_path).is_file():
        if auto.stat().st_mtime_ns <= Path(session_path).stat().st_mtime_ns:
            return None
    return auto


def discard_autosave(path: str | Path | None) -> None:
    """Remove an autosave file (after a save, or when the analyst declines recovery)."""
    if path is None:
        return
    try:
        Path(path).unlink()
    except FileNotFoundError:
        pass


class Autosaver:
    """Writes the document every ``interval_s`` seconds while it has unsaved changes.

    An autosave comes ``interval_s`` after the first change not yet written, so no
    change stays only in memory for longer than that (plus the timer's period).

    The window calls :meth:`mark_dirty` on every change of the document and
    :meth:`tick` from a timer; :meth:`saved` after a real save.  Time comes from
    ``clock`` (``time.monotonic``) so tests can drive it.

    Parameters
    ----------
    session_fn : callable
        Returns the session to write.
    path_fn : callable
        Returns the autosave path (``None``: nowhere to write yet).
    interval_s : float
        Minimum time between two autosaves, in s.
    """

    def __init__(self, session_fn: Callable[[], Any], path_fn: Callable[[], Path | None], *,
                 interval_s: float = AUTOSAVE_INTERVAL_S, clock: Callable[[], float] = time.monotonic):
        if not interval_s > 0:
            raise ValueError(f"{interval_s=} must be positive")
        self.session_fn = session_fn
        self.path_fn = path_fn
        self.interval_s = float(interval_s)
        self.clock = clock
        self.dirty = False
        self.dirty_since_s: float | None = None
        self.last_write_s: float | None = None
        self.last_path: Path | None = None
        self.last_error: str | None = None

    def mark_dirty(self) -> None:
        if not self.dirty:
            self.dirty_since_s = self.clock()
        self.dirty = True

    def saved(self) -> None:
        """The document was saved: nothing to autosave, and the old autosave is obsolete."""
        self.dirty = False
        discard_autosave(self.last_path)
        self.last_path = None

    def tick(self, *, force: bool = False) -> Path | None:
        """Autosave now if there are unsaved changes and the interval has passed; returns the file written."""
        if not self.dirty:
            return None
        now = self.clock()
        if not force and self.dirty_since_s is not None and now - self.dirty_since_s < self.interval_s:
            return None
        path = self.path_fn()
        if path is None:
            return None
        try:
            written = write_autosave(self.session_fn(), path)
        except GearbenchError as exc:
            self.last_error = str(exc)
            log.warning("autosave failed: %s", exc)
            return None
        self.last_error = None
        self.dirty = False
        self.last_write_s = now
        self.last_path = written
        return written


# ---------------------------------------------------------------------- helpers
def _copy_empty(empty: Any) -> Any:
    return list(empty) if isinstance(empty, list) else empty


def _type_names(types: type | tuple[type, ...]) -> str:
    types = types if isinstance(types, tuple) else (types,)
    names = {"str": "text", "NoneType": "null", "list": "a list", "dict": "an object"}
    return " or ".join(names.get(t.__name__, t.__name__) for t in types)


def _plain(value: Any) -> Any:
    """Plain JSON types (tuples become lists, paths text): :func:`workbench.session.plain_json`."""
    from workbench.session import plain_json

    return plain_json(value)


__all__ = ["SCHEMA", "AUTOSAVE_INTERVAL_S", "EXTRA_KEYS", "SessionFileError", "LoadedSession",
           "atomic_write_text", "session_to_document", "dumps_session", "save_session", "load_session",
           "session_from_document", "file_sha256", "recording_status", "autosave_path", "write_autosave",
           "recovery_candidate", "discard_autosave", "Autosaver"]
