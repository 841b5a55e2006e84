"""Values as users wrote them, for one-line error and warning messages (used by every layer)."""
import numpy as np

__all__ = ["plain", "shown"]

_SHOWN_SIZE = 8


def plain(value):
    """A numpy scalar or 0-d array as the Python number it holds; anything else unchanged.

    Lets the scalar checks of :mod:`prismdesign.prisms.base` show ``-1.0`` rather than
    ``np.float64(-1.0)`` (and still refuse a numpy boolean, which becomes a Python bool).
    """
    if isinstance(value, np.generic) or (isinstance(value, np.ndarray) and value.ndim == 0):
        return value.item()
    return value


def shown(value):
    """Plain text of a value for an error message: numbers as numbers, small arrays as lists."""
    value = plain(value)
    if isinstance(value, (list, tuple, np.ndarray)):
        try:
            array = np.asarray(value)
        except (TypeError, ValueError):
            array = None
        if array is not None and array.dtype.kind in "biufc":
            if array.size > _SHOWN_SIZE:
                return f"an array of shape {array.shape}"
            value = array.tolist()
    text = repr(value)
    return text if len(text) <= 80 else text[:77] + "..."
