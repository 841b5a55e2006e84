"""Sequential tracer: uniaxial slabs, walk-off offsets, branch bookkeeping, flags, batching.

References
----------
- M. Born & E. Wolf, *Principles of Optics*, 7th ed. (1999), §15.3 (ray and wave normal in a
  crystal) and §1.5 (Snell's law): the tangential wave vector is conserved at every interface,
  so after a slab with parallel faces between identical media the wave vector — and hence the
  ray — is parallel to the incident one, for either mode.
- A. Yariv & P. Yeh, *Optical Waves in Crystals* (1984), §4.3: walk-off
  tan ρ = (n_o² − n_e²) sinθ cosθ / (n_e² cos²θ + n_o² sin²θ); at normal incidence on a slab of
  thickness L the e-ray leaves displaced by L·tan ρ (the o-ray is not displaced).
- Born & Wolf §1.5.3: normal-incidence reflectance ((n1 − n2)/(n1 + n2))².
- Wollaston prism: two wedges with crossed optic axes in the faces; the beam that is e in the
  first wedge is o in the second and vice versa (Born & Wolf §15.4.3, from memory), so only
  "eo" and "oe" carry power when the axes are exactly crossed.
"""
import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from prismdesign.optics import (CircularAperture, FixedIndices, Medium, SequentialSystem, Surface,
                                TraceFlag, trace)
from closed_forms import sphere

Z = np.array([0.0, 0.0, 1.0])
AIR = Medium(FixedIndices(1.0))




def slab(n_env, n_o, n_e, axis, normal, thickness_mm, origin=(0.0, 0.0, 5.0)):
    env = Medium(FixedIndices(n_env))
    crystal = Medium(FixedIndices(n_o, n_e), optic_axis=axis)
    p0 = np.asarray(origin, dtype=float)
    return SequentialSystem([env, crystal, env],
                            [Surface(p0, normal), Surface(p0 + thickness_mm * np.asarray(normal), normal)])


@settings(max_examples=100, deadline=None)
@given(axis=st.tuples(st.floats(0.0, np.pi), st.floats(0.0, 2 * np.pi)),
       tilt=st.tuples(st.floats(0.0, 0.7), st.floats(0.0, 2 * np.pi)),
       incidence=st.tuples(st.floats(0.0, 0.5), st.floats(0.0, 2 * np.pi)),
       n=st.tuples(st.floats(1.0, 1.4), st.floats(1.4, 2.4), st.floats(0.01, 0.4), st.booleans()),
       thickness=st.floats(0.1, 20.0), jones=st.tuples(st.floats(0.1, 1.0), st.floats(-1.0, 1.0)))
def test_slab_exit_parallel_to_entry(axis, tilt, incidence, n, thickness, jones):
    # Born & Wolf §1.5/§15.3: conserved tangential k at two parallel faces between identical
    # media gives exit rays parallel to the entry ray for both the o and the e branch.
    normal = sphere(*tilt)
    direction = sphere(*incidence)
    n_env, n_o, dn, positive = n
    n_e = n_o + dn if positive else n_o - dn
    system = slab(n_env, n_o, n_e, sphere(*axis), normal, thickness)
    result = trace(system, [0.0, 0.0, 0.0], direction, 0.6328, (jones[0], 1j * jones[1]),
                   power_threshold=0.0)
    assert sorted(result.labels()) == ["e", "o"]
    for label in "oe":
        beam = result[label]
        assert beam.flags == 0
        assert np.linalg.norm(beam.exit_direction - direction) <= 1e-12
        assert np.linalg.norm(beam.exit_wave_normal - direction) <= 1e-12


@settings(max_examples=100, deadline=None)
@given(theta=st.floats(np.deg2rad(5.0), np.deg2rad(85.0)), azimuth=st.floats(0.0, 2 * np.pi),
       n_o=st.floats(1.4, 2.4), dn=st.floats(-0.4, 0.4).filter(lambda d: abs(d) > 1e-3),
       thickness=st.floats(0.5, 30.0))
def test_walkoff_offset_at_normal_incidence(theta, azimuth, n_o, dn, thickness):
    # Yariv & Yeh §4.3: the e-ray inside makes the angle ρ with the normal (the wave normal stays
    # along the normal) and leaves displaced by L·tan ρ; the o-ray is undisplaced.
    n_e = n_o + dn
    system = slab(1.0, n_o, n_e, sphere(theta, azimuth), Z, thickness)
    result = trace(system, [0.3, -0.2, 0.0], Z, 1.064, (1.0, 0.5), power_threshold=0.0)
    rho = np.arctan((n_o ** 2 - n_e ** 2) * np.sin(theta) * np.cos(theta)
                    / (n_e ** 2 * np.cos(theta) ** 2 + n_o ** 2 * np.sin(theta) ** 2))
    e_beam, o_beam = result["e"], result["o"]
    inside = e_beam.ray_directions[1]
    assert abs(np.arctan2(np.linalg.norm(np.cross(inside, Z)), inside @ Z) - abs(rho)) <= 1e-12
    assert np.linalg.norm(e_beam.wave_normals[1] - Z) <= 1e-12
    offset = e_beam.exit_position_mm - np.array([0.3, -0.2, 5.0 + thickness])
    assert abs(offset[2]) <= 1e-12
    assert abs(np.linalg.norm(offset) - thickness * abs(np.tan(rho))) <= 1e-12 * thickness
    assert np.linalg.norm(o_beam.exit_position_mm[:2] - [0.3, -0.2]) <= 1e-12 * thickness


def wollaston(wedge_deg=20.0, n_o=1.66, n_e=1.49, aperture=None):
    """Two crystal wedges, axes along x and y (in the faces), cemented without a layer."""
    a = np.deg2rad(wedge_deg)
    first = Medium(FixedIndices(n_o, n_e, name="crystal"), optic_axis=[1.0, 0.0, 0.0])
    second = Medium(FixedIndices(n_o, n_e, name="crystal"), optic_axis=[0.0, 1.0, 0.0])
    return SequentialSystem([AIR, first, second, AIR],
                            [Surface([0, 0, 0], Z), Surface([0, 0, 5.0], [np.sin(a), 0, np.cos(a)]),
                             Surface([0, 0, 10.0], Z, aperture=aperture)])


def test_wollaston_branch_labels_and_power():
    # e in the first wedge (E ∥ x ∥ axis) is o in the second (axis y) and vice versa; "oo" and
    # "ee" carry no power by symmetry (mirror y → −y) and are pruned at the default threshold.
    result = trace(wollaston(), [0.0, 0.0, -1.0], Z, 0.8, (np.sqrt(0.5), np.sqrt(0.5)))
    assert sorted(result.labels()) == ["eo", "oe"]
    kept_all = trace(wollaston(), [0.0, 0.0, -1.0], Z, 0.8, (np.sqrt(0.5), np.sqrt(0.5)),
                     power_threshold=0.0)
    assert sorted(kept_all.labels()) == ["ee", "eo", "oe", "oo"]
    assert kept_all.power("oo") <= 1e-28 and kept_all.power("ee") <= 1e-28
    # The two beams leave on opposite sides of z (the Wollaston split).
    dev = {label: result[label].deviation_deg()[0] for label in ("eo", "oe")}
    assert dev["eo"] * dev["oe"] < 0


def test_unpolarised_input_gives_two_incoherent_beams():
    # Unpolarised light: an incoherent pair of orthogonal inputs with half the power each; each
    # Wollaston beam then takes half of the transmitted power of its own polarisation.
    unpol = trace(wollaston(), [0.0, 0.0, -1.0], Z, 0.8, "unpolarised")
    assert unpol.incoherent_pair
    assert sorted(unpol.labels()) == ["eo", "oe"]
    assert unpol["eo"].power.shape == (2,)
    x_only = trace(wollaston(), [0.0, 0.0, -1.0], Z, 0.8, (1.0, 0.0))
    y_only = trace(wollaston(), [0.0, 0.0, -1.0], Z, 0.8, (0.0, 1.0))
    assert abs(unpol.power("eo") - 0.5 * x_only.power("eo")) <= 1e-12
    assert abs(unpol.power("oe") - 0.5 * y_only.power("oe")) <= 1e-12
    # x input is e in the first wedge (axis x): only "eo" gets power; y input only "oe".
    assert "oe" not in x_only.labels() and "eo" not in y_only.labels()


def test_keep_reflections_records_ghosts_and_closes_energy():
    # Every branch's power splits into transmitted + reflected at each surface (energy
    # conservation, Born & Wolf §1.5.3), so the beams plus all first reflections add up to one.
    # The first reflection at the entrance face is Fresnel at normal incidence with n_e for the
    # x component (axis x) and n_o for y.
    result = trace(wollaston(), [0.0, 0.0, -1.0], Z, 0.8, (np.sqrt(0.5), 1j * np.sqrt(0.5)),
                   keep_reflections=True, power_threshold=0.0)
    total = sum(result.power(label) for label in result.labels())
    total += sum(beam.power for beam in result.reflected.values())
    assert abs(total - 1.0) <= 1e-12
    ghost = result.reflected["|R0s"]
    expected = 0.5 * ((1 - 1.49) / (1 + 1.49)) ** 2 + 0.5 * ((1 - 1.66) / (1 + 1.66)) ** 2
    assert abs(ghost.power - expected) <= 1e-12
    assert np.linalg.norm(ghost.exit_direction + Z) <= 1e-12
    assert {"e|R1o", "e|R1e", "o|R1o", "o|R1e"} <= set(result.reflected)


def test_aperture_flags():
    # Rays meeting the exit face outside a 1 mm radius are flagged (and still traced).
    system = wollaston(aperture=CircularAperture(1.0))
    positions = np.array([[0.0, 0.0, -1.0], [0.0, 3.0, -1.0]])
    result = trace(system, positions, Z, 0.8, (1.0, 0.0))
    flags = result["eo"].flags
    assert flags[0] & TraceFlag.OUTSIDE_APERTURE == 0
    assert flags[1] & TraceFlag.OUTSIDE_APERTURE != 0
    assert np.all(np.isfinite(result["eo"].exit_position_mm))


def test_total_internal_reflection_flag():
    # Exit face tilted 40° toward +x: the internal angle of incidence is 40° ∓ the internal tilt
    # (+x ray: 34°, −x ray: 46°). The o-wave (n_o = 1.66, critical angle asin(1/1.66) = 37.0°) is
    # totally reflected at 46° but not at 34°; the e-wave (axis ∥ y, index n_e = 1.49, critical
    # 42.2°) likewise. TIR is a flag with zero power, not NaN.
    a = np.deg2rad(40.0)
    crystal = Medium(FixedIndices(1.66, 1.49), optic_axis=[0.0, 1.0, 0.0])
    system = SequentialSystem([AIR, crystal, AIR],
                              [Surface([0, 0, 0], Z), Surface([0, 0, 5.0], [np.sin(a), 0, np.cos(a)])])
    # Inside the crystal the o-wave refracts to ±6°: choose the input angle accordingly.
    inside = np.deg2rad(6.0)
    outside = np.arcsin(1.66 * np.sin(inside))
    directions = np.array([[np.sin(outside), 0, np.cos(outside)], [-np.sin(outside), 0, np.cos(outside)]])
    result = trace(system, [0.0, 0.0, -1.0], directions, 0.6, (0.0, 1.0))  # y: e-wave (E ∥ axis)
    result_o = trace(system, [0.0, 0.0, -1.0], directions, 0.6, (1.0, 0.0))  # x: o-wave
    o_beam = result_o["o"]
    tir = (o_beam.flags & TraceFlag.TOTAL_INTERNAL_REFLECTION) != 0
    assert list(tir) == [False, True]
    assert o_beam.power[1] == 0.0 and o_beam.power[0] > 0.5
    assert np.all(np.isfinite(o_beam.exit_direction)) and np.all(np.isfinite(o_beam.exit_position_mm))
    e_beam = result["e"]
    e_tir = (e_beam.flags & TraceFlag.TOTAL_INTERNAL_REFLECTION) != 0
    # e-wave internal angles: refraction with n_e differs slightly from ±6°; 40° + ~6.7° > 42.2°.
    assert list(e_tir) == [False, True]


def test_loop_of_single_traces_equals_batch():
    # Broadcasting contract (STYLE.md rule 2; common practice, no source): one batched trace
    # equals a loop of single-ray traces.
    rng = np.random.default_rng(7)
    n = 6
    directions = np.column_stack([rng.uniform(-0.1, 0.1, n), rng.uniform(-0.1, 0.1, n), np.ones(n)])
    directions /= np.linalg.norm(directions, axis=1)[:, None]
    positions = np.column_stack([rng.uniform(-1, 1, n), rng.uniform(-1, 1, n), -np.ones(n)])
    wavelengths = rng.uniform(0.4, 1.6, n)
    jones = rng.normal(size=(n, 2)) + 1j * rng.normal(size=(n, 2))
    system = wollaston()
    batch = trace(system, positions, directions, wavelengths, jones, power_threshold=0.0)
    for i in range(n):
        single = trace(system, positions[i], directions[i], wavelengths[i], jones[i], power_threshold=0.0)
        for label in batch.labels():
            b, s = batch[label], single[label]
            for attr in ("exit_position_mm", "exit_direction", "field", "power", "optical_path_mm"):
                np.testing.assert_allclose(getattr(b, attr)[i], getattr(s, attr), rtol=0, atol=1e-13)
            assert b.flags[i] == s.flags
