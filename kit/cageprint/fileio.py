"""Writing files safely: atomic replacement, kept modes, no leftovers, names kept in a folder.

Every file the kit writes (records, reports, sessions, spectra) goes through
:func:`atomic_write_bytes` / :func:`atomic_write_text`:

- the data go to a temporary file with a unique name in the target's own
  folder (so the final rename never crosses a file system), named
  ``TEMP_PREFIX<host>-<pid>-...`` so that it can be recognised later;
- the file is flushed and fsync'ed, given the mode of the file it replaces
  (or ``0o666`` less the umask for a new file, 0644 under the usual umask),
  then moved over the target with :func:`os.replace`: a reader sees the old
  file or the new one, never an empty or partial one, and two writers to one
  path each replace it whole;
- on failure the temporary file is removed; temporary files left by a killed
  run (their process is gone) are removed by the next write into that folder
  (:func:`clean_stale_temps`).

:func:`confined_path` turns a user-typed export name into a path that cannot
leave the chosen folder.
"""

from __future__ import annotations

import os
import re
import socket
import stat
import tempfile
import time
from pathlib import Path

from .errors import OutputError

__all__ = [
    "TEMP_PREFIX",
    "STALE_FOREIGN_AGE",
    "atomic_write_bytes",
    "atomic_write_text",
    "clean_stale_temps",
    "confined_path",
    "new_file_mode",
]

#: every temporary file the kit writes starts with this
TEMP_PREFIX = ".cageprint-tmp-"
#: temporary files written on another host are removed only when older than this (seconds)
STALE_FOREIGN_AGE = 24 * 3600.0
#: the longest export name accepted (characters)
MAX_NAME_LENGTH = 200

_HOST = re.sub(r"[^A-Za-z0-9]", "", socket.gethostname())[:24] or "host"
_TEMP_NAME = re.compile(re.escape(TEMP_PREFIX) + r"(?P<host>[A-Za-z0-9]*)-(?P<pid>\d+)-")


def new_file_mode() -> int:
    """Mode of a new file: ``0o666`` less the process umask (0644 under umask 022).

    Examples
    --------
    >>> oct(new_file_mode() & 0o600)
    '0o600'
    """
    mask = None
    try:  # Linux: read the umask without changing it (os.umask is process-wide)
        with open("/proc/self/status", encoding="ascii") as fh:
            for line in fh:
                if line.startswith("Umask:"):
                    mask = int(line.split()[1], 8)
                    break
    except (OSError, ValueError):
        pass
    if mask is None:
        mask = os.umask(0o022)
        os.umask(mask)
    return 0o666 & ~mask


def _pid_alive(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except (PermissionError, OSError):
        return True
    return True


def clean_stale_temps(folder: str | os.PathLike) -> list[Path]:
    """Remove temporary files of killed kit runs from ``folder``; return what was removed.

    A temporary file is stale when it was written on this host by a process
    that no longer runs, or on another host more than ``STALE_FOREIGN_AGE``
    seconds ago.  Files of running writers are left alone.

    Examples
    --------
    >>> import pathlib, tempfile
    >>> d = pathlib.Path(tempfile.mkdtemp())
    >>> _ = (d / f"{TEMP_PREFIX}{_HOST}-999999999-x.tmp").write_text("half")  # a dead pid
    >>> len(clean_stale_temps(d)), list(d.iterdir())
    (1, [])
    """
    removed: list[Path] = []
    try:
        entries = list(os.scandir(os.fspath(folder)))
    except OSError:
        return removed
    now = time.time()
    for entry in entries:
        m = _TEMP_NAME.match(str(entry.name))
        if m is None:
            continue
        try:
            if not entry.is_file(follow_symlinks=False):
                continue
            if m.group("host") == _HOST:
                stale = not _pid_alive(int(m.group("pid")))
            else:
                stale = now - entry.stat(follow_symlinks=False).st_mtime > STALE_FOREIGN_AGE
            if stale:
                os.unlink(entry.path)
                removed.append(Path(entry.path))
        except OSError:
            continue  # gone meanwhile, or not ours to remove
    return removed


def atomic_write_bytes(path: str | os.PathLike, data: bytes) -> Path:
    """Write ``data`` to ``path`` atomically (unique temp in the same folder, fsync, replace).

    The target keeps its mode when it exists; a new file gets ``0o666`` less
    the umask.  Raises :class:`~cageprint.errors.OutputError` naming the path
    when the folder is missing, the path is a folder, or the write fails.

    Examples
    --------
    >>> import pathlib, tempfile
    >>> d = pathlib.Path(tempfile.mkdtemp())
    >>> atomic_write_bytes(d / "a.bin", b"abc").read_bytes()
    b'abc'
    """
    target = Path(os.fspath(path))
    folder = target.parent if str(target.parent) else Path(".")
    if not folder.is_dir():
        raise OutputError(f"{target}: the folder {folder} does not exist; create it first")
    if target.is_dir():
        raise OutputError(f"{target}: is a folder; give a file name")
    try:
        mode = stat.S_IMODE(os.stat(target).st_mode)
    except FileNotFoundError:
        mode = new_file_mode()
    except OSError as exc:
        raise OutputError(f"{target}: cannot inspect the file ({exc.strerror})") from None
    clean_stale_temps(folder)
    try:
        fd, tmp = tempfile.mkstemp(prefix=f"{TEMP_PREFIX}{_HOST}-{os.getpid()}-",
                                   suffix=".tmp", dir=folder)
    except OSError as exc:
        raise OutputError(f"{target}: cannot write in {folder} ({exc.strerror})") from None
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        os.chmod(tmp, mode)
        os.replace(tmp, target)
    except BaseException as exc:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        if isinstance(exc, OSError):
            raise OutputError(f"{target}: could not be written ({exc.strerror or exc})") from None
        raise
    try:  # make the rename itself durable where the platform allows
        dfd = os.open(folder, os.O_RDONLY)
        try:
            os.fsync(dfd)
        finally:
            os.close(dfd)
    except OSError:
        pass
    return target


def atomic_write_text(path: str | os.PathLike, text: str, encoding: str = "utf-8") -> Path:
    """Write ``text`` atomically (see :func:`atomic_write_bytes`); newlines are written as is.

    Examples
    --------
    >>> import pathlib, tempfile
    >>> d = pathlib.Path(tempfile.mkdtemp())
    >>> atomic_write_text(d / "a.json", "{}").read_text()
    '{}'
    """
    try:
        data = text.encode(encoding)
    except UnicodeEncodeError as exc:
        raise OutputError(
            f"{path}: character {text[exc.start:exc.start + 1]!r} at position {exc.start} "
            f"cannot be written as {encoding}"
        ) from None
    return atomic_write_bytes(path, data)


_BAD_NAME = re.compile(r"[\x00-\x1f\x7f/\\:*?\"<>|]")


def confined_path(folder: str | os.PathLike, name: str, suffix: str = "") -> Path:
    """``folder / (name + suffix)``, refusing names that would leave ``folder``.

    A name must be one plain file name: no folder separators, no ``..``, not
    absolute, no control characters, not starting with a dot, at most
    ``MAX_NAME_LENGTH`` characters.

    Examples
    --------
    >>> confined_path("results", "run 7", ".json").as_posix()
    'results/run 7.json'
    >>> confined_path("results", "../../x")
    Traceback (most recent call last):
    ...
    cageprint.errors.OutputError: export name '../../x': ...
    """
    text = str(name).strip()
    why = None
    if not text:
        why = "it is empty"
    elif len(text) > MAX_NAME_LENGTH:
        why = f"it is longer than {MAX_NAME_LENGTH} characters"
    elif os.path.isabs(text) or _BAD_NAME.search(text):
        why = "a name may not hold / \\ : * ? \" < > | or control characters"
    elif text.startswith("."):
        why = "a name may not start with '.'"
    if why is None:
        base = Path(os.path.abspath(folder))
        out = Path(os.path.abspath(base / (text + suffix)))
        if out.parent != base:
            why = "it leaves the folder"
    if why is not None:
        raise OutputError(
            f"export name {name!r}: {why}; give a plain file name such as 'assignment'"
        )
    return Path(folder) / (text + suffix)
