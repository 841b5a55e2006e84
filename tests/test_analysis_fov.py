"""Field of view of polarising prisms against exact total-reflection conditions and handbook values.

The references are computed here, independently of the package's margin code: Snell's law at
the entrance face, the critical angle sin θ_c = n_gap/n at the gap (Born & Wolf, *Principles of
Optics*, 7th ed., 1999, §1.5.4), and for the extraordinary wave the index-ellipsoid relation
1/n(ψ)² = cos²ψ/n_o² + sin²ψ/n_e² with ψ the angle between wave normal and optic axis (Born &
Wolf, §15.3.3), solved with scipy's brentq. Refractive indices come from the package's
material data (they are tested elsewhere); what is checked here is the field-of-view geometry.
"""
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.optimize import brentq

from prismdesign.analysis.field_of_view import (DIRECTIONS, beam_blocked, beam_passes,
                                                extinction_at_least, field_of_view, find_edges,
                                                power_at_least, power_at_most,
                                                requirement_margins)
from prismdesign.prisms import wollaston
from prismdesign.prisms.glan import glan_air_spaced, glan_cemented

EDGE_TOL_DEG = 1e-6


def _indices(prism, wavelength_um):
    n_o, n_e = prism.pieces[0].material.indices(wavelength_um)
    n_s = prism.surround.indices(wavelength_um)[0]
    n_gap = prism.boundaries[1].layer.material.indices(wavelength_um)[0]
    return float(n_o), float(n_e), float(n_s), float(n_gap)


def _e_index(beta, n_o, n_e, axis):
    """Extraordinary index of an in-plane wave normal at β from z (Born & Wolf §15.3.3)."""
    if axis == "y":
        return n_e                                   # wave normal ⟂ axis for in-plane rays
    # axis x: angle to the axis ψ = 90° − β, so cos ψ = sin β.
    return 1.0 / np.sqrt(np.sin(beta) ** 2 / n_o ** 2 + np.cos(beta) ** 2 / n_e ** 2)


def glan_edges_exact(prism, wavelength_um, axis):
    """External in-plane edges (deg) of a Glan field from the exact conditions at the gap.

    Gap normal (sin θ, 0, cos θ); a wave normal at β from z (toward +x) meets it at incidence
    θ − β, so its tangential wave vector is n sin(θ − β). The rejected o-beam stops being
    totally reflected when n_o sin(θ − β) = n_gap (toward +x); the e-beam becomes totally
    reflected when n(β) sin(θ − β) = n_gap (toward −x). Snell at the entrance face:
    n_s sin α = n sin β.
    """
    n_o, n_e, n_s, n_gap = _indices(prism, wavelength_um)
    theta = np.deg2rad(prism.parameters["cut_angle_deg"])
    beta_o = theta - np.arcsin(n_gap / n_o)
    alpha_o = np.arcsin(n_o * np.sin(beta_o) / n_s)

    def e_condition(beta):
        return _e_index(beta, n_o, n_e, axis) * np.sin(theta - beta) - n_gap

    beta_e = brentq(e_condition, -0.6, 0.2, xtol=1e-15, rtol=1e-15)
    alpha_e = np.arcsin(_e_index(beta_e, n_o, n_e, axis) * np.sin(beta_e) / n_s)
    return np.rad2deg(alpha_o), np.rad2deg(alpha_e)


@pytest.mark.parametrize("axis", ["x", "y"])
def test_glan_air_spaced_edges_match_exact_total_reflection(axis):
    # Critical angle and Snell's law (Born & Wolf 1999, §1.5.4), extraordinary index
    # (Born & Wolf 1999, §15.3.3): both edges to 1e-6 degrees, at three wavelengths at once.
    prism = glan_air_spaced("calcite", 38.5, axis=axis)
    lam = np.array([0.5, 0.6328, 1.0])
    fov = field_of_view(prism, lam, half_range_deg=10.0, steps=81)
    assert [r.name for r in fov.requirements] == ["ee not totally reflected",
                                                  "oo totally reflected"]
    for i, wl in enumerate(lam):
        alpha_o, alpha_e = glan_edges_exact(prism, wl, axis)
        assert 0.0 < alpha_o < 10.0 and -10.0 < alpha_e < 0.0
        half = fov.half_angles_deg["combined"][i]
        assert half[0] == pytest.approx(alpha_o, abs=EDGE_TOL_DEG)        # +in-plane: o leaks
        assert half[1] == pytest.approx(-alpha_e, abs=EDGE_TOL_DEG)       # −in-plane: e blocked
        assert fov.half_angles_deg["oo totally reflected"][i, 0] == pytest.approx(
            alpha_o, abs=EDGE_TOL_DEG)
        assert fov.half_angles_deg["ee not totally reflected"][i, 1] == pytest.approx(
            -alpha_e, abs=EDGE_TOL_DEG)
        assert not fov.open_ended["combined"][i, 0] and not fov.open_ended["combined"][i, 1]


def test_glan_air_spaced_total_field_feussner():
    # Feussner's table of polarising prisms (1884), as quoted in handbooks — from memory: an
    # air-spaced calcite prism cut near 38.5° has a total field of about 8°. Measured with the
    # package data at 589.3 nm: 7.9° (reported in the assertion message on failure).
    prism = glan_air_spaced("calcite", 38.5)
    fov = field_of_view(prism, 0.5893)
    total = float(fov.total_in_plane_deg)
    assert 7.0 <= total <= 9.5, f"total field {total:.3f} deg"


def test_glan_cemented_rejection_edge():
    # Cemented prism, axis across the principal section: the o-beam is rejected while
    # n_o sin(θ − β) ≥ n_cement (Born & Wolf 1999, §1.5.4); the e-beam (n_e < n_cement) is
    # never totally reflected at the film.
    prism = glan_cemented("calcite", 72.0, axis="y")
    lam = 0.6328
    fov = field_of_view(prism, lam, half_range_deg=15.0, steps=61)
    n_o, n_e, n_s, n_c = _indices(prism, lam)
    assert n_e < n_c < n_o
    beta = np.deg2rad(72.0) - np.arcsin(n_c / n_o)
    alpha_o = np.rad2deg(np.arcsin(n_o * np.sin(beta) / n_s))
    assert fov.half_angles_deg["combined"][0] == pytest.approx(alpha_o, abs=EDGE_TOL_DEG)
    assert fov.open_ended["ee not totally reflected"].all()


def test_wollaston_interface_total_reflection_edge():
    # Plain contacted interface (no layer): the tracer itself flags the total reflection.
    # Beam "oe" (n_o → n_e, second-wedge axis along y so n_e is exact in-plane) is totally
    # reflected when n_o sin(θ + |β|) = n_e, with n_s sin|α| = n_o sin|β| (Born & Wolf 1999,
    # §1.5.4).
    prism = wollaston("calcite", 55.0)
    lam = 0.6328
    n_o, n_e = (float(v) for v in prism.pieces[0].material.indices(lam))
    n_s = float(prism.surround.indices(lam)[0])
    beta = np.arcsin(n_e / n_o) - np.deg2rad(55.0)
    alpha = np.rad2deg(np.arcsin(n_o * np.sin(beta) / n_s))
    fov = field_of_view(prism, lam, half_range_deg=30.0, steps=61)
    assert fov.half_angles_deg["oe not totally reflected"][1] == pytest.approx(alpha, abs=EDGE_TOL_DEG)
    assert fov.open_ended["eo not totally reflected"].all()


def test_maps_grid_and_refined_edges_agree():
    # Internal consistency: a map is "margin > 0"; the grid half-angle is the last good grid
    # point, the refined edge lies within one grid step beyond it.
    prism = glan_air_spaced("calcite", 39.0)
    coarse = field_of_view(prism, 0.6328, steps=41, refine=False)
    fine = field_of_view(prism, 0.6328, steps=41)
    step = coarse.in_plane_deg[1] - coarse.in_plane_deg[0]
    for name, margin in coarse.margins.items():
        np.testing.assert_array_equal(coarse.maps[name], margin > 0)
    each = [coarse.maps[r.name] for r in coarse.requirements]
    np.testing.assert_array_equal(coarse.maps["combined"], np.logical_and.reduce(each))
    g, r = coarse.half_angles_deg["combined"], fine.half_angles_deg["combined"]
    assert np.all(g <= r + 1e-12) and np.all(r < g + step)
    assert coarse.ok_at_normal_incidence
    assert [d for d, _ in DIRECTIONS] == ["+in-plane", "-in-plane", "+out-of-plane", "-out-of-plane"]


def test_edges_bracket_the_sign_change():
    # Bisection property: just inside the refined edge the spec holds, just outside it fails.
    prism = glan_air_spaced("calcite", 38.5)
    reqs = (beam_passes("ee"), beam_blocked("oo"))
    edge = find_edges(prism, 0.6328, reqs, 0.0, 5.0, 0.0)
    m = requirement_margins(prism, 0.6328, np.array([edge - 1e-7, edge + 1e-7]), 0.0, reqs)
    assert m.min(axis=0)[0] > 0 and m.min(axis=0)[1] <= 0


def test_batch_equals_loop():
    # Vectorisation: one batched call over wavelengths equals a loop of single calls.
    prism = glan_air_spaced("calcite", 38.5)
    lam = np.array([0.45, 0.8])
    batch = field_of_view(prism, lam, steps=21)
    for i, wl in enumerate(lam):
        single = field_of_view(prism, wl, steps=21)
        np.testing.assert_allclose(batch.half_angles_deg["combined"][i],
                                   single.half_angles_deg["combined"], atol=1e-9)
        np.testing.assert_array_equal(batch.maps["combined"][i], single.maps["combined"])
    angles = np.array([-4.0, -1.0, 0.5, 3.0])
    reqs = (beam_passes("ee"), power_at_most("oo", 1e-6), power_at_least("ee", 0.3),
            extinction_at_least("ee", "oo", 1e4))
    m = requirement_margins(prism, 0.6328, angles, 1.0, reqs)
    for j, a in enumerate(angles):
        np.testing.assert_allclose(m[:, j], requirement_margins(prism, 0.6328, a, 1.0, reqs),
                                   rtol=1e-12, atol=1e-15)


def test_power_requirements_follow_the_trace():
    # The power margins are the traced powers minus the limits (unpolarised input).
    prism = glan_air_spaced("calcite", 38.5, gap_mm=2e-4)
    result = prism.trace(0.6328, 1.0, 0.0, power_threshold=0.0)
    reqs = (power_at_least("ee", 0.2), power_at_most("oo", 1e-3),
            extinction_at_least("ee", "oo", 100.0))
    m = requirement_margins(prism, 0.6328, 1.0, 0.0, reqs)
    p_ee, p_oo = float(result.power("ee")), float(result.power("oo"))
    assert p_oo > 1e-8                      # a 0.2 µm gap lets the o-beam tunnel
    np.testing.assert_allclose(m, [p_ee - 0.2, 1e-3 - p_oo, np.log10(p_ee / p_oo) - 2.0],
                               rtol=1e-12)


@settings(max_examples=8, deadline=None)
@given(cut=st.floats(38.0, 40.5), wavelength=st.floats(0.45, 1.3))
def test_glan_edges_property(cut, wavelength):
    # Property over cut angle and wavelength: the exact edges of Born & Wolf §1.5.4/§15.3.3.
    prism = glan_air_spaced("calcite", cut, axis="x")
    fov = field_of_view(prism, wavelength, half_range_deg=12.0, steps=25)
    alpha_o, alpha_e = glan_edges_exact(prism, wavelength, "x")
    half = fov.half_angles_deg["combined"]
    if 0.0 < alpha_o < 12.0:
        assert half[0] == pytest.approx(alpha_o, abs=EDGE_TOL_DEG)
    if -12.0 < alpha_e < 0.0:
        assert half[1] == pytest.approx(-alpha_e, abs=EDGE_TOL_DEG)


@pytest.mark.parametrize("kwargs, message", [
    (dict(steps=20), "steps must be an odd integer"),
    (dict(half_range_deg=95.0), "half_range_deg must lie between"),
    (dict(requirements=[beam_passes("xx")]), "beam 'xx' is not among the traced beams"),
])
def test_bad_input_messages(kwargs, message):
    prism = glan_air_spaced("calcite", 38.5)
    with pytest.raises(ValueError, match=message):
        field_of_view(prism, 0.6328, **kwargs)


def test_requirement_argument_checks():
    with pytest.raises(ValueError, match="power fraction between 0 and 1"):
        power_at_least("ee", 1.5)
    with pytest.raises(ValueError, match="extinction ratio must be a positive number"):
        extinction_at_least("ee", "oo", -1.0)
    with pytest.raises(ValueError, match="beam label must be a non-empty string"):
        beam_blocked("")
