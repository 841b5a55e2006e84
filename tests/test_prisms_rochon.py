"""Rochon and Sénarmont prisms: the ordinary beam leaves undeviated at normal incidence."""
import numpy as np
import pytest

from prismdesign import material
from prismdesign.prisms import rochon, senarmont

WAVELENGTHS = np.array([0.35, 0.45, 0.6328, 1.064, 1.55])


def _angle_from_z(direction):
    return np.arctan2(np.hypot(direction[..., 0], direction[..., 1]), direction[..., 2])


@pytest.mark.parametrize("build, undeviated_jones", [(rochon, (1.0, 0.0)), (senarmont, (0.0, 1.0))])
@pytest.mark.parametrize("crystal", ["calcite", "quartz", "mgf2"])
def test_ordinary_beam_undeviated_at_every_wavelength(build, undeviated_jones, crystal):
    # Index n_o on both sides of the interface and parallel outer faces: Snell's law leaves
    # the wave normal unchanged (Bennett, Handbook of Optics vol. II, ch. 3; from memory).
    lam = WAVELENGTHS[(WAVELENGTHS > material(crystal).validity_um[0])
                      & (WAVELENGTHS < material(crystal).validity_um[1])]
    result = build(crystal, 20.0).trace(lam, polarisation=undeviated_jones)
    assert len(result.beams) == 1
    (label, beam), = result.beams.items()
    assert label.endswith("o")
    assert np.max(_angle_from_z(beam.exit_direction)) < 1e-12


def test_rochon_deviated_beam_follows_snell_twice():
    # Axis y in the second wedge: the e-wave has E ∥ axis and index n_e for every in-plane
    # direction. Interface: n_o sin θ = n_e sin θ'; exit face: n_air sin α = n_e sin(θ − θ')
    # (Snell's law, Born & Wolf §1.5.1). With n_e < n_o the ray bends away from the interface
    # normal (which leans toward +x), i.e. toward −x: α < 0.
    theta = np.deg2rad(20.0)
    result = rochon("calcite", 20.0).trace(WAVELENGTHS, polarisation=(0.0, 1.0))
    n_o, n_e = material("calcite").indices(WAVELENGTHS)
    n_air = material("air").indices(WAVELENGTHS)[0]
    inner = np.arcsin(n_o * np.sin(theta) / n_e)
    alpha = np.arcsin(n_e * np.sin(theta - inner) / n_air)
    (label, beam), = result.beams.items()
    assert label.endswith("e")
    np.testing.assert_allclose(np.arctan2(beam.exit_direction[..., 0], beam.exit_direction[..., 2]),
                               alpha, atol=1e-12)


@pytest.mark.parametrize("build", [rochon, senarmont])
@pytest.mark.parametrize("kwargs, match", [
    (dict(wedge_angle_deg=0), "wedge_angle_deg"),
    (dict(wedge_angle_deg=85), "wedge_angle_deg"),
    (dict(edge_thickness_mm=-1), "edge_thickness_mm"),
    (dict(height_mm="tall"), "height_mm"),
])
def test_bad_input_one_line_errors(build, kwargs, match):
    with pytest.raises(ValueError, match=match) as info:
        build(**kwargs)
    assert "\n" not in str(info.value)
