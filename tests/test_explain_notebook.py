"""The explain-a-murmur notebook runs end to end through the Python API (nbclient)."""

from __future__ import annotations

from pathlib import Path

import nbformat
from nbclient import NotebookClient

NOTEBOOKS = Path(__file__).resolve().parents[1] / "notebooks"


def test_explain_a_murmur_notebook_runs_and_shows_its_results():
    nb = nbformat.read(NOTEBOOKS / "explain_a_murmur.ipynb", as_version=4)
    client = NotebookClient(nb, timeout=600, kernel_name="python3",
                            resources={"metadata": {"path": str(NOTEBOOKS)}})
    client.execute()  # raises CellExecutionError on any failing cell
    outputs = [o for cell in nb.cells if cell.cell_type == "code" for o in cell.outputs]
    assert not [o for o in outputs if o.output_type == "error"]
    text = "\n".join(o.get("text", "") for o in outputs if o.output_type == "stream")
    assert "Hematocrit not supplied" in text  # the defaults are stated without context
    assert "thin blood" in text and "mitral regurgitation" in text
    assert any("image/png" in o.get("data", {}) for o in outputs)
