"""Writing files without losing the user's: atomic replace, refusal to overwrite, no temporary
file left behind when the process is stopped during the write."""

from __future__ import annotations

import contextlib
import os
import signal
import tempfile
import threading
from pathlib import Path

from .errors import CurvewrightError, message

__all__ = ["write_atomic", "FileExistsRefused"]

# Signals that end the process during a write: the temporary file is removed first.
_STOP_SIGNALS = tuple(getattr(signal, name) for name in ("SIGTERM", "SIGHUP") if hasattr(signal, name))


class FileExistsRefused(CurvewrightError, FileExistsError):
    """The output exists and overwriting was not asked for."""


def _existing(path: Path) -> str | None:
    """What is at ``path`` ("an existing file", "an existing folder", ...) or None; a symbolic
    link counts even when what it points to is gone."""
    if not os.path.lexists(path):
        return None
    if path.is_symlink() and not path.exists():
        return "a symbolic link to nothing (dangling)"
    if path.is_dir():
        return "an existing folder"
    return "an existing file"


@contextlib.contextmanager
def _removed_on_stop():
    """Yields a list for the temporary file's name; while the body runs, a stop signal removes
    that file and then ends the process as the signal would have (the previous handler runs, or
    the default action). Handlers can only be set in the main thread; elsewhere nothing is set."""
    names: list = []
    if threading.current_thread() is not threading.main_thread() or not _STOP_SIGNALS:
        yield names
        return
    previous = {}

    def stop(signum, frame):
        handler = previous.get(signum)
        if callable(handler):          # the program's own handler decides; if it raises, the
            handler(signum, frame)     # write's cleanup removes the temporary file
            return
        if handler == signal.SIG_IGN:
            return
        for tmp in names:
            with contextlib.suppress(OSError):
                os.unlink(tmp)
        for s, h in previous.items():
            signal.signal(s, h)
        signal.raise_signal(signum)    # the default action: the process ends by this signal
    for s in _STOP_SIGNALS:
        previous[s] = signal.signal(s, stop)
    try:
        yield names
    finally:
        for s, h in previous.items():
            signal.signal(s, h)


def write_atomic(path, data: str | bytes, *, force: bool = False) -> Path:
    """Write ``data`` to ``path`` via a temporary file in the same folder and a rename.

    A reader sees either the old file or the complete new one, never a part. Stopped by
    Ctrl-C, SIGTERM or SIGHUP during the write, it leaves no temporary file behind.

    Raises
    ------
    FileExistsRefused
        Something is at ``path`` (a file, a folder, a dangling link) and ``force`` is false.
    """
    path = Path(path)
    there = _existing(path)
    if there and not force:
        raise FileExistsRefused(message(f"Output '{path}'", "a path that does not exist yet",
                                        there, "Choose another name or pass --force to overwrite"))
    folder = path.parent if str(path.parent) else Path(".")
    if not folder.is_dir():
        raise FileExistsRefused(message(f"Output folder '{folder}'", "an existing folder", "none"))
    mode = "wb" if isinstance(data, bytes) else "w"
    umask = os.umask(0)
    os.umask(umask)
    with _removed_on_stop() as names:
        fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=folder)
        names.append(tmp)
        try:
            os.chmod(tmp, 0o666 & ~umask)   # an ordinary file's mode, not mkstemp's private 0600
            with os.fdopen(fd, mode, **({} if mode == "wb" else {"encoding": "utf-8", "newline": "\n"})) as fh:
                fh.write(data)
                fh.flush()
                os.fsync(fh.fileno())
            if not force and os.path.lexists(path):
                raise FileExistsRefused(message(f"Output '{path}'", "a path that does not exist yet",
                                                "a file created meanwhile", "Pass --force to overwrite"))
            os.replace(tmp, path)
        except BaseException:
            if os.path.exists(tmp):
                os.unlink(tmp)
            raise
    return path
