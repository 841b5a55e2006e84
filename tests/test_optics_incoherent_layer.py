"""Coherent and incoherent treatment of thin layers (air gaps, cement films).

Checks against closed forms: the incoherent multiple-reflection sum T₁T₂/(1 − R₁R₂) for
isotropic media (Fresnel reflectances, Born & Wolf, *Principles of Optics*, 7th ed., 1999,
§1.5.2; incoherent sum as in B. Harbecke, Appl. Phys. B 39, 165 (1986), from memory) and Airy's
formula for the coherent film (Born & Wolf §7.6.1). For anisotropic media around the layer the
incoherent result is checked against its definition: the coherent solution (itself checked
against an independent 4 × 4 transfer-matrix code in test_optics_reference_tmm.py) averaged
over one fringe period of layer thickness, where the interference between different bounces
averages to zero. Invariants: energy (reflected + transmitted = incident), independence of the
layer thickness, loop = batch.
"""
import warnings

import numpy as np
import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st

from prismdesign.optics import (FixedIndices, Medium, SequentialSystem, Surface, ThinLayer,
                                TraceFlag, solve_interface, trace)
from prismdesign.optics.incoherent_layer import solve_incoherent_layer, solve_layered_interface
from prismdesign.prisms import glan_air_spaced, interface_layer, wollaston
from closed_forms import fresnel_transmittance, incoherent_slab_transmittance
from test_optics_energy import build_case

Z = np.array([0.0, 0.0, 1.0])
X = np.array([1.0, 0.0, 0.0])
Y = np.array([0.0, 1.0, 0.0])


def isotropic_wave(n1, theta, pol):
    """Wave vector and unit s (E ∥ y) or p field in the x–z plane of incidence, index n1."""
    k = n1 * np.array([np.sin(theta), 0.0, np.cos(theta)])
    e = Y if pol == "s" else np.array([np.cos(theta), 0.0, -np.sin(theta)])
    return k, e.astype(complex)


def flat(*arrays):
    """Add a ray axis of length one."""
    return [np.asarray(a)[None] for a in arrays]


def solve_iso_incoherent(n1, n_layer, n3, theta, pol):
    k, e = isotropic_wave(n1, theta, pol)
    k, e, normal = flat(k, e, Z)
    one = np.ones(1)
    return solve_incoherent_layer(k, e, normal, (n1 * one, n1 * one), Z[None],
                                  (n3 * one, n3 * one), Z[None], n_layer * one, 0.6328 * one,
                                  0.01)


def fresnel_reflectance(n1, n2, theta, pol):
    return 1.0 - fresnel_transmittance(n1, n2, theta, pol)


# ------------------------------------------------------------------------ closed forms

@settings(max_examples=150, deadline=None)
@given(n1=st.floats(1.0, 2.5), n_layer=st.floats(1.0, 2.5), n3=st.floats(1.0, 2.5),
       sin_ratio=st.floats(0.0, 0.995), pol=st.sampled_from("sp"))
def test_isotropic_stack_is_the_incoherent_geometric_series(n1, n_layer, n3, sin_ratio, pol):
    # T = T₁T₂/(1 − R₁R₂) and R = R₁ + T₁²R₂/(1 − R₁R₂) per s and p (module docstring sources);
    # the angle is drawn so that the wave propagates in the layer (n1 sinθ < n_layer).
    sin_theta = sin_ratio * min(1.0, n_layer / n1)
    theta = np.arcsin(sin_theta)
    res = solve_iso_incoherent(n1, n_layer, n3, theta, pol)
    inside = np.arcsin(n1 * sin_theta / n_layer)
    r1 = fresnel_reflectance(n1, n_layer, theta, pol)
    r2 = fresnel_reflectance(n_layer, n3, inside, pol) if n_layer * np.sin(inside) < n3 else 1.0
    t = incoherent_slab_transmittance(n1, n_layer, n3, theta, pol) if r2 < 1.0 else 0.0
    r = r1 + (1 - r1) ** 2 * r2 / (1 - r1 * r2)
    mode = 0 if pol == "s" else 1                        # isotropic: "o" = s, "e" = p
    assert not res.singular[0]
    assert res.power_fraction[0, mode] == pytest.approx(t, rel=1e-11, abs=1e-14)
    assert res.power_fraction[0, 2 + mode] == pytest.approx(r, rel=1e-11, abs=1e-14)
    assert res.power_fraction[0, 1 - mode] == pytest.approx(0.0, abs=1e-14)
    assert res.power_fraction[0, 3 - mode] == pytest.approx(0.0, abs=1e-14)


@pytest.mark.parametrize("pol", ["s", "p"])
@pytest.mark.parametrize("treatment", ["coherent", "incoherent"])
def test_air_gap_between_glass_through_the_tracer(pol, treatment):
    # Glass (1.6) | 7 µm air gap | glass, 30° in the glass (below the 38.7° critical angle).
    # Coherent: Airy, T = 1/(1 + F sin²(δ/2)), F = 4R/(1−R)², δ = 4π n d cosθ₂/λ, R the
    # single-face Fresnel reflectance (Born & Wolf §7.6.1 and §1.5.2).
    # Incoherent: T = (1−R)²/(1 − R²) = (1−R)/(1+R); reflected R_total = 2R/(1+R).
    n, d_um, lam, theta = 1.6, 7.0, 0.6328, np.deg2rad(30.0)
    glass = Medium(FixedIndices(n))
    system = SequentialSystem([glass, glass], [Surface(
        [0, 0, 0], Z, layer=ThinLayer(FixedIndices(1.0), d_um * 1e-3, treatment))])
    k, e = isotropic_wave(n, theta, pol)
    jones = (0.0, 1.0) if pol == "s" else (1.0, 0.0)
    result = trace(system, [0, 0, -1.0], k / n, lam, jones, keep_reflections=True)
    r = fresnel_reflectance(n, 1.0, theta, pol)
    inside = np.arcsin(n * np.sin(theta))
    if treatment == "coherent":
        delta = 4 * np.pi * d_um * np.cos(inside) / lam
        expected = 1.0 / (1.0 + 4 * r / (1 - r) ** 2 * np.sin(delta / 2) ** 2)
    else:
        expected = (1 - r) / (1 + r)
    assert float(result.power("-")) == pytest.approx(expected, rel=1e-11)
    (ghost,) = result.reflected.values()
    assert float(ghost.power) == pytest.approx(1.0 - expected, rel=1e-10)
    incoherent = TraceFlag.INCOHERENT_LAYER if treatment == "incoherent" else 0
    assert result["-"].flags == incoherent and ghost.flags == incoherent
    assert treatment in result.layer_treatments["surface 0"]


# ------------------------------------------------------------------------ anisotropic media

def thickness_average(k, e, normal, ind1, ax1, ind2, ax2, n_layer, lam, samples=8192):
    """Coherent power fractions averaged over one fringe period of layer thickness
    (d ∈ [1 µm, 1 µm + λ/(2q)), trapezoid rule on a periodic, analytic function: its error
    falls like ρ^samples, ρ the largest round-trip amplitude factor of the film).

    Returns the average and whether it converged (half the samples give the same value to
    1e-10); a polarisation trapped by total reflection on both faces makes ρ → 1 (a guided
    wave, resonances too sharp to sample)."""
    kappa2 = k @ k - (k @ normal) ** 2
    q = np.sqrt(n_layer ** 2 - kappa2)
    d_um = 1.0 + np.arange(samples) / samples * lam / (2 * q)
    res = solve_interface(k, e, normal, ind1, ax1, ind2, ax2,
                          layer=(n_layer, lam, d_um * 1e-3))
    average = res.power_fraction.mean(axis=0)
    half = res.power_fraction[::2].mean(axis=0)
    return average, bool(np.max(np.abs(average - half)) < 1e-10)


@settings(max_examples=60, deadline=None)
@given(data=st.data(), kinds=st.sampled_from([("iso", "xtal"), ("xtal", "iso"),
                                              ("xtal", "xtal")]),
       n_layer=st.floats(1.0, 2.0))
def test_incoherent_sum_is_the_thickness_averaged_coherent_film(data, kinds, n_layer):
    # Averaging the coherent film over a fringe period of thickness leaves only the powers of
    # the individual bounces (cross terms e^{i(m−l)δ} average to zero): the incoherent sum,
    # including s ↔ p conversion at anisotropic faces.
    k, e, normal, ind1, ax1, ind2, ax2 = build_case(data, *kinds)
    normal = normal * np.sign(k @ normal)
    kappa = np.sqrt(max(k @ k - (k @ normal) ** 2, 0.0))
    # The layer wave propagates, not too close to grazing: there the film's finesse grows
    # without bound and no fixed sampling of the thickness resolves its resonances.
    n_layer = max(n_layer, kappa * 1.1 + 0.01)
    lam = 0.6
    expected, converged = thickness_average(k, e, normal, ind1, ax1, ind2, ax2, n_layer, lam)
    assume(converged)
    res = solve_incoherent_layer(*flat(k, e, normal), tuple(np.atleast_1d(v) for v in ind1),
                                 ax1[None], tuple(np.atleast_1d(v) for v in ind2), ax2[None],
                                 np.atleast_1d(n_layer), np.atleast_1d(lam), 0.01)
    assert not res.singular[0]
    got, q = res.power_fraction[0], res.normal_component[0]
    for pair in ((0, 1), (2, 3)):
        # Degenerate modes (an isotropic side, or a wave along the optic axis) have no unique
        # basis, and each face solve picks its own: compare their sum.
        if abs(q[pair[0]] - q[pair[1]]) > 1e-6:
            np.testing.assert_allclose(got[list(pair)], expected[list(pair)], atol=2e-9)
        else:
            assert got[list(pair)].sum() == pytest.approx(expected[list(pair)].sum(), abs=2e-9)


@settings(max_examples=200, deadline=None)
@given(data=st.data(), kinds=st.sampled_from([("iso", "iso"), ("iso", "xtal"), ("xtal", "iso"),
                                              ("xtal", "xtal")]),
       n_layer=st.floats(1.0, 2.0))
def test_incoherent_layer_conserves_energy(data, kinds, n_layer):
    # Lossless faces and a lossless layer: reflected + transmitted = incident (Born & Wolf
    # §1.5.3; Yariv & Yeh §4.7), with crystals on either side of the layer. Tolerance: the
    # bare-interface solve itself conserves energy to ~1e-12 (test_optics_energy.py); the sum
    # over bounces amplifies that by at most 1/(1 − R₁R₂).
    k, e, normal, ind1, ax1, ind2, ax2 = build_case(data, *kinds)
    kappa = np.sqrt(max(k @ k - (k @ normal) ** 2, 0.0))
    n_layer = max(n_layer, kappa * 1.001 + 1e-3)          # the layer wave propagates
    res = solve_incoherent_layer(*flat(k, e, normal), tuple(np.atleast_1d(v) for v in ind1),
                                 ax1[None], tuple(np.atleast_1d(v) for v in ind2), ax2[None],
                                 np.atleast_1d(n_layer), np.atleast_1d(0.6), 0.01)
    pf = res.power_fraction[0]
    assert not res.singular[0]
    assert np.all(pf >= 0.0)
    assert abs(pf.sum() - 1.0) <= 1e-10
    # Evanescent outgoing modes carry nothing.
    assert np.all(pf[res.evanescent[0]] == 0.0)


# ------------------------------------------------------------------------ choice of treatment

def random_rays(rng, m):
    """m rays in glass 1.7 at up to 60° onto a calcite-like crystal, random Jones vectors."""
    theta = rng.uniform(0.0, np.deg2rad(60.0), m)
    phi = rng.uniform(0.0, 2 * np.pi, m)
    d = np.stack([np.sin(theta) * np.cos(phi), np.sin(theta) * np.sin(phi), np.cos(theta)], -1)
    k = 1.7 * d
    a = np.cross(d, X)
    a /= np.linalg.norm(a, axis=-1, keepdims=True)
    b = np.cross(d, a)
    jones = rng.normal(size=(m, 2)) + 1j * rng.normal(size=(m, 2))
    e = jones[:, :1] * a + jones[:, 1:] * b
    return k, e


def layered(k, e, layer, n_layer, lam):
    m = len(k)
    one = np.ones(m)
    axis = np.broadcast_to([0.6, 0.0, 0.8], (m, 3))
    return solve_layered_interface(k, e, Z, (1.7 * one, 1.7 * one), np.broadcast_to(Z, (m, 3)),
                                   (1.658 * one, 1.486 * one), axis, layer, n_layer * one,
                                   lam * one)


def test_coherent_treatment_is_the_coherent_solve_bit_for_bit():
    # "coherent" must reproduce the film solve exactly (no change of results for those who
    # choose it).
    rng = np.random.default_rng(7)
    k, e = random_rays(rng, 300)
    layer = ThinLayer(FixedIndices(1.0), 0.02, "coherent")
    got, incoherent = layered(k, e, layer, 1.0, 0.6328)
    m = len(k)
    ref = solve_interface(k, e, Z, (np.full(m, 1.7), np.full(m, 1.7)), np.broadcast_to(Z, (m, 3)),
                          (np.full(m, 1.658), np.full(m, 1.486)),
                          np.broadcast_to([0.6, 0.0, 0.8], (m, 3)),
                          layer=(np.ones(m), np.full(m, 0.6328), 0.02))
    assert not incoherent.any()
    for name in ("coefficient", "power_fraction", "e_field", "ray_direction", "wave_vector",
                 "evanescent", "singular"):
        assert np.array_equal(getattr(got, name), getattr(ref, name)), name


def test_auto_mixes_rays_and_batch_equals_loop():
    # A 20 µm air gap under glass 1.7: rays beyond 36° are evanescent in the gap (coherent,
    # tunnelling), the others incoherent. The merged batch equals one ray at a time.
    rng = np.random.default_rng(11)
    k, e = random_rays(rng, 40)
    layer = ThinLayer(FixedIndices(1.0), 0.02)
    batch, incoherent = layered(k, e, layer, 1.0, 0.6328)
    kappa = np.hypot(k[:, 0], k[:, 1])
    np.testing.assert_array_equal(incoherent, kappa < 1.0)
    assert 5 < incoherent.sum() < 35
    for i in range(len(k)):
        one, flag = layered(k[i:i + 1], e[i:i + 1], layer, 1.0, 0.6328)
        assert flag[0] == incoherent[i]
        np.testing.assert_allclose(one.power_fraction[0], batch.power_fraction[i], rtol=1e-13,
                                   atol=1e-16)
        np.testing.assert_allclose(one.coefficient[0], batch.coefficient[i], rtol=1e-13,
                                   atol=1e-16)
        np.testing.assert_allclose(one.wave_vector[0], batch.wave_vector[i], atol=1e-15)


def test_single_pass_phase_matches_the_weakly_reflecting_coherent_film():
    # A 10 µm cement film in a calcite Wollaston reflects ~1e-3 per face: the coherent film's
    # amplitude is t e^{ik₀qd}/(1 − r₁r₂e^{2ik₀qd}), so its phase differs from the single pass
    # (which the incoherent beams carry) by at most |r₁r₂| ≈ 1e-3 rad (Born & Wolf §1.6.4).
    # The exit Jones vectors with path phase, hence OPD and interference, must agree to that.
    results = {}
    for treatment in ("coherent", "auto"):
        prism = wollaston("calcite", 15.0,
                          interface_layer=interface_layer("optical_cement", 0.01, treatment))
        results[treatment] = prism.trace(0.6328, [0.0, 1.5], polarisation=(0.6, 0.8j))
    for label in ("oe", "eo"):
        coherent = results["coherent"][label].jones(include_path_phase=True)
        incoherent = results["auto"][label].jones(include_path_phase=True)
        assert np.all(results["auto"][label].flags & TraceFlag.INCOHERENT_LAYER)
        big = np.abs(coherent) > 0.1
        phase = np.angle(incoherent[big] / coherent[big])
        assert np.max(np.abs(phase)) < 5e-3
        np.testing.assert_allclose(np.abs(incoherent), np.abs(coherent), rtol=5e-3)


def test_incoherent_result_does_not_depend_on_thickness():
    # Powers add without phase: nothing depends on the thickness of a propagating layer.
    rng = np.random.default_rng(3)
    k, e = random_rays(rng, 50)
    keep = np.hypot(k[:, 0], k[:, 1]) < 1.0
    k, e = k[keep], e[keep]
    results = [layered(k, e, ThinLayer(FixedIndices(1.0), d, "incoherent"), 1.0, 0.6328)[0]
               for d in (0.005, 0.0051, 0.05)]
    for other in results[1:]:
        np.testing.assert_array_equal(other.power_fraction, results[0].power_fraction)


@pytest.mark.parametrize("thickness_um, coherence_mm, incoherent", [
    (0.3, None, False),          # sub-wavelength film: coherent
    (0.7, None, True),           # n·d ≥ λ: incoherent
    (20.0, None, True),
    (20.0, 0.03, True),          # round trip 40 µm > 30 µm coherence length
    (20.0, 0.05, False),         # round trip 40 µm < 50 µm: coherent
])
def test_auto_rule(thickness_um, coherence_mm, incoherent):
    # The documented rule of ThinLayer: incoherent where n·d ≥ max(λ, L_c/2) (common
    # practice for deciding when a film's fringes wash out, no source).
    rng = np.random.default_rng(5)
    k, e = random_rays(rng, 20)
    k = k * (0.5 / np.hypot(k[:, 0], k[:, 1]).max())     # all propagating in the gap
    layer = ThinLayer(FixedIndices(1.0), thickness_um * 1e-3, "auto", coherence_mm)
    _, flags = layered(k, e, layer, 1.0, 0.6328)
    assert np.all(flags == incoherent)


def test_tunnelling_stays_coherent_even_when_incoherent_is_asked_for():
    # Frustrated total reflection exists only in amplitude: a 0.4 µm air gap between glass at
    # 45° (beyond the 38.7° critical angle) keeps its tunnelled power (Zhu, Yu, Hawley and Roy,
    # Am. J. Phys. 54, 601 (1986): 1/T = 1 + ¼(η₁/γ + γ/η₁)² sinh²(k₀γd), s-wave η = k_z).
    n, d_um, lam, theta = 1.6, 0.4, 0.6328, np.deg2rad(45.0)
    glass = Medium(FixedIndices(n))
    system = SequentialSystem([glass, glass], [Surface(
        [0, 0, 0], Z, layer=ThinLayer(FixedIndices(1.0), d_um * 1e-3, "incoherent"))])
    k, _ = isotropic_wave(n, theta, "s")
    result = trace(system, [0, 0, -1.0], k / n, lam, (0.0, 1.0))
    eta = n * np.cos(theta)
    gamma = np.sqrt((n * np.sin(theta)) ** 2 - 1.0)
    expected = 1.0 / (1.0 + 0.25 * (eta / gamma + gamma / eta) ** 2
                      * np.sinh(2 * np.pi / lam * gamma * d_um) ** 2)
    assert float(result.power("-")) == pytest.approx(expected, rel=1e-10)
    assert result["-"].flags == TraceFlag.FRUSTRATED_TOTAL_REFLECTION


def test_forced_incoherent_sub_wavelength_layer_warns():
    rng = np.random.default_rng(2)
    k, e = random_rays(rng, 5)
    k = k * (0.5 / np.hypot(k[:, 0], k[:, 1]).max())
    with pytest.warns(UserWarning, match="below the wavelength"):
        layered(k, e, ThinLayer(FixedIndices(1.0), 0.2e-3, "incoherent"), 1.0, 0.6328)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        layered(k, e, ThinLayer(FixedIndices(1.0), 0.2e-3, "auto"), 1.0, 0.6328)


def test_antireflection_coating_stays_coherent():
    # A quarter-wave coating works by interference (Born & Wolf §1.6.4): a coated prism's
    # beams never carry the incoherent flag, and its layers report "coherent".
    prism = wollaston(coated=True)
    result = prism.trace(0.6328)
    assert all(not np.any(b.flags & TraceFlag.INCOHERENT_LAYER) for b in result.beams.values())
    assert all(v.startswith("coherent") for v in result.layer_treatments.values())


def test_glan_transmission_is_smooth_by_default_and_an_etalon_when_asked():
    # Calcite Glan, 10 µm air gap, 633 nm. Coherent gap: the transmitted power oscillates with
    # cut angle and gap (fringe period λ/(2 cos θ_gap) ≈ 0.8 µm in gap thickness); incoherent
    # (default): independent of the gap, slowly varying with the cut.
    def power(cut, gap_mm, treatment):
        prism = glan_air_spaced("calcite", cut, gap_mm, layer_treatment=treatment)
        return float(prism.trace(0.6328).power("ee"))

    gaps = 0.01 + np.array([-1e-4, -5e-5, 0.0, 5e-5, 1e-4])
    smooth = [power(38.5, g, "auto") for g in gaps]
    etalon = [power(38.5, g, "coherent") for g in gaps]
    assert np.ptp(smooth) < 1e-14
    assert np.ptp(etalon) > 0.01
    cuts = np.arange(38.0, 39.05, 0.1)
    smooth = np.array([power(c, 0.01, "auto") for c in cuts])
    etalon = np.array([power(c, 0.01, "coherent") for c in cuts])
    assert np.max(np.abs(np.diff(smooth, 2))) < 1e-3      # no ripple at the 0.1° scale
    assert np.max(np.abs(np.diff(etalon, 2))) > 1e-2


# ------------------------------------------------------------------------ bad input

@pytest.mark.parametrize("make, words", [
    (lambda: ThinLayer(FixedIndices(1.0), 0.01, "partly"), ("treatment", "'partly'", "auto")),
    (lambda: ThinLayer(FixedIndices(1.0), 0.01, coherence_length_mm=-1.0),
     ("coherence_length_mm", "-1.0")),
    (lambda: interface_layer("air", 0.01, "wedged"), ("treatment", "'wedged'", "coherent")),
    (lambda: interface_layer("air", 0.01, coherence_length_mm=0.0),
     ("coherence_length_mm", "0")),
    (lambda: glan_air_spaced(layer_treatment="none"), ("layer_treatment", "'none'", "incoherent")),
])
def test_bad_treatment_input_fails_in_one_line(make, words):
    with pytest.raises(ValueError) as info:
        make()
    message = str(info.value)
    assert "\n" not in message
    for word in words:
        assert word in message
