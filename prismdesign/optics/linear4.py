"""Batched solution of 4 × 4 linear systems by cofactor expansion.

The interface solver needs millions of tiny systems. LAPACK's batched ``solve`` pays a per-matrix
overhead and raises on the first exactly singular matrix; an explicit cofactor expansion works on
whole arrays at once and reports singular systems per element instead.
"""
import numpy as np

__all__ = ["solve4"]


def solve4(matrix, rhs):
    """Solve A x = b for a batch of 4 × 4 systems.

    Parameters
    ----------
    matrix : ndarray, shape (..., 4, 4)
        Real or complex system matrices.
    rhs : ndarray, shape (..., 4)
        Right-hand sides.

    Returns
    -------
    x : ndarray, shape (..., 4)
        Solutions; zero where the system is singular.
    singular : ndarray of bool, shape (...)
        True where |det A| is below 1e-14 times the product of the row norms.

    Notes
    -----
    Laplace expansion along the first two rows: the determinant and adjugate follow from the
    six 2 × 2 minors of rows (0, 1) and the six of rows (2, 3).
    """
    a = matrix
    a00, a01, a02, a03 = a[..., 0, 0], a[..., 0, 1], a[..., 0, 2], a[..., 0, 3]
    a10, a11, a12, a13 = a[..., 1, 0], a[..., 1, 1], a[..., 1, 2], a[..., 1, 3]
    a20, a21, a22, a23 = a[..., 2, 0], a[..., 2, 1], a[..., 2, 2], a[..., 2, 3]
    a30, a31, a32, a33 = a[..., 3, 0], a[..., 3, 1], a[..., 3, 2], a[..., 3, 3]
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
    b0, b1, b2, b3 = rhs[..., 0], rhs[..., 1], rhs[..., 2], rhs[..., 3]
    # x = adj(A) b / det, with the adjugate rows written out.
    x0 = ((a11 * c5 - a12 * c4 + a13 * c3) * b0 + (-a01 * c5 + a02 * c4 - a03 * c3) * b1
          + (a31 * s5 - a32 * s4 + a33 * s3) * b2 + (-a21 * s5 + a22 * s4 - a23 * s3) * b3)
    x1 = ((-a10 * c5 + a12 * c2 - a13 * c1) * b0 + (a00 * c5 - a02 * c2 + a03 * c1) * b1
          + (-a30 * s5 + a32 * s2 - a33 * s1) * b2 + (a20 * s5 - a22 * s2 + a23 * s1) * b3)
    x2 = ((a10 * c4 - a11 * c2 + a13 * c0) * b0 + (-a00 * c4 + a01 * c2 - a03 * c0) * b1
          + (a30 * s4 - a31 * s2 + a33 * s0) * b2 + (-a20 * s4 + a21 * s2 - a23 * s0) * b3)
    x3 = ((-a10 * c3 + a11 * c1 - a12 * c0) * b0 + (a00 * c3 - a01 * c1 + a02 * c0) * b1
          + (-a30 * s3 + a31 * s1 - a32 * s0) * b2 + (a20 * s3 - a21 * s1 + a22 * s0) * b3)
    row_scale = np.prod(np.sqrt((np.abs(a) ** 2).sum(axis=-1)), axis=-1)
    singular = ~(np.abs(det) > 1e-14 * row_scale)
    safe_det = np.where(singular, 1.0, det)
    x = np.stack([x0, x1, x2, x3], axis=-1) / safe_det[..., None]
    return np.where(singular[..., None], 0.0, x), singular
