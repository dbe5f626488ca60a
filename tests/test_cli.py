"""The command line as a user meets it: help, inspect, one-line errors, exit status."""

from __future__ import annotations

import json
import subprocess
import sys

import soundfile as sf
from conftest import burst_train


def _cli(*args: str) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "eddyphone.cli", *args], capture_output=True,
                          text=True, timeout=300)


def test_help_lists_the_commands():
    result = _cli("--help")
    assert result.returncode == 0
    for command in ("analyze", "inspect"):
        assert command in result.stdout


def test_inspect_reports_good_files_and_one_line_per_bad_file(tmp_path):
    good = tmp_path / "good.wav"
    sf.write(good, burst_train(duration_s=6.0), 4000)
    bad = tmp_path / "bad.wav"
    bad.write_text("not audio")
    short = tmp_path / "short.wav"
    sf.write(short, burst_train(duration_s=6.0)[:4000], 4000)
    result = _cli("inspect", str(good), str(bad), str(short), str(tmp_path / "gone.wav"))
    assert result.returncode != 0
    assert "good.wav" in result.stdout and "WAV PCM_16" in result.stdout
    errors = result.stderr.strip().splitlines()
    assert len(errors) == 3, result.stderr
    assert "Traceback" not in result.stderr
    assert all(line.startswith("eddyphone: ") for line in errors)
    assert "bad.wav" in errors[0] and "short.wav" in errors[1] and "gone.wav" in errors[2]


def test_inspect_json(tmp_path):
    good = tmp_path / "good.flac"
    sf.write(good, burst_train(duration_s=6.0), 4000, format="FLAC")
    result = _cli("inspect", str(good), "--json")
    assert result.returncode == 0
    data = json.loads(result.stdout)
    assert data["format"] == "FLAC" and 0 <= data["quality"]["score"] <= 1
    assert data["quality"]["windows"]
