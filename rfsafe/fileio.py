"""Writing output files so that nothing is lost on disk.

Every command that writes files declares all of them up front as one
:class:`OutputSet`. Before anything is computed the set checks each path: it
is not one of the command's input files, its folder exists and is writable, it
is not a folder, no two outputs are the same file, and an existing file is
refused without ``--force``.

Each file is written to a temporary file in the same folder, named so that a
user can tell what it is (``.<name>.rfsafe-incomplete-<pid>``), and is removed
on every exit path Python can catch (an exception, Ctrl-C, SIGTERM: the CLI
turns SIGTERM into :class:`SystemExit`). A SIGKILL cannot be caught, so every
run first removes the stale temporary files that a dead rfsafe process left
for the same outputs.

A set of several files (a PDF and a CSV) is committed so that the user never
sees a mix of old and new files: the temporaries are complete and synced
first; a small journal naming the pairs is written; the old files are removed;
the temporaries are renamed into place; the journal is removed. A run killed
between the journal and the last rename leaves only new files and gaps (never
an old file beside a new one), and the next run that writes into the folder
finishes the renames from the journal before it does anything else.
"""

from __future__ import annotations

import contextlib
import json
import os
import tempfile
from pathlib import Path
from typing import IO, Iterable, Iterator

from rfsafe.errors import InputError, bad_value

__all__ = ["OutputSet", "atomic_write_bytes", "check_writable", "recover_folder", "TEMP_MARK", "JOURNAL_MARK"]

#: Marker in the names of temporary files: ``.<name>.rfsafe-incomplete-<pid>``.
TEMP_MARK = ".rfsafe-incomplete-"
#: Marker in the names of commit journals: ``.rfsafe-commit-<pid>.json``.
JOURNAL_MARK = ".rfsafe-commit-"


def _pid_alive(pid: int) -> bool:
    if pid == os.getpid():
        return True
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:  # alive, owned by someone else
        return True
    except (OverflowError, ValueError):
        return False
    return True


def _pid_of(name: str, mark: str) -> int | None:
    tail = name.rsplit(mark, 1)[-1].split(".", 1)[0]
    return int(tail) if tail.isdigit() else None


def _same_file(a: Path, b: Path) -> bool:
    try:
        if a.exists() and b.exists():
            return os.path.samefile(a, b)
    except OSError:
        pass
    return a.resolve() == b.resolve()


def recover_folder(folder: Path) -> None:
    """Finish the commits that dead rfsafe runs left in ``folder``, then remove their temporary files.

    A journal of a dead run names (temporary, final) pairs whose temporaries were complete before
    the journal was written, so finishing the renames yields the new set in full.
    """
    try:
        entries = list(folder.iterdir())
    except OSError:
        return
    for j in entries:
        if not (j.name.startswith(JOURNAL_MARK) and j.name.endswith(".json")):
            continue
        pid = _pid_of(j.name, JOURNAL_MARK)
        if pid is not None and _pid_alive(pid):
            continue
        try:
            pairs = json.loads(j.read_text(encoding="utf-8"))
            for tmp, final in pairs:
                if Path(tmp).exists():
                    os.replace(tmp, final)
            j.unlink()
        except (OSError, ValueError, TypeError):
            with contextlib.suppress(OSError):
                j.unlink()
    for t in entries:
        if TEMP_MARK in t.name and t.name.startswith("."):
            pid = _pid_of(t.name, TEMP_MARK)
            if pid is not None and not _pid_alive(pid):
                with contextlib.suppress(OSError):
                    t.unlink()


def check_writable(path: Path, *, force: bool, field: str = "-o", inputs: Iterable[Path] = ()) -> None:
    """Check one output path before anything is computed.

    Refuses an input file as output, a missing or unwritable folder, a folder
    as the output, and an existing file without ``force``.
    """
    path = Path(path)
    for src in inputs:
        if _same_file(path, Path(src)):
            raise bad_value(field, str(path), "is one of this run's input files: choose another name for "
                                              "the output")
    parent = path.parent if str(path.parent) else Path(".")
    if not parent.exists():
        raise bad_value(field, str(path), f"cannot be written: folder {str(parent)!r} does not exist")
    if not parent.is_dir():
        raise bad_value(field, str(path), f"cannot be written: {str(parent)!r} is a file, not a folder")
    if not os.access(parent, os.W_OK | os.X_OK):
        raise bad_value(field, str(path), f"cannot be written: folder {str(parent)!r} is not writable")
    if path.is_dir():
        raise bad_value(field, str(path), "is a folder, not a file")
    if path.exists() and not force:
        raise bad_value(field, str(path), "already exists (use --force to overwrite)")


class OutputSet:
    """All the files one command writes, checked before computing and committed together.

    Parameters
    ----------
    outputs : iterable of (str, Path)
        The option that names each file (used in error messages) and its path.
    inputs : iterable of Path
        Files the command reads; none of them may be an output.
    force : bool
        Overwrite existing outputs.

    Use as a context manager: write each file with :meth:`write_bytes` or
    :meth:`open`; leaving the block normally commits the set, leaving it by an
    exception removes every temporary file and leaves the old files as they were.
    """

    def __init__(self, outputs: Iterable[tuple[str, Path]], *, inputs: Iterable[Path] = (), force: bool) -> None:
        self._paths: dict[str, Path] = {}
        inputs = [Path(p) for p in inputs]
        for field, path in outputs:
            path = Path(path)
            check_writable(path, force=force, field=field, inputs=inputs)
            for other_field, other in self._paths.items():
                if _same_file(path, other):
                    raise bad_value(field, str(path), f"is the same file as {other_field} (give two different files)")
            self._paths[field] = path
        self._temps: dict[str, Path] = {}
        for folder in {p.parent for p in self._paths.values()}:
            recover_folder(folder if str(folder) else Path("."))

    def __enter__(self) -> "OutputSet":
        return self

    def __exit__(self, exc_type, exc, tb) -> None:
        if exc_type is None:
            self.commit()
        else:
            self.discard()

    def _temp_for(self, field: str) -> Path:
        if field not in self._paths:
            raise KeyError(field)
        final = self._paths[field]
        fd, tmp = tempfile.mkstemp(prefix=f".{final.name}{TEMP_MARK}{os.getpid()}.", dir=final.parent or ".")
        os.close(fd)
        self._temps[field] = Path(tmp)
        return Path(tmp)

    @contextlib.contextmanager
    def open(self, field: str, mode: str = "w", **kwargs) -> Iterator[IO]:
        """Open the temporary file of output ``field`` for streaming writes (text mode by default)."""
        tmp = self._temp_for(field)
        with open(tmp, mode, **kwargs) as fh:
            yield fh
            fh.flush()
            os.fsync(fh.fileno())

    def write_bytes(self, field: str, data: bytes) -> None:
        """Write the whole content of output ``field``."""
        with self.open(field, "wb") as fh:
            fh.write(data)

    def discard(self) -> None:
        """Remove every temporary file; the old outputs stay as they were."""
        for tmp in self._temps.values():
            with contextlib.suppress(OSError):
                tmp.unlink()
        self._temps.clear()

    def commit(self) -> None:
        """Replace the old files by the new ones so that no old file stands beside a new one."""
        missing = [f for f in self._paths if f not in self._temps]
        if missing:
            self.discard()
            raise RuntimeError(f"outputs never written: {missing}")
        umask = os.umask(0)
        os.umask(umask)
        for tmp in self._temps.values():
            os.chmod(tmp, 0o666 & ~umask)  # mkstemp creates 0600; give the files the usual mode
        pairs = [(str(self._temps[f].resolve()), str(p.resolve())) for f, p in self._paths.items()]
        journal = None
        try:
            if len(pairs) > 1:
                folder = self._paths[next(iter(self._paths))].parent
                journal = (folder if str(folder) else Path(".")) / f"{JOURNAL_MARK}{os.getpid()}.json"
                with open(journal, "w", encoding="utf-8") as fh:
                    json.dump(pairs, fh)
                    fh.flush()
                    os.fsync(fh.fileno())
                for _, final in pairs:
                    with contextlib.suppress(FileNotFoundError):
                        os.unlink(final)
            for tmp, final in pairs:
                os.replace(tmp, final)
        except BaseException:
            if journal is None:
                self.discard()
                raise
            # Interrupted between the journal and the last rename (Ctrl-C, SIGTERM): every temporary is
            # complete, so finish the renames now; if that fails too, the journal lets the next run do it.
            try:
                for tmp, final in pairs:
                    if os.path.exists(tmp):
                        os.replace(tmp, final)
                journal.unlink()
                self._temps.clear()
            except OSError:
                pass
            raise
        self._temps.clear()
        if journal is not None:
            with contextlib.suppress(OSError):
                journal.unlink()


def atomic_write_bytes(path: Path, data: bytes, *, force: bool = True, field: str = "-o",
                       inputs: Iterable[Path] = ()) -> None:
    """Write one file through a temporary file beside it, then rename it into place."""
    with OutputSet([(field, Path(path))], inputs=inputs, force=force) as out:
        out.write_bytes(field, data)

