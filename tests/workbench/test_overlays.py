"""Tests of workbench.overlays: model lines on a plot, families, colours, speed spread, hover."""

from __future__ import annotations

import dataclasses
from pathlib import Path

import numpy as np
import pytest

pg = pytest.importorskip("pyqtgraph")

from dsp.kinematics import frequency_table  # noqa: E402
from dsp.model import load_model  # noqa: E402
from workbench import theme  # noqa: E402
from workbench.overlays import FAMILIES, ModelOverlay  # noqa: E402

DATA = Path(__file__).resolve().parents[1] / "data"


@pytest.fixture(scope="module")
def train():
    return load_model(DATA / "pair_40_15.toml")


@pytest.fixture
def plot(qtbot):
    widget = pg.PlotWidget()
    qtbot.addWidget(widget)
    widget.resize(800, 400)
    item = widget.getPlotItem()
    item.plot(np.linspace(0, 100, 101), np.ones(101))
    yield item  # the fixture keeps the widget alive while the test runs
    del widget


def _with_teeth(train, *, driver=None, driven=None):
    mesh = train.meshes[0]
    mesh = dataclasses.replace(mesh, driver_teeth=driver or mesh.driver_teeth,
                               driven_teeth=driven or mesh.driven_teeth)
    return dataclasses.replace(train, meshes=(mesh,))


def test_lines_at_the_domain_reference_frequencies(plot, train):
    overlay = ModelOverlay(plot, n_harmonics=3, n_sidebands=1)
    overlay.set_table(frequency_table(train, 50.0))
    mesh = overlay.positions("mesh harmonics")
    for f in (2000.0, 4000.0, 6000.0):  # domain reference 1.1: GMF 2000 Hz and harmonics
        assert np.min(np.abs(mesh - f)) < 1e-9
    side = overlay.positions("sidebands")
    for f in (1950.0, 2050.0, 2000 - 400 / 3, 2000 + 400 / 3):  # domain reference 1.1: 1950/2050, 1866.67/2133.33
        assert np.min(np.abs(side - f)) < 1e-9
    assert side.size == 3 * 2 * 2  # harmonics x shafts x sides


def test_overlay_follows_a_tooth_count_change_without_new_items(plot, train):
    overlay = ModelOverlay(plot, n_harmonics=3, n_sidebands=1)
    overlay.set_table(frequency_table(train, 50.0))
    before = overlay.items()
    # 15T -> 16T pinion: output rate 2000/16 = 125 Hz, so its sidebands move to 1875/2125 Hz (domain reference 1.1 formulas)
    overlay.set_table(frequency_table(_with_teeth(train, driven=16), 50.0))
    side = overlay.positions("sidebands")
    assert np.min(np.abs(side - 1875.0)) < 1e-9 and np.min(np.abs(side - 1866.67)) > 1.0
    # 41T gear: GMF = 50 x 41 = 2050 Hz (domain reference 1.1 formula)
    overlay.set_table(frequency_table(_with_teeth(train, driver=41), 50.0))
    assert overlay.positions("mesh harmonics")[-3:] == pytest.approx([2050.0, 4100.0, 6150.0])
    assert overlay.items() == before  # same items, updated with setData


def test_one_item_per_family_and_colour(plot, train):
    overlay = ModelOverlay(plot, visible=FAMILIES)
    overlay.set_table(frequency_table(train, 50.0))
    n_shafts = 2
    # mesh harmonics: one neutral item; sidebands, shaft harmonics: one per shaft; bearings: one (output)
    assert len(overlay.items()) == 2 * (1 + n_shafts + n_shafts + 1)
    colours = overlay.shaft_colours()
    assert colours == {"input": theme.SHAFT_COLOURS[0], "output": theme.SHAFT_COLOURS[1]}
    key_items = overlay._items[("sidebands", "input")]
    assert key_items.lines.opts["pen"].color().name().lower() == theme.SHAFT_COLOURS[0].lower()
    # every line of a family lies in one item: 5 harmonics x 3 sidebands x 2 sides for the input shaft
    x, _ = key_items.lines.getData()
    assert x.size == 2 * 5 * 3 * 2


def test_order_axis_is_exact_and_hz_axis_shows_the_spread(plot, train):
    table = frequency_table(train, 50.0)
    overlay = ModelOverlay(plot, n_harmonics=2, n_sidebands=1)
    overlay.set_table(table, axis="order", spread=(48.0, 52.0))
    # GMF is 40 orders of the input shaft; output sidebands at 40 +- 40/15 (domain reference 1.1)
    assert overlay.positions("mesh harmonics")[-2:] == pytest.approx([40.0, 80.0])
    assert np.min(np.abs(overlay.positions("sidebands") - (40 + 40 / 15))) < 1e-12
    spread_x, _ = overlay._items[("mesh harmonics", "")].spread.getData()
    assert spread_x is None or len(spread_x) == 0  # no spread on orders
    overlay.set_table(table, axis="hz", spread=(48.0, 52.0))
    items = overlay._items[("mesh harmonics", "")]
    xs, ys = items.spread.getData()
    i = int(np.argmin(np.abs(items.x - 2000.0)))
    # a line at 2000 Hz for 50 Hz spans 2000 x 48/50 .. 2000 x 52/50 (GMF proportional to speed, domain reference 1.1)
    assert xs[2 * i] == pytest.approx(1920.0) and xs[2 * i + 1] == pytest.approx(2080.0)
    assert np.all(ys == ys[0])
    overlay.set_table(table, axis="cpm")
    assert overlay.positions("mesh harmonics")[-2:] == pytest.approx([120000.0, 240000.0])  # 2000 Hz x 60


def test_family_switches(plot, train, qtbot):
    overlay = ModelOverlay(plot, n_harmonics=2, n_sidebands=1)
    overlay.set_table(frequency_table(train, 50.0))
    legend = overlay.legend_widget()
    qtbot.addWidget(legend)
    n_all = overlay.visible_positions().size
    legend.boxes["sidebands"].setChecked(False)
    assert not overlay.family_visible("sidebands")
    assert not overlay._items[("sidebands", "input")].lines.isVisible()
    assert overlay.visible_positions().size == n_all - 2 * 2 * 2
    overlay.set_family_visible("bearings", True)
    assert legend.boxes["bearings"].isChecked()
    assert [label.property("shaft") for label in legend.shaft_labels] == ["input", "output"]
    assert "output" in legend.shaft_labels[1].text()
    assert theme.SHAFT_COLOURS[1] in legend.shaft_labels[1].text()  # the swatch has the shaft's colour
    assert legend.menu_button.text() == "Lines 2/5"  # mesh harmonics and bearings
    assert "mesh harmonics, bearings" in legend.menu_button.toolTip()  # the long form is the tooltip
    with pytest.raises(ValueError, match="Invalid value for 'family'"):
        overlay.set_family_visible("gears", True)


def test_overlay_does_not_change_the_autorange(plot, train):
    overlay = ModelOverlay(plot, visible=FAMILIES)
    overlay.set_table(frequency_table(train, 50.0))
    plot.getViewBox().autoRange()
    (x0, x1), _ = plot.getViewBox().viewRange()
    assert x1 < 200.0  # the data end at 100 Hz; model lines up to 10 kHz were added with ignoreBounds


def test_hover_names_the_line(plot, train, qtbot):
    overlay = ModelOverlay(plot, n_harmonics=2, n_sidebands=1)
    overlay.set_table(frequency_table(train, 50.0))
    assert overlay.describe_at(1950.3, 1.0).startswith("1 x GMF main pair - 1 x input shaft rate")
    assert overlay.describe_at(1234.0, 1.0) is None
    plot.setXRange(1900, 2100, padding=0)
    plot.setYRange(0, 2, padding=0)
    widget = plot.getViewWidget()
    widget.show()
    qtbot.waitExposed(widget)
    vb = plot.getViewBox()
    scene_pos = vb.mapViewToScene(pg.Point(2050.0, 1.0))
    plot.scene().sigMouseMoved.emit(scene_pos)
    assert overlay.hover_item.isVisible()
    assert "1 x GMF main pair + 1 x input shaft rate" in overlay.hover_item.textItem.toPlainText()
    plot.scene().sigMouseMoved.emit(vb.mapViewToScene(pg.Point(1990.0, 1.0)))
    assert not overlay.hover_item.isVisible()


def test_lines_follow_the_view_height(plot, train):
    overlay = ModelOverlay(plot)
    overlay.set_table(frequency_table(train, 50.0))
    plot.setYRange(-3.0, 7.0, padding=0)
    _, y = overlay._items[("mesh harmonics", "")].lines.getData()
    assert y.min() == pytest.approx(-3.0) and y.max() == pytest.approx(7.0)
    overlay.set_table(None)
    assert overlay.visible_positions().size == 0


def test_mesh_harmonics_are_labelled_in_view_without_overlap(plot, train):
    # GMF = 40 x 50 Hz = 2000 Hz (domain reference 1.1); the labels name the lines in view
    overlay = ModelOverlay(plot, n_harmonics=3, n_sidebands=1)
    plot.setXRange(0, 7000, padding=0)
    overlay.set_table(frequency_table(train, 50.0))
    shown = overlay.label_texts()
    xs = [x for x, _ in shown]
    assert xs == pytest.approx([2000.0, 4000.0, 6000.0])  # domain reference 1.1: GMF and harmonics
    assert [t for _, t in shown][0].startswith("GMF ") and shown[1][1].startswith("2× GMF ")
    # zoomed onto the second harmonic: only its label stays
    plot.setXRange(3500, 4500, padding=0)
    assert [x for x, _ in overlay.label_texts()] == pytest.approx([4000.0])
    # a hidden family loses its labels too
    overlay.set_family_visible("mesh harmonics", False)
    assert overlay.label_texts() == []


def test_labels_never_share_a_row_where_they_would_overlap(plot, train):
    # 200 harmonics crowd the axis: at most N_LABELS, and labels in one row stay apart
    from workbench.overlays import N_LABELS

    overlay = ModelOverlay(plot, n_harmonics=200, n_sidebands=0)
    plot.setXRange(0, 400_000, padding=0)
    overlay.set_table(frequency_table(train, 50.0))
    labels = [t for t in overlay.labels if t.isVisible()]
    assert 0 < len(labels) <= N_LABELS
    px = abs(plot.getViewBox().viewPixelSize()[0])
    rows: dict[float, list[tuple[float, str]]] = {}
    for t in labels:
        # the drawn width of the label's text item, screen px
        rows.setdefault(round(t.pos().y(), 9), []).append((t.pos().x() / px, t.textItem.boundingRect().width()))
    for row in rows.values():
        row.sort()
        for (x0, width0), (x1, _) in zip(row, row[1:]):
            assert x1 - x0 >= width0  # common practice, no source: labels in one row must not overlap


def test_label_filter_names_only_one_shafts_lines(plot, train):
    # input at 50 Hz drives 40/15: output at 50 x 40/15 = 133.3 Hz (domain reference 1.1)
    overlay = ModelOverlay(plot, n_harmonics=5, n_sidebands=0, visible=("shaft harmonics",),
                           labelled=("shaft harmonics",))
    plot.setXRange(0, 1000, padding=0)
    overlay.set_table(frequency_table(train, 50.0))
    overlay.set_label_filter(shaft="output", max_harmonic=2)
    shown = overlay.label_texts()
    assert [x for x, _ in shown] == pytest.approx([50 * 40 / 15, 2 * 50 * 40 / 15])  # domain reference 1.1
    assert all("output" in text for _, text in shown)
    overlay.set_label_filter()
    assert len(overlay.label_texts()) > 2   # without the filter every shaft's harmonics in view are named
