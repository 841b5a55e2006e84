"""Output-file checks shared by the command-line verbs.

Every verb checks the files it will write *before* it does any work, so a typo in a file name
costs nothing; the writing itself goes through :mod:`prismdesign.output.files` (temporary file,
then an atomic rename), so an existing file is never left half-written.
"""
from __future__ import annotations

import csv
import io
from pathlib import Path


def output_file(text, suffixes, option):
    """Check an output file name given to `option`; return it as a :class:`~pathlib.Path`.

    Parameters
    ----------
    text : str
        The file name as typed.
    suffixes : tuple of str or None
        Allowed endings (lower case, with the dot); None allows any.
    option : str
        The option's name, for the one-line error (e.g. ``"--csv"``).

    Raises
    ------
    ValueError
        The ending is not allowed, the name is a folder, or its folder does not exist.
    """
    path = Path(text)
    if suffixes is not None and path.suffix.lower() not in suffixes:
        raise ValueError(f"{option} {text}: need a file name ending in {', '.join(suffixes)}")
    if path.is_dir():
        raise ValueError(f"{option} {text}: is a folder; need a file name")
    if not path.parent.is_dir():
        raise ValueError(f"{option} {text}: the folder {path.parent} does not exist")
    return path


def output_folder(text, option):
    """Check a folder given to `option` (created later if missing); return it as a Path."""
    folder = Path(text)
    if folder.exists() and not folder.is_dir():
        raise ValueError(f"{option} {text}: is a file; need a folder")
    return folder


def write_csv(path, header, rows):
    """Write `header` and `rows` (sequences) as CSV, atomically; return the path written."""
    from .output.files import write_text

    buffer = io.StringIO()
    writer = csv.writer(buffer)
    writer.writerow(header)
    writer.writerows(rows)
    return write_text(path, buffer.getvalue())
