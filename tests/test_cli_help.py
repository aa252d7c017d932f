"""Help text as a person reads it (issue 16, point 8): placeholders in words (NUMBER, PATH,
[a|b]), no <bool> after a flag, no Python types, nothing cut or overflowing at 80 columns."""

from __future__ import annotations

import pytest
from typer.testing import CliRunner

from ttsp.cli import app

runner = CliRunner()
COMMANDS = ("build", "inspect", "check", "predict", "history", "batch", "demo")


@pytest.mark.parametrize("command", COMMANDS)
def test_help_reads_as_words_and_fits_80_columns(command):
    res = runner.invoke(app, [command, "--help"], terminal_width=80, env={"COLUMNS": "80"})
    assert res.exit_code == 0, res.output
    text = res.output
    for bad in ("<bool>", "<list[", " range>", "<float", "<str>", "<path>", "{", "…"):
        assert bad not in text, (command, bad)
    too_long = [ln for ln in text.splitlines() if len(ln) > 80]
    assert not too_long, too_long


def test_the_placeholder_words():
    from ttsp._help_words import readable_placeholder

    assert readable_placeholder("<float range>") == "NUMBER"
    assert readable_placeholder("<list[Path]>") == "PATH"
    assert readable_placeholder("<auto|wlf>") == "[auto|wlf]"
    assert readable_placeholder("<bool>") == ""
    assert readable_placeholder("HEADER=ROLE") == "HEADER=ROLE"
