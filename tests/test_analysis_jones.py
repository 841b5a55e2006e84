"""Per-beam Jones and Mueller matrices.

Sources: Jones→Mueller conversion M = A (J ⊗ J*) A⁻¹ (Azzam & Bashara, *Ellipsometry and
Polarized Light*, 1977, §2.11, from memory); a pure (non-depolarising) Mueller matrix satisfies
tr(MᵀM) = 4 M₀₀² (Gil & Bernabeu, *Optica Acta* 32, 259, 1985) and M₀₀ ≥ |Mᵢⱼ|; the Mueller
matrix of an ideal linear polariser along x is ½[[1,1,0,0],[1,1,0,0],[0,0,0,0],[0,0,0,0]]
(Goldstein, *Polarized Light*, 2nd ed., 2003, ch. 5, from memory).
"""
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from prismdesign.analysis import jones_matrices, mueller_from_jones, stokes_from_jones, transmission
from prismdesign.prisms import wollaston


def test_ideal_wollaston_beams_are_polarisers():
    wl = np.array([0.5, 0.8, 1.3])[:, None]
    angles = np.array([-4.0, 0.0, 4.0])
    result = jones_matrices(wollaston("calcite", 20.0), wl, angles)
    power = {pol: transmission(wollaston("calcite", 20.0), wl, angles, polarisation=pol)
             for pol in ((1.0, 0.0), (0.0, 1.0))}
    for label, axis in (("eo", 0), ("oe", 1)):
        j = result.jones[label]
        assert j.shape == (3, 3, 2, 2)
        # Rank 1 (a polariser): det J = 0 to rounding.
        assert np.max(np.abs(np.linalg.det(j))) < 1e-12
        # It passes only its own input axis, with the Fresnel transmission of that beam.
        np.testing.assert_allclose(np.abs(j[..., axis, axis]) ** 2,
                                   power[(1.0, 0.0) if axis == 0 else (0.0, 1.0)].power[label],
                                   rtol=1e-12)
        off = np.delete(j.reshape(3, 3, 4), 3 * axis, axis=-1)
        assert np.max(np.abs(off)) < 1e-12
        # Mueller matrix: T × ideal polariser along x ("eo") or y ("oe").
        m = result.mueller[label]
        t = np.abs(j[..., axis, axis]) ** 2
        sign = 1.0 if axis == 0 else -1.0
        ideal = 0.5 * np.array([[1, sign, 0, 0], [sign, 1, 0, 0], [0, 0, 0, 0], [0, 0, 0, 0]])
        np.testing.assert_allclose(m, t[..., None, None] * ideal, atol=1e-12)


def test_jones_matrix_reproduces_an_arbitrary_coherent_input():
    # Linearity of the boundary equations: tracing any input equals J @ input.
    prism = wollaston("calcite", 15.0)
    coherent_input = np.array([0.6, 0.3 - 0.7j])
    j = jones_matrices(prism, 0.7, 2.0, 1.5, include_path_phase=True)
    trace = prism.trace(0.7, 2.0, 1.5, polarisation=coherent_input, power_threshold=0.0)
    for label in j.labels:
        np.testing.assert_allclose(j.jones[label] @ coherent_input,
                                   trace.beams[label].jones(include_path_phase=True), atol=1e-12)


complex_entry = st.complex_numbers(max_magnitude=2.0, allow_nan=False, allow_infinity=False)


@settings(max_examples=60, deadline=None)
@given(st.lists(complex_entry, min_size=4, max_size=4), st.lists(complex_entry, min_size=2, max_size=2))
def test_mueller_from_jones_invariants(entries, field):
    j = np.array(entries).reshape(2, 2)
    m = mueller_from_jones(j)
    scale = max(1.0, np.abs(j).max() ** 2)
    # Pure Mueller matrix (Gil & Bernabeu, 1985).
    assert np.trace(m.T @ m) == pytest.approx(4 * m[0, 0] ** 2, abs=1e-12 * scale ** 2)
    assert np.all(np.abs(m) <= m[0, 0] + 1e-12 * scale)
    # Stokes consistency: M S(E) = S(J E) for any field (Azzam & Bashara, 1977, §2.11).
    e = np.array(field)
    np.testing.assert_allclose(m @ stokes_from_jones(e), stokes_from_jones(j @ e),
                               atol=1e-12 * scale * max(1.0, np.abs(e).max() ** 2))


def test_mueller_matrix_is_real_on_a_real_trace_with_out_of_plane_rays():
    result = jones_matrices(wollaston("calcite", 15.0), 0.6, np.array([0.0, 3.0]), 5.0)
    for label in ("eo", "oe"):
        m = result.mueller[label]
        assert m.shape == (2, 4, 4)
        lhs = np.einsum("...ij,...ij->...", m, m)
        np.testing.assert_allclose(lhs, 4 * m[..., 0, 0] ** 2, rtol=1e-12)


def test_batched_equals_loop():
    prism = wollaston("calcite", 15.0)
    wl = np.array([0.55, 1.1])[:, None]
    angles = np.array([-1.0, 2.5])
    batched = jones_matrices(prism, wl, angles, include_path_phase=True)
    for i in range(2):
        for k in range(2):
            single = jones_matrices(prism, float(wl[i, 0]), angles[k], include_path_phase=True)
            for label in single.labels:
                np.testing.assert_allclose(single.jones[label], batched.jones[label][i, k], atol=1e-13)


def test_bad_shapes_are_named():
    with pytest.raises(ValueError, match="2x2"):
        mueller_from_jones(np.ones(3))
    with pytest.raises(ValueError, match="jones"):
        stokes_from_jones(np.ones(3))


def test_quarter_wave_plate_stokes_sign_follows_born_and_wolf():
    # Born & Wolf, Principles of Optics, 7th ed., §1.4.2: for real fields a cos(ωt − k·r + δ),
    # s3 = 2 a_x a_y sin(δ_y − δ_x). A quartz plate (n_e > n_o) with its optic axis along x
    # delays x by a quarter wave: with exp(i(k·r − ωt)) amplitudes, E_x gains the larger phase
    # k0 n_e d, i.e. δ_x − δ_y = −π/2 in Born & Wolf's real form, so s3/s0 = sin(π/2) = +1 for
    # 45° linear input. The plate is a free stack at normal incidence; its o and e beams overlap
    # and add coherently (path phase included).
    from prismdesign import material
    from prismdesign.analysis import stokes_from_jones
    from prismdesign.prisms import free_stack

    lam = 0.6328
    quartz = material("quartz")
    d_mm = lam / (4.0 * (quartz.n_e(lam) - quartz.n_o(lam))) * 1e-3
    plate = free_stack([dict(material="quartz", optic_axis="x", thickness_mm=d_mm)])
    result = plate.trace(lam, polarisation=(np.sqrt(0.5), np.sqrt(0.5)))
    field = sum(beam.jones(include_path_phase=True) for beam in result.beams.values())
    s = stokes_from_jones(field)
    assert s[3] / s[0] == pytest.approx(1.0, abs=1e-4)   # Fresnel T_e ≠ T_o tilts it by ~1e-5
