"""Write files so that nothing is ever half-written: a temporary file beside the target,
flushed to disk, then renamed over it in one step (``os.replace``)."""
from __future__ import annotations

import os
import tempfile
from contextlib import contextmanager

__all__ = ["atomic_writer", "write_atomically"]


@contextmanager
def atomic_writer(path, mode: str = "w", **open_kwargs):
    """Context manager yielding a file object whose content replaces ``path`` on success.

    On any exception the temporary file is removed and ``path`` is left as it was.
    ``OSError`` propagates for the caller to word (it knows which file is meant).
    """
    target = os.path.abspath(os.fspath(path))
    fd, tmp = tempfile.mkstemp(prefix=f".{os.path.basename(target)}.", suffix=".tmp",
                               dir=os.path.dirname(target))
    try:
        with os.fdopen(fd, mode, **open_kwargs) as fh:
            yield fh
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, target)
    except BaseException:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        raise


def write_atomically(path, data) -> None:
    """Write ``data`` (``bytes`` or ``str``, UTF-8) to ``path`` atomically."""
    if isinstance(data, str):
        with atomic_writer(path, "w", encoding="utf-8") as fh:
            fh.write(data)
    else:
        with atomic_writer(path, "wb") as fh:
            fh.write(data)
