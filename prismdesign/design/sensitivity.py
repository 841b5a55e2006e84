"""Sensitivity of every figure of a prism to every error parameter, at the nominal design.

∂figure/∂parameter per wavelength of the requirement, in the figure's own unit per unit of
error (e.g. degrees of split per degree of face angle). Central differences of the exact trace
give every sensitivity: the 2P perturbed prisms (+h and −h for each of P parameters) plus the
nominal trace as ONE batch. Where a closed form exists it is used and the central difference
is kept as its cross-check:

* Wollaston prism at normal incidence (axes in the faces, crossed): every wave normal stays in
  the principal section and perpendicular to the optic axes of the wedges it crosses (to first
  order for an entrance-face tilt), so each beam obeys Snell's law with the plain indices n_o,
  n_e at each of the three faces (Born & Wolf, *Principles of Optics*, 7th ed., 1999, §1.5.2,
  and §15.3 for the crystal indices). The exit angles, the split and their derivatives with
  respect to each face angle, the wavelength (through the analytic dn/dλ of the dispersion
  formula) and the temperature (through the linear dn/dT, where published) are differentiated
  symbolically with sympy (:func:`wollaston_closed_form`).

The figures (see :class:`~prismdesign.design.batch_merit.BatchFigures`), on axis:
``split_deg``, ``bisector_deg``, ``deviation_<beam>_deg``, ``out_of_plane_<beam>_deg``,
``offset_mm`` (lateral offset / shear), ``opd_um``, ``separation_mm``, ``clearance_mm``,
``transmittance_<beam>``, ``leakage``; and for a polariser requirement with
``field_edges=True`` the four field-of-view edges ``field_edge_<direction>_deg``.
Leakage from axis errors grows as the square of the error (the cross-talk is ∝ sin²δ), so its
first derivative at the nominal is zero: the table shows that honestly as ~0.
"""
import warnings
from dataclasses import dataclass, field
from functools import lru_cache

import numpy as np

from .._display import shown
from ..materials.material import DispersionRangeWarning
from .batch_merit import sample_figures
from .merit import figures as nominal_figures
from .perturbation import has_thermo_optic_data, parameter, prism_parameters

__all__ = ["Sensitivities", "sensitivities", "wollaston_closed_form", "DEFAULT_STEPS",
           "default_step", "figure_unit"]

#: Central-difference step per unit of error: small enough that the O(h²) truncation stays
#: below 1e-9 relative, large enough that rounding (~1e-16 / h) does too.
DEFAULT_STEPS = {"deg": 1e-3, "mm": 1e-4, "nm": 1e-2, "°C": 1e-2, "Δn": 1e-5}

#: A layer's thickness gets a finer step (1 nm): a coherent film's transmission swings over
#: λ/(2n cos θ) ≈ 0.2 µm of thickness, so the length step above would blur it.
LAYER_THICKNESS_STEP_MM = 1e-6


def default_step(param):
    """Central-difference step of a :class:`~prismdesign.design.Parameter` (its unit)."""
    if param.name.endswith("_layer_thickness_mm"):
        return LAYER_THICKNESS_STEP_MM
    return DEFAULT_STEPS[param.unit]


def figure_unit(name):
    """Unit of a figure from its name."""
    for suffix, unit in (("_deg", "deg"), ("_mm", "mm"), ("_um", "µm")):
        if name.endswith(suffix):
            return unit
    return "fraction"


@dataclass(frozen=True)
class Sensitivities:
    """Sensitivities of a prism's figures at its nominal design.

    Attributes
    ----------
    wavelength_um : ndarray, shape (n,)
    parameters : tuple of Parameter
    nominal : dict[str, ndarray of shape (n,)]
        Nominal value of each figure per wavelength (field edges: shape (n,) too).
    values : dict[str, ndarray of shape (P, n)]
        ∂figure/∂parameter in the figure's unit per unit of error (closed form where one exists).
    method : dict[str, tuple of str]
        Per figure and parameter: "closed form" or "central difference".
    central : dict[str, ndarray of shape (P, n)]
        The central-difference values (the cross-check of the closed forms).
    steps : ndarray, shape (P,)
        Central-difference steps, each in its parameter's unit.
    evaluations : int
        Number of perturbed prisms traced.
    """

    wavelength_um: np.ndarray
    parameters: tuple
    nominal: dict
    values: dict
    method: dict
    central: dict
    steps: np.ndarray
    evaluations: int
    notes: tuple = field(default_factory=tuple)

    @property
    def figure_names(self):
        return tuple(self.values)

    def of(self, figure_name, parameter_name):
        """∂figure/∂parameter per wavelength, shape (n,)."""
        names = [p.name for p in self.parameters]
        if figure_name not in self.values:
            raise ValueError(f"figure must be one of {', '.join(self.values)}, got "
                             f"{shown(figure_name)}")
        if parameter_name not in names:
            raise ValueError(f"parameter must be one of {', '.join(names)}, got "
                             f"{shown(parameter_name)}")
        return self.values[figure_name][names.index(parameter_name)]

    def cross_check(self):
        """Largest relative difference between each closed form and its central difference.

        Returns
        -------
        dict[(str, str), float]
            Keyed by (figure, parameter), only where a closed form was used.
        """
        out = {}
        for fig, methods in self.method.items():
            for k, m in enumerate(methods):
                if m == "closed form":
                    a, c = self.values[fig][k], self.central[fig][k]
                    scale = np.maximum(np.abs(a), 1e-300)
                    out[(fig, self.parameters[k].name)] = float(np.max(np.abs(a - c) / scale))
        return out

    def ranked(self, figure_name, tolerances=None):
        """Parameters ranked by how much they move one figure (worst over the band).

        Parameters
        ----------
        figure_name : str
        tolerances : ToleranceSet, optional
            When given, rank by the swing at each tolerance's size (σ or ±limit) and include it.

        Returns
        -------
        list of dict
            Rows with parameter, unit, sensitivity (figure unit per parameter unit, signed, at
            the wavelength where it is largest), method and, with tolerances, the swing.
        """
        values = self.values.get(figure_name)
        if values is None:
            raise ValueError(f"figure must be one of {', '.join(self.values)}, got "
                             f"{shown(figure_name)}")
        sizes = {}
        if tolerances is not None:
            sizes = {t.name: t.size for t in tolerances.items}
        rows = []
        for k, p in enumerate(self.parameters):
            column = values[k]
            worst = int(np.nanargmax(np.abs(column))) if np.any(np.isfinite(column)) else 0
            row = dict(parameter=p.name, description=p.description, parameter_unit=p.unit,
                       figure=figure_name, figure_unit=figure_unit(figure_name),
                       sensitivity=float(column[worst]),
                       wavelength_um=float(self.wavelength_um[worst]),
                       method=self.method[figure_name][k])
            if tolerances is not None:
                size = sizes.get(p.name)
                if size is None:
                    continue
                row["tolerance"] = size
                row["swing"] = abs(row["sensitivity"]) * size
            rows.append(row)
        key = "swing" if tolerances is not None else "sensitivity"
        rows.sort(key=lambda r: (-abs(r[key]) if np.isfinite(r[key]) else np.inf, r["parameter"]))
        return rows


def _figure_arrays(figs):
    """On-axis figure arrays (…, n) keyed by name, from BatchFigures (…, n, m)."""
    out = {}
    for name in ("split_deg", "bisector_deg", "offset_mm", "opd_um", "separation_mm",
                 "clearance_mm"):
        value = getattr(figs, name)
        if value is not None:
            out[name] = value[..., 0]
    for label in figs.main_labels:
        out[f"deviation_{label}_deg"] = figs.deviation_deg[label][..., 0]
        out[f"out_of_plane_{label}_deg"] = figs.out_of_plane_deg[label][..., 0]
        out[f"transmittance_{label}"] = figs.transmittance[label][..., 0]
    out["leakage"] = figs.leakage[..., 0]
    return out


def sensitivities(prism, requirement, parameters=None, *, steps=None, field_edges=False):
    """Sensitivity of every figure to every error parameter, per wavelength.

    Parameters
    ----------
    prism : Prism
        Nominal prism.
    requirement : Requirement
        Wavelengths (and observation plane, beam size) of the figures.
    parameters : sequence of str, optional
        Error parameters (default: every one of :func:`prism_parameters`).
    steps : dict[str, float], optional
        Central-difference step per parameter name (its unit); default :data:`DEFAULT_STEPS`.
    field_edges : bool
        Also differentiate the four field-of-view edges (polariser requirements): one
        field-of-view map of the nominal prism, then one batched bisection for all stepped
        prisms (see :func:`_field_edge_differences`). Open or lost edges give NaN.

    Returns
    -------
    Sensitivities
    """
    if parameters is None:
        params = prism_parameters(prism)
    else:
        if isinstance(parameters, str):
            parameters = [parameters]
        params = tuple(parameter(prism, name) for name in parameters)
    if not params:
        raise ValueError("parameters must name at least one error parameter, got none")
    steps = dict(steps or {})
    h = np.array([float(steps.get(p.name, default_step(p))) for p in params])
    if not np.all(np.isfinite(h) & (h > 0)):
        raise ValueError(f"steps must be positive numbers, got {shown(steps)}")
    count = len(params)
    errors = _stepped_errors(params, h, nominal=True)
    main = nominal_figures(prism, requirement).main_labels
    with warnings.catch_warnings():
        # A step of 0.01 °C below a data temperature at the edge of the dn/dT range is not an
        # extrapolation worth a warning.
        warnings.simplefilter("ignore", DispersionRangeWarning)
        figs, _ = sample_figures(prism, requirement, errors, main_labels=main)
    arrays = _figure_arrays(figs)
    nominal = {name: value[-1] for name, value in arrays.items()}
    central = {name: (value[0:2 * count:2] - value[1:2 * count:2]) / (2 * h[:, None])
               for name, value in arrays.items()}
    values = {name: value.copy() for name, value in central.items()}
    method = {name: ["central difference"] * count for name in values}
    notes = []
    closed = wollaston_closed_form(prism, requirement.wavelengths_um, main)
    if closed is not None:
        for name, derivatives in closed.items():
            if name not in values:
                continue
            for k, p in enumerate(params):
                if p.name in derivatives:
                    values[name][k] = derivatives[p.name]
                    method[name][k] = "closed form"
    evaluations = 2 * count + 1
    if field_edges:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", DispersionRangeWarning)
            edge_values, edge_nominal = _field_edge_differences(prism, requirement, params, h)
        values.update(edge_values)
        central.update({k: v.copy() for k, v in edge_values.items()})
        nominal.update(edge_nominal)
        method.update({k: ["central difference"] * count for k in edge_values})
        evaluations += 2 * count + 1
        for name, value in edge_nominal.items():
            if np.any(np.isnan(value)):
                notes.append(f"{name}: no edge inside the ±10° map at some wavelength (the spec "
                             f"holds to its border, or fails at normal incidence): NaN there")
    return Sensitivities(requirement.wavelengths_um, params, nominal, values,
                         {k: tuple(v) for k, v in method.items()}, central, h, evaluations,
                         tuple(notes))


def _stepped_errors(params, h, nominal=False):
    """Errors of the 2P stepped prisms (+h, -h of each parameter in turn, samples 2k and
    2k + 1), plus the unperturbed prism as the last sample when `nominal`."""
    count = len(params)
    columns = np.zeros((count, 2 * count + int(nominal)))
    k = np.arange(count)
    columns[k, 2 * k], columns[k, 2 * k + 1] = h, -h
    return {p.name: columns[i] for i, p in enumerate(params)}


#: Half-width (degrees) of the bracket around each nominal field edge in which the edges of
#: the stepped prisms are sought: the default steps move an edge by ~1e-3 degrees per unit of
#: sensitivity, far inside it.
_EDGE_BRACKET_DEG = 0.05


def _field_edge_differences(prism, requirement, params, h, tolerance_deg=1e-10):
    """Central differences of the four field-of-view edges, all stepped prisms at once.

    The nominal edges come from :func:`~prismdesign.analysis.field_of_view` (a 21 × 21 map,
    refined by bisection). The 2P stepped prisms (±h per parameter) then share ONE batched
    bisection inside ±:data:`_EDGE_BRACKET_DEG` of each nominal edge: one trace per step covers
    every prism, wavelength and direction. Edges are angles from the nominal input direction;
    an incidence error α therefore moves the in-plane edges by ∓α (the field stays with the
    prism), a wavelength error through the indices. An edge that is open (beyond the map) or
    does not stay in its bracket gives NaN.
    """
    from ..analysis.field_of_view import DIRECTIONS, field_of_view, requirement_margins
    from .perturbation import apply_errors
    lam = np.asarray(requirement.wavelengths_um, dtype=float)
    names = [f"field_edge_{d}_deg" for d in ("plus_in_plane", "minus_in_plane",
                                            "plus_out_of_plane", "minus_out_of_plane")]
    fov = field_of_view(prism, lam, steps=21, tolerance_deg=tolerance_deg)
    base = np.asarray(fov.half_angles_deg["combined"], dtype=float)          # (n, 4)
    usable = ~np.asarray(fov.open_ended["combined"]) & (base > 0)
    count = len(params)
    errors = _stepped_errors(params, h)
    batch, inputs = apply_errors(prism, errors, ray_ndim=2)                  # samples (2P, 1, 1)
    azimuth = np.deg2rad([a for _, a in DIRECTIONS])
    wavelength = lam[:, None] + inputs.wavelength_um                         # (2P, n, 1)

    def margin(angle_deg):
        """Smallest requirement margin at distance `angle_deg` along each direction."""
        in_plane = angle_deg * np.cos(azimuth) + inputs.in_plane_deg
        out_of_plane = angle_deg * np.sin(azimuth) + inputs.out_of_plane_deg
        return requirement_margins(batch, wavelength, in_plane, out_of_plane,
                                   fov.requirements).min(axis=0)

    shape = (2 * count,) + base.shape
    lo = np.broadcast_to(np.maximum(base - _EDGE_BRACKET_DEG, 0.0), shape).copy()
    hi = np.broadcast_to(base + _EDGE_BRACKET_DEG, shape).copy()
    bracketed = (margin(lo) > 0) & (margin(hi) <= 0) & usable
    steps = int(np.ceil(np.log2(2 * _EDGE_BRACKET_DEG / tolerance_deg))) + 1
    for _ in range(steps):
        mid = 0.5 * (lo + hi)
        good = margin(mid) > 0
        lo, hi = np.where(good, mid, lo), np.where(good, hi, mid)
    edges = np.where(bracketed, lo, np.nan)
    derivative = (edges[0::2] - edges[1::2]) / (2 * h[:, None, None])         # (P, n, 4)
    out = {name: derivative[..., j] for j, name in enumerate(names)}
    nominal = {name: np.where(usable[..., j], base[..., j], np.nan)
               for j, name in enumerate(names)}
    return out, nominal


@lru_cache(maxsize=1)
def _wollaston_expressions():
    """Exit angle of one Wollaston beam and its derivatives, from Snell's law at three faces.

    Signed in-plane angles from z (toward +x). Faces have normals at angles φ (entrance),
    θ (interface), τ (exit); the beam travels with index n1 in the first wedge, n2 in the
    second, n0 outside, entering along z. Snell's law n sin(a − ν) = n' sin(a' − ν) at a face
    of normal angle ν (Born & Wolf §1.5.2) gives
    a1 = φ + asin(n0/n1 sin(−φ)), a2 = θ + asin(n1/n2 sin(a1 − θ)),
    a3 = τ + asin(n2/n0 sin(a2 − τ)).
    """
    import sympy as sp
    phi, theta, tau, n0, n1, n2 = sp.symbols("phi theta tau n0 n1 n2", real=True)
    a1 = phi + sp.asin(n0 / n1 * sp.sin(-phi))
    a2 = theta + sp.asin(n1 / n2 * sp.sin(a1 - theta))
    a3 = tau + sp.asin(n2 / n0 * sp.sin(a2 - tau))
    symbols = (phi, theta, tau, n0, n1, n2)
    names = ("angle", "d_phi", "d_theta", "d_tau", "d_n0", "d_n1", "d_n2")
    exprs = (a3, sp.diff(a3, phi), sp.diff(a3, theta), sp.diff(a3, tau), sp.diff(a3, n0),
             sp.diff(a3, n1), sp.diff(a3, n2))
    return {name: sp.lambdify(symbols, e, "numpy") for name, e in zip(names, exprs)}


def _face_angle(boundary):
    n = boundary.normal
    return float(np.arctan2(n[0], n[2]))


def wollaston_closed_form(prism, wavelength_um, main_labels=None):
    """Closed-form derivatives of a Wollaston's exit angles and split, or None if not one.

    Applies to a :func:`~prismdesign.prisms.wollaston` prism, not turned, with its optic axes
    along x and y, no interface layer, at normal incidence.

    Parameters
    ----------
    prism : Prism
    wavelength_um : array_like, shape (n,)
    main_labels : pair of str, optional
        The two beams ("eo", "oe" in either order).

    Returns
    -------
    dict[str, dict[str, ndarray]] or None
        Figure name → {parameter name → derivative per wavelength}. Figures: ``split_deg``,
        ``bisector_deg`` and ``deviation_<beam>_deg``; parameters: ``face<j>_angle_deg``,
        ``wavelength_nm`` and, where every piece has thermo-optic data, ``temperature_change_c``.
    """
    if prism.kind != "wollaston" or prism.rotation_deg != 0.0 or len(prism.pieces) != 2:
        return None
    axes = [p.optic_axis for p in prism.pieces]
    if any(a is None or np.ndim(a) != 1 for a in axes):
        return None
    named = {tuple(np.round(np.abs(a), 12)) for a in axes}
    if named != {(1.0, 0.0, 0.0), (0.0, 1.0, 0.0)}:
        return None
    if any(b.layer is not None or np.ndim(b.normal) != 1 for b in prism.boundaries):
        return None
    lam = np.atleast_1d(np.asarray(wavelength_um, dtype=float))
    crystal = prism.pieces[0].material
    if prism.pieces[1].material is not crystal or not hasattr(crystal, "dn_dwl_o"):
        return None
    t = prism.temperature_c
    n_o, n_e = crystal.indices(lam, t)
    n_air = prism.surround.indices(lam)[0]
    dno = crystal.dn_dwl_o(lam)
    dne = crystal.dn_dwl_e(lam)
    dn_air = prism.surround.dn_dwl(lam) if hasattr(prism.surround, "dn_dwl") else np.zeros_like(lam)
    thermo = has_thermo_optic_data(crystal)
    f = _wollaston_expressions()
    phi, theta, tau = (_face_angle(b) for b in prism.boundaries)
    labels = tuple(main_labels) if main_labels is not None else ("eo", "oe")
    if set(labels) != {"eo", "oe"}:
        return None
    per_beam, angles = {}, {}
    for label in labels:
        n1 = n_e if label[0] == "e" else n_o
        n2 = n_e if label[1] == "e" else n_o
        d1 = dne if label[0] == "e" else dno
        d2 = dne if label[1] == "e" else dno
        args = (phi, theta, tau, n_air, n1, n2)
        angles[label] = f["angle"](*args)
        deg = np.pi / 180.0  # d(angle in deg)/d(face in deg) = d(rad)/d(rad)
        entry = {"face0_angle_deg": f["d_phi"](*args) * np.ones_like(lam),
                 "face1_angle_deg": f["d_theta"](*args) * np.ones_like(lam),
                 "face2_angle_deg": f["d_tau"](*args) * np.ones_like(lam),
                 # dn/dλ per µm → per nm, angle rad → deg.
                 "wavelength_nm": (f["d_n0"](*args) * dn_air + f["d_n1"](*args) * d1
                                   + f["d_n2"](*args) * d2) * 1e-3 / deg}
        if thermo:
            t1 = crystal.dn_dt_e_per_c if label[0] == "e" else crystal.dn_dt_o_per_c
            t2 = crystal.dn_dt_e_per_c if label[1] == "e" else crystal.dn_dt_o_per_c
            entry["temperature_change_c"] = (f["d_n1"](*args) * t1 + f["d_n2"](*args) * t2) / deg
        per_beam[label] = entry
    a, b = sorted(labels, key=lambda label: (float(np.mean(angles[label])), label))
    sign = np.sign(angles[b] - angles[a])
    out = {f"deviation_{label}_deg": per_beam[label] for label in labels}
    out["split_deg"] = {k: sign * (per_beam[b][k] - per_beam[a][k]) for k in per_beam[a]}
    out["bisector_deg"] = {k: 0.5 * (per_beam[b][k] + per_beam[a][k]) for k in per_beam[a]}
    return out
