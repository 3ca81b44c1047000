"""One module per analysis view: waveform, speed, spectrum, tsa, envelope, cepstrum.

Each view is an :class:`workbench.views.base.AnalysisView`: a thin subscriber to the
session that draws the latest analysis and writes the analyst's choices back to the
session.  Adding a view: subclass ``AnalysisView`` (set ``name``, ``title`` and
``listens_to``; build plot items once in ``__init__``; update them with ``setData``
in ``refresh``) and add one line to :data:`VIEW_CLASSES`.  The window's tabs, the
session's view names (``workbench.session.VIEW_NAMES``) and the snapshots all read
that one table.

This module imports no Qt: :func:`view_class` imports a view's module when it is needed.
"""

from __future__ import annotations

#: Every view, in tab order: session name -> (module, class name).
VIEW_CLASSES: dict[str, tuple[str, str]] = {
    "waveform": ("workbench.views.waveform", "WaveformView"),
    "speed": ("workbench.views.speed", "SpeedView"),
    "spectrum": ("workbench.views.spectrum", "SpectrumView"),
    "tsa": ("workbench.views.tsa", "TsaView"),
    "envelope": ("workbench.views.envelope", "EnvelopeView"),
    "cepstrum": ("workbench.views.cepstrum", "CepstrumView"),
}


def view_class(name: str) -> type:
    """The view class registered as ``name`` (imports its module, and so Qt)."""
    import importlib

    module, cls_name = VIEW_CLASSES[name]
    return getattr(importlib.import_module(module), cls_name)


__all__ = ["VIEW_CLASSES", "view_class"]
