"""Writing output files safely: a temporary file beside the target, renamed when complete."""

from __future__ import annotations

import os
import tempfile
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

from calwork.core.errors import ExportError

__all__ = ["atomic_target"]


def _umask() -> int:
    """The process's file-creation mask (read by setting it and putting it back)."""
    mask = os.umask(0o022)
    os.umask(mask)
    return mask


@contextmanager
def atomic_target(path: str | Path, *, what: str = "file") -> Iterator[Path]:
    """Yield a temporary path beside ``path``; rename it onto ``path`` if the block succeeds.

    A reader never sees a half-written file, and a failed export leaves the old file alone.
    Problems with the folder or the disk raise :class:`~calwork.core.errors.ExportError` (before
    any work is done when the folder cannot be written).
    """
    path = Path(path)
    try:
        path.parent.mkdir(parents=True, exist_ok=True)
        fd, name = tempfile.mkstemp(prefix=".calwork-", suffix=path.suffix, dir=path.parent)
        os.close(fd)
    except OSError as exc:
        raise ExportError(f"cannot write the {what} ({exc.strerror or exc})", path=path) from None
    tmp = Path(name)
    try:
        yield tmp
        # a temporary file is private (0600); the output gets the usual mode of a new file
        # under the user's umask (0644 under the common 022)
        os.chmod(tmp, 0o666 & ~_umask())
        os.replace(tmp, path)
    except OSError as exc:
        raise ExportError(f"cannot write the {what} ({exc.strerror or exc})", path=path) from None
    finally:
        if tmp.exists():
            tmp.unlink()
