"""Writing outputs safely: every file goes to a temporary name in its folder and is renamed into place.

A failed or interrupted run therefore leaves either the old file or the new one, never half of
one; the temporary file is removed on failure. Every module that writes a file uses this
(``settings``, ``modelfile``, ``report``, ``commands``, the demo generator).

A set of outputs (a build's model file, settings and reports; a monitoring run's reports) is one
unit too: ``replacing_folder`` writes the whole set into a temporary folder beside the output
folder and switches it in as one step, so the folder holds the old set or the new one, never a
mix of the two.
"""

from __future__ import annotations

import contextlib
import ctypes
import errno
import os
import re
import shutil
import sys
import tempfile
import time
from collections.abc import Iterator, Mapping
from pathlib import Path

from .errors import OutputError


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


@contextlib.contextmanager
def replacing_folder(path: str | os.PathLike[str]) -> Iterator[Path]:
    """Yield a new, empty temporary folder beside ``path``; when the block ends normally, switch it in for ``path``.

    Write every output of a set into the temporary folder. When the block ends normally, the folder
    at ``path`` (if any) and the temporary one trade places in one step, and the old one is then
    removed: ``path`` holds exactly the new set. When the block raises, the temporary folder is
    removed and ``path`` is left as it was. Callers check beforehand that ``path`` holds nothing
    but an earlier set of the same outputs (it is replaced whole).

    What it guarantees:

    - On Linux, the two folders trade places with ``renameat2(..., RENAME_EXCHANGE)``: at every
      instant ``path`` is the whole old set or the whole new set.
    - Elsewhere, or on a file system without that call, the old folder is first renamed aside
      (``.NAME.*.old``) and the new one renamed to ``path``: two renames, each atomic. Between them
      ``path`` is briefly absent while the old set lies whole beside it; it is never a mix.
    - When ``path`` does not exist, the new folder is renamed to it (atomic everywhere).

    Example
    -------
    >>> with replacing_folder(out) as folder:  # doctest: +SKIP
    ...     save_model(document, folder / "model.json")
    ...     write_report(build, checks, folder / "report.html")
    """
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    temporary = Path(tempfile.mkdtemp(prefix=f".{path.name}.", suffix=".part", dir=path.parent))
    try:
        yield temporary
        # mkdtemp makes a private folder (0700); the set gets the old folder's mode, or a new folder's usual one
        os.chmod(temporary, path.stat().st_mode & 0o7777 if path.is_dir() else 0o777 & ~_umask())
        old = _switch_folders(temporary, path)
    except BaseException:
        shutil.rmtree(temporary, ignore_errors=True)
        raise
    if old is not None:
        shutil.rmtree(old, ignore_errors=True)


def _switch_folders(new: Path, path: Path) -> Path | None:
    """Put ``new`` at ``path``; return where the old folder now is (to be removed), or None."""
    if not path.exists():
        os.rename(new, path)
        return None
    if exchange_folders(new, path):
        return new  # the old set now lies under the temporary name
    aside = Path(tempfile.mkdtemp(prefix=f".{path.name}.", suffix=".old", dir=path.parent))
    os.rename(path, aside / path.name)
    os.rename(new, path)
    return aside


def exchange_folders(first: str | os.PathLike[str], second: str | os.PathLike[str]) -> bool:
    """Swap two folders in one step where the system can (Linux ``renameat2`` with ``RENAME_EXCHANGE``).

    Returns False, touching nothing, where it cannot (another system, an old C library, a file
    system without the call); any other failure is raised as ``OSError``.
    """
    call = _renameat2()
    if call is None:
        return False
    if call(_AT_FDCWD, os.fsencode(first), _AT_FDCWD, os.fsencode(second), _RENAME_EXCHANGE) == 0:
        return True
    number = ctypes.get_errno()
    if number in (errno.ENOSYS, errno.EINVAL, errno.EOPNOTSUPP, errno.ENOTSUP):
        return False
    raise OSError(number, os.strerror(number), str(second))


# renameat2(2): the directory of relative paths is the working directory; the flag swaps the two names
_AT_FDCWD, _RENAME_EXCHANGE = -100, 2


def _renameat2():
    if not sys.platform.startswith("linux"):
        return None
    try:
        call = ctypes.CDLL(None, use_errno=True).renameat2
    except (OSError, AttributeError):  # a C library older than glibc 2.28, or not glibc
        return None
    call.argtypes = (ctypes.c_int, ctypes.c_char_p, ctypes.c_int, ctypes.c_char_p, ctypes.c_uint)
    call.restype = ctypes.c_int
    return call


def _umask() -> int:
    umask = os.umask(0)
    os.umask(umask)
    return umask


def _mode_for_new_files() -> int:
    return 0o666 & ~_umask()


# --------------------------------------------------------------------------------------------
# Claiming an output: never over an input, one run at a time, no temporaries left by killed runs


def check_not_an_input(output: str | os.PathLike[str], inputs: Mapping[str, str | os.PathLike[str]], *,
                       replaces_folder: bool = False) -> None:
    """Refuse an output that is an input of the same run, or (a folder replaced whole) holds one.

    Paths are compared after following symbolic links, and existing files also by identity (a
    hard link is the same file). ``inputs`` maps what each input is ('the ledger') to its path.
    ``--force`` changes nothing here: an input is never overwritten.

    Raises
    ------
    OutputError
    """
    output = Path(output)
    target = Path(os.path.realpath(output))
    for what, path in inputs.items():
        source = Path(os.path.realpath(path))
        same = source == target or (output.exists() and Path(path).exists() and os.path.samefile(output, path))
        if same or (replaces_folder and target in source.parents):
            raise OutputError(
                f"{output}: the output {'is' if same else 'holds'} {what} of this run ({path}). Inputs are never "
                "overwritten, --force or not: choose another --out."
            )


@contextlib.contextmanager
def claiming(path: str | os.PathLike[str]) -> Iterator[Path]:
    """Hold an output (a file or a folder) for the length of a run; yield its path.

    A lock file ``.NAME.lock`` beside the output is locked (``flock``) and says which process holds
    it; a second run that wants the same output is refused with that, instead of both writing and
    the last one winning. While the lock is held, the temporaries that killed runs left beside the
    output (``.NAME.*.part``, ``.NAME.*.old``) are removed: no run can still be writing them. The
    lock file goes when the run ends, and so do folders made only to hold it if the run left them
    empty.

    Raises
    ------
    OutputError
        Another run holds the output.
    """
    path = Path(path)
    made = _make_folders(path.parent)
    try:
        handle = _lock(path.parent / f".{path.name}.lock", path)
        try:
            os.ftruncate(handle, 0)
            os.write(handle, f"process {os.getpid()}, since {time.strftime('%Y-%m-%d %H:%M:%S')}".encode())
            remove_stale_temporaries(path)
            yield path
        finally:
            # removed while still locked: a run that opened the old file finds it gone and opens a new one
            (path.parent / f".{path.name}.lock").unlink(missing_ok=True)
            os.close(handle)
    finally:
        for folder in made:  # the innermost first; only an empty folder can be removed
            with contextlib.suppress(OSError):
                folder.rmdir()


def remove_stale_temporaries(path: str | os.PathLike[str]) -> list[Path]:
    """Remove the temporaries killed runs left beside ``path`` and return them (call it holding ``path``)."""
    path = Path(path)
    # tempfile's names: the prefix, eight letters, digits or underscores, the suffix
    own = re.compile(rf"\.{re.escape(path.name)}\.[a-z0-9_]{{8}}\.(part|old)")
    removed = []
    for entry in sorted(path.parent.iterdir()) if path.parent.is_dir() else ():
        if own.fullmatch(entry.name):
            if entry.is_dir() and not entry.is_symlink():
                shutil.rmtree(entry, ignore_errors=True)
            else:
                entry.unlink(missing_ok=True)
            removed.append(entry)
    return removed


def _lock(lock: Path, path: Path) -> int:
    import fcntl  # POSIX; the tool's outputs are switched in with POSIX renames too

    while True:
        handle = os.open(lock, os.O_RDWR | os.O_CREAT, 0o644)
        try:
            fcntl.flock(handle, fcntl.LOCK_EX | fcntl.LOCK_NB)
        except BlockingIOError:
            holder = os.read(handle, 200).decode("utf-8", "replace").strip() or "a process"
            os.close(handle)
            raise OutputError(
                f"{path}: another scorewright run is writing it ({holder}). Wait for it to finish, or choose another --out."
            ) from None
        with contextlib.suppress(FileNotFoundError):
            if os.path.samestat(os.fstat(handle), os.stat(lock)):
                return handle
        os.close(handle)  # the run that held it removed the file just before we locked it: lock the new one


def _make_folders(folder: Path) -> list[Path]:
    """Make ``folder`` and any missing parent; return those made, the innermost first."""
    missing = []
    while not folder.exists():
        missing.append(folder)
        folder = folder.parent
    for made in reversed(missing):
        made.mkdir(exist_ok=True)
    return missing
