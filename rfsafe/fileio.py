"""Writing output files so that an interrupted run never leaves a partial file."""

from __future__ import annotations

import os
import tempfile
from pathlib import Path

from rfsafe.errors import bad_value

__all__ = ["atomic_write_bytes", "check_writable"]


def check_writable(path: Path, *, force: bool, field: str = "-o") -> None:
    """Refuse to overwrite an existing file unless ``force``; the folder must exist."""
    if path.exists() and not force:
        raise bad_value(field, str(path), "already exists (use --force to overwrite)")
    if path.exists() and path.is_dir():
        raise bad_value(field, str(path), "is a directory, not a file")
    if not path.parent.exists():
        raise bad_value(field, str(path), f"cannot be written: folder {str(path.parent)!r} does not exist")


def atomic_write_bytes(path: Path, data: bytes) -> None:
    """Write ``data`` to a temporary file beside ``path``, then rename it into place."""
    path = Path(path)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".part", dir=path.parent or ".")
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        umask = os.umask(0)
        os.umask(umask)
        os.chmod(tmp, 0o666 & ~umask)  # mkstemp creates 0600; give the file the usual mode
        os.replace(tmp, path)
    except BaseException:
        try:
            os.unlink(tmp)
        except FileNotFoundError:
            pass
        raise
