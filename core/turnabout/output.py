"""Writing output files: the one atomic writer, and the checks made before any work starts.

* :func:`atomic_write` writes through a temporary file beside the target, then renames it
  over the target. A symbolic link is followed (the temporary file goes beside the link's
  target, and the link stays a link); a special file (a FIFO, a terminal, ``/dev/stdout``)
  is written in place, never replaced by a regular file. Missing folders are not created:
  they are refused with :class:`OutputError`.
* :func:`check_output_file` and :func:`check_output_folder` say, before a long computation,
  whether its result could be written, naming the user's option and path; they change
  nothing. :func:`make_output_folder` makes the checked folder (its one job).
* :func:`safe_file_name` turns a name chosen in Blender (an object's) into a file name.
* :func:`resolve_blend_relative` reads Blender's ``//`` (beside the .blend) in a folder.
* ``-`` means standard output where a command supports it (:func:`write_bytes`).
"""

from __future__ import annotations

import os
import stat
import sys
import tempfile
from collections.abc import Callable, Iterable
from pathlib import Path

STDOUT = "-"


class OutputError(ValueError):
    """An output path that cannot be written; the message names the option and the path."""


def _file_mode() -> int:
    """Permissions of a new file under the process umask (what open() would give)."""
    mask = os.umask(0o022)  # reading the umask means setting it; put it straight back
    os.umask(mask)
    return 0o666 & ~mask


_FILE_MODE = _file_mode()  # once, at import: os.umask is process-wide, not thread-safe


def resolved(path) -> Path:
    """The path a write really goes to: symbolic links followed (also dangling ones)."""
    return Path(os.path.realpath(os.fspath(path)))


def is_special(path) -> bool:
    """True for an existing file that is not a regular file or folder (FIFO, device, socket)."""
    try:
        mode = os.stat(path).st_mode
    except OSError:
        return False
    return not (stat.S_ISREG(mode) or stat.S_ISDIR(mode))


def _where(option: str | None, path) -> str:
    return f"{option} {path}" if option else str(path)


def check_output_file(path, option: str | None = None, *, allow_stdout: bool = False) -> None:
    """Refuse, before any work, a file output that could not be written.

    Allowed: a new file in an existing writable folder, an existing writable regular file,
    a special file (FIFO, terminal), a symbolic link to any of these, and ``-`` when
    ``allow_stdout``. Raises :class:`OutputError` naming ``option`` and ``path``.
    """
    if os.fspath(path) == STDOUT:
        if allow_stdout:
            return
        raise OutputError(f"{_where(option, path)}: standard output is not supported here")
    if is_special(path):  # a FIFO, a terminal, /dev/stdout (followed like open() does)
        if not os.access(path, os.W_OK):
            raise OutputError(f"{_where(option, path)}: the file is not writable")
        return
    target = resolved(path)
    if target.is_dir():
        raise OutputError(f"{_where(option, path)}: is a folder; give a file name")
    if target.exists() and not os.access(target, os.W_OK):
        raise OutputError(f"{_where(option, path)}: the file is not writable")
    _check_parent(target, path, option)


def check_output_folder(path, option: str | None = None) -> None:
    """Refuse, before any work, a folder output that could not be made or written."""
    target = resolved(path)
    if target.exists() and not target.is_dir():
        raise OutputError(
            f"{_where(option, path)}: is an existing file; a folder is needed for this format"
        )
    if target.is_dir():
        if not os.access(target, os.W_OK | os.X_OK):
            raise OutputError(f"{_where(option, path)}: the folder is not writable")
        return
    _check_parent(target, path, option)


def make_output_folder(path, option: str | None = None) -> Path:
    """Check ``path`` with :func:`check_output_folder`, then create it if missing (its
    parent must exist: one level is made, never a chain). Returns the resolved folder."""
    check_output_folder(path, option)
    target = resolved(path)
    try:
        target.mkdir(exist_ok=True)
    except OSError as exc:
        raise OutputError(
            f"{_where(option, path)}: cannot create the folder ({exc.strerror or exc})"
        ) from None
    return target


def safe_file_name(name: str) -> str:
    """``name`` with every character but letters, digits, '-', '_' and '.' made '_'.

    For names chosen in Blender (objects may be called anything, "/" and ".." included):
    the result is one path component that stays inside the folder it is joined to.
    """
    safe = "".join(c if c.isalnum() or c in "-_." else "_" for c in name)
    return "_" if safe.strip(".") == "" else safe


def resolve_blend_relative(path: str, blend_file: str, option: str) -> str:
    """Absolute form of a folder given in Blender's convention (``//`` = beside the .blend).

    ``blend_file`` is the open .blend's path ("" when it was never saved); an empty
    ``path`` means ``//``. Raises :class:`OutputError` naming ``option`` for ``//`` in an
    unsaved file.
    """
    path = path or "//"
    if path.startswith("//"):
        if not blend_file:
            raise OutputError(
                f"{option}: {path!r} means beside the .blend, which is not saved yet; "
                "save the file or choose an absolute folder"
            )
        path = os.path.join(os.path.dirname(blend_file), path[2:])
    return os.path.abspath(path)


def _check_parent(target: Path, path, option: str | None) -> None:
    parent = target.parent
    if not parent.is_dir():
        raise OutputError(
            f"{_where(option, path)}: the folder {parent} does not exist; create it first"
        )
    if not os.access(parent, os.W_OK | os.X_OK):
        raise OutputError(f"{_where(option, path)}: the folder {parent} is not writable")


def check_suffix(path, suffixes: tuple[str, ...], option: str | None, what: str) -> None:
    """Refuse a file name whose suffix disagrees with the format being written."""
    if os.fspath(path) == STDOUT:
        return
    if Path(path).suffix.lower() not in suffixes:
        raise OutputError(
            f"{_where(option, path)}: {what} must end in {' or '.join(suffixes)}"
        )


def atomic_write(path, writer: Callable[[str], None], suffix: str | None = None) -> None:
    """Run ``writer(tmp)`` on a temporary file beside ``path``, then rename it over ``path``.

    The temporary name ends in ``suffix``, by default ``.part`` plus the extension of
    ``path`` (so writers that infer the format from the name see the real one). The
    temporary file exists (empty) when ``writer`` is called; a writer that must create it
    itself may remove it first. The file gets the permissions a plain ``open`` would give (mkstemp's
    are private); on any error the temporary file is removed and nothing is left at ``path``.
    A symbolic link is written through (its target is replaced, the link kept); a special
    file is written in place. A missing folder raises :class:`OutputError`; other failures
    raise ``OSError`` naming ``path`` (never the temporary file).
    """
    if is_special(path):  # stat follows links the way open() will (also /dev/stdout)
        writer(os.fspath(path))
        return
    target = resolved(path)
    if not target.parent.is_dir():
        raise OutputError(f"{path}: the folder {target.parent} does not exist; create it first")
    if suffix is None:
        suffix = ".part" + target.suffix
    try:
        fd, tmp = tempfile.mkstemp(prefix="." + target.name + ".", suffix=suffix, dir=target.parent)
    except OSError as exc:
        raise OSError(exc.errno, f"cannot write {path}: {exc.strerror}") from None
    os.close(fd)
    try:
        writer(tmp)
        os.chmod(tmp, _FILE_MODE)
        os.replace(tmp, target)
    except BaseException:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        raise


def atomic_write_bytes(path, data: bytes | Iterable[bytes]) -> None:
    """Write ``data`` (bytes, or chunks of them) to ``path`` through :func:`atomic_write`."""

    def write(tmp: str) -> None:
        with open(tmp, "wb") as fh:
            if isinstance(data, bytes | bytearray | memoryview):
                fh.write(data)
            else:
                for chunk in data:
                    fh.write(chunk)

    atomic_write(path, write)


def write_bytes(path, data: bytes) -> None:
    """Write ``data`` to ``path``, or to standard output when ``path`` is ``-``."""
    if os.fspath(path) == STDOUT:
        sys.stdout.flush()
        sys.stdout.buffer.write(data)
        sys.stdout.buffer.flush()
        return
    atomic_write_bytes(path, data)
