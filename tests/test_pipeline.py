"""analyze() and `eddyphone analyze`: the output contract of docs/output-contract.md."""

from __future__ import annotations

import csv
import json
import subprocess
import sys

import numpy as np
import pytest
import soundfile as sf
from conftest import burst_train

import eddyphone
from eddyphone.config import Config
from eddyphone.io import from_array

CONTRACT_KEYS = {"schema_version", "recording", "quality", "rhythm", "segments", "beats",
                 "findings", "summary", "mechanisms", "cautions"}
LABELS = ("S1", "systole", "S2", "diastole")


def _cli(*args: str) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "eddyphone.cli", *args], capture_output=True,
                          text=True, timeout=600)


@pytest.fixture
def wav(tmp_path):
    path = tmp_path / "bench07.wav"
    x = burst_train(duration_s=10.0, rr_s=0.8) + 0.002 * np.random.default_rng(2).standard_normal(
        40000)
    sf.write(path, x, 4000)
    return path


def test_analyze_returns_the_contract(wav):
    analysis = eddyphone.analyze(wav)
    data = analysis.to_dict()
    assert set(data) >= CONTRACT_KEYS
    assert data["summary"]["murmur"] in ("present", "absent", "uncertain")
    assert data["summary"]["murmur_phase"] in ("systolic", "diastolic", "continuous", None)
    assert any("not a diagnosis" in c for c in data["cautions"])
    json.dumps(data, allow_nan=False)  # strictly valid JSON
    # The burst pairs come every 0.8 s: 75 bpm (the signal's construction is the reference).
    assert data["rhythm"]["heart_rate_bpm"] == pytest.approx(75, abs=3)
    starts = [s["start_s"] for s in data["segments"]]
    assert starts == sorted(starts)
    assert {s["label"] for s in data["segments"]} <= set(LABELS)
    assert data["config"]["digest"] == Config().digest()


def test_analyze_accepts_a_recording_and_context_mapping(wav):
    rec = from_array(sf.read(wav)[0], 4000, source="memory")
    analysis = eddyphone.analyze(rec, context={"hematocrit": 0.3})
    assert analysis.to_dict()["context"] == {"hematocrit": 0.3}


def test_cli_writes_every_contract_file(wav, tmp_path):
    out = tmp_path / "out"
    result = _cli("analyze", str(wav), "--out", str(out), "--no-report")
    assert result.returncode == 0, result.stderr
    for suffix in (".json", ".segments.csv", ".beats.csv"):
        assert (out / f"bench07{suffix}").exists()
    with (out / "bench07.segments.csv").open() as fh:
        rows = list(csv.reader(fh))
    assert rows[0] == ["start_s", "end_s", "label"]
    assert all(r[2] in LABELS for r in rows[1:])
    assert [float(r[0]) for r in rows[1:]] == sorted(float(r[0]) for r in rows[1:])
    beats = (out / "bench07.beats.csv").read_text().splitlines()
    assert beats[0].startswith("beat,s1_onset_s,s1_offset_s,s2_onset_s,s2_offset_s")
    assert len(beats) > 8


def test_cli_never_overwrites_without_asking(wav, tmp_path):
    out = tmp_path / "out"
    assert _cli("analyze", str(wav), "--out", str(out), "--no-report").returncode == 0
    before = (out / "bench07.json").read_bytes()
    again = _cli("analyze", str(wav), "--out", str(out), "--no-report")
    assert again.returncode != 0 and "already exists" in again.stderr
    assert "--overwrite" in again.stderr and "Traceback" not in again.stderr
    assert (out / "bench07.json").read_bytes() == before
    assert _cli("analyze", str(wav), "--out", str(out), "--no-report",
                "--overwrite").returncode == 0


def test_cli_json_and_failures_in_a_batch_of_files(wav, tmp_path):
    result = _cli("analyze", str(wav), "--json")
    assert result.returncode == 0
    assert json.loads(result.stdout)["schema_version"] == "1.2"
    broken = tmp_path / "broken.wav"
    broken.write_bytes(b"RIFF0000WAVEjunk")
    out = tmp_path / "mixed"
    mixed = _cli("analyze", str(broken), str(wav), "--out", str(out), "--no-report")
    assert mixed.returncode != 0
    assert (out / "bench07.json").exists()  # the good file still completes
    lines = [ln for ln in mixed.stderr.splitlines() if ln.startswith("eddyphone: ")]
    assert len(lines) == 1 and "broken.wav" in lines[0]


def test_cli_context_errors_are_one_line(wav):
    result = _cli("analyze", str(wav), "--json", "--hematocrit", "45")
    assert result.returncode != 0
    assert "hematocrit" in result.stderr and "fraction" in result.stderr
    assert "Traceback" not in result.stderr


def test_a_recording_without_heart_sounds_gives_nulls_not_nan(tmp_path):
    path = tmp_path / "static.wav"
    sf.write(path, 0.1 * np.random.default_rng(0).standard_normal(40000), 4000)
    out = tmp_path / "out"
    result = _cli("analyze", str(path), "--out", str(out), "--no-report")
    assert result.returncode == 0, result.stderr
    data = json.loads((out / "static.json").read_text())  # strict JSON: no NaN tokens
    assert data["summary"]["heart_rate_bpm"] is None
    assert data["summary"]["murmur"] == "uncertain"
    assert data["quality"]["score"] < 0.2 and data["skipped"]
    # the one-line summary names no cause when no beat could be used
    assert "causes not ranked" in result.stdout and "most likely" not in result.stdout


def test_patient_view_writes_a_patient_summary(tmp_path):
    from conftest import SAMPLE_AUDIO

    folder = tmp_path / "p"
    folder.mkdir()
    for name, site in (("03_older_adult_outflow", "aortic"), ("05_systolic_leak", "mitral"),
                       ("01_resting_adult", "tricuspid")):
        (folder / f"{name}.wav").write_bytes((SAMPLE_AUDIO / f"{name}.wav").read_bytes())
        (folder / f"{name}.meta.json").write_text(json.dumps({"site": site}))
    out = tmp_path / "out"
    result = _cli("analyze", "--patient", "Q7", str(folder), "--out", str(out), "--no-report")
    assert result.returncode == 0, result.stderr
    data = json.loads((out / "patient-Q7.json").read_text())
    assert data["patient"]["patient_id"] == "Q7"
    assert sorted(data["patient"]["sites"]) == ["aortic", "mitral", "tricuspid"]
    assert data["mechanisms"] and any("not a diagnosis" in c for c in data["cautions"])
    # the patient view's own cautions travel too (the simulator made no murmur in the
    # resting adult's recording), the general ones once
    assert len(set(data["cautions"])) == len(data["cautions"])
    assert any(c.startswith("No murmur at 01_resting_adult (tricuspid)")
               for c in data["cautions"])
    assert not (out / "patient-Q7.report.html").exists()  # --no-report is honoured
    # one line for the patient: both simulated murmurs are systolic (narrowed outflow
    # at the aortic area, leaking inflow valve at the mitral area)
    assert "patient Q7, 3 recordings: systolic murmur, loudest at the " in result.stdout


def test_manifest_rows_without_a_patient_are_not_grouped_into_one(wav, tmp_path):
    # Recordings the manifest gives no patient are separate people, not one patient
    # "unknown" (as the bundled demo manifest lists ten single recordings).
    for name in ("a.wav", "b.wav", "c.wav"):
        (tmp_path / name).write_bytes(wav.read_bytes())
    manifest = tmp_path / "list.csv"
    manifest.write_text("path,patient,site\na.wav,K2,aortic\nb.wav,K2,mitral\nc.wav,,mitral\n")
    out = tmp_path / "out"
    result = _cli("analyze", "--manifest", str(manifest), "--out", str(out), "--no-report")
    assert result.returncode == 0, result.stderr
    assert sorted(p.name for p in out.glob("patient-*")) == ["patient-K2.json"]
    assert "patient K2, 2 recordings" in result.stdout and "unknown" not in result.stdout


def test_manifest_columns_become_site_context_and_metadata(wav, tmp_path):
    manifest = tmp_path / "study.csv"
    manifest.write_text(f"path,patient,site,hematocrit,arm\n{wav.name},K2,aortic,0.3,b\n")
    out = tmp_path / "out"
    result = _cli("analyze", "--manifest", str(manifest), "--out", str(out), "--no-report")
    assert result.returncode == 0, result.stderr
    data = json.loads((out / "bench07.json").read_text())
    assert data["context"] == {"hematocrit": 0.3, "site": "aortic"}
    assert data["recording"]["patient"] == "K2"
    assert data["recording"]["metadata"] == {"arm": "b"}
