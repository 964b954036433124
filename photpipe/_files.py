"""Write a file through a temporary file beside it, renamed into place once it is complete.

A reader never sees a half-written file under the final name, an existing file is replaced only
by a complete new one, and a failed write leaves no temporary file behind.
"""

import contextlib
import errno
import os
import secrets
from pathlib import Path

__all__ = ["replacing"]


@contextlib.contextmanager
def replacing(path, *, suffix=".part", mode=None, fsync=True, make_folders=False):
    """Give a temporary path beside ``path``; rename it to ``path`` when the block succeeds.

    The block writes the whole file to the temporary path (by any library that takes a file
    name). When the block ends without an error the file is flushed to disk (``fsync``), given
    its permissions and renamed over ``path`` in one step (`os.replace`). When the block or any
    of these steps fails, the temporary file is removed and ``path`` is left as it was.

    Parameters
    ----------
    path : str or path-like
        The file to write.
    suffix : str, optional
        End of the temporary file's name, for libraries that pick a format by it or append
        their own (`numpy.savez` adds ``.npz`` to any name without it).
    mode : int, optional
        Permission bits of the written file (``0o644``: readable by all). Default: those a file
        made by `open` gets (``0o666`` less the umask).
    fsync : bool, optional
        Flush the file's content to disk before the rename (default), so that the new name
        never points at a file the disk does not hold yet.
    make_folders : bool, optional
        Make the missing folders of ``path``; by default a missing folder is an error.

    Yields
    ------
    tmp : `pathlib.Path`
        The temporary file (hidden, in the folder of ``path``, existing and empty).

    Raises
    ------
    OSError
        ``"<path>: cannot write (<reason>)"``, of the same kind (`FileNotFoundError`,
        `PermissionError`, ...) as the failure behind it, for a missing or read-only folder, a
        full disk or a failed rename. Other errors of the block pass unchanged, with a note
        naming ``path``.

    Examples
    --------
    >>> import tempfile
    >>> out = Path(tempfile.mkdtemp()) / "notes.txt"
    >>> with replacing(out) as tmp:
    ...     _ = tmp.write_text("clear sky", encoding="utf-8")
    >>> out.read_text(encoding="utf-8"), sorted(p.name for p in out.parent.iterdir())
    ('clear sky', ['notes.txt'])
    """
    path = Path(path)
    try:
        if make_folders:
            path.parent.mkdir(parents=True, exist_ok=True)
        elif not path.parent.is_dir():
            raise FileNotFoundError(errno.ENOENT, f"the folder {path.parent} does not exist")
        tmp = _new_file(path, suffix, private=mode is not None)
    except OSError as exc:
        raise _naming(exc, path) from exc
    try:
        yield tmp
        if fsync:
            fd = os.open(tmp, os.O_RDONLY)
            try:
                os.fsync(fd)
            finally:
                os.close(fd)
        if mode is not None:
            os.chmod(tmp, mode)
        os.replace(tmp, path)
    except BaseException as exc:
        with contextlib.suppress(OSError):
            os.remove(tmp)
        if isinstance(exc, OSError):
            raise _naming(exc, path) from exc
        if isinstance(exc, Exception):
            exc.add_note(f"while writing {path}")
        raise


def _new_file(path, suffix, *, private):
    """Create an empty hidden file beside ``path`` under a fresh name; return its path."""
    # permissions as open() gives (0o666 less the umask) unless the caller sets them later;
    # O_EXCL makes the name ours even when another process writes the same file
    perms = 0o600 if private else 0o666
    flags = os.O_WRONLY | os.O_CREAT | os.O_EXCL | getattr(os, "O_BINARY", 0)
    while True:
        tmp = path.with_name(f".{path.name}.{secrets.token_hex(4)}{suffix}")
        try:
            fd = os.open(tmp, flags, perms)
        except FileExistsError:
            continue
        os.close(fd)
        return tmp


def _naming(exc, path):
    """An `OSError` of the kind of ``exc`` whose message starts with ``path``."""
    msg = f"{path}: cannot write ({exc.strerror or exc})"
    # OSError(errno, text) is built as the matching subclass (FileNotFoundError, ...)
    return OSError(exc.errno, msg) if exc.errno is not None else OSError(msg)
