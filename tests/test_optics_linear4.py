"""Batched 4 × 4 solver and loop-versus-batch equality of the interface solver.

References: numpy.linalg.solve (LAPACK gesv, LU with partial pivoting; E. Anderson et al.,
*LAPACK Users' Guide*, 3rd ed., SIAM 1999) as the independent reference for
:func:`prismdesign.optics.linear4.solve4`. The loop/batch equality is the broadcasting contract
of STYLE.md rule 2 (common practice, no source).
"""
import numpy as np
import pytest

from prismdesign.optics import solve_interface
from prismdesign.optics.eigenmodes import extraordinary_index_rad, mode_fields
from prismdesign.optics.linear4 import solve4


@pytest.mark.parametrize("dtype", [float, complex])
def test_solve4_matches_numpy(dtype):
    # Well-conditioned random systems: random matrices kept where the condition number < 100.
    rng = np.random.default_rng(3)
    m = 3000
    a = rng.normal(size=(m, 4, 4)) * 0.3 + np.eye(4)
    b = rng.normal(size=(m, 4))
    if dtype is complex:
        a = a + 0.3j * rng.normal(size=(m, 4, 4))
        b = b + 1j * rng.normal(size=(m, 4))
    keep = np.linalg.cond(a) < 100
    a, b = a[keep], b[keep]
    assert keep.sum() > 2000
    x, singular = solve4(a, b)
    reference = np.linalg.solve(a, b[..., None])[..., 0]
    assert not singular.any()
    err = np.abs(x - reference).max(axis=-1) / np.abs(reference).max(axis=-1)
    assert err.max() <= 1e-12


def test_solve4_broadcasts_and_flags_singular():
    rng = np.random.default_rng(4)
    a = rng.normal(size=(3, 5, 4, 4)) + 2 * np.eye(4)
    a[1, 2, 3] = a[1, 2, 0]            # two equal rows: exactly singular
    b = rng.normal(size=(3, 5, 4))
    x, singular = solve4(a, b)
    assert x.shape == (3, 5, 4) and singular.shape == (3, 5)
    assert singular[1, 2] and singular.sum() == 1
    assert np.all(x[1, 2] == 0.0)
    ok = ~singular
    reference = np.linalg.solve(a[ok], b[ok][..., None])[..., 0]
    np.testing.assert_allclose(x[ok], reference, rtol=1e-12, atol=1e-12)


def _random_cases(rng, n):
    normal = rng.normal(size=(n, 3))
    normal /= np.linalg.norm(normal, axis=1)[:, None]
    axis_1 = rng.normal(size=(n, 3))
    axis_1 /= np.linalg.norm(axis_1, axis=1)[:, None]
    axis_2 = rng.normal(size=(n, 3))
    axis_2 /= np.linalg.norm(axis_2, axis=1)[:, None]
    helper = rng.normal(size=(n, 3))
    tangential = helper - (helper * normal).sum(axis=1)[:, None] * normal
    tangential /= np.linalg.norm(tangential, axis=1)[:, None]
    tilt = rng.uniform(0.0, 1.2, n)
    direction = np.cos(tilt)[:, None] * normal + np.sin(tilt)[:, None] * tangential
    n_o1, n_e1, n_o2, n_e2 = rng.uniform(1.3, 2.4, (4, n))
    theta = np.arccos(np.clip((direction * axis_1).sum(axis=1), -1, 1))
    k = direction * extraordinary_index_rad(theta, n_o1, n_e1)[:, None]
    field, _ = mode_fields(k.astype(complex), n_o1, n_e1, axis_1, normal, "e")
    return k, field, normal, (n_o1, n_e1), axis_1, (n_o2, n_e2), axis_2


@pytest.mark.parametrize("with_layer", [False, True])
def test_solve_interface_loop_equals_batch(with_layer):
    rng = np.random.default_rng(11)
    n = 40
    k, field, normal, ind1, ax1, ind2, ax2 = _random_cases(rng, n)
    wavelength = rng.uniform(0.4, 1.6, n)
    layer = (np.full(n, 1.2), wavelength, np.full(n, 0.5e-3)) if with_layer else None
    batch = solve_interface(k, field, normal, ind1, ax1, ind2, ax2, layer=layer)
    for i in range(n):
        layer_i = None if layer is None else tuple(v[i] for v in layer)
        single = solve_interface(k[i], field[i], normal[i], (ind1[0][i], ind1[1][i]), ax1[i],
                                 (ind2[0][i], ind2[1][i]), ax2[i], layer=layer_i)
        for attr in ("coefficient", "power_fraction", "wave_vector", "e_field", "ray_direction"):
            np.testing.assert_allclose(getattr(batch, attr)[i], getattr(single, attr), rtol=0, atol=1e-13)
        assert np.array_equal(batch.evanescent[i], single.evanescent)
    # Energy (Born & Wolf §1.5.3) across the whole batch as a sanity check of the inputs.
    assert np.abs(batch.power_fraction.sum(axis=-1) - 1).max() <= 1e-12


def test_solve_interface_large_batch_matches_small_blocks():
    # Batches above the solver's block size run in blocks (possibly on threads); results must
    # not depend on the batch size.
    rng = np.random.default_rng(12)
    n = 20000
    case = _random_cases(rng, n)
    big = solve_interface(*case)
    idx = rng.choice(n, 50, replace=False)
    small = solve_interface(*[c[idx] if not isinstance(c, tuple) else (c[0][idx], c[1][idx]) for c in case])
    np.testing.assert_allclose(big.coefficient[idx], small.coefficient, rtol=0, atol=1e-13)
    np.testing.assert_allclose(big.power_fraction[idx], small.power_fraction, rtol=0, atol=1e-13)
