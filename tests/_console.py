"""The console entry point (``ttsp.cli.main``, what the installed ``ttsp`` command runs) called
in the test process, so a test sees the exit code, stdout and stderr a user would."""

from __future__ import annotations

import sys
import warnings
from contextlib import nullcontext


def run_console(args, capsys, monkeypatch, env=None, *, ignore_warnings=False):
    """Run ``ttsp <args>`` in this process: (exit code, stdout, stderr).

    ``env`` sets environment variables for the run; ``ignore_warnings`` silences Python
    warnings raised during it. The exit code is what the process would exit with: 0 when
    ``main`` returns, the code of its ``SystemExit`` otherwise (1 for a non-integer one).
    """
    from ttsp.cli import main

    for name, value in (env or {}).items():
        monkeypatch.setenv(name, value)
    monkeypatch.setattr(sys, "argv", ["ttsp"] + [str(a) for a in args])
    capsys.readouterr()
    with warnings.catch_warnings() if ignore_warnings else nullcontext():
        if ignore_warnings:
            warnings.simplefilter("ignore")
        try:
            main()
            code = 0
        except SystemExit as exc:
            code = exc.code if isinstance(exc.code, int) else (0 if exc.code is None else 1)
    out, err = capsys.readouterr()
    return code, out, err
