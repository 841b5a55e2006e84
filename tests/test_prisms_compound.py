"""Free stacks, compound prisms and the double Wollaston."""
import numpy as np
import pytest

from prismdesign import material
from prismdesign.optics import ThinLayer, TraceFlag
from prismdesign.prisms import (StackPiece, compound_prism, double_wollaston, free_stack,
                                interface_layer, in_series, wollaston)

LAM = np.array([0.45, 0.6328, 1.064])


def _compare(a, b, atol):
    assert sorted(a.beams) == sorted(b.beams)
    for label in a.beams:
        np.testing.assert_allclose(a[label].exit_direction, b[label].exit_direction, atol=atol)
        np.testing.assert_allclose(a.power(label), b.power(label), atol=atol)


@pytest.mark.parametrize("angles", [(15.0, None), (20.0, 12.0)])
def test_free_stack_reproduces_wollaston(angles):
    # Same crystal, same axes, same faces: an identical prism (internal consistency with the
    # lead's builder; the Wollaston itself is checked against Snell's law in its own tests).
    wedge, exit_wedge = angles
    tilt = 0.0 if exit_wedge is None else wedge - exit_wedge
    reference = wollaston("calcite", wedge, exit_wedge_angle_deg=exit_wedge)
    stack = free_stack([StackPiece("calcite", "x", wedge, 1.0),
                        dict(material="calcite", optic_axis=(90.0, 90.0), exit_face_deg=tilt,
                             thickness_mm=1.0)])
    compound = compound_prism([("calcite", "x", wedge), ("calcite", "y", tilt - wedge)])
    kwargs = dict(in_plane_deg=np.array([-3.0, 0.0, 2.0])[:, None, None],
                  out_of_plane_deg=np.array([0.0, 1.5])[:, None], offset_mm=(0.7, -0.4))
    a = reference.trace(LAM, **kwargs)
    _compare(a, stack.trace(LAM, **kwargs), 1e-12)
    _compare(a, compound.trace(LAM, **kwargs), 1e-12)


def test_zero_thickness_interface_layer_changes_nothing():
    pieces = [dict(material="calcite", optic_axis="x", exit_face_deg=10.0),
              dict(material="fused_silica", exit_face_deg=-5.0),
              dict(material="quartz", optic_axis=(45.0, 30.0), exit_face_deg=0.0)]
    bare = free_stack(pieces)
    layered = free_stack(pieces, interfaces=[dict(material="optical_cement", thickness_mm=0.0),
                                             interface_layer("air", 0.0)])
    assert isinstance(layered.boundaries[1].layer, ThinLayer)
    _compare(bare.trace(LAM, 1.0), layered.trace(LAM, 1.0), 1e-12)


@pytest.mark.parametrize("treatment", ["coherent", "auto", "incoherent"])
def test_cement_layer_film_transmission_at_normal_incidence(treatment):
    # Two glass plates with a 3 µm cement film between them at normal incidence, R the
    # film-glass reflectance ((n₁−n₂)/(n₁+n₂))² (Born & Wolf §1.5.3). Coherent: the Airy
    # formula T = 1/(1 + F sin²δ), F = 4R/(1−R)², δ = 2π n₂ d/λ (Born & Wolf §7.6.1).
    # Incoherent (the default "auto" for a film several wavelengths thick): powers add,
    # T = (1−R)²/(1 − R²) = (1−R)/(1+R) (geometric series of the bounces; Harbecke, Appl.
    # Phys. B 39, 165 (1986), from memory).
    lam, d_um = 0.6328, 3.0
    n1 = float(material("fused_silica").indices(lam)[0])
    n2 = 1.70
    n_air = float(material("air").indices(lam)[0])
    prism = free_stack([dict(material="fused_silica", thickness_mm=2.0)] * 2,
                       interfaces=[interface_layer(n2, d_um * 1e-3, treatment)],
                       design_wavelength_um=lam)
    result = prism.trace(lam, polarisation=(1.0, 0.0))
    (label,) = result.labels()
    r = ((n1 - n2) / (n1 + n2)) ** 2
    if treatment == "coherent":
        film = 1.0 / (1.0 + 4 * r / (1 - r) ** 2 * np.sin(2 * np.pi * n2 * d_um / lam) ** 2)
    else:
        film = (1 - r) / (1 + r)
    faces = (4 * n_air * n1 / (n_air + n1) ** 2) ** 2
    assert float(result.power(label)) == pytest.approx(faces * film, rel=1e-10)
    incoherent = bool(result[label].flags & TraceFlag.INCOHERENT_LAYER)
    assert incoherent == (treatment != "coherent")
    assert treatment in result.layer_treatments["interface 1"]


def test_double_wollaston_four_equal_beams():
    # Unpolarised light: the first prism halves the power; the second, turned by 45°, halves
    # each beam again (Malus's law, cos²45° = ½) - a quarter each, minus Fresnel losses at four
    # air-calcite faces and two calcite-calcite interfaces. The losses are estimated at normal
    # incidence with each beam's mode index (Born & Wolf §1.5.3); obliquity (2.6° in air, 15°
    # at the interfaces) changes them by less than 1e-3.
    lam = 0.6328
    prism = double_wollaston(spacing_mm=2.0, rotation_deg=45.0)
    result = prism.trace(lam)
    n_o, n_e = material("calcite").indices(lam)
    n_air = material("air").indices(lam)[0]
    index = {"o": n_o, "e": n_e}
    t = lambda a, b: 4 * a * b / (a + b) ** 2  # noqa: E731
    main = ["eoeo", "eooe", "oeeo", "oeoe"]
    assert set(main) <= set(result.beams)
    for label in main:
        m = [index[c] for c in label]
        expected = 0.25 * (t(n_air, m[0]) * t(m[0], m[1]) * t(m[1], n_air)
                           * t(n_air, m[2]) * t(m[2], m[3]) * t(m[3], n_air))
        assert float(result.power(label)) == pytest.approx(expected, abs=1e-3)
    powers = np.array([float(result.power(label)) for label in main])
    assert powers.max() - powers.min() < 2e-3
    others = sum(float(result.power(k)) for k in result.beams if k not in main)
    assert others < 1e-5
    # Four distinct directions: two split planes at 0° and 45°.
    directions = np.array([result[k].exit_direction[0] for k in main])
    gram = directions @ directions.T
    assert np.all(gram[~np.eye(4, dtype=bool)] < 1 - 1e-4)


@pytest.mark.parametrize("call, match", [
    (lambda: free_stack([]), "at least one piece"),
    (lambda: free_stack([dict(material="calcite")]), "needs an optic_axis"),
    (lambda: free_stack([dict(material="calcite", optic_axis="w")]), "optic_axis"),
    (lambda: free_stack([dict(material="calcite", axis="x")]), "unknown key 'axis'"),
    (lambda: free_stack([dict(optic_axis="x")]), "'material' is required"),
    (lambda: free_stack([dict(material="quartz", optic_axis="z", exit_face_deg=85)]),
     "exit face angle"),
    (lambda: free_stack([dict(material="quartz", optic_axis="z", thickness_mm=0)]),
     "thickness_mm"),
    (lambda: free_stack([dict(material="quartz", optic_axis="z")] * 2, interfaces=[]),
     "interface layers"),
    (lambda: free_stack([dict(material="quartz", optic_axis="z")] * 2, interfaces=["glue"]),
     "interface 0"),
    (lambda: compound_prism([("calcite", "x", "steep")]), "wedge_angle_deg"),
    (lambda: double_wollaston(spacing_mm=0), "spacing_mm"),
    (lambda: in_series(wollaston(), "prism"), "second must be a Prism"),
    (lambda: double_wollaston(rotation_deg="half"), "rotation_deg"),
])
def test_bad_input_one_line_errors(call, match):
    with pytest.raises(ValueError, match=match) as info:
        call()
    assert "\n" not in str(info.value)
