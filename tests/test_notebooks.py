"""The tutorial notebooks run from top to bottom, and are committed without outputs.

Each notebook in ``notebooks/`` is copied into a temporary folder and executed there by nbclient
in a fresh ipykernel of this Python (so it cannot lean on files next to it or on a notebook run
before it); any cell that raises fails the test. matplotlib runs without a display (Agg).
"""

from __future__ import annotations

import json
import os
import re
import shutil
import sys
from pathlib import Path

import pytest

pytestmark = pytest.mark.slow  # end-to-end: whole commands and processes

REPO = Path(__file__).resolve().parents[1]
NOTEBOOK_DIR = REPO / "notebooks"
NOTEBOOKS = sorted(NOTEBOOK_DIR.glob("*.ipynb"))

# A safety net against a hung kernel, not a speed target: every cell finishes in well under a
# minute on a laptop, but the machines that run the suite can be shared and slow.
CELL_TIMEOUT_S = 600

# Cell metadata a clean notebook may keep (tags are part of the content, not of a session).
ALLOWED_CELL_METADATA = {"tags"}


def _ids(path: Path) -> str:
    return path.stem


def _load(path: Path) -> dict:
    return json.loads(path.read_text(encoding="utf-8"))


def test_the_three_tutorials_are_there():
    names = {p.name for p in NOTEBOOKS}
    assert {"01_dma_master_curve.ipynb", "02_relaxation_to_creep_and_history.ipynb",
            "03_batch_results.ipynb"} <= names
    assert (NOTEBOOK_DIR / "README.md").is_file()


@pytest.mark.parametrize("path", NOTEBOOKS, ids=_ids)
def test_committed_without_outputs(path):
    nb = _load(path)
    assert nb["nbformat"] == 4
    code = [c for c in nb["cells"] if c["cell_type"] == "code"]
    assert code, f"{path.name} has no code cell"
    for k, cell in enumerate(nb["cells"]):
        where = f"{path.name}, cell {k} ({cell.get('id', 'no id')})"
        extra = set(cell.get("metadata", {})) - ALLOWED_CELL_METADATA
        assert not extra, f"{where}: cell metadata {sorted(extra)} left from a session"
        if cell["cell_type"] == "code":
            assert cell["outputs"] == [], f"{where}: committed with outputs"
            assert cell["execution_count"] is None, f"{where}: committed with an execution count"
    assert set(nb["metadata"]) <= {"kernelspec", "language_info"}, \
        f"{path.name}: notebook metadata {sorted(nb['metadata'])} left from a session"


@pytest.mark.parametrize("path", NOTEBOOKS, ids=_ids)
def test_notebooks_find_data_through_the_package_and_cite_no_lectures(path):
    text = "\n".join("".join(c["source"]) for c in _load(path)["cells"])
    # The demo data are located from the installed package, never by a path relative to the
    # repository, so the notebooks run from any folder.
    assert "ttsp.__file__" in text or "importlib.resources" in text
    assert "../" not in text
    # Project rule: methods are cited to papers, books and standards only.
    assert not re.search(r"\b(lectures?|online courses?|course notes|videos?|youtube)\b", text,
                         flags=re.IGNORECASE)


@pytest.fixture
def kernel_name(tmp_path, monkeypatch):
    """A kernelspec for *this* interpreter, found first, so a user's own 'python3' kernel
    (perhaps another Python without ttsp) is never picked up; an isolated IPython profile; the
    repository first on the kernel's path; Agg for matplotlib; temporary files under tmp_path;
    single-threaded BLAS, as batch workers use (the small dense problems of a build run several
    times slower when BLAS threads compete for the cores of a shared machine)."""
    try:
        import ipykernel  # noqa: F401
    except ImportError:
        pytest.skip("ipykernel is not installed (pip install '.[test]' brings it)")
    spec_dir = tmp_path / "jupyter" / "kernels" / "ttsp-notebook-test"
    spec_dir.mkdir(parents=True)
    (spec_dir / "kernel.json").write_text(json.dumps({
        "argv": [sys.executable, "-m", "ipykernel_launcher", "-f", "{connection_file}"],
        "display_name": "ttsp notebook test", "language": "python"}), encoding="utf-8")
    scratch = tmp_path / "scratch"
    scratch.mkdir()
    monkeypatch.setenv("JUPYTER_PATH", str(tmp_path / "jupyter"))
    monkeypatch.setenv("IPYTHONDIR", str(tmp_path / "ipython"))
    monkeypatch.setenv("MPLBACKEND", "Agg")
    monkeypatch.setenv("TMPDIR", str(scratch))
    for name in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
        monkeypatch.setenv(name, "1")
    monkeypatch.setenv("PYTHONPATH", os.pathsep.join(
        [str(REPO)] + ([os.environ["PYTHONPATH"]] if os.environ.get("PYTHONPATH") else [])))
    return "ttsp-notebook-test"


@pytest.mark.parametrize("path", NOTEBOOKS, ids=_ids)
def test_notebook_runs(path, tmp_path, kernel_name):
    import nbformat
    from nbclient import NotebookClient

    run_dir = tmp_path / "run"
    run_dir.mkdir()
    copy = run_dir / path.name
    shutil.copyfile(path, copy)
    nb = nbformat.read(copy, as_version=4)
    # A last cell, added to the copy only: which ttsp did the kernel import?
    probe = nbformat.v4.new_code_cell("import ttsp; print(ttsp.__file__)")
    nb.cells.append(probe)
    client = NotebookClient(nb, timeout=CELL_TIMEOUT_S, kernel_name=kernel_name,
                            allow_errors=False, resources={"metadata": {"path": str(run_dir)}})
    client.execute()  # raises CellExecutionError, naming the cell and the traceback

    code = [c for c in nb.cells if c.cell_type == "code"]
    assert all(c.execution_count is not None for c in code), "a code cell was not executed"
    assert not [o for c in code for o in c.outputs if o.output_type == "error"]
    printed = "".join(o.get("text", "") for o in probe.outputs if o.output_type == "stream")
    assert Path(printed.strip()).resolve().parent == (REPO / "ttsp").resolve(), \
        f"the kernel imported another ttsp: {printed!r}"
