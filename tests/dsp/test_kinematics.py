"""Kinematics against the check values of the domain reference (sections 1 and 2)."""

from __future__ import annotations

import dataclasses
import math
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from dsp.errors import AnalysisError, ModelError
from dsp.kinematics import (
    bearing_frequencies,
    frequency_table,
    gears_on_shaft,
    hunting_tooth,
    mesh_frequencies,
    planetary_frequencies,
    shaft_directions,
    shaft_orders,
)
from dsp.model import GearTrain, Mesh, Planetary, Shaft, Tach, load_model

DATA = Path(__file__).resolve().parents[1] / "data"


def pair(z1: int, z2: int) -> GearTrain:
    return GearTrain(
        tach=Tach(shaft="in", nominal_rpm=3000.0),
        shafts=(Shaft("in"), Shaft("out")),
        meshes=(Mesh("pair", "in", z1, "out", z2),),
    )


def rel(a: float, b: float) -> float:
    return abs(a - b) / abs(b)


# --- 1.1 / 1.4: the 40T/15T pair -------------------------------------------------


def test_pair_40_15_rates_gmf_sidebands_and_hunting_tooth():
    train = load_model(DATA / "pair_40_15.toml")
    table = frequency_table(train, 3000.0 / 60.0)
    out = table.shafts[1]
    # Randall 2011 (from memory), elementary kinematics; domain reference 1.1: 50*40/15
    assert rel(out.hz, 133.333333333333333) < 1e-9
    assert rel(out.rpm, 8000.0) < 1e-9                      # domain reference 1.1
    assert out.direction == -1                              # external mesh reverses (domain reference 1.1)
    m = table.meshes[0]
    assert rel(m.gmf_hz, 2000.0) < 1e-12                    # domain reference 1.1: GMF = 50*40
    assert m.gmf_hz == pytest.approx(out.hz * 15, rel=1e-12)  # GMF = f2*Z2, same mesh (domain reference 1.1)
    assert m.gmf_order == pytest.approx(40.0, rel=1e-12)
    gmf_row = table.select(owner="main pair", kind="gmf")[0]
    h2 = table.harmonics(gmf_row, 2)[1]
    assert h2.hz == pytest.approx(4000.0, rel=1e-12)        # domain reference 1.1: 2xGMF
    assert h2.harmonic == 2 and h2.order == pytest.approx(80.0)
    sb_in = dict(table.sidebands("main pair", "input", n_orders=1))
    sb_out = dict(table.sidebands("main pair", "output", n_orders=1))
    # domain reference 1.1 [computed]: 1950/2050 and 1866.67/2133.33 Hz
    assert (sb_in[-1], sb_in[1]) == pytest.approx((1950.0, 2050.0), rel=1e-12)
    assert (sb_out[-1], sb_out[1]) == pytest.approx((1866.67, 2133.33), abs=5e-3)
    # Foiles (Vibration Institute article): N_A = gcd(40, 15) = 5
    assert m.assembly_phases == 5
    # domain reference 1.4 (lcm derivation, Randall 2011 from memory): f_HT = 16.667 Hz
    assert m.hunting_tooth_hz == pytest.approx(16.6666667, rel=1e-8)
    assert 1.0 / m.hunting_tooth_hz == pytest.approx(3 / 50.0, rel=1e-12)   # 3 input revs (domain reference 1.4)
    assert 1.0 / m.hunting_tooth_hz == pytest.approx(8 / out.hz, rel=1e-12)  # 8 output revs (domain reference 1.4)
    # domain reference 1.4, common practice: f_AP = GMF / N_A = 400 Hz
    assert m.assembly_phase_hz == pytest.approx(400.0, rel=1e-12)
    assert table.select(owner="main pair", kind="assembly phase")[0].hz == pytest.approx(400.0)


@pytest.mark.parametrize(
    ("z1", "z2", "n_a", "f_ht"),
    [
        (41, 15, 1, 3.3333333333),   # domain reference 1.4 [computed], hunting pair
        (40, 16, 8, 25.0),           # domain reference 1.4 [computed]
        (40, 15, 5, 16.666666667),   # domain reference 1.4
    ],
)
def test_hunting_tooth_extra_cases(z1, z2, n_a, f_ht):
    table = frequency_table(pair(z1, z2), 50.0)
    m = table.meshes[0]
    assert m.assembly_phases == n_a                          # Foiles: N_A = gcd(Z1, Z2)
    assert m.hunting_tooth_hz == pytest.approx(f_ht, rel=1e-9)  # domain reference 1.4
    ht = hunting_tooth(z1, z2, 50.0 * z1)
    assert ht.hunting == (n_a == 1)                          # Foiles: hunting iff N_A == 1
    # the incorrect web formula gcd x shaft rate (domain reference 1.4 caution) must not match
    assert not math.isclose(ht.hunting_tooth_hz, n_a * 50.0)
    # no separate assembly-phase row for a hunting pair (it would equal the GMF)
    assert bool(table.select(kind="assembly phase")) == (n_a > 1)


def test_hunting_tooth_matches_brute_force_tooth_meeting():
    # lcm argument (domain reference 1.4): simulate which tooth pairs meet, count mesh
    # cycles until pair (0, 0) meets again.
    for z1, z2 in [(40, 15), (41, 15), (40, 16), (19, 73), (22, 67)]:
        k = next(k for k in range(1, z1 * z2 + 1) if k % z1 == 0 and k % z2 == 0)
        ht = hunting_tooth(z1, z2, gmf_hz=1.0)
        assert ht.hunting_tooth_hz == pytest.approx(1.0 / k, rel=1e-12)   # common practice, no source
        assert ht.assembly_phases == np.gcd(z1, z2)                        # numpy as reference


# --- 1.2 idler --------------------------------------------------------------------


def test_idler_check():
    train = load_model(DATA / "idler_40_23_15.toml")
    table = frequency_table(train, train.tach.nominal_rpm / 60.0)
    hz = {s.name: s.hz for s in table.shafts}
    assert hz["output"] == pytest.approx(133.333333333, rel=1e-9)   # domain reference 1.2
    assert hz["idler"] == pytest.approx(86.957, rel=1e-5)           # domain reference 1.2 (3 decimals)
    d = shaft_directions(train, "input")
    assert d == {"input": 1, "idler": -1, "output": 1}              # domain reference 1.2: same sense as input
    gmfs = [m.gmf_hz for m in table.meshes]
    assert gmfs == pytest.approx([2000.0, 2000.0], rel=1e-12)       # domain reference 1.2: single GMF
    # the idler tooth count cancels out of the ratio (domain reference 1.2)
    other = dataclasses.replace(train, meshes=(
        dataclasses.replace(train.meshes[0], driven_teeth=57),
        dataclasses.replace(train.meshes[1], driver_teeth=57)))
    assert shaft_orders(other, "input")["output"] == pytest.approx(40 / 15, rel=1e-12)


# --- 1.3 multi-stage --------------------------------------------------------------


def test_multi_stage_check():
    train = load_model(DATA / "two_stage_planetary.toml")
    table = frequency_table(train, 25.0)                  # 1500 rpm input
    hz = {s.name: s.hz for s in table.shafts}
    assert hz["intermediate"] == pytest.approx(8.19672, rel=1e-5)   # domain reference 1.3
    assert hz["low speed"] == pytest.approx(2.78379, rel=1e-5)      # domain reference 1.3
    g1, g2 = table.meshes
    assert g1.gmf_hz == pytest.approx(500.0, rel=1e-12)             # domain reference 1.3
    assert g2.gmf_hz == pytest.approx(147.541, rel=1e-5)            # domain reference 1.3
    assert 25.0 / hz["low speed"] == pytest.approx(8.98056, rel=1e-5)  # domain reference 1.3 overall ratio
    orders = shaft_orders(train, "input")
    assert orders["low speed"] == pytest.approx((20 / 61) * (18 / 53), rel=1e-12)  # product of stage ratios
    # orders relative to another reference shaft are the same ratios rescaled
    o2 = shaft_orders(train, "intermediate")
    for name in orders:
        assert o2[name] == pytest.approx(orders[name] / orders["intermediate"], rel=1e-12)
    # reference rate in Hz given for the intermediate shaft
    t2 = frequency_table(train, hz["intermediate"], reference_shaft="intermediate")
    assert t2.shaft_hz("input") == pytest.approx(25.0, rel=1e-12)


# --- 1.5 planetary ----------------------------------------------------------------


def test_planetary_check_one():
    p = planetary_frequencies(25.0, 20, 30, 80, 4)
    # domain reference 1.5 (Feng & Zuo 2012, from memory; Willis relation)
    assert p.carrier_hz == pytest.approx(5.0, rel=1e-12)
    assert p.mesh_hz == pytest.approx(400.0, rel=1e-12)
    assert p.mesh_hz == pytest.approx(20 * (25.0 - 5.0), rel=1e-12)   # f_m = Z_s (f_s - f_c)
    assert p.planet_spin_hz == pytest.approx(13.333333333, rel=1e-9)
    assert p.planet_abs_hz == pytest.approx(-8.333333333, rel=1e-9)
    assert p.planet_pass_hz == pytest.approx(20.0, rel=1e-12)
    assert p.sun_fault_hz == pytest.approx(80.0, rel=1e-12)
    assert p.planet_fault_hz == pytest.approx(13.333333333, rel=1e-9)
    assert p.planet_fault_two_flank_hz == pytest.approx(26.666666667, rel=1e-9)
    assert p.ring_fault_hz == pytest.approx(20.0, rel=1e-12)


def test_planetary_check_two():
    p = planetary_frequencies(25.0, 21, 27, 75, 3)
    # domain reference 1.5, second check [computed]
    assert p.carrier_hz == pytest.approx(5.46875, rel=1e-12)
    assert p.mesh_hz == pytest.approx(410.15625, rel=1e-12)
    assert p.sun_fault_hz == pytest.approx(58.59375, rel=1e-12)
    assert p.ring_fault_hz == pytest.approx(16.40625, rel=1e-12)
    assert p.planet_pass_hz == pytest.approx(16.40625, rel=1e-12)


def test_planetary_in_a_train_keeps_direction_and_gives_rows():
    train = load_model(DATA / "two_stage_planetary.toml")
    sun_hz = 25.0 * (20 / 61) * (18 / 53)
    table = frequency_table(train, 25.0)
    g = table.planetary[0]
    assert g.carrier_hz == pytest.approx(sun_hz * 20 / 100, rel=1e-12)   # Willis, ring fixed (domain ref 1.5)
    d = shaft_directions(train, "input")
    # ring fixed: carrier turns with the sun (domain reference 1.5, Willis relation)
    assert d["carrier"] == d["low speed"] == 1 and d["intermediate"] == -1
    kinds = {r.kind for r in table.select(owner_kind="planetary")}
    assert kinds == {"carrier", "gmf", "planet spin", "planet pass", "sun fault", "planet fault", "ring fault"}
    # carrier gives mesh cycles per carrier rev = Z_r (f_m = Z_r f_c, domain reference 1.5)
    (ring,) = gears_on_shaft(train, "carrier")
    assert ring.teeth * g.carrier_hz == pytest.approx(g.mesh_hz, rel=1e-12)
    (sun,) = [x for x in gears_on_shaft(train, "low speed") if x.role == "sun"]
    assert sun.teeth * (g.sun_hz - g.carrier_hz) == pytest.approx(g.mesh_hz, rel=1e-12)


# --- 2. bearings ------------------------------------------------------------------

# CWRU drive-end 6205-2RS: d = 0.3126 in, D = 1.537 in; fan-end 6203-2RS: d = 0.2656, D = 1.122.
# Only d/D matters, so the inch values are passed as they are.


def test_cwru_6205_multiples():
    b = bearing_frequencies(1.0, 9, 0.3126, 1.537, 0.0)   # n = 9 from memory (Smith & Randall 2015)
    # CWRU Bearing Data Center specifications, published via quotations; relative 1e-4
    assert rel(b.bpfi_hz, 5.4152) < 1e-4
    assert rel(b.bpfo_hz, 3.5848) < 1e-4
    assert rel(b.ftf_hz, 0.39828) < 1e-4
    assert rel(2 * b.bsf_hz, 4.7135) < 1e-4                # CWRU "rolling element" = 2 x BSF
    # Randall & Antoni 2011 formulas: BPFO + BPFI = n f_r; BPFO = n FTF (outer ring fixed)
    assert b.bpfo_hz + b.bpfi_hz == pytest.approx(9.0, rel=1e-12)
    assert b.bpfo_hz == pytest.approx(9 * b.ftf_hz, rel=1e-12)


def test_cwru_6205_at_1797_rpm():
    b = bearing_frequencies(1797 / 60, 9, 0.3126, 1.537)
    # domain reference 2 [computed] at 1797 rpm
    assert b.bpfo_hz == pytest.approx(107.364, rel=1e-5)
    assert b.bpfi_hz == pytest.approx(162.186, rel=1e-5)
    assert b.ftf_hz == pytest.approx(11.929, rel=1e-4)
    assert b.bsf_hz == pytest.approx(70.584, rel=1e-5)


def test_cwru_6203_multiples():
    b = bearing_frequencies(1.0, 8, 0.2656, 1.122, 0.0)
    # CWRU Bearing Data Center fan-end 6203, published via quotations; relative 5e-4
    assert rel(b.bpfi_hz, 4.9469) < 5e-4
    assert rel(b.bpfo_hz, 3.0530) < 5e-4
    assert rel(b.ftf_hz, 0.3817) < 5e-4
    assert rel(2 * b.bsf_hz, 3.9874) < 5e-4


def test_contact_angle_check():
    b = bearing_frequencies(1.0, 9, 0.3126, 1.537, 15.0)
    # domain reference 2, contact-angle check [computed]
    assert b.bpfo_hz == pytest.approx(3.61596, rel=1e-5)
    assert b.bpfi_hz == pytest.approx(5.38404, rel=1e-5)
    assert b.ftf_hz == pytest.approx(0.40177, rel=1e-4)
    assert b.bsf_hz == pytest.approx(2.36353, rel=1e-5)


def test_bearing_in_table_follows_its_shaft():
    train = load_model(DATA / "pair_40_15.toml")    # 6205 geometry in mm on the output shaft
    table = frequency_table(train, 50.0)
    b = table.bearings[0]
    assert b.shaft_hz == pytest.approx(133.333333333, rel=1e-9)
    # CWRU multiples (published via quotations) times the output rate; mm conversion only rounds
    assert b.bpfo_hz / b.shaft_hz == pytest.approx(3.5848, rel=1e-4)
    assert b.bpfi_hz / b.shaft_hz == pytest.approx(5.4152, rel=1e-4)
    rows = {r.kind: r for r in table.select(owner_kind="bearing")}
    assert set(rows) == {"bpfo", "bpfi", "bsf", "ftf"}
    assert rows["bpfo"].order == pytest.approx(b.bpfo_hz / 50.0, rel=1e-12)


# --- table mechanics --------------------------------------------------------------


def test_mesh_frequencies_plain_function():
    m = mesh_frequencies(50.0, 40, 15)
    assert m.driven_hz == pytest.approx(133.333333333, rel=1e-9)   # domain reference 1.1
    assert m.gmf_hz == pytest.approx(2000.0)                        # domain reference 1.1


def test_json_dict_keys_follow_the_design():
    table = frequency_table(load_model(DATA / "two_stage_planetary.toml"), 25.0)
    d = table.to_json_dict()
    # key lists from the design page ("gearbench analyze --json keys")
    assert {"name", "mean_hz", "rpm", "order"} <= set(d["shafts"][0])
    assert {"name", "gmf_hz", "hunting_tooth_hz", "assembly_phases"} <= set(d["meshes"][0])
    assert {"name", "carrier_hz", "planet_spin_hz", "mesh_hz", "planet_pass_hz"} <= set(d["planetary"][0])
    assert {"name", "shaft", "bpfo_hz", "bpfi_hz", "bsf_hz", "ftf_hz"} <= set(d["bearings"][0])
    assert d["shafts"][0]["rpm"] == pytest.approx(1500.0)


def test_families_give_harmonics_of_every_selected_row():
    table = frequency_table(pair(40, 15), 50.0)
    fam = table.families(3, owner_kind="shaft")
    assert [round(r.hz, 6) for r in fam] == [50.0, 100.0, 150.0,
                                              round(400 / 3, 6), round(800 / 3, 6), 400.0]
    with pytest.raises(AnalysisError):
        table.harmonics(fam[0], 0)


def test_errors_for_bad_reference_and_invalid_model():
    train = pair(40, 15)
    with pytest.raises(ModelError, match="unknown reference shaft 'nope'"):
        frequency_table(train, 50.0, "nope")
    # numpy scalars (a mean speed from a profile) are accepted and give plain floats
    t32 = frequency_table(train, np.float32(50.0))
    assert type(t32.reference_hz) is float and t32.meshes[0].gmf_hz == pytest.approx(2000.0)
    for bad in (0.0, -1.0, math.nan, math.inf, "50", True):
        with pytest.raises(AnalysisError, match="positive finite"):
            frequency_table(train, bad)
    broken = dataclasses.replace(train, meshes=(Mesh("pair", "in", 19.5, "out", 15),))
    with pytest.raises(ModelError, match=r"meshes\[0\].driver_teeth"):
        shaft_orders(broken, "in")
    with pytest.raises(ModelError, match="unknown shaft"):
        gears_on_shaft(train, "nope")


def test_inputs_are_not_modified():
    train = load_model(DATA / "two_stage_planetary.toml")
    before = dataclasses.astuple(train)
    frequency_table(train, 25.0)
    assert dataclasses.astuple(train) == before


# --- property test ----------------------------------------------------------------

teeth = st.integers(min_value=5, max_value=200)


@st.composite
def chains(draw):
    n_stages = draw(st.integers(min_value=1, max_value=5))
    names = [f"s{i}" for i in range(n_stages + 1)]
    meshes = tuple(Mesh(f"m{i}", names[i], draw(teeth), names[i + 1], draw(teeth)) for i in range(n_stages))
    planetary = ()
    shafts = [Shaft(n) for n in names]
    if draw(st.booleans()):
        zs, zp, n_p = draw(teeth), draw(teeth), draw(st.integers(min_value=1, max_value=6))
        planetary = (Planetary("p", names[-1], zs, zp, n_p, zs + 2 * zp, "carrier"),)
        shafts.append(Shaft("carrier"))
    ref = draw(st.sampled_from([s.name for s in shafts]))
    train = GearTrain(tach=Tach(shaft=ref, nominal_rpm=1000.0), shafts=tuple(shafts),
                      meshes=meshes, planetary=planetary)
    return train, ref


@settings(max_examples=60, deadline=None)
@given(chains(), st.floats(min_value=0.01, max_value=1000.0), st.floats(min_value=0.1, max_value=10.0))
def test_property_gmf_on_both_sides_and_linear_in_speed(chain, ref_hz, factor):
    train, ref = chain
    table = frequency_table(train, ref_hz)
    hz = {s.name: s.hz for s in table.shafts}
    assert hz[ref] == pytest.approx(ref_hz, rel=1e-12)
    for mesh, mf in zip(train.meshes, table.meshes):
        # GMF = f_1 Z_1 = f_2 Z_2 (domain reference 1.1)
        assert mf.gmf_hz == pytest.approx(hz[mesh.driver] * mesh.driver_teeth, rel=1e-9)
        assert mf.gmf_hz == pytest.approx(hz[mesh.driven] * mesh.driven_teeth, rel=1e-9)
    for g, pf in zip(train.planetary, table.planetary):
        # f_m = Z_r f_c = Z_s (f_s - f_c), ring fixed (domain reference 1.5)
        assert pf.mesh_hz == pytest.approx(g.ring_teeth * hz[g.carrier_shaft], rel=1e-9)
        assert pf.mesh_hz == pytest.approx(g.sun_teeth * (hz[g.sun_shaft] - hz[g.carrier_shaft]), rel=1e-9)
    # every rate scales linearly with the reference speed (kinematics is linear)
    scaled = frequency_table(train, ref_hz * factor)
    assert len(scaled.rows) == len(table.rows)
    for a, b in zip(table.rows, scaled.rows):
        assert (a.owner, a.kind) == (b.owner, b.kind)
        assert b.hz == pytest.approx(a.hz * factor, rel=1e-9)
        assert b.order == pytest.approx(a.order, rel=1e-9)
