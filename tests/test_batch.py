"""Batch runs: inputs, feature rows, errors, resuming, a killed run, a Dask cluster.

References outside the project: tables are read back with pandas/pyarrow (the
Parquet reader) and Python's csv module; statistics are re-computed with the
standard-library ``statistics`` module; per-recording rows are compared with
``eddyphone.analyze`` run directly on the same file.
"""

from __future__ import annotations

import csv
import json
import math
import os
import signal
import statistics
import subprocess
import sys
import time
from pathlib import Path

import pandas as pd
import pytest
from _batch_data import write_broken, write_study

from eddyphone.batch import collect, run_batch
from eddyphone.batch.features import recording_row
from eddyphone.batch.inputs import content_hash
from eddyphone.batch.runner import Progress
from eddyphone.errors import InputError, ParameterError

N_STUDY = 6


@pytest.fixture(scope="module")
def study(tmp_path_factory) -> Path:
    folder = tmp_path_factory.mktemp("study")
    write_study(folder, N_STUDY)
    return folder


@pytest.fixture(scope="module")
def reference(study, tmp_path_factory) -> pd.DataFrame:
    """An uninterrupted local run over the manifest, two workers, beats on."""
    out = tmp_path_factory.mktemp("reference")
    return run_batch([study / "manifest.csv"], out, workers=2, beats=True, progress=False)


# --- inputs -------------------------------------------------------------------------

def test_collect_folders_globs_and_manifest(study):
    from_folder = collect([study])
    assert len(from_folder) == N_STUDY  # recursive: both ward sub-folders
    assert all(p.path.endswith(".wav") for p in from_folder)
    from_glob = collect([str(study / "ward_a" / "*.wav")])
    assert len(from_glob) == (N_STUDY + 1) // 2
    from_manifest = collect([study / "manifest.csv"])
    assert [Path(i.path).resolve() for i in from_manifest] == \
        [Path(i.path).resolve() for i in sorted(from_folder, key=lambda i: i.path[-7:])]
    first = from_manifest[0]
    assert first.load["site"] == "mitral" and first.load["posture"] == "sitting"
    assert first.extra == {"arm": "treated"}
    # the same file twice (folder and manifest) is analysed once
    assert len(collect([study, study / "manifest.csv"])) == N_STUDY


def test_collect_rejects_what_does_not_exist(tmp_path):
    with pytest.raises(InputError, match="no such file"):
        collect([tmp_path / "missing_folder"])
    with pytest.raises(InputError, match="matches no recordings"):
        collect([str(tmp_path / "*.wav")])
    (tmp_path / "empty").mkdir()
    with pytest.raises(InputError, match="holds no recordings"):
        collect([tmp_path / "empty"])


def test_wfdb_signal_beside_header_is_not_counted_twice(tmp_path):
    (tmp_path / "a.hea").write_text("a 1 4000 8000\na.wav 16 1 16 0 0 0 0 PCG\n")
    (tmp_path / "a.wav").write_bytes(b"RIFF")
    (tmp_path / "b.wav").write_bytes(b"RIFF")
    assert sorted(Path(i.path).name for i in collect([tmp_path])) == ["a.hea", "b.wav"]


def test_content_hash_covers_sidecar(tmp_path):
    import hashlib

    wav = tmp_path / "x.wav"
    wav.write_bytes(b"0123456789")
    before = content_hash(wav)
    # hashlib (reference): the hash is a SHA-256 hex digest of 64 characters
    assert len(before) == len(hashlib.sha256(b"").hexdigest())
    (tmp_path / "x.meta.json").write_text('{"site": "aortic"}')
    assert content_hash(wav) != before


def test_manifest_context_columns_reach_the_analysis(tmp_path, study):
    manifest = tmp_path / "m.csv"
    wav = study / "ward_a" / "rec_000.wav"
    manifest.write_text(f"path,hematocrit,age_years,cohort\n{wav},0.3,61,x\n")
    df = run_batch([manifest], tmp_path / "out", workers=1, per_recording_json=True,
                   progress=False)
    assert df.loc[0, "context_hematocrit"] == pytest.approx(0.3)
    assert df.loc[0, "context_age_years"] == pytest.approx(61.0)
    assert df.loc[0, "cohort"] == "x"
    data = json.loads((tmp_path / "out" / "json" / "rec_000.json").read_text())
    assert data["context"]["hematocrit"] == pytest.approx(0.3)
    assert data["recording"]["metadata"] == {"cohort": "x"}


def test_a_manifest_segments_column_gives_the_segmentation(tmp_path):
    # Reference annotations beside the recordings (here the simulator's truth.csv of
    # demo 05, a relative path): the row is analysed on them; a row whose segments file
    # is missing fails alone. Correcting the segments file and running again into the
    # same folder recomputes that row (its content is part of the record key) and the
    # features follow the correction.
    from _report_data import SAMPLE_AUDIO

    (tmp_path / "ref").mkdir()
    given = tmp_path / "ref" / "leak.csv"
    given.write_text((SAMPLE_AUDIO / "05_systolic_leak.truth.csv").read_text())
    manifest = tmp_path / "m.csv"
    manifest.write_text("path,segments\n"
                        f"{SAMPLE_AUDIO / '05_systolic_leak.wav'},ref/leak.csv\n"
                        f"{SAMPLE_AUDIO / '01_resting_adult.wav'},ref/none.csv\n")
    out = tmp_path / "out"
    first = run_batch([manifest], out, workers=1, progress=False)
    assert len(first) == 1
    row = first.iloc[0]
    assert row["segmentation_method"] == "given: leak.csv" and row["murmur_timing"] == "holo"
    assert row["segments"] == str(given)  # the manifest column travels, resolved
    errors = pd.read_csv(out / "errors.csv")
    assert len(errors) == 1 and "none.csv cannot be read" in errors.loc[0, "reason"]
    lines = given.read_text().splitlines()
    rows = [ln.split(",") for ln in lines[1:]]
    k = next(i for i, r in enumerate(rows) if r[2] == "S2")
    moved = f"{float(rows[k][0]) + 0.03:.6f}"  # first S2 onset 30 ms later
    rows[k][0] = rows[k - 1][1] = moved
    given.write_text("\n".join([lines[0]] + [",".join(r) for r in rows]) + "\n")
    second = run_batch([manifest], out, workers=1, progress=False)
    assert second.iloc[0]["beats_systole_ms_mean"] > row["beats_systole_ms_mean"]


def test_numbered_states_of_a_segments_column_read_through_a_label_map(tmp_path):
    # A dataset that numbers the states (tab-separated, no header; an invented file in
    # that layout): the batch-wide label map reads them; without it nothing is a cycle
    # state and the row fails alone, naming the file.
    from _report_data import SAMPLE_AUDIO

    names = {"S1": "1", "systole": "2", "S2": "3", "diastole": "4"}
    rows = [ln.split(",") for ln in
            (SAMPLE_AUDIO / "05_systolic_leak.truth.csv").read_text().splitlines()[1:]]
    (tmp_path / "leak.tsv").write_text("".join(f"{a}\t{b}\t{names[lab]}\n"
                                               for a, b, lab in rows if lab in names))
    manifest = tmp_path / "m.csv"
    manifest.write_text(f"path,segments\n{SAMPLE_AUDIO / '05_systolic_leak.wav'},leak.tsv\n")
    plain = run_batch([manifest], tmp_path / "plain", workers=1, progress=False)
    errors = pd.read_csv(tmp_path / "plain" / "errors.csv")
    assert len(plain) == 0 and "no S1, systole, S2 or diastole" in errors.loc[0, "reason"]
    mapped = run_batch([manifest], tmp_path / "mapped", workers=1, progress=False,
                       segment_labels="1=S1,2=systole,3=S2,4=diastole")
    assert mapped.iloc[0]["segmentation_method"] == "given: leak.tsv"
    assert mapped.iloc[0]["murmur_timing"] == "holo"
    with pytest.raises(ParameterError):
        run_batch([manifest], tmp_path / "bad", workers=1, progress=False,
                  segment_labels="no pairs here")


# --- feature rows -------------------------------------------------------------------

def test_every_phase_has_its_own_murmur_columns():
    # Researchers comparing murmurs by phase need them all, not only the main one. A
    # contract with a systolic murmur (demo 03, narrowed outflow) and a diastolic one
    # (demo 09's finding added, as a recording with both would carry them): each phase's
    # columns repeat its own finding, the continuous ones say none.
    from _report_data import SAMPLE_AUDIO

    import eddyphone

    data = eddyphone.analyze(SAMPLE_AUDIO / "03_older_adult_outflow.wav").to_dict()
    leak = next(f for f in eddyphone.analyze(SAMPLE_AUDIO / "09_diastolic_leak.wav")
                .to_dict()["findings"] if f["kind"] == "murmur")
    data["findings"] = [*data["findings"], {**leak, "id": "m2"}]
    row = recording_row(data)
    sys_m = next(f for f in data["findings"] if f.get("phase") == "systolic")
    for phase, m in (("systolic", sys_m), ("diastolic", leak)):
        assert row[f"{phase}_murmur"] == m["presence"] == "present"
        assert (row[f"{phase}_murmur_timing"], row[f"{phase}_murmur_shape"],
                row[f"{phase}_murmur_pitch"]) == (m["timing"], m["shape"], m["pitch"])
        assert (row[f"{phase}_murmur_grade_lo"], row[f"{phase}_murmur_grade_hi"]) == \
            tuple(m["grade_range"])
        assert row[f"{phase}_murmur_level_db_re_s1"] == m["level_db_re_s1"]
    assert row["continuous_murmur"] == "none" and row["continuous_murmur_timing"] is None
    assert row["findings_murmurs_n"] == 2


def test_feature_row_matches_a_direct_analysis(study, reference):
    import eddyphone

    path = study / "ward_b" / "rec_001.wav"
    data = eddyphone.analyze(path).to_dict()
    row = reference.loc[reference["path"].map(lambda p: Path(p).name) == "rec_001.wav"].iloc[0]
    summary = data["summary"]
    for key in ("heart_rate_bpm", "quality_score", "murmur", "beats"):
        assert row[key] == summary[key], key
    assert row["rhythm_systolic_interval_s"] == data["rhythm"]["systolic_interval_s"]
    assert row["config_digest"] == data["config"]["digest"]
    # statistics module (reference): mean and sample standard deviation of beat fields
    systoles = [b["systole_ms"] for b in data["beats"]]
    assert row["beats_systole_ms_mean"] == pytest.approx(statistics.fmean(systoles), abs=1e-3)
    assert row["beats_systole_ms_sd"] == pytest.approx(statistics.stdev(systoles), abs=1e-3)
    rr = [b["rr_s"] for b in data["beats"] if b["rr_s"] is not None]
    assert row["beats_rr_s_mean"] == pytest.approx(statistics.fmean(rr), abs=1e-4)
    # segmented seconds per label add up to the segmented fraction of the recording
    total = sum(row[f"segments_{k}_s"] for k in ("S1", "systole", "S2", "diastole"))
    assert row["segments_fraction"] == pytest.approx(total / row["recording_duration_s"],
                                                     abs=1e-3)


def test_new_contract_fields_flow_into_the_row():
    data = {"summary": {"murmur": "present", "a_field_added_later": 3.5,
                        "murmur_quality": ["harsh", "blowing"]},
            "quality": {"score": 0.8, "measures": {"contrast_db": 12.0, "new_measure": 1.0}},
            "findings": [{"id": "m1", "kind": "murmur", "phase": "systolic",
                          "spectrum": {"100-200_hz": 0.5}, "profile": [0.1, 1.0],
                          "grade_range": [2, 3],
                          "new_murmur_field": "x"},
                         {"id": "x1", "kind": "extra_sound", "sound": "S3",
                          "confidence": 0.7, "timing_ms": 140.0},
                         {"id": "x2", "kind": "extra_sound", "sound": "pericardial_knock",
                          "confidence": 0.4, "timing_ms": 100.0}],
            "mechanisms": [{"name": "high_flow", "finding_id": None, "rank": 1, "score": 0.7,
                            "label": "more flow"},
                           {"name": "narrowed_orifice", "finding_id": None, "rank": 2,
                            "score": 0.2}],
            "beats": [{"index": 0, "systole_ms": 300.0, "new_beat_measure_db": 3.0},
                      {"index": 1, "systole_ms": 320.0, "new_beat_measure_db": float("nan")}]}
    row = recording_row(data)
    assert row["a_field_added_later"] == 3.5
    assert row["murmur_quality"] == "harsh; blowing"
    assert row["quality_new_measure"] == 1.0
    assert row["main_murmur_new_murmur_field"] == "x"
    assert row["main_murmur_spectrum_100-200_hz"] == 0.5
    assert json.loads(row["main_murmur_profile"]) == [0.1, 1.0]
    assert (row["main_murmur_grade_range_lo"], row["main_murmur_grade_range_hi"]) == (2, 3)
    assert row["has_S3"] is True and row["S3_timing_ms"] == 140.0
    assert row["has_S4"] is False and row["S4_timing_ms"] is None
    assert row["has_pericardial_knock"] is True
    assert row["top_mechanism_label"] == "more flow"
    assert row["mechanism_narrowed_orifice_score"] == 0.2
    assert row["beats_new_beat_measure_db_mean"] == 3.0  # NaN left out of the mean
    assert all(v is None or isinstance(v, (bool, int, float, str)) for v in row.values())


# --- outputs, errors, resuming ------------------------------------------------------

def test_mixed_good_and_broken_files(study, tmp_path):
    broken = write_broken(tmp_path / "incoming")
    out = tmp_path / "out"
    head = [sys.executable, "-m", "eddyphone.cli", "batch", str(study), str(tmp_path / "incoming")]
    tail = ["--out", str(out), "--workers", "2"]
    # a missing file given by name is an input error before anything runs
    done = subprocess.run(head + [str(tmp_path / "vanished.wav")] + tail, capture_output=True,
                          text=True, timeout=300)
    assert done.returncode == 2 and "vanished.wav" in done.stderr
    assert not (out / "features.parquet").exists()
    done = subprocess.run(head + tail, capture_output=True, text=True, timeout=300)
    assert done.returncode == 1, done.stderr  # some files failed
    table = pd.read_parquet(out / "features.parquet")  # pyarrow reader (reference)
    good = {str(p) for p in study.rglob("*.wav")}
    assert set(table["path"]) == good
    with (out / "errors.csv").open(newline="") as fh:  # csv module (reference)
        rows = list(csv.DictReader(fh))
    assert {r["path"] for r in rows} == {str(p) for p in broken}
    for r in rows:
        assert r["reason"] and "\n" not in r["reason"]
    assert any("empty" in r["reason"] for r in rows)
    assert any("long" in r["reason"] for r in rows)  # too short: "only 0.50 s long"
    assert f"{len(broken)} failed" in done.stderr


def test_missing_manifest_row_is_an_error_row_not_an_abort(study, tmp_path):
    manifest = tmp_path / "m.csv"
    good = study / "ward_a" / "rec_000.wav"
    manifest.write_text(f"path,site\n{good},mitral\nnot_there.wav,aortic\n")
    df = run_batch([manifest], tmp_path / "out", workers=1, progress=False)
    assert df["path"].tolist() == [str(good)]
    errors = df.attrs["errors"]
    assert errors["path"].tolist() == [str(tmp_path / "not_there.wav")]
    assert "not found" in errors["reason"].iloc[0]


def test_all_good_exits_zero_and_csv_equals_parquet(study, reference, tmp_path):
    from eddyphone.cli import main

    out = tmp_path / "csv_out"
    status = main(["batch", str(study / "manifest.csv"), "--out", str(out), "--csv",
                   "--workers", "2", "--quiet", "--beats"])
    assert status == 0
    from_csv = pd.read_csv(out / "features.csv")
    assert list(from_csv.columns) == list(reference.columns)
    for name in ("path", "site", "arm", "murmur", "heart_rate_bpm", "beats_n",
                 "rhythm_rr_cv", "quality_score"):
        left, right = from_csv[name].tolist(), reference[name].tolist()
        for a, b in zip(left, right):
            if isinstance(b, float) and math.isnan(b):
                assert isinstance(a, float) and math.isnan(a)
            else:
                assert a == pytest.approx(b) if isinstance(b, float) else a == b
    assert len(pd.read_csv(out / "beats.csv")) == len(reference.attrs["beats"])
    assert (out / "errors.csv").read_text() == "path,reason\n"


def test_reference_table_layout(study, reference):
    out = Path(reference.attrs["paths"]["features"]).parent
    table = pd.read_parquet(out / "features.parquet")
    pd.testing.assert_frame_equal(table, reference, check_dtype=False)
    assert list(table.columns[:5]) == ["path", "patient", "site", "posture", "arm"]
    assert table["arm"].tolist() == ["control" if i % 2 else "treated" for i in range(N_STUDY)]
    assert table["eddyphone_version"].nunique() == 1
    beats = pd.read_parquet(out / "beats.parquet")
    assert beats.groupby("path").size().to_dict() == \
        table.set_index("path")["beats_n"].to_dict()
    run = json.loads((out / "run.json").read_text())
    assert run["counts"] == {"recordings": N_STUDY, "analysed": N_STUDY, "reused": 0,
                             "failed": 0, "succeeded": N_STUDY}
    assert run["config_digest"] == table["config_digest"].iloc[0]


def test_rerun_reuses_everything(study, reference):
    out = Path(reference.attrs["paths"]["features"]).parent
    again = run_batch([study / "manifest.csv"], out, workers=2, beats=True, progress=False)
    assert again.attrs["counts"]["analysed"] == 0
    assert again.attrs["counts"]["reused"] == N_STUDY
    pd.testing.assert_frame_equal(again, reference)


def test_changed_config_is_analysed_again(study, tmp_path):
    from eddyphone.config import Config

    out = tmp_path / "out"
    files = [str(study / "ward_a" / "rec_000.wav")]
    first = run_batch(files, out, workers=1, progress=False)
    changed = Config().with_section("quality", window_s=3.0)
    second = run_batch(files, out, workers=1, config=changed, progress=False)
    assert second.attrs["counts"]["analysed"] == 1
    assert first.loc[0, "config_digest"] != second.loc[0, "config_digest"]
    assert second.loc[0, "config_digest"] == changed.digest()


def test_damaged_record_and_leftover_temporary_are_handled(study, tmp_path):
    out = tmp_path / "out"
    files = [str(study / "ward_a" / "rec_000.wav"), str(study / "ward_b" / "rec_001.wav")]
    first = run_batch(files, out, workers=1, progress=False)
    records = sorted(p for p in (out / "records").rglob("*.json"))
    assert len(records) == 2
    records[0].write_text('{"key": "trunc')  # a record damaged by something else
    leftover = records[1].with_name(f".{records[1].name}.999.tmp")
    leftover.write_text("half")
    second = run_batch(files, out, workers=1, progress=False)
    assert second.attrs["counts"] == {"recordings": 2, "analysed": 1, "reused": 1,
                                      "failed": 0, "succeeded": 2}
    assert not leftover.exists()
    pd.testing.assert_frame_equal(first, second)


def test_second_batch_into_the_same_folder_is_refused(study, tmp_path):
    out = tmp_path / "out"
    out.mkdir()
    holder = subprocess.Popen([sys.executable, "-c", (  # another process holds the lock
        "import fcntl, time\n"
        f"fh = open({str(out / '.lock')!r}, 'a+')\n"
        "fcntl.lockf(fh, fcntl.LOCK_EX)\n"
        "print('locked', flush=True)\n"
        "time.sleep(60)\n")], stdout=subprocess.PIPE, text=True)
    try:
        assert holder.stdout.readline().strip() == "locked"
        with pytest.raises(InputError, match="another batch"):
            run_batch([study / "ward_a"], out, workers=1, progress=False)
    finally:
        holder.kill()
        holder.wait()
    assert run_batch([study / "ward_a"], out, workers=1, progress=False).attrs["counts"][
        "failed"] == 0  # released when its holder died


def test_bad_arguments():
    with pytest.raises(ParameterError, match="fmt"):
        run_batch(["x"], "y", fmt="xlsx")
    with pytest.raises(ParameterError, match="workers"):
        run_batch(["x"], "y", workers=0)


def test_progress_line_shows_count_rate_and_time_left():
    import io

    stream = io.StringIO()
    bar = Progress(4, stream)
    bar.start -= 2.0  # two seconds ago
    bar.update()
    bar.update(failed=True)
    text = stream.getvalue().splitlines()[-1]
    assert "2/4" in text and "1 failed" in text
    rate = float(text.split("rec/s")[0].split()[-1])
    assert rate == pytest.approx(1.0, rel=0.05)  # 2 done in 2 s
    assert text.endswith("00:02 left")  # 2 to go at 1 per second


# --- a killed run, and a cluster ----------------------------------------------------

def _finished_records(out: Path) -> dict[Path, tuple[int, int]]:
    found = {}
    for p in (out / "records").rglob("*.json"):
        if not p.name.startswith(".") and not p.name.endswith(".analysis.json"):
            st = p.stat()
            found[p] = (st.st_ino, st.st_mtime_ns)
    return found


def test_killed_run_resumes_without_recomputing(tmp_path):
    folder = tmp_path / "study"
    write_study(folder, 10)
    reference = run_batch([folder / "manifest.csv"], tmp_path / "ref", workers=2,
                          beats=True, progress=False)
    out = tmp_path / "killed"
    cmd = [sys.executable, "-m", "eddyphone.cli", "batch", str(folder / "manifest.csv"),
           "--out", str(out), "--workers", "2", "--beats", "--quiet"]
    proc = subprocess.Popen(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE,
                            start_new_session=True)
    deadline = time.monotonic() + 240
    try:
        while not out.exists() or len(_finished_records(out)) < 3:
            assert proc.poll() is None, "the batch ended before it could be killed"
            assert time.monotonic() < deadline
            time.sleep(0.01)
    finally:
        os.killpg(proc.pid, signal.SIGKILL)  # the main process and its workers
        proc.wait(timeout=30)
    assert proc.returncode == -signal.SIGKILL
    finished = _finished_records(out)
    assert 3 <= len(finished) < 10
    assert not (out / "features.parquet").exists()  # killed before consolidation
    for p in finished:  # every record on disk is whole
        assert json.loads(p.read_text())["status"] == "ok"

    resumed = run_batch([folder / "manifest.csv"], out, workers=2, beats=True,
                        progress=False)
    counts = resumed.attrs["counts"]
    assert counts["reused"] == len(finished)
    assert counts["analysed"] == 10 - len(finished)  # nothing finished is computed twice
    assert {p: v for p, v in _finished_records(out).items() if p in finished} == finished
    pd.testing.assert_frame_equal(resumed, reference)
    pd.testing.assert_frame_equal(pd.read_parquet(out / "beats.parquet"),
                                  pd.read_parquet(tmp_path / "ref" / "beats.parquet"))


def test_workers_exit_when_the_batch_process_is_killed(study, tmp_path):
    import psutil  # general-purpose process library (reference)
    out = tmp_path / "out"
    proc = subprocess.Popen([sys.executable, "-m", "eddyphone.cli", "batch", str(study),
                             "--out", str(out), "--workers", "2", "--quiet"],
                            stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    deadline = time.monotonic() + 120
    workers = []
    while not workers:
        assert proc.poll() is None and time.monotonic() < deadline
        workers = [c for c in psutil.Process(proc.pid).children()
                   if "resource_tracker" not in " ".join(c.cmdline())]
        time.sleep(0.01)
    proc.send_signal(signal.SIGKILL)  # the batch process only, not its workers
    proc.wait(timeout=30)
    gone, alive = psutil.wait_procs(workers, timeout=15)
    for p in alive:  # clean up before failing
        p.kill()
    assert not alive, "orphaned workers kept running after the batch was killed"


class _KillsItsWorker:
    """Unpickling this in a worker ends the worker process at once (a real crash)."""

    def __reduce__(self):
        return (os._exit, (3,))


def test_a_worker_crash_is_isolated_to_its_file(study):
    from eddyphone.batch.runner import run_local
    from eddyphone.config import Config

    files = sorted(study.rglob("*.wav"))[:3]
    tasks = [{"key": f"k{i}", "path": str(p), "config": Config()} for i, p in enumerate(files)]
    tasks.insert(1, {"key": "crash", "path": "crash.wav", "config": _KillsItsWorker()})
    reported: list[dict] = []
    run_local(tasks, 2, reported.append)
    assert sorted(r["key"] for r in reported) == sorted(t["key"] for t in tasks)  # once each
    results = {r["key"]: r for r in reported}
    assert results["crash"]["status"] == "error"
    assert "worker process died" in results["crash"]["error"]
    assert all(results[f"k{i}"]["status"] == "ok" for i in range(3))


def test_local_cluster_equals_local_run(study, reference, tmp_path):
    import distributed
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                  dashboard_address=None) as cluster:
        on_cluster = run_batch([study / "manifest.csv"], tmp_path / "cluster",
                               scheduler=cluster.scheduler_address, beats=True,
                               progress=False)
    assert on_cluster.attrs["counts"]["analysed"] == N_STUDY
    pd.testing.assert_frame_equal(on_cluster, reference)
    pd.testing.assert_frame_equal(on_cluster.attrs["beats"], reference.attrs["beats"])
    run = json.loads((tmp_path / "cluster" / "run.json").read_text())
    assert run["scheduler"] == cluster.scheduler_address


def test_unreachable_scheduler_is_an_input_error(study, tmp_path):
    with pytest.raises(InputError, match="scheduler"):
        run_batch([study / "ward_a"], tmp_path / "out", scheduler="tcp://127.0.0.1:9",
                  progress=False)


def test_patients_named_by_the_manifest_get_a_patient_table(tmp_path):
    # The bundled patient examined at the four areas (the mitral area in two postures),
    # plus a recording without a patient. The simulator made the leaking inflow valve's
    # murmur loudest at the mitral area (simulate.generator.MURMUR_SITE_DB, common
    # practice); the table row
    # must agree with summarise_patient run directly on the same files (the patient
    # view of `eddyphone analyze`), and a run without patients writes no table.
    from _report_data import SAMPLE_AUDIO

    from eddyphone import analyze
    from eddyphone.findings import summarise_patient
    from eddyphone.io import load
    from eddyphone.simulate.cases import DEMO_PATIENT, DEMO_PATIENT_PREFIX

    wavs = sorted(SAMPLE_AUDIO.glob(f"{DEMO_PATIENT_PREFIX}*.wav"))
    sites = [w.stem.removeprefix(DEMO_PATIENT_PREFIX) for w in wavs]
    # the mitral area twice, told apart by posture (the second is a copy of the sound;
    # a batch keeps a file met twice once)
    lateral = tmp_path / "mitral_left_lateral.wav"
    lateral.write_bytes(next(w for w, s in zip(wavs, sites) if s == "mitral").read_bytes())
    wavs.append(lateral)
    sites.append("mitral")
    postures = ["left lateral" if k == len(wavs) - 1 else "supine" for k in range(len(wavs))]
    manifest = tmp_path / "manifest.csv"
    manifest.write_text("path,patient,site,posture\n" + "".join(
        f"{w},{DEMO_PATIENT},{s},{p}\n" for w, s, p in zip(wavs, sites, postures))
        + f"{SAMPLE_AUDIO / '01_resting_adult.wav'},,mitral,\n")
    table = run_batch([manifest], tmp_path / "out", workers=2, progress=False)
    patients = pd.read_parquet(table.attrs["paths"]["patients"])
    assert len(patients) == 1
    row = patients.iloc[0]
    assert (row["patient"], row["recordings"], row["presence"]) == (DEMO_PATIENT, 5, "present")
    assert row["main_phase"] == "systolic"
    assert row["main_loudest_site"] in ("mitral, supine", "mitral, left lateral")
    assert "mitral, left lateral" in row["sites"].split("; ")
    levels = dict(part.rsplit(" ", 1) for part in row["main_level_db_re_s1_by_site"].split("; "))
    assert levels["mitral, supine"] == levels["mitral, left lateral"]  # the same sound
    assert "the mitral area, left lateral" in row["summary"]
    direct = summarise_patient([analyze(load(w, site=s, posture=p))
                                for w, s, p in zip(wavs, sites, postures)],
                               patient_id=DEMO_PATIENT)
    assert row["summary"] == direct.summary
    solo = run_batch([SAMPLE_AUDIO / "01_resting_adult.wav"], tmp_path / "solo", workers=1,
                     progress=False)
    assert "patients" not in solo.attrs["paths"]
    assert not (tmp_path / "solo" / "patients.parquet").exists()
