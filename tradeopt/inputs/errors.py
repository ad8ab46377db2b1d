"""The project's one error type for bad input.

Every problem a user can fix (a missing column, a unit typo, a value outside a
model's validity, an unknown ID) is raised as :class:`InputError`, which the
command line prints as exactly one line and turns into exit status 2.
"""
from __future__ import annotations

from ..physics.validity import ModelRangeError

__all__ = ["InputError", "ModelRangeError"]


class InputError(Exception):
    """A user-fixable problem in an input file or argument.

    Parameters
    ----------
    message : str
        What is wrong and what is expected, e.g. ``"expected a positive number, got -1"``.
    file : str, optional
        The file (as the user named it) or ``"<default scenario>"``.
    where : str, optional
        The row or key, e.g. ``"row 3, column 'diameter_m'"`` or ``"key [site] latitude_deg"``.
    """

    def __init__(self, message: str, *, file: str | None = None, where: str | None = None):
        self.message = " ".join(str(message).split())
        self.file = file
        self.where = where
        super().__init__(self.line())

    def line(self) -> str:
        """The one line printed to the user."""
        parts = [p for p in (self.file, self.where) if p]
        prefix = ": ".join(parts)
        return f"{prefix}: {self.message}" if prefix else self.message

    def located(self, *, file: str | None = None, where: str | None = None) -> InputError:
        """A copy with the file or location filled in where still unknown."""
        return InputError(self.message, file=self.file or file, where=self.where or where)
