"""Writing files without losing the user's: atomic replace, refusal to overwrite."""

from __future__ import annotations

import os
import tempfile
from pathlib import Path

from .errors import CurvewrightError, message

__all__ = ["write_atomic", "FileExistsRefused"]


class FileExistsRefused(CurvewrightError, FileExistsError):
    """The output exists and overwriting was not asked for."""


def write_atomic(path, data: str | bytes, *, force: bool = False) -> Path:
    """Write ``data`` to ``path`` via a temporary file in the same folder and a rename.

    A reader sees either the old file or the complete new one, never a part.

    Raises
    ------
    FileExistsRefused
        ``path`` exists and ``force`` is false.
    """
    path = Path(path)
    if path.exists() and not force:
        raise FileExistsRefused(message(f"Output '{path}'", "a path that does not exist yet",
                                        "an existing file", "Choose another name or pass --force to overwrite"))
    folder = path.parent if str(path.parent) else Path(".")
    if not folder.is_dir():
        raise FileExistsRefused(message(f"Output folder '{folder}'", "an existing folder", "none"))
    mode = "wb" if isinstance(data, bytes) else "w"
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=folder)
    umask = os.umask(0)
    os.umask(umask)
    try:
        os.chmod(tmp, 0o666 & ~umask)   # an ordinary file's mode, not mkstemp's private 0600
        with os.fdopen(fd, mode, **({} if mode == "wb" else {"encoding": "utf-8", "newline": "\n"})) as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        if not force and path.exists():
            raise FileExistsRefused(message(f"Output '{path}'", "a path that does not exist yet",
                                            "a file created meanwhile", "Pass --force to overwrite"))
        os.replace(tmp, path)
    except BaseException:
        if os.path.exists(tmp):
            os.unlink(tmp)
        raise
    return path
