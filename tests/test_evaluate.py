"""Tests of eddyphone.evaluate against hand-computed matches and scipy's bipartite matching."""

from __future__ import annotations

import itertools

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.sparse import csr_matrix
from scipy.sparse.csgraph import maximum_bipartite_matching

from eddyphone.cli import main
from eddyphone.errors import InputError, ParameterError
from eddyphone.evaluate import (
    evaluate_events,
    evaluate_folder,
    match_events,
    parse_label_map,
    read_annotation,
)

REF = [(1.00, 1.10, "S1"), (1.30, 1.40, "S2"), (2.00, 2.10, "S1"), (2.30, 2.40, "S2"),
       (3.00, 3.10, "S1"), (3.30, 3.40, "S2")]
# S1 centres 1.07 (20 ms from 1.05), 2.12 (70 ms from 2.05: outside 60 ms),
# 3.00 (50 ms from 3.05) and 3.04 (10 ms from 3.05, so it takes that match).
DET = [(1.02, 1.12, "S1"), (2.07, 2.17, "S1"), (2.95, 3.05, "S1"), (3.00, 3.08, "S1"),
       (1.30, 1.40, "S2"), (2.30, 2.40, "S2"), (3.30, 3.40, "S2")]


def test_hand_computed_case():
    ev = evaluate_events(REF, DET, tolerance_ms=60)
    s1 = ev.scores["S1"]
    # Worked by hand: TP 2 (1.05-1.07, 3.05-3.04), FN 1 (2.05), FP 2 (2.12, 3.00).
    assert (s1.n_reference, s1.n_detected) == (3, 4)
    assert (s1.true_positives, s1.false_negatives, s1.false_positives) == (2, 1, 2)
    assert s1.sensitivity == pytest.approx(2 / 3)
    assert s1.ppv == pytest.approx(0.5)
    assert s1.f1 == pytest.approx(4 / 7)
    # Onset errors +20 and 0 ms; offset errors +20 and -20 ms.
    assert s1.onset_error_ms == pytest.approx(10.0)
    assert s1.offset_error_ms == pytest.approx(20.0)
    assert s1.offset_bias_ms == pytest.approx(0.0, abs=1e-9)
    assert s1.centre_error_ms == pytest.approx(15.0)
    s2 = ev.scores["S2"]
    assert (s2.sensitivity, s2.ppv, s2.f1) == (1.0, 1.0, 1.0)
    # Reference S1 every 1.00 s: 60 bpm. Detected onsets 1.02, 2.07, 2.95, 3.00:
    # intervals 1.05, 0.88, 0.05 s, all within 1.8 x median -> 60 / 0.66 bpm.
    assert ev.heart_rate_reference_bpm == pytest.approx(60.0)
    assert ev.heart_rate_detected_bpm == pytest.approx(60.0 / 0.66)


def test_tolerance_is_inclusive_and_wider_tolerance_matches_more():
    ev = evaluate_events(REF, DET, tolerance_ms=70.0)
    # At 70 ms the 2.12 detection (70 ms away) matches as well.
    assert ev.scores["S1"].true_positives == 3
    ev0 = evaluate_events(REF, DET, tolerance_ms=0.0)
    assert ev0.scores["S1"].true_positives == 0
    assert ev0.scores["S2"].true_positives == 3


def test_one_to_one_not_greedy():
    # Closest-first greedy would pair 0.06 with 0.11 and leave 0.165 unmatched;
    # the best matching pairs both.
    assert match_events([0.0, 0.11], [0.06, 0.165], 0.06) == [(0, 0), (1, 1)]


def test_bad_tolerance():
    with pytest.raises(ParameterError, match="tolerance_ms"):
        evaluate_events(REF, DET, tolerance_ms=-1)


@settings(max_examples=60, deadline=None)
@given(st.lists(st.floats(0, 3), max_size=8), st.lists(st.floats(0, 3), max_size=8),
       st.floats(0.01, 0.5))
def test_match_count_is_maximum(ref, det, tol):
    # Reference: scipy's maximum bipartite matching on the same "within tolerance" graph.
    pairs = match_events(ref, det, tol)
    assert len({i for i, _ in pairs}) == len(pairs) == len({j for _, j in pairs})
    assert all(abs(ref[i] - det[j]) <= tol + 1e-9 for i, j in pairs)
    if ref and det:
        adj = np.array([[abs(r - d) <= tol + 1e-9 for d in det] for r in ref], dtype=int)
        best = int(np.sum(maximum_bipartite_matching(csr_matrix(adj), perm_type="column") >= 0))
    else:
        best = 0
    assert len(pairs) == best


def test_minimal_distance_among_maximum_matchings():
    ref, det, tol = [1.0, 1.2, 1.4], [1.05, 1.18, 1.33, 1.45], 0.1
    pairs = match_events(ref, det, tol)
    cost = sum(abs(ref[i] - det[j]) for i, j in pairs)
    # Brute force over all injective assignments (reference: exhaustive search).
    best = None
    for perm in itertools.permutations(range(len(det)), len(ref)):
        ok = [(i, j) for i, j in enumerate(perm) if abs(ref[i] - det[j]) <= tol]
        key = (-len(ok), sum(abs(ref[i] - det[j]) for i, j in ok))
        best = key if best is None or key < best else best
    assert (-len(pairs), cost) == pytest.approx(best)


def test_read_layouts(tmp_path):
    a = tmp_path / "a.csv"
    a.write_text("start_s,end_s,label\n0.1,0.2,S1\n0.2,0.5,systole\n0.5,0.6,S2\n")
    assert read_annotation(a) == [(0.1, 0.2, "S1"), (0.2, 0.5, "systole"), (0.5, 0.6, "S2")]
    b = tmp_path / "b.txt"
    # State changes, tab separated, numeric codes 1..4 (a common layout of open data).
    b.write_text("0.1\t1\n0.2\t2\n0.5\t3\n0.6\t4\n1.1\t1\n")
    got = read_annotation(b, parse_label_map("1=S1,2=systole,3=S2,4=diastole"))
    assert got == [(0.1, 0.2, "S1"), (0.2, 0.5, "systole"), (0.5, 0.6, "S2"),
                   (0.6, 1.1, "diastole")]
    c = tmp_path / "c.csv"
    c.write_text("Onset;Offset;Type\n0.1;0.2;s1\n0.5;0.6;Second sound\n")
    assert read_annotation(c) == [(0.1, 0.2, "S1"), (0.5, 0.6, "S2")]
    d = tmp_path / "d.csv"
    d.write_text("hello,world\nfoo,bar\n")
    with pytest.raises(InputError, match="d.csv"):
        read_annotation(d)


def test_label_map_forms(tmp_path):
    assert parse_label_map("a=S1, b=S2") == {"a": "S1", "b": "S2"}
    assert parse_label_map('{"x": "S1"}') == {"x": "S1"}
    f = tmp_path / "map.csv"
    f.write_text("from,to\nlub,S1\ndub,S2\n")
    assert parse_label_map(str(f)) == {"lub": "S1", "dub": "S2"}
    with pytest.raises(ParameterError, match="no '='"):
        parse_label_map("S1 S2")


def _write(path, rows, header="start_s,end_s,label"):
    path.write_text(header + "\n" + "".join(f"{a},{b},{c}\n" for a, b, c in rows))


def test_folder_and_cli(tmp_path, capsys):
    ref_dir, res_dir = tmp_path / "ref", tmp_path / "res"
    ref_dir.mkdir()
    res_dir.mkdir()
    lub = [(s, e, {"S1": "lub", "S2": "dub"}[lab]) for s, e, lab in REF]
    _write(ref_dir / "rec1.csv", lub)
    _write(res_dir / "rec1.segments.csv", DET)
    _write(ref_dir / "rec2.csv", [(s, e, {"S1": "lub", "S2": "dub"}[lab]) for s, e, lab in REF])
    _write(res_dir / "rec2.segments.csv", REF)
    _write(ref_dir / "rec3.csv", lub)  # no results: reported missing
    res = evaluate_folder(ref_dir, res_dir, tolerance_ms=60, label_map="lub=S1,dub=S2")
    assert [r.stem for r in res.records] == ["rec1", "rec2"]
    assert res.missing == ("rec3",)
    s1 = res.totals["S1"]
    # Pooled by hand: rec1 (TP 2, FN 1, FP 2) + rec2 (TP 3) -> TP 5, FN 1, FP 2.
    assert (s1.true_positives, s1.false_negatives, s1.false_positives) == (5, 1, 2)
    assert s1.f1 == pytest.approx(10 / 13)
    assert res.heart_rate_within_2bpm == pytest.approx(0.5)
    out_csv = tmp_path / "per_record.csv"
    code = main(["evaluate", "--reference", str(ref_dir), "--results", str(res_dir),
                 "--label-map", "lub=S1,dub=S2", "--out", str(out_csv)])
    text = capsys.readouterr().out
    assert code == 0
    assert "2 recordings" in text and "0.769" in text and "rec3" in text
    assert out_csv.read_text().count("\n") == 3
    # Without the map no reference S1 exists and the CLI still reports cleanly.
    code = main(["evaluate", "--reference", str(ref_dir), "--results", str(tmp_path / "nope")])
    assert code == 2
    assert "results folder does not exist" in capsys.readouterr().err


def test_detections_outside_the_annotated_span():
    det = DET + [(0.2, 0.3, "S1"), (5.0, 5.1, "S2")]  # before/after the annotated beats
    inside = evaluate_events(REF, det, tolerance_ms=60)
    assert inside.scores["S1"].false_positives == 2
    everything = evaluate_events(REF, det, tolerance_ms=60, within_reference=False)
    assert everything.scores["S1"].false_positives == 3
    assert everything.scores["S2"].false_positives == 1


def test_murmur_rows_past_the_annotated_cycles_do_not_widen_the_span():
    # A reference file that also marks a murmur running on after the last annotated
    # beat (as the simulator's truth CSV does up to the recording's end): a detected
    # sound there lies outside the annotated cycles and is neither right nor wrong.
    ref = REF + [(3.40, 5.50, "murmur"), (0.10, 0.90, "murmur")]
    det = DET + [(0.2, 0.3, "S1"), (5.0, 5.1, "S2")]
    ev = evaluate_events(ref, det, tolerance_ms=60)
    assert ev.scores["S1"].false_positives == 2  # as without the murmur rows
    assert ev.scores["S2"].false_positives == 0  # the murmur rows reach 5.5 s
