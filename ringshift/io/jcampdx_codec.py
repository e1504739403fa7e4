"""The JCAMP-DX ASDF codec: AFFN, PAC, SQZ, DIF and DUP forms of ``##XYDATA=(X++(Y..Y))``.

McDonald & Wilks, Appl. Spectrosc. 1988, 42, 151 (JCAMP-DX for infrared, which defines the compression
forms) and Davies & Lampen, Appl. Spectrosc. 1993, 47, 1093 (JCAMP-DX for NMR). :func:`decode_xydata`
checks the Y-value check digits of DIF lines and the point count; :func:`encode_xydata` writes any form.
"""

from __future__ import annotations

import math
import re

import numpy as np

from ringshift.errors import InputError

FORMS: tuple[str, ...] = ("AFFN", "PAC", "SQZ", "DIF")

_SQZ = {c: (1, d) for d, c in enumerate("@ABCDEFGHI")} | {c: (-1, d + 1) for d, c in enumerate("abcdefghi")}

_DIF = {c: (1, d) for d, c in enumerate("%JKLMNOPQR")} | {c: (-1, d + 1) for d, c in enumerate("jklmnopqr")}

_DUP = {c: d + 1 for d, c in enumerate("STUVWXYZs")}

_SQZ_OUT = ("@ABCDEFGHI", "@abcdefghi")

_DIF_OUT = ("%JKLMNOPQR", "%jklmnopqr")

_DUP_OUT = "?STUVWXYZs"

_DIGITS = r"(?:\d+\.?\d*|\.\d+)"

_TOKEN = re.compile(
    rf"(?P<sep>[\s,;]+)|(?P<num>[+-]?{_DIGITS}(?:(?<=[\d.])[eE][+-]\d+)?)"
    rf"|(?P<sqz>[@A-Ia-i]{_DIGITS}?)|(?P<dif>[%J-Rj-r]{_DIGITS}?)|(?P<dup>[S-Zs]\d*)"
)

# ------------------------------------------------------------------------------- ASDF decoding
def tokenize_asdf(text: str, *, where: str = "<line>") -> list[tuple[str, float]]:
    """Split one ``##XYDATA`` line (comment removed) into tokens; ``where`` is "file:line" for messages.

    Returns a list of (kind, value): kind "abs" (an AFFN, PAC or SQZ value), "dif" (a DIF
    difference) or "dup" (a DUP count ≥ 1).
    """
    out: list[tuple[str, float]] = []
    pos, n = 0, len(text)
    while pos < n:
        m = _TOKEN.match(text, pos)
        if m is None:
            raise InputError(f"unexpected character {text[pos]!r} in ##XYDATA (column {pos + 1}); "
                             "expected AFFN, PAC, SQZ, DIF or DUP values", where)
        kind, tok = m.lastgroup, m.group()
        pos = m.end()
        if kind == "sep":
            continue
        if kind == "num":
            value = float(tok)
        elif kind == "dup":
            if len(tok) > 9:
                raise InputError(f"DUP count {tok!r} is absurdly large", where)
            out.append(("dup", float(int(str(_DUP[tok[0]]) + tok[1:]))))
            continue
        else:
            sign, digit = (_SQZ if kind == "sqz" else _DIF)[tok[0]]
            value = sign * float(str(digit) + tok[1:])
        if not math.isfinite(value):
            raise InputError(f"value {tok!r} is not finite", where)
        out.append(("abs" if kind != "dif" else "dif", value))
    return out


def decode_xydata(lines: list[tuple[int, str]], *, npoints: int, source: str = "<string>"
                  ) -> tuple[list[float], list[tuple[int, float, int]]]:
    """Decode ``##XYDATA=(X++(Y..Y))`` lines in any mixture of AFFN, PAC, SQZ, DIF and DUP.

    A DUP count n repeats the preceding value (or, after a DIF, the preceding difference) so that it
    occurs n times in all. When a line follows one that ended in DIF form, its first Y value is the
    Y check (the last value of the previous line, repeated): it is compared and not stored
    (JCAMP-DX 4.24, McDonald & Wilks 1988).

    Parameters
    ----------
    lines : list of (line_number, text)
    npoints : int
        Expected number of values; decoding stops with an error as soon as it is exceeded.
    source : str
        File name for messages.

    Returns
    -------
    values : list of float
        Y values (not × YFACTOR).
    x_checks : list of (line_number, x, index)
        The X starting each line (not × XFACTOR) and the index of the point it labels.
    """
    values: list[float] = []
    x_checks: list[tuple[int, float, int]] = []
    last = diff = 0.0  # meaningful once last_kind is set
    last_kind = None
    after_dif = False
    for lineno, text in lines:
        where = f"{source}:{lineno}"
        tokens = tokenize_asdf(text, where=where)
        if not tokens:
            continue
        if tokens[0][0] != "abs":
            raise InputError("a ##XYDATA line must start with an X value", where)
        check_pending = after_dif
        x_checks.append((lineno, tokens[0][1], len(values) - (1 if check_pending else 0)))
        for kind, value in tokens[1:]:
            if kind == "abs":
                if check_pending:
                    if not math.isclose(value, last, rel_tol=1e-9, abs_tol=1e-6):
                        raise InputError(f"DIF Y-check failed: line starts with {value:g}, previous line "
                                         f"ended with {last:g} (corrupt or truncated data)", where)
                else:
                    values.append(value)
                last, last_kind = value, "abs"
            elif kind == "dif":
                if last_kind is None:
                    raise InputError("DIF value with no preceding Y value", where)
                diff, last, last_kind = value, last + value, "dif"
                values.append(last)
            else:
                if last_kind is None:
                    raise InputError("DUP count with no preceding value", where)
                count = int(value) - 1
                if len(values) + count > npoints:
                    raise InputError(f"##XYDATA holds more values than NPOINTS={npoints}", where)
                if last_kind == "abs":
                    values.extend([last] * count)
                else:
                    for _ in range(count):
                        last += diff
                        values.append(last)
            check_pending = False
            if len(values) > npoints:
                raise InputError(f"##XYDATA holds more values than NPOINTS={npoints}", where)
        after_dif = len(tokens) > 1 and last_kind == "dif"
    return values, x_checks

# ------------------------------------------------------------------------------- ASDF encoding
def _pseudo(value: int, table: tuple[str, str]) -> str:
    digits = str(abs(int(value)))
    return table[value < 0][int(digits[0])] + digits[1:]


def _dup(count: int) -> str:
    digits = str(count)
    return _DUP_OUT[int(digits[0])] + digits[1:]


def encode_xydata(x: np.ndarray, y: np.ndarray, form: str = "DIF", *, width: int = 80) -> list[str]:
    """Encode integer Y values as ``##XYDATA=(X++(Y..Y))`` lines.

    ``x`` (n,) holds the X of every point (file units / XFACTOR), written at line starts; ``y`` (n,)
    the rounded Y / YFACTOR. ``form`` "DIF" means DIFDUP: an SQZ first value, DIF differences, DUP
    runs, a Y check at each following line start and a final check line (the JCAMP-DX 4.24 paper's
    example is ``1AJT%jX``). ``width``: target line length (80 in the standard; one long token may
    exceed it). Returns the lines.
    """
    ys = [int(v) for v in y]
    n = len(ys)
    xt = [f"{float(v):.10g}" for v in x]
    if form not in FORMS:
        raise InputError(f"compress={form!r}; expected one of {', '.join(FORMS)}", "compress")
    lines: list[str] = []
    if form != "DIF":
        tok = {"AFFN": lambda v: f" {v}", "PAC": lambda v: f"{v:+d}", "SQZ": lambda v: _pseudo(v, _SQZ_OUT)}[form]
        tokens = [tok(v) for v in ys]
        i = 0
        while i < n:
            line = xt[i] + tokens[i]
            i += 1
            while i < n and len(line) + len(tokens[i]) <= width:
                line += tokens[i]
                i += 1
            lines.append(line)
        return lines
    i = 0
    while True:
        line, j = xt[i] + _pseudo(ys[i], _SQZ_OUT), i
        while j + 1 < n:
            d = ys[j + 1] - ys[j]
            run = 1
            while j + 1 + run < n and ys[j + 1 + run] - ys[j + run] == d:
                run += 1
            token = _pseudo(d, _DIF_OUT) + (_dup(run) if run > 1 else "")
            if len(line) + len(token) > width and j > i:
                break
            line, j = line + token, j + run
        lines.append(line)
        if j == n - 1:
            if j > i:
                lines.append(xt[j] + _pseudo(ys[j], _SQZ_OUT))  # final Y check
            return lines
        i = j
