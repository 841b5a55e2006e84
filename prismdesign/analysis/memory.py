"""How much memory a trace needs, and work on many rays in chunks that fit.

An exact trace keeps, for every ray and every branch, the points, wave normals, ray directions
and indices at each surface plus the exit field, power, path and flags; the interface solver
adds working arrays. :func:`trace_bytes_per_ray` bounds this from the prism's layout (surfaces,
crystals, so the number of branches) before anything is allocated. Analyses that reduce each
ray to a few numbers (split, separation, transmission, requirement margins, OPD, shear) run
through :func:`map_rays`, which traces in chunks of the flattened ray axis whenever the whole
trace would exceed a quarter of :data:`MEMORY_LIMIT_BYTES`; results whose own arrays would
exceed the limit, and analyses that keep whole traces (Jones matrices, extinction), are refused
with the estimate in the message. Change the limit by assigning to
``prismdesign.analysis.memory.MEMORY_LIMIT_BYTES``; it is read at each call.
"""
import math

import numpy as np

from ._common import prism_sample_shape
from .beam_groups import has_active_piece, output_beam_trace

__all__ = ["MEMORY_LIMIT_BYTES", "trace_bytes_per_ray", "format_bytes", "check_fits",
           "map_rays"]

#: Largest memory (bytes) an analysis may plan to use: 2 GiB. Traces above a quarter of it are
#: done in chunks; results (or unchunked traces) above it are refused before allocating.
MEMORY_LIMIT_BYTES = 2 * 2 ** 30

# Bytes per ray and branch for one stored point (position, wave normal, ray direction: 3
# floats each; index: 1 float), for a branch's exit state (complex field: 3; power, path,
# flags, wavelength: 1 each) and for a working branch between surfaces (new point, normal, ray,
# wave vector, complex field, power, path, flags). Measured against tracemalloc peaks in
# tests/test_analysis_memory.py, where the estimate must stay an upper bound.
_POINT_BYTES = 80
_EXIT_BYTES = 80
_WORKING_BYTES = 176
# Interface-solver outputs alive while one branch is processed (coefficients, powers, fields,
# ray directions, wave vectors of four waves) and the flattened inputs.
_FIXED_BYTES = 2000
_MEDIUM_BYTES = 40


#: Factor on the estimate covering both interface kernels (numpy and compiled).
_KERNEL_MARGIN = 1.25


def trace_bytes_per_ray(prism, *, keep_reflections=False):
    """Upper estimate of the peak memory of tracing one ray (one input polarisation) (bytes).

    Every surface into a crystal may double the branches (no pruning assumed); each branch
    stores its points at every surface met; reflected branches, when kept, store theirs.

    Parameters
    ----------
    prism : Prism
    keep_reflections : bool
        As for :meth:`~prismdesign.prisms.Prism.trace`.

    Returns
    -------
    int
        Bytes per ray; double it for unpolarised input (an incoherent pair per ray).
    """
    crystal = [False] + [p.is_crystal for p in prism.pieces] + [False]
    surfaces = len(prism.boundaries)
    branches, working, reflected = 1, 0, 0
    for i in range(surfaces):
        if keep_reflections:
            reflected += (branches * (2 if crystal[i] else 1)
                          * ((i + 2) * _POINT_BYTES + _EXIT_BYTES + _WORKING_BYTES))
        branches *= 2 if crystal[i + 1] else 1
        working += branches * _WORKING_BYTES
        if prism.boundaries[i].layer is not None:
            # An incoherent layer is solved face by face (several interface solves and the
            # sum of the bounces held at once): allow four more solves' working arrays.
            working += 4 * branches * _WORKING_BYTES
    stored = branches * ((surfaces + 1) * _POINT_BYTES + _EXIT_BYTES)
    total = stored + working + reflected + _FIXED_BYTES + _MEDIUM_BYTES * (surfaces + 1)
    # The compiled interface kernel holds its own output buffers beside numpy's (measured:
    # up to ~10 % more at the peak); a margin keeps the estimate an upper bound on both paths.
    return int(total * _KERNEL_MARGIN)


def format_bytes(count):
    """Bytes as readable text with binary prefixes, e.g. "7.3 TiB"."""
    value = float(count)
    for unit in ("B", "KiB", "MiB", "GiB", "TiB", "PiB"):
        if value < 1024 or unit == "PiB":
            return f"{value:.3g} {unit}" if unit != "B" else f"{int(value)} B"
        value /= 1024


def check_fits(what, estimate_bytes, detail, remedy):
    """Refuse work whose estimated memory exceeds :data:`MEMORY_LIMIT_BYTES` (one-line error).

    Parameters
    ----------
    what : str
        The analysis, e.g. "field_of_view".
    estimate_bytes : float
        Estimated memory.
    detail : str
        How the estimate arises, e.g. "1000001 × 1000001 angles × 2 requirements".
    remedy : str
        What the user can do, e.g. "use fewer steps".
    """
    limit = MEMORY_LIMIT_BYTES
    if estimate_bytes > limit:
        raise ValueError(f"{what} would need about {format_bytes(estimate_bytes)} ({detail}), "
                         f"above the memory limit of {format_bytes(limit)} "
                         f"(prismdesign.analysis.memory.MEMORY_LIMIT_BYTES); {remedy}")


def _flat_prism(prism, shape, start, stop):
    """The prism with its sample arrays (optic axes, temperatures, boundary points and normals,
    thin-layer thickness and index offsets) broadcast to `shape`, flattened and sliced like the
    rays of the chunk."""
    from dataclasses import replace

    def flat(value, core=0):
        """A per-sample array sliced like the rays; a plain value unchanged."""
        if value is None or np.ndim(value) <= core:
            return value
        tail = np.shape(value)[np.ndim(value) - core:]
        return np.broadcast_to(value, shape + tail).reshape((-1,) + tail)[start:stop]

    pieces = [replace(piece, temperature_c=flat(piece.temperature_c),
                      optic_axis=flat(piece.optic_axis, 1)) for piece in prism.pieces]
    boundaries = []
    for b in prism.boundaries:
        layer = b.layer
        if layer is not None:
            layer = replace(layer, thickness_mm=flat(layer.thickness_mm),
                            index_offset=flat(layer.index_offset))
        boundaries.append(replace(b, point_mm=flat(b.point_mm, 1), normal=flat(b.normal, 1),
                                  layer=layer))
    return replace(prism, pieces=pieces, boundaries=boundaries,
                   temperature_c=flat(prism.temperature_c))


def ray_chunks(shape, per_ray_bytes, wavelength, in_plane, out_of_plane, offset,
               polarisation):
    """Consecutive slices of the flattened rays, each sized to a quarter of
    :data:`MEMORY_LIMIT_BYTES` at `per_ray_bytes` a ray.

    Yields ``(start, stop, (wavelength, in_plane, out_of_plane, offset, polarisation))``: the
    inputs broadcast to `shape`, flattened and sliced ``[start:stop]`` (offsets and Jones
    vectors keep their trailing axis of 2; a polarisation string is passed unchanged).
    """
    count = math.prod(shape)
    size = max(1, MEMORY_LIMIT_BYTES // 4 // per_ray_bytes)
    flat = [np.broadcast_to(a, shape).reshape(-1) for a in (wavelength, in_plane, out_of_plane)]
    flat_offset = np.broadcast_to(offset, shape + (2,)).reshape(-1, 2)
    pair = isinstance(polarisation, str)
    flat_pol = polarisation if pair else np.broadcast_to(polarisation, shape + (2,)).reshape(-1, 2)
    for start in range(0, count, size):
        stop = min(start + size, count)
        yield start, stop, (*(a[start:stop] for a in flat), flat_offset[start:stop],
                            flat_pol if pair else flat_pol[start:stop])


def map_rays(prism, wavelength, in_plane, out_of_plane, offset, per_ray, *, what,
             polarisation="unpolarised", fill=None, output_beams=True, **trace_options):
    """Trace the rays and reduce each one with `per_ray`, in chunks when memory requires.

    Parameters
    ----------
    prism : Prism
    wavelength, in_plane, out_of_plane : ndarray
        Checked inputs that broadcast together (and with the prism's samples).
    offset : ndarray, shape (..., 2)
    per_ray : callable
        ``per_ray(trace_result, traced_prism) -> dict`` of arrays whose leading axes are the
        ray shape (without the incoherent-pair axis), plus any trailing axes of their own;
        `traced_prism` is the prism (or the chunk's slice of its optic-axis samples) traced.
    what : str
        Name of the analysis, for the memory message.
    polarisation : str or ndarray
        As for :meth:`~prismdesign.prisms.Prism.trace` (an array broadcasts with the rays).
    fill : callable, optional
        ``fill(key) -> scalar``: value for rays of a chunk in which `per_ray` gave no entry for
        `key` (a beam the trace dropped there). Default NaN.
    output_beams : bool
        Hand `per_ray` the trace with its branches grouped into output beams
        (:mod:`prismdesign.analysis.beam_groups`; a prism without an optically active piece is
        unchanged); False gives the raw branches.
    **trace_options
        Passed to :meth:`~prismdesign.prisms.Prism.trace`.

    Returns
    -------
    dict
        The keys of `per_ray`, arrays of the full ray shape plus their trailing axes. Unchunked,
        exactly `per_ray` of one trace.
    """
    fill = fill or (lambda key: np.nan)
    if output_beams and has_active_piece(prism):
        # Keep every branch: pruning one half of an output beam (circularly polarised input
        # feeds one circular wave only) would change the beam's label with the input.
        trace_options.setdefault("power_threshold", 0.0)
        inner = per_ray

        def per_ray(result, traced_prism):
            return inner(output_beam_trace(result, traced_prism), traced_prism)
    pair = isinstance(polarisation, str)
    shapes = [np.shape(wavelength), np.shape(in_plane), np.shape(out_of_plane),
              np.shape(offset)[:-1], prism_sample_shape(prism)]
    if not pair:
        shapes.append(np.shape(polarisation)[:-1])
    shape = np.broadcast_shapes(*shapes)
    count = math.prod(shape)
    per = trace_bytes_per_ray(prism, keep_reflections=trace_options.get("keep_reflections",
                                                                        False))
    per *= 2 if pair else 1
    budget = MEMORY_LIMIT_BYTES // 4
    if count * per <= budget:
        return per_ray(prism.trace(wavelength, in_plane, out_of_plane, offset_mm=offset,
                                   polarisation=polarisation, **trace_options), prism)
    out = {}
    for start, stop, (lam, a, b, off, pol) in ray_chunks(shape, per, wavelength, in_plane,
                                                         out_of_plane, offset, polarisation):
        chunk = _flat_prism(prism, shape, start, stop)
        result = per_ray(chunk.trace(lam, a, b, offset_mm=off, polarisation=pol,
                                     **trace_options), chunk)
        if start == 0:
            # The first chunk shows how large the results are: refuse before allocating them.
            per_result = sum(np.asarray(v).nbytes for v in result.values()) / (stop - start)
            check_fits(what, per_result * count, f"{count} rays × {per_result:.0f} bytes of "
                       f"results each", "ask for fewer points")
        for key, value in result.items():
            value = np.asarray(value)
            if key not in out:
                out[key] = np.empty((count,) + value.shape[1:], dtype=value.dtype)
                # A beam first kept in a later chunk was dropped on the earlier rays.
                out[key][:start] = fill(key)
            out[key][start:stop] = value
        for key in out.keys() - result.keys():
            out[key][start:stop] = fill(key)
    return {key: value.reshape(shape + value.shape[1:]) for key, value in out.items()}
