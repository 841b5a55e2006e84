"""Extinction ratio of each output beam and the leakage branches of misaligned optic axes.

Definitions used here:

* The **main beams** are the beams of the nominal prism that carry at least 1 % of the
  strongest one's unpolarised power (two for a Wollaston, one for a Glan prism inside its field,
  four for a double Wollaston), unless named explicitly.
* A main beam's **wanted polarisation** is its exit polarisation in the nominal prism: the
  principal eigenvector of its exit coherency matrix Σ J Jᴴ for unpolarised input. A beam that
  ends in one crystal mode is fully polarised, so this is the polarisation that mode imposes.
* Its **beam purity ratio** (`beam_purity_ratio`) is the power along the wanted polarisation
  over the power along the orthogonal one, counting the beam itself and every other beam of the (perturbed) prism that
  overlaps it: exit direction within `coincidence_deg` and exit ray within `coincidence_mm`
  sideways (e.g. the "oo" branch that a Glan prism lets through beside its "ee" beam).
  Overlapping beams add incoherently: their optical paths differ by many waves across any real
  aperture and band (common practice, no source).
* Its **analyser extinction ratio** (`analyser_extinction_ratio`, what a data sheet calls the
  extinction ratio of a polariser) reads the prism as an analyser in the nominal frame: the power
  reaching the beam's place (the beam and the beams overlapping it) for the input polarisation
  the nominal beam passes best (principal right singular vector of its Jones matrix) over the
  power for the orthogonal input. An axis error that turns the analysing direction shows here
  (e.g. tan²δ cross-talk for a Wollaston whose first wedge axis is turned by δ), even though
  each beam still leaves perfectly polarised (its beam purity ratio stays infinite).
* Where a main beam is lost (:func:`~prismdesign.analysis.lost_codes`, in the nominal or in the
  assessed prism) its ratios, powers and wanted polarisation are NaN, and a beam lost at a
  point never counts as overlapping another there.
* **Leakage branches** are all beams other than the main beams (e.g. "oo", "ee" of a Wollaston
  whose axes are not exactly crossed); `leakage_fraction` is their share of the transmitted power.

Axis errors enter through :func:`perturb_axes`, which accepts arrays of errors (Monte Carlo):
the optic axes then carry leading sample axes that broadcast against the rays.
"""
from dataclasses import dataclass, fields, replace

import numpy as np

from ..optics.vectors import cross, dot, norm, normalize
from ..prisms.base import check_prism
from ._common import (BELOW_POWER_FLOOR, as_output, check_main_labels, check_non_negative,
                      check_numbers, check_polarisation, check_ray_inputs, check_shapes,
                      lost_codes, prism_sample_shape, rank_beams, shown, strip_pair)
from .beam_groups import trace_output_beams
from . import memory
from .memory import _flat_prism, trace_bytes_per_ray
from .deviation import angle_between_deg
from .jones import jones_columns

__all__ = ["ExtinctionResult", "extinction", "perturb_axes"]


def _rotate(vectors, axis, angle):
    """Rodrigues rotation of vectors (..., 3) about unit axes (..., 3) by angles (...) in rad."""
    c, s = np.cos(angle)[..., None], np.sin(angle)[..., None]
    return vectors * c + cross(axis, vectors) * s + axis * dot(axis, vectors)[..., None] * (1 - c)


def perturb_axes(prism, azimuth_error_deg=0.0, tilt_error_deg=0.0, *, piece=None):
    """A copy of the prism with optic axes turned by azimuth and tilt errors.

    The tilt turns the axis ĉ about ẑ × ĉ (normalised; ŷ when ĉ ∥ z), which raises its polar
    angle from z by `tilt_error_deg`; the azimuth then turns it about z, which raises its
    azimuth from x by `azimuth_error_deg`.

    Parameters
    ----------
    prism : Prism
    azimuth_error_deg, tilt_error_deg : array_like
        Errors in degrees. Arrays (e.g. Monte Carlo samples) give axes of shape
        ``broadcast(azimuth, tilt).shape + (3,)``; the tracer broadcasts those leading axes
        against the ray shape, so give samples their own axis (e.g. ``errors[:, None]`` for
        results of shape (n_samples, n_wavelengths)).
    piece : int or None
        Index of the piece to perturb; None perturbs every crystal piece by the same error.

    Returns
    -------
    Prism
    """
    check_prism(prism)
    az = check_numbers("azimuth_error_deg", azimuth_error_deg, "finite angles in degrees")
    tilt = check_numbers("tilt_error_deg", tilt_error_deg, "finite angles in degrees")
    check_shapes(("azimuth_error_deg", az.shape), ("tilt_error_deg", tilt.shape))
    az, tilt = np.broadcast_arrays(np.deg2rad(az), np.deg2rad(tilt))
    crystal = [i for i, p in enumerate(prism.pieces) if p.is_crystal]
    if piece is None:
        chosen = crystal
    elif (isinstance(piece, (int, np.integer)) and not isinstance(piece, (bool, np.bool_))
          and piece in crystal):
        chosen = [int(piece)]
    else:
        raise ValueError(f"piece must be the index of a crystal piece {crystal} or None, "
                         f"got {shown(piece)}")
    pieces = list(prism.pieces)
    z = np.array([0.0, 0.0, 1.0])
    for i in chosen:
        c = np.broadcast_to(prism.pieces[i].optic_axis, az.shape + (3,))
        hinge = cross(np.broadcast_to(z, c.shape), c)
        length = norm(hinge)[..., None]
        # An axis along z has no tilt direction of its own: tilt it toward +x (about y).
        hinge = np.where(length > 1e-12, hinge / np.where(length > 1e-12, length, 1.0),
                         np.array([0.0, 1.0, 0.0]))
        c = _rotate(c, hinge, tilt)
        c = _rotate(c, np.broadcast_to(z, c.shape), az)
        pieces[i] = replace(pieces[i], optic_axis=c)
    return replace(prism, pieces=pieces)


@dataclass(frozen=True, slots=True)
class ExtinctionResult:
    """Polarisation purity of the main beams and the power of leakage branches.

    Attributes
    ----------
    labels : tuple of str
        All transmitted beams of the (perturbed) prism.
    main_labels : tuple of str
        Main beams (from the nominal prism).
    power : dict[str, ndarray]
        Transmitted power of every beam (fraction of the input).
    wanted_jones : dict[str, ndarray, complex, shape (..., 2)]
        Wanted exit polarisation of each main beam (unit Jones vector, exit basis).
    wanted_power, other_power : dict[str, ndarray]
        Power along the wanted and the orthogonal polarisation in the direction of each main
        beam, including coinciding beams.
    beam_purity_ratio : dict[str, ndarray]
        Polarisation purity of the beam as it leaves: wanted_power / other_power (inf where
        other_power is 0). Stays inf when an axis error only turns the analysing direction.
    input_jones : dict[str, ndarray, complex, shape (..., 2)]
        Input polarisation each main beam passes best in the nominal prism (input basis).
    analyser_extinction_ratio : dict[str, ndarray]
        The prism read as an analyser in the nominal frame: power at the main beam's place
        for `input_jones` over that for the orthogonal input (inf where the latter is 0).
        Independent of the `polarisation` argument. This is the figure to compare with a
        polariser's specified extinction ratio.
    lost : dict[str, ndarray of int]
        Per ray, why each main beam does not exist there in the nominal or the assessed prism
        (0: it exists); every figure of that beam is NaN there.
    coinciding : dict[str, tuple of str]
        For each main beam, the other beams found overlapping it on some ray.
    leakage_power : dict[str, ndarray]
        Power of each beam that is not a main beam.
    leakage_fraction : ndarray
        Σ leakage_power / Σ power.
    """

    labels: tuple
    main_labels: tuple
    power: dict
    wanted_jones: dict
    wanted_power: dict
    other_power: dict
    beam_purity_ratio: dict
    input_jones: dict
    analyser_extinction_ratio: dict
    lost: dict
    coinciding: dict
    leakage_power: dict
    leakage_fraction: object


def _extinction_size(prism, nominal, wavelength, in_plane, out_of_plane, offset, polarisation):
    """Ray shape of an extinction analysis and its estimated peak memory (bytes).

    Up to seven traced polarisation states are alive at once with a separate nominal prism
    (nominal unpolarised pair, assessed, assessed unpolarised pair, and the single-polarisation
    traces behind the two sets of Jones matrices); for unpolarised input the assessed pair
    (x and y input side by side) is the Jones traces too, so two states suffice. A nominal
    prism without sample axes traces only the unperturbed rays and is not counted.
    """
    shapes = [wavelength.shape, in_plane.shape, out_of_plane.shape, offset.shape[:-1],
              prism_sample_shape(prism)]
    if nominal is not None:
        shapes.append(prism_sample_shape(nominal))
    if not isinstance(polarisation, str):
        shapes.append(polarisation.shape[:-1])
    shape = np.broadcast_shapes(*shapes)
    per = trace_bytes_per_ray(prism)
    own = nominal is None or prism_sample_shape(nominal) == ()
    # The unpolarised pair doubles as the Jones traces when nothing is pruned.
    states = 2 if own and isinstance(polarisation, str) else (5 if own else 7)
    return shape, int(np.prod(shape)) * per * states, per * states


def _join(parts, shape):
    """One ExtinctionResult from the results of consecutive chunks of the flattened rays."""
    joined = {}
    for f in fields(ExtinctionResult):
        values = [getattr(part, f.name) for part in parts]
        if f.name == "main_labels":
            joined[f.name] = values[0]
        elif f.name == "labels":
            joined[f.name] = tuple(dict.fromkeys(label for v in values for label in v))
        elif f.name == "coinciding":
            keys = dict.fromkeys(k for v in values for k in v)
            joined[f.name] = {k: tuple(dict.fromkeys(m for v in values for m in v.get(k, ())))
                              for k in keys}
        elif isinstance(values[0], dict):
            joined[f.name] = {}
            for key in dict.fromkeys(k for v in values for k in v):
                pieces = []
                for part, v in zip(parts, values):
                    size = np.size(part.leakage_fraction)
                    if key in v:
                        pieces.append(np.asarray(v[key]).reshape((size,) + np.shape(v[key])[
                            np.ndim(v[key]) - _tail(f.name):]))
                    else:
                        # A branch the chunk's trace never formed carries nothing there.
                        tail = next(np.shape(w[key])[np.ndim(w[key]) - _tail(f.name):]
                                    for w in values if key in w)
                        pieces.append(np.zeros((size,) + tail))
                joined[f.name][key] = as_output(np.concatenate(pieces).reshape(
                    shape + pieces[0].shape[1:]))
        else:
            joined[f.name] = as_output(np.concatenate(
                [np.asarray(v).reshape(-1) for v in values]).reshape(shape))
    return ExtinctionResult(**joined)


def _tail(name):
    """Trailing axes of a result field that are its own (a Jones vector's 2)."""
    return 1 if name in ("wanted_jones", "input_jones") else 0


def _extinction_in_chunks(prism, nominal, wavelength, in_plane, out_of_plane, offset,
                          polarisation, shape, per_ray_bytes, options):
    """The extinction analysis over consecutive chunks of the flattened rays (and samples).

    The main beams are fixed by the first chunk (or given), so every chunk reports on the same
    beams; each chunk is an ordinary call, sized to a quarter of the memory limit.
    """
    count = int(np.prod(shape))
    sampled_nominal = nominal is not None and prism_sample_shape(nominal) != ()
    parts, main = [], options.pop("main_labels")
    for start, stop, (lam, a, b, off, pol) in memory.ray_chunks(
            shape, per_ray_bytes, wavelength, in_plane, out_of_plane, offset, polarisation):
        part = extinction(
            _flat_prism(prism, shape, start, stop), lam, a, b, offset_mm=off, polarisation=pol,
            nominal=_flat_prism(nominal, shape, start, stop) if sampled_nominal else nominal,
            main_labels=main, **options)
        if start == 0:
            # The first chunk shows how large the results are: refuse before computing them all.
            per_result = sum(np.asarray(a).nbytes for f in fields(ExtinctionResult)
                             if isinstance(v := getattr(part, f.name), dict)
                             for a in v.values() if not isinstance(a, tuple)) / (stop - start)
            memory.check_fits("extinction", per_result * count, f"{count} rays × "
                              f"{per_result:.0f} bytes of results each",
                              "ask for fewer points or fewer samples")
        main = part.main_labels
        parts.append(part)
    return _join(parts, shape)


def _principal_polarisation(beam, pair):
    """Unit principal eigenvector of Σ J Jᴴ over the input pair, shape (..., 2)."""
    j = beam.jones()
    coherency = j[..., :, None] * j[..., None, :].conj()
    if pair:
        coherency = coherency.sum(axis=0)
    return np.linalg.eigh(coherency)[1][..., :, -1]


def _power(matrix, jones):
    """|M J|² for Jones matrices (..., 2, 2) and vectors (..., 2)."""
    out = (matrix * jones[..., None, :]).sum(axis=-1)
    return (np.abs(out) ** 2).sum(axis=-1)


def extinction(prism, wavelength_um, in_plane_deg=0.0, out_of_plane_deg=0.0, *,
               offset_mm=(0.0, 0.0), polarisation="unpolarised", nominal=None,
               coincidence_deg=0.05, coincidence_mm=0.5, main_labels=None, power_threshold=0.0):
    """Beam purity and analyser extinction ratio of each main beam, and leakage into other
    branches.

    Parameters
    ----------
    prism : Prism
        The prism to assess, e.g. a :func:`perturb_axes` copy.
    wavelength_um : array_like
        Vacuum wavelengths (µm).
    in_plane_deg, out_of_plane_deg : array_like
        Input direction (degrees).
    offset_mm : array_like, shape (..., 2)
        Entry point (x, y) on the entrance face (mm).
    polarisation : array_like, shape (..., 2), or "unpolarised"
        Input state of the prism being assessed.
    nominal : Prism, optional
        The ideally aligned prism that defines the main beams and their wanted polarisations;
        default `prism` itself.
    coincidence_deg, coincidence_mm : float
        A beam overlaps a main beam when their exit directions differ by at most
        `coincidence_deg` and their exit rays pass within `coincidence_mm` of each other
        (measured across the beams): of the order of the beam divergence and the beam radius.
        With the 0.5 mm default a displacer's beams (about 1 mm apart) stay separate, while a
        Glan prism's leak (tens of µm aside) and a Savart plate's sheared beams overlap, as
        they do for millimetre beams.
    main_labels : str or sequence of str, optional
        The main beams; default chosen from the nominal prism's powers (see above).
    power_threshold : float
        Passed to the tracer; the default 0 keeps every branch, however weak, so that tiny
        leakage is reported rather than pruned.

    Returns
    -------
    ExtinctionResult

    Raises
    ------
    ValueError
        In one line, for a `prism` or `nominal` that is not a
        :class:`~prismdesign.prisms.Prism`, text, booleans, complex or non-finite numbers,
        wavelengths <= 0, angles outside (−90, 90), negative tolerances or threshold, a zero or
        malformed Jones vector, inputs (or either prism's optic-axis samples) that do not
        broadcast together, unknown `main_labels`, or traces that would not fit in
        :data:`~prismdesign.analysis.memory.MEMORY_LIMIT_BYTES` (refused with the estimate).
    """
    check_prism(prism)
    if nominal is not None:
        check_prism(nominal, "nominal")
    polarisation, input_power = check_polarisation(polarisation)
    wavelength, in_plane, out_of_plane, offset_mm = check_ray_inputs(
        wavelength_um, in_plane_deg, out_of_plane_deg, offset_mm,
        *(() if isinstance(polarisation, str) else (("polarisation", polarisation.shape, 1),)),
        prism=prism)
    if nominal is not None:
        check_ray_inputs(wavelength, in_plane, out_of_plane, offset_mm, prism=nominal)
    shape, estimate, per_ray = _extinction_size(prism, nominal, wavelength, in_plane,
                                                out_of_plane, offset_mm, polarisation)
    if estimate > memory.MEMORY_LIMIT_BYTES // 4 and np.prod(shape) > 1:
        # Stream over chunks of rays: peak memory is bounded by a chunk, not by the samples.
        return _extinction_in_chunks(
            prism, nominal, wavelength, in_plane, out_of_plane, offset_mm, polarisation, shape,
            per_ray, dict(coincidence_deg=coincidence_deg, coincidence_mm=coincidence_mm,
                          main_labels=main_labels, power_threshold=power_threshold))
    coincidence_deg = check_non_negative("coincidence_deg", coincidence_deg,
                                         "a finite angle in degrees >= 0")
    coincidence_mm = check_non_negative("coincidence_mm", coincidence_mm,
                                        "a finite distance in mm >= 0")
    power_threshold = check_non_negative("power_threshold", power_threshold,
                                         "a finite power fraction >= 0")
    args = (wavelength, in_plane, out_of_plane)
    reference = trace_output_beams(
        prism if nominal is None else nominal, *args, offset_mm=offset_mm,
        polarisation="unpolarised", power_threshold=power_threshold)
    ref_beams = {label: strip_pair(b, True) for label, b in reference.beams.items()}
    ref_lost = {label: lost_codes(b.flags, b.power) for label, b in ref_beams.items()}
    if main_labels is None:
        main = rank_beams({label: b.power for label, b in ref_beams.items()}, lost=ref_lost)
    else:
        main = check_main_labels(main_labels, ref_beams)
    if nominal is None and isinstance(polarisation, str):
        result = reference      # the same unpolarised trace of the same prism
    else:
        result = trace_output_beams(prism, *args, offset_mm=offset_mm,
                                    polarisation=polarisation, power_threshold=power_threshold)
    pair = result.incoherent_pair
    beams = result.beams
    geometry = {label: strip_pair(b, pair) for label, b in beams.items()}
    power = {label: g.power / input_power for label, g in geometry.items()}
    shape = np.broadcast_shapes(*(np.shape(p) for p in power.values()),
                                *(np.shape(b.power) for b in ref_beams.values()))
    # Lost in the assessed prism: judged by the power it carries for unpolarised light, so
    # that a beam the chosen input polarisation does not feed still counts as existing.
    if nominal is None:
        unpolarised = reference
    elif pair:
        unpolarised = result
    else:
        unpolarised = trace_output_beams(prism, *args, offset_mm=offset_mm,
                                         polarisation="unpolarised",
                                         power_threshold=power_threshold)
    assessed_lost = {label: lost_codes(strip_pair(b, True).flags, strip_pair(b, True).power)
                     for label, b in unpolarised.beams.items()}
    if pair and power_threshold == 0.0:
        # The unpolarised trace is the x and the y input traced side by side (each at half
        # power, amplitude 1/√2) without pruning: its two members are the Jones columns.
        prism_jones = {label: np.sqrt(2.0) * np.stack(list(b.jones()), axis=-1)
                       for label, b in beams.items()}
    else:
        prism_jones = jones_columns(prism, *args, offset_mm)[1]
    # A prism that is its own nominal needs its Jones matrices once.
    nominal_jones = (prism_jones if nominal is None
                     else jones_columns(nominal, *args, offset_mm)[1])
    wanted_jones, wanted, other, ratio, coinciding = {}, {}, {}, {}, {}
    input_jones, input_ratio, lost = {}, {}, {}
    for label in main:
        lost[label] = np.broadcast_to(
            ref_lost[label] | assessed_lost.get(label, BELOW_POWER_FLOOR), shape)
        w = _principal_polarisation(reference.beams[label], True)
        w = np.broadcast_to(w, shape + (2,))
        w_perp = np.stack([-w[..., 1].conj(), w[..., 0].conj()], axis=-1)
        direction = ref_beams[label].exit_direction
        start = ref_beams[label].exit_position_mm
        wanted[label], other[label], coinciding[label] = np.zeros(shape), np.zeros(shape), ()
        v = np.linalg.svd(nominal_jones[label])[2][..., 0, :].conj()
        v = np.broadcast_to(v, shape + (2,))
        v_perp = np.stack([-v[..., 1].conj(), v[..., 0].conj()], axis=-1)
        passed, blocked = np.zeros(shape), np.zeros(shape)
        for name, beam in beams.items():
            other_direction = geometry[name].exit_direction
            sideways_mm = norm(cross(normalize(direction + other_direction),
                                     geometry[name].exit_position_mm - start))
            near = ((angle_between_deg(other_direction, direction) <= coincidence_deg)
                    & (sideways_mm <= coincidence_mm)
                    & (assessed_lost.get(name, BELOW_POWER_FLOOR) == 0))
            if not np.any(near):
                continue
            if name != label:
                coinciding[label] += (name,)
            j = beam.jones()
            along = np.abs((w.conj() * j).sum(axis=-1)) ** 2
            across = np.abs((w_perp.conj() * j).sum(axis=-1)) ** 2
            if pair:
                along, across = along.sum(axis=0), across.sum(axis=0)
            wanted[label] = wanted[label] + np.where(near, along, 0.0) / input_power
            other[label] = other[label] + np.where(near, across, 0.0) / input_power
            if name in prism_jones:
                m = prism_jones[name]
                passed = passed + np.where(near, _power(m, v), 0.0)
                blocked = blocked + np.where(near, _power(m, v_perp), 0.0)
        gone = lost[label] != 0
        with np.errstate(divide="ignore", invalid="ignore"):
            ratio[label] = as_output(np.where(
                gone, np.nan, np.where(other[label] > 0, wanted[label] / other[label], np.inf)))
            input_ratio[label] = as_output(np.where(
                gone, np.nan, np.where(blocked > 0, passed / blocked, np.inf)))
        wanted[label] = np.where(gone, np.nan, wanted[label])
        other[label] = np.where(gone, np.nan, other[label])
        wanted_jones[label] = np.where(gone[..., None], np.nan, w)
        input_jones[label] = np.where(gone[..., None], np.nan, v)
    leakage = {label: p for label, p in power.items() if label not in main}
    total = sum(power.values(), np.zeros(shape))
    leak_total = sum(leakage.values(), np.zeros(shape))
    with np.errstate(divide="ignore", invalid="ignore"):
        fraction = np.where(total > 0, leak_total / total, 0.0)
    return ExtinctionResult(
        labels=tuple(beams), main_labels=main,
        power={label: as_output(p) for label, p in power.items()}, wanted_jones=wanted_jones,
        wanted_power={k: as_output(v) for k, v in wanted.items()},
        other_power={k: as_output(v) for k, v in other.items()}, beam_purity_ratio=ratio,
        input_jones=input_jones, analyser_extinction_ratio=input_ratio,
        lost={k: as_output(v) for k, v in lost.items()},
        coinciding=coinciding, leakage_power={k: as_output(v) for k, v in leakage.items()},
        leakage_fraction=as_output(fraction))
