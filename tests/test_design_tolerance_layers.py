"""Errors of a cement film or gap (thickness, index) on many prisms at once.

Closed forms: Airy's formula for a coherent film, T = 1/(1 + F sin²(δ/2)), F = 4R/(1 − R)²,
δ = 4π n d cos θ / λ (Born & Wolf, *Principles of Optics*, 7th ed., 1999, §7.6.1), with R the
single-face Fresnel reflectance (§1.5.2); the incoherent sum of the bounces,
T = (1 − R)/(1 + R) for two equal faces, which does not depend on the thickness (B. Harbecke,
Appl. Phys. B 39, 165 (1986), from memory). Invariant: a batch of perturbed prisms traces
exactly as the same prisms one by one.
"""
import warnings

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import prismdesign as pd
from prismdesign.design import apply_errors, prism_parameters, sensitivities
from prismdesign.design import Requirement
from prismdesign.optics import FixedIndices, Medium, SequentialSystem, Surface, ThinLayer, trace
from test_optics_incoherent_layer import fresnel_reflectance, isotropic_wave

Z = np.array([0.0, 0.0, 1.0])


def _glass_gap_glass(thickness_mm, index_offset, treatment, n=1.6):
    glass = Medium(FixedIndices(n))
    layer = ThinLayer(FixedIndices(1.0), thickness_mm, treatment, index_offset=index_offset)
    return SequentialSystem([glass, glass], [Surface([0, 0, 0], Z, layer=layer)])


@pytest.mark.parametrize("pol", ["s", "p"])
def test_per_sample_coherent_film_follows_airy(pol):
    # 64 films over one fringe period of thickness, each with its own gap index, in ONE trace
    # (samples on the leading axis, 3 wavelengths as the ray axis).
    n, theta = 1.6, np.deg2rad(25.0)
    lam = np.array([0.55, 0.6328, 0.8])
    d_um = 3.0 + np.linspace(0.0, 0.4, 64)
    offset = np.linspace(0.0, 0.2, 64)
    system = _glass_gap_glass((d_um * 1e-3)[:, None], offset[:, None], "coherent", n)
    k, _ = isotropic_wave(n, theta, pol)
    jones = (0.0, 1.0) if pol == "s" else (1.0, 0.0)
    result = trace(system, [0, 0, -1.0], k / n, lam, jones)
    n_gap = 1.0 + offset[:, None]
    r = fresnel_reflectance(n, n_gap, theta, pol)
    inside = np.arcsin(n * np.sin(theta) / n_gap)
    delta = 4 * np.pi * n_gap * d_um[:, None] * np.cos(inside) / lam
    expected = 1.0 / (1.0 + 4 * r / (1 - r) ** 2 * np.sin(delta / 2) ** 2)
    assert result.power("-").shape == (64, 3)
    np.testing.assert_allclose(result.power("-"), expected, rtol=1e-10)
    assert np.ptp(expected) > 0.03  # the fringes are really sampled


def test_per_sample_incoherent_gap_is_independent_of_thickness():
    n, theta = 1.6, np.deg2rad(25.0)
    d_um = np.array([5.0, 7.3, 11.0, 20.0])
    offset = np.array([0.0, 0.0, 0.05, 0.05])
    system = _glass_gap_glass(d_um * 1e-3, offset, "incoherent", n)
    k, _ = isotropic_wave(n, theta, "s")
    power = trace(system, [0, 0, -1.0], k / n, 0.6328, (0.0, 1.0)).power("-")
    r = fresnel_reflectance(n, 1.0 + offset, theta, "s")
    np.testing.assert_allclose(power, (1 - r) / (1 + r), rtol=1e-11)
    assert power[0] == pytest.approx(power[1], rel=1e-13)
    assert power[2] == pytest.approx(power[3], rel=1e-13)


def test_thin_layer_rejects_negative_or_non_finite_arrays():
    with pytest.raises(ValueError, match="thickness_mm must be finite and >= 0"):
        ThinLayer(FixedIndices(1.0), np.array([0.01, -0.001]))
    with pytest.raises(ValueError, match="index_offset must be finite"):
        ThinLayer(FixedIndices(1.0), 0.01, index_offset=np.array([np.nan]))


@pytest.mark.parametrize("treatment", ["auto", "coherent"])
def test_layer_errors_batch_equals_loop(treatment):
    # An air-spaced Glan: the gap's thickness and index errors on 5 prisms at once equal the 5
    # prisms traced one by one (powers, paths, directions of every beam).
    prism = pd.prisms.glan_air_spaced("calcite", 38.5, gap_mm=0.002, layer_treatment=treatment)
    names = {p.name for p in prism_parameters(prism)}
    assert {"face1_layer_thickness_mm", "face1_layer_index"} <= names
    thick = np.array([0.0, 0.0004, -0.0015, 0.0011, -0.003])   # the last one closes the gap
    index = np.array([0.0, 0.002, -0.0005, 0.01, 0.0])
    lam = np.array([0.5, 0.6328, 1.0])
    batch, _ = apply_errors(prism, {"face1_layer_thickness_mm": thick,
                                    "face1_layer_index": index}, ray_ndim=2)
    assert batch.boundaries[1].layer.thickness_mm[-1, 0, 0] == 0.0
    tilts = np.array([0.0, 1.5, -2.0])
    together = batch.trace(lam[:, None], tilts, 0.0, polarisation="unpolarised",
                           power_threshold=0.0)
    for s in range(thick.size):
        one, _ = apply_errors(prism, {"face1_layer_thickness_mm": thick[s],
                                      "face1_layer_index": index[s]})
        alone = one.trace(lam[:, None], tilts, 0.0, polarisation="unpolarised",
                          power_threshold=0.0)
        assert set(alone.beams) == set(together.beams)
        for label, beam in alone.beams.items():
            other = together.beams[label]
            np.testing.assert_allclose(other.power[:, s], beam.power, rtol=1e-12, atol=1e-15)
            np.testing.assert_allclose(other.optical_path_mm[:, s], beam.optical_path_mm,
                                       rtol=1e-12)
            np.testing.assert_allclose(other.exit_direction[:, s], beam.exit_direction,
                                       atol=1e-14)


def test_gap_thickness_does_not_move_the_incoherent_transmission():
    # Through an incoherent gap the transmitted power has no thickness in it (closed form in
    # the module docstring), so its sensitivity is zero to rounding while the gap index moves
    # it; a thin coherent gap's transmission does depend on its thickness.
    req = Requirement(lines_um=(0.6328,), polariser=True, max_leakage=1e-3)
    thick = pd.prisms.glan_air_spaced("calcite", 38.5, gap_mm=0.01, layer_treatment="incoherent")
    sens = sensitivities(thick, req, ["face1_layer_thickness_mm", "face1_layer_index"])
    label = next(k for k in sens.values if k.startswith("transmittance_"))
    per_um = sens.of(label, "face1_layer_thickness_mm") * 1e-3
    per_index = sens.of(label, "face1_layer_index")
    assert abs(per_um[0]) < 1e-9 and abs(per_index[0]) > 1e-3
    film = pd.prisms.glan_air_spaced("calcite", 38.5, gap_mm=0.0008, layer_treatment="coherent")
    coherent = sensitivities(film, req, ["face1_layer_thickness_mm"])
    assert abs(coherent.of(label, "face1_layer_thickness_mm")[0] * 1e-3) > 1e-3


@settings(max_examples=20, deadline=None)
@given(thickness_um=st.lists(st.floats(0.0, 3.0), min_size=1, max_size=5),
       offset=st.floats(-0.05, 0.3), tilt_deg=st.floats(0.0, 60.0),
       treatment=st.sampled_from(["auto", "coherent", "incoherent"]))
def test_per_sample_layers_trace_as_the_same_layers_one_by_one(thickness_um, offset, tilt_deg,
                                                              treatment):
    # Includes evanescent gaps (glass 1.6 to air beyond 38.7°: tunnelling) and zero thickness.
    d_mm = np.array(thickness_um) * 1e-3
    offsets = offset * np.linspace(0.0, 1.0, d_mm.size)
    theta = np.deg2rad(tilt_deg)
    direction = [np.sin(theta), 0.0, np.cos(theta)]
    jones = (np.sqrt(0.3), np.sqrt(0.7))
    lam = np.array([0.5, 0.9])
    with warnings.catch_warnings():
        # Forced-incoherent films thinner than a wavelength warn (by design); not checked here.
        warnings.simplefilter("ignore")
        batch = trace(_glass_gap_glass(d_mm[:, None], offsets[:, None], treatment), [0, 0, -1.0],
                      direction, lam, jones, keep_reflections=True, power_threshold=0.0)
        for s in range(d_mm.size):
            one = trace(_glass_gap_glass(float(d_mm[s]), float(offsets[s]), treatment),
                        [0, 0, -1.0], direction, lam, jones, keep_reflections=True,
                        power_threshold=0.0)
            np.testing.assert_allclose(batch.power("-")[s], one.power("-"), rtol=1e-12,
                                       atol=1e-15)
            for label, ghost in one.reflected.items():
                np.testing.assert_allclose(batch.reflected[label].power[s], ghost.power,
                                           rtol=1e-12, atol=1e-15)
            np.testing.assert_array_equal(batch["-"].flags[s], one["-"].flags)

