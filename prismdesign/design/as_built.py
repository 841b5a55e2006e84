"""What a built prism actually is: error parameters fitted to measurements by least squares.

Measurements of a built prism — the split or each beam's in-plane deviation at several
wavelengths or incidence angles, the lateral offset (shear) or the optical path difference of
a Savart / Nomarski prism — are compared with the exact trace of the nominal prism carrying the
chosen error parameters (:mod:`prismdesign.design.perturbation`), and the errors are found by
``scipy.optimize.least_squares`` on the residuals divided by each measurement's uncertainty.
The Jacobian is a central difference of the exact trace, all 2P perturbed prisms traced as one
batch.

Uncertainty: the covariance is (JᵀJ)⁻¹ s² with J the weighted Jacobian at the solution and
s² = Σ r²/(m − p) the reduced chi-square (the usual least-squares estimate, e.g. Press et al.,
*Numerical Recipes*, 3rd ed., 2007, §15.4–15.5), so it holds whether or not the stated
uncertainties are right in scale. A parameter the data cannot determine — a zero column of J
(the figure does not move with it to first order) or a near-degenerate combination (condition
of the column-scaled J above 1e8) — is named in an :class:`UndeterminedParameterWarning` and
gets NaN uncertainty; the others are reported on the determined subspace.

Fringes: a Savart plate's fringe period in the focal plane of a lens of focal length f is
λ f / shear (Françon & Mallick, *Polarization Interferometers*, 1971, from memory), so a
measured period gives ``offset_mm`` = λ f / period; a Nomarski fringe position gives the OPD.
"""
import csv
import warnings
from dataclasses import dataclass
from pathlib import Path

import numpy as np
from scipy import optimize

from .._display import shown
from ..analysis._common import rank_beams, strip_pair
from .batch_merit import trace_figures
from .perturbation import apply_errors, parameter
from .sensitivity import default_step
from ..analysis.beam_groups import trace_output_beams

__all__ = ["QUANTITIES", "Measurements", "measurements", "read_measurements", "AsBuiltFit",
           "fit_as_built", "UndeterminedParameterWarning"]

#: Measurable quantities, with their unit (the suffix of the name).
QUANTITIES = ("split_deg", "first_deviation_deg", "second_deviation_deg", "offset_mm", "opd_um")

_INPUT_COLUMNS = ("wavelength_um", "in_plane_deg", "out_of_plane_deg")


class UndeterminedParameterWarning(UserWarning):
    """The measurements cannot determine one or more fitted parameters."""


@dataclass(frozen=True)
class Measurements:
    """Rows of measurements: one quantity at one wavelength and incidence per row.

    Attributes
    ----------
    wavelength_um, in_plane_deg, out_of_plane_deg : ndarray, shape (R,)
    quantity : tuple of str
        One of :data:`QUANTITIES` per row.
    value, sigma : ndarray, shape (R,)
        Measured value and its one-sigma uncertainty, in the quantity's unit.
    """

    wavelength_um: np.ndarray
    in_plane_deg: np.ndarray
    out_of_plane_deg: np.ndarray
    quantity: tuple
    value: np.ndarray
    sigma: np.ndarray

    @property
    def rows(self):
        return int(self.value.size)


def _floats(name, value, shape=None):
    try:
        if isinstance(value, (str, bytes)):
            raise TypeError
        arr = np.atleast_1d(np.asarray(value, dtype=float))
    except (TypeError, ValueError):
        raise ValueError(f"{name} must be numbers, got {shown(value)}") from None
    if shape is not None:
        try:
            arr = np.broadcast_to(arr, shape)
        except ValueError:
            raise ValueError(f"{name} must have one value per wavelength ({shape[0]}), got "
                             f"{arr.size}") from None
    if not np.all(np.isfinite(arr)):
        raise ValueError(f"{name} must be finite, got {shown(value)}")
    return arr


def measurements(wavelength_um, *, in_plane_deg=0.0, out_of_plane_deg=0.0, **quantities):
    """Measurements from arrays.

    Parameters
    ----------
    wavelength_um : array_like, shape (R,)
    in_plane_deg, out_of_plane_deg : array_like
        Incidence of each measurement (degrees), broadcast to (R,).
    **quantities : array_like
        ``split_deg=…``, ``first_deviation_deg=…`` (the beam deviated least toward +x),
        ``second_deviation_deg=…``, ``offset_mm=…``, ``opd_um=…`` with one value per wavelength
        (NaN = not measured there), and their uncertainties as ``sigma_<quantity>=…`` (default
        1 in the quantity's unit: then only the reduced chi-square scales the covariance).

    Returns
    -------
    Measurements
    """
    lam = _floats("wavelength_um", wavelength_um)
    if np.any(lam <= 0):
        raise ValueError(f"wavelength_um must be positive (µm), got {shown(wavelength_um)}")
    shape = lam.shape
    inp = _floats("in_plane_deg", in_plane_deg, shape)
    out = _floats("out_of_plane_deg", out_of_plane_deg, shape)
    unknown = [k for k in quantities if k not in QUANTITIES
               and not (k.startswith("sigma_") and k[6:] in QUANTITIES)]
    if unknown:
        raise ValueError(f"unknown measurement {', '.join(unknown)}; allowed: "
                         f"{', '.join(QUANTITIES)} and sigma_<quantity>")
    rows = {key: [] for key in ("lam", "inp", "out", "q", "v", "s")}
    for q in QUANTITIES:
        if quantities.get(q) is None:
            continue
        values = np.broadcast_to(np.atleast_1d(np.asarray(quantities[q], dtype=float)), shape)
        sigma = _floats(f"sigma_{q}", quantities.get(f"sigma_{q}", 1.0), shape)
        if np.any(sigma <= 0):
            raise ValueError(f"sigma_{q} must be positive, got {shown(quantities[f'sigma_{q}'])}")
        keep = np.isfinite(values)
        rows["lam"].append(lam[keep])
        rows["inp"].append(inp[keep])
        rows["out"].append(out[keep])
        rows["q"] += [q] * int(keep.sum())
        rows["v"].append(values[keep])
        rows["s"].append(sigma[keep])
    if not rows["q"]:
        raise ValueError(f"give at least one measured quantity ({', '.join(QUANTITIES)})")
    return Measurements(np.concatenate(rows["lam"]), np.concatenate(rows["inp"]),
                        np.concatenate(rows["out"]), tuple(rows["q"]),
                        np.concatenate(rows["v"]), np.concatenate(rows["s"]))


def read_measurements(path):
    """Measurements from a CSV file with named columns (units in the names).

    Columns: ``wavelength_um`` (required), optional ``in_plane_deg`` and ``out_of_plane_deg``,
    any of :data:`QUANTITIES` and ``sigma_<quantity>``; an empty cell is "not measured".

    Returns
    -------
    Measurements
    """
    path = Path(path)
    try:
        with path.open(newline="", encoding="utf-8") as handle:
            reader = csv.DictReader(handle)
            columns = [c.strip() for c in (reader.fieldnames or [])]
            records = list(reader)
    except OSError as error:
        raise ValueError(f"cannot read measurements file {str(path)!r}: {error.strerror}") \
            from None
    allowed = set(_INPUT_COLUMNS) | set(QUANTITIES) | {f"sigma_{q}" for q in QUANTITIES}
    unknown = [c for c in columns if c not in allowed]
    if unknown or "wavelength_um" not in columns:
        raise ValueError(f"{path.name}: columns must include wavelength_um and may be "
                         f"{', '.join(sorted(allowed - {'wavelength_um'}))}; got "
                         f"{', '.join(columns) or 'none'}")
    if not records:
        raise ValueError(f"{path.name}: no measurement rows")

    def column(name, default=np.nan):
        out = []
        for number, record in enumerate(records, start=2):
            text = (record.get(name) or "").strip()
            try:
                out.append(float(text) if text else default)
            except ValueError:
                raise ValueError(f"{path.name} line {number}: {name} must be a number, got "
                                 f"{text!r}") from None
        return np.array(out)

    kwargs = {c: column(c, 0.0 if c in ("in_plane_deg", "out_of_plane_deg") else
                        (1.0 if c.startswith("sigma_") else np.nan))
              for c in columns if c != "wavelength_um"}
    return measurements(column("wavelength_um"), **kwargs)


@dataclass(frozen=True)
class AsBuiltFit:
    """Fitted errors of a built prism.

    Attributes
    ----------
    names, units : tuple of str
    values : ndarray, shape (P,)
        Fitted errors, each in its parameter's unit.
    uncertainties : ndarray, shape (P,)
        One-sigma, √diag(covariance); NaN for undetermined parameters.
    covariance, correlation : ndarray, shape (P, P)
    residuals : ndarray, shape (R,)
        Measured minus model at the solution, in each quantity's unit.
    normalised_residuals : ndarray, shape (R,)
    reduced_chi_square : float
    undetermined : tuple of str
    evaluations : int
        Model evaluations (each one batch trace).
    success : bool
    message : str
    """

    names: tuple
    units: tuple
    values: np.ndarray
    uncertainties: np.ndarray
    covariance: np.ndarray
    correlation: np.ndarray
    residuals: np.ndarray
    normalised_residuals: np.ndarray
    reduced_chi_square: float
    undetermined: tuple
    evaluations: int
    success: bool
    message: str

    def table(self):
        """Rows: parameter, value, uncertainty, unit."""
        return [dict(parameter=n, value=float(v), uncertainty=float(u), unit=unit)
                for n, v, u, unit in zip(self.names, self.values, self.uncertainties, self.units)]

    def strongest_correlations(self, count=3):
        """The largest |correlations| between pairs of parameters."""
        pairs = [(self.names[i], self.names[j], float(self.correlation[i, j]))
                 for i in range(len(self.names)) for j in range(i + 1, len(self.names))
                 if np.isfinite(self.correlation[i, j])]
        return sorted(pairs, key=lambda p: -abs(p[2]))[:count]

    def report(self):
        """Plain-text report: values with ±, correlations, fit quality."""
        lines = ["As-built fit (least squares, covariance (JᵀJ)⁻¹ s²):"]
        for n, v, u, unit in zip(self.names, self.values, self.uncertainties, self.units):
            tail = "not determined by these data" if n in self.undetermined else f"± {u:.3g}"
            lines.append(f"  {n:28s} {v:+.5g} {unit} {tail}")
        for a, b, r in self.strongest_correlations():
            lines.append(f"  correlation {a} / {b}: {r:+.3f}")
        lines.append(f"  reduced chi-square {self.reduced_chi_square:.3g}, "
                     f"{self.evaluations} model evaluations; {self.message}")
        return "\n".join(lines)


def _main_beams(prism, data):
    """The two main beams (or one), ordered by in-plane deviation, at the measurement points."""
    result = trace_output_beams(prism, data.wavelength_um, data.in_plane_deg,
                                data.out_of_plane_deg, polarisation="unpolarised")
    beams = {k: strip_pair(b, result.incoherent_pair) for k, b in result.beams.items()}
    main = rank_beams({k: b.power for k, b in beams.items()}, 2)
    deviation = {k: float(np.mean(np.arctan2(beams[k].exit_direction[..., 0],
                                             beams[k].exit_direction[..., 2]))) for k in main}
    return tuple(sorted(main, key=lambda k: (deviation[k], k)))


def _model(prism, data, names, values, main):
    """Model values of every measurement row; values shape (P,) or (S, P) → (R,) / (S, R)."""
    values = np.asarray(values, dtype=float)
    errors = {n: values[..., k] for k, n in enumerate(names)}
    batch, inputs = apply_errors(prism, errors, ray_ndim=1)
    figs = trace_figures(batch, data.wavelength_um + inputs.wavelength_um,
                         data.in_plane_deg + inputs.in_plane_deg,
                         data.out_of_plane_deg + inputs.out_of_plane_deg, main,
                         reference_in_plane_deg=data.in_plane_deg, plane_z_mm=prism.exit_z_mm)
    shape = figs.leakage.shape
    table = {"split_deg": figs.split_deg, "offset_mm": figs.offset_mm, "opd_um": figs.opd_um,
             "first_deviation_deg": figs.deviation_deg[main[0]],
             "second_deviation_deg": figs.deviation_deg[main[-1]] if len(main) > 1 else None}
    out = np.full(shape, np.nan)
    for q in set(data.quantity):
        rows = np.array([x == q for x in data.quantity])
        if table[q] is None:
            raise ValueError(f"the prism has one main beam: {q} cannot be modelled")
        out[..., rows] = np.broadcast_to(table[q], shape)[..., rows]
    return out


def fit_as_built(prism, data, parameters, *, start=None, steps=None, condition_limit=1e8):
    """Fit error parameters of a built prism to measurements.

    Parameters
    ----------
    prism : Prism
        The nominal design.
    data : Measurements
        From :func:`measurements` or :func:`read_measurements`.
    parameters : sequence of str
        Error parameters to fit (see :mod:`prismdesign.design.perturbation`).
    start : sequence of float, optional
        Starting errors (default zero: the nominal prism).
    steps : dict[str, float], optional
        Central-difference steps of the Jacobian (default
        :data:`~prismdesign.design.sensitivity.DEFAULT_STEPS`).
    condition_limit : float
        Condition number of the column-scaled Jacobian above which the fit warns.

    Returns
    -------
    AsBuiltFit

    Warns
    -----
    UndeterminedParameterWarning
        Naming the parameters the data cannot determine.
    """
    if not isinstance(data, Measurements):
        raise ValueError(f"data must be Measurements (from measurements() or "
                         f"read_measurements()), got {type(data).__name__}")
    if isinstance(parameters, str):
        parameters = [parameters]
    params = [parameter(prism, n) for n in parameters]
    if not params:
        raise ValueError("parameters must name at least one error parameter to fit")
    names = tuple(p.name for p in params)
    if len(set(names)) != len(names):
        raise ValueError(f"each parameter may be fitted once, got {list(names)}")
    count = len(names)
    if data.rows < count:
        raise ValueError(f"{data.rows} measurements cannot determine {count} parameters; "
                         f"measure at more wavelengths or angles")
    steps = dict(steps or {})
    h = np.array([float(steps.get(p.name, default_step(p))) for p in params])
    x0 = np.zeros(count) if start is None else _floats("start", start, (count,)).copy()
    main = _main_beams(prism, data)
    evaluations = [0]

    def residuals(x):
        evaluations[0] += 1
        r = (_model(prism, data, names, x, main) - data.value) / data.sigma
        return np.where(np.isfinite(r), r, 1e6)

    def jacobian(x):
        evaluations[0] += 1
        shifted = np.repeat(x[None, :], 2 * count, axis=0)
        k = np.arange(count)
        shifted[2 * k, k] += h
        shifted[2 * k + 1, k] -= h
        values = _model(prism, data, names, shifted, main)
        return ((values[0::2] - values[1::2]) / (2 * h[:, None])).T / data.sigma[:, None]

    res = optimize.least_squares(residuals, x0, jac=jacobian, method="trf", x_scale="jac",
                                 xtol=1e-12, ftol=1e-12, gtol=1e-12, max_nfev=200)
    jac = jacobian(res.x)
    r = residuals(res.x)
    dof = data.rows - count
    s2 = float(r @ r / dof) if dof > 0 else np.nan
    column = np.sqrt((jac ** 2).sum(axis=0))
    largest = column.max() if column.size else 0.0
    undetermined = {names[k] for k in range(count) if column[k] <= 1e-12 * max(largest, 1e-300)}
    good = [k for k in range(count) if names[k] not in undetermined]
    if good:
        scaled = jac[:, good] / column[good]
        _, singular, vt = np.linalg.svd(scaled, full_matrices=False)
        weak = singular < singular[0] / condition_limit
        for row in vt[weak]:
            share = row ** 2
            for k in np.nonzero(share > 0.1)[0]:
                undetermined.add(names[good[k]])
    good = [k for k in range(count) if names[k] not in undetermined]
    cov = np.full((count, count), np.nan)
    if good:
        sub = jac[:, good]
        cov_good = np.linalg.inv(sub.T @ sub) * (s2 if np.isfinite(s2) else np.nan)
        cov[np.ix_(good, good)] = cov_good
    sigma = np.sqrt(np.diag(cov))
    with np.errstate(invalid="ignore", divide="ignore"):
        corr = cov / np.outer(sigma, sigma)
    ordered = tuple(n for n in names if n in undetermined)
    if ordered:
        warnings.warn(f"the measurements cannot determine {', '.join(ordered)} (no first-order "
                      f"effect on the measured quantities, or degenerate with another "
                      f"parameter); measure other quantities or fix them",
                      UndeterminedParameterWarning, stacklevel=2)
    model_values = _model(prism, data, names, res.x, main)
    return AsBuiltFit(names, tuple(p.unit for p in params), res.x.copy(), sigma, cov, corr,
                      data.value - model_values, (data.value - model_values) / data.sigma, s2,
                      ordered, evaluations[0], bool(res.success), res.message)
