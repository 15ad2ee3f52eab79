"""Exceptions and warnings of the extremes package.

Every error the library raises on purpose is an :class:`ExtremesError`. Each subclass also inherits a
built-in exception, so ``except ValueError`` keeps working for callers who do not know this package.
The command line maps :class:`ExtremesError` to exit status 1 with a one-line message.
"""


class ExtremesError(Exception):
    """Base class of every error raised on purpose by extremes."""


class DataError(ExtremesError, ValueError):
    """The input data is unusable: unreadable file, wrong layout, too short a record."""


class InputTypeError(DataError, TypeError):
    """An input has the wrong type (e.g. an array where a time-indexed series is expected)."""


class DatumError(DataError):
    """Series on different vertical datums were combined."""


class FitError(ExtremesError, RuntimeError):
    """A statistical fit or analysis failed to converge or is undefined for the data."""


class OutputError(ExtremesError, OSError):
    """An output could not be written, or would overwrite existing results without permission."""


class ExtremesWarning(UserWarning):
    """Suspicious but valid input or results (short record, large gaps, poor fit)."""
