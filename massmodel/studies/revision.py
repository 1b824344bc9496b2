"""Model files as they were at a git revision (``FILE@REV``), for comparing versions.

The file's folder at that revision (the model, the files it ``extends``, its rulebook and geometry beside it) is
taken from ``git archive`` into a temporary folder, so that relative references resolve as they did then; git runs
with a list argv (no shell) and a revision that looks like an option is refused.
"""

from __future__ import annotations

import io
import subprocess
import tarfile
import tempfile
from collections.abc import Iterator, Mapping
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path

from massmodel.core.errors import UsageError
from massmodel.core.model import Model
from massmodel.modelfile.loader import ModelSource, build_model, read_source

__all__ = ["Version", "parse_version", "load_version", "source_of"]


@dataclass(frozen=True, slots=True)
class Version:
    """A model file, optionally at a git revision.

    Attributes
    ----------
    path : Path
        The file (relative to the working directory, or absolute).
    revision : str or None
        A git revision (``HEAD~1``, a tag, a commit); None for the file as it is on disk.
    """

    path: Path
    revision: str | None = None

    @property
    def label(self) -> str:
        return f"{self.path}@{self.revision}" if self.revision else str(self.path)


def parse_version(text: str) -> Version:
    """``FILE`` or ``FILE@REV``. An existing file whose name holds '@' is taken as a file; otherwise the text splits
    at the first '@' that does not start a reflog selector such as ``@{2}``."""
    if Path(text).is_file() or "@" not in text:
        return Version(Path(text))
    for i, ch in enumerate(text):
        if ch == "@" and i > 0 and not text.startswith("@{", i):
            path, rev = text[:i], text[i + 1:]
            if not rev:
                raise UsageError(f"{text}: no revision after '@'")
            return Version(Path(path), rev)
    return Version(Path(text))


def _git(args: list[str], cwd: Path, what: str, reason: str | None = None) -> bytes:
    try:
        done = subprocess.run(["git", *args], cwd=cwd, capture_output=True, check=False, timeout=120)
    except FileNotFoundError:
        raise UsageError(f"{what}: git is not installed") from None
    except subprocess.TimeoutExpired:
        raise UsageError(f"{what}: git did not answer within 120 s") from None
    if done.returncode != 0:
        message = done.stderr.decode("utf-8", "replace").strip().splitlines()
        if reason is not None:
            raise UsageError(f"{what}: {reason}")
        raise UsageError(f"{what}: {message[-1] if message else f'git exited with status {done.returncode}'}")
    return done.stdout


@contextmanager
def source_of(version: Version) -> Iterator[ModelSource]:
    """The :class:`ModelSource` of a version, valid inside the ``with`` block (geometry files of a revision are
    read from a temporary folder removed afterwards).

    Raises
    ------
    ValueError
        A revision git cannot find, a file not in that revision, or not a git work tree; one line.
    ModelFileError
        The file is not a valid model file.
    """
    if version.revision is None:
        yield read_source(version.path)
        return
    rev = version.revision
    label = version.label
    if rev.startswith("-"):
        raise UsageError(f"{label}: a revision must not start with '-'")
    absolute = version.path.resolve()
    folder = absolute.parent
    while not folder.is_dir() and folder != folder.parent:  # the file (and its folder) may be gone today
        folder = folder.parent
    top = Path(_git(["rev-parse", "--show-toplevel"], folder, label).decode().strip())
    commit = _git(["rev-parse", "--verify", "--quiet", "--end-of-options", f"{rev}^{{commit}}"], top, label,
                  f"git cannot find the revision '{rev}'").decode().strip()
    relative = absolute.relative_to(top.resolve()).as_posix()
    _git(["cat-file", "-e", f"{commit}:{relative}"], top, label, f"revision '{rev}' has no file '{relative}'")
    relative_dir = Path(relative).parent.as_posix()
    archive = _git(["archive", "--format=tar", commit, "--", relative_dir if relative_dir != "." else "."], top, label)
    with tempfile.TemporaryDirectory(prefix="massmodel-rev-") as tmp:
        with tarfile.open(fileobj=io.BytesIO(archive)) as tar:
            tar.extractall(tmp, filter="data")
        source = read_source(Path(tmp) / relative)
        yield ModelSource(source.data, label, source.base_dir)


def load_version(version: Version, overrides: Mapping[str, str] | None = None, case: str | None = None) -> Model:
    """The model of a version (see :func:`source_of`)."""
    with source_of(version) as source:
        return build_model(source, overrides, case)
