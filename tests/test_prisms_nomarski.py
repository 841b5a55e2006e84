"""Nomarski prism and the fringe-localisation plane."""
import numpy as np
import pytest

from prismdesign import material
from prismdesign.prisms import localisation_plane, nomarski, wollaston

LAM = 0.6328


def _central_crossing(prism):
    """(x, z) where the two exit rays of the central input ray cross (2-D line intersection)."""
    result = prism.trace(LAM, polarisation=(np.sqrt(0.5), np.sqrt(0.5)))
    (r1, d1), (r2, d2) = [(result[k].exit_position_mm[[0, 2]], result[k].exit_direction[[0, 2]])
                          for k in ("eo", "oe")]
    t = np.linalg.solve(np.column_stack([d1, -d2]), r2 - r1)
    return r1 + t[0] * d1


@pytest.mark.parametrize("theta_deg", [0.5, 1.0, 2.0, 4.0])
def test_wollaston_localisation_plane_tends_to_paraxial(theta_deg):
    """Paraxial Wollaston (derived here; the tilt formula is attributed to Françon & Mallick,
    Polarization Interferometers, 1971, from memory).

    A ray entering at height x meets the interface at z_i(x) = z_m − x tan θ. To first order
    in the birefringence the beams leave the interface at angles ∓Δ/n_o and ±Δ/n_e
    (Δ = (n_o − n_e) tan θ) and the exit face (at z = Z, surround index n_s) at ±Δ/n_s.
    Extending both exit rays back, they cross at Z − (Z − z_i)·k with
    k = n_s (n_o + n_e)/(2 n_o n_e). Hence the plane passes z = Z − (Z − z_m) k at x = 0 with
    tilt tan ε = −k tan θ, i.e. |tan ε| = tan θ (n_o + n_e)/(2 n_o n_e) in vacuum.
    """
    n_o, n_e = material("quartz").indices(LAM)
    n_s = material("air").indices(LAM)[0]
    k = n_s * (n_o + n_e) / (2 * n_o * n_e)
    prism = wollaston("quartz", theta_deg)
    plane = localisation_plane(prism)
    z_exit, z_mid = prism.boundaries[2].point_mm[2], prism.boundaries[1].point_mm[2]
    tilt = np.rad2deg(np.arctan(-k * np.tan(np.deg2rad(theta_deg))))
    assert plane.tilt_deg == pytest.approx(tilt, rel=5e-8)
    assert plane.z_mm == pytest.approx(z_exit - (z_exit - z_mid) * k, abs=2e-7)
    assert plane.labels in (("eo", "oe"), ("oe", "eo"))
    x_c, z_c = _central_crossing(prism)
    assert plane.z_mm == pytest.approx(z_c - x_c * np.tan(np.deg2rad(plane.tilt_deg)), abs=1e-12)


@pytest.mark.parametrize("distance", [1.0, 4.0, -5.0])
def test_solved_axis_tilt_puts_plane_at_requested_distance(distance):
    prism = nomarski("quartz", 5.0, localisation_distance_mm=distance)
    tilt = prism.parameters["axis_tilt_deg"]
    assert -90 < tilt < 90 and tilt != 0
    plane = localisation_plane(prism)
    assert plane.distance_from_exit_mm == pytest.approx(distance, abs=1e-8)
    # Checked independently: where the central ray pair crosses (2-D intersection here),
    # carried to x = 0 along the plane.
    x_c, z_c = _central_crossing(prism)
    z_exit = prism.boundaries[2].point_mm[2]
    z_plane = z_c - x_c * np.tan(np.deg2rad(plane.tilt_deg))
    assert z_plane - z_exit == pytest.approx(distance, abs=1e-8)
    # Rebuilding with the reported tilt gives the same prism.
    again = nomarski("quartz", 5.0, axis_tilt_deg=tilt)
    assert again.parameters["localisation_distance_mm"] == pytest.approx(distance, abs=1e-8)


def test_zero_tilt_is_a_wollaston():
    a = nomarski("quartz", 5.0, axis_tilt_deg=0.0).trace([0.5, 0.8], [-1.0, 2.0])
    b = wollaston("quartz", 5.0).trace([0.5, 0.8], [-1.0, 2.0])
    for label in ("eo", "oe"):
        np.testing.assert_allclose(a[label].exit_direction, b[label].exit_direction, atol=1e-15)


@pytest.mark.parametrize("kwargs, match", [
    (dict(), "exactly one"),
    (dict(axis_tilt_deg=10.0, localisation_distance_mm=5.0), "exactly one"),
    (dict(axis_tilt_deg=95.0), "axis_tilt_deg"),
    (dict(localisation_distance_mm="far"), "localisation_distance_mm"),
    (dict(localisation_distance_mm=50.0), "cannot be reached"),
    (dict(axis_tilt_deg=0.0, wedge_angle_deg=-2), "wedge_angle_deg"),
])
def test_bad_input_one_line_errors(kwargs, match):
    with pytest.raises(ValueError, match=match) as info:
        nomarski(**kwargs)
    assert "\n" not in str(info.value)


def test_localisation_plane_bad_input():
    prism = wollaston()
    for kwargs, match in ((dict(points=1), "points"), (dict(extent=0), "extent"),
                          (dict(labels=("eo", "xx")), "beam 'xx'")):
        with pytest.raises(ValueError, match=match):
            localisation_plane(prism, **kwargs)
