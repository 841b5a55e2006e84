"""Extinction and leakage of misaligned optic axes.

Sources: projection of a linearly polarised wave on the eigenmodes of a crystal (Born & Wolf,
*Principles of Optics*, 7th ed., 1999, §15.3: D of the e-wave lies along the projection of the
optic axis, D of the o-wave perpendicular to it), giving Malus-type cos²/sin² power shares;
Fresnel transmittances (Born & Wolf, 1999, §1.5.2–1.5.3).
"""
import numpy as np
import pytest

import prismdesign
from prismdesign.analysis import extinction, perturb_axes
from prismdesign.prisms import Boundary, Piece, Prism, wollaston
from closed_forms import fresnel_transmittance



def test_perfect_axes_leak_below_1e_12():
    # Ideal Wollaston, rays in the principal section: every face keeps s and p apart and the
    # modes of both wedges are exactly s or p, so no power can reach "oo" or "ee" and each main
    # beam leaves in one pure linear state. All branches are kept (no pruning).
    prism = wollaston("calcite", 20.0)
    wl = np.linspace(0.45, 1.5, 4)[:, None]
    angles = np.linspace(-5.0, 5.0, 5)
    result = extinction(prism, wl, angles)
    assert set(result.labels) == {"oo", "oe", "eo", "ee"}
    assert np.max(result.leakage_fraction) < 1e-12
    for label in result.main_labels:
        assert np.all(result.other_power[label] < 1e-12 * result.wanted_power[label])
        assert np.all(result.analyser_extinction_ratio[label] > 1e12)
    # The wanted polarisations are x for "eo" (e in wedge 1, axis x) and y for "oe".
    np.testing.assert_allclose(np.abs(result.wanted_jones["eo"]), np.broadcast_to([1.0, 0.0], (4, 5, 2)),
                               atol=1e-12)
    np.testing.assert_allclose(np.abs(result.wanted_jones["oe"]), np.broadcast_to([0.0, 1.0], (4, 5, 2)),
                               atol=1e-12)


def test_axis_azimuth_error_leaks_sin2_delta():
    # First wedge axis turned by δ about z (second wedge axis y). Input x at normal incidence:
    # the e-wave of wedge 1 takes cos²δ of the power, polarised along the turned axis; at the
    # interface its y part (power share sin²δ) feeds the e-wave of wedge 2 ("ee") and the rest
    # the o-wave ("eo"). The o-wave of wedge 1 (share sin²δ) splits as sin²δ into "oo".
    # Leakage = ("ee" + "oo") / all ≈ sin²δ·cos²δ + sin⁴δ = sin²δ, times the Fresnel factor
    #   C₀ = T_exit(n_e, 0°) · t_ee / (T_int,p(n_e→n_o, θ) · T_exit,p(n_o→air, θ − θ'))
    # since "ee" leaves straight through the exit face with index n_e while the main beam "eo"
    # crosses the interface and leaves obliquely with n_o (the entrance is common). The leak's
    # interface factor t_ee = 1 to zeroth order (same index n_e on both sides for the y part);
    # the reflected p wave's own y part corrects its amplitude by about r²/cos 2θ with
    # r = (n_o − n_e)/(n_o + n_e), so |C − C₀| ≤ 3 r²/cos 2θ (power, with a 1.5 margin).
    # Measured: C = 1.0215 against C₀ = 1.0270 at 633 nm; C(δ) constant to 2e-5 over 0.01°–1°.
    wavelength, wedge = 0.6328, 15.0
    prism = wollaston("calcite", wedge)
    deltas = np.array([0.01, 0.1, 0.3, 1.0])
    perturbed = perturb_axes(prism, azimuth_error_deg=deltas, piece=0)
    result = extinction(perturbed, wavelength, nominal=prism, polarisation=(1.0, 0.0))
    c = result.leakage_fraction / np.sin(np.deg2rad(deltas)) ** 2
    # sin²δ law: the next term is relative O(δ²) (the sin⁴δ/sin²δ pieces), δ² ≤ 3e-4 here.
    assert np.all(np.abs(c / c[0] - 1.0) <= np.deg2rad(deltas) ** 2)
    theta = np.deg2rad(wedge)
    n_o, n_e = prismdesign.material("calcite").indices(wavelength)
    n_air = prismdesign.material("air").indices(wavelength)[0]
    inside = np.arcsin(n_e / n_o * np.sin(theta))
    c0 = (fresnel_transmittance(n_e, n_air, 0.0, "s")
          / (fresnel_transmittance(n_e, n_o, theta, "p")
             * fresnel_transmittance(n_o, n_air, theta - inside, "p")))
    r = (n_o - n_e) / (n_o + n_e)
    assert abs(c[0] - c0) <= 3 * r ** 2 / np.cos(2 * theta)
    # The main beams stay pure: each still ends in a single mode of wedge 2.
    assert np.all(np.isinf(result.beam_purity_ratio["eo"]))


def test_axis_azimuth_error_gives_tan2_delta_cross_talk():
    # Used as an analyser in the nominal frame, beam "eo" passes input x through the e-wave of
    # wedge 1, whose field lies along the turned axis (cos δ, sin δ): input x couples with
    # amplitude cos δ, input y with sin δ, and from there on both follow the same path with the
    # same Fresnel factors. So P(y)/P(x) = tan²δ exactly at normal incidence; likewise for "oe"
    # through the o-wave (−sin δ, cos δ) (Born & Wolf, 1999, §15.3 mode fields). Measured: 1e-15.
    prism = wollaston("calcite", 15.0)
    deltas = np.array([0.01, 0.1, 1.0, 5.0])
    wl = np.array([0.5, 1.0, 1.5])[:, None]
    result = extinction(perturb_axes(prism, deltas, piece=0), wl, nominal=prism)
    for label in ("eo", "oe"):
        np.testing.assert_allclose(result.analyser_extinction_ratio[label],
                                   np.broadcast_to(1.0 / np.tan(np.deg2rad(deltas)) ** 2, (3, 4)),
                                   rtol=1e-9)
    np.testing.assert_allclose(np.abs(result.input_jones["eo"]), np.broadcast_to([1.0, 0.0], (3, 4, 2)),
                               atol=1e-12)
    # The same error in the second wedge only feeds the leakage branches: the analysing
    # directions are set by the first wedge.
    second = extinction(perturb_axes(prism, deltas, piece=1), wl, nominal=prism)
    assert all(np.all(second.analyser_extinction_ratio[label] > 1e20) for label in ("eo", "oe"))
    assert np.all(second.leakage_fraction > 0.5 * np.sin(np.deg2rad(deltas)) ** 2)


def test_y_input_and_unpolarised_leakage_also_follow_sin2_delta():
    prism = wollaston("calcite", 15.0)
    deltas = np.array([0.02, 0.2, 0.6])
    perturbed = perturb_axes(prism, azimuth_error_deg=deltas, piece=0)
    for polarisation in ((0.0, 1.0), "unpolarised"):
        leak = extinction(perturbed, 0.8, nominal=prism, polarisation=polarisation).leakage_fraction
        c = leak / np.sin(np.deg2rad(deltas)) ** 2
        assert np.all(np.abs(c / c[0] - 1.0) <= np.deg2rad(deltas) ** 2)
        assert 0.9 < c[0] < 1.1   # Fresnel-level departures from 1 only


def test_monte_carlo_axes_broadcast_against_wavelengths():
    # Sample axis first, wavelengths second; each sample equals a separate perturbed prism.
    prism = wollaston("calcite", 15.0)
    rng = np.random.default_rng(7)
    azimuth, tilt = rng.normal(0, 0.5, 3), rng.normal(0, 0.5, 3)
    wl = np.array([0.5, 0.7, 1.0])
    batched = extinction(perturb_axes(prism, azimuth[:, None], tilt[:, None]), wl, nominal=prism)
    assert batched.leakage_fraction.shape == (3, 3)
    for k in range(3):
        single = extinction(perturb_axes(prism, azimuth[k], tilt[k]), wl, nominal=prism)
        np.testing.assert_allclose(single.leakage_fraction, batched.leakage_fraction[k], rtol=1e-10,
                                   atol=1e-16)


def test_perturb_axes_changes_polar_and_azimuth_angles_as_documented():
    # Rotation geometry: tilt raises the polar angle, azimuth raises the azimuth.
    prism = wollaston("calcite", 15.0)
    moved = perturb_axes(prism, azimuth_error_deg=10.0, tilt_error_deg=-20.0)
    x_axis, y_axis = (p.optic_axis for p in moved.pieces)
    polar = np.rad2deg(np.arccos(x_axis[2]))
    assert polar == pytest.approx(70.0, abs=1e-12)
    assert np.rad2deg(np.arctan2(x_axis[1], x_axis[0])) == pytest.approx(10.0, abs=1e-12)
    assert np.rad2deg(np.arctan2(y_axis[1], y_axis[0])) == pytest.approx(100.0, abs=1e-12)
    with pytest.raises(ValueError, match="piece"):
        perturb_axes(prism, 1.0, piece=5)


def _calcite_plate(thickness_mm=5.0):
    """Plane-parallel calcite plate, optic axis in the face along x."""
    calcite = prismdesign.material("calcite")
    return Prism(kind="plate", pieces=[Piece(calcite, (1.0, 0.0, 0.0), label="plate")],
                 boundaries=[Boundary((0, 0, 0), (0, 0, 1)), Boundary((0, 0, thickness_mm), (0, 0, 1))],
                 width_mm=10.0, height_mm=10.0, design_wavelength_um=0.6328)


def test_coinciding_beams_count_against_each_other():
    # A plane-parallel plate sends both modes out parallel to the input, so the "e" beam
    # (x-polarised) and the "o" beam (y-polarised) travel together and each is the other's
    # leakage. For unpolarised input at normal incidence, the ratio of the "e" beam is
    # T_e / T_o with T = (1 − R)² and R = ((n − n_air)/(n + n_air))² (Born & Wolf, 1999, §1.5.3;
    # single pass, no multiple reflections, as the sequential trace).
    wl = np.array([0.5, 0.8, 1.2])
    n_o, n_e = prismdesign.material("calcite").indices(wl)
    n_air = prismdesign.material("air").indices(wl)[0]
    t_o = fresnel_transmittance(n_air, n_o, 0.0, "s") ** 2
    t_e = fresnel_transmittance(n_air, n_e, 0.0, "s") ** 2
    result = extinction(_calcite_plate(), wl)
    assert result.coinciding == {"e": ("o",), "o": ("e",)}
    np.testing.assert_allclose(result.beam_purity_ratio["e"], t_e / t_o, rtol=1e-12)
    np.testing.assert_allclose(result.beam_purity_ratio["o"], t_o / t_e, rtol=1e-12)
    # Oblique incidence: still parallel on exit (parallel faces), still coinciding.
    oblique = extinction(_calcite_plate(), 0.8, 4.0, 2.0)
    assert oblique.coinciding["e"] == ("o",)
    assert oblique.beam_purity_ratio["e"] < 10.0
    # A Wollaston's beams leave a few degrees apart: nothing coincides with its main beams.
    assert extinction(wollaston(), 0.8).coinciding == {"oe": (), "eo": ()}


def test_named_main_beam_turns_the_other_into_leakage():
    # Same plate, but only "e" is wanted (a polariser-style reading): the "o" beam becomes
    # leakage, its share o / (o + e) from the same Fresnel transmittances.
    wl = 0.8
    n_o, n_e = prismdesign.material("calcite").indices(wl)
    n_air = prismdesign.material("air").indices(wl)[0]
    t_o = fresnel_transmittance(n_air, n_o, 0.0, "s") ** 2
    t_e = fresnel_transmittance(n_air, n_e, 0.0, "s") ** 2
    result = extinction(_calcite_plate(), wl, main_labels="e")
    assert result.main_labels == ("e",)
    assert result.leakage_fraction == pytest.approx(t_o / (t_o + t_e), rel=1e-12)
    assert result.beam_purity_ratio["e"] == pytest.approx(t_e / t_o, rel=1e-12)
    with pytest.raises(ValueError, match="main_labels"):
        extinction(_calcite_plate(), wl, main_labels=("x",))


def test_batched_equals_loop():
    # Broadcasting contract (STYLE.md), with an axis error so that every branch carries power.
    prism = wollaston("calcite", 15.0)
    perturbed = perturb_axes(prism, azimuth_error_deg=0.7, tilt_error_deg=0.4, piece=1)
    wl = np.array([0.5, 1.1])[:, None]
    angles = np.array([-3.0, 0.0, 2.0])
    batched = extinction(perturbed, wl, angles, 1.0, nominal=prism)
    for i in range(2):
        for k in range(3):
            single = extinction(perturbed, float(wl[i, 0]), angles[k], 1.0, nominal=prism)
            assert np.ndim(single.leakage_fraction) == 0
            assert single.leakage_fraction == pytest.approx(batched.leakage_fraction[i, k], rel=1e-10)
            for label in single.main_labels:
                assert single.other_power[label] == pytest.approx(batched.other_power[label][i, k],
                                                                  rel=1e-9, abs=1e-20)


def test_own_nominal_reuses_traces_without_changing_results():
    """A prism that is its own nominal reuses its unpolarised trace and its Jones matrices
    (issue 11: fewer traces; the unpolarised pair doubles as the Jones traces); the figures
    equal those of the path that traces the nominal separately, to rounding (the pair carries
    the x and y inputs at amplitude 1/√2)."""
    from prismdesign.analysis import perturb_axes
    from prismdesign.prisms import wollaston
    prism = perturb_axes(wollaston("calcite", 15.0), np.array([0.0, 0.2, -0.3])[:, None],
                         np.array([0.1, 0.0, 0.05])[:, None], piece=0)
    lam = np.array([0.55, 0.65])
    alone = extinction(prism, lam)
    twice = extinction(prism, lam, nominal=prism)
    for name in ("power", "beam_purity_ratio", "analyser_extinction_ratio", "other_power"):
        a, b = getattr(alone, name), getattr(twice, name)
        assert a.keys() == b.keys()
        for label in a:
            # Ratios above 1e20 are rounding-level "other" powers (0 or 1e-37): cap them.
            cap = (lambda v: np.minimum(v, 1e20)) if name.endswith("ratio") else (lambda v: v)
            np.testing.assert_allclose(cap(a[label]), cap(b[label]), rtol=1e-9, atol=1e-24)
