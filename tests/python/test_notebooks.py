"""Every notebook in docs/notebooks runs cleanly, top to bottom, in a fresh kernel.

The notebooks' own assert cells check their numbers (nominal thresholds against the closed-form
Schmitt-trigger formula, yield rising as the resistor class tightens, ...); an exception in any
cell, or anything written to standard error (a warning), fails the test.
"""

from __future__ import annotations

import os
from pathlib import Path

import pytest

import lotwise
from conftest import ROOT

NOTEBOOKS = ROOT / "docs" / "notebooks"
NOTEBOOK_FILES = sorted(NOTEBOOKS.glob("*.ipynb"))

# jupyter_core warns about its old configuration folders unless told to use platformdirs.
os.environ.setdefault("JUPYTER_PLATFORM_DIRS", "1")

nbformat = pytest.importorskip("nbformat")
nbclient = pytest.importorskip("nbclient")
pytest.importorskip("ipykernel")
pytest.importorskip("matplotlib")
pytest.importorskip("pandas")


def test_the_notebooks_are_there():
    assert [p.name for p in NOTEBOOK_FILES] == [
        "choose_resistor_class.ipynb",
        "first_yield_analysis.ipynb",
        "schmitt_threshold_study.ipynb",
    ]


@pytest.mark.parametrize("path", NOTEBOOK_FILES, ids=[p.stem for p in NOTEBOOK_FILES])
def test_stored_without_outputs_and_with_the_caution(path):
    nb = nbformat.read(path, as_version=4)
    nbformat.validate(nb)
    for cell in nb.cells:
        if cell.cell_type == "code":
            assert cell.outputs == [], "store notebooks without outputs"
            assert cell.execution_count is None
    text = " ".join(cell.source for cell in nb.cells if cell.cell_type == "markdown")
    assert "model-based estimates" in text and "qualification testing" in text
    assert "applicable standards" in text and "licensed" in text


@pytest.mark.parametrize("path", NOTEBOOK_FILES, ids=[p.stem for p in NOTEBOOK_FILES])
def test_notebook_executes(path):
    nb = nbformat.read(path, as_version=4)
    # The kernel is ipykernel's "python3", which jupyter_client starts with this interpreter
    # (sys.executable); it imports the same lotwise as these tests (PYTHONPATH gets the folder
    # lotwise came from, for a CMake build). The working directory is the notebook's folder,
    # so that its relative paths resolve.
    env = dict(os.environ)
    package_root = str(Path(lotwise.__file__).resolve().parents[1])
    env["PYTHONPATH"] = os.pathsep.join(p for p in (package_root, env.get("PYTHONPATH")) if p)
    env.pop("MPLBACKEND", None)  # the kernel's inline backend, not the tests' Agg
    client = nbclient.NotebookClient(
        nb,
        timeout=600,
        kernel_name="python3",
        allow_errors=False,
        resources={"metadata": {"path": str(NOTEBOOKS)}},
    )
    client.execute(env=env)
    for index, cell in enumerate(nb.cells):
        for output in cell.get("outputs", []):
            assert output.output_type != "error", f"cell {index} raised"
            if output.output_type == "stream" and output.name == "stderr":
                pytest.fail(f"{path.name} cell {index} wrote to stderr:\n{output.text}")
