"""Fitting published dispersion forms to measured indices."""
import numpy as np
import pytest

from prismdesign import (IsotropicMaterial, UniaxialMaterial, fit_dispersion, load_material,
                         save_material)
from prismdesign.materials import formulas as f

# Malitson, "Interspecimen comparison of the refractive index of fused silica",
# J. Opt. Soc. Am. 55, 1205 (1965), Eq. (2).
MALITSON = dict(B=[0.6961663, 0.4079426, 0.8974794],
                C=[0.0684043**2, 0.1162414**2, 9.896161**2])
# Ghosh, Opt. Commun. 163, 95-102 (1999), Table 1, calcite (A free, IR pole fixed at 120 µm²).
GHOSH_O = dict(A=1.73358749, B=[0.96464345, 1.82831454], C=[1.94325203e-2, 120.0])
GHOSH_E = dict(A=1.35859695, B=[0.82427830, 0.14429128], C=[1.06689543e-2, 120.0])
# Schott N-BK7 power-series (old Schott catalogue formula) n² = A0 + A1 λ² + A2 λ⁻² + ...
# (from memory; used only as a generator of realistic data).
SCHOTT_BK7 = dict(coefficients=[2.2718929, -1.0108077e-2, 1.0592509e-2, 2.0816965e-4,
                                -7.6472538e-6, 4.9240991e-7], powers=[0, 2, -2, -4, -6, -8])


def test_recovers_malitson_fused_silica():
    lam = np.linspace(0.21, 3.71, 120)
    fit = fit_dispersion(lam, f.sellmeier(lam, **MALITSON), form="sellmeier", terms=3,
                         name="silica_fit")
    assert isinstance(fit.material, IsotropicMaterial)
    dense = np.linspace(0.21, 3.71, 2000)
    assert np.max(np.abs(fit.material.n(dense) - f.sellmeier(dense, **MALITSON))) <= 1e-6
    coeffs = fit.coefficients["index"]
    assert coeffs["A"] == 1.0
    np.testing.assert_allclose(coeffs["B"], MALITSON["B"], rtol=1e-4)
    np.testing.assert_allclose(coeffs["C"], MALITSON["C"], rtol=1e-4)
    assert fit.rms_residual < 1e-9
    assert fit.residuals["index"].shape == lam.shape
    assert np.isfinite(fit.condition_number["index"]) and fit.condition_number["index"] > 1
    assert fit.material.validity_um == (0.21, 3.71)


def test_noisy_data_gives_honest_residuals():
    rng = np.random.default_rng(20240611)
    sigma = 2e-5            # a typical minimum-deviation refractometer uncertainty
    lam = np.linspace(0.25, 3.5, 400)
    truth = f.sellmeier(lam, **MALITSON)
    fit = fit_dispersion(lam, truth + rng.normal(0.0, sigma, lam.size), terms=3)
    # With 6 free coefficients and 400 points the expected RMS is σ·sqrt(394/400) ≈ 0.99σ;
    # its sampling spread is about σ/sqrt(2·394) ≈ 0.036σ.
    assert 0.85 * sigma < fit.rms_residual < 1.15 * sigma
    residual = fit.residuals["index"]
    assert abs(np.mean(residual)) < 4 * sigma / np.sqrt(lam.size)
    # The fit is closer to the truth than the noise is.
    assert np.sqrt(np.mean((fit.material.n(lam) - truth) ** 2)) < sigma / 2


def test_uniaxial_pair_from_ghosh_calcite(tmp_path):
    lam_o = np.linspace(0.21, 2.17, 80)
    lam_e = np.linspace(0.25, 2.0, 60)
    fit = fit_dispersion(lam_o, f.sellmeier(lam_o, **GHOSH_O), terms=2, constant=None,
                         n_e=f.sellmeier(lam_e, **GHOSH_E), wavelength_e_um=lam_e,
                         name="calcite_fit", temperature_c=20.0)
    item = fit.material
    assert isinstance(item, UniaxialMaterial) and item.optical_sign == "negative"
    dense = np.linspace(0.25, 2.0, 500)
    assert np.max(np.abs(item.n_o(dense) - f.sellmeier(dense, **GHOSH_O))) <= 1e-6
    assert np.max(np.abs(item.n_e(dense) - f.sellmeier(dense, **GHOSH_E))) <= 1e-6
    assert set(fit.residuals) == {"ordinary", "extraordinary"}
    assert fit.residuals["extraordinary"].shape == lam_e.shape
    # The fitted material is savable and loads back unchanged.
    again = load_material(save_material(item, tmp_path / "calcite_fit.toml"))
    assert again == item


def test_power_series_recovers_generator():
    lam = np.linspace(0.37, 2.3, 60)
    fit = fit_dispersion(lam, f.power_series_n2(lam, **SCHOTT_BK7), form="power_series_n2",
                         terms=6)
    assert fit.coefficients["index"]["powers"] == SCHOTT_BK7["powers"]
    assert np.max(np.abs(fit.residuals["index"])) <= 1e-9
    np.testing.assert_allclose(fit.coefficients["index"]["coefficients"][:3],
                               SCHOTT_BK7["coefficients"][:3], rtol=1e-5)


def test_cauchy_is_exact_for_cauchy_data():
    # Two-term Cauchy for a crown glass, A = 1.5046, B = 0.00420 µm² (textbook values quoted
    # e.g. in Hecht, Optics; from memory).
    lam = np.linspace(0.4, 0.7, 20)
    fit = fit_dispersion(lam, 1.5046 + 0.00420 / lam**2, form="cauchy", terms=2)
    np.testing.assert_allclose(fit.coefficients["index"]["coefficients"], [1.5046, 0.00420],
                               rtol=1e-10)


def test_reciprocal_form_recovers_generator():
    # Reciprocal form n² = A + B/(λ² − C) − Dλ² without D: generate from a one-pole model with
    # KDP-like magnitudes (Zernike 1964 form, from memory) and fit the same form.
    truth = dict(A=2.259276, B=[0.01008956], C=[0.012942625])
    lam = np.linspace(0.25, 1.5, 50)
    fit = fit_dispersion(lam, f.sellmeier_reciprocal(lam, **truth), form="sellmeier_reciprocal",
                         terms=1)
    coeffs = fit.coefficients["index"]
    assert coeffs["A"] == pytest.approx(truth["A"], rel=1e-7)
    assert coeffs["C"][0] == pytest.approx(truth["C"][0], rel=1e-6)


@pytest.mark.parametrize("kwargs, pattern", [
    (dict(form="sellmeir"), r"form = 'sellmeir' cannot be fitted; allowed: sellmeier"),
    (dict(terms=0), r"terms = 0 must be a positive integer"),
    (dict(terms=3, wavelength_um=np.linspace(0.4, 1.0, 6)),
     r"6 distinct wavelengths cannot determine 6 coefficients"),
    (dict(n=np.full(5, 1.5)), r"20 wavelengths but 5 indices"),
    (dict(wavelength_um=np.r_[-0.4, np.linspace(0.4, 1.0, 19)]),
     r"wavelength_um = -0.4 must be positive and finite"),
    (dict(form="power_series_n2", terms=2, powers=[0, 2.5]), r"powers = \[0, 2.5\] must be 2"),
])
def test_bad_fit_input(kwargs, pattern):
    lam = kwargs.pop("wavelength_um", np.linspace(0.4, 1.0, 20))
    n = kwargs.pop("n", np.full(lam.size, 1.5) + 0.01 / lam**2)
    with pytest.raises(ValueError, match=pattern) as info:
        fit_dispersion(lam, n, **kwargs)
    assert "\n" not in str(info.value)
