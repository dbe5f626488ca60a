"""Time of each part of the report for one bundled recording (figures, HTML, PDF, renders).

Run: python bench/bench_report.py [REC]. Prints seconds per part and each part's share of
the whole report, all measured in this run.
"""

from __future__ import annotations

import sys
import tempfile
import time
from pathlib import Path

import eddyphone
from eddyphone.report import _png
from eddyphone.report import figures as figs
from eddyphone.report.html import write_html
from eddyphone.report.pdf import write_pdf
from eddyphone.teach import render_all

REC = Path(__file__).resolve().parents[1] / "sample_audio" / "05_systolic_leak.wav"


def main() -> None:
    path = Path(sys.argv[1]) if len(sys.argv) > 1 else REC
    t0 = time.perf_counter()
    analysis = eddyphone.analyze(path)
    t_analyze = time.perf_counter() - t0
    out = Path(tempfile.mkdtemp(prefix="bench-report-"))
    stem = analysis.recording.stem
    render_all(analysis, out, stem="warmup")  # first phase-vocoder call loads librosa parts
    times: dict[str, float] = {}
    t = time.perf_counter()
    made = figs.all_figures(analysis)
    times["figures (build)"] = time.perf_counter() - t
    t = time.perf_counter()
    screen = {k: _png(f, 150) for k, f in made.items()}
    times["figures (PNG 150 dpi)"] = time.perf_counter() - t
    t = time.perf_counter()
    prints = {k: _png(f, 220) for k, f in made.items()}
    times["figures (PNG 220 dpi for PDF)"] = time.perf_counter() - t
    t = time.perf_counter()
    renders = render_all(analysis, out, stem=stem)
    times["teaching renders"] = time.perf_counter() - t
    t = time.perf_counter()
    html = write_html(analysis, out / f"{stem}.report.html", figures=screen, renders=renders)
    times["HTML"] = time.perf_counter() - t
    t = time.perf_counter()
    pdf = write_pdf(analysis, out / f"{stem}.report.pdf", figures=prints)
    times["PDF"] = time.perf_counter() - t
    total = sum(times.values())
    print(f"recording {path.name}: {analysis.recording.duration_s:.1f} s, "
          f"{len(analysis.segmentation.beats)} beats")
    print(f"analyze                         {t_analyze:6.2f} s")
    for name, sec in times.items():
        print(f"{name:<32}{sec:6.2f} s  {100 * sec / total:5.1f} % of the report")
    print(f"report total                    {total:6.2f} s  = {total / t_analyze:.2f} x analyze")
    print(f"HTML {html.stat().st_size / 1e6:.2f} MB, PDF {pdf.stat().st_size / 1e6:.2f} MB")


if __name__ == "__main__":
    main()
