"""strainline's own exceptions.

Every user-facing error carries the field path it concerns; the command line turns it into one
line on stderr and exit code 2. Anything else that escapes is an internal failure (exit 1).
"""
from __future__ import annotations

import difflib
from collections.abc import Iterable


class StrainlineError(ValueError):
    """Bad input. ``str(err)`` is the one line the command line prints.

    Parameters
    ----------
    message : str
        What is wrong, in one line.
    field : str, optional
        Where: a file and/or field path such as ``study.yaml: stack.dielectric[1]``.
    """

    def __init__(self, message: str, field: str | None = None) -> None:
        self.message = message
        self.field = field
        super().__init__(message, field)

    def __str__(self) -> str:
        return f"{self.field}: {self.message}" if self.field else self.message

    def __reduce__(self):  # picklable across processes
        return (type(self), (self.message, self.field))


class InputError(StrainlineError):
    """Bad command-line arguments."""


class CatalogError(StrainlineError):
    """A malformed catalog file or an unknown catalog entry."""


class StackupError(StrainlineError):
    """A malformed stackup file."""


class StudyError(StrainlineError):
    """A malformed study file."""


def closest(value: object, allowed: Iterable[object]) -> str | None:
    """The allowed value closest to ``value`` (difflib), or None when nothing is close."""
    names = [str(a) for a in allowed]
    hits = difflib.get_close_matches(str(value), names, n=1, cutoff=0.5)
    return hits[0] if hits else None


def not_one_of(
    field: str | None,
    value: object,
    allowed: Iterable[object],
    cls: type[StrainlineError] = InputError,
) -> StrainlineError:
    """Build the standard "'x' is not one of [...]; did you mean 'y'?" error."""
    allowed = list(allowed)
    listing = ", ".join(repr(a) for a in allowed)
    msg = f"{value!r} is not one of [{listing}]"
    hint = closest(value, allowed)
    if hint is not None:
        msg += f"; did you mean {hint!r}?"
    return cls(msg, field)
