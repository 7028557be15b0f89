"""Exception classes of nmrpred.

Every exception the library raises derives from :class:`Error` and carries the
status code the C interface uses for the same failure (``code``) and the
library's message (``message``). Errors about the caller's data or arguments
also derive from :class:`ValueError`. Running out of memory raises the built-in
:class:`MemoryError`.
"""

from __future__ import annotations

from typing import Dict, Type

__all__ = [
    "Error",
    "ArgumentError",
    "InputError",
    "UnsupportedError",
    "TablesError",
    "InternalError",
    "error_for_code",
]


class Error(Exception):
    """Base of every nmrpred exception.

    Attributes:
        message: what went wrong, naming the argument, record or atom.
        code: the matching C status code (``NMR_ERR_*`` in nmrpred.h).
    """

    code: int = 6

    def __init__(self, message: str = "") -> None:
        super().__init__(message)
        self.message: str = message


class ArgumentError(Error, ValueError):
    """An argument is invalid: out of range or an unknown name (NMR_ERR_ARGUMENT)."""

    code = 1


class InputError(Error, ValueError):
    """The structure text cannot be used: syntax, unknown element, no or too many
    records (NMR_ERR_INPUT)."""

    code = 2


class UnsupportedError(Error):
    """A valid request the library does not handle (NMR_ERR_UNSUPPORTED)."""

    code = 3


class TablesError(Error):
    """A data table is missing, malformed or cites an unknown source (NMR_ERR_TABLES)."""

    code = 4


class InternalError(Error):
    """A bug in the library; please report it with the message (NMR_ERR_INTERNAL)."""

    code = 6


_BY_CODE: Dict[int, Type[Error]] = {
    cls.code: cls for cls in (ArgumentError, InputError, UnsupportedError, TablesError, InternalError)
}


def error_for_code(code: int, message: str) -> Exception:
    """Builds the exception matching a C status code (MemoryError for
    NMR_ERR_NOMEM, InternalError for codes this version does not know)."""
    if code == 5:
        return MemoryError(message)
    return _BY_CODE.get(code, InternalError)(message)
