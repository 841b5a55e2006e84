"""Published dispersion formulas: refractive index n(λ) and its analytic derivative dn/dλ.

Every formula is a pure, vectorised function of the vacuum wavelength in micrometres.  The
coefficients are keyword arguments; list-valued coefficients (one entry per Sellmeier term) are
summed over a trailing axis, so ``wavelength_um`` may have any shape and the result has the same
shape.  The derivatives are in µm⁻¹; the group index follows as ``n - λ dn/dλ``.

A model evaluated outside its physical range (n² ≤ 0 or a pole hit exactly) raises a
``ValueError`` naming the first offending wavelength rather than returning NaN.

The formulas are those of the contributor guide (``DEVELOPERS.md``):

=======================  ====================================================================
``sellmeier``            n² = A + Σᵢ Bᵢ λ²/(λ² − Cᵢ) − D λ²
``sellmeier_reciprocal`` n² = A + Σᵢ Bᵢ/(λ² − Cᵢ) − D λ²
``sellmeier_mixed``      n² = A + Σᵢ Bᵢ/(λ² − Cᵢ) + Σⱼ Fⱼ λ²/(λ² − Gⱼ) − D λ²
``cauchy``               n = Σₖ aₖ λ^(−2k), k = 0, 1, 2, …
``power_series_n2``      n² = Σₖ aₖ λ^pₖ
``gas_two_term``         n − 1 = Σᵢ Bᵢ/(Cᵢ − λ⁻²)
``constant``             n = value
=======================  ====================================================================

References
----------
W. Sellmeier, Ann. Phys. Chem. 219, 272-282 (1871) (the pole form);
A.-L. Cauchy, Mémoire sur la dispersion de la lumière (1836);
P. E. Ciddor, "Refractive index of air: new equations for the visible and near infrared",
Appl. Opt. 35, 1566-1573 (1996) (the two-term gas form used for standard air).
"""
from __future__ import annotations

import numpy as np

__all__ = [
    "cauchy",
    "cauchy_dn_dwl",
    "constant",
    "constant_dn_dwl",
    "gas_two_term",
    "gas_two_term_dn_dwl",
    "power_series_n2",
    "power_series_n2_dn_dwl",
    "sellmeier",
    "sellmeier_dn_dwl",
    "sellmeier_mixed",
    "sellmeier_mixed_dn_dwl",
    "sellmeier_reciprocal",
    "sellmeier_reciprocal_dn_dwl",
]


def _terms(values) -> np.ndarray:
    """Coefficient list as a 1-D float array (summed over a trailing axis)."""
    return np.atleast_1d(np.asarray(values, dtype=float))


def _n_from_n2(name: str, wavelength_um, n2) -> np.ndarray:
    """Square root of n², refusing values where the model is unphysical (n² ≤ 0 or infinite)."""
    n2 = np.asarray(n2, dtype=float)
    bad = ~np.isfinite(n2) | (n2 <= 0.0)
    if np.any(bad):
        lam = np.broadcast_to(np.asarray(wavelength_um, dtype=float), n2.shape)[bad]
        raise ValueError(
            f"{name}: n² = {n2[bad].flat[0]:.6g} at wavelength_um = {lam.flat[0]:.6g}; "
            f"the model has no real positive index there (allowed: wavelengths where n² > 0 "
            f"and away from a pole)"
        )
    return np.sqrt(n2)


def _check_n(name: str, wavelength_um, n) -> np.ndarray:
    """Refuse a directly modelled index that is not finite and positive."""
    n = np.asarray(n, dtype=float)
    bad = ~np.isfinite(n) | (n <= 0.0)
    if np.any(bad):
        lam = np.broadcast_to(np.asarray(wavelength_um, dtype=float), n.shape)[bad]
        raise ValueError(
            f"{name}: n = {n[bad].flat[0]:.6g} at wavelength_um = {lam.flat[0]:.6g}; "
            f"the model has no positive finite index there"
        )
    return n


# --- Sellmeier family: n² and d(n²)/dλ, shared by the three pole forms -------------------

def _pole_sum(lam, B, C, times_lambda2: bool):
    """Σ Bᵢ g(λ)/(λ² − Cᵢ) and its λ-derivative, g = λ² or 1."""
    lam = np.asarray(lam, dtype=float)
    B, C = _terms(B), _terms(C)
    lam2 = lam[..., None] ** 2
    denom = lam2 - C
    if times_lambda2:
        value = np.sum(B * lam2 / denom, axis=-1)
        # d/dλ [λ²/(λ² − C)] = −2λC/(λ² − C)²
        deriv = np.sum(-2.0 * lam[..., None] * B * C / denom**2, axis=-1)
    else:
        value = np.sum(B / denom, axis=-1)
        deriv = np.sum(-2.0 * lam[..., None] * B / denom**2, axis=-1)
    return value, deriv


def _sellmeier_family(lam, A, D, reciprocal=((), ()), direct=((), ())):
    lam = np.asarray(lam, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        v1, d1 = _pole_sum(lam, *reciprocal, times_lambda2=False)
        v2, d2 = _pole_sum(lam, *direct, times_lambda2=True)
    n2 = A + v1 + v2 - D * lam**2
    dn2 = d1 + d2 - 2.0 * D * lam
    return n2, dn2


def sellmeier(wavelength_um, B, C, A=1.0, D=0.0):
    """Sellmeier form n² = A + Σᵢ Bᵢ λ²/(λ² − Cᵢ) − D λ².

    Parameters
    ----------
    wavelength_um : array_like
        Vacuum wavelength λ in µm, any shape.
    B : sequence of float
        Dimensionless oscillator strengths Bᵢ.
    C : sequence of float
        Pole positions Cᵢ in µm² (the square of the resonance wavelength).
    A : float, optional
        Constant term (1 in Sellmeier's original form).
    D : float, optional
        Infrared correction in µm⁻².

    Returns
    -------
    numpy.ndarray
        Refractive index, same shape as ``wavelength_um``.
    """
    n2, _ = _sellmeier_family(wavelength_um, A, D, direct=(B, C))
    return _n_from_n2("sellmeier", wavelength_um, n2)


def sellmeier_dn_dwl(wavelength_um, B, C, A=1.0, D=0.0):
    """dn/dλ of :func:`sellmeier` in µm⁻¹ (same arguments)."""
    n2, dn2 = _sellmeier_family(wavelength_um, A, D, direct=(B, C))
    return dn2 / (2.0 * _n_from_n2("sellmeier", wavelength_um, n2))


def sellmeier_reciprocal(wavelength_um, A, B, C, D=0.0):
    """Reciprocal Sellmeier form n² = A + Σᵢ Bᵢ/(λ² − Cᵢ) − D λ².

    Parameters
    ----------
    wavelength_um : array_like
        Vacuum wavelength λ in µm, any shape.
    A : float
        Constant term.
    B : sequence of float
        Numerators Bᵢ in µm².
    C : sequence of float
        Pole positions Cᵢ in µm².
    D : float, optional
        Infrared correction in µm⁻².

    Returns
    -------
    numpy.ndarray
        Refractive index, same shape as ``wavelength_um``.
    """
    n2, _ = _sellmeier_family(wavelength_um, A, D, reciprocal=(B, C))
    return _n_from_n2("sellmeier_reciprocal", wavelength_um, n2)


def sellmeier_reciprocal_dn_dwl(wavelength_um, A, B, C, D=0.0):
    """dn/dλ of :func:`sellmeier_reciprocal` in µm⁻¹ (same arguments)."""
    n2, dn2 = _sellmeier_family(wavelength_um, A, D, reciprocal=(B, C))
    return dn2 / (2.0 * _n_from_n2("sellmeier_reciprocal", wavelength_um, n2))


def sellmeier_mixed(wavelength_um, A, B, C, F, G, D=0.0):
    """Mixed Sellmeier form n² = A + Σᵢ Bᵢ/(λ² − Cᵢ) + Σⱼ Fⱼ λ²/(λ² − Gⱼ) − D λ².

    Parameters
    ----------
    wavelength_um : array_like
        Vacuum wavelength λ in µm, any shape.
    A : float
        Constant term.
    B, C : sequence of float
        Reciprocal terms: numerators in µm² and poles in µm².
    F, G : sequence of float
        Direct terms: dimensionless strengths and poles in µm².
    D : float, optional
        Infrared correction in µm⁻².

    Returns
    -------
    numpy.ndarray
        Refractive index, same shape as ``wavelength_um``.
    """
    n2, _ = _sellmeier_family(wavelength_um, A, D, reciprocal=(B, C), direct=(F, G))
    return _n_from_n2("sellmeier_mixed", wavelength_um, n2)


def sellmeier_mixed_dn_dwl(wavelength_um, A, B, C, F, G, D=0.0):
    """dn/dλ of :func:`sellmeier_mixed` in µm⁻¹ (same arguments)."""
    n2, dn2 = _sellmeier_family(wavelength_um, A, D, reciprocal=(B, C), direct=(F, G))
    return dn2 / (2.0 * _n_from_n2("sellmeier_mixed", wavelength_um, n2))


# --- Power-law forms ----------------------------------------------------------------------

def cauchy(wavelength_um, coefficients):
    """Cauchy form n = Σₖ aₖ λ^(−2k), k = 0, 1, 2, …

    Parameters
    ----------
    wavelength_um : array_like
        Vacuum wavelength λ in µm, any shape.
    coefficients : sequence of float
        a₀ (dimensionless), a₁ (µm²), a₂ (µm⁴), …

    Returns
    -------
    numpy.ndarray
        Refractive index, same shape as ``wavelength_um``.
    """
    lam = np.asarray(wavelength_um, dtype=float)
    a = _terms(coefficients)
    k = np.arange(a.size)
    n = np.sum(a * lam[..., None] ** (-2.0 * k), axis=-1)
    return _check_n("cauchy", lam, n)


def cauchy_dn_dwl(wavelength_um, coefficients):
    """dn/dλ of :func:`cauchy` in µm⁻¹: Σₖ −2k aₖ λ^(−2k−1)."""
    lam = np.asarray(wavelength_um, dtype=float)
    a = _terms(coefficients)
    k = np.arange(a.size)
    return np.sum(-2.0 * k * a * lam[..., None] ** (-2.0 * k - 1.0), axis=-1)


def power_series_n2(wavelength_um, coefficients, powers):
    """Power series in λ for n²: n² = Σₖ aₖ λ^pₖ.

    Parameters
    ----------
    wavelength_um : array_like
        Vacuum wavelength λ in µm, any shape.
    coefficients : sequence of float
        aₖ in µm^(−pₖ).
    powers : sequence of int
        Integer exponents pₖ, same length as ``coefficients``.

    Returns
    -------
    numpy.ndarray
        Refractive index, same shape as ``wavelength_um``.
    """
    lam = np.asarray(wavelength_um, dtype=float)
    a, p = _terms(coefficients), _terms(powers)
    n2 = np.sum(a * lam[..., None] ** p, axis=-1)
    return _n_from_n2("power_series_n2", lam, n2)


def power_series_n2_dn_dwl(wavelength_um, coefficients, powers):
    """dn/dλ of :func:`power_series_n2` in µm⁻¹ (same arguments)."""
    lam = np.asarray(wavelength_um, dtype=float)
    a, p = _terms(coefficients), _terms(powers)
    n2 = np.sum(a * lam[..., None] ** p, axis=-1)
    dn2 = np.sum(a * p * lam[..., None] ** (p - 1.0), axis=-1)
    return dn2 / (2.0 * _n_from_n2("power_series_n2", lam, n2))


def gas_two_term(wavelength_um, B, C):
    """Gas form n − 1 = Σᵢ Bᵢ/(Cᵢ − λ⁻²) (Ciddor 1996, Eq. 1, for standard air).

    Parameters
    ----------
    wavelength_um : array_like
        Vacuum wavelength λ in µm, any shape.
    B : sequence of float
        Numerators Bᵢ in µm⁻².
    C : sequence of float
        Resonance terms Cᵢ in µm⁻².

    Returns
    -------
    numpy.ndarray
        Refractive index, same shape as ``wavelength_um``.
    """
    lam = np.asarray(wavelength_um, dtype=float)
    B, C = _terms(B), _terms(C)
    with np.errstate(divide="ignore", invalid="ignore"):
        n = 1.0 + np.sum(B / (C - lam[..., None] ** -2.0), axis=-1)
    return _check_n("gas_two_term", lam, n)


def gas_two_term_dn_dwl(wavelength_um, B, C):
    """dn/dλ of :func:`gas_two_term` in µm⁻¹ (same arguments)."""
    lam = np.asarray(wavelength_um, dtype=float)
    B, C = _terms(B), _terms(C)
    s = lam[..., None] ** -2.0
    # d/dλ [B/(C − s)] = B/(C − s)² · ds/dλ with ds/dλ = −2λ⁻³
    return np.sum(B / (C - s) ** 2 * (-2.0 * lam[..., None] ** -3.0), axis=-1)


def constant(wavelength_um, value):
    """Wavelength-independent index n = value (vacuum, typical-value media).

    Parameters
    ----------
    wavelength_um : array_like
        Vacuum wavelength in µm; only its shape is used.
    value : float
        The index.

    Returns
    -------
    numpy.ndarray
        ``value`` broadcast to the shape of ``wavelength_um``.
    """
    lam = np.asarray(wavelength_um, dtype=float)
    return _check_n("constant", lam, np.full(lam.shape, float(value)))


def constant_dn_dwl(wavelength_um, value):
    """dn/dλ of :func:`constant`: zeros of the shape of ``wavelength_um``."""
    return np.zeros(np.shape(wavelength_um))
