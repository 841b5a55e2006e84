"""Figures of beams that do not exist are NaN with a reason (issue 7, "Trust").

Sources:
- Total internal reflection: a wave in a medium of index n₁ meeting a plane interface at
  incidence θ cannot propagate into index n₂ when n₁ sin θ > n₂ (Born & Wolf, *Principles of
  Optics*, 7th ed., 1999, §1.5.4). In a calcite Wollaston with the first wedge's axis along x and
  the second's along y, the "oe" beam at normal incidence has index n_o in wedge 1 and exactly
  n_e in wedge 2 (its wave normal stays perpendicular to the axis y), and meets the interface at
  the wedge angle; so it is totally reflected when n_o sin θ > n_e.
- Calcite indices: Ghosh, Opt. Commun. 163, 95 (1999), as bundled (checked against the CC0
  refractive-index database in tests/test_material_data_database.py).
"""
import warnings

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import prismdesign
from prismdesign.analysis import (BELOW_POWER_FLOOR, LOST_FLAGS, LOST_POWER_FLOOR,
                                  MissingBeamWarning, describe_lost, extinction, field_of_view,
                                  main_beams, optical_path_difference, perturb_axes,
                                  separation, shear_mm, split, transmission)
from prismdesign.optics import TraceFlag
from prismdesign.prisms import glan_air_spaced, wollaston

LAMBDAS_UM = np.array([0.4, 0.6328, 1.0])


def _oe_totally_reflected(wavelength_um, wedge_angle_deg):
    """n_o sin θ > n_e (Born & Wolf §1.5.4), with the bundled Ghosh (1999) calcite indices."""
    n_o, n_e = prismdesign.material("calcite").indices(wavelength_um)
    return n_o * np.sin(np.deg2rad(wedge_angle_deg)) > n_e


def test_wollaston_63_deg_oe_beam_is_lost_at_400_nm_only():
    expected = _oe_totally_reflected(LAMBDAS_UM, 63.0)
    # The case: totally reflected at 0.4 µm, transmitted at 0.6328 and 1.0 µm.
    assert expected.tolist() == [True, False, False]
    prism = wollaston("calcite", 63.0)
    result = split(prism, LAMBDAS_UM)
    assert result.main_labels == ("oe", "eo")
    assert result.reason == ""
    tir = (result.lost["oe"] & TraceFlag.TOTAL_INTERNAL_REFLECTION) != 0
    np.testing.assert_array_equal(tir, expected)
    np.testing.assert_array_equal(np.isnan(result.split_deg), expected)
    np.testing.assert_array_equal(np.isnan(result.in_plane_deg["oe"]), expected)
    np.testing.assert_array_equal(np.isnan(result.bisector_in_plane_deg), expected)
    np.testing.assert_array_equal(np.isnan(result.asymmetry_deg), expected)
    assert not np.any(np.isnan(result.in_plane_deg["eo"]))
    assert "totally reflected" in describe_lost(result.lost["oe"])[0]
    assert describe_lost(result.lost["oe"])[1] == ""
    # Flags stay as traced.
    assert result.flags["oe"][0] & TraceFlag.TOTAL_INTERNAL_REFLECTION

    sep = separation(prism, LAMBDAS_UM, 100.0, waist_mm=0.5)
    np.testing.assert_array_equal(np.isnan(sep.separation_mm), expected)
    np.testing.assert_array_equal(np.isnan(sep.clearance), expected)
    np.testing.assert_array_equal(np.isnan(sep.position_mm["oe"][..., 0]), expected)
    np.testing.assert_array_equal(np.isnan(sep.beam_radius_mm["oe"]), expected)
    # Beams that do not exist are not resolved (documented choice).
    np.testing.assert_array_equal(sep.resolved, ~expected)

    with warnings.catch_warnings():
        warnings.simplefilter("ignore", MissingBeamWarning)
        ext = extinction(perturb_axes(prism, 0.5), LAMBDAS_UM, nominal=prism)
    for figures in (ext.beam_purity_ratio, ext.analyser_extinction_ratio, ext.wanted_power):
        np.testing.assert_array_equal(np.isnan(figures["oe"]), expected)
        assert not np.any(np.isnan(figures["eo"]))


def test_extinction_names_cannot_be_confused():
    prism = wollaston("calcite", 15.0)
    ext = extinction(perturb_axes(prism, 0.5, piece=0), 0.6328, nominal=prism)
    assert not hasattr(ext, "extinction_ratio")
    assert not hasattr(ext, "input_extinction_ratio")
    # A first wedge turned by δ leaves each beam perfectly polarised (purity inf: it still
    # ends in one mode of wedge 2) but passes about tan²δ of the crossed input into each
    # beam's place (analyser ratio of order 1/tan²(0.5°) ≈ 1.3e4; see the sin²δ leakage
    # derivation in tests/test_analysis_extinction.py).
    assert np.isinf(ext.beam_purity_ratio["eo"])
    assert 1e3 < ext.analyser_extinction_ratio["eo"] < 1e5


def test_no_pair_anywhere_names_the_missing_beam():
    # 70° calcite Wollaston: n_o sin 70° > n_e across the band (Born & Wolf §1.5.4).
    assert np.all(_oe_totally_reflected(LAMBDAS_UM, 70.0))
    prism = wollaston("calcite", 70.0)
    with pytest.warns(MissingBeamWarning, match="'oe' is lost: totally reflected at every"):
        result = split(prism, LAMBDAS_UM)
    assert result.main_labels == ("eo",)
    assert np.all(np.isnan(result.split_deg)) and np.shape(result.split_deg) == (3,)
    assert "'oe'" in result.reason and "\n" not in result.reason
    with pytest.warns(MissingBeamWarning, match="'oe'"):
        sep = separation(prism, LAMBDAS_UM, 50.0, waist_mm=0.5)
    assert np.all(np.isnan(sep.separation_mm)) and not np.any(sep.resolved)
    with pytest.raises(ValueError, match="'oe' is lost: totally reflected"):
        main_beams(prism, 0.6328)


def test_polariser_split_says_which_beam_is_rejected():
    glan = glan_air_spaced("calcite", 38.5)
    with pytest.warns(MissingBeamWarning, match="'oo' is totally reflected at a thin layer"):
        result = split(glan, [0.55, 0.6328])
    assert result.main_labels == ("ee",)
    assert np.all(np.isfinite(result.in_plane_deg["ee"]))


def test_prism_that_transmits_nothing_says_so():
    # 75° air-spaced calcite Glan: both modes exceed the critical angle at the gap (o: 37.2°,
    # e: 42.3° at 633 nm, glan_cut_angle_limits); the builder warns as well.
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", UserWarning)
        glan = glan_air_spaced("calcite", 75.0, gap_mm=0.1)
    with pytest.warns(MissingBeamWarning, match="no beam leaves the glan air-spaced prism"):
        t = transmission(glan, [0.5, 0.6])
    assert t.labels == () and np.all(t.total == 0.0)
    assert "reflected" in t.reason
    # Energy bookkeeping still closes (Born & Wolf §1.5.3): all input is reflected.
    np.testing.assert_allclose(t.reflected_by_face.sum(axis=0), 1.0, atol=1e-9)
    with pytest.raises(ValueError, match="no beam leaves it at normal incidence") as info:
        field_of_view(glan, steps=5)
    assert "requirements must be" not in str(info.value)


def test_interference_nan_where_a_beam_leaves_the_aperture():
    prism = wollaston("calcite", 15.0)
    inside, outside = (0.0, 0.0), (6.0, 0.0)            # the clear aperture is ±5 mm
    with pytest.warns(MissingBeamWarning, match="outside the clear aperture"):
        opd = optical_path_difference(prism, 0.6328, np.array([inside, outside]))
    assert np.isfinite(opd[0]) and np.isnan(opd[1])
    with pytest.warns(MissingBeamWarning):
        shear = shear_mm(prism, 0.6328, np.array([inside, outside]))
    assert np.all(np.isfinite(shear[0])) and np.all(np.isnan(shear[1]))
    with pytest.raises(ValueError, match="never both leave"):
        optical_path_difference(prism, 0.6328, outside)


def test_describe_lost_words():
    codes = np.array([0, TraceFlag.TOTAL_INTERNAL_REFLECTION | BELOW_POWER_FLOOR,
                      TraceFlag.OUTSIDE_APERTURE])
    words = describe_lost(codes)
    assert words[0] == ""
    assert words[1] == f"totally reflected; power below {LOST_POWER_FLOOR:g} of the input"
    assert words[2] == "outside the clear aperture"
    assert describe_lost(0) == ""


@settings(max_examples=15, deadline=None)
@given(st.lists(st.floats(0.35, 1.2), min_size=1, max_size=4),
       st.lists(st.floats(-3.0, 3.0), min_size=1, max_size=3),
       st.floats(60.0, 66.0))
def test_split_is_nan_exactly_where_a_main_beam_is_lost(wavelengths, angles, wedge):
    # Property (the lost-beam rule): near the critical wedge angle the "oe" beam is totally
    # reflected on part of the grid; split, bisector and asymmetry are NaN exactly there, and
    # a beam's lost code is set exactly where its flags carry a lost bit or its power is below
    # the floor.
    prism = wollaston("calcite", wedge)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", MissingBeamWarning)
        result = split(prism, np.array(wavelengths)[:, None], np.array(angles)[None, :])
    for label in result.labels:
        expected = (((result.flags[label] & LOST_FLAGS) != 0)
                    | (result.power[label] < LOST_POWER_FLOOR))
        np.testing.assert_array_equal(result.lost[label] != 0, expected)
        np.testing.assert_array_equal(np.isnan(result.in_plane_deg[label]), expected)
    if len(result.main_labels) == 2:
        a, b = result.main_labels
        either = (result.lost[a] != 0) | (result.lost[b] != 0)
        np.testing.assert_array_equal(np.isnan(result.split_deg), either)
        np.testing.assert_array_equal(np.isnan(result.asymmetry_deg), either)
    else:
        assert result.reason and np.all(np.isnan(result.split_deg))


def test_perturbed_prism_samples_must_broadcast_against_the_rays():
    prism = wollaston("calcite", 15.0)
    with pytest.raises(ValueError) as info:
        split(perturb_axes(prism, np.zeros(5)), [0.5, 0.6])
    message = str(info.value)
    assert "\n" not in message and "(5,)" in message and "(2,)" in message
    result = split(perturb_axes(prism, np.zeros(5)[:, None]), [0.5, 0.6])
    assert np.shape(result.split_deg) == (5, 2)
    for call in (lambda p: separation(p, [0.5, 0.6], 10.0),
                 lambda p: transmission(p, [0.5, 0.6]),
                 lambda p: extinction(p, [0.5, 0.6], nominal=prism),
                 lambda p: optical_path_difference(p, [0.5, 0.6], beams=("eo", "oe"))):
        with pytest.raises(ValueError, match=r"optic-axis samples \(shape \(5,\)"):
            call(perturb_axes(prism, np.zeros(5)))
