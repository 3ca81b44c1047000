"""The ``gearbench`` command line.

Subcommands live in ``workbench/commands/<name>.py``; only the module of the command
being run is imported, so that light commands start fast.  Bad input exits with
status 2 and one line on stderr that says what is wrong and how to fix it.
"""

from __future__ import annotations

import argparse
import importlib
import sys

from dsp import __version__

# name -> one-line help.  The module workbench.commands.<name> implements it.
COMMANDS: dict[str, str] = {
    "open": "open a recording in the workbench window",
    "info": "file facts, tach quality and shaft speeds of a recording",
    "frequencies": "every characteristic frequency of a gear-train model at a speed",
    "analyze": "analyse a recording against its gear-train model",
    "simulate": "simulate a recording of a gear-train model, healthy or with a fault",
    "snapshot": "regenerate a snapshot picture from its recipe",
    "report": "write the PDF or HTML report of a recording",
}

EXIT_BAD_INPUT = 2


def _top_parser() -> argparse.ArgumentParser:
    epilog = "commands:\n" + "\n".join(f"  {n:<12} {h}" for n, h in COMMANDS.items())
    epilog += "\n\nWith no command, gearbench opens the workbench on the bundled demo recording."
    parser = argparse.ArgumentParser(
        prog="gearbench",
        description="Inspect one gearbox vibration recording.",
        epilog=epilog,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    parser.add_argument("--version", action="version", version=f"gearbench {__version__}")
    return parser


def _command_module(name: str):
    return importlib.import_module(f"workbench.commands.{name.replace('-', '_')}")


def fail(message: str) -> int:
    """Print one line for the user on stderr and return the bad-input exit status."""
    print(f"gearbench: {message}", file=sys.stderr)
    return EXIT_BAD_INPUT


def main(argv: list[str] | None = None) -> int:
    argv = list(sys.argv[1:] if argv is None else argv)
    top = _top_parser()
    if not argv:
        argv = ["open"]
    if argv[0].startswith("-"):
        top.parse_args(argv)  # --help / --version exit here
        top.print_usage(sys.stderr)
        return EXIT_BAD_INPUT
    name = argv[0]
    if name not in COMMANDS:
        return fail(f"unknown command {name!r}; choose one of: {', '.join(COMMANDS)} (see gearbench --help)")
    try:
        module = _command_module(name)
    except ModuleNotFoundError as exc:
        if exc.name and exc.name.startswith("workbench.commands"):
            return fail(f"the {name!r} command is not available in this version")
        raise
    parser = argparse.ArgumentParser(prog=f"gearbench {name}", description=COMMANDS[name])
    module.add_arguments(parser)
    args = parser.parse_args(argv[1:])
    from dsp.errors import GearbenchError

    try:
        status = int(module.run(args) or 0)
        sys.stdout.flush()  # a closed pipe shows here, inside the handler below
        return status
    except GearbenchError as exc:
        return fail(str(exc))
    except FileNotFoundError as exc:
        return fail(f"file not found: {exc.filename}; check the path")
    except KeyboardInterrupt:
        return 130
    except BrokenPipeError:
        # the reader stopped early (``| head``): end quietly.  Python docs, signal module,
        # "Note on SIGPIPE": point stdout at devnull so the final flush does not raise again.
        import os

        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
        return 0


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
