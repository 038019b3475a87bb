"""The one family of errors the engine raises.

Every message is written for the geologist running the tool: it names the
file, column and rows at fault where it can, and says what to do next.
The command line turns :class:`InputError` (and its children) into exit
code 2 and any other :class:`AnisotropyError` into exit code 1.
"""

from __future__ import annotations

__all__ = [
    "AnisotropyError",
    "InputError",
    "ColumnError",
    "DataError",
    "InsufficientDataError",
    "InterpretationError",
    "FitError",
]


class AnisotropyError(Exception):
    """Base class of every error raised on purpose by ``anisotropy``."""


class InputError(AnisotropyError, ValueError):
    """The input (file, table, arguments) cannot be used as given."""


class ColumnError(InputError, KeyError):
    """A named or expected column is missing or unusable."""

    def __str__(self) -> str:  # KeyError would otherwise quote the message
        return str(self.args[0]) if self.args else ""


class DataError(InputError):
    """The values in the table are malformed (text in a numeric column, NaN coordinates, ...)."""


class InsufficientDataError(InputError):
    """Too few samples or pairs for the requested answer."""


class InterpretationError(InputError):
    """An interpreted orientation is geometrically impossible or malformed."""


class FitError(AnisotropyError, RuntimeError):
    """A fit failed to converge or gave an impermissible model."""
