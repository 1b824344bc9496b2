"""Staging of an export's files: each is written into a temporary file beside its target and renamed in at the end.

The temporary files are named ``.massmodel-partial-<pid>.<name>.<random>.tmp<suffix>`` so that those of an export
killed part-way are recognised and removed by the next export into the folder (:func:`clean_partial_files`); the
sidecar lists the SHA-256 of every other file (:meth:`Stage.hashes`) and is renamed in last, so a set interrupted
during the renames is detected by :func:`verify_export`. Standard library only.
"""

from __future__ import annotations

import json
import os
import tempfile
from collections.abc import Sequence
from pathlib import Path

from massmodel.core.atomic import check_not_input, current_umask

from .formats import ExportError

__all__ = ["PARTIAL_PREFIX", "Stage", "clean_partial_files", "verify_export"]

PARTIAL_PREFIX = ".massmodel-partial-"  # temporary files of an export: PARTIAL_PREFIX + "<pid>." + name + ...


def clean_partial_files(folder: Path, trees: Sequence[Path] = ()) -> list[Path]:
    """Remove the temporary files an export killed part-way left in ``folder`` and anywhere under ``trees``.

    They are named ``.massmodel-partial-<pid>.<name>.<random>.tmp<suffix>``; those of a process still running (an
    export under way) are kept. Only ``folder`` itself is searched, not its sub-folders: an export's files go into its
    folder and into folders of its own (the per-part STL files' ``<stem>_parts``, given as ``trees``), and an output
    folder may hold a whole tree of other files (``--out ~``), which must not be walked.
    """
    removed: list[Path] = []
    found = [p for p in folder.glob(PARTIAL_PREFIX + "*") if p.is_file()] if folder.is_dir() else []
    for tree in trees:
        if tree.is_dir():
            found.extend(tree.rglob(PARTIAL_PREFIX + "*"))
    for path in found:
        pid_text = path.name[len(PARTIAL_PREFIX):].split(".", 1)[0]
        if not pid_text.isdigit() or (int(pid_text) != os.getpid() and _running(int(pid_text))):
            continue
        try:
            path.unlink()
            removed.append(path)
        except OSError:
            pass
    return removed


def _running(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except OSError:  # exists, owned by someone else
        return True
    return True


def _sha256(path: Path) -> str:
    import hashlib

    h = hashlib.sha256()
    with open(path, "rb") as f:
        for block in iter(lambda: f.read(1 << 20), b""):
            h.update(block)
    return h.hexdigest()


def verify_export(sidecar_path: str | Path) -> list[str]:
    """Check that the files of an export are the ones its sidecar describes (SHA-256 in ``files.sha256``).

    The sidecar is renamed into place last, so a set interrupted part-way (killed during the renames) shows as new
    files beside an old sidecar; a reader that relies on the sidecar matching the STEP calls this first.

    Returns
    -------
    list of str
        One line per missing or different file (empty: the set is consistent).
    """
    sidecar = Path(sidecar_path)
    data = json.loads(sidecar.read_text(encoding="utf-8"))
    hashes = data.get("files", {}).get("sha256", {})
    problems = []
    if not hashes:
        problems.append(f"{sidecar}: lists no file hashes (written before sidecars carried them)")
    for name, digest in hashes.items():
        path = sidecar.parent / name
        if not path.is_file():
            problems.append(f"{path}: missing")
        elif _sha256(path) != digest:
            problems.append(f"{path}: not the file the sidecar describes (another export's, or changed since)")
    return problems


class Stage:
    """The staged files of one export: temporary files to rename in, scratch files to remove."""

    def __init__(self) -> None:
        self.pending: list[tuple[Path, Path]] = []
        self.made_dirs: list[Path] = []
        self.scratch: list[Path] = []

    def temp_for(self, target: Path) -> Path:
        check_not_input(target)
        if target.is_dir():  # found now, before anything is written or renamed (the rename would fail at the end)
            raise ExportError(f"cannot write '{target}': a folder of that name is in the way")
        folder = target.parent
        missing = []
        probe = folder
        while not probe.exists():
            missing.append(probe)
            probe = probe.parent
        try:
            folder.mkdir(parents=True, exist_ok=True)
            fd, tmp = tempfile.mkstemp(prefix=f"{PARTIAL_PREFIX}{os.getpid()}.{target.stem}.",
                                       suffix=f".tmp{target.suffix}", dir=folder)
        except OSError as exc:
            raise ExportError(f"cannot write to the folder '{folder}': {exc.strerror or exc}") from None
        os.close(fd)
        os.chmod(tmp, 0o666 & ~current_umask())  # mkstemp makes 0600 files; give the export the user's usual mode
        self.made_dirs.extend(reversed(missing))
        path = Path(tmp)
        self.pending.append((path, target))
        return path

    def scratch_for(self, target: Path, what: str) -> Path:
        """A scratch file beside ``target`` (named like the staged files, so a killed export's is cleaned up too),
        removed by :meth:`abort` and :meth:`commit` if still there."""
        try:
            fd, tmp = tempfile.mkstemp(prefix=f"{PARTIAL_PREFIX}{os.getpid()}.{target.stem}.{what}.", suffix=".tmp",
                                       dir=target.parent)
        except OSError as exc:
            raise ExportError(f"cannot write to the folder '{target.parent}': {exc.strerror or exc}") from None
        os.close(fd)
        self.scratch.append(Path(tmp))
        return Path(tmp)

    def write_bytes(self, target: Path, data: bytes) -> None:
        tmp = self.temp_for(target)
        try:
            tmp.write_bytes(data)
        except OSError as exc:
            raise ExportError(f"cannot write '{target}': {exc.strerror or exc}") from None

    def hashes(self, root: Path) -> dict[str, str]:
        """SHA-256 of every staged file, by its path relative to ``root`` (the sidecar's manifest)."""
        return {target.relative_to(root).as_posix(): _sha256(tmp) for tmp, target in self.pending}

    def commit(self) -> list[Path]:
        """Rename the staged files into place in the order staged (the sidecar, staged last, goes in last)."""
        for path in self.scratch:
            path.unlink(missing_ok=True)
        for tmp, target in self.pending:
            os.replace(tmp, target)
        done = [t for _, t in self.pending]
        self.pending = []
        return done

    def abort(self) -> None:
        for path in self.scratch:
            path.unlink(missing_ok=True)
        for tmp, _ in self.pending:
            tmp.unlink(missing_ok=True)
        self.pending = []
        for d in reversed(self.made_dirs):
            try:
                d.rmdir()
            except OSError:
                pass
