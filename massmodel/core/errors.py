"""The one error type of user input: a mistake in a file (or an option) the user wrote.

Every reader of an input file (model files and rulebooks, ballast plans, measurement sessions, CAD estimates) raises
:class:`InputError` or a subclass named after its kind of file, so that callers and the command line treat them
alike: the text is one line naming the file, the item and the field, and the command line exits 2 with it.
"""

from __future__ import annotations

__all__ = ["InputError", "one_line"]


def one_line(message: str) -> str:
    """``message`` with its lines joined by single spaces (blank lines dropped)."""
    return " ".join(line.strip() for line in message.splitlines() if line.strip())


class InputError(ValueError):
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
