"""One module per ``gearbench`` subcommand.

Each module defines ``HELP`` (one line), ``add_arguments(parser)`` and
``run(args) -> int``.  Modules import heavy packages inside ``run`` only.
"""
