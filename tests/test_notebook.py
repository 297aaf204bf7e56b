"""The walkthrough notebook runs from top to bottom without an error, from the repository root or notebooks/."""
from __future__ import annotations

import sys
from pathlib import Path

import pytest

nbformat = pytest.importorskip("nbformat")
nbclient = pytest.importorskip("nbclient")
pytest.importorskip("ipykernel")

NOTEBOOK = Path(__file__).resolve().parent.parent / "notebooks" / "walkthrough.ipynb"


def _kernel_manager():
    """A kernel manager that starts the kernel with this interpreter (the venv's), headless matplotlib."""
    from jupyter_client.manager import KernelManager

    km = KernelManager(kernel_name="python3")
    # the ipykernel kernelspec says "python"; pin it to the interpreter running the tests
    km.kernel_spec.argv = [sys.executable, "-m", "ipykernel_launcher", "-f", "{connection_file}"]
    km.kernel_spec.env = {**(km.kernel_spec.env or {}), "MPLBACKEND": "Agg"}
    return km


def test_notebook_is_stored_with_its_outputs():
    # stored executed (`make notebook`), so that it reads on a code host; the test below runs it again
    nb = nbformat.read(NOTEBOOK, as_version=4)
    code = [c for c in nb.cells if c.cell_type == "code"]
    assert code, "the notebook has no code"
    assert [c.get("execution_count") for c in code] == list(range(1, len(code) + 1)), "run top to bottom once"
    outputs = [o for c in code for o in c.get("outputs", [])]
    assert not [o for o in outputs if o.get("output_type") == "error"]
    assert len([o for o in outputs if "image/png" in o.get("data", {})]) == 2


@pytest.mark.parametrize("cwd", ["repo root", "notebooks"])
def test_notebook_runs_without_error(cwd, monkeypatch):
    nb = nbformat.read(NOTEBOOK, as_version=4)
    folder = NOTEBOOK.parent if cwd == "notebooks" else NOTEBOOK.parent.parent
    monkeypatch.setenv("MPLBACKEND", "Agg")
    client = nbclient.NotebookClient(nb, km=_kernel_manager(), timeout=120, allow_errors=False,
                                     resources={"metadata": {"path": str(folder)}})
    client.execute()  # raises CellExecutionError on the first cell that fails
    outputs = [o for c in nb.cells if c.cell_type == "code" for o in c.get("outputs", [])]
    assert not [o for o in outputs if o.get("output_type") == "error"]
    text = "".join(o.get("text", "") for o in outputs if o.get("output_type") == "stream")
    assert "samples in" in text and "lowest VSWR" in text
    images = [o for o in outputs if "image/png" in o.get("data", {})]
    assert len(images) == 2  # the 2x2 grid and the Smith chart, drawn inline
