"""Files motorshelf writes for people: exports, reports, diagrams, rejected rows.

Each is written to a temporary file beside its target and renamed over it when whole, so
a reader never sees half a file and a failed write leaves the old one.  The temporary
file is created exclusively under a name nobody can guess (``.<name>.<pid>.<random>.part``,
``O_EXCL | O_NOFOLLOW``): a link planted under a predictable name could otherwise make us
overwrite any file the user may write.  The target itself is replaced only if it is a
regular file or absent: a symbolic link, a folder, a device or a FIFO there is refused
with a message, never followed or silently replaced.  Temporary files of a run that was
killed (``kill -9`` leaves them) are removed by the next write of the same target.
"""
from __future__ import annotations

__all__ = ["output_file", "check_output_path"]

import contextlib
import errno
import os
import secrets
import stat
from pathlib import Path

from ..errors import InputError, Problem


def _refuse(option: str, path: Path, message: str) -> InputError:
    text = f"{path}: {message}"
    return InputError(f"{option}: {text}", [Problem(option, None, None, text)])


def _kind(mode: int) -> str | None:
    """What a non-regular file is, in words (None for a regular file)."""
    for test, word in ((stat.S_ISLNK, "a symbolic link"), (stat.S_ISDIR, "a folder"), (stat.S_ISFIFO, "a FIFO"),
                       (stat.S_ISCHR, "a device"), (stat.S_ISBLK, "a device"), (stat.S_ISSOCK, "a socket")):
        if test(mode):
            return word
    return None if stat.S_ISREG(mode) else "not a regular file"


def check_output_path(path, option: str = "--out") -> os.stat_result | None:
    """The ``lstat`` of an existing regular file at ``path`` (None if there is none yet);
    :class:`InputError` if something else is there or its folder is missing."""
    path = Path(path)
    if not path.parent.is_dir():
        raise _refuse(option, path, f"folder {str(path.parent)!r} does not exist")
    try:
        info = os.lstat(path)
    except FileNotFoundError:
        return None
    except OSError as exc:
        raise _refuse(option, path, f"cannot look at it ({exc.strerror or exc})") from None
    kind = _kind(info.st_mode)
    if kind is not None:
        where = f" to {os.readlink(path)!r}" if stat.S_ISLNK(info.st_mode) else ""
        raise _refuse(option, path, f"is {kind}{where}, expected a regular file or a new name; nothing was "
                                    "written (remove it or choose another name)")
    return info


def _stale_parts(path: Path) -> None:
    """Remove our temporary files of ``path`` left by runs that no longer exist."""
    prefix = f".{path.name}."
    uid = os.getuid() if hasattr(os, "getuid") else None
    try:
        names = [n for n in os.listdir(path.parent) if n.startswith(prefix) and n.endswith(".part")]
    except OSError:
        return
    for name in names:
        pid = name[len(prefix):-len(".part")].split(".")[0]
        if not pid.isascii() or not pid.isdigit():
            continue
        try:
            os.kill(int(pid), 0)
            continue  # its writer is still running (or the number was reused): leave it
        except ProcessLookupError:
            pass
        except (PermissionError, OverflowError, ValueError):
            continue
        part = path.parent / name
        try:
            info = os.lstat(part)
            if stat.S_ISREG(info.st_mode) and (uid is None or info.st_uid == uid):
                part.unlink()
        except OSError:
            pass


@contextlib.contextmanager
def output_file(path, option: str = "--out"):
    """Write ``path`` safely: yields the path of a new temporary file to write, then renames
    it over ``path`` (see the module notes).

    Raises :class:`InputError` (one line, naming ``option``) for a target that is not a
    regular file, a missing folder, or a write the file system refuses (disk full, no
    permission, read-only): nothing is left behind and an existing file is unchanged.
    """
    path = Path(path)
    old = check_output_path(path, option)
    _stale_parts(path)
    tmp = path.with_name(f".{path.name}.{os.getpid()}.{secrets.token_hex(6)}.part")
    try:
        fd = os.open(tmp, os.O_WRONLY | os.O_CREAT | os.O_EXCL | getattr(os, "O_NOFOLLOW", 0)
                     | getattr(os, "O_CLOEXEC", 0), 0o666)
        os.close(fd)
        if old is not None:
            os.chmod(tmp, stat.S_IMODE(old.st_mode))  # a replaced file keeps its permissions
    except OSError as exc:
        raise _write_failed(option, path, exc) from None
    try:
        yield tmp
        check_output_path(path, option)  # nothing was put there meanwhile
        os.replace(tmp, path)
    except OSError as exc:
        raise _write_failed(option, path, exc) from None
    finally:
        with contextlib.suppress(FileNotFoundError):
            os.unlink(tmp)


def _write_failed(option: str, path: Path, exc: OSError) -> InputError:
    why = exc.strerror or str(exc)
    if exc.errno in (errno.ENOSPC, errno.EDQUOT, errno.EFBIG):
        hint = "free some space and try again"
    elif exc.errno in (errno.EACCES, errno.EPERM, errno.EROFS):
        hint = "choose a folder you may write"
    else:
        hint = "try again or choose another place"
    return _refuse(option, path, f"cannot write it ({why}); nothing was written, {hint}")
