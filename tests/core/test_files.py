"""Writing outputs: refusal to overwrite (files, folders, dangling links) and no temporary file left
behind when the process is stopped by SIGTERM in the middle of a write."""

import os
import signal
import subprocess
import sys
import textwrap
from pathlib import Path

import pytest

from core.files import FileExistsRefused, write_atomic

ROOT = Path(__file__).resolve().parents[2]


def test_existing_folder_and_dangling_link_are_named(tmp_path):
    """The refusal says what is there: a folder, or a link pointing at nothing."""
    (tmp_path / "dir").mkdir()
    with pytest.raises(FileExistsRefused, match=r"got an existing folder\. Choose another name or pass --force"):
        write_atomic(tmp_path / "dir", "x")
    if hasattr(os, "symlink"):
        os.symlink(tmp_path / "nowhere", tmp_path / "link")
        with pytest.raises(FileExistsRefused, match=r"got a symbolic link to nothing \(dangling\)"):
            write_atomic(tmp_path / "link", "x")
        write_atomic(tmp_path / "link", "new", force=True)
        assert (tmp_path / "link").read_text() == "new" and not (tmp_path / "link").is_symlink()


@pytest.mark.skipif(not hasattr(signal, "SIGTERM") or os.name != "posix", reason="POSIX signals")
def test_sigterm_during_a_write_leaves_no_temporary_file(tmp_path):
    """A child writing a large payload is sent SIGTERM mid-write: it ends by the signal, the old file is
    intact and no hidden temporary file remains."""
    target = tmp_path / "out.json"
    target.write_text("old")
    child = textwrap.dedent(f"""
        import os, sys, time
        import core.files
        real_fsync = os.fsync
        def slow_fsync(fd):                     # the payload is written; stop here until signalled
            print("writing", flush=True)
            time.sleep(60)
        core.files.os.fsync = slow_fsync
        core.files.write_atomic({str(target)!r}, "x" * 20_000_000, force=True)
        print("finished", flush=True)
    """)
    proc = subprocess.Popen([sys.executable, "-c", child], stdout=subprocess.PIPE, text=True, cwd=ROOT,
                            env={**os.environ, "PYTHONPATH": str(ROOT)})
    assert proc.stdout.readline().strip() == "writing"
    assert any(p.name.startswith(".out.json.") for p in tmp_path.iterdir())     # mid-write: the temporary exists
    proc.send_signal(signal.SIGTERM)
    rest = proc.communicate(timeout=60)[0]
    assert proc.returncode == -signal.SIGTERM and "finished" not in rest
    assert sorted(p.name for p in tmp_path.iterdir()) == ["out.json"]
    assert target.read_text() == "old"
