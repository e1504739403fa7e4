"""Typed exceptions and warnings of ringshift.

Every error that a user can cause is an :class:`InputError`; its message is one line that names the
input (file and line, or argument), says what was expected and, where possible, how to fix it. The
CLI prints it on stderr and exits with code 2; so does an :class:`OutputError` and any other OS error (the
message names the path). Ctrl-C and SIGTERM exit 130 and 143. Anything else is an internal error (exit 1).
"""

from __future__ import annotations


class RingshiftError(Exception):
    """Base class of every exception raised on purpose by ringshift."""


class InputError(RingshiftError, ValueError):
    """Bad input: a file, argument or value the user supplied cannot be used.

    Parameters
    ----------
    message : str
        One line: what arrived, what was expected, how to fix it.
    source : str, optional
        The input the message refers to (a path, ``path:line`` or an API parameter name). When given,
        the message is prefixed with it.
    parameter : str, optional
        The API parameter that would fix the problem when ``source`` is a file (e.g. ``"charge"`` for an
        XYZ file whose bonds do not fit a neutral molecule); the command line names its option.
    """

    def __init__(self, message: str, source: str | None = None, *, parameter: str | None = None):
        self.source = source
        self.parameter = parameter
        self.bare_message = message
        text = f"{source}: {message}" if source else message
        super().__init__(" ".join(text.split()))  # always one line


class OutputError(RingshiftError, OSError):
    """An output cannot be written (exists and replacing it was not asked for, unwritable folder, ...)."""

    def __init__(self, message: str):
        super().__init__(" ".join(message.split()))


class RingshiftWarning(UserWarning):
    """Base class of ringshift's warnings."""


class GeometryWarning(RingshiftWarning):
    """A geometry is questionable: non-planar ring, proton near a loop wire, odd bond lengths."""


class PiSystemWarning(RingshiftWarning):
    """The π system is unusual: radical, open shell, disconnected fragments."""


class AssignmentWarning(RingshiftWarning):
    """A peak list does not fit the molecule well: unassigned peaks, integrals off, ..."""


class OutputWarning(RingshiftWarning):
    """An output was tidied or an option lowered: duplicate or cut-off batch records removed, ``jobs`` capped."""
