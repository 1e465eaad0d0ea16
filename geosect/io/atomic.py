"""Atomic writes: every output goes to a temporary file in the same folder, then is renamed.

A reader never sees a half-written file, and a failure leaves the previous file intact.
"""

from __future__ import annotations

import contextlib
import os
import tempfile
from pathlib import Path
from typing import Iterator

__all__ = ["atomic_path", "write_text", "write_bytes"]


@contextlib.contextmanager
def atomic_path(target: str | os.PathLike, suffix: str | None = None) -> Iterator[Path]:
    """Yield a temporary path beside ``target``; rename it onto ``target`` on success.

    The temporary file keeps the target's suffix (so writers that look at the
    extension, such as matplotlib or GDAL drivers, pick the right format).  On an
    exception the temporary file is removed and ``target`` is left untouched.

    >>> import tempfile, pathlib
    >>> d = pathlib.Path(tempfile.mkdtemp())
    >>> with atomic_path(d / "a.txt") as tmp:
    ...     _ = tmp.write_text("hello")
    >>> (d / "a.txt").read_text()
    'hello'
    """
    target = Path(target)
    target.parent.mkdir(parents=True, exist_ok=True)
    fd, name = tempfile.mkstemp(
        prefix=f".{target.stem}.", suffix=suffix if suffix is not None else target.suffix, dir=target.parent
    )
    os.close(fd)
    tmp = Path(name)
    tmp.unlink()  # writers create it themselves (some refuse to overwrite)
    try:
        yield tmp
        os.replace(tmp, target)
    except BaseException:
        with contextlib.suppress(FileNotFoundError):
            if tmp.is_dir():
                import shutil

                shutil.rmtree(tmp)
            else:
                tmp.unlink()
        raise


def write_text(target: str | os.PathLike, text: str, encoding: str = "utf-8") -> Path:
    """Write ``text`` to ``target`` atomically and return the path."""
    with atomic_path(target) as tmp:
        tmp.write_text(text, encoding=encoding)
    return Path(target)


def write_bytes(target: str | os.PathLike, data: bytes) -> Path:
    """Write ``data`` to ``target`` atomically and return the path."""
    with atomic_path(target) as tmp:
        tmp.write_bytes(data)
    return Path(target)
