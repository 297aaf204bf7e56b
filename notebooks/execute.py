"""Run the walkthrough notebook from the repository root and store it with its outputs, so that it reads on a
code host without running it. `make notebook` calls this; the test suite runs the notebook again.

    python notebooks/execute.py
"""
import os
import sys
from pathlib import Path

import nbclient
import nbformat

HERE = Path(__file__).resolve().parent
NOTEBOOK = HERE / "walkthrough.ipynb"

if __name__ == "__main__":
    os.environ["MPLBACKEND"] = "Agg"
    nb = nbformat.read(NOTEBOOK, as_version=4)
    from jupyter_client.manager import KernelManager

    km = KernelManager(kernel_name="python3")
    km.kernel_spec.argv = [sys.executable, "-m", "ipykernel_launcher", "-f", "{connection_file}"]
    km.kernel_spec.env = {**(km.kernel_spec.env or {}), "MPLBACKEND": "Agg"}
    nbclient.NotebookClient(nb, km=km, timeout=300, allow_errors=False,
                            resources={"metadata": {"path": str(HERE.parent)}}).execute()
    nbformat.write(nb, NOTEBOOK)
    print(f"{NOTEBOOK}: stored with outputs")
