"""A segmentation given instead of decoded: a corrected segments.csv, a reference
annotation, a manifest's segments column; and what is refused."""

from __future__ import annotations

import csv
import json

import numpy as np
import pytest
from conftest import SAMPLE_AUDIO

from eddyphone.cli import main
from eddyphone.errors import InputError
from eddyphone.segment.given import segmentation_from_intervals

LEAK = SAMPLE_AUDIO / "05_systolic_leak.wav"
TRUTH = SAMPLE_AUDIO / "05_systolic_leak.truth.csv"


def _rows(path) -> list[list[str]]:
    with open(path, newline="") as fh:
        return list(csv.reader(fh))


def test_a_corrected_segments_csv_is_used_as_given(tmp_path, capsys):
    # The educator's round: analyse, correct one boundary of <stem>.segments.csv by
    # hand, analyse again with it. The second run keeps every given boundary (the
    # corrected one included), names where the segmentation came from, and measures
    # that beat's systole from it.
    assert main(["analyze", str(LEAK), "--out", str(tmp_path / "auto"), "--no-report"]) == 0
    rows = _rows(tmp_path / "auto" / "05_systolic_leak.segments.csv")
    k = next(i for i, r in enumerate(rows) if r[2] == "S2" and i > 4)
    moved = float(rows[k][0]) + 0.03  # S2 onset 30 ms later: systole longer, S2 shorter
    rows[k][0] = rows[k - 1][1] = f"{moved:.4f}"
    corrected = tmp_path / "corrected.segments.csv"
    with open(corrected, "w", newline="") as fh:
        csv.writer(fh, lineterminator="\n").writerows(rows)
    assert main(["analyze", str(LEAK), "--segments", str(corrected),
                 "--out", str(tmp_path / "given"), "--no-report"]) == 0
    assert _rows(tmp_path / "given" / "05_systolic_leak.segments.csv") == rows
    doc = json.loads((tmp_path / "given" / "05_systolic_leak.json").read_text())
    assert doc["segmentation"]["method"] == "given: corrected.segments.csv"
    beat = next(b for b in doc["beats"] if abs(b["s2_onset_s"] - moved) < 1e-3)
    assert beat["systole_ms"] == pytest.approx(1000 * (moved - beat["s1_onset_s"]), abs=0.6)
    capsys.readouterr()


def test_the_simulator_truth_as_reference_gives_its_rate_and_murmur():
    # The simulator's own segments of demo 05 (its truth.csv; the extra rows for the
    # S3 and the murmur spans are left out): the rate is 60 / mean RR of the truth's
    # S1 onsets and the holosystolic murmur it made is found on these beats.
    from eddyphone import analyze
    from eddyphone.evaluate import read_annotation
    from eddyphone.io import load

    rec = load(LEAK)
    given = read_annotation(TRUTH)
    seg = segmentation_from_intervals(given, rec.duration_s, source=str(TRUTH))
    onsets = np.array([a for a, _, lab in given if lab == "S1"])
    assert len(seg.beats) == len(onsets)  # the truth covers whole cycles
    assert len(seg.rhythm.rr_s) == len(onsets) - 1  # the last one has no next S1
    assert seg.rhythm.confidence == 1.0 and not seg.rhythm.irregular
    rr = np.diff(onsets)
    assert 60.0 / seg.rhythm.heart_rate_bpm == pytest.approx(rr.mean(), rel=0.02)
    analysis = analyze(rec, segmentation=seg)
    m = analysis.findings.main()
    assert (m.phase, m.timing, m.presence) == ("systolic", "holo", "present")


def test_a_reference_annotation_with_numbered_states_reads_through_a_label_map(tmp_path,
                                                                                capsys):
    # Open datasets often number the states (here 1-4 in tab-separated rows without a
    # header, an invented file in that layout); --segment-labels maps them.
    names = {"S1": "1", "systole": "2", "S2": "3", "diastole": "4"}
    lines = [f"{a}\t{b}\t{names[lab]}" for a, b, lab in
             (r for r in (tuple(x) for x in _rows(TRUTH)[1:]) if r[2] in names)]
    tsv = tmp_path / "leak.tsv"
    tsv.write_text("\n".join(lines) + "\n")
    assert main(["analyze", str(LEAK), "--segments", str(tsv), "--segment-labels",
                 "1=S1,2=systole,3=S2,4=diastole", "--json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    assert doc["segmentation"]["method"] == "given: leak.tsv"
    assert doc["summary"]["murmur_timing"] == "holo"


def test_a_manifest_gives_each_recording_its_segments(tmp_path, capsys):
    (tmp_path / "ref").mkdir()
    (tmp_path / "ref" / "leak.csv").write_text(TRUTH.read_text())
    manifest = tmp_path / "study.csv"
    manifest.write_text(f"path,segments\n{LEAK},ref/leak.csv\n")
    assert main(["analyze", "--manifest", str(manifest), "--out", str(tmp_path / "out"),
                 "--no-report"]) == 0
    doc = json.loads((tmp_path / "out" / "05_systolic_leak.json").read_text())
    assert doc["segmentation"]["method"] == "given: leak.csv"
    assert "segments" not in doc["recording"].get("metadata", {})
    capsys.readouterr()


@pytest.mark.parametrize("rows, why", [
    ([(0.1, 0.2, "S1"), (0.15, 0.4, "systole")], "overlaps"),
    ([(0.1, 0.2, "S1"), (0.2, 40.0, "systole")], "outside"),
    ([(0.3, 0.2, "S1")], "ends before it starts"),
    ([(0.1, 0.2, "S3"), (0.3, 0.5, "murmur")], "no S1, systole, S2 or diastole"),
    ([(0.1, 0.2, "S2"), (0.2, 0.5, "systole"), (0.5, 0.6, "S1")], "no beat"),
])
def test_impossible_segmentations_are_refused_naming_the_file(rows, why):
    with pytest.raises(InputError, match=why) as err:
        segmentation_from_intervals(rows, 15.0, source="mine.csv")
    assert str(err.value).startswith("mine.csv")


def test_segments_belong_to_one_recording(tmp_path, capsys):
    two = [str(LEAK), str(SAMPLE_AUDIO / "01_resting_adult.wav")]
    assert main(["analyze", *two, "--segments", str(TRUTH), "--out", str(tmp_path)]) != 0
    err = capsys.readouterr().err
    assert "--segments belongs to one recording but 2 were given" in err
    # the wrong recording's segments: outside its length is caught, inside is not knowable
    short = tmp_path / "late.csv"
    short.write_text("start_s,end_s,label\n0.1,0.2,S1\n0.2,30.0,systole\n")
    assert main(["analyze", str(LEAK), "--segments", str(short), "--json"]) != 0
    assert "lies outside the 15.00-s recording" in capsys.readouterr().err


def test_sound_only_annotations_get_their_silences_filled():
    # Many annotations mark only S1 and S2. Filling systole (S1 to S2) and diastole (S2
    # to S1) between them gives back the simulator's full segmentation (its truth.csv,
    # where the silences are exactly the gaps between the sounds); a gap longer than a
    # diastole can be (segment.given.MAX_FILLED_GAP_S) stays unannotated.
    from eddyphone.evaluate import read_annotation

    full = [r for r in read_annotation(TRUTH) if r[2] in ("S1", "systole", "S2", "diastole")]
    sounds = [r for r in full if r[2] in ("S1", "S2")]
    a = segmentation_from_intervals(full, 15.0, source="full.csv")
    b = segmentation_from_intervals(sounds, 15.0, source="sounds.csv")
    # the same beats; only the recording's last diastole (no S1 after it) is not filled
    assert b.beats == a.beats and b.segments == a.segments[:-1]
    gap = [(1.0, 1.1, "S1"), (1.3, 1.4, "S2"), (4.0, 4.1, "S1")]
    labels = [s.label for s in segmentation_from_intervals(gap, 15.0, source="g").segments]
    assert labels == ["S1", "systole", "S2", "S1"]
