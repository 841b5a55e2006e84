"""Requirement validation, requirement files and the ``design`` command line verb."""
import json
import subprocess
import sys

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st

from prismdesign import design
from prismdesign.cli import main


@pytest.mark.parametrize("kwargs, fragment", [
    (dict(split_deg=5.0), "exactly one of band_um and lines_um"),
    (dict(band_um=(0.7, 0.4), split_deg=5.0), "low < high"),
    (dict(band_um=(0.4, 0.7), band_points=1, split_deg=5.0), "band_points"),
    (dict(lines_um=[0.5, 0.5], split_deg=5.0), "distinct"),
    (dict(lines_um=[-0.5], split_deg=5.0), "lines_um"),
    (dict(lines_um=[0.5]), "exactly one target"),
    (dict(lines_um=[0.5], split_deg=5.0, offset_mm=1.0), "exactly one target"),
    (dict(lines_um=[0.5], split_deg=95.0), "split_deg"),
    (dict(lines_um=[0.5], split_deg="5"), "split_deg must be a number"),
    (dict(lines_um=[0.5], separation_mm=3.0), "distance_mm"),
    (dict(lines_um=[0.5], split_deg=5.0, min_clearance_mm=0.1), "beam_diameter_mm"),
    (dict(lines_um=[0.5], polariser=True), "field_half_angle_deg or max_leakage"),
    (dict(lines_um=[0.5], split_deg=5.0, m_squared=0.5), "m_squared"),
    (dict(lines_um=[0.5], split_deg=5.0, band_norm="max"), "band_norm"),
    (dict(lines_um=[0.5], split_deg=5.0, crystals=[]), "crystals"),
    (dict(lines_um=[0.5], split_deg=5.0, max_leakage=2.0), "max_leakage"),
    (dict(lines_um=[0.5], split_deg=5.0, undeviated_polarisation="x"), "undeviated"),
    (dict(lines_um=[0.5], split_deg=np.nan), "split_deg"),
])
def test_bad_requirements_are_one_line_errors(kwargs, fragment):
    with pytest.raises(ValueError, match=fragment) as error:
        design.Requirement(**kwargs)
    assert "\n" not in str(error.value)


def test_requirement_derived_values():
    r = design.Requirement(band_um=(0.4, 0.7), band_points=4, separation_mm=6.0, distance_mm=100)
    np.testing.assert_allclose(r.wavelengths_um, [0.4, 0.5, 0.6, 0.7])
    assert r.target_kind == "separation" and r.target_unit == "mm"
    assert r.target_tolerance == pytest.approx(0.06)      # default: 1 % of the target
    assert r.clear_aperture_mm == 10.0


def test_mapping_converts_mrad_and_names_unknown_keys():
    r = design.requirement_from_mapping({"lines_um": [1.064], "split_mrad": 10.0})
    assert r.split_deg == pytest.approx(np.rad2deg(0.01), rel=1e-15)
    with pytest.raises(ValueError, match="unknown key 'split'") as error:
        design.requirement_from_mapping({"lines_um": [1.064], "split": 1.0}, where="f.toml")
    assert str(error.value).startswith("f.toml")


def test_requirement_file(tmp_path):
    path = tmp_path / "need.toml"
    path.write_text('schema = 1\n[requirement]\nlines_um = [1.55]\noffset_mm = 1.0\n'
                    'max_length_mm = 15.0\ncrystals = ["calcite"]\n', encoding="utf-8")
    r = design.load_requirement(path)
    assert r.offset_mm == 1.0 and r.crystals == ("calcite",)
    path.write_text('schema = 2\n[requirement]\nlines_um = [1.55]\n', encoding="utf-8")
    with pytest.raises(ValueError, match="schema must be 1"):
        design.load_requirement(path)
    path.write_text('schema = 1\nextra = 3\n[requirement]\nlines_um = [1.55]\n', encoding="utf-8")
    with pytest.raises(ValueError, match="unknown key 'extra'"):
        design.load_requirement(path)
    path.write_text('schema = 1\n[requirement\n', encoding="utf-8")
    with pytest.raises(ValueError, match="not valid TOML"):
        design.load_requirement(path)


@settings(max_examples=8, deadline=None)
@given(split=st.floats(0.5, 30.0), lam=st.sampled_from([0.45, 0.6328, 1.064]))
def test_solved_split_reproduces_any_reachable_target(split, lam):
    """Round trip: the exact split of the solved prism equals the target it was solved for."""
    solved = design.solve("wollaston", "calcite",
                          design.Requirement(lines_um=[lam], split_deg=split, tolerance=1e-8))
    assert solved.meets
    assert solved.assessment.figures.split_deg[0, 0] == pytest.approx(split, abs=1e-8)


# ----------------------------------------------------------------------- command line
def test_design_verb_prints_ranked_table_with_caution(capsys):
    code = main(["design", "--lines", "1.55", "--offset-mm", "1.0", "--max-length-mm", "15",
                 "--crystals", "calcite", "quartz"])
    out = capsys.readouterr().out
    assert code == 0
    assert out.index("walkoff_displacer") < out.index("IEC 60825-1")
    assert out.count("Laser safety") == 1


def test_design_verb_json_and_csv(tmp_path, capsys):
    csv_path = tmp_path / "ranked.csv"
    code = main(["design", "--lines", "1.55", "--offset-mm", "1.0", "--crystals", "calcite",
                 "--json", "--csv", str(csv_path)])
    data = json.loads(capsys.readouterr().out)
    assert code == 0
    assert data["designs"][0]["prism_type"] in ("walkoff_displacer", "savart_plate")
    assert "laser_caution" in data
    assert csv_path.read_text().startswith("rank,prism_type")


def test_design_verb_checks_its_output_names_before_searching(tmp_path, capsys, monkeypatch):
    import prismdesign.cli_design as verb

    def never(*args, **kwargs):
        raise AssertionError("the search ran before the output names were checked")

    monkeypatch.setattr(verb, "search", never)
    base = ["design", "--lines", "1.55", "--offset-mm", "1.0", "--crystals", "calcite"]
    assert main(base + ["--csv", str(tmp_path / "nowhere" / "r.csv")]) == 2
    assert "does not exist" in capsys.readouterr().err
    assert main(base + ["--save", str(tmp_path)]) == 2
    assert "is a folder" in capsys.readouterr().err


def test_design_verb_reads_a_file_and_options_override(tmp_path, capsys):
    path = tmp_path / "need.toml"
    path.write_text('schema = 1\n[requirement]\nlines_um = [0.6328]\nsplit_deg = 5.0\n'
                    'crystals = ["calcite"]\nprism_types = ["wollaston"]\n', encoding="utf-8")
    assert main(["design", str(path), "--split-deg", "8", "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert data["requirement"]["split_deg"] == 8.0


@pytest.mark.parametrize("argv, fragment", [
    (["design", "--split-deg", "5"], "give the wavelengths"),
    (["design", "--band", "0.7", "0.4", "--split-deg", "5"], "low < high"),
    (["design", "--lines", "0.6", "--split-deg", "5", "--types", "prism"], "prism_types"),
    (["design", "--lines", "0.6", "--split-deg", "5", "--crystals", "unobtainium"], "unobtainium"),
    (["design", "missing.toml"], "missing.toml"),
])
def test_design_verb_bad_input_exits_2_with_one_line(argv, fragment, capsys):
    assert main(argv) == 2
    err = capsys.readouterr().err.strip()
    assert fragment in err and "\n" not in err


def test_design_help_has_an_example():
    out = subprocess.run([sys.executable, "-m", "prismdesign.cli", "design", "--help"],
                         capture_output=True, text=True, check=True).stdout
    assert "examples:" in out and "prismdesign design --band" in out
