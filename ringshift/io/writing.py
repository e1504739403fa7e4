"""Writing output files atomically: a temporary sibling renamed into place, never half-written.
"""

from __future__ import annotations

import os
import tempfile
from collections.abc import Sequence
from pathlib import Path

from ringshift.errors import OutputError


def atomic_write(path: str | os.PathLike, data: str | bytes, *, force: bool = False,
                 inputs: Sequence[str | os.PathLike] = ()) -> Path:
    """Write a file via a temporary file in the same folder and a rename.

    An interrupted or failed write leaves no partial file; an existing file is kept unless ``force``. Never
    replaced, ``force`` or not: anything that is not a regular file (a folder, a device, a pipe) and any of
    ``inputs`` (the files this run reads; a SMILES or a missing path among them is ignored).
    """
    path = Path(path)
    if path.exists() and not path.is_file():
        raise OutputError(f"{path}: exists and is not a regular file; ringshift replaces only its own output files")
    for source in inputs:
        if path.exists() and Path(source).is_file() and os.path.samefile(path, source):
            raise OutputError(f"{path}: is an input of this run; choose another output path")
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
