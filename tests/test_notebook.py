"""The proposal walkthrough notebook executes from top to bottom and produces its objects.

It is stored without outputs; this test runs it with nbclient in a python3
kernel of the interpreter running the tests.
"""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest

NOTEBOOK = Path(__file__).resolve().parent.parent / "notebooks" / "proposal_walkthrough.ipynb"

pytestmark = pytest.mark.slow


def _ensure_kernel() -> None:
    from jupyter_client.kernelspec import KernelSpecManager

    if "python3" not in KernelSpecManager().find_kernel_specs():
        subprocess.run([sys.executable, "-m", "ipykernel", "install", "--sys-prefix"], check=True,
                       capture_output=True)


def test_notebook_is_stored_without_outputs():
    nbformat = pytest.importorskip("nbformat", reason="nbformat is needed to read the notebook")
    nb = nbformat.read(NOTEBOOK, as_version=4)
    code = [c for c in nb.cells if c.cell_type == "code"]
    assert code
    assert all(not c.outputs and c.execution_count is None for c in code)


def test_notebook_executes(tmp_path):
    nbformat = pytest.importorskip("nbformat", reason="nbformat is needed to run the notebook")
    nbclient = pytest.importorskip("nbclient", reason="nbclient is needed to run the notebook")
    pytest.importorskip("ipykernel", reason="ipykernel is needed to run the notebook")
    _ensure_kernel()
    nb = nbformat.read(NOTEBOOK, as_version=4)
    client = nbclient.NotebookClient(nb, timeout=600, kernel_name="python3",
                                     resources={"metadata": {"path": str(NOTEBOOK.parent)}})
    client.execute()            # raises CellExecutionError if any cell fails

    outputs = [o for c in nb.cells if c.cell_type == "code" for o in c.outputs]
    assert not [o for o in outputs if o.output_type == "error"]
    text = "".join(o.get("text", "") for o in outputs if o.output_type == "stream")
    marker = [ln for ln in text.splitlines() if ln.startswith("CHECKS ")]
    assert len(marker) == 1
    checks = json.loads(marker[0][len("CHECKS "):])
    assert checks["n_clumps"] >= 3
    assert checks["forward_rows"] == 5
    assert checks["posterior_samples"] >= 100
    assert checks["corner_png"] is True
    assert "mass_to_flux" in checks["forecast_targets"] and "field" in checks["forecast_targets"]
    assert 0.0 < checks["mass_to_flux_width_ratio"] <= 1.5
    assert checks["paragraph_words"] > 60
    # the corner plot and the growth-rate band are shown as images, the paragraph as Markdown
    pngs = [o for o in outputs if o.output_type == "display_data" and "image/png" in o.data]
    assert len(pngs) >= 2
    md = [o.data["text/markdown"] for o in outputs
          if o.output_type == "display_data" and "text/markdown" in o.data]
    assert any("conditional on the model" in m for m in md)
    assert "Forecast: a field measurement with 20% precision" in text
