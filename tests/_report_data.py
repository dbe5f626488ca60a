"""Shared inputs of the report, teach and notebook tests: one bundled recording analysed."""

from __future__ import annotations

from pathlib import Path

SAMPLE_AUDIO = Path(__file__).resolve().parents[1] / "sample_audio"
#: A demo case with a clear systolic murmur (so every section of the report is filled).
MURMUR_CASE = SAMPLE_AUDIO / "05_systolic_leak.wav"
#: A demo case without a murmur.
QUIET_CASE = SAMPLE_AUDIO / "01_resting_adult.wav"

BROWSER_ARGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic",
                "--no-first-run", "--disable-background-networking",
                "--disable-component-update", "--disable-sync"]
CHROMIUM = "/usr/bin/chromium"
