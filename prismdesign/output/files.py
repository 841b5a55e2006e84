"""Writing figures and text files so that an existing file is never left half-written.

Every output goes first to a temporary file in the target folder and then replaces the target
with ``os.replace`` (atomic on POSIX and Windows when both lie on one file system), so an
interrupted run leaves either the old file or the new one. Figures are made with
:class:`matplotlib.figure.Figure` directly, never through ``pyplot``: writing a file then
neither needs nor changes the user's matplotlib backend (a Jupyter session keeps its inline
figures).
"""
from __future__ import annotations

import os
import tempfile
from pathlib import Path

__all__ = ["new_figure", "save_figure", "write_text"]


def new_figure(**kwargs):
    """A :class:`matplotlib.figure.Figure` outside pyplot's state (keyword arguments as for
    ``Figure``, e.g. ``figsize=(7.0, 4.0), layout="constrained"``)."""
    from matplotlib.figure import Figure

    return Figure(**kwargs)


def _mode_for(path):
    """Permission bits of the existing file, else 0666 less the process umask."""
    try:
        return path.stat().st_mode & 0o777
    except FileNotFoundError:
        mask = os.umask(0)
        os.umask(mask)
        return 0o666 & ~mask


def _replace(path, write):
    """Call ``write(temporary_path)`` and move the result onto ``path``."""
    path = Path(path)
    fd, temp_name = tempfile.mkstemp(dir=path.parent, prefix=f".{path.name}.", suffix=".tmp")
    os.close(fd)
    try:
        write(temp_name)
        # mkstemp makes the file private (0600); give it the mode a plain open() would have.
        os.chmod(temp_name, _mode_for(path))
        os.replace(temp_name, path)
    except BaseException:
        Path(temp_name).unlink(missing_ok=True)
        raise
    return path


def save_figure(fig, path, dpi=120, **savefig_kwargs):
    """Write `fig` to `path` (format from the suffix: .png, .pdf, .svg ...) atomically.

    Parameters
    ----------
    fig : matplotlib.figure.Figure
    path : str or os.PathLike
    dpi : float
        Resolution of raster formats (dots per inch).
    **savefig_kwargs
        Passed to ``Figure.savefig`` (e.g. ``metadata``).

    Returns
    -------
    pathlib.Path
        The written file.
    """
    path = Path(path)
    fmt = path.suffix.lstrip(".").lower() or "png"
    return _replace(path, lambda name: fig.savefig(name, format=fmt, dpi=dpi,
                                                          **savefig_kwargs))


def write_text(path, text):
    """Write `text` (UTF-8) to `path` atomically; returns the path."""
    return _replace(path, lambda name: Path(name).write_text(text, encoding="utf-8"))
