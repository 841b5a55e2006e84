"""Vectorised sequential tracer of polarised plane-wave rays through crystal systems.

Each ray is a plane wave with a position, a wave vector and a complex field. At each surface the
exact interface solver (:func:`~prismdesign.optics.interface.solve_interface`) splits it into the
eigenwaves of the next medium; in a crystal both modes are kept as separate branches labelled by
the mode travelled in each crystal (``"eo"``: e in the first crystal, o in the second). In an
isotropic medium the two degenerate waves recombine into one beam. Positions advance along the
ray (Poynting) direction; refraction uses the wave vector; the optical path accumulates k·Δr.

Fields are carried "power normalised": |field|² is the beam power relative to the input (power
fraction products, so beam-area changes at each refraction are included) and the phase is that
of the interface coefficients. The propagation phase is kept separately as the optical path.

A surface carrying a :class:`~prismdesign.optics.ThinLayer` is solved with the layer's
treatment (:func:`~prismdesign.optics.incoherent_layer.solve_layered_interface`): coherent film
or incoherent sum of the reflections inside the layer; beams that crossed a layer incoherently
carry the INCOHERENT_LAYER flag, and :attr:`TraceResult.layer_treatments` names each layer's
setting.
"""
import numpy as np

from .incoherent_layer import solve_layered_interface
from .interface import solve_interface
from .vectors import as_unit_vectors, dot, transverse_basis

__all__ = ["TraceFlag", "Beam", "TraceResult", "trace"]


class TraceFlag:
    """Bit flags carried per ray and beam."""

    #: The beam's mode could not propagate at a surface (total internal reflection); power 0.
    TOTAL_INTERNAL_REFLECTION = 1
    #: The ray met a surface outside its aperture (it is still traced).
    OUTSIDE_APERTURE = 2
    #: The ray did not reach the next surface (parallel to it, or the surface lies behind).
    MISSED_SURFACE = 4
    #: The boundary equations were singular (grazing incidence); power set to 0.
    SINGULAR = 8
    #: The beam crossed a thin layer in which its wave was evanescent: it tunnelled through
    #: (frustrated total internal reflection); its power is the tunnelled fraction.
    FRUSTRATED_TOTAL_REFLECTION = 16
    #: The beam crossed (or was reflected by) a thin layer whose multiple reflections were added
    #: in power, not amplitude (see :class:`~prismdesign.optics.ThinLayer`): its power is the
    #: incoherent sum, its phase that of the single pass.
    INCOHERENT_LAYER = 32
    #: The bits above that say how a beam was computed, not that something went wrong: a beam
    #: with ``flags & ~TraceFlag.INFORMATIONAL == 0`` met no fault.
    INFORMATIONAL = FRUSTRATED_TOTAL_REFLECTION | INCOHERENT_LAYER


class _History:
    """Per-point arrays of a branch (flat ray axis), stacked only when the history is read.

    Most analyses read exit values alone; stacking every branch's full history at the end of
    each trace cost about a sixth of a prism trace.
    """

    __slots__ = ("items", "shape")

    def __init__(self, items, shape):
        self.items, self.shape = items, shape

    def last(self):
        # Sibling branches share their points: hand out a read-only view, not the array.
        view = self.items[-1].reshape(self.shape)
        view.flags.writeable = False
        return view

    def stacked(self):
        return np.stack([item.reshape(self.shape) for item in self.items])


def _last(value):
    return value.last() if isinstance(value, _History) else value[-1]


def _history_property(name):
    """A Beam attribute of shape (n_points, ...) kept as a _History until first read."""
    slot = "_" + name

    def get(self):
        value = getattr(self, slot)
        if isinstance(value, _History):
            value = value.stacked()
            setattr(self, slot, value)
        return value

    def set(self, value):
        setattr(self, slot, value)

    return property(get, set)


class Beam:
    """One branch of a trace: a labelled beam with its full history.

    Attributes
    ----------
    label : str
        Mode in each crystal passed, e.g. ``"eo"``; reflected branches end in ``"|R<i><mode>"``
        (reflected at surface i into mode o/e, or ``s`` in an isotropic medium).
    positions_mm : ndarray, shape (n_points, ..., 3)
        Start position and the point on each surface met.
    wave_normals, ray_directions : ndarray, shape (n_points, ..., 3)
        Unit wave normal and ray direction leaving each of those points.
    indices : ndarray, shape (n_points, ...)
        Phase index (|k|) on each segment.
    field : complex ndarray, shape (..., 3)
        Power-normalised electric field after the last surface.
    power : ndarray, shape (...)
        Power relative to the input ray.
    optical_path_mm : ndarray, shape (...)
        Σ k·Δr from the start to the last surface (mm).
    flags : ndarray of int, shape (...)
        :class:`TraceFlag` bits.
    wavelength_um : ndarray, shape (...)
    """

    __slots__ = ("label", "_positions_mm", "_wave_normals", "_ray_directions", "_indices",
                 "field", "power", "optical_path_mm", "flags", "wavelength_um", "reflected")

    def __init__(self, **values):
        for key, value in values.items():
            setattr(self, key, value)

    positions_mm = _history_property("positions_mm")
    wave_normals = _history_property("wave_normals")
    ray_directions = _history_property("ray_directions")
    indices = _history_property("indices")

    @property
    def exit_position_mm(self):
        """Point on the last surface met, shape (..., 3)."""
        return _last(self._positions_mm)

    @property
    def exit_direction(self):
        """Ray direction after the last surface, shape (..., 3)."""
        return _last(self._ray_directions)

    @property
    def exit_wave_normal(self):
        return _last(self._wave_normals)

    def deviation_deg(self):
        """In-plane and out-of-plane deviation of the exit ray from z, in degrees.

        In-plane: atan2(d_x, d_z), positive toward +x; out-of-plane: asin(d_y).
        """
        d = self.exit_direction
        return (np.rad2deg(np.arctan2(d[..., 0], d[..., 2])),
                np.rad2deg(np.arcsin(np.clip(d[..., 1], -1.0, 1.0))))

    def jones(self, include_path_phase=False):
        """Exit field as a Jones vector in the transverse basis of the exit wave normal.

        The basis is x' = normalize(ŷ × d), y' = d × x' (x̂, ŷ for d = ẑ); |J|² is the power.
        Only meaningful after an isotropic exit medium.

        Parameters
        ----------
        include_path_phase : bool
            Multiply by exp(i 2π L/λ) with L the optical path (mm) to the last surface.
        """
        x_p, y_p = transverse_basis(self.exit_wave_normal)
        j = np.stack([dot(self.field, x_p), dot(self.field, y_p)], axis=-1)
        if include_path_phase:
            j = j * np.exp(2j * np.pi * self.optical_path_mm * 1e3 / self.wavelength_um)[..., None]
        return j

    def at_plane(self, point_mm, normal):
        """Continue the exit rays in a straight line to a plane.

        Parameters
        ----------
        point_mm, normal : array_like, shape (3,)
            A point on the plane and its normal.

        Returns
        -------
        positions_mm : ndarray, shape (..., 3)
        optical_path_mm : ndarray, shape (...)
            Total optical path including the extra segment.
        """
        n = as_unit_vectors(normal, "plane normal")
        p = np.asarray(point_mm, dtype=float)
        d = self.exit_direction
        r = self.exit_position_mm
        denom = dot(d, n)
        t = dot(p - r, n) / np.where(denom != 0, denom, np.nan)
        extra = t * _last(self._indices) * dot(self.exit_wave_normal, d)
        return r + t[..., None] * d, self.optical_path_mm + extra

    @property
    def total_internal_reflection(self):
        return (self.flags & TraceFlag.TOTAL_INTERNAL_REFLECTION) != 0


class TraceResult:
    """Beams leaving a system (and, optionally, reflected branches).

    Attributes
    ----------
    beams : dict[str, Beam]
        Transmitted branches by label.
    reflected : dict[str, Beam]
        First reflections at each surface (ghosts), when asked for.
    incoherent_pair : bool
        True for unpolarised input: every array has a leading axis of length 2 (x and y input
        polarisation, half the power each) over which powers add incoherently.
    layer_treatments : dict[str, str]
        For each surface carrying a thin layer (by surface label, or "surface <i>"), how its
        multiple reflections were added (:attr:`ThinLayer.description`); per ray, the
        INCOHERENT_LAYER flag of a beam says where the incoherent sum was actually used.
    """

    __slots__ = ("beams", "reflected", "incoherent_pair", "layer_treatments")

    def __init__(self, beams, reflected, incoherent_pair, layer_treatments=None):
        self.beams = beams
        self.reflected = reflected
        self.incoherent_pair = incoherent_pair
        self.layer_treatments = dict(layer_treatments or {})

    def __getitem__(self, label):
        return self.beams[label]

    def labels(self):
        return list(self.beams)

    def power(self, label):
        """Power of a beam relative to the input, summed over the incoherent pair if any."""
        p = self.beams[label].power
        return p.sum(axis=0) if self.incoherent_pair else p


def _axis_array(medium, shape):
    """Optic axis of a medium broadcast to the bundle shape and flattened (z if isotropic).

    Axes may carry leading sample axes (Monte Carlo) that broadcast against the rays.
    """
    # A biaxial medium carries its orientation in its indices (crystal_axes), not here.
    axis = (medium.optic_axis if medium.is_crystal and medium.optic_axis is not None
            else np.array([0.0, 0.0, 1.0]))
    return np.broadcast_to(axis, tuple(shape) + (3,)).reshape(-1, 3)


def _flat_vectors(vectors, shape):
    """3-vectors (3,) or with leading sample axes, broadcast to the bundle shape and flattened;
    a single vector stays (3,) (cheaper, and broadcasts the same)."""
    vectors = np.asarray(vectors, dtype=float)
    if vectors.ndim == 1:
        return vectors
    return np.broadcast_to(vectors, tuple(shape) + (3,)).reshape(-1, 3)


class _FlatSurface:
    """A surface's point and normal flattened like the rays (for intersection and apertures)."""

    __slots__ = ("point_mm", "normal", "aperture")

    def __init__(self, surface, shape):
        self.point_mm = _flat_vectors(surface.point_mm, shape)
        self.normal = _flat_vectors(surface.normal, shape)
        self.aperture = surface.aperture


def _medium_indices(medium, wavelength, shape):
    """(n_o, n_e) of a medium on the flat rays; per-sample temperatures flattened like them."""
    t = medium.temperature_c
    if t is None or np.ndim(t) == 0:
        return medium.indices(wavelength)
    return medium.indices(wavelength, np.broadcast_to(t, tuple(shape)).reshape(-1))


class _Branch:
    """Working state of one branch during a trace (flat ray axis)."""

    __slots__ = ("label", "points", "normals", "rays", "indices", "k", "field", "power", "path", "flags")

    def __init__(self, **values):
        for key, value in values.items():
            setattr(self, key, value)

    def child(self, **changes):
        values = {key: getattr(self, key) for key in self.__slots__}
        values.update(changes)
        return _Branch(**values)


def _intersect(branch, surface):
    """Move a branch to a plane along its ray direction; returns the new branch state.

    `surface` is a :class:`_FlatSurface` (point and normal flattened like the rays)."""
    s = branch.rays[-1]
    r = branch.points[-1]
    denom = dot(s, surface.normal)
    t = dot(surface.point_mm - r, surface.normal) / np.where(denom != 0, denom, 1.0)
    missed = (denom == 0) | (t < -1e-9)
    t = np.where(missed, 0.0, t)
    new_point = r + t[..., None] * s
    flags = branch.flags | np.where(missed, TraceFlag.MISSED_SURFACE, 0)
    if surface.aperture is not None:
        inside = surface.aperture.contains(new_point, surface)
        flags = flags | np.where(inside, 0, TraceFlag.OUTSIDE_APERTURE)
    path = branch.path + t * dot(branch.k, s)
    return new_point, path, flags


def _prepare_input(position_mm, direction, wavelength_um, polarisation, extra_shapes=()):
    """Broadcast and flatten the input bundle; returns flat arrays and the bundle shape."""
    position = np.asarray(position_mm, dtype=float)
    direction = as_unit_vectors(direction, "direction")
    wavelength = np.asarray(wavelength_um, dtype=float)
    bad = ~np.isfinite(wavelength) | (wavelength <= 0)
    if np.any(bad):
        raise ValueError(f"wavelength_um must be positive and finite (µm), got "
                         f"{float(wavelength[bad].flat[0]):g}")
    if position.ndim == 0 or position.shape[-1] != 3:
        raise ValueError(f"position_mm must be 3-vectors on the last axis, got shape {position.shape}")
    pair = isinstance(polarisation, str)
    if pair:
        if polarisation.lower() not in ("unpolarised", "unpolarized"):
            raise ValueError(f"polarisation must be a Jones vector (2 complex numbers) or "
                             f"'unpolarised', got {polarisation!r}")
        jones = np.array([[1.0, 0.0], [0.0, 1.0]], dtype=complex).reshape((2,) + (1,) * 0 + (2,))
        jones = jones * np.sqrt(0.5)
    else:
        jones = np.asarray(polarisation, dtype=complex)
        if jones.ndim == 0 or jones.shape[-1] != 2:
            raise ValueError(f"polarisation must be Jones vectors (last axis 2) or 'unpolarised', "
                             f"got shape {jones.shape}")
        if np.any((np.abs(jones) ** 2).sum(axis=-1) == 0):
            raise ValueError("polarisation Jones vectors must be non-zero")
    shape = np.broadcast_shapes(position.shape[:-1], direction.shape[:-1], wavelength.shape,
                                *extra_shapes)
    if pair:
        jones = jones.reshape((2,) + (1,) * len(shape) + (2,))
        shape = (2,) + shape
    else:
        shape = np.broadcast_shapes(shape, jones.shape[:-1])
    flat = lambda a, tail: np.broadcast_to(a, shape + tail).reshape((-1,) + tail)  # noqa: E731
    return (flat(position, (3,)), flat(direction, (3,)), flat(wavelength, ()), flat(jones, (2,)),
            shape, pair)


def _finish(branch, shape, wavelength):
    """Convert a flat working branch to a public Beam of the bundle shape."""
    def reshape(a, tail):
        return np.asarray(a).reshape(shape + tail)
    return Beam(label=branch.label,
                positions_mm=_History(branch.points, shape + (3,)),
                wave_normals=_History(branch.normals, shape + (3,)),
                ray_directions=_History(branch.rays, shape + (3,)),
                indices=_History(branch.indices, shape),
                field=reshape(branch.field, (3,)), power=reshape(branch.power, ()),
                optical_path_mm=reshape(branch.path, ()), flags=reshape(branch.flags, ()),
                wavelength_um=reshape(wavelength, ()), reflected=None)


def trace(system, position_mm, direction, wavelength_um, polarisation=(1.0, 0.0), *,
          keep_reflections=False, power_threshold=1e-12):
    """Trace polarised rays through a sequential system, keeping every branch.

    Parameters
    ----------
    system : SequentialSystem
    position_mm : array_like, shape (..., 3)
        Start points in the first medium (mm).
    direction : array_like, shape (..., 3)
        Wave-normal (= ray) directions in the first, isotropic, medium.
    wavelength_um : array_like, shape (...)
        Vacuum wavelengths in µm.
    polarisation : array_like, shape (..., 2) or "unpolarised"
        Jones vector in the transverse basis of `direction` (see :meth:`Beam.jones`); its
        squared norm is the input power. "unpolarised" traces an incoherent pair.
    keep_reflections : bool
        Also record the first reflected branch at each surface (ghosts), not traced further.
    power_threshold : float
        Branches whose power stays below this fraction of the ray's input power, on every ray,
        are pruned (0 keeps every branch, including totally reflected ones).

    Returns
    -------
    TraceResult
        Arrays carry the broadcast bundle shape (with a leading 2 for unpolarised input).
    """
    crystals = [m for m in system.media if m.is_crystal]
    crystals += [s.reflect_from for s in system.surfaces
                 if s.reflect_from is not None and s.reflect_from.is_crystal]
    # Leading sample axes of axes, temperatures, surface points and normals (perturbed prisms)
    # broadcast against the rays.
    extra = [np.shape(m.optic_axis)[:-1] for m in crystals]
    extra += [np.shape(m.temperature_c) for m in system.media]
    extra += [np.shape(v)[:-1] for s in system.surfaces for v in (s.point_mm, s.normal)]
    extra += [np.shape(v) for s in system.surfaces if s.layer is not None
              for v in (s.layer.thickness_mm, s.layer.index_offset)]
    position, direction, wavelength, jones, shape, pair = _prepare_input(
        position_mm, direction, wavelength_um, polarisation, extra)
    media_indices = [_medium_indices(m, wavelength, shape) for m in system.media]
    axes = [_axis_array(m, shape) for m in system.media]
    n0 = media_indices[0][0]
    x_p, y_p = transverse_basis(direction)
    field = jones[:, :1] * x_p + jones[:, 1:] * y_p
    # Pruning compares each ray's branch power with its own input power, so the result does not
    # depend on the scale of the Jones vectors.
    input_power = (np.abs(jones) ** 2).sum(axis=-1)
    start = _Branch(label="", points=[position], normals=[direction], rays=[direction],
                    indices=[n0], k=direction * n0[:, None], field=field,
                    power=(np.abs(jones) ** 2).sum(axis=-1), path=np.zeros(wavelength.size),
                    flags=np.zeros(wavelength.size, dtype=np.int64))
    branches = [start]
    reflected = {}
    layer_treatments = {}
    spare = None               # the previous solve's outputs, overwritten by the next solve
    for i, surface in enumerate(system.surfaces):
        before, after = system.media[i], system.media[i + 1]
        layer = thin = None
        if surface.layer is not None:
            n_layer, n_layer_e = surface.layer.material.indices(wavelength)
            if np.any(n_layer != n_layer_e):
                raise ValueError(f"thin layer at surface {i} must be isotropic")
            thin = surface.layer.flat_over(shape)  # per-sample thickness / index: one per ray
            n_layer = n_layer + thin.index_offset
            layer = (n_layer, wavelength, thin.thickness_mm)
            layer_treatments[surface.label or f"surface {i}"] = surface.layer.description
        mirror = surface.reflect_from is not None
        flat_surface = _FlatSurface(surface, shape)
        if mirror:
            far_indices = _medium_indices(surface.reflect_from, wavelength, shape)
            far_axis = _axis_array(surface.reflect_from, shape)
        else:
            far_indices, far_axis = media_indices[i + 1], axes[i + 1]
        new_branches = []
        for branch in branches:
            point, path, flags = _intersect(branch, flat_surface)
            if layer is None:
                res = solve_interface(branch.k, branch.field, flat_surface.normal,
                                      media_indices[i], axes[i], far_indices, far_axis,
                                      out=spare)
            else:
                res, incoherent = solve_layered_interface(
                    branch.k, branch.field, flat_surface.normal, media_indices[i], axes[i],
                    far_indices, far_axis, thin, layer[0], wavelength)
                flags = flags | np.where(incoherent, TraceFlag.INCOHERENT_LAYER, 0)
            flags = flags | np.where(res.singular, TraceFlag.SINGULAR, 0)
            tunnelled = 0
            if layer is not None and not mirror:
                k_n = dot(branch.k, flat_surface.normal)
                tunnelled = np.where(dot(branch.k, branch.k) - k_n * k_n > layer[0] ** 2,
                                     TraceFlag.FRUSTRATED_TOTAL_REFLECTION, 0)
            powers = {}

            def wave_power(j):
                # Power of wave j (zero where singular), formed only for the waves looked at.
                if j not in powers:
                    powers[j] = np.where(res.singular, 0.0, res.power_fraction[:, j] * branch.power)
                return powers[j]

            def amplitude(j):
                # Power-normalised amplitude: the coefficient's phase with the wave's power as
                # squared modulus (exp(i arg c) rather than c/|c|, which overflows for tiny c).
                a = np.exp(1j * np.angle(res.coefficient[:, j])) * np.sqrt(wave_power(j))
                return np.where(res.singular, 0.0, a)
            if mirror:
                outgoing = [("t", (2, 3), before)]
            else:
                outgoing = [("t", (0, 1), after)] + ([("r", (2, 3), before)] if keep_reflections else [])
            for side, modes, medium in outgoing:
                if medium.is_crystal:
                    groups = [(label, (j,)) for label, j in zip(medium.mode_letters, modes)]
                else:
                    groups = [("s" if side == "r" else "", modes)]
                for mode_label, group in groups:
                    j0 = group[0]
                    power = sum(wave_power(j) for j in group)
                    if not np.any(power >= power_threshold * input_power):
                        continue
                    field_out = sum(amplitude(j)[:, None] * res.e_field[:, j] for j in group)
                    dead = np.all(res.evanescent[:, list(group)], axis=-1) | res.singular
                    k_new = np.where(dead[:, None], branch.k, res.propagating_wave_vector(j0))
                    s_new = np.where(dead[:, None], branch.rays[-1], res.ray_direction[:, j0])
                    index = np.sqrt(dot(k_new, k_new))
                    child = branch.child(
                        points=branch.points + [point], normals=branch.normals + [k_new / index[:, None]],
                        rays=branch.rays + [s_new], indices=branch.indices + [index], k=k_new,
                        field=field_out, power=power, path=path,
                        flags=flags | np.where(dead & ~res.singular, TraceFlag.TOTAL_INTERNAL_REFLECTION, 0))
                    if side == "t":
                        child.flags = child.flags | tunnelled
                        child.label = branch.label + mode_label
                        new_branches.append(child)
                    else:
                        child.label = f"{branch.label}|R{i}{mode_label}"
                        reflected[child.label] = _finish(child, shape, wavelength)
            spare = res        # children hold copies only: its buffers serve the next solve
        branches = new_branches
    beams = {b.label or "-": _finish(b, shape, wavelength) for b in branches}
    return TraceResult(beams, reflected, pair, layer_treatments)
