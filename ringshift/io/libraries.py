"""Libraries of molecules for batch runs: SD files or SMILES lists, read as a stream.

``.sdf``/``.sd``: one molecule per record (name from the title line). Any other file: one SMILES per line
with an optional name after it (whitespace-separated); blank lines and lines starting with ``#`` are
skipped.
"""

from __future__ import annotations

from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path

from ringshift.errors import InputError
from ringshift.io.frames import _SDF, _sd_records

__all__ = ['LibraryItem', 'iter_library']



@dataclass(frozen=True)
class LibraryItem:
    """One molecule of a library: 0-based ``index``, ``name``, ``kind`` ("smiles" or "sdf"), ``text`` (the
    SMILES or the SD record) and ``source`` ("path:line")."""

    index: int
    name: str
    kind: str
    text: str
    source: str


def iter_library(path) -> Iterator[LibraryItem]:
    """Stream the molecules of an SD or SMILES library (formats: module notes)."""
    try:
        yield from _iter_library(path)
    except UnicodeDecodeError as exc:
        raise InputError(f"is not UTF-8 text (byte {exc.start}); expected an SD or SMILES file",
                         source=str(path)) from None


def _iter_library(path) -> Iterator[LibraryItem]:
    path = Path(path)
    if not path.is_file():
        raise InputError("library file not found", source=str(path))
    with path.open(encoding="utf-8") as fh:
        if path.suffix.lower() in _SDF:
            index = 0
            for _, start, text, _ in _sd_records(path):
                if text.strip():
                    title = text.splitlines()[0].strip()
                    body = text if text.endswith("\n") else text + "\n"
                    yield LibraryItem(index, title or f"record {index + 1}", "sdf", body + "$$$$\n", f"{path}:{start}")
                    index += 1
            return
        index = 0
        for line_no, line in enumerate(fh, start=1):
            body = line.strip()
            if not body or body.startswith("#"):      # whole-line comments only: '#' is a SMILES triple bond
                continue
            smiles, name = (body.split(None, 1) + [""])[:2]
            name = name.strip()
            yield LibraryItem(index, name or smiles, "smiles", smiles, f"{path}:{line_no}")
            index += 1
