"""Helpers for the tests of output folders and processes: a folder's file hashes, a build
killed while it writes, a process id that no process has."""

from __future__ import annotations

import hashlib
import os
import signal
import subprocess
import sys
import time
from pathlib import Path


def tree_hash(folder: Path) -> dict:
    return {str(p.relative_to(folder)): hashlib.sha256(p.read_bytes()).hexdigest()
            for p in sorted(folder.rglob("*")) if p.is_file()}


def dead_pid() -> int:
    """A process id no process has: above the kernel's largest (a pid of a process that ended
    may be reused at once on a busy machine)."""
    try:
        return int(Path("/proc/sys/kernel/pid_max").read_text()) + 1
    except OSError:
        return 2 ** 22 + 1   # Linux's largest pid_max, 4194304; a common fact, from memory


def kill_while_writing(args, out: Path, env) -> int:
    """Start a build, wait until it has begun writing its temporary folder, SIGKILL it (and the
    process it forks to draw figures). Returns the exit status (-9 when killed)."""
    proc = subprocess.Popen([sys.executable, "-m", "ttsp"] + args, env=env,
                            stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL,
                            start_new_session=True)
    try:
        deadline = time.monotonic() + 120
        while time.monotonic() < deadline:
            started = [p for p in out.parent.glob(f".ttsp-tmp-{out.name}.*")
                       if (p / "summary.json").exists()]
            if started or proc.poll() is not None:
                break
            time.sleep(0.005)
        assert proc.poll() is None, "the build finished before it could be killed"
        os.killpg(proc.pid, signal.SIGKILL)
        return proc.wait(timeout=60)
    finally:
        if proc.poll() is None:  # never leave our own process behind
            os.killpg(proc.pid, signal.SIGKILL)
            proc.wait(timeout=60)
