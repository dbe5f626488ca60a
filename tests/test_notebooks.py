"""The review notebook runs end to end through the Python API (executed by nbclient)."""

from __future__ import annotations

from pathlib import Path

import nbformat
from nbclient import NotebookClient

NOTEBOOKS = Path(__file__).resolve().parents[1] / "notebooks"


def test_review_one_recording_notebook_runs_and_shows_its_results():
    path = NOTEBOOKS / "review_one_recording.ipynb"
    nb = nbformat.read(path, as_version=4)
    client = NotebookClient(nb, timeout=600, kernel_name="python3",
                            resources={"metadata": {"path": str(NOTEBOOKS)}})
    client.execute()  # raises CellExecutionError on any failing cell
    outputs = [o for cell in nb.cells if cell.cell_type == "code" for o in cell.outputs]
    assert not [o for o in outputs if o.output_type == "error"]
    images = [o for o in outputs if "image/png" in o.get("data", {})]
    assert len(images) >= 4  # overview, ensemble, murmur profile, mechanisms
    text = "\n".join(o.get("text", "") for o in outputs if o.output_type == "stream")
    assert "holosystolic" in text and "grade" in text
    shown = "\n".join(o.get("data", {}).get("text/plain", "") for o in outputs)
    assert "report.html" in shown and "report.pdf" in shown
