"""The batch notebook runs top to bottom (nbclient) and its figures and table are right.

References outside the project: nbclient/nbformat execute the notebook as
Jupyter would; the table it writes is read back with pyarrow and compared with
the manifest (Python's csv module); figure files are checked as PNG by their
signature bytes (the PNG specification, ISO/IEC 15948).
"""

from __future__ import annotations

import csv
from pathlib import Path

import pandas as pd

NOTEBOOK = Path(__file__).resolve().parents[1] / "notebooks" / "batch_study.ipynb"
PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"  # PNG specification, section 5.2


def test_batch_notebook_executes(tmp_path, monkeypatch):
    import nbclient
    import nbformat

    monkeypatch.setenv("EDDYPHONE_NOTEBOOK_DIR", str(tmp_path))
    monkeypatch.setenv("EDDYPHONE_NOTEBOOK_PATIENTS", "3")
    monkeypatch.setenv("EDDYPHONE_NOTEBOOK_DURATION_S", "6")
    nb = nbformat.read(NOTEBOOK, as_version=4)
    nbclient.NotebookClient(nb, timeout=600, kernel_name="python3",
                            resources={"metadata": {"path": str(tmp_path)}}).execute()
    errors = [o for c in nb.cells if c.cell_type == "code" for o in c.get("outputs", [])
              if o.get("output_type") == "error"]
    assert not errors

    shown = [o for c in nb.cells if c.cell_type == "code" for o in c.get("outputs", [])
             if "image/png" in o.get("data", {})]
    assert len(shown) == 3  # the figures appear in the notebook itself
    figures = sorted((tmp_path / "figures").glob("*.png"))
    assert [p.name for p in figures] == ["heart_rate_vs_systolic_interval.png",
                                         "murmur_by_site.png", "quality_and_beats.png"]
    for p in figures:
        assert p.read_bytes()[:8] == PNG_SIGNATURE and p.stat().st_size > 10_000

    with (tmp_path / "manifest.csv").open(newline="") as fh:
        manifest = list(csv.DictReader(fh))
    table = pd.read_parquet(tmp_path / "batch" / "features.parquet")
    assert len(manifest) == 3 * 4
    assert len(table) + len(pd.read_csv(tmp_path / "batch" / "errors.csv")) == len(manifest)
    by_name = {Path(r["path"]).name: r for r in manifest}
    for _, row in table.iterrows():
        expected = by_name[Path(row["path"]).name]
        assert row["site"] == expected["site"] and row["arm"] == expected["arm"]
        assert row["simulated_case"] == expected["simulated_case"]
