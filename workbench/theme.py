"""Colours and plot styling of the workbench.

Each shaft gets a colour by its position in the model, used for its curves, tooth
ticks, rahmonic marks and table rows, so that one shaft looks the same everywhere.
The palette is the Okabe-Ito colour-blind-safe set (Okabe & Ito 2008, "Color
Universal Design"), on a light background.
"""

from __future__ import annotations

# Okabe & Ito 2008, colour-blind-safe palette (black left out: it is the text colour)
SHAFT_COLOURS = (
    "#0072B2",  # blue
    "#D55E00",  # vermilion
    "#009E73",  # bluish green
    "#CC79A7",  # reddish purple
    "#E69F00",  # orange
    "#56B4E9",  # sky blue
    "#F0E442",  # yellow (last: weak on white)
)

BACKGROUND = "#FFFFFF"
FOREGROUND = "#202020"
GRID_ALPHA = 0.25
CURVE = "#1F3A5F"            # the measured signal
CURVE_SECONDARY = "#8A8F98"  # context curves (whole record, other signal)
REGION = (31, 119, 180, 22)  # time range / band regions (RGBA)
REGION_BAND = (213, 94, 0, 45)
MARK_REPAIRED = "#D55E00"
BANNER_WARNING = "#FFF4D6"
BANNER_ERROR = "#FDE2E1"
BANNER_INFO = "#E6F0FA"


def shaft_colour(model, shaft: str | None) -> str:
    """The colour of ``shaft`` in ``model`` (the first colour when unknown)."""
    if model is None or shaft is None:
        return SHAFT_COLOURS[0]
    names = list(model.shaft_names())
    index = names.index(shaft) if shaft in names else 0
    return SHAFT_COLOURS[index % len(SHAFT_COLOURS)]


def gear_colours(n: int, avoid: str | None = None) -> list[str]:
    """``n`` distinct colours for the gears on one shaft (tooth ticks), other than ``avoid``."""
    usable = [c for c in SHAFT_COLOURS[:-1] if c != avoid]
    return [usable[i % len(usable)] for i in range(n)]


def configure_pyqtgraph() -> None:
    """Global pyqtgraph options: light background, antialiased curves."""
    import pyqtgraph as pg

    pg.setConfigOptions(background=BACKGROUND, foreground=FOREGROUND, antialias=False,
                        useNumba=False)


def style_plot(plot_item, *, x_label: str = "", y_label: str = "", title: str | None = None) -> None:
    """Axis labels, grid and margins shared by every view."""
    plot_item.showGrid(x=True, y=True, alpha=GRID_ALPHA)
    if x_label:
        plot_item.setLabel("bottom", x_label)
    if y_label:
        plot_item.setLabel("left", y_label)
    if title:
        plot_item.setTitle(title, color=FOREGROUND, size="10pt")
    for name in ("left", "bottom"):
        axis = plot_item.getAxis(name)
        axis.setTextPen(FOREGROUND)
        axis.setPen(FOREGROUND)
    plot_item.getAxis("left").setWidth(64)
    plot_item.getAxis("left").enableAutoSIPrefix(False)
