"""One module per analysis view: waveform, speed, spectrum, tsa, envelope, cepstrum.

Each view is an :class:`workbench.views.base.AnalysisView`: a thin subscriber to the
session that draws the latest analysis and writes the analyst's choices back to the
session.  Adding a view: subclass ``AnalysisView`` (set ``name``, ``title`` and
``listens_to``; build plot items once in ``__init__``; update them with ``setData``
in ``refresh``), add its name to ``workbench.session.VIEW_NAMES`` and its class to
the list in ``MainWindow._build_central``.
"""
