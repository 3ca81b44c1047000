"""User-facing errors of the numeric core.

Every domain problem raises a :class:`GearbenchError` (or a subclass) whose
message says what is wrong and how to fix it.  Model problems carry the field
path (``meshes[1].driven_teeth``) so the side form can mark the field.
The command line prints ``str(error)`` on one line and exits with status 2.
"""

from __future__ import annotations

from dataclasses import dataclass


class GearbenchError(Exception):
    """A problem the user can act on.

    Parameters
    ----------
    message : str
        One sentence: what is wrong and how to fix it.
    field : str, optional
        Model field path such as ``"meshes[1].driven_teeth"``, when the problem
        belongs to one field.
    """

    def __init__(self, message: str, *, field: str | None = None):
        super().__init__(message)
        self.message = message
        self.field = field

    def __str__(self) -> str:
        if self.field:
            return f"{self.field}: {self.message}"
        return self.message


class RecordingError(GearbenchError):
    """The recording file cannot be read or holds unusable data."""


class TachError(GearbenchError):
    """The tachometer channel gives no usable speed."""


class AnalysisError(GearbenchError):
    """An analysis step cannot run on the data and settings given."""


class Cancelled(GearbenchError):
    """The caller asked the running analysis to stop."""

    def __init__(self, message: str = "analysis cancelled"):
        super().__init__(message)


@dataclass(frozen=True)
class Problem:
    """One validation finding about a model.

    ``severity`` is ``"error"`` (the model cannot be used) or ``"warning"``
    (it can be used, but the user should look).
    """

    field: str
    message: str
    severity: str = "error"

    def __str__(self) -> str:
        return f"{self.field}: {self.message}" if self.field else self.message


class ModelError(GearbenchError):
    """The gear-train model is invalid; ``problems`` lists every finding."""

    def __init__(self, problems: list[Problem] | tuple[Problem, ...]):
        self.problems = tuple(problems)
        errors = [p for p in self.problems if p.severity == "error"] or list(self.problems)
        first = errors[0]
        more = len(errors) - 1
        text = str(first) + (f" (and {more} more problem{'s' if more > 1 else ''})" if more else "")
        super().__init__(text)
        self.field = None  # the text already carries the first field path

    def __str__(self) -> str:
        return self.message
