"""The shared build steps (ttsp.runner) stand without the command-line framework: a bad option
value is an OptionValueError (a DataError naming the option), which the command line reports as
a usage error of that option and a batch as its one-line error."""

from __future__ import annotations

import ast
import pickle
from pathlib import Path

import pytest

from ttsp.batch.rows import error_text
from ttsp.exceptions import DataError, OptionValueError
from ttsp.runner import parse_pairs, read_inputs

PACKAGE = Path(__file__).resolve().parents[1] / "ttsp"
# the command line and the module that rewords its help are the only users of typer
COMMAND_LINE_MODULES = {"cli.py", "_help_words.py"}


def test_name_value_pairs():
    assert parse_pairs(["Mod1 = storage_modulus_Pa", "T=temperature_C"], "--column") == \
        {"Mod1": "storage_modulus_Pa", "T": "temperature_C"}
    assert parse_pairs(None, "--unit") == {}
    with pytest.raises(OptionValueError,
                       match="^Invalid value for --unit: must look like NAME=VALUE; got 'MPa'$"):
        parse_pairs(["MPa"], "--unit")


@pytest.mark.parametrize("kwargs, match", [
    ({"modulus_kind": "bulk"}, "^Invalid value for --modulus-kind: must be tensile or shear$"),
    ({"repeats": "sum"}, "^Invalid value for --repeats: must be merge or refuse$"),
    ({"column": ["oops"]}, "^Invalid value for --column: must look like NAME=VALUE; got 'oops'$"),
])
def test_bad_option_values_are_data_errors_naming_the_option(tmp_path, kwargs, match):
    arguments = {"column": None, "modulus_kind": None, **kwargs}
    with pytest.raises(OptionValueError, match=match) as caught:
        read_inputs([tmp_path / "x.csv"], arguments["column"], None, None, 0.5,
                    arguments["modulus_kind"], repeats=kwargs.get("repeats", "merge"))
    assert isinstance(caught.value, DataError)
    assert error_text(caught.value) == str(caught.value)   # a batch row's error, one line


def test_option_value_error_keeps_its_parts_through_pickling():
    exc = pickle.loads(pickle.dumps(OptionValueError("--repeats", "must be merge or refuse")))
    assert (exc.option, exc.reason) == ("--repeats", "must be merge or refuse")
    assert str(exc) == "Invalid value for --repeats: must be merge or refuse"


def _imports_typer(path: Path) -> bool:
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.Import) and any(a.name.split(".")[0] == "typer"
                                                for a in node.names):
            return True
        if isinstance(node, ast.ImportFrom) and (node.module or "").split(".")[0] == "typer":
            return True
    return False


def test_only_the_command_line_imports_typer():
    users = {str(p.relative_to(PACKAGE)) for p in PACKAGE.rglob("*.py") if _imports_typer(p)}
    assert users <= COMMAND_LINE_MODULES
    assert "cli.py" in users   # the probe sees a real import
