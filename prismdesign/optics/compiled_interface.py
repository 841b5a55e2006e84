"""Compiled (numba) kernel of the interface solve: the same method as :mod:`.interface`, per ray.

:func:`prismdesign.optics.interface.solve_interface` uses this kernel when numba is installed
(``pip install "prismdesign[fast]"``) and the numpy code otherwise (see
:func:`prismdesign.optics.interface.set_kernel`); the numpy code stays the readable reference and
the tests compare both. The kernel follows the numpy block solve operation by operation (same
local frame, root choice, degenerate-axis basis, rounding clean-ups, boundary system, cofactor
solve and singularity test), so the two agree to rounding.

Why a compiled kernel: the numpy solve streams some hundred temporary arrays through memory for
each block of rays; one loop over rays keeps the intermediates in registers, runs in parallel
over the cores and writes each output once.

Importing this module imports numba (interface.py does so only on first use). The functions
compile on their first call in a process; ``cache=True`` stores the machine code in
``__pycache__`` beside this file or, when that folder is not writable, in numba's user-wide cache
directory, so later processes load it in a fraction of a second.
"""
import warnings

import numba
import numpy as np

from . import interface, linear4

__all__ = ["kernel", "solve_rays"]


_NO_CACHE_WARNED = []
_OPTIONS = {"error_model": "numpy"}


def _jit(**options):
    """numba.njit with the project's options: cached, and numpy's rules for 1/0 and NaN.

    No fast-math flags. "arcp" (x/y as x·(1/y)) and "contract" (fused multiply-adds) were
    about 15 % faster but broke exact-arithmetic cases: 1/y overflows for subnormal y where x/y
    is finite (a Jones component of 1e-156 gave NaN power), and fused products turn exact zeros
    (cross products of parallel vectors, a grazing flux) into rounding-sized values whose sign
    picks a branch. Without them the kernel follows the numpy reference operation by operation.
    """
    def decorate(func):
        try:
            return numba.njit(cache=True, **_OPTIONS, **options)(func)
        except RuntimeError:
            # numba raises when no cache location is writable (read-only install and no user
            # cache directory): compile in every process instead, and say so once.
            if not _NO_CACHE_WARNED:
                _NO_CACHE_WARNED.append(True)
                warnings.warn("numba found no writable cache directory for the prismdesign "
                              "kernel; it compiles anew in each process (~15 s; set "
                              "NUMBA_CACHE_DIR to a writable folder to keep it)",
                              RuntimeWarning, stacklevel=3)
            return numba.njit(cache=False, **_OPTIONS, **options)(func)
    return decorate


@_jit()
def abs2(x):
    return x.real * x.real + x.imag * x.imag

@_jit()
def _conj(x):
    return x.conjugate()


@_jit()
def magnitude(x):
    # |Re| + |Im|, as linear4._magnitude.
    return abs(x.real) + abs(x.imag)

@_jit()
def local_field(q, kappa, n_o, n_e, cx, cy, cz, extraordinary, tol2):
    """E of the wave k = (κ, 0, q) (numpy: interface._local_fields), unnormalised."""
    dx = -q * cy
    dy = q * cx - kappa * cz
    dz = kappa * cy
    size2 = abs2(dx) + abs2(dy) + abs2(dz)
    k2 = kappa * kappa + abs2(q)
    if size2 < tol2 * k2:
        dx = dx * 0.0
        dy = dy * 0.0 + 1.0
        dz = dz * 0.0
    return _field_from_d(q, kappa, dx, dy, dz, n_o, n_e, cx, cy, cz, extraordinary)

@_jit()
def unit(fx, fy, fz):
    size = np.sqrt(abs2(fx) + abs2(fy) + abs2(fz))
    return fx / size, fy / size, fz / size

# interface's D → E step, compiled: one source for both paths.
_field_from_d = _jit()(interface.field_from_d)

# The expansion itself is linear4's, compiled: one source for both paths.
_cofactor_solve = _jit()(linear4.cofactor_solve)


@_jit()
def solve4(a, b, equilibrate):
    """Cofactor solve of one 4 × 4 system in a scratch array (numpy: linear4)."""
    if equilibrate:
        for j in range(4):
            m = max(max(magnitude(a[0, j]), magnitude(a[1, j])),
                    max(magnitude(a[2, j]), magnitude(a[3, j])))
            s = 1.0 / max(m, 1e-300)
            b[4 + j] = s                      # column scales kept behind the rhs
            for i in range(4):
                a[i, j] = a[i, j] * s
        for i in range(4):
            m = max(max(magnitude(a[i, 0]), magnitude(a[i, 1])),
                    max(magnitude(a[i, 2]), magnitude(a[i, 3])))
            s = 1.0 / max(m, 1e-300)
            for j in range(4):
                a[i, j] = a[i, j] * s
            b[i] = b[i] * s
    a00, a01, a02, a03 = a[0, 0], a[0, 1], a[0, 2], a[0, 3]
    a10, a11, a12, a13 = a[1, 0], a[1, 1], a[1, 2], a[1, 3]
    a20, a21, a22, a23 = a[2, 0], a[2, 1], a[2, 2], a[2, 3]
    a30, a31, a32, a33 = a[3, 0], a[3, 1], a[3, 2], a[3, 3]
    det, x0, x1, x2, x3 = _cofactor_solve(a00, a01, a02, a03, a10, a11, a12, a13,
                                          a20, a21, a22, a23, a30, a31, a32, a33,
                                          b[0], b[1], b[2], b[3])
    singular = not (magnitude(det) > 1e-14)
    # As the numpy path: multiply by 0 where singular (NaN inputs stay NaN).
    inv_det = 0.0 * det if singular else 1.0 / det
    if equilibrate:
        return (x0 * (inv_det * b[4].real), x1 * (inv_det * b[5].real),
                x2 * (inv_det * b[6].real), x3 * (inv_det * b[7].real), singular)
    return x0 * inv_det, x1 * inv_det, x2 * inv_det, x3 * inv_det, singular

@_jit()
def finish(i, q, fx, fy, fz, kappa, n_o, n_e, cx, cy, cz, ev, x, flux_in,
           u1x, u1y, u1z, u2x, u2y, u2z, nx, ny, nz, out_c, out_p, out_q, out_e, out_s):
    """Power fractions, ray directions and global fields of one wave; write them."""
    flux_norm = flux_in if flux_in > 0 else 1.0
    # Internal wave w (to, ro, te, re) -> public slot (to, te, ro, re).
    for w in range(4):
        j = (0, 2, 1, 3)[w]
        qw, ex, ey, ez = q[w], fx[w], fy[w], fz[w]
        hx = -qw * ey
        hy = qw * ex - kappa * ez
        flux = (ex * _conj(hy) - ey * _conj(hx)).real
        coef = x[w]
        if w % 2 == 1:
            coef = -coef
        out_c[i, j] = coef
        out_q[i, j] = qw
        out_p[i, j] = 0.0 if ev[w] else abs2(coef) * abs(flux) / flux_norm
        m = w // 2                              # 0: o pair, 1: e pair
        med = w % 2                             # 0: medium 2 (transmitted), 1: medium 1
        no, ne = n_o[med], n_e[med]
        ax, ay, az = cx[med], cy[med], cz[med]
        if ev[w]:
            hz = kappa * ey
            sx = (ey * _conj(hz) - ez * _conj(hy)).real
            sy = (ez * _conj(hx) - ex * _conj(hz)).real
            sz = (ex * _conj(hy) - ey * _conj(hx)).real
        else:
            no2 = no * no
            qr = qw.real
            if m == 0:
                sx, sy, sz = no2 * kappa, 0.0, no2 * qr
            else:
                ck = (ne * ne - no2) * (ax * kappa + az * qr)
                sx, sy, sz = no2 * kappa + ck * ax, ck * ay, no2 * qr + ck * az
        s_len = np.sqrt(sx * sx + sy * sy + sz * sz)
        sx, sy, sz = sx / s_len, sy / s_len, sz / s_len
        out_e[i, j, 0] = ex * u1x + ey * u2x + ez * nx
        out_e[i, j, 1] = ex * u1y + ey * u2y + ez * ny
        out_e[i, j, 2] = ex * u1z + ey * u2z + ez * nz
        out_s[i, j, 0] = sx * u1x + sy * u2x + sz * nx
        out_s[i, j, 1] = sx * u1y + sy * u2y + sz * ny
        out_s[i, j, 2] = sx * u1z + sy * u2z + sz * nz

@_jit()
def waves(q, kappa, n_o, n_e, cx, cy, cz, tol2, a, rhs, b):
    """Unit fields of the four waves and the boundary matrix (columns: waves)."""
    fx0, fy0, fz0 = unit(*local_field(q[0], kappa, n_o[0], n_e[0], cx[0], cy[0], cz[0],
                                      False, tol2))
    fx1, fy1, fz1 = unit(*local_field(q[1], kappa, n_o[1], n_e[1], cx[1], cy[1], cz[1],
                                      False, tol2))
    fx2, fy2, fz2 = unit(*local_field(q[2], kappa, n_o[0], n_e[0], cx[0], cy[0], cz[0],
                                      True, tol2))
    fx3, fy3, fz3 = unit(*local_field(q[3], kappa, n_o[1], n_e[1], cx[1], cy[1], cz[1],
                                      True, tol2))
    fx = (fx0, fx1, fx2, fx3)
    fy = (fy0, fy1, fy2, fy3)
    fz = (fz0, fz1, fz2, fz3)
    for w in range(4):
        a[0, w] = fx[w]
        a[1, w] = fy[w]
        a[2, w] = -q[w] * fy[w]
        a[3, w] = q[w] * fx[w] - kappa * fz[w]
    for r in range(4):
        b[r] = rhs[r]
    return fx, fy, fz

@_jit()
def apply_layer(a, b, n_layer, wavelength_um, thickness_mm, kappa):
    """Multiply the medium-2 columns and the rhs by the layer matrix (numpy: thin_layer)."""
    n2 = n_layer * n_layer
    kappa2 = kappa * kappa
    ql = np.sqrt(complex(n2 - kappa2))
    thickness = 0.0 if thickness_mm < 1e-30 else thickness_mm
    phase_per_q = 2.0 * np.pi * thickness * 1e3 / wavelength_um
    growth = abs(phase_per_q * ql.imag)
    phase_per_q = phase_per_q * min(1.0, 20.0 / (growth if growth > 0 else 1.0))
    phi = phase_per_q * ql
    cos_phi = np.cos(phi)
    # sin(φ)/q = phase_per_q · sinc(φ/π), 1 at φ = 0; written as numpy's sinc evaluates it.
    y = np.pi * (phi / np.pi)
    sin_over_q = phase_per_q * (np.sin(y) / y if y != 0 else 1.0 + 0.0j)
    i_s = 1j * sin_over_q
    m03 = i_s * (1.0 - kappa2 / n2)
    m12 = -i_s
    m21 = i_s * (kappa2 - n2)
    m30 = i_s * n2
    # The layer carries medium-1 fields to the far side: the reflected waves' columns (1, 3 in
    # the internal order) and the incident rhs become M F.
    for w in (1, 3):
        f0, f1, f2, f3 = a[0, w], a[1, w], a[2, w], a[3, w]
        a[0, w] = cos_phi * f0 + m03 * f3
        a[1, w] = cos_phi * f1 + m12 * f2
        a[2, w] = cos_phi * f2 + m21 * f1
        a[3, w] = cos_phi * f3 + m30 * f0
    f0, f1, f2, f3 = b[0], b[1], b[2], b[3]
    b[0] = cos_phi * f0 + m03 * f3
    b[1] = cos_phi * f1 + m12 * f2
    b[2] = cos_phi * f2 + m21 * f1
    b[3] = cos_phi * f3 + m30 * f0

@_jit()
def as_root(root, imaginary):
    """The root as a complex number: i·root where the discriminant was negative."""
    return root * 1j if imaginary else root + 0j


@_jit()
def local_axis(ccx, ccy, ccz, n_o, n_e, u1x, u1y, u1z, u2x, u2y, u2z, nx, ny, nz):
    """Optic axis in the local frame; (0, 0, 1) for an isotropic medium (numpy: local_axis)."""
    if n_o == n_e:
        return 0.0, 0.0, 1.0
    return (ccx * u1x + ccy * u1y + ccz * u1z, ccx * u2x + ccy * u2y + ccz * u2z,
            ccx * nx + ccy * ny + ccz * nz)


@_jit()
def roots(kappa, n_o, n_e, cx, cz):
    """Magnitudes of the o and e roots (numpy: eigenmodes.normal_roots) with their flags.

    Returns (√|disc_o|, disc_o < 0, disc_o <= 0, √|disc_e|, disc_e < 0, disc_e <= 0, b, a):
    the o roots are ±(i)√|disc_o|, the e roots (±(i)√|disc_e| − b)/a.
    """
    kappa2 = kappa * kappa
    no2 = n_o * n_o
    delta = n_e * n_e - no2
    c_t = kappa * cx
    aa = no2 + delta * cz * cz
    bq = delta * c_t * cz
    c0 = no2 * kappa2 + delta * c_t * c_t - no2 * n_e * n_e
    disc_e = bq * bq - aa * c0
    disc_o = no2 - kappa2
    return (np.sqrt(abs(disc_o)), disc_o < 0, disc_o <= 0,
            np.sqrt(abs(disc_e)), disc_e < 0, disc_e <= 0, bq, aa)


@_jit()
def solve_rays(first, stop, k_in, e_in, normal, n_o1, n_e1, c1, n_o2, n_e2, c2,
               layer_n, layer_wl, layer_t, has_layer, tol,
               out_c, out_p, out_ev, out_sing, out_n, out_q, out_t, out_e, out_s):
    """Solve rays first … stop − 1 (serial). Inputs have one row per ray or a single row."""
    tol2 = tol * tol
    # Scratch systems, one per call (no allocation per ray).
    ar = np.empty((4, 4))
    ac = np.empty((4, 4), np.complex128)
    bb = np.empty(8, np.complex128)
    for i in range(first, stop):
        ik = i if k_in.shape[0] > 1 else 0
        ie = i if e_in.shape[0] > 1 else 0
        inn = i if normal.shape[0] > 1 else 0
        kx, ky, kz = k_in[ik, 0], k_in[ik, 1], k_in[ik, 2]
        ex, ey, ez = e_in[ie, 0], e_in[ie, 1], e_in[ie, 2]
        nx, ny, nz = normal[inn, 0], normal[inn, 1], normal[inn, 2]
        k_n = kx * nx + ky * ny + kz * nz
        e2 = abs2(ex) + abs2(ey) + abs2(ez)
        flux_sign = k_n * e2 - ((_conj(ex) * nx + _conj(ey) * ny + _conj(ez) * nz)
                                * (ex * kx + ey * ky + ez * kz)).real
        if flux_sign < 0:
            nx, ny, nz, k_n = -nx, -ny, -nz, -k_n
        wx, wy, wz = ny * kz - nz * ky, nz * kx - nx * kz, nx * ky - ny * kx
        kappa = np.sqrt(wx * wx + wy * wy + wz * wz)
        if kappa < 1e-15:
            if abs(nx) > 0.9:
                rx, ry = 0.0, 1.0
            else:
                rx, ry = 1.0, 0.0
            wx, wy, wz = -nz * ry, nz * rx, nx * ry - ny * rx
            kappa = 0.0
        w_n = wx * nx + wy * ny + wz * nz
        wx, wy, wz = wx - w_n * nx, wy - w_n * ny, wz - w_n * nz
        w_len = np.sqrt(wx * wx + wy * wy + wz * wz)
        u2x, u2y, u2z = wx / w_len, wy / w_len, wz / w_len
        u1x, u1y, u1z = u2y * nz - u2z * ny, u2z * nx - u2x * nz, u2x * ny - u2y * nx
        el_x = ex * u1x + ey * u1y + ez * u1z
        el_y = ex * u2x + ey * u2y + ez * u2z
        el_z = ex * nx + ey * ny + ez * nz
        rhs = (el_x, el_y, -k_n * el_y, k_n * el_x - kappa * el_z)
        flux_in = abs(flux_sign)

        # Media: index 0 = medium 2 (transmitted waves), 1 = medium 1 (reflected waves).
        n_o = (n_o2[i if n_o2.shape[0] > 1 else 0], n_o1[i if n_o1.shape[0] > 1 else 0])
        n_e = (n_e2[i if n_e2.shape[0] > 1 else 0], n_e1[i if n_e1.shape[0] > 1 else 0])
        ic1 = i if c1.shape[0] > 1 else 0
        ic2 = i if c2.shape[0] > 1 else 0
        ax2, ay2, az2 = local_axis(c2[ic2, 0], c2[ic2, 1], c2[ic2, 2], n_o[0], n_e[0],
                                   u1x, u1y, u1z, u2x, u2y, u2z, nx, ny, nz)
        ax1, ay1, az1 = local_axis(c1[ic1, 0], c1[ic1, 1], c1[ic1, 2], n_o[1], n_e[1],
                                   u1x, u1y, u1z, u2x, u2y, u2z, nx, ny, nz)
        cx = (ax2, ax1)
        cy = (ay2, ay1)
        cz = (az2, az1)
        # Transmitted waves take the forward roots of medium 2, reflected the backward ones
        # of medium 1 (numpy: eigenmodes.normal_roots).
        ro_t, im_ot, ev_ot, re_t, im_et, ev_et, b_t, a_t = roots(kappa, n_o[0], n_e[0],
                                                                  ax2, az2)
        ro_r, im_or, ev_or, re_r, im_er, ev_er, b_r, a_r = roots(kappa, n_o[1], n_e[1],
                                                                  ax1, az1)
        ev = (ev_ot, ev_or, ev_et, ev_er)                  # internal order (to, ro, te, re)
        complex_case = has_layer or im_ot or im_or or im_et or im_er
        if complex_case:
            qc = (as_root(ro_t, im_ot), -as_root(ro_r, im_or),
                  (as_root(re_t, im_et) - b_t) / a_t, (-as_root(re_r, im_er) - b_r) / a_r)
            fx, fy, fz = waves(qc, kappa, n_o, n_e, cx, cy, cz, tol2, ac, rhs, bb)
            if has_layer:
                il = i if layer_n.shape[0] > 1 else 0
                iw = i if layer_wl.shape[0] > 1 else 0
                it = i if layer_t.shape[0] > 1 else 0
                apply_layer(ac, bb, layer_n[il], layer_wl[iw], layer_t[it], kappa)
            x0, x1, x2, x3, sing = solve4(ac, bb, has_layer)
            finish(i, qc, fx, fy, fz, kappa, n_o, n_e, cx, cy, cz, ev,
                   (x0, x1, x2, x3), flux_in, u1x, u1y, u1z, u2x, u2y, u2z, nx, ny, nz,
                   out_c, out_p, out_q, out_e, out_s)
        else:
            qr = (ro_t, -ro_r, (re_t - b_t) / a_t, (-re_r - b_r) / a_r)
            fx, fy, fz = waves(qr, kappa, n_o, n_e, cx, cy, cz, tol2, ar, rhs, bb)
            x0, x1, x2, x3, sing = solve4(ar, bb, False)
            finish(i, qr, fx, fy, fz, kappa, n_o, n_e, cx, cy, cz, ev,
                   (x0, x1, x2, x3), flux_in, u1x, u1y, u1z, u2x, u2y, u2z, nx, ny, nz,
                   out_c, out_p, out_q, out_e, out_s)
        out_ev[i, 0] = ev_ot
        out_ev[i, 1] = ev_et
        out_ev[i, 2] = ev_or
        out_ev[i, 3] = ev_er
        out_sing[i] = sing
        out_n[i, 0] = nx
        out_n[i, 1] = ny
        out_n[i, 2] = nz
        out_t[i, 0] = kappa * u1x
        out_t[i, 1] = kappa * u1y
        out_t[i, 2] = kappa * u1z



@_jit(parallel=True)
def kernel(k_in, e_in, normal, n_o1, n_e1, c1, n_o2, n_e2, c2,
           layer_n, layer_wl, layer_t, has_layer, tol, chunk,
           out_c, out_p, out_ev, out_sing, out_n, out_q, out_t, out_e, out_s):
    """Solve every ray, chunks of `chunk` rays shared out among numba's threads.

    Arguments as :func:`solve_rays`; outputs (ray-first) are written in place.
    """
    size = out_p.shape[0]
    n_chunks = (size + chunk - 1) // chunk
    for c in numba.prange(n_chunks):
        solve_rays(c * chunk, min(size, (c + 1) * chunk), k_in, e_in, normal, n_o1, n_e1, c1,
                   n_o2, n_e2, c2, layer_n, layer_wl, layer_t, has_layer, tol,
                   out_c, out_p, out_ev, out_sing, out_n, out_q, out_t, out_e, out_s)
