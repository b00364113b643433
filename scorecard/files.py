"""Writing outputs safely: every file goes to a temporary name in its folder and is renamed into place.

A failed or interrupted run therefore leaves either the old file or the new one, never half of
one; the temporary file is removed on failure. Every module that writes a file uses this
(``settings``, ``modelfile``, ``report``, ``commands``, the demo generator).
"""

from __future__ import annotations

import contextlib
import os
import tempfile
from collections.abc import Iterator
from pathlib import Path


@contextlib.contextmanager
def replacing(path: str | os.PathLike[str]) -> Iterator[Path]:
    """Yield a temporary path beside ``path``; when the block ends normally, rename it to ``path``.

    The new file gets the mode of the file it replaces, or the mode a plain write would give
    (temporary files are made private, 0600, which an output should not be).

    Example
    -------
    >>> with replacing(folder / "report.html") as temporary:  # doctest: +SKIP
    ...     temporary.write_text(page)
    """
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    handle, name = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".part", dir=path.parent)
    os.close(handle)
    temporary = Path(name)
    try:
        yield temporary
        os.chmod(temporary, path.stat().st_mode & 0o7777 if path.exists() else _mode_for_new_files())
        os.replace(temporary, path)
    except BaseException:
        temporary.unlink(missing_ok=True)
        raise


def write_text_atomically(path: str | os.PathLike[str], text: str) -> Path:
    """Write text (UTF-8, newlines as \\n) to ``path`` through a temporary file; return the path."""
    with replacing(path) as temporary:
        with temporary.open("w", encoding="utf-8", newline="\n") as stream:
            stream.write(text)
    return Path(path)


def _mode_for_new_files() -> int:
    umask = os.umask(0)
    os.umask(umask)
    return 0o666 & ~umask
