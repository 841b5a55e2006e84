"""Batched solution of 4 × 4 linear systems by cofactor expansion.

The interface solver needs millions of tiny systems. LAPACK's batched ``solve`` pays a per-matrix
overhead and raises on the first exactly singular matrix; an explicit cofactor expansion works on
whole arrays at once and reports singular systems per element instead.
"""
import numpy as np

__all__ = ["solve4", "solve4_components"]


def _magnitude(a):
    """|Re| + |Im|: a cheap magnitude, good enough for scaling."""
    return np.abs(a.real) + np.abs(a.imag) if np.iscomplexobj(a) else np.abs(a)


def cofactor_solve(a00, a01, a02, a03, a10, a11, a12, a13, a20, a21, a22, a23,
                   a30, a31, a32, a33, b0, b1, b2, b3):
    """Determinant and adj(A) b of one 4 × 4 system, entry by entry (no division).

    Plain arithmetic only, so the same function serves numpy arrays (this module) and, compiled
    with numba, single rays (:mod:`.compiled_interface`); both paths thus share one expansion.

    Returns
    -------
    det, x0, x1, x2, x3 : scalars or ndarrays
        det(A) and the components of adj(A) b, so that x = (x0, x1, x2, x3) / det.
    """
    s0 = a00 * a11 - a10 * a01
    s1 = a00 * a12 - a10 * a02
    s2 = a00 * a13 - a10 * a03
    s3 = a01 * a12 - a11 * a02
    s4 = a01 * a13 - a11 * a03
    s5 = a02 * a13 - a12 * a03
    c5 = a22 * a33 - a32 * a23
    c4 = a21 * a33 - a31 * a23
    c3 = a21 * a32 - a31 * a22
    c2 = a20 * a33 - a30 * a23
    c1 = a20 * a32 - a30 * a22
    c0 = a20 * a31 - a30 * a21
    det = s0 * c5 - s1 * c4 + s2 * c3 + s3 * c2 - s4 * c1 + s5 * c0
    # x = adj(A) b / det, with the adjugate rows written out.
    x0 = ((a11 * c5 - a12 * c4 + a13 * c3) * b0 + (-a01 * c5 + a02 * c4 - a03 * c3) * b1
          + (a31 * s5 - a32 * s4 + a33 * s3) * b2 + (-a21 * s5 + a22 * s4 - a23 * s3) * b3)
    x1 = ((-a10 * c5 + a12 * c2 - a13 * c1) * b0 + (a00 * c5 - a02 * c2 + a03 * c1) * b1
          + (-a30 * s5 + a32 * s2 - a33 * s1) * b2 + (a20 * s5 - a22 * s2 + a23 * s1) * b3)
    x2 = ((a10 * c4 - a11 * c2 + a13 * c0) * b0 + (-a00 * c4 + a01 * c2 - a03 * c0) * b1
          + (a30 * s4 - a31 * s2 + a33 * s0) * b2 + (-a20 * s4 + a21 * s2 - a23 * s0) * b3)
    x3 = ((-a10 * c3 + a11 * c1 - a12 * c0) * b0 + (a00 * c3 - a01 * c1 + a02 * c0) * b1
          + (-a30 * s3 + a31 * s1 - a32 * s0) * b2 + (a20 * s3 - a21 * s1 + a22 * s0) * b3)
    return det, x0, x1, x2, x3


def solve4_components(a, b, equilibrate=True):
    """Solve A x = b for 4 × 4 systems stored component-first.

    Parameters
    ----------
    a : ndarray of shape (4, 4, m), or a sequence of four rows each indexable by column
        a[i][j] is the batch of entries (i, j); passing rows (e.g. four (4, m) arrays) avoids
        stacking them first.
    b : ndarray of shape (4, m), or a sequence of four (m,) arrays
    equilibrate : bool
        Scale columns and rows first. Callers whose entries are already of order one (unit
        fields) may skip it; the singularity test |det| < 1e-14 then assumes that scale.

    Returns
    -------
    x : ndarray, shape (4, m)
        Solutions; zero where singular.
    singular : ndarray of bool, shape (m,)

    Notes
    -----
    Columns and then rows are scaled to unit largest magnitude first (equilibration), so the
    singularity test |det| < 1e-14 is independent of how the unknowns and equations are scaled,
    e.g. by the cosh growth of an evanescent thin-layer matrix. The determinant and adjugate follow
    from the Laplace expansion along rows (0, 1): six 2 × 2 minors of rows (0, 1) and six of rows
    (2, 3).
    """
    if equilibrate:
        a = np.asarray(a)
        b = np.asarray(b)
        col_scale = 1.0 / np.maximum(np.max(_magnitude(a), axis=0), 1e-300)     # (4, m)
        a = a * col_scale[None, :, :]
        row_scale = 1.0 / np.maximum(np.max(_magnitude(a), axis=1), 1e-300)     # (4, m)
        a = a * row_scale[:, None, :]
        b = b * row_scale
        det_scale = 1.0
    else:
        col_scale = 1.0
        det_scale = 1.0
    (a00, a01, a02, a03), (a10, a11, a12, a13), (a20, a21, a22, a23), (a30, a31, a32, a33) = a
    b0, b1, b2, b3 = b
    det, x0, x1, x2, x3 = cofactor_solve(a00, a01, a02, a03, a10, a11, a12, a13,
                                         a20, a21, a22, a23, a30, a31, a32, a33, b0, b1, b2, b3)
    singular = ~(_magnitude(det) > 1e-14 * det_scale)
    inv_det = np.where(singular, 0.0, 1.0 / np.where(singular, 1.0, det))
    x = np.empty((4,) + np.shape(inv_det), dtype=np.result_type(x0, x1, x2, x3, inv_det))
    for i, value in enumerate((x0, x1, x2, x3)):
        # Unknown i was scaled by col_scale[i] when equilibrating.
        np.multiply(value, inv_det if np.ndim(col_scale) == 0 else inv_det * col_scale[i],
                    out=x[i])
    return x, singular


def solve4(matrix, rhs):
    """Solve A x = b for a batch of 4 × 4 systems.

    Parameters
    ----------
    matrix : array_like, shape (..., 4, 4)
        Real or complex system matrices.
    rhs : array_like, shape (..., 4)
        Right-hand sides.

    Returns
    -------
    x : ndarray, shape (..., 4)
        Solutions; zero where the system is singular.
    singular : ndarray of bool, shape (...)
        True where the equilibrated determinant is below 1e-14 in magnitude.
    """
    matrix = np.asarray(matrix)
    rhs = np.asarray(rhs)
    shape = np.broadcast_shapes(matrix.shape[:-2], rhs.shape[:-1])
    a = np.broadcast_to(matrix, shape + (4, 4)).reshape(-1, 4, 4)
    b = np.broadcast_to(rhs, shape + (4,)).reshape(-1, 4)
    x, singular = solve4_components(np.moveaxis(a, 0, -1), b.T)
    return x.T.reshape(shape + (4,)), singular.reshape(shape)
