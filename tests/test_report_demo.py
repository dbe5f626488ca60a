"""`eddyphone demo` and the patient report, as a user meets them."""

from __future__ import annotations

import re
import shutil
import subprocess
import sys

import pytest
from _report_data import MURMUR_CASE, SAMPLE_AUDIO

import eddyphone
from eddyphone.io import load
from eddyphone.report import write_patient_report
from eddyphone.report.demo import find_sample_audio, new_folder

TWO_CASES = ("03_older_adult_outflow.wav", "05_systolic_leak.wav")


def _demo(cwd, *args: str) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "eddyphone.cli", "demo", *args], cwd=cwd,
                          capture_output=True, text=True, timeout=900)


@pytest.fixture(scope="module")
def small_set(tmp_path_factory):
    """Two bundled recordings with the matching rows of the bundled index.csv."""
    folder = tmp_path_factory.mktemp("recordings")
    lines = (SAMPLE_AUDIO / "index.csv").read_text().splitlines()
    keep = [lines[0]] + [ln for ln in lines[1:] if ln.split(",")[1] in TWO_CASES]
    (folder / "index.csv").write_text("\n".join(keep) + "\n")
    for name in TWO_CASES:
        shutil.copy(SAMPLE_AUDIO / name, folder / name)
    return folder


def test_demo_writes_a_new_folder_each_time_and_links_every_report(small_set, tmp_path):
    first = _demo(tmp_path, "--recordings", str(small_set))
    assert first.returncode == 0, first.stderr
    out = tmp_path / "eddyphone-demo"
    index = out / "index.html"
    assert str(index) in first.stdout
    for name in TWO_CASES:
        stem = name.removesuffix(".wav")
        assert f"{stem}.report.html" in first.stdout
        for suffix in (".json", ".segments.csv", ".beats.csv", ".report.html", ".report.pdf"):
            assert (out / f"{stem}{suffix}").exists()
    # Every link of the index points at a file that exists.
    links = re.findall(r'href="([^"]+)"', index.read_text(encoding="utf-8"))
    assert len(links) >= 4 and all((out / link).exists() for link in links)
    page = index.read_text(encoding="utf-8")
    assert "made with: narrowed outflow murmur" in page
    # the companion sounds the simulator designed in (03: S4, 05: S3) beside the murmur,
    # in the index and in the printed lines
    assert "; also S4" in page and "; also S3" in page
    assert "; also S4" in first.stdout and "; also S3" in first.stdout
    before = {p.name: p.stat().st_mtime_ns for p in out.iterdir()}
    second = _demo(tmp_path, "--recordings", str(small_set))
    assert second.returncode == 0, second.stderr
    assert (tmp_path / "eddyphone-demo-2" / "index.html").exists()
    assert {p.name: p.stat().st_mtime_ns for p in out.iterdir()} == before  # untouched


def test_demo_writes_the_patient_report_of_the_four_areas(tmp_path):
    # The bundled patient examined at the four areas (index.csv names the patient):
    # the demo adds the patient report and a line on how the murmur spreads. The
    # simulator made the leaking inflow valve's murmur loudest at the mitral area and
    # 3 dB softer at the tricuspid area (simulate.generator.MURMUR_SITE_DB, common
    # practice for where each murmur is loudest).
    from eddyphone.simulate.cases import DEMO_PATIENT, DEMO_PATIENT_PREFIX

    folder = tmp_path / "recordings"
    folder.mkdir()
    lines = (SAMPLE_AUDIO / "index.csv").read_text().splitlines()
    keep = [lines[0]] + [ln for ln in lines[1:] if ln.startswith(DEMO_PATIENT_PREFIX)]
    assert len(keep) == 5
    (folder / "index.csv").write_text("\n".join(keep) + "\n")
    for wav in SAMPLE_AUDIO.glob(f"{DEMO_PATIENT_PREFIX}*.wav"):
        shutil.copy(wav, folder / wav.name)
    result = _demo(tmp_path, "--recordings", str(folder), "--out", "out")
    assert result.returncode == 0, result.stderr
    line = next(ln for ln in result.stdout.splitlines() if f"patient {DEMO_PATIENT}" in ln)
    assert "4 recordings: systolic murmur, loudest at the mitral area" in line, line
    assert "softer at the tricuspid area" in line
    report = tmp_path / "out" / f"patient-{DEMO_PATIENT}.report.html"
    assert report.exists() and f"out/{report.name}" in result.stdout
    assert "and 1 patient report(s)" in result.stdout
    page = (tmp_path / "out" / "index.html").read_text()
    assert f'href="{report.name}"' in page and "loudest at the mitral area" in page


def test_demo_passes_the_chart_of_the_manifest(tmp_path):
    # The bundled manifest.csv holds what the clinic's chart says. The anemic patient's
    # blood count (hematocrit 0.19) reaches the explanation, which then ranks thin blood
    # first: the simulator made this murmur with cause low_viscosity at hematocrit 0.19
    # (simulate.cases.demo_specs). Without the manifest the same sound ranks the other
    # flow cause first (anemia raises cardiac output too; the sound alone cannot tell).
    import json

    from eddyphone.report.demo import run_demo

    name = "04_severe_anemia.wav"
    top = {}
    for with_chart in (True, False):
        folder = tmp_path / f"recordings-{with_chart}"
        folder.mkdir()
        shutil.copy(SAMPLE_AUDIO / name, folder / name)
        if with_chart:
            lines = (SAMPLE_AUDIO / "manifest.csv").read_text().splitlines()
            keep = [lines[0]] + [ln for ln in lines[1:] if ln.startswith(name)]
            assert len(keep) == 2
            (folder / "manifest.csv").write_text("\n".join(keep) + "\n")
        out = tmp_path / f"out-{with_chart}"
        result = run_demo(folder, out)
        assert not result.failures and len(result.reports) == 1
        doc = json.loads((out / "04_severe_anemia.json").read_text())
        top[with_chart] = doc["mechanisms"][0]["name"]
        page = (out / "index.html").read_text()
        if with_chart:
            assert doc["context"] == {"hematocrit": 0.19, "age_years": 41.0}
            assert "hematocrit 0.19, age 41" in page
        else:
            assert doc["context"] == {} and "hematocrit 0.19" not in page
    assert top == {True: "low_viscosity", False: "high_flow"}


def test_demo_refuses_an_existing_out_folder(tmp_path):
    (tmp_path / "taken").mkdir()
    result = _demo(tmp_path, "--out", "taken")
    assert result.returncode != 0
    assert result.stderr.count("\n") == 1 and "already exists" in result.stderr
    assert "Traceback" not in result.stderr


def test_new_folder_never_reuses_one(tmp_path):
    a = new_folder(tmp_path, "run")
    b = new_folder(tmp_path, "run")
    assert (a.name, b.name) == ("run", "run-2") and a.is_dir() and b.is_dir()


def test_bundled_recordings_are_found():
    assert find_sample_audio() == SAMPLE_AUDIO


def test_patient_report_puts_sites_side_by_side(tmp_path):
    from eddyphone.findings import summarise_patient

    analyses = [eddyphone.analyze(load(SAMPLE_AUDIO / TWO_CASES[0], site="aortic",
                                       patient="P-demo")),
                eddyphone.analyze(load(MURMUR_CASE, site="mitral", patient="P-demo"))]
    summary = summarise_patient(analyses)
    paths = write_patient_report(summary, analyses, tmp_path)
    html = paths["html"].read_text(encoding="utf-8")
    assert "Patient P-demo" in html
    # Examination order: aortic before mitral, in the table and in the figure.
    assert html.index(">aortic<") < html.index(">mitral<")
    for m in summary.murmurs:
        assert m.spread.split(",")[0] in html
    # the table's levels are the ones the summary's "N dB softer at ..." compares (re
    # each recording's own S1), so the two agree
    from eddyphone.report.patient import site_rows

    header, rows = site_rows(analyses)
    column = header.index("level (dB re S1)")
    main = summary.murmurs[0]
    by_site = {a.recording.site: a for a in analyses}
    compared = [row for row in rows if by_site[row[0]].findings.main().phase == main.phase]
    assert compared
    for row in compared:
        assert row[column] == f"{main.level_db_by_site[row[0]]:+.1f}"
    assert "Patient context" in html and "none given" in html
    assert html.count('class="figure"') >= 1
    pages = subprocess.run(["pdfinfo", str(paths["pdf"])], capture_output=True, text=True,
                           check=True).stdout
    assert int(re.search(r"Pages:\s+(\d+)", pages).group(1)) >= 1
    with pytest.raises(eddyphone.errors.InputError, match="already exists"):
        write_patient_report(summary, analyses, tmp_path)
