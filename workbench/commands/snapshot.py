"""``gearbench snapshot RECIPE.json -o OUT.png``: regenerate a snapshot picture from its recipe.

Reads the recording named in the recipe, checks its SHA-256 (a changed recording
is refused unless ``--allow-changed``), runs the analysis with the recipe's
settings and draws the same view at the same size with the same options, cursors
and annotations, without a window (offscreen Qt).  The output is PNG or SVG by its
suffix.
"""

from __future__ import annotations

from pathlib import Path

HELP = "regenerate a snapshot picture from its recipe"


def add_arguments(parser) -> None:
    parser.add_argument("recipe", metavar="RECIPE.json", help="recipe saved beside a snapshot")
    parser.add_argument("-o", "--output", metavar="OUT.png", required=True, help="picture to write (.png or .svg)")
    parser.add_argument("--allow-changed", action="store_true",
                        help="draw even when the recording's SHA-256 differs from the recipe's")


def run(args) -> int:
    from workbench.snapshot import SnapshotError, quiet_platform_notes, regenerate

    out = Path(args.output)
    if out.suffix.lower() not in (".png", ".svg"):
        raise SnapshotError(f"output {out.name} must end in .png or .svg")
    quiet_platform_notes()
    written = regenerate(args.recipe, out, allow_changed=args.allow_changed)
    print(f"wrote {written}")
    return 0
