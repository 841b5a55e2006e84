"""Small vector helpers for arrays of 3-vectors on the last axis.

Written out component-wise because ``np.cross`` and ``np.einsum`` carry noticeable per-call
overhead on the many short calls the interface solver makes; all functions accept real or
complex input and broadcast.
"""
import numpy as np

__all__ = ["dot", "cross", "norm", "hermitian_norm", "normalize", "hermitian_normalize",
           "as_unit_vectors", "transverse_basis", "direction_from_angles", "closest_approach"]


def dot(a, b):
    """Bilinear dot product a·b over the last axis (no complex conjugation)."""
    return a[..., 0] * b[..., 0] + a[..., 1] * b[..., 1] + a[..., 2] * b[..., 2]


def cross(a, b):
    """Cross product a × b over the last axis, broadcasting."""
    a0, a1, a2 = a[..., 0], a[..., 1], a[..., 2]
    b0, b1, b2 = b[..., 0], b[..., 1], b[..., 2]
    return np.stack([a1 * b2 - a2 * b1, a2 * b0 - a0 * b2, a0 * b1 - a1 * b0], axis=-1)


def norm(a):
    """Euclidean length of real 3-vectors."""
    return np.sqrt(dot(a, a))


def hermitian_norm(a):
    """sqrt(Σ|aᵢ|²) over the last axis, for real or complex vectors."""
    return np.sqrt((a.real ** 2 + a.imag ** 2).sum(axis=-1)) if np.iscomplexobj(a) else norm(a)


def normalize(a):
    """Real vectors scaled to unit length (zero vectors stay zero)."""
    length = norm(a)
    return a / np.where(length > 0, length, 1.0)[..., None]


def hermitian_normalize(a):
    """Complex vectors scaled to unit hermitian length (zero vectors stay zero)."""
    length = hermitian_norm(a)
    return a / np.where(length > 0, length, 1.0)[..., None]


def as_unit_vectors(value, name):
    """Convert input to an array of unit 3-vectors, failing with a one-line message.

    Parameters
    ----------
    value : array_like, shape (..., 3)
        Vectors of any non-zero length.
    name : str
        Argument name used in the error message.
    """
    arr = np.asarray(value, dtype=float)
    if arr.ndim == 0 or arr.shape[-1] != 3:
        raise ValueError(f"{name} must be 3-vectors on the last axis, got shape {arr.shape}")
    if not np.all(np.isfinite(arr)):
        raise ValueError(f"{name} must be finite, got {arr.tolist() if arr.size <= 9 else 'non-finite entries'}")
    length = norm(arr)
    if np.any(length == 0):
        raise ValueError(f"{name} must be non-zero vectors, got a zero vector")
    return arr / length[..., None]


def transverse_basis(direction):
    """Unit basis (x', y') transverse to a propagation direction, for Jones vectors.

    x' = normalize(ŷ × d) and y' = d × x', so that for d = ẑ the basis is (x̂, ŷ) and for a
    direction tilted in the x–z plane y' stays ŷ. Directions along ±ŷ use x' = x̂ instead.

    Parameters
    ----------
    direction : ndarray, shape (..., 3)
        Unit propagation directions.

    Returns
    -------
    x_prime, y_prime : ndarray, shape (..., 3)
    """
    d = np.asarray(direction, dtype=float)
    y_hat = np.zeros_like(d)
    y_hat[..., 1] = 1.0
    x_prime = cross(y_hat, d)
    length = norm(x_prime)
    fallback = length < 1e-9
    if np.any(fallback):
        x_hat = np.zeros_like(d)
        x_hat[..., 0] = 1.0
        x_prime = np.where(fallback[..., None], x_hat - dot(x_hat, d)[..., None] * d, x_prime)
        length = norm(x_prime)
    x_prime = x_prime / length[..., None]
    return x_prime, cross(d, x_prime)


def direction_from_angles(in_plane_deg, out_of_plane_deg=0.0):
    """Unit direction from its in-plane and out-of-plane angles (degrees).

    d = (cos β sin α, sin β, cos β cos α) with α the in-plane angle (atan2(d_x, d_z), positive
    toward +x) and β the out-of-plane angle (asin d_y): the inverse of the deviation convention
    of DESIGN.md, so that Beam.deviation_deg returns (α, β).

    Parameters
    ----------
    in_plane_deg, out_of_plane_deg : array_like
        Broadcast against each other.

    Returns
    -------
    ndarray, shape (..., 3)
    """
    a = np.deg2rad(np.asarray(in_plane_deg, dtype=float))
    b = np.deg2rad(np.asarray(out_of_plane_deg, dtype=float))
    a, b = np.broadcast_arrays(a, b)
    return np.stack([np.cos(b) * np.sin(a), np.sin(b), np.cos(b) * np.cos(a)], axis=-1)


def closest_approach(point_a, direction_a, point_b, direction_b, parallel_limit=1e-12):
    """Closest approach of two straight lines r + s·d (batched over leading axes).

    Uses |d_a × d_b|² as the denominator rather than 1 − (d_a·d_b)², which cancels badly for
    nearly parallel lines (split angles of 1e-4 rad are common).

    Parameters
    ----------
    point_a, direction_a, point_b, direction_b : ndarray, shape (..., 3)
        A point on each line and its unit direction.
    parallel_limit : float
        |d_a × d_b| below which the lines count as parallel.

    Returns
    -------
    midpoint : ndarray, shape (..., 3)
        Midpoint of the shortest segment between the lines; NaN where they are parallel.
    gap : ndarray, shape (...)
        Length of that segment (the distance between the lines where parallel).
    parallel : ndarray of bool, shape (...)
    """
    normal = cross(direction_a, direction_b)
    den = dot(normal, normal)
    parallel = den < parallel_limit ** 2
    safe = np.where(parallel, 1.0, den)
    w = point_b - point_a
    s = dot(cross(w, direction_b), normal) / safe
    t = dot(cross(w, direction_a), normal) / safe
    on_a = point_a + s[..., None] * direction_a
    on_b = point_b + t[..., None] * direction_b
    along = dot(w, direction_a)
    gap = np.where(parallel, np.sqrt(np.maximum(dot(w, w) - along * along, 0.0)),
                   np.sqrt(dot(on_a - on_b, on_a - on_b)))
    midpoint = np.where(parallel[..., None], np.nan, 0.5 * (on_a + on_b))
    return midpoint, gap, parallel
