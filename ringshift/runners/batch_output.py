"""The JSON-lines output of :func:`ringshift.runners.batch.run_batch`: recognised before it is touched, tidied
before a resume.

ringshift appends to, truncates or rewrites only a file that is already a batch output: empty, or every
line a batch record (``{"ringshift_result": "batch_record", ...}`` with an integer ``index`` and a ``name``),
the last one possibly cut off by an interruption. Anything else (the library itself, ``notes.txt``) is
refused before a byte is changed, ``restart`` or not. A resume removes a cut-off last line and duplicate
records (the first record of a molecule is kept) and says so.
"""

from __future__ import annotations

import json
import os
import stat
from dataclasses import dataclass, field
from pathlib import Path

from ringshift import _signals
from ringshift.errors import OutputError
from ringshift.io.writing import os_error, temporary_name

#: How every record line starts (``json.dumps`` of the record's head, keys in this order).
RECORD_HEAD = b'{"ringshift_result": "batch_record"'


@dataclass
class BatchOutput:
    """What an existing batch output holds: its complete record lines, in file order, with (index, name);
    the bytes of a cut-off last line; the byte length of the complete lines."""

    lines: list[bytes] = field(default_factory=list)
    keys: list[tuple[int, str]] = field(default_factory=list)
    partial: bytes = b""
    complete_bytes: int = 0


def read_batch_output(output: Path) -> BatchOutput:
    """Parse an existing output without changing it; :class:`OutputError` if it is not a batch output."""
    try:
        with output.open("rb") as fh:
            data = fh.read()
    except FileNotFoundError:
        return BatchOutput()
    except OSError as exc:
        raise os_error(output, exc, "cannot read it") from None
    keep = data.rfind(b"\n") + 1
    found = BatchOutput(partial=data[keep:], complete_bytes=keep)

    def foreign(what: str) -> OutputError:
        return OutputError(f"{output}: is not a ringshift batch output ({what}); ringshift appends only to its "
                           "own JSON-lines files: choose another output file")

    for line_no, raw in enumerate(data[:keep].splitlines(), start=1):
        try:
            rec = json.loads(raw)
            ok = isinstance(rec, dict) and rec.get("ringshift_result") == "batch_record"
            key = (int(rec["index"]), str(rec["name"])) if ok else None
        except (ValueError, KeyError, TypeError):
            key = None
        if key is None or isinstance(rec.get("index"), bool):
            raise foreign(f"line {line_no} is not a batch record")
        found.lines.append(raw + b"\n")
        found.keys.append(key)
    part = found.partial
    if part and not (RECORD_HEAD.startswith(part) or part.startswith(RECORD_HEAD)):
        raise foreign(f"its last line {len(found.lines) + 1} is not a batch record")
    return found


def tidy_for_resume(output: Path, found: BatchOutput) -> tuple[dict[int, str], list[str]]:
    """Remove a cut-off last line and duplicate records from ``output`` (its lock held); returns
    (index → name of the molecules done, notes saying what was removed)."""
    done: dict[int, str] = {}
    kept: list[bytes] = []
    duplicates: list[int] = []
    for raw, (index, name) in zip(found.lines, found.keys):
        if index in done:
            duplicates.append(index)
            continue
        done[index] = name
        kept.append(raw)
    notes = []
    try:
        if duplicates:
            _rewrite(output, b"".join(kept))
            shown = ", ".join(map(str, sorted(set(duplicates))[:10])) + (", ..." if len(set(duplicates)) > 10 else "")
            notes.append(f"{output}: removed {len(duplicates)} duplicate record{'s' * (len(duplicates) > 1)} "
                         f"(molecule index {shown}; the first record of each was kept)")
        elif found.partial:
            with output.open("rb+") as fh:
                fh.truncate(found.complete_bytes)
        if found.partial:
            notes.append(f"{output}: removed a cut-off last line (a record an interrupted run left unfinished); "
                         "that molecule is computed again")
    except OSError as exc:
        raise os_error(output, exc, "cannot tidy it for the resume") from None
    return done, notes


def _rewrite(output: Path, data: bytes) -> None:
    """Replace ``output`` by ``data`` atomically, keeping its permissions."""
    mode = stat.S_IMODE(os.stat(output).st_mode)
    tmp = temporary_name(output)
    _signals.register_temporary(tmp)
    try:
        fd = os.open(tmp, os.O_WRONLY | os.O_CREAT | os.O_EXCL | os.O_CLOEXEC, 0o600)
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
            os.fchmod(fh.fileno(), mode)
        os.replace(tmp, output)
    except BaseException:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        raise
    finally:
        _signals.forget_temporary(tmp)


def start_afresh(output: Path) -> None:
    """Empty an existing batch output (``restart``); checked by :func:`read_batch_output` first."""
    try:
        with output.open("rb+") as fh:
            fh.truncate(0)
    except FileNotFoundError:
        pass
    except OSError as exc:
        raise os_error(output, exc, "cannot empty it for the restart") from None
