"""Atomic file writes: everything is written to a temporary file in the target's folder, then renamed over the
target (``os.replace``), so a failure never leaves half a file and never destroys an earlier good one.

Inside :func:`inputs_protected` (the command line runs every command in it) the files the readers have read
(:func:`note_input`: a model, the file it extends, its rulebook, the STEP and mesh files of its
shapes, a session's model) cannot be written over: an output
named like one of them is refused with a :class:`~massmodel.core.errors.UsageError`.
"""

from __future__ import annotations

import os
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from contextvars import ContextVar
from pathlib import Path

from massmodel.core.errors import UsageError

__all__ = ["write_atomic", "write_text_atomic", "current_umask", "inputs_protected", "note_input", "check_not_input"]

_INPUTS: ContextVar[dict[str, str] | None] = ContextVar("massmodel_inputs_read", default=None)


@contextmanager
def inputs_protected() -> Iterator[None]:
    """Within the block, files noted by :func:`note_input` are refused as outputs (:func:`check_not_input`)."""
    token = _INPUTS.set({})
    try:
        yield
    finally:
        _INPUTS.reset(token)


def note_input(path: str | Path) -> None:
    """Record that ``path`` was read as an input (only inside :func:`inputs_protected`; a no-op elsewhere)."""
    inputs = _INPUTS.get()
    if inputs is not None:
        inputs.setdefault(os.path.realpath(path), str(path))


def check_not_input(path: str | Path) -> None:
    """Refuse to write ``path`` when it was read as an input of the running command.

    Raises
    ------
    UsageError
        Naming the output and the input it would replace.
    """
    inputs = _INPUTS.get()
    if inputs:
        read_as = inputs.get(os.path.realpath(path))
        if read_as is not None:
            raise UsageError(f"{path}: that is an input of this command (read as '{read_as}'); choose another output "
                             "name")


def current_umask() -> int:
    """The process umask (read without changing it), for giving temporary files the user's usual mode."""
    mask = os.umask(0o022)
    os.umask(mask)
    return mask


def write_atomic(path: str | Path, write: Callable[[Path], object], suffix: str = "") -> Path:
    """Call ``write(tmp)`` on a temporary file beside ``path``, then rename it to ``path``.

    Parameters
    ----------
    path : str or Path
        The file to produce; its folder is created when missing.
    write : callable
        Writes the whole content to the temporary path it is given (may raise: the temporary file is removed).
    suffix : str
        Ending of the temporary file (writers that choose the format by the name need it); default the target's.

    Returns
    -------
    Path
        The target.
    """
    import tempfile  # only when writing: keeps the start-up of the report command light

    target = Path(path)
    check_not_input(target)
    try:
        target.parent.mkdir(parents=True, exist_ok=True)
        fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=suffix or target.suffix or ".tmp",
                                   dir=target.parent)
    except OSError as exc:
        raise _naming(exc, target) from None
    os.close(fd)
    try:
        os.chmod(tmp, 0o666 & ~current_umask())  # mkstemp makes 0600 files: give the output the user's usual mode
        write(Path(tmp))
        os.replace(tmp, target)
    except BaseException as exc:
        Path(tmp).unlink(missing_ok=True)
        if isinstance(exc, OSError) and tmp in (exc.filename, exc.filename2):
            raise _naming(exc, target) from None
        raise
    return target


def _naming(exc: OSError, target: Path) -> OSError:
    """The same error naming the output the user asked for, not the hidden temporary file beside it."""
    if type(exc).__module__ != "builtins":  # a subclass of a library, with its own arguments: keep it as it is
        return exc
    return type(exc)(exc.errno, exc.strerror or str(exc), str(target))


def write_text_atomic(path: str | Path, text: str) -> Path:
    """Write UTF-8 text atomically (see :func:`write_atomic`)."""
    return write_atomic(path, lambda p: p.write_text(text, encoding="utf-8"))
