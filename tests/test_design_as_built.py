"""As-built fitting: errors injected into a synthetic prism are recovered, with honest errors.

External check: the scatter of least-squares estimates over noise realisations equals the
covariance (JᵀJ)⁻¹σ² (Press et al., *Numerical Recipes*, 3rd ed., 2007, §15.4, the standard
result for a linear(ised) least-squares fit with Gaussian errors).
"""
import numpy as np
import pytest

import prismdesign as pd
from prismdesign.design import (UndeterminedParameterWarning, apply_errors, fit_as_built,
                                measurements, read_measurements)
from prismdesign.design.as_built import _main_beams, _model

LAM = np.array([0.45, 0.532, 0.6328, 0.78, 0.98])
TRUTH = {"face1_angle_deg": 0.08, "face2_angle_deg": -0.05}
SIGMA = 2e-4


@pytest.fixture(scope="module")
def synthetic():
    prism = pd.prisms.wollaston("calcite", 15.0)
    built, _ = apply_errors(prism, TRUTH)
    blank = measurements(LAM, first_deviation_deg=np.zeros(5), second_deviation_deg=np.zeros(5))
    exact = _model(built, blank, (), np.zeros(0), _main_beams(prism, blank))
    return prism, exact


def _noisy(exact, rng):
    noise = rng.normal(0.0, SIGMA, exact.size)
    return measurements(LAM, first_deviation_deg=exact[:5] + noise[:5],
                        second_deviation_deg=exact[5:] + noise[5:],
                        sigma_first_deviation_deg=SIGMA, sigma_second_deviation_deg=SIGMA)


def test_injected_errors_recovered_within_uncertainty(synthetic):
    prism, exact = synthetic
    fit = fit_as_built(prism, _noisy(exact, np.random.default_rng(0)), list(TRUTH))
    assert fit.success
    for name, value, sigma in zip(fit.names, fit.values, fit.uncertainties):
        assert abs(value - TRUTH[name]) < 3.5 * sigma, name
    assert np.all(np.abs(fit.normalised_residuals) < 4)
    assert fit.covariance.shape == (2, 2) and abs(fit.correlation[0, 1]) < 1
    assert "face1_angle_deg" in fit.report()


def test_uncertainties_match_scatter_of_repeated_fits(synthetic):
    prism, exact = synthetic
    rng = np.random.default_rng(42)
    fits = [fit_as_built(prism, _noisy(exact, rng), list(TRUTH)) for _ in range(40)]
    values = np.array([f.values for f in fits])
    reported = np.sqrt(np.mean([f.uncertainties ** 2 for f in fits], axis=0))
    scatter = values.std(axis=0, ddof=1)
    # 40 fits: the sample standard deviation is good to ~11 % (1/√(2·39)); allow 3 of those.
    np.testing.assert_allclose(scatter, reported, rtol=0.35)
    assert np.all(np.abs(values.mean(axis=0) - list(TRUTH.values())) < 4 * reported / np.sqrt(40))


def test_noise_free_fit_is_exact(synthetic):
    prism, exact = synthetic
    data = measurements(LAM, first_deviation_deg=exact[:5], second_deviation_deg=exact[5:])
    fit = fit_as_built(prism, data, list(TRUTH))
    np.testing.assert_allclose(fit.values, list(TRUTH.values()), atol=1e-9)


def test_undetermined_parameter_is_named(synthetic):
    """The axis polar error of a Wollaston's first wedge moves no exit angle to first order."""
    prism, exact = synthetic
    with pytest.warns(UndeterminedParameterWarning, match="piece0_axis_polar_deg"):
        fit = fit_as_built(prism, _noisy(exact, np.random.default_rng(1)),
                           list(TRUTH) + ["piece0_axis_polar_deg"])
    assert fit.undetermined == ("piece0_axis_polar_deg",)
    assert np.isnan(fit.uncertainties[2]) and np.all(np.isfinite(fit.uncertainties[:2]))


def test_csv_round_trip_and_bad_columns(synthetic, tmp_path):
    prism, exact = synthetic
    path = tmp_path / "bench.csv"
    rows = ["wavelength_um,first_deviation_deg,second_deviation_deg,sigma_first_deviation_deg,"
            "sigma_second_deviation_deg"]
    rows += [f"{float(l)!r},{float(a)!r},{float(b)!r},{SIGMA},{SIGMA}" for l, a, b in zip(LAM, exact[:5], exact[5:])]
    path.write_text("\n".join(rows) + "\n", encoding="utf-8")
    data = read_measurements(path)
    assert data.rows == 10
    fit = fit_as_built(prism, data, list(TRUTH))
    np.testing.assert_allclose(fit.values, list(TRUTH.values()), atol=1e-9)
    bad = tmp_path / "bad.csv"
    bad.write_text("wavelength_um,split_mrad\n0.5,1\n", encoding="utf-8")
    with pytest.raises(ValueError, match="split_mrad"):
        read_measurements(bad)
    with pytest.raises(ValueError, match="unknown measurement"):
        measurements(LAM, split_rad=LAM)
