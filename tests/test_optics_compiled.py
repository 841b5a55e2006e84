"""The compiled interface kernel against the numpy reference implementation.

:func:`prismdesign.optics.solve_interface` has two implementations of one method: the numpy code
in :mod:`prismdesign.optics.interface` (the reference, checked against published values and
closed forms by the other optics tests) and the numba kernel in
:mod:`prismdesign.optics.compiled_interface`. Here both solve the same random cases, including
the hard ones (evanescent waves, wave normal along the optic axis, grazing and normal incidence,
thin layers with tunnelling), and must agree to 1e-12 in power fractions with identical flags.
The physics tests of the other files run on whichever kernel is active (compiled when numba is
installed, as in CI); ``test_interface_physics_tests_pass_on_the_other_kernel`` runs them once
more on the other one.
"""
import os
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from prismdesign.optics import interface
from prismdesign.optics.eigenmodes import extraordinary_index_rad, mode_fields
from prismdesign.optics.interface import active_kernel, set_kernel, solve_interface

numba = pytest.importorskip("numba")

POWER_TOL = 1e-12
FIELD_TOL = 1e-10


class Reference:
    """The numpy result, with `spread`: how far its power fractions move when the incident wave
    vector is scaled by 1 ± 2e-15 (a rounding-sized change of the input)."""

    def __init__(self, res, spread):
        self._res, self.spread = res, spread

    def __getattr__(self, name):
        return getattr(self._res, name)


def both(*args, **kwargs):
    """Solve with the numpy reference and with the compiled kernel; restore the choice."""
    results = {}
    for name in ("numpy", "compiled"):
        previous = set_kernel(name)
        try:
            results[name] = solve_interface(*args, **kwargs)
        finally:
            set_kernel(previous)
    previous = set_kernel("numpy")
    try:
        k = np.asarray(args[0], dtype=float)
        moved = [solve_interface(k * (1.0 + s), *args[1:], **kwargs).power_fraction
                 for s in (2e-15, -2e-15)]
    finally:
        set_kernel(previous)
    ref = results["numpy"].power_fraction
    with np.errstate(invalid="ignore"):
        spread = np.nan_to_num(np.maximum(np.abs(moved[0] - ref), np.abs(moved[1] - ref)))
    return Reference(results["numpy"], spread), results["compiled"]


def assert_same(ref, fast, field_tol=FIELD_TOL, power_tol=POWER_TOL):
    assert fast.power_fraction.shape == ref.power_fraction.shape
    np.testing.assert_array_equal(fast.evanescent, ref.evanescent)
    np.testing.assert_array_equal(fast.singular, ref.singular)
    # Power fractions to 1e-12 (relative beyond 1). Where the method itself is ill-conditioned
    # on a ray (near a critical angle the normal component follows from a cancelling
    # discriminant) no two implementations that round differently can agree better than the
    # rounding moves the result. Two measures of that floor, per ray: the reference's energy
    # closure |Σ fractions − 1| (1 for lossless media, Born & Wolf §1.5.3) and ten times its
    # response to a rounding-sized change of the input (Reference.spread).
    closure = np.abs(ref.power_fraction.sum(axis=-1) - 1.0)
    closure = np.where(ref.singular | ~np.isfinite(closure), 0.0, closure)
    tolerance = (power_tol * (1.0 + np.abs(ref.power_fraction)) + closure[..., None]
                 + 10.0 * getattr(ref, "spread", 0.0))
    deviation = np.abs(fast.power_fraction - ref.power_fraction)
    both_nan = np.isnan(fast.power_fraction) & np.isnan(ref.power_fraction)
    assert np.all((deviation <= tolerance) | both_nan), float(np.nanmax(deviation - tolerance))
    for name in ("coefficient", "normal_component", "e_field", "ray_direction", "normal",
                 "wave_vector", "h_field"):
        a, b = getattr(fast, name), getattr(ref, name)
        assert a.shape == b.shape, name
        scale = max(1.0, float(np.nanmax(np.abs(b)))) if b.size else 1.0
        np.testing.assert_allclose(a, b, rtol=0, atol=field_tol * scale, err_msg=name)
    for j in range(4):
        np.testing.assert_allclose(fast.propagating_wave_vector(j), ref.wave_vector[..., j, :].real,
                                   rtol=0, atol=FIELD_TOL)


class select:
    """The rays `mask` of an interface result (the attributes assert_same reads)."""

    def __init__(self, res, mask):
        self._res, self._mask = res, mask

    def __getattr__(self, name):
        value = getattr(self._res, name)
        return value if callable(value) and not isinstance(value, np.ndarray) else value[self._mask]

    def propagating_wave_vector(self, mode):
        return self._res.propagating_wave_vector(mode)[self._mask]


def unit(v):
    return v / np.linalg.norm(v, axis=-1, keepdims=True)


def random_case(rng, n, tilt_max=1.45, iso_fraction=0.3, index_range=(1.0, 2.6), tilt_min=0.0):
    """Random surface, incidence, media (some isotropic) and optic axes; eigenfield input."""
    normal = unit(rng.normal(size=(n, 3)))
    tangential = unit(np.cross(normal, rng.normal(size=(n, 3))))
    tilt = rng.uniform(tilt_min, tilt_max, n)
    direction = np.cos(tilt)[:, None] * normal + np.sin(tilt)[:, None] * tangential
    n_o1, n_e1, n_o2, n_e2 = rng.uniform(*index_range, (4, n))
    iso1 = rng.random(n) < iso_fraction
    iso2 = rng.random(n) < iso_fraction
    n_e1 = np.where(iso1, n_o1, n_e1)
    n_e2 = np.where(iso2, n_o2, n_e2)
    axis_1 = unit(rng.normal(size=(n, 3)))
    axis_2 = unit(rng.normal(size=(n, 3)))
    mode = "e" if rng.random() < 0.5 else "o"
    theta = np.arccos(np.clip((direction * axis_1).sum(axis=1), -1, 1))
    index = n_o1 if mode == "o" else extraordinary_index_rad(theta, n_o1, n_e1)
    k = direction * index[:, None]
    field, _ = mode_fields(k.astype(complex), n_o1, n_e1, axis_1, normal, mode)
    return k, field, normal, (n_o1, n_e1), axis_1, (n_o2, n_e2), axis_2


def test_random_cases_agree():
    rng = np.random.default_rng(101)
    # 20 000 rays: more than one block of the numpy path and many chunks of the kernel.
    ref, fast = both(*random_case(rng, 20_000))
    assert_same(ref, fast)
    assert ref.evanescent.any() and (~ref.evanescent).any()


def test_total_internal_reflection_agrees():
    # Dense incident medium, thin far medium, steep angles: one or both transmitted modes are
    # evanescent on most rays (complex normal components, tangential energy flow).
    rng = np.random.default_rng(102)
    k, field, normal, ind1, ax1, _, ax2 = random_case(rng, 4000, index_range=(1.9, 2.6))
    n2 = rng.uniform(1.0, 1.6, 4000)
    ref, fast = both(k, field, normal, ind1, ax1, (n2, n2 * rng.uniform(0.95, 1.05, 4000)), ax2)
    assert_same(ref, fast)
    assert ref.total_internal_reflection.mean() > 0.3


def test_wave_normal_along_optic_axis_agrees():
    # Normal incidence on crystals whose axis is the normal (the o/e basis is degenerate and an
    # explicit basis is used), axes within 1e-9 … 1e-6 rad of it (either side of the 1e-7
    # threshold), and an incident crystal wave along its own axis.
    rng = np.random.default_rng(103)
    n = 600
    normal = np.tile([0.0, 0.0, 1.0], (n, 1))
    tiny = np.repeat([0.0, 1e-9, 1e-8, 1e-7, 1e-6, 1e-3], n // 6)
    phi = rng.uniform(0, 2 * np.pi, n)
    axis = unit(np.stack([tiny * np.cos(phi), tiny * np.sin(phi), np.ones(n)], axis=-1))
    k = np.tile([0.0, 0.0, 1.0], (n, 1))
    field = unit(rng.normal(size=(n, 3)) * [1, 1, 0]) + 0j
    ref, fast = both(k, field, normal, (1.0, 1.0), normal, (1.6557, 1.4849), axis)
    assert_same(ref, fast)
    # From inside the crystal, wave normal along the axis, out into air.
    k2 = 1.6557 * axis
    field2, _ = mode_fields(k2.astype(complex), np.full(n, 1.6557), np.full(n, 1.4849), axis,
                            normal, "o")
    ref, fast = both(k2, field2, normal, (1.6557, 1.4849), axis, (1.0, 1.0), normal)
    assert_same(ref, fast)


def test_grazing_and_normal_incidence_agree():
    # Incidence from exactly normal (κ = 0, arbitrary tangential frame) to exactly grazing
    # (zero incident normal flux) through just short of grazing.
    n = 7
    angle = np.array([0.0, 1e-12, 0.5, np.pi / 2 - 1e-6, np.pi / 2 - 1e-9, np.pi / 2 - 1e-13,
                      np.pi / 2])
    for normal in ([0.0, 0.0, 1.0], [1.0, 0.0, 0.0], unit(np.array([0.3, -0.2, 0.9]))):
        normal = np.asarray(normal)
        a = unit(np.cross(normal, [0.3, 0.7, 0.1]))
        d = np.cos(angle)[:, None] * normal + np.sin(angle)[:, None] * a
        d[-1] = a                                   # exactly grazing (cos(π/2) ≠ 0 in floats)
        field = np.cross(d, np.cross(a, normal)) + 0.3j * np.cross(a, normal)
        ref, fast = both(1.5 * d, field, normal, (1.5, 1.5), normal, (1.6557, 1.4849),
                         unit(np.array([0.2, 0.5, 0.8])))
        # Within ~1e-6 rad of grazing the method itself loses digits (the normal components
        # follow from n² − κ², which cancels): the reference's energy closure is off by 1e-4 to
        # 1e8 there (Born & Wolf §1.5.3: it should be 1). The two kernels must agree to 1e-12 on
        # the well-conditioned rays and to the reference's own closure error on the others.
        closure = np.abs(ref.power_fraction.sum(axis=-1) - 1.0)
        good = closure < 1e-12
        assert good[:3].all()
        # At 1e-12 rad from normal the plane of incidence (which splits the reflected isotropic
        # pair into s and p) is fixed by rounding, differently in each kernel: that ray is
        # compared by the transmitted crystal waves and the reflected pair's sum.
        near_normal = angle == 1e-12
        assert_same(select(ref, good & ~near_normal), select(fast, good & ~near_normal))
        pair_ref, pair_fast = (np.concatenate([r.power_fraction[near_normal, :2],
                                               r.power_fraction[near_normal, 2:].sum(-1)[:, None]],
                                              axis=-1) for r in (ref, fast))
        np.testing.assert_allclose(pair_fast, pair_ref, rtol=0, atol=POWER_TOL)
        np.testing.assert_array_equal(fast.evanescent, ref.evanescent)
        np.testing.assert_array_equal(fast.singular, ref.singular)
        bad = ~good
        assert np.all(np.abs(fast.power_fraction[bad] - ref.power_fraction[bad])
                      <= closure[bad, None] + 1e-12)


@pytest.mark.parametrize("thickness_mm", [0.0, 1e-5, 2e-4, 0.5e-3, 5e-3])
def test_thin_layers_agree(thickness_mm):
    # Cement films and air gaps: propagating and evanescent (frustrated total reflection) layer
    # waves, including gaps thick enough for the growth cap of the layer matrix.
    rng = np.random.default_rng(104)
    n = 3000
    case = random_case(rng, n, index_range=(1.4, 2.4))
    layer_index = rng.choice([1.0, 1.3, 1.55], n)
    wavelength = rng.uniform(0.4, 1.6, n)
    ref, fast = both(*case, layer=(layer_index, wavelength, thickness_mm))
    # Across an evanescent gap the boundary system holds cosh growth up to e^20 (thin_layer
    # caps it there), which magnifies last-bit differences (numpy's complex products use fused
    # multiply-adds, numba's do not): amplitudes agree to 1e-8 of the largest, and power
    # fractions to 1e-12, except where the cap is reached (thickness ≥ 5 µm here): there both
    # carry rounding noise of ~1e-6 in the tunnelled amplitude (~1e-12 in its power) whose true
    # value is < 2e-9 (power < 4e-18).
    capped = thickness_mm >= 1e-3
    assert_same(ref, fast, field_tol=2e-6 if capped else 1e-8,
                power_tol=5 * POWER_TOL if capped else POWER_TOL)


def test_broadcast_shapes_agree():
    # Inputs of different shapes broadcast against each other, shared constants stay shared.
    rng = np.random.default_rng(105)
    direction = unit(rng.normal(size=(5, 1, 3)) + [0, 0, 3])
    field = np.cross(direction, [0.0, 1.0, 0.0]) + 0.2j * np.array([0.0, 1.0, 0.0])
    axis = unit(rng.normal(size=(1, 7, 3)))
    n_o = np.linspace(1.5, 1.7, 7)
    normal = np.array([0.0, 0.0, 1.0])
    ref, fast = both(direction, field, normal, (1.0, 1.0), normal, (n_o, 1.48), axis)
    assert fast.coefficient.shape == (5, 7, 4)
    assert_same(ref, fast)
    ref, fast = both(direction[0, 0], field[0, 0], normal, (1.0, 1.0), normal, (1.6, 1.5),
                     axis[0, 0])
    assert fast.e_field.shape == (4, 3)
    assert_same(ref, fast)
    # Read-only inputs (e.g. broadcast views) are accepted.
    k_ro = np.broadcast_to(direction[:, 0], (5, 3))
    ref, fast = both(k_ro, field[:, 0], normal, (1.0, 1.0), normal, (1.6, 1.5), axis[0, 0])
    assert_same(ref, fast)


def test_empty_and_nan_input_agree():
    normal = np.array([0.0, 0.0, 1.0])
    ref, fast = both(np.zeros((0, 3)), np.zeros((0, 3), complex), normal, (1.0, 1.0), normal,
                     (1.6, 1.5), normal)
    assert fast.power_fraction.shape == (0, 4)
    k = np.array([[0.0, 0.0, 1.0], [np.nan, 0.0, 1.0]])
    field = np.array([[1.0, 0.0, 0.0], [1.0, 0.0, 0.0]], complex)
    ref, fast = both(k, field, normal, (1.0, 1.0), normal, (1.6, 1.5), [0.0, 0.6, 0.8])
    np.testing.assert_array_equal(np.isnan(fast.power_fraction), np.isnan(ref.power_fraction))
    np.testing.assert_allclose(fast.power_fraction[0], ref.power_fraction[0], rtol=0,
                               atol=POWER_TOL)


@settings(max_examples=60, deadline=None)
@given(seed=st.integers(0, 2**32 - 1), size=st.integers(1, 40),
       tilt=st.tuples(st.floats(1e-3, 1.45), st.floats(1e-3, 1.45)), iso=st.floats(0.0, 1.0))
def test_property_kernels_agree(seed, size, tilt, iso):
    # Tilts from 1e-3 rad: closer to normal the plane of incidence (and with it the s/p split
    # in an isotropic medium) is set by rounding (see test_grazing_and_normal_incidence_agree);
    # up to 1.45 rad: closer to grazing the method itself loses digits.
    rng = np.random.default_rng(seed)
    ref, fast = both(*random_case(rng, size, tilt_min=min(tilt), tilt_max=max(tilt),
                                  iso_fraction=iso))
    assert_same(ref, fast)


def test_set_kernel_validates_and_restores():
    previous = set_kernel("numpy")
    try:
        assert active_kernel() == "numpy"
        set_kernel("compiled")
        assert active_kernel() == "compiled"
        set_kernel("auto")
        assert active_kernel() == "compiled"        # numba is installed (importorskip above)
        with pytest.raises(ValueError, match="kernel must be one of"):
            set_kernel("fortran")
    finally:
        set_kernel(previous)


def test_interface_physics_tests_pass_on_the_other_kernel():
    # The published-value and invariant tests of the solver, run on the kernel this session does
    # not use, in a child process selected by PRISMDESIGN_KERNEL (see interface.KERNEL_VARIABLE).
    other = "numpy" if active_kernel() == "compiled" else "compiled"
    tests = Path(__file__).parent
    files = [str(tests / name) for name in ("test_optics_energy.py", "test_optics_isotropic.py",
                                            "test_optics_uniaxial.py", "test_optics_linear4.py",
                                            "test_optics_reference_tmm.py",
                                            "test_optics_tracer.py")]
    env = dict(os.environ, **{interface.KERNEL_VARIABLE: other})
    run = subprocess.run([sys.executable, "-m", "pytest", "-q", "-x", "-p", "no:cacheprovider",
                          *files], env=env, cwd=tests.parent, capture_output=True, text=True,
                         timeout=1800)
    assert run.returncode == 0, run.stdout[-3000:] + run.stderr[-3000:]


@pytest.mark.parametrize("kernel", ["numpy", "compiled"])
def test_reused_outputs_give_the_same_result(kernel):
    # solve_interface(..., out=earlier) overwrites the earlier result's arrays instead of
    # allocating: the answer must be that of a fresh call, and the buffers are handed over once.
    rng = np.random.default_rng(106)
    first_case = random_case(rng, 5000)
    second_case = random_case(rng, 5000)
    previous = set_kernel(kernel)
    try:
        fresh = solve_interface(*second_case)
        earlier = solve_interface(*first_case)
        buffer = earlier.e_field
        reused = solve_interface(*second_case, out=earlier)
        assert np.shares_memory(reused.e_field, buffer)
        again = solve_interface(*second_case, out=earlier)        # nothing left to reuse
        assert not np.shares_memory(again.e_field, buffer)
        smaller = solve_interface(*[c[:10] if not isinstance(c, tuple) else (c[0][:10], c[1][:10])
                                    for c in second_case], out=reused)
        assert smaller.e_field.shape == (10, 4, 3)
    finally:
        set_kernel(previous)
    for name in ("coefficient", "power_fraction", "evanescent", "singular", "normal",
                 "normal_component", "e_field", "ray_direction", "wave_vector"):
        np.testing.assert_array_equal(getattr(reused, name), getattr(fresh, name), err_msg=name)
