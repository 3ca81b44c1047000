"""gearbench numeric core.

Pure signal processing and gear-train kinematics for one gearbox recording.
This package imports only the standard library, numpy, scipy and soundfile
(plus tomllib/tomli-w for model files); it never imports Qt or ``workbench``.
"""

__version__ = "0.1.0"
