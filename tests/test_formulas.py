"""Dispersion formulas: closed forms, analytic derivatives, broadcasting, validation."""
import math

import numpy as np
import pytest
from hypothesis import example, given, settings
from hypothesis import strategies as st

from prismdesign.materials import formulas as f
from prismdesign.materials.registry import FORMULAS, check_coefficients

# Malitson, "Interspecimen comparison of the refractive index of fused silica",
# J. Opt. Soc. Am. 55, 1205-1209 (1965), Eq. (2): three-term Sellmeier with A = 1.
MALITSON = dict(B=[0.6961663, 0.4079426, 0.8974794],
                C=[0.0684043**2, 0.1162414**2, 9.896161**2])

# One realistic coefficient set per formula, used for the derivative and broadcasting checks.
# The values are of the size found in the bundled data; correctness of the numbers themselves
# does not matter for these identities.
CASES = {
    "sellmeier": (dict(**MALITSON), (0.21, 3.7)),
    "sellmeier_D": (dict(A=1.7, B=[0.96, 1.8], C=[0.0194, 120.0], D=0.01), (0.25, 2.0)),
    "sellmeier_pole": (dict(B=[0.6961663], pole_um=[0.0684043]), (0.2, 2.0)),
    "sellmeier_reciprocal": (dict(A=2.7359, B=[0.01878], C=[0.01822], D=0.01354), (0.25, 3.0)),
    "sellmeier_mixed": (dict(A=2.2, B=[0.01], C=[0.0125], F=[1.1], G=[110.0], D=0.0),
                        (0.25, 1.5)),
    "cauchy": (dict(coefficients=[1.5046, 0.00420, 1e-5]), (0.35, 2.0)),
    "power_series_n2": (dict(coefficients=[2.2718929, -1.0108077e-2, 1.0592509e-2,
                                           2.0816965e-4, -7.6472538e-6, 4.9240991e-7],
                             powers=[0, 2, -2, -4, -6, -8]), (0.36, 2.3)),
    "gas_two_term": (dict(B=[0.05792105, 0.00167917], C=[238.0185, 57.362]), (0.23, 1.7)),
    "constant": (dict(value=1.56), (0.3, 2.0)),
}


def _formula(case):
    return {"sellmeier_D": "sellmeier", "sellmeier_pole": "sellmeier"}.get(case, case)


def _n_and_derivative(case, lam):
    coeffs, _ = CASES[case]
    spec = FORMULAS[_formula(case)]
    kwargs = spec.call_kwargs(check_coefficients({"formula": spec.name, **coeffs}, "test")[1])
    return spec.n(lam, **kwargs), spec.dn_dwl(lam, **kwargs)


def test_every_registered_formula_has_a_case():
    assert {_formula(c) for c in CASES} == set(FORMULAS)


# --- closed forms, worked by hand ----------------------------------------------------------

def test_sellmeier_closed_form():
    # n² = 1 + 1·1/(1 − 0.5) = 3; with D = 0.5: 3 − 0.5 = 2.5
    assert f.sellmeier(1.0, B=[1.0], C=[0.5]) == pytest.approx(math.sqrt(3.0), abs=1e-15)
    assert f.sellmeier(1.0, B=[1.0], C=[0.5], D=0.5) == pytest.approx(math.sqrt(2.5), abs=1e-15)
    # A = 2, two terms at λ = 2: 2 + 1·4/(4 − 2) + 3·4/(4 − 1) = 8
    assert f.sellmeier(2.0, A=2.0, B=[1.0, 3.0], C=[2.0, 1.0]) == pytest.approx(math.sqrt(8.0))


def test_sellmeier_pole_um_is_squared():
    spec = FORMULAS["sellmeier"]
    kwargs = spec.call_kwargs(check_coefficients(
        {"formula": "sellmeier", "B": [1.0], "pole_um": [0.5]}, "test")[1])
    assert kwargs["C"] == (0.25,)
    # n² = 1 + 1/(1 − 0.25) = 7/3
    assert spec.n(1.0, **kwargs) == pytest.approx(math.sqrt(7.0 / 3.0), abs=1e-15)


def test_other_forms_closed_form():
    # reciprocal: 2 + 3/(4 − 1) − 0.25·4 = 2
    assert f.sellmeier_reciprocal(2.0, A=2.0, B=[3.0], C=[1.0], D=0.25) == \
        pytest.approx(math.sqrt(2.0), abs=1e-15)
    # mixed: 1 + 3/(4 − 1) + 1·4/(4 − 2) = 4
    assert f.sellmeier_mixed(2.0, A=1.0, B=[3.0], C=[1.0], F=[1.0], G=[2.0]) == \
        pytest.approx(2.0, abs=1e-15)
    # Cauchy: 1.5 + 0.01·0.5⁻² + 0.001·0.5⁻⁴ = 1.556
    assert f.cauchy(0.5, coefficients=[1.5, 0.01, 0.001]) == pytest.approx(1.556, abs=1e-15)
    # power series: 2 + 0.25·2² − 1·2⁻² = 2.75
    assert f.power_series_n2(2.0, coefficients=[2.0, 0.25, -1.0], powers=[0, 2, -2]) == \
        pytest.approx(math.sqrt(2.75), abs=1e-15)
    # gas: 1 + 0.01/(2 − 1) = 1.01
    assert f.gas_two_term(1.0, B=[0.01], C=[2.0]) == pytest.approx(1.01, abs=1e-15)
    assert f.constant(0.7, value=1.33) == 1.33


def test_malitson_fused_silica_d_line():
    # Fused silica n_d = 1.4585 at the helium d line 0.5875618 µm (glass catalogues for
    # Corning 7980 / Heraeus Suprasil quote 1.4585; from memory), Malitson 1965 Eq. (2).
    assert f.sellmeier(0.5875618, **MALITSON) == pytest.approx(1.4585, abs=1e-4)


# --- analytic derivative against finite differences ----------------------------------------

@pytest.mark.parametrize("case", sorted(CASES))
@settings(max_examples=40, deadline=None)
@given(u=st.floats(0.0, 1.0))
@example(u=0.0)
@example(u=1.0)
def test_derivative_matches_finite_difference(case, u):
    lo, hi = CASES[case][1]
    lam = lo * (hi / lo) ** u
    h = 1e-5 * lam
    n_plus, _ = _n_and_derivative(case, lam + h)
    n_minus, _ = _n_and_derivative(case, lam - h)
    _, analytic = _n_and_derivative(case, lam)
    central = (n_plus - n_minus) / (2 * h)
    # Central difference error ~ h² n''' plus rounding ~ 1e-16/h.
    assert analytic == pytest.approx(central, rel=1e-6, abs=1e-8)


# --- broadcasting --------------------------------------------------------------------------

@pytest.mark.parametrize("case", sorted(CASES))
def test_shape_follows_wavelength_and_loop_equals_batch(case):
    lo, hi = CASES[case][1]
    lam = np.geomspace(lo, hi, 12).reshape(3, 4)
    n, dn = _n_and_derivative(case, lam)
    assert n.shape == dn.shape == (3, 4)
    loop = np.array([[_n_and_derivative(case, x)[0] for x in row] for row in lam])
    np.testing.assert_array_equal(loop, n)
    n0, dn0 = _n_and_derivative(case, lam[0, 0])
    assert np.ndim(n0) == 0 and np.ndim(dn0) == 0


# --- outside the physical range ------------------------------------------------------------

def test_negative_n_squared_raises_naming_wavelength():
    # n² = 1 + 0.01/(0.01 − 0.015) = −1 at λ = 0.1 µm
    with pytest.raises(ValueError, match=r"wavelength_um = 0\.1\b") as info:
        f.sellmeier(np.array([0.5, 0.1]), B=[1.0], C=[0.015])
    assert "\n" not in str(info.value)


def test_exact_pole_raises():
    with pytest.raises(ValueError, match="wavelength_um = 0.5"):
        f.sellmeier_reciprocal(0.5, A=2.0, B=[0.1], C=[0.25])


def test_negative_cauchy_index_raises():
    with pytest.raises(ValueError, match="wavelength_um = 0.1"):
        f.cauchy(0.1, coefficients=[1.0, -0.1])


# --- registry validation (one-line messages naming key, value and what is allowed) ---------

@pytest.mark.parametrize("table, pattern", [
    ({"formula": "sellmeyer", "B": [1.0], "C": [0.1]},
     r"key 'formula' = 'sellmeyer' is unknown; allowed: sellmeier, "),
    ({"B": [1.0], "C": [0.1]}, r"missing key 'formula'"),
    ({"formula": "sellmeier", "B": [1.0], "C": [0.1], "E": 2.0},
     r"unknown key 'E' = 2.0 for formula 'sellmeier'; allowed: A, D, B, C, pole_um"),
    ({"formula": "sellmeier", "B": [1.0, 2.0], "C": [0.1]},
     r"lists 'B' and 'C' must have equal length \(B has 2, C has 1\)"),
    ({"formula": "sellmeier", "B": [1.0], "C": [0.1], "pole_um": [0.3]},
     r"exactly one of 'C' or 'pole_um', got 2"),
    ({"formula": "sellmeier", "C": [0.1]}, r"missing key 'B' for formula 'sellmeier'"),
    ({"formula": "sellmeier_reciprocal", "B": [1.0], "C": [0.1]}, r"missing key 'A'"),
    ({"formula": "sellmeier", "B": "1.0", "C": [0.1]},
     r"key 'B' = '1.0' must be a non-empty list of finite numbers"),
    ({"formula": "sellmeier", "A": "1", "B": [1.0], "C": [0.1]},
     r"key 'A' = '1' must be a finite number"),
    ({"formula": "sellmeier", "A": True, "B": [1.0], "C": [0.1]}, r"key 'A' = True must be"),
    ({"formula": "power_series_n2", "coefficients": [1.0], "powers": [2.5]},
     r"key 'powers' = \[2.5\] must be a non-empty list of integers"),
    ({"formula": "constant", "value": float("nan")}, r"key 'value' = nan must be a finite"),
    ({"formula": "cauchy", "coefficients": []}, r"must be a non-empty list"),
])
def test_registry_rejects_bad_tables(table, pattern):
    with pytest.raises(ValueError, match=pattern) as info:
        check_coefficients(table, "here.toml [ordinary]")
    message = str(info.value)
    assert message.startswith("here.toml [ordinary]: ") and "\n" not in message


def test_registry_normalises_lists_to_tuples():
    formula, coeffs = check_coefficients(
        {"formula": "power_series_n2", "coefficients": [1, 2.0], "powers": [0, 2]}, "x")
    assert formula == "power_series_n2"
    assert coeffs == {"coefficients": (1.0, 2.0), "powers": (0, 2)}
    assert isinstance(coeffs["coefficients"][0], float) and isinstance(coeffs["powers"][1], int)
