"""Atomic results folders: build everything in a temporary folder, then rename it into place.

A crash or a kill never leaves a half-written results folder: the previous
folder stays intact until the new one is complete, and temporary folders left
by a killed run are removed by the next one. The previous folder is moved aside
(``<TEMP_PREFIX><pid>-prev-<name>``) only for the instant between two renames;
if the run dies in that instant, the next run puts it back.
"""
from __future__ import annotations

import os
import shutil
import tempfile
from pathlib import Path

__all__ = ["write_results", "TEMP_PREFIX"]

#: Prefix of the temporary folders (hidden, beside the target).
TEMP_PREFIX = ".tradeopt-partial-"


def _pid_alive(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:  # pragma: no cover
        return True
    return True


_PREV = "-prev-"


def _clean_stale(parent: Path) -> None:
    """Remove the temporary folders of dead runs; put back a previous folder a dead run had moved aside."""
    for entry in sorted(parent.glob(TEMP_PREFIX + "*")):
        rest = entry.name[len(TEMP_PREFIX):]
        pid_text = rest.split("-")[0]
        if not pid_text.isdigit() or _pid_alive(int(pid_text)):
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


def write_results(out_dir: str | os.PathLike, files: dict[str, str | bytes]) -> Path:
    """Write ``files`` (relative name -> text or bytes) as the folder ``out_dir``, atomically.

    The folder is replaced as a whole: files of an earlier run that are not in
    ``files`` do not survive.

    Parameters
    ----------
    out_dir : path
        Target folder.
    files : dict
        File names (may contain sub-folders) and their contents.

    Returns
    -------
    path : Path
        The target folder.
    """
    from ..inputs.errors import InputError  # noqa: PLC0415

    target = Path(out_dir)
    if target.exists() and not target.is_dir():
        raise InputError("exists and is not a folder; give a folder path for the results", file=str(target))
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
        if target.exists():
            old = _aside_name(parent, target.name)
            os.rename(target, old)
            try:
                os.rename(tmp, target)
            except OSError:
                os.rename(old, target)  # put the previous results back before reporting the error
                raise
            shutil.rmtree(old, ignore_errors=True)
        else:
            os.rename(tmp, target)
    except OSError as exc:
        shutil.rmtree(tmp, ignore_errors=True)
        raise InputError(f"cannot write the results ({exc.strerror or exc.__class__.__name__})",
                         file=str(target)) from None
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        raise
    return target
