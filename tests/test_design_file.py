"""Design files (schema 1): exact round trip, strict one-line errors, atomic save.

Exactness rests on two outside facts: Python writes a float as the shortest decimal string
that reads back to the same double (Python documentation, "Floating Point Arithmetic: Issues
and Limitations"; David Gay's correctly rounded conversion), and TOML 1.0.0 floats are IEEE 754
binary64 (toml.io, "Float"). A loaded design therefore rebuilds the same prism from the same
bits, and its trace must be equal bit for bit (np.array_equal, not allclose).
"""
import os
import shutil
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import prismdesign as pd
from prismdesign.design import FAMILIES, Requirement, Tolerance, ToleranceSet
from prismdesign.design import design_file as df
from prismdesign.design.design_file import (DesignFile, PrismSpec, load_design, save_design,
                                            spec_from_solution)

DATA = Path(pd.__file__).resolve().parent.parent / "dispersion_data"
BAND = np.linspace(0.45, 0.75, 5)


def _same_trace(a, b, wavelengths=BAND, same_parameters=True):
    """Every beam of two prisms' traces equal bit for bit (power, direction, position, path)."""
    ta = a.trace(wavelengths[:, None], np.array([0.0, 1.5])[None, :])
    tb = b.trace(wavelengths[:, None], np.array([0.0, 1.5])[None, :])
    assert set(ta.beams) == set(tb.beams)
    for label in ta.beams:
        x, y = ta.beams[label], tb.beams[label]
        for name in ("power", "exit_direction", "exit_position_mm", "optical_path_mm", "field",
                     "flags", "positions_mm"):
            assert np.array_equal(getattr(x, name), getattr(y, name), equal_nan=True), \
                (label, name)
    assert a.kind == b.kind
    if same_parameters:
        assert a.parameters == b.parameters


def _custom_material(folder):
    """A copy of the bundled calcite data under our own name, as a user's file would be."""
    text = (DATA / "calcite.toml").read_text(encoding="utf-8")
    text = text.replace('name = "calcite"', 'name = "bench_calcite"', 1)
    lines = [ln for ln in text.splitlines() if not ln.startswith("aliases")]
    path = folder / "bench_calcite.toml"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


REQ = Requirement(band_um=(0.45, 0.75), split_deg=8.0, tolerance=0.1, coated=True,
                  aperture_mm=6.0, max_length_mm=30.0)

SPECS = {
    "wollaston cemented, coated": PrismSpec("wollaston", dict(
        material="calcite", wedge_angle_deg=13.7, width_mm=6.0, height_mm=5.0,
        exit_wedge_angle_deg=12.1, first_axis="y", design_wavelength_um=0.6,
        interface_layer=dict(material="optical_cement", thickness_mm=0.012,
                             treatment="coherent"), coated=True)),
    "glan air-spaced, coherent gap": PrismSpec("glan_air_spaced", dict(
        material="calcite", cut_angle_deg=38.9, gap_mm=0.004, layer_treatment="coherent",
        coated=True, design_wavelength_um=0.55)),
    "glan air-spaced, incoherent gap": PrismSpec("glan_air_spaced", dict(
        material="calcite", cut_angle_deg=39.1, gap_mm=0.02, layer_treatment="incoherent")),
    "glan cemented": PrismSpec("glan_cemented", dict(
        material="calcite", cut_angle_deg=76.5, cement="optical_cement",
        cement_thickness_mm=0.015)),
    "rochon in vacuum": PrismSpec("rochon", dict(material="quartz", wedge_angle_deg=40.0,
                                                 coated=True), surround="vacuum"),
    "savart": PrismSpec("savart_plate", dict(material="quartz", plate_thickness_mm=3.3,
                                             azimuth_deg=30.0)),
    "displacer": PrismSpec("walkoff_displacer", dict(material="yvo4", length_mm=7.25,
                                                     cut_angle_deg=47.5)),
    "nomarski": PrismSpec("nomarski", dict(material="quartz", wedge_angle_deg=2.5,
                                           localisation_distance_mm=3.0)),
    "nomarski, tilt given": PrismSpec("nomarski", dict(material="quartz", wedge_angle_deg=2.5,
                                                       axis_tilt_deg=10.0)),
    "two crystals in series": PrismSpec("in_series", dict(
        first=PrismSpec("wollaston", dict(material="calcite", wedge_angle_deg=20.3)),
        second=PrismSpec("wollaston", dict(material="yvo4", wedge_angle_deg=7.9)),
        spacing_mm=0.5, rotation_deg=180.0, kind="two-crystal Wollaston",
        outer_faces_coated=True)),
}


@pytest.mark.parametrize("name", list(SPECS))
def test_round_trip_traces_bit_for_bit(tmp_path, name):
    spec = SPECS[name]
    tolerances = ToleranceSet((Tolerance("face1_angle_deg", "uniform", 0.05, cost_weight=2.0),
                               Tolerance("wavelength_nm", "fixed", -0.3, loosest=1.0,
                                         tightest=0.01)))
    design = DesignFile(spec, requirement=REQ, tolerances=tolerances, title=name,
                        notes="line one\nline two: <b> & \"quotes\" \\ backslash")
    path = save_design(design, tmp_path / "d.toml")
    loaded = load_design(path)
    assert loaded == design
    _same_trace(spec.build(), loaded.build())
    # Saving what was loaded gives the same bytes (a clean diff in version control).
    again = save_design(loaded, tmp_path / "again.toml")
    assert again.read_bytes() == path.read_bytes()


def test_custom_material_file_round_trip(tmp_path):
    material_path = _custom_material(tmp_path)
    spec = PrismSpec("wollaston", dict(material="bench", wedge_angle_deg=11.0,
                                       interface_layer=dict(material=1.52, thickness_mm=0.01)))
    design = DesignFile(spec, requirement=REQ, materials={"bench": material_path.name},
                        base_folder=tmp_path)
    path = save_design(design, tmp_path / "custom.toml")
    loaded = load_design(path)
    prism = loaded.build()
    assert prism.pieces[0].material.name == "bench_calcite"
    _same_trace(design.build(), prism)
    # The custom file is the bundled calcite under another name: same trace as the library.
    _same_trace(prism, PrismSpec("wollaston", dict(
        material="calcite", wedge_angle_deg=11.0,
        interface_layer=dict(material=1.52, thickness_mm=0.01))).build(), same_parameters=False)


@pytest.mark.parametrize("family", list(FAMILIES))
def test_solved_design_spec_builds_the_family_prism(family):
    """A saved solution is the very prism the solver built (every family)."""
    fam = FAMILIES[family]
    crystal = ("calcite", "yvo4") if fam.crystals == 2 else "quartz"
    req = Requirement(band_um=(0.5, 0.7), split_deg=3.0, coated=True, aperture_mm=7.0,
                      localisation_distance_mm=1.0)
    values = [0.5 * (p.low + p.high) if p.low > 0 else -0.5 * p.high for p in fam.parameters]
    if family.startswith("glan"):
        crystal = "calcite"
    built = fam.build(crystal, values, req)
    spec = spec_from_solution(family, crystal, dict(zip((p.name for p in fam.parameters),
                                                        values)), req)
    _same_trace(built, spec.build(), np.linspace(0.5, 0.7, 3))


@settings(max_examples=25, deadline=None)
@given(angle=st.floats(0.05, 60.0), width=st.floats(0.5, 50.0),
       wavelength=st.floats(0.3, 2.0))
def test_floats_survive_the_file_exactly(tmp_path_factory, angle, width, wavelength):
    folder = tmp_path_factory.mktemp("h")
    spec = PrismSpec("wollaston", dict(material="calcite", wedge_angle_deg=angle,
                                       width_mm=width, design_wavelength_um=wavelength))
    loaded = load_design(save_design(DesignFile(spec), folder / "h.toml"))
    args = loaded.prism.arguments
    assert (args["wedge_angle_deg"], args["width_mm"], args["design_wavelength_um"]) == (
        angle, width, wavelength)


# ------------------------------------------------------------------ strict loading
GOOD = """schema = 1
title = "t"

[materials]
bench = "bench_calcite.toml"

[prism]
type = "wollaston"
material = "calcite"
wedge_angle_deg = 10.0

[prism.interface_layer]
material = "optical_cement"
thickness_mm = 0.01

[requirement]
band_um = [0.5, 0.6]
split_deg = 4.0

[[tolerance]]
name = "face1_angle_deg"
distribution = "uniform"
size = 0.05

[solved]
prism_type = "wollaston"
"""

BAD = [  # (replace this, with this, words the one-line error must contain)
    ("schema = 1", "schema = 2", ["schema", "2", "1"]),
    ('title = "t"', 'title = "t"\ncolour = "red"', ["colour", "red", "allowed", "notes"]),
    ('title = "t"', "title = 3", ["title", "3", "text"]),
    ('type = "wollaston"', 'type = "wolaston"', ["type", "wolaston", "rochon"]),
    ("wedge_angle_deg = 10.0", "wedge_angle_deg = 10.0\nwedge_deg = 3",
     ["wedge_deg", "3", "allowed", "wedge_angle_deg"]),
    ("wedge_angle_deg = 10.0", "wedge_angle_deg = -4.0", ["wedge_angle_deg", "-4"]),
    ("wedge_angle_deg = 10.0", 'wedge_angle_deg = "ten"', ["wedge_angle_deg", "ten"]),
    ('material = "calcite"', 'material = "unobtainium"', ["material", "unobtainium"]),
    ("thickness_mm = 0.01", "thickness_mm = 0.01\nindex = 1.5",
     ["interface_layer", "index", "1.5", "thickness_mm"]),
    ("thickness_mm = 0.01", 'thickness_mm = 0.01\ntreatment = "wavy"',
     ["treatment", "wavy", "coherent"]),
    ("thickness_mm = 0.01", "thickness_mm = -0.01", ["thickness_mm", "-0.01"]),
    ("split_deg = 4.0", "split_deg = 4.0\nsplit_angle = 4.0", ["split_angle", "= 4.0", "split_deg"]),
    ("split_deg = 4.0", "split_deg = 95.0", ["split_deg", "95", "< 90"]),
    ('distribution = "uniform"', 'distribution = "gaussian"', ["gaussian", "normal"]),
    ("size = 0.05", "size = 0.05\nspread = 2", ["spread", "2", "allowed", "size"]),
    ("size = 0.05", "", ["size", "missing"]),
    ("size = 0.05", "size = -0.05", ["size", "-0.05", "positive"]),
    ('bench = "bench_calcite.toml"', 'bench = "nowhere.toml"', ["bench", "nowhere.toml",
                                                                 "no such file"]),
    ('prism_type = "wollaston"', 'prism_type = "wollaston"\nwhen = "today"',
     ["solved", "when", "today", "allowed"]),
    ('type = "wollaston"', 'type = "in_series"', ["in_series", "first"]),
]


@pytest.mark.parametrize("old, new, words", BAD, ids=[(b[1].splitlines() or ["no " + b[0]])[-1]
                                                      for b in BAD])
def test_every_bad_key_or_value_is_one_line(tmp_path, old, new, words):
    _custom_material(tmp_path)
    assert old in GOOD
    load_design(_write(tmp_path, GOOD))            # the unedited file is fine
    path = _write(tmp_path, GOOD.replace(old, new, 1))
    with pytest.raises(ValueError) as caught:
        load_design(path)
    message = str(caught.value)
    assert "\n" not in message, message
    assert str(path) in message
    for word in words:
        assert word in message, (word, message)


def test_not_toml_and_no_prism(tmp_path):
    with pytest.raises(ValueError, match="not valid TOML"):
        load_design(_write(tmp_path, "schema = = 1"))
    with pytest.raises(ValueError, match=r"no \[prism\] table"):
        load_design(_write(tmp_path, "schema = 1\n"))


def _write(folder, text):
    path = folder / "design.toml"
    path.write_text(text, encoding="utf-8")
    return path


# ------------------------------------------------------------------ atomic save
@pytest.mark.parametrize("failing", ["fsync", "replace"])
def test_failed_save_leaves_the_old_file(tmp_path, monkeypatch, failing):
    path = save_design(DesignFile(SPECS["savart"], title="old"), tmp_path / "keep.toml")
    before = path.read_bytes()

    def fail(*args, **kwargs):
        raise OSError("disk full (simulated)")

    # fsync fails after the new text was written to the temporary file (mid-write);
    # replace fails at the very last step.
    monkeypatch.setattr(df.os, failing, fail)
    with pytest.raises(OSError, match="simulated"):
        save_design(DesignFile(SPECS["displacer"], title="new"), path)
    monkeypatch.undo()
    assert path.read_bytes() == before
    assert sorted(p.name for p in tmp_path.iterdir()) == ["keep.toml"]   # no temporary left


def test_save_keeps_mode_and_refuses_missing_folder(tmp_path):
    path = tmp_path / "shared.toml"
    path.write_text("x", encoding="utf-8")
    os.chmod(path, 0o644)
    save_design(DesignFile(SPECS["savart"]), path)
    assert path.stat().st_mode & 0o777 == 0o644
    with pytest.raises(ValueError, match="does not exist"):
        save_design(DesignFile(SPECS["savart"]), tmp_path / "missing" / "d.toml")


def test_example_design_file_loads_and_meets(tmp_path):
    examples = Path(__file__).resolve().parent.parent / "examples"
    for item in examples.glob("*.toml"):
        shutil.copy(item, tmp_path / item.name)
    design = load_design(tmp_path / "imager_split.design.toml")
    assert design.tolerances is not None and design.requirement is not None
    assessment = pd.design.assess(design.build(), design.requirement)
    assert assessment.meets


def test_numpy_numbers_and_defaults_are_written_as_plain_toml(tmp_path):
    spec = PrismSpec("wollaston", dict(material="calcite", wedge_angle_deg=np.float64(9.5),
                                       exit_wedge_angle_deg=None, coated=True))
    path = save_design(DesignFile(spec), tmp_path / "np.toml")
    text = path.read_text()
    assert "wedge_angle_deg = 9.5" in text and "exit_wedge_angle_deg" not in text
    _same_trace(spec.build(), load_design(path).build())
    with pytest.raises(ValueError, match=r"wedge_angle_deg must be a finite number, got nan"):
        PrismSpec("wollaston", dict(material="calcite", wedge_angle_deg=float("nan")))
