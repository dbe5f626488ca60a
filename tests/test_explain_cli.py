"""``eddyphone explain``: a murmur described by hand, and a saved analysis explained again."""

from __future__ import annotations

import json
import subprocess
import sys

import pytest

from eddyphone import physics
from eddyphone.cli import main
from eddyphone.explain import explain
from eddyphone.explain.inputs import described_murmur, findings_from_list
from eddyphone.findings.records import GRADE_NOTE, ExtraSound, Findings, Murmur


def test_described_murmur_prints_ranked_mechanisms(capsys):
    code = main(["explain", "--phase", "systolic", "--timing", "holo", "--shape", "plateau",
                 "--frequency-hz", "320", "--quality", "blowing", "--site", "mitral",
                 "--hematocrit", "0.41"])
    out = " ".join(capsys.readouterr().out.split())
    assert code == 0
    assert "mitral regurgitation" in out and "[narrowed_orifice]" in out
    assert "Physics:" in out and "Assumed:" in out
    assert "Hematocrit not supplied" not in out  # it was supplied


def test_json_numbers_match_physics(capsys):
    assert main(["explain", "--phase", "systolic", "--timing", "early",
                 "--shape", "crescendo-decrescendo", "--frequency-hz", "70", "--grade", "I-II",
                 "--hematocrit", "0.25", "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    lv = next(m for m in data["mechanisms"] if m["scope"] == "finding"
              and m["name"] == "low_viscosity")
    # rounded to 4 significant digits in the JSON
    assert lv["numbers"]["viscosity_mpa_s"]["value"] == pytest.approx(
        physics.blood_viscosity_pa_s(0.25) * 1e3, rel=1e-3)
    assert data["inputs"]["hematocrit"] == {"value": 0.25, "source": "context"}
    assert data["mechanisms"][0]["name"] == "low_viscosity"


def test_saved_findings_explained_again_with_new_context(tmp_path, capsys):
    m = Murmur(id="m1", phase="systolic", presence="present", confidence=0.9, timing="early",
               timing_confidence=0.8, shape="crescendo-decrescendo", shape_confidence=0.7,
               pitch="low", dominant_frequency_hz=70.0, centroid_hz=80.0, quality_words=(),
               consistency=0.9, grade_range=(1, 2), grade_note=GRADE_NOTE,
               level_db_re_heart_sounds=-12.0, peak_fraction=0.3, beats_with_murmur=9,
               beats_used=10, profile=(0.5, 1.0, 0.2))
    s3 = ExtraSound("x1", "S3", 0.7, 140.0, "after S2 onset")
    f = Findings((m,), (s3,), (), "present", "test")
    saved = {"findings": f.to_list(), "summary": {"murmur": "present"},
             "context": {}, "recording": {"site": "pulmonic"}, "rhythm": {}}
    path = tmp_path / "case.json"
    path.write_text(json.dumps(saved))
    # the round trip through the JSON contract gives the same findings
    back = findings_from_list(saved["findings"], presence="present")
    for name in ("id", "phase", "presence", "timing", "shape", "pitch", "dominant_frequency_hz",
                 "quality_words", "consistency", "grade_range", "peak_fraction", "profile"):
        assert getattr(back.murmurs[0], name) == getattr(m, name), name
    assert back.extra_sounds[0].kind == "S3"
    assert main(["explain", str(path), "--json"]) == 0
    before = json.loads(capsys.readouterr().out)
    assert main(["explain", str(path), "--hematocrit", "0.22", "--json"]) == 0
    after = json.loads(capsys.readouterr().out)
    assert before["mechanisms"][0]["name"] == "high_flow"
    assert after["mechanisms"][0]["name"] == "low_viscosity"
    assert before["inputs"]["site"] == {"value": "pulmonic", "source": "context"}


@pytest.mark.parametrize("argv, words", [
    (["explain"], "no analysis JSON and no murmur described"),
    (["explain", "--phase", "systolic", "--timing", "mid", "--shape", "plateau",
      "--frequency-hz", "2000"], "outside 25-900 Hz"),
    (["explain", "--phase", "systolic", "--timing", "mid", "--shape", "plateau",
      "--frequency-hz", "200", "--grade", "IV"], "palpable thrill"),
    (["explain", "--phase", "systolic", "--timing", "mid", "--shape", "plateau",
      "--frequency-hz", "200", "--hematocrit", "45"], "hematocrit"),
])
def test_bad_input_gives_one_line_and_nonzero_exit(argv, words):
    proc = subprocess.run([sys.executable, "-m", "eddyphone.cli", *argv], capture_output=True,
                          text=True, timeout=60)
    assert proc.returncode != 0
    assert words in proc.stderr and len(proc.stderr.strip().splitlines()) == 1


def test_described_murmur_matches_direct_explanation():
    f = described_murmur(phase="diastolic", timing="mid", shape="decrescendo",
                         dominant_frequency_hz=70.0, quality_words=("rumbling",),
                         extra_sounds=("opening_snap",))
    e = explain(f)
    assert e.top().name == "narrowed_orifice"
    assert f.murmurs[0].pitch == "low" and f.extra_sounds[0].kind == "opening_snap"


def test_every_quality_word_the_findings_write_can_be_described(capsys):
    # A murmur described by hand takes every quality word the findings can write (a
    # continuous murmur is "machinery"), so a saved finding can be retyped.
    from eddyphone.cli.explain import QUALITY_CHOICES
    from eddyphone.findings.words import QUALITY_WORDS

    assert QUALITY_CHOICES == QUALITY_WORDS
    assert main(["explain", "--phase", "continuous", "--timing", "holo", "--shape",
                 "crescendo-decrescendo", "--frequency-hz", "250", "--quality",
                 "machinery"]) == 0
    assert "a shunt" in capsys.readouterr().out
