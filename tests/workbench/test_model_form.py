"""Tests of the gear-train side form and the frequency table view (pytest-qt, offscreen)."""

from __future__ import annotations

import math
from pathlib import Path

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from PySide6.QtCore import Qt
from PySide6.QtGui import QGuiApplication
from PySide6.QtWidgets import QComboBox, QLineEdit

from dsp.kinematics import frequency_table
from dsp.model import Bearing, GearTrain, Mesh, Planetary, Sensor, Shaft, Tach, load_model
from workbench.model_form import FrequencyTablePanel, FrequencyTableView, ModelForm
from workbench.model_form_fields import SECTION_COLUMNS, format_value, parse_cell

DATA = Path(__file__).resolve().parents[1] / "data"

PAIR = GearTrain(
    name="40/15 pair",
    sensors=(Sensor("out DE", 0, scale=10.0, units="g", location="output DE", direction="radial"),
             Sensor("out axial", 1, scale=98.0665, units="m/s2", direction="axial")),
    tach=Tach(shaft="input", channel=2, pulses_per_rev=1, edge="rising"),
    shafts=(Shaft("input"), Shaft("output")),
    meshes=(Mesh("main pair", "input", 40, "output", 15),),
    bearings=(Bearing("out DE", "output", 9, 7.94, 39.04, 0.0),),
)

PLANETARY = GearTrain(
    name="planetary",
    sensors=(Sensor("ring", 0),),
    tach=Tach(shaft="sun", nominal_rpm=1500.0),
    shafts=(Shaft("sun"), Shaft("carrier")),
    planetary=(Planetary("p1", "sun", 20, 30, 4, 80, "carrier"),),
)


@pytest.fixture
def form(qtbot):
    f = ModelForm()
    qtbot.addWidget(f)
    f.resize(520, 900)
    f.show()
    return f


def _editor(table):
    found = [w for kind in (QLineEdit, QComboBox) for w in table.viewport().findChildren(kind)
             if w.isVisible() and w.parent() is table.viewport()]
    assert len(found) == 1
    return found[0]


def type_in_cell(qtbot, form, section, row, key, text):
    """Edit one cell the way the analyst does: open its editor, type, press Enter."""
    t = form.tables[section]
    table = t.table
    col = t.column_index(key)
    table.setCurrentCell(row, col)
    table.editItem(table.item(row, col))
    editor = _editor(table)
    editor.selectAll()
    qtbot.keyClicks(editor, text)
    qtbot.keyClick(editor, Qt.Key.Key_Return)


def cell_text(form, section, row, key):
    t = form.tables[section]
    return t.table.item(row, t.column_index(key)).text()


# ---- round trips --------------------------------------------------------------------

@pytest.mark.parametrize("train", [PAIR, PLANETARY, GearTrain()], ids=["pair", "planetary", "empty"])
def test_set_model_then_draft_is_the_same_model(form, train):
    form.set_model(train)
    assert form.draft() == train  # common practice, no source: an editor must not alter what it shows


@pytest.mark.parametrize("path", sorted(DATA.glob("*.toml")), ids=lambda p: p.stem)
def test_model_files_round_trip_through_the_form(form, path):
    train = load_model(path)
    form.set_model(train)
    assert form.draft() == train  # common practice, no source
    assert form.model() == train
    assert [p for p in form.problems() if p.severity == "error"] == []


def test_save_then_load_gives_the_same_model(form, qtbot, tmp_path):
    form.set_model(PAIR)
    path = tmp_path / "pair.toml"
    assert form.save_file(path)
    other = ModelForm()
    qtbot.addWidget(other)
    with qtbot.waitSignal(other.model_changed, timeout=1000) as blocker:
        assert other.load_file(path)
    assert blocker.args[0] == PAIR  # common practice, no source: save/load is an exact round trip
    assert other.model() == PAIR and other.draft() == PAIR


@given(st.floats(allow_nan=False, allow_infinity=False))
@settings(max_examples=200, deadline=None)
def test_float_text_round_trip(x):
    col = SECTION_COLUMNS["bearings"][3]
    # Python float repr is the shortest string that reads back exactly (Python docs, repr of float)
    assert parse_cell(format_value(x), col) == x


@given(st.integers(min_value=-10**12, max_value=10**12))
@settings(max_examples=100, deadline=None)
def test_int_text_round_trip(n):
    col = SECTION_COLUMNS["meshes"][2]
    value = parse_cell(format_value(n), col)
    assert value == n and type(value) is int  # Python docs: int(str(n)) == n


# ---- editing --------------------------------------------------------------------------

def test_editing_a_tooth_count_emits_the_new_model(form, qtbot):
    form.set_model(PAIR)
    with qtbot.waitSignal(form.model_changed, timeout=2000) as blocker:
        type_in_cell(qtbot, form, "meshes", 0, "driver_teeth", "41")
    new = blocker.args[0]
    assert isinstance(new, GearTrain)
    assert new.meshes[0].driver_teeth == 41
    assert form.model() == new
    # GMF = f_input * Z_driver = 50 Hz * 41 (domain reference 1.1; common practice, no source)
    assert frequency_table(new, 50.0).meshes[0].gmf_hz == pytest.approx(2050.0, rel=1e-12)


def test_edits_settle_before_the_model_is_emitted(form, qtbot):
    form.set_model(PAIR)
    emitted = []
    form.model_changed.connect(emitted.append)
    for text in ("3", "39"):
        type_in_cell(qtbot, form, "meshes", 0, "driver_teeth", text)
    assert emitted == []  # debounce: nothing before the edit settles (common practice, no source)
    qtbot.waitUntil(lambda: len(emitted) == 1, timeout=2000)
    qtbot.wait(250)
    assert len(emitted) == 1 and emitted[0].meshes[0].driver_teeth == 39


@pytest.mark.parametrize("typed", ["19.5", "abc"])
def test_bad_tooth_text_is_marked_kept_and_reported(form, qtbot, typed):
    form.set_model(PAIR)
    with qtbot.assertNotEmitted(form.model_changed, wait=300):
        with qtbot.waitSignal(form.problems_changed, timeout=2000,
                              check_params_cb=lambda ps: any(p.field == "meshes[0].driver_teeth" for p in ps)):
            type_in_cell(qtbot, form, "meshes", 0, "driver_teeth", typed)
    problem = next(p for p in form.problems() if p.field == "meshes[0].driver_teeth")
    assert problem.severity == "error"
    assert "whole number" in problem.message  # a tooth count is a whole number (common practice, no source)
    assert form.is_marked("meshes[0].driver_teeth")
    assert not form.is_marked("meshes[0].driven_teeth")
    item = form.tables["meshes"].table.item(0, 2)
    assert problem.message in item.toolTip()
    assert cell_text(form, "meshes", 0, "driver_teeth") == typed      # nothing typed is lost
    assert form.draft().meshes[0].driver_teeth == (19.5 if typed == "19.5" else "abc")  # draft keeps it
    assert form.model() == PAIR                                      # last valid model kept
    listed = [form.problem_list.item(i).text() for i in range(form.problem_list.count())]
    assert any("Gear meshes, row 1, Driver teeth" in s and problem.message in s for s in listed)
    # typing a good count again makes the model valid again and emits it
    with qtbot.waitSignal(form.model_changed, timeout=2000) as blocker:
        type_in_cell(qtbot, form, "meshes", 0, "driver_teeth", "40")
    assert blocker.args[0] == PAIR
    assert not form.is_marked("meshes[0].driver_teeth")
    assert form.problem_list.count() == 0


def test_unknown_shaft_is_reported_on_its_cell(form, qtbot):
    form.set_model(PAIR)
    with qtbot.waitSignal(form.problems_changed, timeout=2000):
        form.tables["meshes"].table.item(0, 3).setText("gearbox out")
    p = next(p for p in form.problems() if p.field == "meshes[0].driven")
    assert "unknown shaft" in p.message and "'gearbox out'" in p.message
    assert form.is_marked("meshes[0].driven")
    assert form.sections["meshes"].button.text().endswith("(1 to fix)")
    assert form.model() == PAIR


def test_shaft_cells_edit_with_a_combo_of_current_shafts(form, qtbot):
    form.set_model(PAIR)
    t = form.tables["bearings"]
    col = t.column_index("shaft")
    t.table.setCurrentCell(0, col)
    t.table.editItem(t.table.item(0, col))
    box = _editor(t.table)
    assert isinstance(box, QComboBox)
    assert [box.itemText(i) for i in range(box.count())] == ["input", "output"]
    with qtbot.waitSignal(form.model_changed, timeout=2000) as blocker:
        box.setCurrentIndex(0)
        box.activated.emit(0)
    assert blocker.args[0].bearings[0].shaft == "input"


def test_renaming_a_shaft_renames_its_references(form, qtbot):
    form.set_model(PAIR)
    with qtbot.waitSignal(form.model_changed, timeout=2000) as blocker:
        type_in_cell(qtbot, form, "shafts", 0, "name", "motor")
    new = blocker.args[0]
    assert new.shaft_names() == ("motor", "output")
    assert new.meshes[0].driver == "motor" and new.tach.shaft == "motor"
    assert new.bearings[0].shaft == "output"


def test_removing_a_shaft_marks_the_references(form, qtbot):
    form.set_model(PAIR)
    form.tables["shafts"].table.setCurrentCell(1, 0)
    with qtbot.waitSignal(form.problems_changed, timeout=2000):
        form.tables["shafts"].remove_button.click()
    fields = {p.field for p in form.problems() if "unknown shaft" in p.message}
    assert fields == {"meshes[0].driven", "bearings[0].shaft"}
    assert form.is_marked("bearings[0].shaft")
    assert cell_text(form, "bearings", 0, "shaft") == "output"     # reference kept as typed


def test_add_move_and_remove_rows(form, qtbot):
    form.set_model(PAIR)
    shafts, meshes = form.tables["shafts"], form.tables["meshes"]
    shafts.add_button.click()
    assert shafts.table.rowCount() == 3
    type_in_cell(qtbot, form, "shafts", 2, "name", "idler")
    meshes.add_button.click()
    assert meshes.table.rowCount() == 2
    assert cell_text(form, "meshes", 1, "name") == "mesh 2"
    with qtbot.waitSignal(form.model_changed, timeout=2000) as blocker:
        for key, text in (("driver", "output"), ("driver_teeth", "15"), ("driven", "idler"),
                          ("driven_teeth", "23")):
            meshes.table.item(1, meshes.column_index(key)).setText(text)
    train = blocker.args[0]
    assert [m.name for m in train.meshes] == ["main pair", "mesh 2"]
    # idler 40 -> 15 -> 23 at 50 Hz input: f_idler = 50 * 40 / 23 = 86.957 Hz (domain reference 1.2)
    rates = {s.name: s.hz for s in frequency_table(train, 50.0).shafts}
    assert rates["idler"] == pytest.approx(50.0 * 40 / 23, rel=1e-12)

    meshes.table.setCurrentCell(1, 0)
    with qtbot.waitSignal(form.model_changed, timeout=2000) as blocker:
        meshes.up_button.click()
    assert [m.name for m in blocker.args[0].meshes] == ["mesh 2", "main pair"]
    assert meshes.table.currentRow() == 0
    with qtbot.waitSignal(form.model_changed, timeout=2000) as blocker:
        meshes.down_button.click()
    assert [m.name for m in blocker.args[0].meshes] == ["main pair", "mesh 2"]
    meshes.table.setCurrentCell(1, 0)
    with qtbot.waitSignal(form.problems_changed, timeout=2000):
        meshes.remove_button.click()
    assert form.draft().meshes == PAIR.meshes
    assert form.is_marked("shafts[2].name")          # the idler now turns with nothing
    shafts.table.setCurrentCell(2, 0)
    with qtbot.waitSignal(form.model_changed, timeout=2000) as blocker:
        shafts.remove_button.click()
    assert blocker.args[0] == PAIR
    meshes.table.setCurrentCell(0, 0)
    meshes.up_button.click()            # already first: nothing moves
    assert form.draft().meshes == PAIR.meshes


# ---- tach, channels, sensors -------------------------------------------------------------

def test_no_tach_needs_a_nominal_speed(form, qtbot):
    form.set_model(PAIR)
    channel, rpm = form.tach_widgets["channel"], form.tach_widgets["nominal_rpm"]
    with qtbot.waitSignal(form.problems_changed, timeout=2000):
        channel.setCurrentIndex(0)
    assert channel.currentText() == "no tach"
    assert any(p.field == "tach" for p in form.problems())
    assert form.model() == PAIR
    with qtbot.waitSignal(form.model_changed, timeout=2000) as blocker:
        qtbot.keyClicks(rpm, "1480")
    assert blocker.args[0].tach == Tach(shaft="input", channel=None, nominal_rpm=1480.0)


def test_bad_pulses_per_rev_marks_the_tach_field(form, qtbot):
    form.set_model(PAIR)
    edit = form.tach_widgets["pulses_per_rev"]
    edit.selectAll()
    with qtbot.waitSignal(form.problems_changed, timeout=2000):
        qtbot.keyClicks(edit, "x")
    assert form.is_marked("tach.pulses_per_rev")
    assert edit.text() == "x"
    assert "whole number" in edit.toolTip()


def test_channel_count_checks_sensor_and_tach_channels(form):
    form.set_model(PAIR, n_channels=2)
    assert {p.field for p in form.problems() if p.severity == "error"} == {"tach.channel"}
    assert form.is_marked("tach.channel")
    assert form.model() is None
    form.set_n_channels(3)
    assert [p for p in form.problems() if p.severity == "error"] == []
    assert form.model() == PAIR
    assert form.tach_widgets["channel"].count() == 4          # "no tach" + channels 0..2


def test_inspect_sensor_choice_emits_its_index(form, qtbot):
    form.set_model(PAIR)
    assert form.sensor_combo.count() == 2
    with qtbot.waitSignal(form.sensor_selected, timeout=1000) as blocker:
        form.sensor_combo.setCurrentIndex(1)
    assert blocker.args == [1]
    assert "out axial" in form.sensor_combo.currentText()


# ---- empty start, files --------------------------------------------------------------------

def test_empty_start_shows_the_hint_then_reports_on_first_edit(form, qtbot):
    form.set_model(None)
    assert form.model() is None and form.problems() == []
    assert form.hint_label.isVisible() and "sensor" in form.hint_label.text()
    with qtbot.waitSignal(form.problems_changed, timeout=2000):
        qtbot.keyClicks(form.name_edit, "Test rig")
    assert any(p.field == "tach" for p in form.problems())
    assert form.hint_label.isVisible()
    assert form.draft().name == "Test rig"


def test_load_errors_are_shown_not_raised(form, tmp_path):
    form.set_model(PAIR)
    bad = tmp_path / "bad.toml"
    bad.write_text(DATA.joinpath("pair_40_15.toml").read_text() + "\ngearbox_oil = 'ISO VG 320'\n")
    assert form.load_file(bad) is False
    assert "gearbox_oil" in form.status_label.text()
    assert form.load_file(tmp_path / "missing.toml") is False
    assert "missing.toml" in form.status_label.text()
    assert form.draft() == PAIR and form.model() == PAIR


def test_save_is_refused_while_the_model_has_errors(form, tmp_path):
    form.set_model(PAIR)
    form.tables["meshes"].table.item(0, 2).setText("abc")
    path = tmp_path / "out.toml"
    assert form.save_file(path) is False
    assert not path.exists()
    assert "Not saved" in form.status_label.text()


# ---- frequency table -------------------------------------------------------------------------

def _parse_tsv(text):
    lines = text.rstrip("\n").split("\n")
    header = lines[0].split("\t")
    return header, [dict(zip(header, line.split("\t"))) for line in lines[1:]]


def test_frequency_table_copies_tab_separated_text(qtbot):
    view = FrequencyTableView()
    qtbot.addWidget(view)
    view.set_table(frequency_table(PAIR, 3000.0 / 60.0))
    view.show()
    QGuiApplication.clipboard().clear()
    view.setFocus()
    qtbot.keyClick(view, Qt.Key.Key_C, Qt.KeyboardModifier.ControlModifier)
    header, rows = _parse_tsv(QGuiApplication.clipboard().text())
    assert header == ["Label", "Hz", "CPM", "Order", "Owner", "Kind"]
    gmf = next(r for r in rows if r["Kind"] == "gmf")
    # 40T at 3000 rpm: GMF = 50 Hz * 40 = 2000 Hz (common practice, no source; domain reference 1.1)
    assert float(gmf["Hz"]) == pytest.approx(2000.0, rel=1e-9)
    assert float(gmf["CPM"]) == pytest.approx(120000.0, rel=1e-9)   # CPM = Hz * 60 (common practice, no source)
    assert float(gmf["Order"]) == pytest.approx(40.0, rel=1e-9)
    out = next(r for r in rows if r["Kind"] == "shaft rate" and r["Owner"] == "output")
    assert float(out["Hz"]) == pytest.approx(50.0 * 40 / 15, rel=1e-9)   # domain reference 1.1: 133.333 Hz
    ht = next(r for r in rows if r["Kind"] == "hunting tooth")
    # f_HT = GMF * gcd / (Z1 Z2) = 2000 * 5 / 600 = 16.667 Hz (Foiles, Euclidean algorithm; domain reference 1.4)
    assert float(ht["Hz"]) == pytest.approx(2000.0 * math.gcd(40, 15) / 600, rel=1e-9)
    assert len(rows) == view.row_count() > 0


def test_frequency_panel_copy_button_copies_selected_rows(qtbot):
    panel = FrequencyTablePanel()
    qtbot.addWidget(panel)
    panel.set_table(frequency_table(PAIR, 50.0))
    panel.view.selectRow(0)
    panel.copy_button.click()
    header, rows = _parse_tsv(QGuiApplication.clipboard().text())
    assert len(rows) == 1 and rows[0]["Kind"] == "shaft rate"
    assert float(rows[0]["Hz"]) == pytest.approx(50.0)   # reference shaft at 3000 rpm (common practice, no source)
    panel.set_table(None)
    assert panel.view.row_count() == 0


# ---- any typed text ---------------------------------------------------------------------------

_NUMBER_CELLS = [("meshes", "driver_teeth"), ("meshes", "driven_teeth"), ("bearings", "rolling_elements"),
                 ("bearings", "pitch_diameter_mm"), ("sensors", "channel"), ("sensors", "scale")]


@given(cell=st.sampled_from(_NUMBER_CELLS), text=st.text(max_size=12))
@settings(max_examples=60, deadline=None)
def test_any_text_in_a_number_cell_is_kept_and_never_crashes(qapp, cell, text):
    form = ModelForm()
    try:
        form.set_model(PAIR)
        section, key = cell
        t = form.tables[section]
        t.table.item(0, t.column_index(key)).setText(text)
        form.settle_now()
        assert cell_text(form, section, 0, key) == text               # nothing typed is lost
        try:
            float(text)
            is_number = True
        except ValueError:
            is_number = False
        col = t.columns[t.column_index(key)]
        blank_with_default = text.strip() == "" and col.default is not None
        if not is_number and not blank_with_default:
            # text Python's float() rejects is never a count or a size (common practice, no source)
            assert f"{section}[0].{key}" in {p.field for p in form.problems() if p.severity == "error"}
            assert form.is_marked(f"{section}[0].{key}")
            assert form.model() == PAIR
    finally:
        form.deleteLater()


def test_long_editing_session_stays_alive(form):
    for i in range(200):              # a long editing session in miniature
        form.set_model(PAIR)
        form.tables["meshes"].table.item(0, 2).setText(str(30 + i % 20))
        form.settle_now()
    assert form.model().meshes[0].driver_teeth == 30 + 199 % 20


def test_choosing_a_listed_problem_goes_to_its_cell(form, qtbot):
    form.set_model(PAIR)
    form.tables["bearings"].table.item(0, 2).setText("nine")
    form.settle_now()
    form.sections["bearings"].set_open(False)
    item = form.problem_list.item(0)
    assert "Bearings, row 1, Rolling elements" in item.text()
    form.problem_list.itemClicked.emit(item)
    table = form.tables["bearings"].table
    assert form.sections["bearings"].body.isVisible()
    assert (table.currentRow(), table.currentColumn()) == (0, 2)
