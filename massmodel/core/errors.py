"""The one error type of user input: a mistake in a file (or an option) the user wrote.

Every reader of an input file (model files and rulebooks, ballast plans, measurement sessions, CAD estimates) raises
:class:`InputError` or a subclass named after its kind of file, so that callers and the command line treat them
alike: the text is one line naming the file, the item and the field, and the command line exits 2 with it.
"""

from __future__ import annotations

__all__ = ["UserError", "InputError", "UsageError", "NotFoundError", "one_line"]


def one_line(message: str) -> str:
    """``message`` with its lines joined by single spaces (blank lines dropped)."""
    return " ".join(line.strip() for line in message.splitlines() if line.strip())


class UserError(Exception):
    """Base of every error caused by what the user gave (a file, an option, a name), not by a bug in massmodel.

    The command line reports these as one line and exits 2; any other exception is an internal error (exit 3).
    Library error types of user input derive from it (with :class:`ValueError` or :class:`KeyError` beside it, so
    callers catching those still work).
    """


class UsageError(UserError, ValueError):
    """A request that cannot be carried out as given: an option value or combination, or a value passed to a
    library function that the user chose (e.g. ``--steps 1``, a margin below zero)."""


class NotFoundError(UserError, KeyError):
    """A name the user gave (a part, a slot, a rule) that the model does not have; the text says what exists."""

    def __str__(self) -> str:  # KeyError quotes its text: show it as written
        return str(self.args[0]) if self.args else ""


class InputError(UserError, ValueError):
    """A problem in an input file, naming the file, the item and the field (one line of text).

    Parameters
    ----------
    file : str
        The file as the user named it (or a label such as ``<text>`` or ``--set``).
    item : str or None
        The table or entry, e.g. ``part 'chassis/tub'`` or ``[units]``; None for the file as a whole.
    field : str or None
        The field of the item, e.g. ``at[2]``; None for the item as a whole.
    message : str
        What is wrong and, where it helps, how to write it (joined to one line).

    Examples
    --------
    >>> str(InputError("car.toml", "part 'tub'", "mass", "expected a mass such as '2.1 kg'"))
    "car.toml: part 'tub', field 'mass': expected a mass such as '2.1 kg'"
    """

    def __init__(self, file: str, item: str | None, field: str | None, message: str) -> None:
        message = one_line(message)
        self.file = file
        self.item = item
        self.field = field
        self.message = message
        where = file
        if item:
            where += f": {item}"
        if field:
            where += f", field '{field}'"
        super().__init__(f"{where}: {message}")

    def __reduce__(self) -> tuple[type, tuple[str, str | None, str | None, str]]:
        return (type(self), (self.file, self.item, self.field, self.message))
