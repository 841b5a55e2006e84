"""Fit a published dispersion form to measured refractive indices.

The Sellmeier forms are fitted by variable projection: for fixed pole positions the model is
linear in the strengths, so only the poles are searched (from several starting splits between
ultraviolet and infrared poles), then all coefficients are refined together by a
Levenberg-Marquardt least-squares fit of n itself (Golub & Pereyra, "The differentiation of
pseudo-inverses and nonlinear least squares problems whose variables separate", SIAM J. Numer.
Anal. 10, 413-432, 1973).  The Cauchy form is linear and solved directly.
"""
from __future__ import annotations

import datetime
from dataclasses import dataclass

import numpy as np
from scipy.optimize import least_squares

from .material import DispersionModel, IsotropicMaterial, Reference, UniaxialMaterial

__all__ = ["FitResult", "fit_dispersion"]

FIT_FORMS = ("sellmeier", "sellmeier_reciprocal", "cauchy", "power_series_n2")


@dataclass(frozen=True)
class FitResult:
    """Outcome of :func:`fit_dispersion`.

    Attributes
    ----------
    material : IsotropicMaterial or UniaxialMaterial
        The fitted material, usable directly and savable with ``save_material``.
    coefficients : dict
        Fitted coefficients per part: ``{"index": {...}}`` or
        ``{"ordinary": {...}, "extraordinary": {...}}``, keys as in the data-file schema.
    residuals : dict
        Per-point residuals n_measured − n_model per part, arrays shaped like the input.
    rms_residual : float
        Root-mean-square residual over all points.
    condition_number : dict
        Per part, the condition number of the Jacobian of the residuals with respect to the
        free coefficients at the solution, columns scaled to unit norm (large values mean
        strongly correlated, poorly determined coefficients).
    """

    material: object
    coefficients: dict
    residuals: dict
    rms_residual: float
    condition_number: dict


def _scaled_condition(jac) -> float:
    norms = np.linalg.norm(jac, axis=0)
    norms[norms == 0] = 1.0
    return float(np.linalg.cond(jac / norms))


def _as_data(value, name):
    """Measured values as a flat float array; text or ragged input fails in one line."""
    try:
        if isinstance(value, (str, bytes)):
            raise TypeError
        return np.asarray(value, dtype=float).ravel()
    except (TypeError, ValueError):
        raise ValueError(f"{name} = {value!r:.80} must be an array of numbers") from None


def _check_data(wavelength_um, n, label):
    lam = _as_data(wavelength_um, f"{label}: wavelength_um")
    nn = _as_data(n, f"{label}: {label}")
    if lam.shape != nn.shape:
        raise ValueError(f"{label}: {lam.size} wavelengths but {nn.size} indices; allowed: "
                         f"equal lengths")
    bad_lam = lam[~(np.isfinite(lam) & (lam > 0))]
    if bad_lam.size:
        raise ValueError(f"{label}: wavelength_um = {float(bad_lam[0])!r} must be positive and "
                         f"finite")
    bad_n = nn[~(np.isfinite(nn) & (nn > 0))]
    if bad_n.size:
        raise ValueError(f"{label}: n = {float(bad_n[0])!r} must be positive and finite")
    return lam, nn


# --- Sellmeier forms (direct and reciprocal) ----------------------------------------------

def _basis(x, C, reciprocal):
    denom = x[:, None] - C
    return (1.0 / denom if reciprocal else x[:, None] / denom), denom


def _linear_part(x, n, C, constant, reciprocal):
    """Best strengths (and A) for fixed poles, weighted so n² errors approximate n errors."""
    phi, _ = _basis(x, C, reciprocal)
    y = n**2 - (0.0 if constant is None else constant)
    design = phi if constant is not None else np.column_stack([np.ones_like(x), phi])
    w = 1.0 / (2.0 * n)
    coef = np.linalg.lstsq(design * w[:, None], y * w, rcond=None)[0]
    return coef, (design @ coef - y) * w


def _pole_starts(x, terms):
    """Starting pole sets: every split of the terms into ultraviolet and infrared poles."""
    lo, hi = x.min(), x.max()
    for n_uv in range(terms, 0, -1):
        uv = np.geomspace(0.05, 0.5, n_uv) * lo if n_uv > 1 else np.array([0.2 * lo])
        ir = np.geomspace(5.0, 50.0, terms - n_uv) * hi if terms - n_uv > 1 \
            else np.array([10.0 * hi])[: terms - n_uv]
        yield np.concatenate([uv, ir])


def _fit_sellmeier(lam, n, terms, constant, reciprocal):
    x = lam**2
    lo, hi = x.min(), x.max()
    best = None
    for start in _pole_starts(x, terms):
        uv = start < lo
        lower = np.where(uv, 1e-8 * lo, 1.02 * hi)
        upper = np.where(uv, 0.98 * lo, 1e8 * hi)
        run = least_squares(lambda C: _linear_part(x, n, C, constant, reciprocal)[1], start,
                            bounds=(lower, upper), x_scale=start, xtol=1e-14, ftol=1e-14,
                            gtol=1e-14)
        if best is None or run.cost < best.cost:
            best = run
    C = best.x
    coef, _ = _linear_part(x, n, C, constant, reciprocal)
    fit_a = constant is None
    p0 = np.concatenate([coef, C])

    def unpack(p):
        A = p[0] if fit_a else constant
        B = p[1:terms + 1] if fit_a else p[:terms]
        return A, B, p[-terms:]

    def model(p):
        A, B, C_ = unpack(p)
        phi, _ = _basis(x, C_, reciprocal)
        return np.sqrt(np.clip(A + phi @ B, 1e-12, None))

    def residual(p):
        return model(p) - n

    def jacobian(p):
        _, B, C_ = unpack(p)
        phi, denom = _basis(x, C_, reciprocal)
        half = 1.0 / (2.0 * model(p))[:, None]
        cols = [phi * half, phi / denom * B * half]   # ∂n/∂Bᵢ and ∂n/∂Cᵢ
        if fit_a:
            cols.insert(0, half)
        return np.hstack(cols)

    run = least_squares(residual, p0, jac=jacobian, method="lm", x_scale="jac", xtol=1e-15,
                        ftol=1e-15, gtol=1e-15, max_nfev=20000)
    A, B, C = unpack(run.x)
    coefficients = {"A": float(A), "B": list(map(float, B)), "C": list(map(float, C))}
    return coefficients, -residual(run.x), jacobian(run.x)


# --- Forms linear in their coefficients (in n or in n²) -----------------------------------

def _fit_linear(lam, n, columns, in_n2):
    if not in_n2:
        coef = np.linalg.lstsq(columns, n, rcond=None)[0]
        return coef, n - columns @ coef, columns
    w = 1.0 / (2.0 * n)
    coef = np.linalg.lstsq(columns * w[:, None], n**2 * w, rcond=None)[0]

    def model(a):
        return np.sqrt(np.clip(columns @ a, 1e-12, None))

    run = least_squares(lambda a: model(a) - n, coef, method="lm",
                        jac=lambda a: columns / (2.0 * model(a))[:, None],
                        xtol=1e-15, ftol=1e-15, gtol=1e-15)
    return run.x, n - model(run.x), columns / (2.0 * model(run.x))[:, None]


def _fit_part(lam, n, form, terms, constant, powers):
    if form in ("sellmeier", "sellmeier_reciprocal"):
        reciprocal = form == "sellmeier_reciprocal"
        coefficients, res, jac = _fit_sellmeier(lam, n, terms, None if reciprocal else constant,
                                                reciprocal)
    elif form == "cauchy":
        columns = lam[:, None] ** (-2.0 * np.arange(terms))
        coef, res, jac = _fit_linear(lam, n, columns, in_n2=False)
        coefficients = {"coefficients": list(map(float, coef))}
    else:
        columns = lam[:, None] ** np.asarray(powers, dtype=float)
        coef, res, jac = _fit_linear(lam, n, columns, in_n2=True)
        coefficients = {"coefficients": list(map(float, coef)), "powers": list(powers)}
    return coefficients, res, _scaled_condition(jac)


def fit_dispersion(wavelength_um, n, form: str = "sellmeier", terms: int = 2, *, n_e=None,
                   wavelength_e_um=None, constant: float | None = 1.0, powers=None,
                   name: str = "fitted material", temperature_c: float = 20.0,
                   reference: Reference | None = None, aliases=(), notes: str = ""):
    """Fit a published dispersion form to measured refractive indices.

    Parameters
    ----------
    wavelength_um : array_like, shape (N,)
        Vacuum wavelengths of the measurements in µm.
    n : array_like, shape (N,)
        Measured index (the ordinary index when ``n_e`` is given).
    form : {"sellmeier", "sellmeier_reciprocal", "cauchy", "power_series_n2"}
        Formula name as in the data-file schema.
    terms : int
        Number of poles (Sellmeier forms) or coefficients (Cauchy, power series).
    n_e : array_like, optional
        Measured extraordinary index; given, the result is a uniaxial material.
    wavelength_e_um : array_like, optional
        Wavelengths of ``n_e`` if they differ from ``wavelength_um``.
    constant : float or None
        The Sellmeier constant term A: fixed at this value (1 in Sellmeier's original form),
        or fitted when ``None``.  The reciprocal form always fits A.
    powers : sequence of int, optional
        Exponents of λ for ``power_series_n2``; default ``(0, 2, -2, -4, ...)[:terms]``.
    name, temperature_c, reference, aliases, notes
        Stored in the material; ``reference`` defaults to a note that the data are the user's
        own measurement.

    Returns
    -------
    FitResult
        Material, coefficients, per-point residuals, RMS residual and condition numbers.
    """
    if form not in FIT_FORMS:
        raise ValueError(f"form = {form!r} cannot be fitted; allowed: {', '.join(FIT_FORMS)}")
    # Checked before the (slow) fit so that a typo does not cost a fit.
    if not isinstance(name, str) or not name.strip():
        raise ValueError(f"name = {name!r} must be a non-empty string")
    if isinstance(temperature_c, (bool, str)) or not np.isscalar(temperature_c) \
            or not np.isfinite(temperature_c) or temperature_c <= -273.15:
        raise ValueError(f"temperature_c = {temperature_c!r} must be a finite number of °C above "
                         f"-273.15")
    if isinstance(terms, bool) or not isinstance(terms, int) or terms < 1:
        raise ValueError(f"terms = {terms!r} must be a positive integer")
    if form == "power_series_n2":
        powers = list((0, 2, -2, -4, -6, -8, -10)[:terms] if powers is None else powers)
        if len(powers) != terms or not all(isinstance(p, int) for p in powers):
            raise ValueError(f"powers = {powers!r} must be {terms} integers (one per term)")
    data = {"index" if n_e is None else "ordinary": _check_data(wavelength_um, n, "n")}
    if n_e is not None:
        data["extraordinary"] = _check_data(
            wavelength_um if wavelength_e_um is None else wavelength_e_um, n_e, "n_e")
    n_free = {"sellmeier": 2 * terms + (constant is None), "sellmeier_reciprocal": 2 * terms + 1
              }.get(form, terms)
    for part, (lam, nn) in data.items():
        if np.unique(lam).size <= n_free:
            raise ValueError(f"{part}: {np.unique(lam).size} distinct wavelengths cannot determine "
                             f"{n_free} coefficients; allowed: more than {n_free}")

    coefficients, residuals, condition = {}, {}, {}
    for part, (lam, nn) in data.items():
        coefficients[part], res, condition[part] = _fit_part(lam, nn, form, terms, constant,
                                                             powers)
        residuals[part] = res
    every = np.concatenate(list(residuals.values()))
    lam_all = np.concatenate([lam for lam, _ in data.values()])
    if reference is None:
        npts = every.size
        reference = Reference(authors="own measurement", title=f"least-squares fit of the {form} "
                              f"form to {npts} measured indices", journal="", volume="", pages="",
                              year=datetime.date.today().year)
    common = dict(name=name, validity_um=(float(lam_all.min()), float(lam_all.max())),
                  temperature_c=float(temperature_c), reference=reference,
                  aliases=tuple(aliases), notes=notes)
    models = {part: DispersionModel(form, c) for part, c in coefficients.items()}
    if n_e is None:
        result = IsotropicMaterial(index=models["index"], **common)
    else:
        grid = np.geomspace(*common["validity_um"], 65)
        mean_dn = np.mean(models["extraordinary"].n(grid) - models["ordinary"].n(grid))
        result = UniaxialMaterial(ordinary=models["ordinary"],
                                  extraordinary=models["extraordinary"],
                                  optical_sign="positive" if mean_dn > 0 else "negative", **common)
    return FitResult(material=result, coefficients=coefficients, residuals=residuals,
                     rms_residual=float(np.sqrt(np.mean(every**2))), condition_number=condition)
