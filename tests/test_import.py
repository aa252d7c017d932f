"""Importing ttsp stays light: no matplotlib (STYLE.md convention 7), and the data model does
not load pandas until a frame is asked for. Each check runs in a fresh interpreter, because
this test process may already have loaded those packages."""

import json
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]


def loaded_after(statement: str) -> dict:
    code = (f"import sys\n{statement}\n"
            "import json\n"
            "print(json.dumps({m: m in sys.modules for m in ('matplotlib', 'pandas', 'typer')}))")
    out = subprocess.run([sys.executable, "-c", code], cwd=ROOT, capture_output=True, text=True,
                         timeout=60, check=True)
    return json.loads(out.stdout.strip().splitlines()[-1])


@pytest.mark.parametrize("statement, not_loaded", [
    ("import ttsp", ("matplotlib", "pandas", "typer")),
    ("import ttsp.data", ("matplotlib", "pandas", "typer")),
    ("import ttsp.units", ("matplotlib", "pandas", "typer")),
    ("import ttsp.io.headers", ("matplotlib", "pandas", "typer")),
    ("import ttsp.io.readers", ("matplotlib", "pandas", "typer")),
    ("from ttsp import read_campaign, Campaign", ("matplotlib",)),
    # the library's batch and build steps stand without the command-line framework
    ("import ttsp.runner", ("matplotlib", "typer")),
    ("import ttsp.batch", ("matplotlib", "typer")),
])
def test_import_stays_light(statement, not_loaded):
    loaded = loaded_after(statement)
    assert [m for m in not_loaded if loaded[m]] == []


def test_the_check_itself_can_fail():
    # the probe sees a module that really is imported
    assert loaded_after("import json, matplotlib")["matplotlib"] is True
