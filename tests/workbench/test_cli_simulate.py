"""``gearbench simulate``: writes a FLAC + model TOML that load back; bad input exits 2."""

from __future__ import annotations

import numpy as np
import soundfile

from dsp.model import GearTrain, Mesh, Shaft, Tach, load_model, save_model
from dsp.synth import Fault, simulate
from workbench.cli import main


def _model(tmp_path, nominal_rpm=1200.0):
    train = GearTrain(
        name="cli test",
        # a model of a recorded machine: tach on channel 1, speed unknown until measured
        tach=Tach(shaft="in", nominal_rpm=nominal_rpm) if nominal_rpm else Tach(shaft="in", channel=1),
        shafts=(Shaft("in"), Shaft("out")),
        meshes=(Mesh("m", "in", 19, "out", 47),),
    )
    path = tmp_path / "m.toml"
    save_model(train, path)
    return train, path


def test_simulate_writes_flac_and_model_that_load_back(tmp_path, capsys):
    train, model = _model(tmp_path)
    out = tmp_path / "sim.flac"
    rc = main(["simulate", str(model), "--fault", "tooth", "--on", "out", "--tooth", "3",
               "--severity", "severe", "--duration", "0.5", "--rate", "8000", "--seed", "5", "-o", str(out)])
    assert rc == 0
    assert "wrote" in capsys.readouterr().out
    data, fs = soundfile.read(str(out), always_2d=True)
    assert fs == 8000 and data.shape == (4000, 2)
    assert soundfile.info(str(out)).subtype == "PCM_24"
    written = load_model(out.with_suffix(".toml"))
    assert written.sensors[0].channel == 0 and written.tach.channel == 1 and written.tach.shaft == "in"
    assert written.meshes == train.meshes
    # the file holds the simulation: file value x scale = g, within 24-bit quantisation
    sim = simulate(train, rpm=1200, duration_s=0.5, fs=8000, seed=5,
                   faults=[Fault("tooth", "out", tooth=3, severity="severe")])
    scale = written.sensors[0].scale
    assert np.max(np.abs(data[:, 0] * scale - sim.acceleration_g)) <= scale * 2.0**-23
    # the tach channel gives one rising edge per revolution of the tach shaft (common practice, no source)
    tach = data[:, 1]
    edges = np.flatnonzero((tach[:-1] <= 0.25) & (tach[1:] > 0.25))
    assert edges.size == sim.tach_times_s.size == 10


def test_simulate_rejects_unknown_shaft(tmp_path, capsys):
    _, model = _model(tmp_path)
    rc = main(["simulate", str(model), "--fault", "tooth", "--on", "nowhere", "-o", str(tmp_path / "x.flac")])
    assert rc == 2
    err = capsys.readouterr().err.strip()
    assert len(err.splitlines()) == 1 and "unknown shaft 'nowhere'" in err
    assert not (tmp_path / "x.flac").exists()


def test_simulate_rejects_missing_speed_and_unknown_bearing(tmp_path, capsys):
    _, model = _model(tmp_path, nominal_rpm=None)
    assert main(["simulate", str(model), "-o", str(tmp_path / "x.flac")]) == 2
    assert "--rpm" in capsys.readouterr().err
    assert main(["simulate", str(model), "--rpm", "900", "--fault", "outer-race", "--on", "NDE",
                 "-o", str(tmp_path / "x.flac")]) == 2
    assert "unknown bearing 'NDE'" in capsys.readouterr().err
    assert main(["simulate", str(model), "--rpm", "900", "--fault", "wear", "-o", str(tmp_path / "x.flac")]) == 2
    assert "--on" in capsys.readouterr().err


def test_simulate_without_tach_writes_one_channel_and_a_nominal_speed(tmp_path, capsys):
    train, model = _model(tmp_path, nominal_rpm=1200.0)
    out = tmp_path / "route.flac"
    rc = main(["simulate", str(model), "--no-tach", "--rpm", "1176", "--duration", "0.5", "--rate", "8000",
               "--seed", "6", "-o", str(out)])
    assert rc == 0
    assert "no tach" in capsys.readouterr().out
    data, fs = soundfile.read(str(out), always_2d=True)
    assert data.shape == (4000, 1)
    written = load_model(out.with_suffix(".toml"))
    # the model keeps the nameplate speed; the machine ran 2 % slower (what --rpm asked for)
    assert written.tach.channel is None and written.tach.nominal_rpm == 1200.0
    assert written.sensors[0].channel == 0
    sim = simulate(train, rpm=1176, duration_s=0.5, fs=8000, seed=6)
    np.testing.assert_allclose(data[:, 0] * written.sensors[0].scale, sim.acceleration_g,
                               atol=written.sensors[0].scale * 2.0**-23)  # 24-bit quantisation
