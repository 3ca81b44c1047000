"""gearbench desktop workbench and command line."""

from dsp import __version__

__all__ = ["__version__"]
