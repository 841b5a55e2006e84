"""Cross-check of the interface solver against an independent 4 × 4 transfer-matrix library.

Reference library: GeneralTmm (PyPI ``GeneralTmm``, A. Loot, MIT licence), a C++/Eigen
implementation of the 4 × 4 transfer-matrix method for anisotropic multilayers after
I. J. Hodgkinson, S. Kassam & Q. H. Wu, "Eigenequations and compact algorithms for bulk and
layered anisotropic optical media: reflection and refraction at a crystal–crystal interface",
J. Comput. Phys. 133, 75–83 (1997). It solves each layer's 4 × 4 eigenproblem numerically, a
different method from our closed-form eigenwaves plus boundary solve. Test dependency only.

Conventions of GeneralTmm, established for this file from its documentation and checked by the
isotropic and special-orientation cases below: x is the layer normal, the plane of incidence is
x–y (beta = n1 sinθ along y), a layer's principal indices (n_x, n_y, n_z) are rotated by
R = R_x(ξ) R_z(ψ); the intensity matrix rows are (R_p, R_s, T_3, T_4) and its columns the p and s
inputs. Our frame maps as x_GT → z (normal), y_GT → x (in the plane of incidence), z_GT → y.
"""
import numpy as np

import GeneralTmm  # noqa: E402  (test dependency: the `test` extra of pyproject.toml)

from prismdesign.optics import solve_interface  # noqa: E402

WAVELENGTH_UM = 0.6328
Z = np.array([0.0, 0.0, 1.0])


def _rx(a):
    c, s = np.cos(a), np.sin(a)
    return np.array([[1, 0, 0], [0, c, -s], [0, s, c]])


def _rz(a):
    c, s = np.cos(a), np.sin(a)
    return np.array([[c, -s, 0], [s, c, 0], [0, 0, 1]])


def reference(n1, n_o, n_e, psi, xi, which, theta, layer=None):
    """GeneralTmm intensity matrix (4 × 4) for n1 | [layer] | uniaxial half-space."""
    mat = GeneralTmm.Material.Static
    tmm = GeneralTmm.Tmm(wl=WAVELENGTH_UM * 1e-6)
    tmm.AddIsotropicLayer(float("inf"), mat(n1))
    if layer is not None:
        n_layer, thickness_um = layer
        tmm.AddIsotropicLayer(thickness_um * 1e-6, mat(n_layer))
    principal = [mat(n_o)] * 3
    principal[which] = mat(n_e)
    tmm.AddLayer(float("inf"), *principal, psi, xi)
    tmm.SetParams(beta=n1 * np.sin(theta))
    return tmm.GetIntensityMatrix()


def ours(n1, n_o, n_e, psi, xi, which, theta, layer=None):
    """Our power fractions arranged like GeneralTmm's matrix: rows (R_p, R_s, T_o, T_e)."""
    c_gt = _rx(xi) @ _rz(psi) @ np.eye(3)[which]
    axis = np.array([c_gt[1], c_gt[2], c_gt[0]])
    k = n1 * np.array([np.sin(theta), 0.0, np.cos(theta)])
    p_in = np.array([np.cos(theta), 0.0, -np.sin(theta)], dtype=complex)
    s_in = np.array([0.0, 1.0, 0.0], dtype=complex)
    layer_arg = None if layer is None else (layer[0], WAVELENGTH_UM, layer[1] * 1e-3)
    res = solve_interface(np.stack([k, k]), np.stack([p_in, s_in]), Z, (n1, n1), Z, (n_o, n_e), axis,
                          layer=layer_arg)
    pf = res.power_fraction            # rows: p input, s input; columns: to, te, ro, re
    return np.array([[pf[0, 3], pf[1, 3]], [pf[0, 2], pf[1, 2]], [pf[0, 0], pf[1, 0]], [pf[0, 1], pf[1, 1]]])


def _cases(rng_state, count):
    rng = np.random.default_rng(rng_state)
    for _ in range(count):
        yield (rng.uniform(1.0, 2.0), rng.uniform(1.3, 2.4), rng.uniform(1.3, 2.4),
               rng.uniform(-np.pi, np.pi), rng.uniform(-np.pi, np.pi), int(rng.integers(3)),
               rng.uniform(0.0, np.deg2rad(85.0)))


def _compare(ref, mine):
    """Worst deviation of reflectances and of the transmitted pair (mode order may differ)."""
    r_dev = np.abs(ref[:2, :2] - mine[:2]).max()
    t_ref = np.nan_to_num(ref[2:, :2])
    t_dev = min(np.abs(t_ref - mine[2:]).max(), np.abs(t_ref[::-1] - mine[2:]).max())
    closure = np.abs(ref[:2, :2].sum(axis=0) + t_ref.sum(axis=0) - 1).max()
    return r_dev, t_dev, closure


def test_isotropic_limit_matches_reference():
    # Sanity of the convention mapping: isotropic media (n_o = n_e) at several angles.
    for theta in np.deg2rad([0.0, 20.0, 45.0, 70.0]):
        r_dev, t_dev, _ = _compare(reference(1.2, 1.7, 1.7, 0.3, 0.4, 0, theta),
                                   ours(1.2, 1.7, 1.7, 0.3, 0.4, 0, theta))
        assert r_dev <= 1e-12 and t_dev <= 1e-12


def test_uniaxial_half_space_matches_reference():
    # 200 random orientations (ψ, ξ, principal axis carrying n_e), indices and angles, total
    # internal reflection of one or both modes included (n1 up to 2.0). Reflectances
    # R_pp, R_ss and the cross-polarised R_ps, R_sp must agree to 1e-12 (observed 8e-14);
    # transmittances to 1e-9, limited by the reference's own energy closure R + T = 1, which
    # is ~1e-10 near degenerate index pairs (asserted below so the bound stays honest).
    worst = np.zeros(3)
    for case in _cases(2024, 200):
        ref, mine = reference(*case), ours(*case)
        worst = np.maximum(worst, _compare(ref, mine))
        assert np.abs(mine[:, :].sum(axis=0) - 1).max() <= 1e-12
    r_dev, t_dev, closure = worst
    assert r_dev <= 1e-12, r_dev
    assert closure <= 1e-9, closure
    assert t_dev <= 1e-9 + closure, (t_dev, closure)


def test_cross_polarised_reflection_is_exercised():
    # Guard against a vacuous comparison: the random cases include strong p ↔ s conversion.
    largest = max(max(reference(*case)[0, 1], reference(*case)[1, 0]) for case in _cases(2024, 200))
    assert largest > 1e-3


def test_layer_on_uniaxial_substrate_matches_reference():
    # A coherent isotropic layer (cement film or tunnelling air gap) on a tilted uniaxial
    # substrate: our characteristic-matrix layer plus boundary solve against the reference's
    # full 4 × 4 stack.
    worst = np.zeros(3)
    rng = np.random.default_rng(99)
    for case in _cases(7, 60):
        layer = (rng.uniform(1.0, 1.6), rng.uniform(0.0, 1.5))     # index, thickness in µm
        ref, mine = reference(*case, layer=layer), ours(*case, layer=layer)
        worst = np.maximum(worst, _compare(ref, mine))
    r_dev, t_dev, closure = worst
    assert r_dev <= 1e-12, r_dev
    assert t_dev <= 1e-9 + closure, (t_dev, closure)
