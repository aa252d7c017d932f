"""Kill ``ttsp build`` and ``ttsp batch`` at random instants and check what is left (issue 17).

One *trial*: a working folder with the user's files (the input campaign, a folder of theirs, a
note), a previous complete output at ``--out``, then the command started as its own process
and sent SIGKILL or SIGTERM (its main process only, as the kernel's OOM killer or a scheduler
would) after a random delay drawn from a seeded generator over the time an undisturbed run
takes. Then:

* no process of the run is left (found by an environment tag in ``/proc``) within 10 s;
* every user file is byte for byte as before;
* ``--out`` holds a complete ttsp output (the old or the new; a batch: every campaign folder
  complete and the results table ttsp's own), never a half-written one, never nothing;
* at most one hidden temporary folder per build in flight, and its lock file;
* the same command run again finishes (exit 0) and leaves no hidden leftovers.

Used by ``tests/test_fault_injection.py`` (a few trials) and
``benchmarks/bench_fault_injection.py`` (50).
"""

from __future__ import annotations

import hashlib
import os
import signal
import subprocess
import sys
import time
import uuid
from dataclasses import dataclass
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(Path(__file__).resolve().parent))

from _campaigns import write_campaign  # noqa: E402

#: Seconds the processes of a killed run may take to go (the workers' watch thread polls
#: every 0.5 s; the parent-death signal is immediate).
GONE_WITHIN_S = 10.0


@dataclass
class Trial:
    """What one kill left."""

    command: str
    seed: int
    figures: bool
    signal_name: str
    delay_s: float
    full_s: float
    exit_status: int
    processes_left: int
    user_files_intact: bool
    output_complete: bool
    hidden_left: int
    rerun_ok: bool
    problems: list

    @property
    def ok(self) -> bool:
        return not self.problems


def tagged_processes(tag: str) -> list:
    """Process ids whose environment holds TTSP_TEST_TAG=tag."""
    pids = []
    for entry in Path("/proc").iterdir():
        if entry.name.isdigit():
            try:
                if f"TTSP_TEST_TAG={tag}".encode() in (entry / "environ").read_bytes():
                    pids.append(int(entry.name))
            except OSError:
                continue
    return pids


def _hashes(paths) -> dict:
    out = {}
    for root in paths:
        root = Path(root)
        files = [root] if root.is_file() else sorted(p for p in root.rglob("*") if p.is_file())
        for p in files:
            out[str(p)] = hashlib.sha256(p.read_bytes()).hexdigest()
    return out


def _setup(work: Path, command: str):
    """Input campaigns, the user's own files, and the command line (without --force)."""
    work.mkdir(parents=True)
    campaigns = work / "campaigns"
    campaigns.mkdir()
    n = 1 if command == "build" else 4
    for i in range(n):
        write_campaign(campaigns / f"c{i}.csv")
    mine = work / "mine"
    mine.mkdir()
    (mine / "thesis.tex").write_text("months of work\n", encoding="utf-8")
    (work / "notes.txt").write_text("my notes\n", encoding="utf-8")
    out = work / "out"
    if command == "build":
        args = ["build", str(campaigns / "c0.csv"), "--out", str(out), "-q"]
    else:
        manifest = work / "manifest.csv"
        manifest.write_text("id,path\n" + "".join(f"c{i},campaigns/c{i}.csv\n" for i in range(n)),
                            encoding="utf-8")
        args = ["batch", str(manifest), "--out", str(out), "--workers", "2", "-q"]
    return args, out, [campaigns, mine, work / "notes.txt"]


def _run(args, tag, timeout=600):
    env = {**os.environ, "PYTHONPATH": str(ROOT), "TTSP_TEST_TAG": tag}
    return subprocess.run([sys.executable, "-m", "ttsp", *args], env=env, capture_output=True,
                          text=True, timeout=timeout)


def _complete_build(folder: Path) -> bool:
    from ttsp.io.marker import why_not_replaceable

    return (folder / "summary.json").is_file() and why_not_replaceable(folder, ("build",)) is None


def _output_problems(command: str, out: Path) -> list:
    from ttsp.batch import _check_results_files
    from ttsp.exceptions import DataError

    if command == "build":
        return [] if _complete_build(out) else [f"{out} is not a complete output"]
    problems = []
    if not out.is_dir():
        return [f"{out} is missing"]
    for sub in out.iterdir():
        if sub.is_dir() and not sub.name.startswith(".") and not _complete_build(sub):
            problems.append(f"{sub} is not a complete output")
    try:
        _check_results_files(out)
    except DataError as exc:
        problems.append(str(exc))
    return problems


def _hidden(command: str, out: Path) -> list:
    places = [out.parent] + ([out] if command == "batch" and out.is_dir() else [])
    return [p for place in places for p in place.iterdir()
            if p.name.startswith(".") and p.name != ".ttsp-output"]


def run_trial(work: Path, command: str, seed: int, *, full_s=None) -> Trial:
    """One trial in the fresh folder ``work``.

    ``full_s`` is the time an undisturbed ``--force`` run takes, or a callable of ``figures``
    (bool) giving it; measured here when not given. The kill comes after a delay drawn
    uniformly from 0 to 1.1 times that.
    """
    rng = np.random.default_rng(seed)
    args, out, user = _setup(work, command)
    figures = bool(rng.integers(2))
    if not figures:
        args.append("--no-figures")
    first = _run(args, uuid.uuid4().hex)          # the previous complete output
    if first.returncode != 0:
        raise RuntimeError(f"the first run failed: {first.stderr}")
    if callable(full_s):
        full_s = full_s(figures)
    if full_s is None:
        t0 = time.monotonic()
        again = _run(args + ["--force"], uuid.uuid4().hex)
        full_s = time.monotonic() - t0
        if again.returncode != 0:
            raise RuntimeError(f"the undisturbed run failed: {again.stderr}")
    before = _hashes(user)

    sig = signal.SIGKILL if rng.random() < 0.5 else signal.SIGTERM
    delay = float(rng.uniform(0.0, 1.1 * full_s))
    tag = uuid.uuid4().hex
    env = {**os.environ, "PYTHONPATH": str(ROOT), "TTSP_TEST_TAG": tag}
    proc = subprocess.Popen([sys.executable, "-m", "ttsp", *args, "--force"], env=env,
                            stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    time.sleep(delay)
    if proc.poll() is None:
        proc.send_signal(sig)
    status = proc.wait(timeout=120)

    problems = []
    deadline = time.monotonic() + GONE_WITHIN_S
    left = tagged_processes(tag)
    while left and time.monotonic() < deadline:
        time.sleep(0.05)
        left = tagged_processes(tag)
    if left:
        problems.append(f"{len(left)} processes left")
        for pid in left:
            try:
                os.kill(pid, signal.SIGKILL)
            except ProcessLookupError:
                pass
    intact = _hashes(user) == before
    if not intact:
        problems.append("a user file changed")
    output = _output_problems(command, out)
    problems += output
    hidden = _hidden(command, out)
    tmp_folders = [p for p in hidden if p.name.startswith((".ttsp-tmp-", ".ttsp-old-"))]
    if len(tmp_folders) > (1 if command == "build" else 2):   # one per build in flight
        problems.append(f"hidden folders left: {sorted(p.name for p in tmp_folders)}")

    rerun = _run(args + ["--force"], uuid.uuid4().hex)
    rerun_ok = rerun.returncode == 0 and not _hidden(command, out) and not _output_problems(
        command, out) and _hashes(user) == before
    if not rerun_ok:
        hidden_now = [p.name for p in _hidden(command, out)]
        problems.append(f"the rerun did not finish cleanly (exit {rerun.returncode}: "
                        f"{rerun.stderr.strip()[:200]}; hidden {hidden_now})")
    return Trial(command, seed, figures, signal.Signals(sig).name, delay, full_s, status,
                 len(left), intact, not output, len(hidden), rerun_ok, problems)


def wait_gone(tag: str, seconds: float) -> list:
    deadline = time.monotonic() + seconds
    while time.monotonic() < deadline:
        left = tagged_processes(tag)
        if not left:
            return []
        time.sleep(0.05)
    return tagged_processes(tag)
