"""``gearbench report RECORDING --model M [--session S] -o OUT.pdf|OUT.html``.

Analyses the recording (with the session's model and settings when a session is
given) and writes the report: machine and measurement facts, the model and its
frequency table, indicators with what they mean, sideband ownership, suspects
with their evidence, the pictures (the session's snapshots, or the default
spectrum, TSA and envelope pictures drawn without a window), the findings and
the cautions.  PDF through Qt; HTML self-contained.
"""

from __future__ import annotations

from pathlib import Path

HELP = "write the PDF or HTML report of a recording"


def add_arguments(parser) -> None:
    parser.add_argument("recording", metavar="RECORDING", help="recording file (FLAC, WAV, ...)")
    parser.add_argument("--model", metavar="M", default=None,
                        help="gear-train model file (TOML); default: the session's model, else the .toml beside the recording")
    parser.add_argument("--session", metavar="S", default=None,
                        help="session file (JSON): its settings, snapshots and findings go in the report")
    parser.add_argument("-o", "--output", metavar="OUT", required=True, help="report file to write (.pdf or .html)")


def run(args) -> int:
    from workbench.report import ReportError, collect, write_report

    out = Path(args.output)
    if out.suffix.lower() not in (".pdf", ".html", ".htm"):
        kind = f"a {out.suffix} file" if out.suffix else "a file without a type"
        raise ReportError(f"the report cannot be written as {kind} ({out.name}); use an output name "
                          "ending in .pdf or .html")
    if not out.parent.is_dir():
        raise ReportError(f"the folder {out.parent} does not exist; create it or choose another output")
    if args.model is not None and not Path(args.model).is_file():
        raise ReportError(f"model file not found: {args.model}; check the path")
    from workbench.snapshot import ensure_app, quiet_platform_notes

    ensure_app(headless=True)
    quiet_platform_notes()
    inp, _recording = collect(args.recording, args.model, session_path=args.session)
    written = write_report(inp, out)
    print(f"wrote {written}")
    return 0
