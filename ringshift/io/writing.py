"""Writing output files atomically: a temporary sibling renamed into place, never half-written.
"""

from __future__ import annotations

import os
import tempfile
from pathlib import Path

from ringshift.errors import OutputError


def atomic_write(path: str | os.PathLike, data: str | bytes, *, force: bool = False) -> Path:
    """Write a file via a temporary file in the same folder and a rename.

    An interrupted or failed write leaves no partial file; an existing file is kept unless ``force``.
    """
    path = Path(path)
    if path.exists() and not force:
        raise OutputError(f"{path}: already exists; use force to overwrite it")
    folder = path.parent if str(path.parent) else Path(".")
    if not folder.is_dir():
        raise OutputError(f"{path}: folder {folder} does not exist")
    try:
        fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=folder)
    except OSError as exc:
        raise OutputError(f"{path}: cannot write in {folder} ({exc.strerror})") from None
    try:
        if isinstance(data, bytes):
            with os.fdopen(fd, "wb") as fb:
                fb.write(data)
        else:
            with os.fdopen(fd, "w", encoding="utf-8", newline="") as ft:
                ft.write(data)
        os.replace(tmp, path)
    except BaseException:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        raise
    return path
