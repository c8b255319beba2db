"""Project exceptions.

Every error torqlog raises on purpose is a :class:`TorqlogError`, whose message is one
sentence a user can act on (the file, the row or column, and the fix). The CLI prints it
without a traceback and exits 1 (:class:`DataError`) or 2 (:class:`UsageError`).
"""

from __future__ import annotations


class TorqlogError(ValueError):
    """Base of all torqlog errors; ``str(err)`` is the user-facing sentence."""

    exit_code = 1


class DataError(TorqlogError):
    """The input data cannot be used (bad file, missing channel, too few cycles)."""

    exit_code = 1


class UsageError(TorqlogError):
    """The options given do not fit together or are out of range."""

    exit_code = 2


class CheckFailed(TorqlogError):
    """A design check failed and the caller asked for strict mode (exit code 3)."""

    exit_code = 3


def naming_file(exc: TorqlogError, path: object) -> TorqlogError:
    """The same kind of error, its sentence led by the file it concerns.

    Deep stages (cycle tracking, sizing) do not know the file; the function that opened
    it adds the name once, here, unless the sentence already starts with it.

    Examples
    --------
    >>> str(naming_file(DataError("too few samples"), "press.csv"))
    'press.csv: too few samples'
    """
    text, name = str(exc), str(path)
    if text.startswith(name):
        return exc
    return type(exc)(f"{name}: {text}")
