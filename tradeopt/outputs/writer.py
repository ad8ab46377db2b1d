"""Results folders that never lose a user's files: checked, built in a temporary folder, renamed into place.

tradeopt writes only into a folder that is new (absent or empty) or that it
wrote itself before, which it marks with the file :data:`MARKER_NAME`. Any
other folder is refused before anything is computed (:func:`check_out_dir`),
and so is a path that is or holds an input the run reads, a symbolic link,
or the current folder (or a folder holding it).

A folder tradeopt owns is replaced atomically: a crash or a kill never leaves a
half-written results folder; the previous folder stays intact until the new one
is complete, and temporary folders left by a killed run are removed by the
next one. The previous folder is moved aside (``<TEMP_PREFIX><pid>-prev-<name>``)
only for the instant between two renames; if the run dies in that instant, the
next run puts it back. Only names ``<TEMP_PREFIX><pid>-...`` whose pid is 1 to 10
ASCII digits are taken for the writer's own; anything else beside the target is
left alone.
"""
from __future__ import annotations

import os
import re
import shutil
import stat
import tempfile
from pathlib import Path

__all__ = ["write_results", "check_out_dir", "TEMP_PREFIX", "MARKER_NAME", "MARKER_TEXT"]

#: Prefix of the temporary folders (hidden, beside the target).
TEMP_PREFIX = ".tradeopt-partial-"
#: The file that marks a folder as written by tradeopt (and so replaceable by it).
MARKER_NAME = ".tradeopt-results"
#: The marker's contents: the same bytes on every run (no time, no version).
MARKER_TEXT = ("This folder was written by tradeopt. tradeopt replaces it as a whole on each run "
               "that writes here: keep no files of your own in it.\n")

#: A process id as the writer writes it: 1 to 10 ASCII digits.
_PID_TEXT = re.compile(r"[0-9]{1,10}")
#: Largest process id taken for one (pid_t is a signed 32-bit integer).
_PID_MAX = 2**31 - 1


def _pid_alive(pid: int) -> bool:
    """Whether process ``pid`` may still run (True when it cannot be told)."""
    if os.name != "posix":  # os.kill(pid, 0) terminates the process on Windows: never probe there
        return True
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except (PermissionError, OverflowError, ValueError):  # pragma: no cover
        return True
    return True


_PREV = "-prev-"


def _clean_stale(parent: Path) -> None:
    """Remove the temporary folders of dead runs; put back a previous folder a dead run had moved aside.

    Only a real folder (not a link, not a file) named ``TEMP_PREFIX`` + a sane
    ASCII process id + ``-...`` is the writer's; every other name is left alone.
    """
    for entry in sorted(parent.glob(TEMP_PREFIX + "*")):
        rest = entry.name[len(TEMP_PREFIX):]
        pid_text, sep, _ = rest.partition("-")
        if not sep or not _PID_TEXT.fullmatch(pid_text):
            continue
        pid = int(pid_text)
        if not 1 <= pid <= _PID_MAX:
            continue
        try:
            if not stat.S_ISDIR(os.lstat(entry).st_mode):
                continue
        except OSError:
            continue
        if _pid_alive(pid):
            continue
        tail = rest[len(pid_text):]
        if tail.startswith(_PREV) and len(tail) > len(_PREV):
            home = parent / tail[len(_PREV):]
            if not home.exists() and not home.is_symlink():
                try:
                    os.rename(entry, home)
                    continue
                except OSError:
                    pass
        shutil.rmtree(entry, ignore_errors=True)


def _aside_name(parent: Path, name: str) -> Path:
    """Where the previous folder waits while the new one is renamed into place."""
    old = parent / f"{TEMP_PREFIX}{os.getpid()}{_PREV}{name}"
    if len(old.name.encode()) > 255 or old.exists() or old.is_symlink():
        # A name too long to carry the target's name (or already taken): a unique name, not restorable.
        old = Path(tempfile.mkdtemp(prefix=f"{TEMP_PREFIX}{os.getpid()}-old-", dir=parent))
        os.rmdir(old)
    return old


def _inside(path: str, folder: str) -> bool:
    """Whether ``path`` is ``folder`` or lies inside it (both absolute)."""
    try:
        return os.path.commonpath([path, folder]) == folder
    except ValueError:  # different drives
        return False


def _is_marked(folder: Path) -> bool:
    """Whether ``folder`` holds the marker as a regular file (not a link, not a folder)."""
    try:
        return stat.S_ISREG(os.lstat(folder / MARKER_NAME).st_mode)
    except OSError:
        return False


def check_out_dir(out_dir: str | os.PathLike, *, inputs=()) -> Path:
    """Refuse a results folder that tradeopt may not replace; return it as a path.

    Accepted: a path that does not exist yet, an existing empty folder, or a
    folder holding the marker :data:`MARKER_NAME` (written by tradeopt).
    Refused: an existing file, a symbolic link, a folder holding other files
    without the marker, the current folder or a folder holding it, and a path
    that is or holds one of ``inputs``.

    Parameters
    ----------
    out_dir : path
        The results folder.
    inputs : iterable of path or None
        Files and folders the run reads (scenario or link file, catalog folder,
        sample files); None entries are skipped.

    Returns
    -------
    target : Path
        ``out_dir`` as a :class:`~pathlib.Path`.

    Raises
    ------
    InputError
        One line naming the folder and why it is refused; nothing was written.
    """
    from ..inputs.errors import InputError  # noqa: PLC0415

    text = os.fspath(out_dir)
    target = Path(text)
    fname = str(target)
    if not text.strip():
        raise InputError("empty path; give a folder path for the results", file=repr(text))
    lexical = os.path.abspath(target)
    real = os.path.realpath(target)
    if os.path.dirname(lexical) == lexical:
        raise InputError("is the root of the file system; give a folder for the results", file=fname)
    for item in inputs:
        if item is None:
            continue
        item_lexical = os.path.abspath(item)
        item_real = os.path.realpath(item)
        if item_lexical in (lexical, real) or item_real in (lexical, real):
            raise InputError(f"is the input {os.fspath(item)}; give another folder for the results", file=fname)
        if any(_inside(i, t) for i in (item_lexical, item_real) for t in (lexical, real)):
            raise InputError(f"holds the input {os.fspath(item)}, which writing the results would delete; "
                             "give another folder for the results", file=fname)
    cwd = os.path.realpath(os.getcwd())
    if _inside(cwd, real) or _inside(os.path.abspath(os.getcwd()), lexical):
        raise InputError("is the current folder or holds it; give another folder for the results", file=fname)
    try:
        mode = os.lstat(target).st_mode
    except FileNotFoundError:
        return target  # new
    except OSError as exc:
        raise InputError(f"cannot be examined ({exc.strerror or exc.__class__.__name__})", file=fname) from None
    if stat.S_ISLNK(mode):
        raise InputError("is a symbolic link, which writing the results would replace; give the folder it "
                         "points to, or a new folder", file=fname)
    if not stat.S_ISDIR(mode):
        raise InputError("exists and is not a folder; give a folder path for the results", file=fname)
    try:
        with os.scandir(target) as entries:
            empty = next(entries, None) is None
    except OSError as exc:
        raise InputError(f"cannot be listed ({exc.strerror or exc.__class__.__name__})", file=fname) from None
    if empty or _is_marked(target):
        return target
    raise InputError(f"holds files tradeopt did not write (there is no {MARKER_NAME} marker); refusing to replace "
                     "them: give a new or empty folder, or one tradeopt wrote before", file=fname)


def write_results(out_dir: str | os.PathLike, files: dict[str, str | bytes], *, inputs=()) -> Path:
    """Write ``files`` (relative name -> text or bytes) as the folder ``out_dir``, atomically.

    The folder is checked first (:func:`check_out_dir`): it must be new, empty,
    or marked as written by tradeopt, and must not be or hold an input. A marked folder is replaced as a whole: files of an earlier run that
    are not in ``files`` do not survive. The marker :data:`MARKER_NAME` is
    always written.

    Parameters
    ----------
    out_dir : path
        Target folder.
    files : dict
        File names (may contain sub-folders) and their contents.
    inputs : iterable of path or None, optional
        Files and folders the run read, which the target must not be or hold.

    Returns
    -------
    path : Path
        The target folder.

    Raises
    ------
    InputError
        The folder is refused, or cannot be written; nothing was changed.
    """
    from ..inputs.errors import InputError  # noqa: PLC0415

    target = check_out_dir(out_dir, inputs=inputs)
    files = {**files, MARKER_NAME: MARKER_TEXT}
    parent = target.parent
    try:
        parent.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise InputError(f"cannot create the results folder here ({exc.strerror or exc.__class__.__name__})",
                         file=str(target)) from None
    _clean_stale(parent)
    try:
        tmp = Path(tempfile.mkdtemp(prefix=f"{TEMP_PREFIX}{os.getpid()}-", dir=parent))
    except OSError as exc:
        raise InputError(f"cannot write the results here ({exc.strerror or exc.__class__.__name__})",
                         file=str(target)) from None
    try:
        for name, content in sorted(files.items()):
            dest = tmp / name
            dest.parent.mkdir(parents=True, exist_ok=True)
            if isinstance(content, bytes):
                dest.write_bytes(content)
            else:
                dest.write_text(content, encoding="utf-8", newline="\n")
            with open(dest, "rb") as fh:
                os.fsync(fh.fileno())
        os.chmod(tmp, 0o755)
        if _is_marked(target):  # ours: the atomic replace
            old = _aside_name(parent, target.name)
            os.rename(target, old)
            try:
                os.rename(tmp, target)
            except OSError:
                os.rename(old, target)  # put the previous results back before reporting the error
                raise
            shutil.rmtree(old, ignore_errors=True)
        else:
            if target.is_dir():
                try:
                    os.rmdir(target)  # empty when checked; fails (and nothing is lost) if a file appeared since
                except OSError:
                    raise InputError("is no longer empty (a file appeared while the results were computed); "
                                     "refusing to replace it", file=str(target)) from None
            os.rename(tmp, target)
    except OSError as exc:
        shutil.rmtree(tmp, ignore_errors=True)
        raise InputError(f"cannot write the results ({exc.strerror or exc.__class__.__name__})",
                         file=str(target)) from None
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        raise
    return target
