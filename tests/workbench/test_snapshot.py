"""Snapshots: the recipe regenerates the saved picture; changed recordings and bad recipes exit 2; gallery."""

from __future__ import annotations

import dataclasses
import hashlib
import json
import shutil
import xml.etree.ElementTree as ET
from pathlib import Path

import numpy as np
import pytest
from PySide6.QtGui import QImage

import workbench
from dsp import __version__ as dsp_version
from dsp.analysis import Settings, analyze
from dsp.model import GearTrain, Mesh, Sensor, Shaft, Tach, loads_model
from dsp.recording import read_recording
from dsp.synth import Fault, simulate, write_simulation
from workbench import snapshot, theme
from workbench.cli import main
from workbench.session import Session
from workbench.views.spectrum import SpectrumView
from workbench.views.tsa import TsaView

DEMO = Path(workbench.__file__).resolve().parents[1] / "demo_recordings" / "03_broken_tooth.flac"
#: Mean absolute pixel difference (fraction of full scale) below which two pictures are "the same".
SAME_PICTURE = 0.01   # common practice, no source (the brief asks for < 1-2 %)


def _train() -> GearTrain:
    return GearTrain(name="snapshot test pair", sensors=(Sensor("case", 0, 5.0, "g", "output bearing", "radial"),),
                     tach=Tach(shaft="in", channel=1, nominal_rpm=1200.0), shafts=(Shaft("in"), Shaft("out")),
                     meshes=(Mesh("pair", "in", 19, "out", 47),))


def _write(path: Path, seed: int) -> Path:
    sim = simulate(_train(), rpm=1200, duration_s=3.0, fs=8000, seed=seed,
                   faults=[Fault("tooth", "out", tooth=5, severity="severe")])
    write_simulation(sim, path, _train())
    return path


@pytest.fixture(scope="module")
def simulated(tmp_path_factory):
    path = _write(tmp_path_factory.mktemp("sim") / "pair.flac", seed=3)
    recording = read_recording(path)
    model = loads_model(path.with_suffix(".toml").read_text())
    return path, recording, model, analyze(recording, model, Settings())


def pixels(image_or_path) -> np.ndarray:
    image = QImage(str(image_or_path)) if not isinstance(image_or_path, QImage) else image_or_path
    image = image.convertToFormat(QImage.Format.Format_RGB32)
    raw = np.frombuffer(image.constBits(), np.uint8, image.sizeInBytes())
    return raw.reshape(image.height(), image.bytesPerLine() // 4, 4)[:, :image.width(), :3].astype(float)


def mean_difference(a: np.ndarray, b: np.ndarray) -> float:
    assert a.shape == b.shape
    return float(np.mean(np.abs(a - b)) / 255.0)


def _shown_view(qtbot, cls, session, analysis, recording, size=(900, 520)):
    theme.configure_pyqtgraph()
    view = cls(session)
    qtbot.addWidget(view)
    view.resize(*size)
    view.show()
    view.show_analysis(analysis, recording)
    return view


def test_tsa_recipe_regenerates_the_saved_picture(qtbot, tmp_path, simulated, capsys):
    path, recording, model, analysis = simulated
    session = Session(recording_path=path, model=model)
    session.select_shaft("out")
    session.set_annotations([{"id": "t5", "view": "tsa", "kind": "arrow", "x": 360.0 * 5.5 / 47, "y": 0.5,
                              "text": "tooth 5 <damaged?>", "x_units": "deg", "y_units": "g"},
                             {"id": "other", "view": "spectrum", "kind": "note", "x": 380.0, "y": 0.1,
                              "text": "not on this view", "x_units": "hz", "y_units": "g"}])
    view = _shown_view(qtbot, TsaView, session, analysis, recording)
    view.plot.setXRange(20.0, 120.0, padding=0)               # the analyst zoomed on the damaged tooth
    entry = snapshot.take_snapshot(session=session, analysis=analysis, view=view, folder=tmp_path / "snaps",
                                   caption="TSA of the output shaft, tooth 5", recording=recording)
    recipe = json.loads(Path(entry["recipe"]).read_text())
    assert recipe["schema"] == "gearbench.snapshot/1"
    # the recording is identified by its SHA-256 (FIPS 180-4, computed here with hashlib)
    assert recipe["recording"]["sha256"] == hashlib.sha256(path.read_bytes()).hexdigest()
    assert recipe["recording"]["channel"] == 0 and recipe["settings"] == json.loads(json.dumps(
        dataclasses.asdict(analysis.settings)))
    assert loads_model(recipe["model"]["toml"]) == model       # the model travels as TOML text
    assert recipe["view"]["name"] == "tsa" and recipe["view"]["options"]["selected_shaft"] == "out"
    assert recipe["view"]["x_range"] == pytest.approx([20.0, 120.0])
    assert [a["id"] for a in recipe["annotations"]] == ["t5"]  # only this view's notes
    assert recipe["program"] == {"name": "gearbench", "version": dsp_version}
    saved = pixels(entry["png"])
    assert saved.shape[:2] == (QImage(entry["png"]).height(), 900)

    out = tmp_path / "regenerated.png"
    assert main(["snapshot", entry["recipe"], "-o", str(out)]) == 0
    assert "wrote" in capsys.readouterr().out
    difference = mean_difference(saved, pixels(out))
    assert difference < SAME_PICTURE                          # brief: mean absolute difference < 1-2 %

    # the comparison can fail: another TSA signal or no note gives a visibly different picture
    other = dict(recipe, view=dict(recipe["view"], options=dict(recipe["view"]["options"], tsa_signal="difference")))
    assert mean_difference(saved, pixels(snapshot.render(other, analysis, recording))) > 5 * max(difference, 1e-4)
    bare = dict(recipe, annotations=[])
    assert np.any(pixels(snapshot.render(bare, analysis, recording)) != saved)

    # SVG of the same recipe: an SVG document of the same size
    svg = tmp_path / "regenerated.svg"
    assert main(["snapshot", entry["recipe"], "-o", str(svg)]) == 0
    root = ET.parse(svg).getroot()
    assert root.tag == "{http://www.w3.org/2000/svg}svg"      # W3C SVG namespace
    assert root.get("viewBox") == f"0 0 {saved.shape[1]} {saved.shape[0]}"


def test_demo_spectrum_with_cursor_regenerates(qtbot, tmp_path, capsys):
    recording = read_recording(DEMO)
    model = loads_model(DEMO.with_suffix(".toml").read_text())
    analysis = analyze(recording, model, Settings())
    session = Session(recording_path=DEMO, model=model)
    session.set_view_options(spectrum_zoom_hz=(400.0, 750.0), spectrum_log_y=False)
    view = _shown_view(qtbot, SpectrumView, session, analysis, recording, size=(1000, 600))
    gmf = analysis.frequencies.meshes[0].gmf_hz
    intermediate = next(s.hz for s in analysis.frequencies.shafts if s.name == "intermediate")
    view.cursor_set.show_family(gmf, intermediate, n=3)        # sideband cursor at the stage 1 GMF
    assert session.cursors and session.cursors[0]["kind"] == "sideband"
    entry = snapshot.take_snapshot(session=session, analysis=analysis, view=view, folder=tmp_path,
                                   caption="stage 1 GMF with sidebands at the intermediate shaft rate",
                                   recording=recording)
    recipe = json.loads(Path(entry["recipe"]).read_text())
    assert recipe["cursors"][0]["spacing"] == pytest.approx(intermediate)
    out = tmp_path / "again.png"
    assert main(["snapshot", entry["recipe"], "-o", str(out)]) == 0
    assert mean_difference(pixels(entry["png"]), pixels(out)) < SAME_PICTURE   # brief: < 1-2 %
    bare = pixels(snapshot.render(dict(recipe, cursors=[]), analysis, recording))
    saved = pixels(entry["png"])
    assert bare.shape != saved.shape or mean_difference(saved, bare) > 0   # the cursor is part of the picture


def test_changed_recording_is_refused_unless_allowed(qtbot, tmp_path, simulated, capsys):
    _, _, _, _ = simulated
    copy = _write(tmp_path / "copy.flac", seed=3)
    recording = read_recording(copy)
    model = loads_model(copy.with_suffix(".toml").read_text())
    analysis = analyze(recording, model, Settings())
    recipe = snapshot.build_recipe(session=Session(model=model), analysis=analysis, view="spectrum",
                                   size_px=(600, 400), base_dir=tmp_path)
    recipe_path = tmp_path / "r.json"
    recipe_path.write_text(json.dumps(recipe))
    _write(copy, seed=4)                                       # the file is replaced by another recording
    capsys.readouterr()
    assert main(["snapshot", str(recipe_path), "-o", str(tmp_path / "x.png")]) == 2
    err = capsys.readouterr().err.strip()
    assert err.count("\n") == 0 and "changed since the snapshot" in err and "--allow-changed" in err
    assert not (tmp_path / "x.png").exists()
    assert main(["snapshot", str(recipe_path), "-o", str(tmp_path / "x.png"), "--allow-changed"]) == 0
    assert QImage(str(tmp_path / "x.png")).width() == 600


@pytest.mark.parametrize("content, words", [
    ("{not json", "not valid JSON"),
    (json.dumps({"schema": "gearbench.snapshot/0"}), "schema"),
    (json.dumps({"schema": "gearbench.snapshot/1", "recording": {"path": "/nowhere/x.flac"}, "settings": {},
                 "model": {"toml": ""}, "view": {"name": "spectrum", "size_px": [600, 400]}, "cursors": [],
                 "annotations": [], "caption": ""}), "is missing"),
    (json.dumps({"schema": "gearbench.snapshot/1", "recording": {"path": "/x.flac"}, "settings": {},
                 "model": {"toml": ""}, "view": {"name": "polar plot", "size_px": [600, 400]}, "cursors": [],
                 "annotations": [], "caption": ""}), "view.name"),
])
def test_bad_recipe_exits_2_with_one_line(tmp_path, capsys, content, words):
    recipe = tmp_path / "bad.json"
    recipe.write_text(content)
    assert main(["snapshot", str(recipe), "-o", str(tmp_path / "out.png")]) == 2   # design.md: bad input exits 2
    err = capsys.readouterr().err.strip()
    assert err.startswith("gearbench: ") and "\n" not in err and words in err
    assert main(["snapshot", str(recipe), "-o", str(tmp_path / "out.gif")]) == 2


def test_gallery_lists_snapshots_and_edits_captions(qtbot, tmp_path, simulated):
    path, recording, model, analysis = simulated
    session = Session(recording_path=path, model=model)
    view = _shown_view(qtbot, SpectrumView, session, analysis, recording, size=(600, 400))
    entries = [snapshot.take_snapshot(session=session, analysis=analysis, view=view, folder=tmp_path,
                                      caption=f"picture {i}", recording=recording) for i in (1, 2)]
    assert [Path(e["png"]).name for e in entries] == ["snapshot-001-spectrum.png", "snapshot-002-spectrum.png"]
    gallery = snapshot.SnapshotGallery()
    qtbot.addWidget(gallery)
    gallery.set_entries(entries)
    assert gallery.captions() == ["picture 1", "picture 2"] and not gallery.list.item(0).icon().isNull()
    edited = []
    gallery.caption_edited.connect(lambda i, c: edited.append((i, c)))
    gallery.list.item(1).setText("GMF with <b>sidebands</b>")
    assert edited == [("snapshot-002-spectrum", "GMF with <b>sidebands</b>")]
    updated = snapshot.set_caption(entries[1], edited[0][1])
    assert updated["caption"] == edited[0][1]
    assert snapshot.load_recipe(updated["recipe"])["caption"] == "GMF with <b>sidebands</b>"
