"""Fabrication sheet: its numbers equal the design's geometry, its SVG keeps them as text.

Geometry checks compare the sheet with values computed here from the builders' inputs by plane
trigonometry (a wedge of angle θ over a width w is w·tan θ thicker at one side than at the
other; the angle between two planes is the angle between their normals) and from the prism's
boundary planes directly (z = z₀ − (x − x₀)·n_x/n_z on each face), independently of the
package's own geometry code. ISO 10110 notation: ISO 10110-5 (3/ A(B)), -6 (4/ tilt), -7
(5/ N×A), -17 (6/ threshold; wavelength; pulse length), from memory, checked against public
summaries of the standard.
"""
import math
import re
import warnings
import xml.etree.ElementTree as ET
from dataclasses import replace

import numpy as np
import pytest
from hypothesis import example, given, settings
from hypothesis import strategies as st

from prismdesign import prisms
from prismdesign.design.perturbation import apply_errors
from prismdesign.materials import material
from prismdesign.design.tolerance import Tolerance, ToleranceSet
from prismdesign.output.demo_materials import LASER_CAUTION
from prismdesign.output.fabrication_data import (fabrication_data, iso_damage_callout,
                                                 iso_form_callout, iso_imperfection_callout,
                                                 iso_tilt_callout)
from prismdesign.output.fabrication_sheet import write_fabrication_sheet
from prismdesign.prisms import Boundary, Piece, Prism

SVG = "{http://www.w3.org/2000/svg}"


def _svg_texts(path):
    """Every <text> string of an SVG file, in document order."""
    root = ET.parse(path).getroot()
    return ["".join(el.itertext()) for el in root.iter(f"{SVG}text")]


def _angle(piece, a, b):
    return next(d for d in piece.angles if d.faces == (a, b))


def _length(piece, name):
    return next(d for d in piece.lengths if d.name == name)


def _face_z(boundary, x):
    """z of a boundary plane at height x in the section y = 0 (plane equation)."""
    p, n = boundary.point_mm, boundary.normal
    return p[2] - (x - p[0]) * n[0] / n[2]


def _dihedral_deg(n1, n2):
    return math.degrees(math.acos(min(1.0, abs(float(np.dot(n1, n2))))))


@pytest.fixture(scope="module")
def tolerances():
    return ToleranceSet((Tolerance("face1_angle_deg", "uniform", 0.05),
                         Tolerance("face0_angle_deg", "uniform", 0.02),
                         Tolerance("piece0_length_mm", "uniform", 0.1),
                         Tolerance("piece1_axis_polar_deg", "normal", 0.1),
                         Tolerance("face2_pyramid_deg", "uniform", 0.04),
                         Tolerance("incidence_in_plane_deg", "uniform", 0.2)))


# ------------------------------------------------------------------------ geometry
@pytest.mark.parametrize("theta, theta2", [(15.0, None), (20.0, 12.0), (38.0, 38.0)])
def test_wollaston_wedges_equal_plane_trigonometry(theta, theta2):
    w, edge = 8.0, 1.5
    prism = prisms.wollaston(wedge_angle_deg=theta, exit_wedge_angle_deg=theta2, width_mm=w,
                             edge_thickness_mm=edge)
    first, second = fabrication_data(prism).pieces
    theta2 = theta if theta2 is None else theta2
    # Wedge angles: the builder's inputs (the angle between entrance face and interface, and
    # between interface and exit face).
    assert _angle(first, "entrance face", "interface").angle_deg == pytest.approx(theta, abs=1e-9)
    assert _angle(second, "interface", "exit face").angle_deg == pytest.approx(theta2, abs=1e-9)
    # Lengths along the side faces: thin edge as built, thick edge w·tan θ longer.
    assert _length(first, "length along side face +x").length_mm == pytest.approx(edge)
    assert _length(first, "length along side face −x").length_mm == pytest.approx(
        edge + w * math.tan(math.radians(theta)))
    assert _length(second, "length along side face −x").length_mm == pytest.approx(edge)
    # Second wedge between planes tilted by θ and θ − θ₂ from the entrance plane: along z its
    # thick side is w·(tan θ − tan(θ − θ₂)) longer than its thin side (plane
    # trigonometry).
    assert _length(second, "length along side face +x").length_mm == pytest.approx(
        edge + w * (math.tan(math.radians(theta)) - math.tan(math.radians(theta - theta2))))
    # The interface meets the side faces at 90° ± θ.
    assert _angle(first, "interface", "side face −x").angle_deg == pytest.approx(90 - theta)
    assert _angle(first, "interface", "side face +x").angle_deg == pytest.approx(90 + theta)
    # Exit face of an unequal Wollaston is tilted by θ − θ₂ from the entrance plane.
    assert _angle(second, "exit face", "side face −x").angle_deg == pytest.approx(
        90 - (theta - theta2))


@pytest.mark.parametrize("build", [
    lambda: prisms.wollaston(wedge_angle_deg=20.0, exit_wedge_angle_deg=12.0),
    lambda: prisms.rochon(wedge_angle_deg=25.0),
    lambda: prisms.senarmont(),
    lambda: prisms.nomarski(axis_tilt_deg=14.8),
    lambda: prisms.walkoff_displacer(),
    lambda: prisms.savart_plate(),
    lambda: prisms.glan_air_spaced(),
    lambda: prisms.glan_cemented(),
    lambda: prisms.free_stack([("calcite", "x", 10.0, 1.0), ("fused_silica", None, -5.0, 2.0),
                               ("quartz", (30.0, 20.0), 0.0, 1.5)]),
], ids=["wollaston-unequal", "rochon", "senarmont", "nomarski", "displacer", "savart",
        "glan-air", "glan-cemented", "free-stack"])
def test_sheet_numbers_equal_the_boundary_planes(build):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        prism = build()
    data = fabrication_data(prism)
    assert len(data.pieces) == len(prism.pieces)
    half = 0.5 * prism.width_mm
    for i, piece in enumerate(data.pieces):
        b0, b1 = prism.boundaries[i], prism.boundaries[i + 1]
        wedge = next(a for a in piece.angles if a.reference)
        assert wedge.angle_deg == pytest.approx(_dihedral_deg(b0.normal, b1.normal), abs=1e-9)
        for side, x in (("−x", -half), ("+x", half)):
            expected = _face_z(b1, x) - _face_z(b0, x)
            assert _length(piece, f"length along side face {side}").length_mm == \
                pytest.approx(expected, abs=1e-9)
        assert _length(piece, "length at the centre line").length_mm == pytest.approx(
            _face_z(b1, 0.0) - _face_z(b0, 0.0), abs=1e-9)
        # Each optical face meets the −x side face at 90° ± its tilt about y: entrance-side
        # faces open toward +z, exit-side faces toward −z.
        for face, b, sign in ((piece.faces[0], b0, 1.0), (piece.faces[1], b1, -1.0)):
            tilt = math.degrees(math.atan2(b.normal[0], b.normal[2]))
            assert _angle(piece, face, "side face −x").angle_deg == pytest.approx(
                90 + sign * tilt, abs=1e-9)
            assert _angle(piece, face, "side face +x").angle_deg == pytest.approx(
                90 - sign * tilt, abs=1e-9)
        # Axis angles to the faces: arcsin |c·n| (angle between a line and a plane).
        if prism.pieces[i].is_crystal:
            c = prism.pieces[i].optic_axis
            named = dict(piece.axis_angles)
            assert named[f"angle to the {piece.faces[0]}"] == pytest.approx(
                math.degrees(math.asin(min(1.0, abs(float(c @ b0.normal))))), abs=1e-9)
            assert named[f"angle to the {piece.faces[1]}"] == pytest.approx(
                math.degrees(math.asin(min(1.0, abs(float(c @ b1.normal))))), abs=1e-9)


@settings(max_examples=25, deadline=None)
@given(angles=st.lists(st.floats(-40.0, 40.0), min_size=1, max_size=3),
       thickness=st.floats(0.3, 5.0), width=st.floats(2.0, 20.0))
# Parallel faces: arccos of the normals' dot product once gave 8.5e-7° instead of 0.
@example(angles=[34.875, 34.875], thickness=1.0, width=2.0)
def test_any_stack_reads_back_its_planes(angles, thickness, width):
    """Property: for any stack of wedges, lengths along the side faces are the distances
    between the face planes there, and each wedge angle is the angle between the faces'
    tilts (plane geometry)."""
    pieces = [("calcite", "y", a, thickness) for a in angles]
    prism = prisms.free_stack(pieces, width_mm=width)
    data = fabrication_data(prism)
    tilts = [0.0] + angles
    for i, piece in enumerate(data.pieces):
        b0, b1 = prism.boundaries[i], prism.boundaries[i + 1]
        wedge = next(a for a in piece.angles if a.reference)
        assert wedge.angle_deg == pytest.approx(abs(tilts[i + 1] - tilts[i]), abs=1e-7)
        lengths = [_length(piece, f"length along side face {s}").length_mm for s in ("−x", "+x")]
        assert lengths == pytest.approx([_face_z(b1, -0.5 * width) - _face_z(b0, -0.5 * width),
                                         _face_z(b1, 0.5 * width) - _face_z(b0, 0.5 * width)])
        # The builder's thinnest z-thickness is the shorter side.
        assert min(lengths) == pytest.approx(thickness)


def test_sheet_angles_are_the_polygon_corners():
    """The four face/side angles of each piece are the interior angles of its outline."""
    prism = prisms.wollaston(wedge_angle_deg=25.0, exit_wedge_angle_deg=10.0)
    data = fabrication_data(prism)
    for piece, (_, poly) in zip(data.pieces, prism.outline()):
        corners = []
        for k in range(len(poly)):
            a, b = poly[k - 1] - poly[k], poly[(k + 1) % len(poly)] - poly[k]
            corners.append(math.degrees(math.acos(a @ b / np.linalg.norm(a) / np.linalg.norm(b))))
        drawn = [a.angle_deg for a in piece.angles if not a.reference]
        assert sorted(drawn) == pytest.approx(sorted(corners), abs=1e-9)
        # Interior angles of a quadrilateral add up to 360° (Euclid).
        assert sum(drawn) == pytest.approx(360.0)


def test_axis_words_and_angles_for_the_catalogue():
    """Axis directions as the builders define them (their docstrings)."""
    w = fabrication_data(prisms.wollaston()).pieces
    assert w[0].axis_words.startswith("in the entrance face, along the width")
    assert "along the height (y)" in w[1].axis_words
    r = fabrication_data(prisms.rochon()).pieces
    assert r[0].axis_words.startswith("perpendicular to the entrance face (along the beam)")
    nom = fabrication_data(prisms.nomarski(axis_tilt_deg=14.8)).pieces[0]
    assert "tilted 14.80° out of the entrance face" in nom.axis_words
    assert dict(nom.axis_angles)["angle to the entrance face"] == pytest.approx(14.8)
    # Nomarski: the tilted axis meets the interface (tilted 5° the other way) at τ + θ.
    assert dict(nom.axis_angles)["angle to the interface"] == pytest.approx(19.8)
    disp = prisms.walkoff_displacer(cut_angle_deg=40.0)
    plate = fabrication_data(disp).pieces[0]
    # Axis at 40° from the face normal lies 50° out of the face.
    assert dict(plate.axis_angles)["angle to the entrance face"] == pytest.approx(50.0)
    sav = fabrication_data(prisms.savart_plate(axis_angle_deg=45.0, azimuth_deg=45.0)).pieces
    assert "45.00° from the normal of the entrance face" in sav[0].axis_words
    assert "from +x toward +y" in sav[0].axis_words
    assert "from −x toward +y" in sav[1].axis_words
    # Axis at 45° polar, 45° azimuth: its y component sin45·sin45 = 1/2, so 30° to the x–z
    # plane.
    assert dict(sav[0].axis_angles)["angle to the principal section"] == pytest.approx(30.0)


def test_prisms_in_series_are_drawn_in_their_own_frames():
    prism = prisms.double_wollaston(rotation_deg=45.0, spacing_mm=2.0)
    data = fabrication_data(prism)
    assert [p.index for p in data.pieces] == [0, 1, 3, 4]        # piece 2 is the air space
    assert [p.frame_deg for p in data.pieces] == pytest.approx([0, 0, 45, 45])
    third = data.pieces[2]
    # Turned with its prism, the second Wollaston's wedge reads as a 15° wedge again.
    assert _angle(third, "prism 2 entrance face", "prism 2 interface").angle_deg == \
        pytest.approx(15.0)
    assert third.axis_words.startswith("in the prism 2 entrance face, along the width")
    space = [j for j in data.joints if j.kind == "space"]
    assert len(space) == 1 and space[0].thickness_mm == pytest.approx(2.0)
    # The space's own length tolerance (piece 2) goes to the spacing.
    spaced = fabrication_data(prism, ToleranceSet((Tolerance("piece2_length_mm", "uniform",
                                                             0.2),)))
    assert "after 2.000 ±0.2 mm of air" in spaced.joints[-1].text
    assert any("turned 45.00°" in line for line in data.assembly)
    # Faces beside the space are outer faces (coated or polished), not "internal".
    coat = dict(data.pieces[1].coatings)["prism 1 exit face"]
    assert coat.startswith("uncoated")


def test_coating_band_from_the_requirement():
    from prismdesign.design import Requirement

    need = Requirement(lines_um=(0.532, 1.064), split_deg=5.0)
    data = fabrication_data(prisms.wollaston(coated=True), requirement=need)
    assert dict(data.pieces[0].coatings)["entrance face"].startswith(
        "antireflection coated for 532, 1064 nm")


def test_joints_and_coatings():
    cemented = fabrication_data(prisms.glan_cemented(coated=True))
    (joint,) = cemented.joints
    assert joint.kind == "cement" and joint.thickness_mm == pytest.approx(0.01)
    assert "10 µm" in joint.text
    assert "antireflection coated for 632.8 nm" in dict(cemented.pieces[0].coatings)[
        "entrance face"]
    air = fabrication_data(prisms.glan_air_spaced(gap_mm=0.02))
    assert air.joints[0].kind == "gap" and "20 µm" in air.joints[0].text
    assert fabrication_data(prisms.wollaston()).joints[0].kind == "contact"


# ------------------------------------------------------------------------ tolerances
def test_tolerances_go_to_the_dimensions_they_change(tolerances):
    data = fabrication_data(prisms.wollaston(), tolerances)
    first, second = data.pieces
    # face0 (entrance) ±0.02°, face1 (interface) ±0.05°: every corner angle of that face.
    assert _angle(first, "entrance face", "side face −x").limit_deg == pytest.approx(0.02)
    assert _angle(first, "interface", "side face +x").limit_deg == pytest.approx(0.05)
    assert _angle(second, "interface", "side face −x").limit_deg == pytest.approx(0.05)
    assert _angle(second, "exit face", "side face −x").limit_deg is None
    # Wedge angle: worst-case sum of both faces' limits.
    assert _angle(first, "entrance face", "interface").limit_deg == pytest.approx(0.07)
    assert _angle(second, "interface", "exit face").limit_deg == pytest.approx(0.05)
    # piece0 length ±0.1 mm on piece 0's lengths only.
    assert all(_length(first, n).limit_mm == pytest.approx(0.1) for n in (
        "length along side face −x", "length along side face +x", "length at the centre line"))
    assert all(d.limit_mm is None for d in second.lengths)
    # Normal σ 0.1° drawn as ±3σ.
    assert "±0.3° in polar angle" in second.axis_tolerance
    assert first.axis_tolerance == "axis orientation tolerance: not specified"
    # Tilt callouts from the face tolerances (arc minutes), pyramidal error on face 2.
    assert "4/ 1.2'" in dict(first.callouts)["entrance face"]
    assert "4/ 3'" in dict(first.callouts)["interface"]
    assert "pyramidal error ±0.04°" in dict(second.callouts)["exit face"]
    # Input-beam tolerances are use conditions, not shop tolerances.
    assert data.other_tolerances == ("incidence_in_plane_deg ±0.2",)


def test_no_tolerances_means_not_specified():
    data = fabrication_data(prisms.wollaston())
    assert data.tolerance_note == "tolerances: not specified"
    assert all(a.limit_deg is None for p in data.pieces for a in p.angles)
    assert all(not any(c.startswith("4/") for c in calls)
               for p in data.pieces for _, calls in p.callouts)


# ------------------------------------------------------------------------ ISO 10110
def test_iso_callout_formats():
    assert iso_form_callout(0.5, 0.2) == "3/ 0.5(0.2)"
    assert iso_form_callout(2, 1) == "3/ 2(1)"
    assert iso_tilt_callout(0.05) == "4/ 3'"
    assert iso_tilt_callout(0.01) == '4/ 36"'
    assert iso_imperfection_callout(3, 0.16) == "5/ 3×0.16"
    assert iso_damage_callout(5, "J/cm²", 1064, 10) == "6/ 5 J/cm²; 1064 nm; 10 ns"
    assert iso_damage_callout(1, "kW/cm2", 1064) == "6/ 1 kW/cm²; 1064 nm"
    pattern = re.compile(r"^(3/ [\d.]+\([\d.]+\)|4/ [\d.]+['\"]|5/ \d+×[\d.]+|6/ .+ nm.*)$")
    data = fabrication_data(prisms.wollaston(), surface_spec={
        "form_fringes": (1, 0.25), "imperfections": (2, 0.1),
        "damage_threshold": (2, "J/cm²", 1064, 8)})
    calls = [c for p in data.pieces for _, cs in p.callouts for c in cs]
    assert calls and all(pattern.match(c) for c in calls)
    assert "3/ 1(0.25)" in calls and "5/ 2×0.1" in calls and "6/ 2 J/cm²; 1064 nm; 8 ns" in calls


@pytest.mark.parametrize("call, match", [
    (lambda: iso_form_callout(-1, 0.2), "form power"),
    (lambda: iso_imperfection_callout(0, 0.16), "count"),
    (lambda: iso_damage_callout(5, "J", 1064, 10), "unit"),
    (lambda: iso_damage_callout(5, "J/cm²", 1064), "pulse_length_ns"),
    (lambda: iso_damage_callout(5, "W/cm²", 1064, 10), "continuous"),
])
def test_iso_bad_values_fail_in_one_line(call, match):
    with pytest.raises(ValueError, match=match) as info:
        call()
    assert "\n" not in str(info.value)


# ------------------------------------------------------------------------ files
def test_svg_keeps_the_numbers_as_text(tmp_path, tolerances):
    prism = prisms.wollaston()
    path = write_fabrication_sheet(prism, tmp_path / "w.svg", tolerances=tolerances,
                                   notes="for our lab's two-channel polarimeter")
    texts = _svg_texts(path)
    assert len(texts) > 60
    data = fabrication_data(prism, tolerances)
    first = data.pieces[0]
    # The dimension values with their tolerances sit in one text element each: the tolerance
    # is written next to its dimension.
    thick = _length(first, "length along side face −x")
    assert thick.text() == "3.679 ±0.1 mm" and thick.text() in texts
    corner = _angle(first, "interface", "side face +x")
    assert corner.text() == "105.000° ±0.05°" and corner.text() in texts
    assert "1.000 mm" in texts                  # piece 2's thin side: no tolerance given
    joined = " ".join(texts)
    for call in ("3/ 0.5(0.2)", "5/ 3×0.16", "4/ 3'"):
        assert call in joined
    assert "calcite (ghosh-1999)" in joined and "Ghosh" in joined
    assert "for our lab's two-channel polarimeter" in joined
    # Text is text: no glyph outlines in the file.
    raw = path.read_text(encoding="utf-8")
    assert 'id="DejaVuSans-' not in raw and 'xlink:href="#DejaVuSans-' not in raw


def test_every_piece_and_tilted_axis_is_labelled(tmp_path):
    path = write_fabrication_sheet(prisms.nomarski(axis_tilt_deg=14.8), tmp_path / "n.svg")
    texts = _svg_texts(path)
    assert "Piece 1: first wedge — quartz (ghosh-1999)" in texts
    assert "Piece 2: second wedge — quartz (ghosh-1999)" in texts
    assert "axis 14.80° to the entrance face" in texts
    assert {"entrance face", "interface", "exit face"} <= set(texts)
    double = write_fabrication_sheet(prisms.double_wollaston(), tmp_path / "d.svg")
    titles = [t for t in _svg_texts(double) if t.startswith("Piece ")]
    assert len(titles) == 4


def test_glan_second_wedge_axis_named_by_its_exit_face():
    second = fabrication_data(prisms.glan_air_spaced()).pieces[1]
    assert second.axis_words.startswith("in the exit face, along the width")
    assert second.axis_face == "exit face"


def test_laser_caution_appears_once(tmp_path):
    path = write_fabrication_sheet(prisms.glan_air_spaced(), tmp_path / "g.svg")
    joined = re.sub(r"\s+", " ", " ".join(_svg_texts(path)))
    assert joined.count(LASER_CAUTION) == 1
    assert joined.count("Laser safety:") == 1


def test_pdf_is_written(tmp_path):
    path = write_fabrication_sheet(prisms.savart_plate(), tmp_path / "s.pdf")
    raw = path.read_bytes()
    assert raw.startswith(b"%PDF") and len(raw) > 10_000


def test_writing_is_reproducible_and_leaves_pyplot_alone(tmp_path):
    import matplotlib

    before = matplotlib.rcParams["svg.fonttype"]
    a = write_fabrication_sheet(prisms.rochon(), tmp_path / "a.svg").read_bytes()
    b = write_fabrication_sheet(prisms.rochon(), tmp_path / "b.svg").read_bytes()
    assert a == b
    assert matplotlib.rcParams["svg.fonttype"] == before
    import sys
    if "matplotlib.pyplot" in sys.modules:
        assert sys.modules["matplotlib.pyplot"].get_fignums() == []


def test_a_failed_write_keeps_the_old_file(tmp_path, monkeypatch):
    from matplotlib.figure import Figure

    target = tmp_path / "sheet.svg"
    target.write_text("old sheet", encoding="utf-8")

    def broken(self, name, **kwargs):
        with open(name, "w", encoding="utf-8") as handle:
            handle.write("<svg half written")
        raise OSError("disk full")

    monkeypatch.setattr(Figure, "savefig", broken)
    with pytest.raises(OSError, match="disk full"):
        write_fabrication_sheet(prisms.wollaston(), target)
    assert target.read_text(encoding="utf-8") == "old sheet"
    assert [p.name for p in tmp_path.iterdir()] == ["sheet.svg"]


@pytest.mark.parametrize("kwargs, match", [
    (dict(prism="wollaston"), "prism must be a Prism"),
    (dict(path="sheet.png"), r"must end in \.svg or \.pdf"),
    (dict(path="no/such/folder/s.svg"), "does not exist"),
    (dict(tolerances={"face1_angle_deg": 0.1}), "ToleranceSet"),
    (dict(tolerances=ToleranceSet((Tolerance("piece7_length_mm", "uniform", 0.1),))),
     "piece7_length_mm"),
    (dict(surface_spec={"flatness": 1}), "unknown key 'flatness'"),
    (dict(surface_spec={"form_fringes": 0.5}), "form_fringes must be a pair"),
    (dict(notes=3), "notes must be text"),
    (dict(requirement="0.8-1.0 um"), "Requirement"),
])
def test_bad_input_fails_in_one_line(tmp_path, monkeypatch, kwargs, match):
    monkeypatch.chdir(tmp_path)
    args = dict(prism=prisms.wollaston(), path=tmp_path / "s.svg") | kwargs
    prism, path = args.pop("prism"), args.pop("path")
    with pytest.raises(ValueError, match=match) as info:
        write_fabrication_sheet(prism, path, **args)
    assert "\n" not in str(info.value)
    assert not (tmp_path / "s.svg").exists()


def test_unsupported_geometry_fails_in_one_line(tmp_path):
    nominal = prisms.wollaston()
    # A face tilted out of the principal section (pyramidal face) is not drawn.
    tilted = replace(nominal, boundaries=(nominal.boundaries[0], replace(
        nominal.boundaries[1], normal=(0.2, 0.2, 1.0)), nominal.boundaries[2]))
    with pytest.raises(ValueError, match="tilted out of the principal section"):
        fabrication_data(tilted)
    # A perturbed (Monte Carlo) prism is not a drawing.
    perturbed, _ = apply_errors(nominal, {"face1_angle_deg": np.zeros(3)})
    with pytest.raises(ValueError, match="nominal prism"):
        write_fabrication_sheet(perturbed, tmp_path / "p.svg")


def test_isotropic_piece_is_labelled():
    prism = Prism("glass block", [Piece(material("fused_silica"), label="spacer")],
                  [Boundary((0, 0, 0), (0, 0, 1)), Boundary((0, 0, 3.0), (0, 0, 1))],
                  width_mm=5.0, height_mm=4.0, design_wavelength_um=0.6328)
    (piece,) = fabrication_data(prism).pieces
    assert piece.axis_words == "isotropic: no optic axis" and not piece.crystal
    assert _length(piece, "height (y)").length_mm == 4.0
