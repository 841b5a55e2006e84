"""Exact plane-wave solution at a plane interface between two (an)isotropic media.

Given an incident plane wave (wave vector and complex electric field) and the two media, returns
the two transmitted and two reflected eigenwaves: wave vectors (real or evanescent), ray (Poynting)
directions, unit fields E and H, complex amplitude coefficients and power fractions (normal
energy flux). Everything is batched over the leading axes.

Method: the tangential wave vector is conserved; each medium's normal components follow from its
dispersion relation (:func:`~prismdesign.optics.eigenmodes.normal_components`); continuity of
tangential E and H gives four linear equations for the four unknown amplitudes (Born & Wolf,
*Principles of Optics*, §1.5 and §15.3; Yariv & Yeh, *Optical Waves in Crystals*, §4.7). An
optional coherent thin layer at the interface enters through its transfer matrix
(:mod:`.thin_layer`).

Speed: the solve works in the local frame (û₁ along the tangential wave vector, û₂ = N̂ × û₁, N̂)
where k = (κ, 0, q) and every cross product collapses to a few products; arrays are
component-wise and contiguous, processed in cache-sized blocks, and real-valued unless a wave is
evanescent or a layer is present.

Two implementations of the same solve: the numpy code below (the readable reference) and a
compiled per-ray kernel (:mod:`.compiled_interface`, needs numba: ``pip install
"prismdesign[fast]"``), used automatically when numba is installed. :func:`set_kernel` or the
environment variable ``PRISMDESIGN_KERNEL`` (``auto``, ``numpy`` or ``compiled``, read at import)
choose one explicitly.
"""
import importlib.util
import os
import warnings

import numpy as np

from .eigenmodes import DEGENERATE_AXIS_TOLERANCE, normal_roots
from .linear4 import solve4_components
from .thin_layer import layer_transfer_matrix
from .vectors import cross

__all__ = ["InterfaceResult", "solve_interface", "MODE_ORDER", "BLOCK_SIZE", "set_kernel",
           "active_kernel", "KERNEL_VARIABLE"]

#: Order of the outgoing waves on the mode axis: transmitted o, transmitted e, reflected o,
#: reflected e. In an isotropic medium "o" is the s-wave and "e" the p-wave.
MODE_ORDER = ("to", "te", "ro", "re")

#: Rays per block: keeps the working arrays of one block inside the CPU cache.
BLOCK_SIZE = 8192

#: Environment variable naming the implementation at import: "auto" (default: compiled when
#: numba is installed), "numpy" or "compiled".
KERNEL_VARIABLE = "PRISMDESIGN_KERNEL"
_KERNELS = ("auto", "numpy", "compiled")
#: numba present? Checked without importing it (the import costs ~0.3 s; done on first use).
_NUMBA_FOUND = importlib.util.find_spec("numba") is not None
_kernel_choice = "auto"


def set_kernel(name):
    """Choose the implementation of :func:`solve_interface` for this process.

    Parameters
    ----------
    name : {"auto", "numpy", "compiled"}
        "auto" uses the compiled kernel when numba is installed and numpy otherwise; "numpy" the
        reference implementation; "compiled" the numba kernel (numba must be installed).

    Returns
    -------
    str
        The previous choice, so a caller can restore it.
    """
    global _kernel_choice
    if name not in _KERNELS:
        raise ValueError(f"kernel must be one of {', '.join(_KERNELS)}, got {name!r}")
    if name == "compiled" and not _NUMBA_FOUND:
        raise ValueError("kernel 'compiled' needs numba, which is not installed "
                         "(pip install \"prismdesign[fast]\")")
    previous, _kernel_choice = _kernel_choice, name
    return previous


def active_kernel():
    """The implementation :func:`solve_interface` uses now: "numpy" or "compiled"."""
    if _kernel_choice == "compiled" or (_kernel_choice == "auto" and _NUMBA_FOUND):
        return "compiled"
    return "numpy"


def _kernel_from_environment():
    value = os.environ.get(KERNEL_VARIABLE, "auto").strip().lower() or "auto"
    try:
        set_kernel(value)
    except ValueError as error:
        warnings.warn(f"{KERNEL_VARIABLE} ignored: {error}", RuntimeWarning, stacklevel=2)


_kernel_from_environment()


class InterfaceResult:
    """Outgoing waves of an interface solve; arrays carry a mode axis of length 4 (MODE_ORDER).

    Attributes
    ----------
    coefficient : complex ndarray, shape (..., 4)
        Amplitude of each wave's unit field produced by the incident field as given.
    power_fraction : ndarray, shape (..., 4)
        Normal energy flux of each wave over the incident normal flux.
    evanescent : bool ndarray, shape (..., 4)
        True where that mode cannot propagate (total internal reflection of the mode).
    singular : bool ndarray, shape (...)
        True where the boundary equations were singular (grazing incidence); outputs are zero.
    normal : ndarray, shape (..., 3)
        The surface normal actually used, oriented along the incident energy flow.
    normal_component : complex ndarray, shape (..., 4)
        q = k·N̂ of each wave.
    wave_vector, ray_direction, e_field, h_field : ndarray, shape (..., 4, 3)
        (wave_vector and h_field are formed on first use.)
        Global-frame wave vectors (units of k0; complex where evanescent), unit Poynting
        directions (tangential for evanescent waves), unit electric fields (hermitian norm 1)
        and H = k × E.
    """
    __slots__ = ("coefficient", "power_fraction", "evanescent", "singular", "normal",
                 "normal_component", "e_field", "ray_direction", "_tangential", "_k", "_h_field",
                 "_buffers")

    def __init__(self, **values):
        for key, value in values.items():
            setattr(self, key, value)
        self._k = None
        self._h_field = None

    @property
    def wave_vector(self):
        if self._k is None:
            self._k = (self._tangential[..., None, :]
                       + self.normal_component[..., None] * self.normal[..., None, :])
        return self._k

    def propagating_wave_vector(self, mode):
        """Real part of one wave's wave vector, shape (..., 3), without forming all four.

        Parameters
        ----------
        mode : int
            Position on the mode axis (see MODE_ORDER).
        """
        return (self._tangential
                + self.normal_component[..., mode].real[..., None] * self.normal)

    @property
    def h_field(self):
        if self._h_field is None:
            self._h_field = cross(self.wave_vector, self.e_field)
        return self._h_field

    @property
    def total_internal_reflection(self):
        """True where neither transmitted mode propagates."""
        return self.evanescent[..., 0] & self.evanescent[..., 1]


def _local_fields(q, kappa, n_o, n_e, cx, cy, cz, mode):
    """Unnormalised eigenfields of waves k = (κ, 0, q) in the local frame.

    D_o = k × ĉ (or û₂ when k ∥ ĉ), D_e = k × D_o, E = ε⁻¹ D (see :mod:`.eigenmodes`).
    Returns the three components of E.
    """
    dx = -q * cy
    dy = q * cx - kappa * cz
    dz = kappa * cy
    size2 = (dx * dx.conjugate() + dy * dy.conjugate() + dz * dz.conjugate()).real
    k2 = kappa * kappa + (q * q.conjugate()).real
    degenerate = size2 < (DEGENERATE_AXIS_TOLERANCE ** 2) * k2
    if degenerate.any():
        dx = np.where(degenerate, 0.0, dx)
        dy = np.where(degenerate, 1.0, dy)
        dz = np.where(degenerate, 0.0, dz)
    return field_from_d(q, kappa, dx, dy, dz, n_o, n_e, cx, cy, cz, mode == "e")


def field_from_d(q, kappa, dx, dy, dz, n_o, n_e, cx, cy, cz, extraordinary):
    """E of the wave k = (κ, 0, q) from its o-wave displacement D_o = (dx, dy, dz), unnormalised.

    Returns D_o itself (freed of rounding along k) for the o wave, or E = ε⁻¹ (k × D_o) for the
    e wave. Plain arithmetic only, so the numpy path here and the numba kernel
    (:mod:`.compiled_interface`, which compiles this function) share it.
    """
    # D ⟂ k holds analytically; rounding leaves a component along k of relative size
    # ~1e-16/|k × ĉ| near the optic axis, removed here (bilinear product: k may be complex).
    along = (kappa * dx + q * dz) / (kappa * kappa + q * q)
    dx, dz = dx - along * kappa, dz - along * q
    if not extraordinary:
        return dx, dy, dz
    ex = -q * dy
    ey = q * dx - kappa * dz
    ez = kappa * dy
    inv_no2 = 1.0 / (n_o * n_o)
    gamma = (1.0 / (n_e * n_e) - inv_no2) * (cx * ex + cy * ey + cz * ez)
    return ex * inv_no2 + gamma * cx, ey * inv_no2 + gamma * cy, ez * inv_no2 + gamma * cz


def _solve_block(k_in, e_in, normal, n_o1, n_e1, c1, n_o2, n_e2, c2, layer, out, block):
    """Solve one block of rays and write the results into ``out[key][block]``.

    All inputs are contiguous component-first arrays ((3, m) for vectors, (m,) for scalars).
    """
    kx, ky, kz = k_in
    ex, ey, ez = e_in
    nx, ny, nz = normal
    # Orient N̂ along the incident energy flow: S·N̂ = (k·N̂)|E|² − Re((E*·N̂)(E·k)).
    k_n = kx * nx + ky * ny + kz * nz
    e2 = (ex * ex.conjugate() + ey * ey.conjugate() + ez * ez.conjugate()).real
    flux_sign = k_n * e2 - ((ex.conjugate() * nx + ey.conjugate() * ny + ez.conjugate() * nz)
                            * (ex * kx + ey * ky + ez * kz)).real
    flip = np.where(flux_sign < 0, -1.0, 1.0)
    nx, ny, nz, k_n = nx * flip, ny * flip, nz * flip, k_n * flip
    # û₂ = N̂ × k / |N̂ × k| and û₁ = û₂ × N̂: the cross product gives the tangential part
    # without the cancellation of k − (k·N̂)N̂ near normal incidence, and û₁ ⟂ N̂ to rounding.
    wx, wy, wz = ny * kz - nz * ky, nz * kx - nx * kz, nx * ky - ny * kx
    kappa = np.sqrt(wx * wx + wy * wy + wz * wz)
    at_normal = kappa < 1e-15
    if at_normal.any():
        # Any tangential direction will do: û₂ = N̂ × x̂ (or N̂ × ŷ when N̂ is near x̂).
        along_x = np.abs(nx) > 0.9
        rx, ry = np.where(along_x, 0.0, 1.0), np.where(along_x, 1.0, 0.0)
        wx = np.where(at_normal, -nz * ry, wx)
        wy = np.where(at_normal, nz * rx, wy)
        wz = np.where(at_normal, nx * ry - ny * rx, wz)
        kappa = np.where(at_normal, 0.0, kappa)
    # Rounding leaves N̂ × k off perpendicular by ~1e-16/|k_t|: project it back onto the surface.
    w_n = wx * nx + wy * ny + wz * nz
    wx, wy, wz = wx - w_n * nx, wy - w_n * ny, wz - w_n * nz
    w_len = np.sqrt(wx * wx + wy * wy + wz * wz)
    u2 = np.stack([wx / w_len, wy / w_len, wz / w_len])
    u1 = np.stack([u2[1] * nz - u2[2] * ny, u2[2] * nx - u2[0] * nz, u2[0] * ny - u2[1] * nx])

    # Incident field in the local frame; H = k × E with k = (κ, 0, k_n).
    e_loc_x = ex * u1[0] + ey * u1[1] + ez * u1[2]
    e_loc_y = ex * u2[0] + ey * u2[1] + ez * u2[2]
    e_loc_z = ex * nx + ey * ny + ez * nz
    rhs = [e_loc_x, e_loc_y, -k_n * e_loc_y, k_n * e_loc_x - kappa * e_loc_z]
    flux_in = np.abs(flux_sign)

    # Medium parameters for the waves (transmitted: medium 2, reflected: medium 1).
    def local_axis(c, n_o, n_e):
        iso = n_o == n_e
        cx = np.where(iso, 0.0, c[0] * u1[0] + c[1] * u1[1] + c[2] * u1[2])
        cy = np.where(iso, 0.0, c[0] * u2[0] + c[1] * u2[1] + c[2] * u2[2])
        cz = np.where(iso, 1.0, c[0] * nx + c[1] * ny + c[2] * nz)
        return cx, cy, cz

    a2 = local_axis(c2, n_o2, n_e2)
    a1 = local_axis(c1, n_o1, n_e1)
    kappa2 = kappa * kappa
    t2o, t2e, _, _, ev2o, ev2e = normal_roots(kappa2, kappa * a2[0], a2[2], n_o2, n_e2)
    _, _, r1o, r1e, ev1o, ev1e = normal_roots(kappa2, kappa * a1[0], a1[2], n_o1, n_e1)
    # Internal wave order (to, ro, te, re): the o pair and the e pair are contiguous rows; the
    # public order MODE_ORDER = (to, te, ro, re) is restored when writing the outputs.
    evanescent = np.stack([ev2o, ev1o, ev2e, ev1e])
    complex_case = evanescent.any() or layer is not None
    q = np.stack([t2o, r1o, t2e, r1e]).astype(complex if complex_case else float)
    n_o = np.stack([n_o2, n_o1])
    n_e = np.stack([n_e2, n_e1])
    cx, cy, cz = (np.stack([a2[i], a1[i]]) for i in range(3))
    fo = _local_fields(q[:2], kappa, n_o, n_e, cx, cy, cz, "o")
    fe = _local_fields(q[2:], kappa, n_o, n_e, cx, cy, cz, "e")
    fx, fy, fz = (np.concatenate([a, b]) for a, b in zip(fo, fe))
    # Unit fields (hermitian norm) keep the boundary system well scaled.
    size = np.sqrt((fx * fx.conjugate() + fy * fy.conjugate() + fz * fz.conjugate()).real)
    fx, fy, fz = fx / size, fy / size, fz / size
    hx = -q * fy
    hy = q * fx - kappa * fz
    # Boundary system Σ t F_t − Σ r M F_r = M F_in with F = tangential (E₁, E₂, H₁, H₂): solved
    # for (t, −r) with the plain columns, so no sign flips or copies are needed.
    cols = (fx, fy, hx, hy)                               # rows: component; columns: wave
    if layer is not None:
        n_layer, wavelength_um, thickness_mm = layer
        m = np.moveaxis(layer_transfer_matrix(n_layer, kappa, wavelength_um, thickness_mm), 0, -1)
        cols = np.stack(cols).astype(complex)
        rhs = np.stack(rhs)
        cols[:, 1::2] = np.einsum("ijm,jwm->iwm", m, cols[:, 1::2])
        rhs = np.einsum("ijm,jm->im", m, rhs)
    coefficient, singular = solve4_components(cols, rhs, equilibrate=layer is not None)
    coefficient[1::2] *= -1.0

    flux = (fx * hy.conjugate() - fy * hx.conjugate()).real
    power = (coefficient * coefficient.conjugate()).real * np.abs(flux)
    power_fraction = np.where(evanescent, 0.0, power / np.where(flux_in > 0, flux_in, 1.0))
    # Ray directions from the closed forms S ∥ k (o) and S ∥ εk (e), exact even where the
    # fields lose digits near the optic axis; εk = n_o² k + (n_e² − n_o²)(ĉ·k) ĉ.
    qr = q.real
    no2 = n_o * n_o
    ck = (n_e * n_e - no2) * (cx * kappa + cz * qr[2:])
    sx = np.concatenate([no2 * kappa, no2 * kappa + ck * cx])
    sy = np.concatenate([np.zeros_like(ck), ck * cy])
    sz = np.concatenate([no2 * qr[:2], no2 * qr[2:] + ck * cz])
    if complex_case and evanescent.any():
        # Evanescent waves: the time-averaged energy flow Re(E × H*) runs along the surface.
        hz = kappa * fy
        ex_ = (fy * hz.conjugate() - fz * hy.conjugate()).real
        ey_ = (fz * hx.conjugate() - fx * hz.conjugate()).real
        ez_ = (fx * hy.conjugate() - fy * hx.conjugate()).real
        sx, sy, sz = (np.where(evanescent, a, b) for a, b in ((ex_, sx), (ey_, sy), (ez_, sz)))
    s_len = np.sqrt(sx * sx + sy * sy + sz * sz)
    sx, sy, sz = sx / s_len, sy / s_len, sz / s_len

    # Outputs are stored component-first ((4, m), (3, m), (3, 4, m)) so every write below is a
    # contiguous row; solve_interface exposes them as (m, 4), (m, 3), (m, 4, 3) views.
    order = [0, 2, 1, 3]                                  # internal -> MODE_ORDER
    out["coefficient"][:, block] = coefficient[order]
    out["power_fraction"][:, block] = power_fraction[order]
    out["evanescent"][:, block] = evanescent[order]
    out["normal_component"][:, block] = q[order]
    out["singular"][block] = singular
    n_vec = (nx, ny, nz)
    e_out, s_out = out["e_field"], out["ray_direction"]
    for i in range(3):
        out["normal"][i, block] = n_vec[i]
        out["_tangential"][i, block] = kappa * u1[i]
        for j, w in enumerate(order):
            e_out[i, j, block] = fx[w] * u1[i] + fy[w] * u2[i] + fz[w] * n_vec[i]
            s_out[i, j, block] = sx[w] * u1[i] + sy[w] * u2[i] + sz[w] * n_vec[i]


def solve_interface(wave_vector_in, field_in, normal, indices_1, axis_1, indices_2, axis_2,
                    layer=None, *, out=None):
    """Reflect and refract a plane wave at a plane interface.

    Parameters
    ----------
    wave_vector_in : array_like, shape (..., 3)
        Real incident wave vector, units of k0 (length = phase index of the incident wave).
    field_in : array_like, complex, shape (..., 3)
        Incident electric field (any norm); in a crystal it must be that eigenwave's field.
    normal : array_like, shape (..., 3)
        Unit surface normal; its sign is irrelevant (oriented along the incident flow here).
    indices_1, indices_2 : tuple of array_like
        (n_o, n_e) of the incident and the far medium, shape (...). Equal values mean isotropic.
    axis_1, axis_2 : array_like, shape (..., 3)
        Unit optic axes (ignored for isotropic media).
    layer : tuple, optional
        (n_layer, wavelength_um, thickness_mm) of a coherent isotropic thin layer between the
        media; None for a bare interface.
    out : InterfaceResult, optional
        A result of an earlier call with the same number of rays (on the same kernel) whose
        arrays are overwritten instead of allocating new ones (~500 bytes per ray); that earlier
        result must not be used afterwards. Ignored when the sizes or kernels differ.

    Returns
    -------
    InterfaceResult
        Arrays of the broadcast shape of the inputs (plus mode and vector axes).
    """
    if any(hasattr(i, "chirality") or hasattr(i, "crystal_axes") for i in (indices_1, indices_2)):
        # An optically active piece (indices carry its chirality) or a biaxial one (indices
        # carry its principal axes): the general-ε Berreman solver.
        from .gyrotropic import solve_gyrotropic_interface
        return solve_gyrotropic_interface(wave_vector_in, field_in, normal, indices_1, axis_1,
                                          indices_2, axis_2, layer)
    k_in = np.asarray(wave_vector_in, dtype=float)
    e_in = np.asarray(field_in, dtype=complex)
    n_o1, n_e1 = (np.asarray(v, dtype=float) for v in indices_1)
    n_o2, n_e2 = (np.asarray(v, dtype=float) for v in indices_2)
    normal = np.asarray(normal, dtype=float)
    axis_1 = np.asarray(axis_1, dtype=float)
    axis_2 = np.asarray(axis_2, dtype=float)
    layer_arrays = () if layer is None else tuple(np.asarray(v, dtype=float) for v in layer)
    shape = np.broadcast_shapes(k_in.shape[:-1], e_in.shape[:-1], normal.shape[:-1],
                                axis_1.shape[:-1], axis_2.shape[:-1], n_o1.shape, n_e1.shape,
                                n_o2.shape, n_e2.shape, *(v.shape for v in layer_arrays))
    size = int(np.prod(shape))
    if active_kernel() == "compiled":
        return _solve_compiled(k_in, e_in, normal, n_o1, n_e1, axis_1, n_o2, n_e2, axis_2,
                               layer_arrays, shape, size, _reusable(out, "compiled", size))

    def vectors(a):
        return np.broadcast_to(a, shape + (3,)).reshape(size, 3).T

    def scalars(a):
        return np.broadcast_to(a, shape).reshape(size)

    columns = [vectors(k_in), vectors(e_in), vectors(normal), scalars(n_o1), scalars(n_e1),
               vectors(axis_1), scalars(n_o2), scalars(n_e2), vectors(axis_2)]
    layer_flat = [scalars(v) for v in layer_arrays]
    out = _reusable(out, "numpy", size) or {
        "coefficient": np.empty((4, size), complex), "power_fraction": np.empty((4, size)),
        "evanescent": np.empty((4, size), bool), "singular": np.empty(size, bool),
        "normal": np.empty((3, size)), "normal_component": np.empty((4, size), complex),
        "_tangential": np.empty((3, size)), "e_field": np.empty((3, 4, size), complex),
        "ray_direction": np.empty((3, 4, size))}

    def run(start):
        block = slice(start, min(start + BLOCK_SIZE, size))
        args = [np.ascontiguousarray(c[..., block]) for c in columns]
        layer_block = tuple(v[block] for v in layer_flat) if layer is not None else None
        _solve_block(*args, layer_block, out, block)

    # Blocks run one after another: threads were tried and gave no gain (the blocks are bound by
    # memory traffic and by the interpreter between numpy calls, not by arithmetic).
    for start in range(0, size, BLOCK_SIZE):
        run(start)
    # Views with the ray axis first, then split into the broadcast shape (no copies).
    views = {key: value.T.reshape(shape + value.shape[:-1][::-1]) for key, value in out.items()}
    return InterfaceResult(**views, _buffers=("numpy", size, out))


#: Rays per work item of the compiled kernel (items are shared out among the threads).
_COMPILED_CHUNK = 512
#: Batches smaller than this run serially (see _solve_compiled).
_COMPILED_SERIAL_BELOW = 4096


def _kernel_input(a, shape, size, tail, dtype):
    """A C-contiguous, writeable (m, *tail) array with m = size, or m = 1 for a value shared by
    every ray (the kernel then reads row 0): no copy of a broadcast constant."""
    lead = a.shape[:a.ndim - len(tail)]
    if lead and a.size and not any(a.strides[:len(lead)]):
        # A broadcast constant (all leading strides zero), e.g. one optic axis for every ray.
        a = a[(0,) * len(lead)]
        lead = ()
    if lead == shape:
        flat = a.reshape((size,) + tail)
    elif int(np.prod(lead)) == 1:
        flat = a.reshape((1,) + tail)
    else:
        flat = np.broadcast_to(a, shape + tail).reshape((size,) + tail)
    flat = np.ascontiguousarray(flat, dtype=dtype)
    # One compiled signature: read-only arrays (broadcasts, user constants) are copied.
    return flat if flat.flags.writeable else flat.copy()


def _reusable(result, kernel, size):
    """The output buffers of an earlier result, when they fit this call (else None)."""
    buffers = getattr(result, "_buffers", None) if result is not None else None
    if buffers is None or buffers[0] != kernel or buffers[1] != size:
        return None
    result._buffers = None                   # handed over: the old result cannot give them twice
    return buffers[2]


def _solve_compiled(k_in, e_in, normal, n_o1, n_e1, axis_1, n_o2, n_e2, axis_2, layer_arrays,
                    shape, size, out=None):
    """solve_interface through the compiled kernel; outputs are ray-first and C-contiguous."""
    from .compiled_interface import kernel, solve_rays

    def vec(a, dtype=float):
        return _kernel_input(a, shape, size, (3,), dtype)

    def sca(a):
        return _kernel_input(a, shape, size, (), float)

    if layer_arrays:
        layer_n, layer_wl, layer_t = (sca(v) for v in layer_arrays)
    else:
        layer_n = layer_wl = layer_t = np.zeros(1)
    out = out or {
        "coefficient": np.empty((size, 4), complex), "power_fraction": np.empty((size, 4)),
        "evanescent": np.empty((size, 4), bool), "singular": np.empty(size, bool),
        "normal": np.empty((size, 3)), "normal_component": np.empty((size, 4), complex),
        "_tangential": np.empty((size, 3)), "e_field": np.empty((size, 4, 3), complex),
        "ray_direction": np.empty((size, 4, 3))}
    inputs = (vec(k_in), vec(e_in, complex), vec(normal), sca(n_o1), sca(n_e1), vec(axis_1),
              sca(n_o2), sca(n_e2), vec(axis_2), layer_n, layer_wl, layer_t, bool(layer_arrays),
              DEGENERATE_AXIS_TOLERANCE)
    outputs = (out["coefficient"], out["power_fraction"], out["evanescent"], out["singular"],
               out["normal"], out["normal_component"], out["_tangential"], out["e_field"],
               out["ray_direction"])
    if size < _COMPILED_SERIAL_BELOW:
        # Waking the worker threads costs more than a few thousand rays (up to milliseconds on
        # a busy machine): small batches run on the calling thread.
        solve_rays(0, size, *inputs, *outputs)
    else:
        kernel(*inputs, _COMPILED_CHUNK, *outputs)
    views = {key: value.reshape(shape + value.shape[1:]) for key, value in out.items()}
    return InterfaceResult(**views, _buffers=("compiled", size, out))
