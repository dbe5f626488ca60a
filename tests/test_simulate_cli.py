"""``eddyphone simulate`` end to end: files written, refusals, determinism."""

from __future__ import annotations

import csv
import subprocess
import sys

from eddyphone.cli import main
from eddyphone.simulate import demo_specs


def test_demo_cases_written(tmp_path, capsys):
    out = tmp_path / "demo"
    assert main(["simulate", "--out", str(out), "--case", "01_resting_adult",
                 "07_fast_irregular"]) == 0
    names = sorted(p.name for p in out.iterdir())
    assert "01_resting_adult.wav" in names and "07_fast_irregular.truth.json" in names
    assert "index.csv" in names and "README.md" in names and "manifest.csv" in names
    assert len(names) == 9
    assert "wrote 2 recording(s)" in capsys.readouterr().out


def test_refuses_to_overwrite(tmp_path, capsys):
    out = tmp_path / "demo"
    assert main(["simulate", "--out", str(out), "--case", "01_resting_adult"]) == 0
    before = (out / "01_resting_adult.wav").read_bytes()
    assert main(["simulate", "--out", str(out), "--case", "01_resting_adult",
                 "--seed", "5"]) != 0
    assert "overwrite" in capsys.readouterr().err
    assert (out / "01_resting_adult.wav").read_bytes() == before
    assert main(["simulate", "--out", str(out), "--case", "01_resting_adult", "--seed", "5",
                 "--overwrite"]) == 0
    assert (out / "01_resting_adult.wav").read_bytes() != before


def test_unknown_case_and_bad_count(tmp_path, capsys):
    assert main(["simulate", "--out", str(tmp_path), "--case", "nope"]) != 0
    assert "unknown case 'nope'" in capsys.readouterr().err
    assert main(["simulate", "--out", str(tmp_path), "--benchmark", "0"]) != 0


def test_benchmark_index_and_determinism(tmp_path):
    for d in ("a", "b"):
        assert main(["simulate", "--out", str(tmp_path / d), "--benchmark", "6",
                     "--seed", "7"]) == 0
    with open(tmp_path / "a" / "index.csv") as fh:
        rows = list(csv.DictReader(fh))
    assert len(rows) == 6
    assert {"id", "file", "snr_db", "murmur_cause", "murmur_grade", "reynolds"} <= set(rows[0])
    for row in rows:
        for suffix in (".wav", ".truth.csv", ".truth.json"):
            name = row["id"] + suffix
            assert (tmp_path / "a" / name).read_bytes() == (tmp_path / "b" / name).read_bytes()


def test_list_runs_without_out():
    proc = subprocess.run([sys.executable, "-m", "eddyphone.cli", "simulate", "--list"],
                          capture_output=True, text=True, check=False)
    assert proc.returncode == 0 and "05_systolic_leak" in proc.stdout


def test_rewriting_one_case_keeps_the_index(tmp_path):
    out = tmp_path / "demo"
    assert main(["simulate", "--out", str(out)]) == 0
    assert main(["simulate", "--out", str(out), "--case", "05_systolic_leak", "--overwrite"]) == 0
    with open(out / "index.csv") as fh:
        ids = [r["id"] for r in csv.DictReader(fh)]
    n = len(demo_specs())
    assert len(ids) == n and "01_resting_adult" in ids
    assert (out / "README.md").read_text().count("| `") == n
