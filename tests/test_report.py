"""Reports: the output contract, a self-contained HTML file, the PDF pages, the figures."""

from __future__ import annotations

import base64
import io
import json
import re
import shutil
import subprocess
import sys

import numpy as np
import pytest
import soundfile as sf
from _report_data import MURMUR_CASE
from conftest import murmur_record

import eddyphone
from eddyphone.cautions import GENERAL_CAUTIONS
from eddyphone.report import figures as figs
from eddyphone.report import write_report
from eddyphone.report.pdf import write_pdf


def _cli(*args: str) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "eddyphone.cli", *args], capture_output=True,
                          text=True, timeout=900)


@pytest.fixture(scope="module")
def analysis():
    return eddyphone.analyze(MURMUR_CASE)


@pytest.fixture(scope="module")
def report(analysis, tmp_path_factory):
    out = tmp_path_factory.mktemp("report")
    return out, write_report(analysis, out, stem=analysis.recording.stem)


def test_analyze_command_writes_the_contract_files(tmp_path):
    result = _cli("analyze", str(MURMUR_CASE), "--out", str(tmp_path))
    assert result.returncode == 0, result.stderr
    stem = MURMUR_CASE.stem
    for suffix in (".json", ".segments.csv", ".beats.csv", ".report.html", ".report.pdf",
                   ".overview.png", ".spectrogram.png", ".ensemble.png", ".mechanisms.png"):
        path = tmp_path / f"{stem}{suffix}"
        assert path.exists() and path.stat().st_size > 0, suffix
    data = json.loads((tmp_path / f"{stem}.json").read_text())
    # A figure per murmur the JSON lists.
    for finding in data["findings"]:
        if finding["kind"] == "murmur":
            assert (tmp_path / f"{stem}.murmur-{finding['id']}.png").exists()
    # PNG signature (ISO/IEC 15948) on every figure.
    for png in tmp_path.glob(f"{stem}.*.png"):
        assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


def test_html_is_self_contained(report):
    out, paths = report
    html = paths["html"].read_text(encoding="utf-8")
    # Nothing is fetched: no src/href to a network address, no external stylesheet or script.
    assert not re.search(r"""(src|href)\s*=\s*["']?(https?:)?//""", html)
    assert "<script" not in html and "<link" not in html
    assert html.count('class="figure"') >= 4


def test_embedded_audio_is_the_recording(report, analysis):
    _, paths = report
    html = paths["html"].read_text(encoding="utf-8")
    match = re.search(r'id="recording-audio"[^>]*src="data:audio/wav;base64,([^"]+)"', html)
    assert match
    y, fs = sf.read(io.BytesIO(base64.b64decode(match.group(1))))
    assert fs == 8000
    assert len(y) / fs == pytest.approx(analysis.recording.duration_s, abs=0.01)
    # Same sound: correlate with the recording resampled to 8 kHz by scipy.
    from scipy.signal import resample_poly

    ref = resample_poly(analysis.recording.x, 2, 1)
    n = min(len(ref), len(y))
    assert np.corrcoef(ref[:n], y[:n])[0, 1] > 0.99


def test_html_says_the_findings_mechanisms_quality_and_cautions(report, analysis):
    _, paths = report
    html = paths["html"].read_text(encoding="utf-8")
    from html import escape

    summary = analysis.summary()
    assert escape(summary["murmur_description"]) in html
    assert escape(analysis.explanation.top().label) in html
    for caution in GENERAL_CAUTIONS:
        assert escape(caution) in html
    assert eddyphone.__version__ in html and analysis.config.digest() in html
    assert "Recording quality" in html and "Show the" in html  # quality and beats sections
    for name in ("slowed-0.5x", "murmur-only", "heart-sounds-only", "beat-loop"):
        assert f"{analysis.recording.stem}.teach.{name}.wav" in html  # renders linked


def _pdf_pages(path, tmp_path):
    if shutil.which("pdftoppm") is None:
        pytest.fail("pdftoppm (poppler-utils) is needed; .ci/run installs it")
    subprocess.run(["pdftoppm", "-r", "40", "-png", str(path), str(tmp_path / "page")],
                   check=True, timeout=120)
    return sorted(tmp_path.glob("page-*.png"))


def _pdf_text(path) -> str:
    return subprocess.run(["pdftotext", "-layout", str(path), "-"], capture_output=True,
                          text=True, check=True, timeout=120).stdout


def test_pdf_has_a4_pages_with_the_content(report, analysis, tmp_path):
    _, paths = report
    pages = _pdf_pages(paths["pdf"], tmp_path)
    # Summary and findings, the cycle figures, mechanisms, quality, beats and cautions:
    # at least four pages, and every page rendered by poppler is A4 (210 x 297 mm).
    assert len(pages) >= 4
    info = subprocess.run(["pdfinfo", str(paths["pdf"])], capture_output=True, text=True,
                          check=True).stdout
    assert int(re.search(r"Pages:\s+(\d+)", info).group(1)) == len(pages)
    w, h = map(float, re.search(r"Page size:\s+([\d.]+) x ([\d.]+) pts", info).groups())
    assert (w, h) == pytest.approx((595.3, 841.9), abs=1.0)  # A4 in points (ISO 216)
    import matplotlib.image as mpimg

    for page in pages:  # every page carries ink, none is blank
        img = mpimg.imread(page)
        assert (img[..., :3].mean(axis=2) < 0.5).mean() > 0.002
    text = " ".join(_pdf_text(paths["pdf"]).split())
    for words in ("Summary", "Findings", "Likely mechanisms", "Cautions", "Provenance",
                  analysis.explanation.top().label, "palpable thrill"):
        assert " ".join(words.split()) in text, words


def test_pdf_pages_grow_with_the_content(analysis, tmp_path):
    # A murmur case with figures and five ranked mechanisms needs more pages than the same
    # analysis without figures; nothing is cut to fit.
    (tmp_path / "a").mkdir()
    (tmp_path / "b").mkdir()
    bare = write_pdf(analysis, tmp_path / "bare.pdf", figures={})
    full = write_pdf(analysis, tmp_path / "full.pdf",
                     figures={k: _png(f) for k, f in figs.all_figures(analysis).items()})
    n_bare = len(_pdf_pages(bare, tmp_path / "a"))
    n_full = len(_pdf_pages(full, tmp_path / "b"))
    assert n_full > n_bare >= 2
    bare_text = " ".join(_pdf_text(bare).split())
    assert analysis.summary()["murmur_description"] in bare_text


def _png(fig) -> bytes:
    buffer = io.BytesIO()
    with figs.styled():
        fig.savefig(buffer, format="png", dpi=80)
    return buffer.getvalue()


def test_figures_have_units_on_every_axis(analysis):
    # Every labelled axis names its unit in brackets (or is a percentage or a 0-1 score);
    # beat-number axes count beats and need none.
    unit = re.compile(r"\((s|ms|Hz|dB)\b[^)]*\)|\(.*=.*\)|%|score|\(conditioned")
    checked = 0
    for name, fig in figs.all_figures(analysis).items():
        for ax in fig.axes:
            for label in (ax.get_xlabel(), ax.get_ylabel()):
                if not label or "beat" in label:
                    continue
                checked += 1
                assert unit.search(label), (name, label)
    assert checked >= 10


def test_ensemble_rows_align_every_beat_on_its_s1(analysis):
    img, t, beats = figs.ensemble_matrix(analysis)
    assert img.shape == (len(beats), len(t)) and len(beats) == len(analysis.segmentation.beats)
    # 0 dB is the median S1 peak: the S1 columns hold the loudest energy of each row.
    s1 = (t >= 0) & (t <= 0.12)
    assert np.nanmedian(np.nanmax(img[:, s1], axis=1)) == pytest.approx(0.0, abs=0.5)
    # Blank (NaN) after the next S1 onset, never before it (past the first 10 ms frame).
    for row, b in zip(img, beats):
        if b.rr_s is not None:
            assert np.all(np.isnan(row[t > b.rr_s + 1e-9]))
            assert not np.any(np.isnan(row[(t >= 0.01) & (t < b.rr_s - 0.01)]))


def test_report_without_findings_or_explanation_says_so(analysis, tmp_path):
    from dataclasses import replace

    bare = replace(analysis, findings=None, explanation=None)
    paths = write_report(bare, tmp_path, stem="bare", teaching=False)
    html = paths["html"].read_text(encoding="utf-8")
    assert "did not run for this report" in html
    assert "mechanisms" not in {k.removeprefix("figure_") for k in paths}
    assert _pdf_text(paths["pdf"]).count("did not run") >= 2


def test_heart_rate_reads_the_same_in_summary_and_rhythm_section():
    # 80.51 bpm: the summary keeps 80.5 and shows 80; the rhythm section must not show 81.
    from dataclasses import replace
    from types import SimpleNamespace

    from eddyphone.report import text
    from eddyphone.rhythm import Rhythm

    rhythm = Rhythm(80.51, 0.34, (0.745,) * 19, 0.745, 0.02, False, 0.8, "beats")
    seg = SimpleNamespace(rhythm=rhythm, beats=(), segments=(), method="m")
    summary = {"heart_rate_bpm": round(rhythm.heart_rate_bpm, 1), "rhythm": "regular"}
    analysis = SimpleNamespace(segmentation=seg, summary=lambda: summary, findings=None,
                               explanation=None,
                               quality=SimpleNamespace(score=1.0, usable=True))
    shown = dict(text.headline(analysis))["Heart rate"]
    assert shown == "80 bpm"
    assert text.rhythm_lines(analysis)[0].startswith(f"Heart rate {shown} ")
    seg.rhythm = replace(rhythm, heart_rate_bpm=80.56)  # 80.6 in the summary: 81 both
    summary["heart_rate_bpm"] = 80.6
    assert dict(text.headline(analysis))["Heart rate"] == "81 bpm"
    assert text.rhythm_lines(analysis)[0].startswith("Heart rate 81 bpm ")


def test_report_pitch_row_explains_a_word_the_printed_frequency_would_not_give():
    # Common-practice edges (from memory): under about 150 Hz low, from about 300 Hz
    # high. A murmur called low from its rise over the noise floor whose recorded
    # dominant frequency is 188 Hz must not print "low: dominant 188 Hz" in the report's
    # measures table or the patient view, a reading a clinician takes for a mistake.
    from eddyphone.report.text import murmur_table

    m = murmur_record(pitch="low", dominant_frequency_hz=188.0)
    pitch = dict(murmur_table(m))["Pitch"]
    assert "would read medium" in pitch and "188 Hz" in pitch
    assert not pitch.startswith("low: dominant")


def test_timing_and_phase_read_as_clinicians_write_them():
    # Common practice: "holosystolic", "mid-diastolic"; a continuous murmur runs through
    # S2 and takes no timing word within one window.
    from eddyphone.report.text import phase_words

    assert phase_words("holo", "systolic") == "holosystolic"
    assert phase_words("early", "diastolic") == "early-diastolic"
    assert phase_words("holo", "continuous") == "continuous"
    assert phase_words(None, "systolic") == "systolic"


def test_continuous_murmur_is_drawn_against_systole_and_diastole(tmp_path):
    """Demo 10 (a continuous shunt): the one-line summary says 'continuous', not 'holo
    continuous', and the murmur figure marks S2 in the whole-cycle window with systole
    before it and diastole after, not the thirds of a systolic window."""
    shunt = MURMUR_CASE.parent / "10_continuous_shunt.wav"
    done = _cli("analyze", str(shunt), "--no-report", "--out", str(tmp_path))
    assert done.returncode == 0, done.stderr
    assert "; continuous " in done.stdout and "holo continuous" not in done.stdout
    analysis = eddyphone.analyze(shunt)
    murmur = analysis.findings.murmurs[0]
    assert murmur.phase == "continuous"
    words = {t.get_text() for t in figs.murmur_figure(analysis, murmur).axes[0].texts}
    assert {"S2", "systole", "diastole"} <= words and "early" not in words


def test_murmur_profile_is_shaded_only_where_the_murmur_runs():
    """The murmur figure draws the whole window's course but shades only the murmur's
    extent (onset to end), so a louder sound elsewhere in the window (an S2 tail, an
    S4) is not drawn as the murmur and the dashed peak line sits on the shaded part."""
    from dataclasses import replace

    analysis = eddyphone.analyze(MURMUR_CASE.parent / "03_older_adult_outflow.wav")
    murmur = replace(analysis.findings.murmurs[0], onset_fraction=0.4, end_fraction=0.8)
    ax = figs.murmur_figure(analysis, murmur).axes[0]
    xs = np.concatenate([p.vertices[:, 0] for c in ax.collections for p in c.get_paths()])
    assert xs.size and xs.min() >= 40.0 - 1e-6 and xs.max() <= 80.0 + 1e-6
    line = ax.lines[0].get_xdata()
    assert line.min() < 40.0 and line.max() > 80.0  # the course runs across the window


def test_cause_of_an_uncertain_murmur_is_hedged():
    """A murmur-free benchmark recording (simulator truth: no murmur) with a diastolic
    excess in under 65 % of its beats: the murmur is 'uncertain', and the headline
    names the ranked cause only as the cause of a possible murmur."""
    from eddyphone.io import from_array
    from eddyphone.report import text
    from eddyphone.simulate import benchmark_specs, generate

    spec = next(s for s in benchmark_specs(600, seed=2) if s.seed == 200526)
    sim = generate(spec)
    assert sim.truth["murmur"]["present"] is False
    analysis = eddyphone.analyze(from_array(sim.x, sim.fs, source="case200526"))
    assert analysis.summary()["murmur"] == "uncertain"
    top = analysis.explanation.top()
    assert top.name != "no_flow_disturbance"
    facts = dict(text.headline(analysis))
    assert facts["Most likely mechanism"].endswith(", if the possible murmur is real")
    from eddyphone.cli.analyze import _one_line  # the CLI's one-line summary likewise

    assert "murmur uncertain; if the possible murmur is real, most likely:" in _one_line(analysis)


def test_a_regular_rhythm_with_a_large_rr_variation_says_why():
    """The rhythm word 'regular' beside an RR variation above the irregular edge
    (rhythm.IRREGULAR_RR_CV) reads as a contradiction unless the line says why."""
    from types import SimpleNamespace

    from eddyphone.report.text import rr_variation_words
    from eddyphone.rhythm import rr_statistics

    def words(rr, irregular=False):
        _, cv, _ = rr_statistics(np.asarray(rr))
        return rr_variation_words(SimpleNamespace(rr_s=tuple(rr), rr_cv=cv,
                                                  irregular=irregular))

    steady = [0.80, 0.82, 0.79, 0.81, 0.80, 0.78]
    assert words(steady) == "RR variation 2 %"
    # one beat split in two by the segmentation (0.30 + 0.50 = one interval)
    split = [0.80, 0.80, 0.30, 0.50, 0.80, 0.81, 0.79, 0.80]
    assert words(split).startswith("RR variation 1 % once beats the segmentation split")
    assert words(split).endswith("as segmented")
    # a premature beat with its pause stays a large variation, with the reason
    premature = [0.80, 0.80, 0.50, 1.10, 0.80, 0.80, 0.80, 0.80]
    assert words(premature).endswith("(misplaced or premature beats)")
    assert words(premature, irregular=True).startswith("RR variation")
    assert "premature" not in words(premature, irregular=True)


def test_one_line_summary_names_the_companion_sounds():
    """The CLI's one-line summary names an S3, S4, click or snap after the murmur (a
    split S2 only when fixed: a varying one is the normal finding). Demo 08 has an
    opening snap and demo 05 an S3 in the simulator's design; a click reported only
    as possible says so."""
    from dataclasses import replace

    from eddyphone.cli.analyze import _one_line
    from eddyphone.report.text import companion_words

    rumble = eddyphone.analyze(MURMUR_CASE.parent / "08_diastolic_rumble.wav")
    assert "; also opening snap; most likely:" in _one_line(rumble)
    leak = eddyphone.analyze(MURMUR_CASE.parent / "05_systolic_leak.wav")
    assert "; also S3;" in _one_line(leak)
    assert "split" not in companion_words(leak)  # its split varies
    snap = next(e for e in rumble.findings.extra_sounds if e.kind == "opening_snap")
    hedged = replace(snap, kind="ejection_click", details={"caution": "possible: ..."})
    fixed = replace(snap, kind="split_S2", details={"varies": False})
    both = replace(rumble, findings=replace(rumble.findings, extra_sounds=(hedged, fixed)))
    assert companion_words(both) == "; also ejection click (possible), fixed split S2"


def test_context_words_name_every_given_fact_with_its_unit():
    # The provenance list and the demo index say what the user gave, in words (our
    # wording; units as in the output contract's field names).
    from eddyphone.context import PatientContext
    from eddyphone.report.text import context_words

    given = PatientContext(hematocrit=0.19, age_years=41, cardiac_output_l_min=7.5,
                           states=("exercise", "arteriovenous_fistula"))
    assert context_words(given) == ("hematocrit 0.19, cardiac output 7.5 L/min, age 41, "
                                    "exercise, arteriovenous fistula")
    assert context_words(PatientContext()) == "" and context_words(None) == ""


def test_patient_line_counts_recordings_in_words():
    # one line per patient (demo, analyze --patient): "1 recording", "2 recordings"
    from eddyphone.findings import summarise_patient
    from eddyphone.findings.records import Findings
    from eddyphone.report.text import patient_line

    quiet = Findings((), (), (), "absent", "windows stay quiet")
    one = summarise_patient({"mitral": quiet}, patient_id="Z1")
    two = summarise_patient({"mitral": quiet, "aortic": quiet}, patient_id="Z2")
    assert patient_line(one) == "patient Z1, 1 recording: murmur absent"
    assert patient_line(two) == "patient Z2, 2 recordings: murmur absent"


def test_figure_titles_stay_inside_their_figures():
    # A recording with a skipped stretch (here the part before a given segmentation
    # starts) adds to the overview's title; every title must still fit its figure
    # (seen in headless Chromium: it ran past the right edge).
    import eddyphone
    from eddyphone.evaluate import read_annotation
    from eddyphone.io import load
    from eddyphone.segment.given import segmentation_from_intervals

    rec = load(MURMUR_CASE)
    truth = MURMUR_CASE.with_name(MURMUR_CASE.name.replace(".wav", ".truth.csv"))
    seg = segmentation_from_intervals(read_annotation(truth), rec.duration_s,
                                      source=str(truth))
    assert seg.skipped
    analysis = eddyphone.analyze(rec, segmentation=seg)
    checked = 0
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    for name, fig in figs.all_figures(analysis).items():
        FigureCanvasAgg(fig).draw()  # lay out as when saved
        renderer = fig.canvas.get_renderer()
        width = fig.bbox.width
        for ax in fig.axes:
            for title in (ax.title, ax._left_title, ax._right_title):
                if title.get_text():
                    box = title.get_window_extent(renderer)
                    assert box.x0 >= -1 and box.x1 <= width + 1, (name, title.get_text())
                    checked += 1
    assert checked >= 5
