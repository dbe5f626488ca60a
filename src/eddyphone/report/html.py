"""The self-contained HTML report: one file, sound and figures embedded.

Nothing is fetched from anywhere: styles are inline, figures are PNG data URIs,
the recording is a base64 WAV in an ``<audio>`` player. Teaching renders are
linked as files beside the report (and embedded too when they are small).

Public API
----------
render_html(analysis, *, figures, renders=None, out_dir=None) -> str
write_html(analysis, path, *, figures, renders=None) -> Path
"""

from __future__ import annotations

import base64
from collections.abc import Mapping, Sequence
from html import escape
from pathlib import Path
from typing import Any

from eddyphone.report import palette, text

#: Longest stretch of the recording embedded in the player, in seconds.
EMBED_MAX_S = 300.0
#: Teaching renders are embedded as well as linked while their WAVs total less than this.
EMBED_RENDERS_MAX_BYTES = 4_000_000

FIGURE_CAPTIONS = {
    "overview": "The recording with the four cycle states as coloured bands, the envelope and "
                "the beat numbers of the beats table.",
    "spectrogram": "Short-time spectrum with the cycle states above; murmurs show as energy "
                   "between the S1 and S2 columns.",
    "ensemble": "Every beat aligned on its S1 onset (one row per beat): a murmur shows as a "
                "band between the sounds, its consistency as the number of rows that carry it.",
    "mechanisms": "Candidate mechanisms ranked by how well the measured evidence supports them.",
}

RENDER_TITLES = {
    "slowed": "Slowed, pitch kept",
    "murmur_only": "Murmur isolated (S1 and S2 attenuated)",
    "heart_sounds_only": "Heart sounds alone (systole and diastole attenuated)",
    "beat_loop": "One beat, looped",
}


def _css() -> str:
    s = palette.STATE_COLOURS
    return f"""
:root {{ --ink:{palette.INK}; --muted:{palette.MUTED}; --paper:{palette.PAPER};
  --grid:{palette.GRID}; --accent:{palette.ACCENT}; --s1:{s['S1']}; --s2:{s['S2']};
  --sys:{s['systole']}; --dia:{s['diastole']}; }}
* {{ box-sizing: border-box; }}
body {{ margin:0; background:var(--paper); color:var(--ink);
  font: 15px/1.5 "DejaVu Sans", "Segoe UI", Helvetica, Arial, sans-serif; }}
main {{ max-width: 1000px; margin: 0 auto; padding: 0 28px 60px; }}
a {{ color: var(--s1); }}
a:visited {{ color: #4f4a8a; }}
header.top {{ border-bottom: 3px solid var(--ink); padding: 26px 0 12px; margin-bottom: 8px;
  display:flex; justify-content:space-between; align-items:flex-end; gap:16px; flex-wrap:wrap; }}
header.top h1 {{ font-size: 25px; margin:0; letter-spacing:0.01em; }}
header.top .kicker {{ font-size:12px; text-transform:uppercase; letter-spacing:0.14em;
  color:var(--muted); margin:0 0 4px; }}
.states {{ display:flex; height:8px; width:180px; border-radius:2px; overflow:hidden; }}
.states span {{ flex:1; }}
.notice {{ font-size: 13px; color: var(--muted); margin: 6px 0 22px; }}
.muted {{ color: var(--muted); }}
section {{ margin: 30px 0; }}
h2 {{ font-size: 17px; margin: 0 0 10px; padding-bottom:4px; border-bottom:1px solid var(--grid);
  display:flex; gap:10px; align-items:baseline; }}
h2 .num {{ font-size:12px; color:var(--paper); background:var(--ink); border-radius:3px;
  padding:1px 7px; font-weight:bold; }}
h3 {{ font-size: 15px; margin: 18px 0 6px; }}
dl.facts {{ display:grid; grid-template-columns: minmax(160px, max-content) 1fr; gap: 4px 18px;
  margin: 0; padding: 14px 18px; background: #fff; border:1px solid var(--grid);
  border-left: 6px solid var(--s1); border-radius: 4px; }}
dl.facts dt {{ color: var(--muted); font-size: 13px; padding-top:2px; }}
dl.facts dd {{ margin: 0; font-weight: 600; }}
.listen {{ display:grid; grid-template-columns: repeat(auto-fill, minmax(290px, 1fr));
  gap: 12px; }}
.player {{ background:#fff; border:1px solid var(--grid); border-radius:4px; padding:10px 12px; }}
.player .title {{ font-size:13px; font-weight:600; margin-bottom:6px; }}
.player audio {{ width:100%; }}
.player a {{ font-size:12px; color:var(--s1); }}
figure {{ margin: 14px 0 22px; }}
figure img {{ width:100%; height:auto; border:1px solid var(--grid); border-radius:3px;
  background: var(--paper); }}
figcaption {{ font-size: 13px; color: var(--muted); margin-top: 4px; }}
table {{ border-collapse: collapse; width: 100%; font-size: 13px; margin: 6px 0 10px; }}
th, td {{ text-align:left; padding: 4px 8px; border-bottom: 1px solid var(--grid);
  vertical-align: top; }}
th {{ color: var(--muted); font-weight: 600; background: #f3f1ea; }}
td.num, th.num {{ text-align:right; font-variant-numeric: tabular-nums; }}
td.num {{ white-space:nowrap; }}
.mech td:first-child {{ min-width: 9em; }}
details.more {{ margin: 8px 0 14px; }}
details.more > summary {{ margin-bottom: 6px; }}
.murmur {{ border-left: 5px solid var(--accent); padding: 2px 0 2px 14px; margin: 14px 0; }}
.mech {{ background:#fff; border:1px solid var(--grid); border-radius:4px; padding:12px 16px;
  margin: 10px 0; }}
.mech header {{ display:flex; align-items:center; gap:12px; flex-wrap:wrap; }}
.mech .rank {{ font-weight:bold; font-size:13px; width:26px; height:26px; border-radius:50%;
  display:inline-flex; align-items:center; justify-content:center; color:#fff; }}
.mech .label {{ font-weight:700; font-size:15px; }}
.bar {{ flex: 0 0 160px; height: 10px; background: #ebe8df; border-radius: 5px;
  overflow:hidden; }}
.bar span {{ display:block; height:100%; }}
.mech .score {{ font-variant-numeric: tabular-nums; color: var(--muted); font-size:13px; }}
.mech p.physics {{ margin: 8px 0; }}
.mech h4 {{ font-size: 12px; text-transform: uppercase; letter-spacing: 0.08em;
  color: var(--muted); margin: 10px 0 2px; }}
.mech ul {{ margin: 2px 0 4px 18px; padding: 0; }}
.cautions {{ border-left: 6px solid var(--s2); background:#fff; padding: 10px 18px;
  border-radius: 4px; border:1px solid var(--grid); border-left-width:6px; }}
.cautions li {{ margin: 4px 0; }}
.missing {{ color: var(--muted); font-style: italic; }}
details summary {{ cursor: pointer; color: var(--s1); font-size: 14px; }}
pre {{ background:#fff; border:1px solid var(--grid); padding:10px; font-size:12px;
  overflow:auto; max-height: 420px; }}
footer {{ margin-top: 40px; font-size: 12px; color: var(--muted);
  border-top: 1px solid var(--grid); padding-top: 8px; }}
@media print {{ .listen, details {{ display:none; }} body {{ font-size: 12px; }}
  section {{ break-inside: avoid-page; }} }}
"""


def _png_uri(data: bytes) -> str:
    return "data:image/png;base64," + base64.b64encode(data).decode("ascii")


def _wav_uri(data: bytes) -> str:
    return "data:audio/wav;base64," + base64.b64encode(data).decode("ascii")


def _table(header: Sequence[str], rows: Sequence[Sequence[str]], *,
           numeric: Sequence[int] = ()) -> str:
    head = "".join(f'<th class="{"num" if i in numeric else ""}">{escape(h)}</th>'
                   for i, h in enumerate(header))
    body = "".join("<tr>" + "".join(
        f'<td class="{"num" if i in numeric else ""}">{escape(str(c))}</td>'
        for i, c in enumerate(row)) + "</tr>" for row in rows)
    return f"<table><thead><tr>{head}</tr></thead><tbody>{body}</tbody></table>"


def _facts(rows: Sequence[tuple[str, str]], *, element_id: str = "") -> str:
    items = "".join(f"<dt>{escape(k)}</dt><dd>{escape(v)}</dd>" for k, v in rows)
    ident = f' id="{element_id}"' if element_id else ""
    return f'<dl class="facts"{ident}>{items}</dl>'


def _ul(items: Sequence[str]) -> str:
    return "<ul>" + "".join(f"<li>{escape(i)}</li>" for i in items) + "</ul>"


def _section(number: int, title: str, body: str, *, ident: str) -> str:
    return (f'<section id="{ident}"><h2><span class="num">{number}</span>{escape(title)}</h2>'
            f"{body}</section>")


def _figure(name: str, png: bytes, caption: str) -> str:
    return (f'<figure class="figure" data-figure="{escape(name)}">'
            f'<img alt="{escape(caption)}" src="{_png_uri(png)}">'
            f"<figcaption>{escape(caption)}</figcaption></figure>")


def _listen(analysis: Any, renders: Mapping[str, Path], out_dir: Path | None) -> str:
    from eddyphone.teach import wav_bytes

    rec = analysis.recording
    n = int(min(len(rec.x), EMBED_MAX_S * rec.fs))
    note = "" if n == len(rec.x) else f" (first {EMBED_MAX_S:.0f} s)"
    players = [
        '<div class="player"><div class="title">Recording as analysed'
        f"{escape(note)}</div>"
        f'<audio id="recording-audio" controls preload="auto" '
        f'src="{_wav_uri(wav_bytes(rec.x[:n], rec.fs))}"></audio></div>']
    sizes = sum(p.stat().st_size for p in renders.values() if p.exists())
    embed = sizes < EMBED_RENDERS_MAX_BYTES
    for name, path in renders.items():
        href = path.name if out_dir is None or path.parent == out_dir else str(path)
        audio = (f'<audio class="teach-audio" controls preload="metadata" '
                 f'src="{_wav_uri(path.read_bytes())}"></audio>' if embed and path.exists()
                 else "")
        players.append(f'<div class="player"><div class="title">'
                       f"{escape(RENDER_TITLES.get(name, name))}</div>{audio}"
                       f'<a class="teach-link" href="{escape(href)}">{escape(path.name)}</a>'
                       "</div>")
    intro = ("<p>Use headphones or a good speaker: most heart-sound energy lies below "
             "200 Hz. The teaching renders are WAV files beside this report.</p>"
             if renders else "<p>Use headphones or a good speaker: most heart-sound energy "
             "lies below 200 Hz.</p>")
    missing = [RENDER_TITLES[k] for k in RENDER_TITLES if k not in renders]
    if renders and missing:
        intro += ("<p class=\"missing\">Not rendered (they need a segmented heart cycle): "
                  + escape(", ".join(missing).lower()) + ".</p>")
    return intro + '<div class="listen">' + "".join(players) + "</div>"


def _findings(analysis: Any, figures: Mapping[str, bytes]) -> str:
    f = analysis.findings
    if f is None:
        return f'<p class="missing">{escape(text.MISSING_FINDINGS)}</p>'
    parts = [f"<p><strong>Murmur: {escape(f.presence)}.</strong> "
             f"{escape(f.presence_reason)}</p>"]
    for m in f.murmurs:
        parts.append(f'<div class="murmur" id="finding-{escape(m.id)}">'
                     f"<h3>{escape(m.id)}: {escape(m.describe())}</h3>"
                     + _table(["measure", "value"], text.murmur_table(m)))
        png = figures.get(f"murmur-{m.id}")
        if png is not None:
            parts.append(_figure(f"murmur-{m.id}", png,
                                 f"{m.id}: envelope across its window (left; shaded where the "
                                 "murmur runs, the dashed line at its peak) and the spectrum "
                                 "of its windows against the other phase (right)."))
        parts.append("</div>")
    extras = text.extra_sound_lines(analysis)
    parts.append("<h3>Extra sounds</h3>" + (_ul(extras) if extras else
                                             "<p>None found.</p>"))
    return "".join(parts)


def _mechanisms(analysis: Any, figures: Mapping[str, bytes]) -> str:
    if analysis.explanation is None:
        return f'<p class="missing">{escape(text.MISSING_EXPLANATION)}</p>'
    parts = []
    png = figures.get("mechanisms")
    if png is not None:
        parts.append(_figure("mechanisms", png, FIGURE_CAPTIONS["mechanisms"]))
    titles: dict[str, str] = {"overall": "Whole recording"}
    if analysis.findings is not None:
        for m in analysis.findings.murmurs:
            titles[m.id] = f"{m.id}: {m.describe()}"
        for e in analysis.findings.extra_sounds:
            titles[e.id] = f"{e.id}: {e.describe()}"
    current, open_more = None, False
    blocks = text.mechanism_blocks(analysis)
    for i, b in enumerate(blocks):
        if b.finding != current:
            if current is not None and open_more:
                parts.append("</details>")
            current, open_more = b.finding, False
            parts.append(f"<h3>{escape(titles.get(b.finding, b.finding))}</h3>")
        elif not open_more:
            rest = sum(1 for c in blocks[i:] if c.finding == b.finding)
            parts.append(f'<details class="more"><summary>The other {rest} candidates, '
                         "with their numbers</summary>")
            open_more = True
        colour = palette.mechanism_colour(b.name)
        body = [f'<div class="mech" data-mechanism="{escape(b.name)}"><header>'
                f'<span class="rank" style="background:{colour}">{b.rank}</span>'
                f'<span class="label">{escape(b.label)}</span>'
                f'<span class="bar"><span style="width:{100 * b.score:.0f}%;'
                f'background:{colour}"></span></span>'
                f'<span class="score">score {b.score:.2f}</span></header>'
                f'<p class="physics">{escape(b.physics)}</p>']
        if b.evidence:
            body.append("<h4>Evidence measured</h4>" + _ul(b.evidence))
        if b.numbers:
            body.append("<h4>Numbers</h4>" + _table(["quantity", "value", "meaning"],
                                                     b.numbers, numeric=(1,)))
        if b.discriminators:
            body.append("<h4>What would tell the candidates apart</h4>"
                        + _ul(b.discriminators))
        if b.assumptions:
            body.append("<h4>Assumed</h4>" + _ul(b.assumptions))
        if b.cautions:
            body.append("<h4>Cautions</h4>" + _ul(b.cautions))
        body.append("</div>")
        parts.append("".join(body))
    if current is not None and open_more:
        parts.append("</details>")
    assumed = text.explanation_assumptions(analysis)
    if assumed:
        parts.append("<h3>Assumptions for the whole recording</h3>" + _ul(assumed))
    return "".join(parts) or '<p class="missing">No mechanism was ranked.</p>'


def render_html(analysis: Any, *, figures: Mapping[str, bytes],
                renders: Mapping[str, Path] | None = None,
                out_dir: Path | None = None) -> str:
    """The report as one HTML document.

    Parameters
    ----------
    analysis : Analysis
    figures : mapping of name -> PNG bytes
        As from :func:`eddyphone.report.figures.all_figures` saved to PNG.
    renders : mapping of name -> Path, optional
        Teaching renders to link (and embed when small).
    out_dir : Path, optional
        Folder of the report, for relative links.
    """
    from eddyphone._version import __version__

    renders = dict(renders or {})
    stem = analysis.recording.stem
    s = palette.STATE_COLOURS
    stripe = "".join(f'<span style="background:{s[k]}"></span>'
                     for k in ("S1", "systole", "S2", "diastole"))
    head = (f'<header class="top"><div><p class="kicker">eddyphone heart-sound report</p>'
            f"<h1>{escape(stem)}</h1></div>"
            f'<div class="states" title="S1, systole, S2, diastole">{stripe}</div></header>'
            '<p class="notice">Decision support, not a diagnosis: confirm every finding '
            "clinically. This file was written on this machine and fetches nothing.</p>")
    sections = []
    n = 0

    def add(title: str, body: str, ident: str) -> None:
        nonlocal n
        n += 1
        sections.append(_section(n, title, body, ident=ident))

    add("Summary", _facts(text.headline(analysis), element_id="summary-facts"), "summary")
    add("Listen", _listen(analysis, renders, out_dir), "listen")
    cycle = "".join(_figure(k, figures[k], FIGURE_CAPTIONS[k])
                    for k in ("overview", "spectrogram", "ensemble") if k in figures)
    add("Heart sounds and cycle", _ul(text.rhythm_lines(analysis)) + cycle, "cycle")
    add("Findings", _findings(analysis, figures), "findings")
    add("Likely mechanisms and their physics", _mechanisms(analysis, figures), "mechanisms")
    qh, qr = text.quality_rows(analysis)
    sh, sr = text.skipped_rows(analysis)
    quality = _ul(text.quality_lines(analysis)) + _table(qh, qr, numeric=(1, 3, 4))
    if sr:
        quality += "<h3>Skipped by the segmentation</h3>" + _table(sh, sr, numeric=(0, 1))
    add("Recording quality and what was skipped", quality, "quality")
    bh, br = text.beat_rows(analysis)
    add("Beats", f"<details><summary>Show the {len(br)} beats (as in beats.csv)</summary>"
        + _table(bh, br, numeric=(0, 1, 2, 3, 4, 5, 6)) + "</details>", "beats")
    add("Cautions", '<div class="cautions">' + _ul(text.cautions(analysis)) + "</div>",
        "cautions")
    add("Provenance and configuration", _facts(text.provenance(analysis))
        + "<details><summary>Configuration (JSON)</summary><pre>"
        + escape(text.config_json(analysis)) + "</pre></details>", "provenance")
    foot = (f"<footer>Written by eddyphone {escape(__version__)}; JSON schema "
            f"{escape(str(analysis.to_dict()['schema_version']))}.</footer>")
    return ("<!DOCTYPE html><html lang=\"en\"><head><meta charset=\"utf-8\">"
            '<meta name="viewport" content="width=device-width, initial-scale=1">'
            f"<title>{escape(stem)} — eddyphone report</title><style>{_css()}</style></head>"
            f"<body><main>{head}{''.join(sections)}{foot}</main></body></html>")


def write_html(analysis: Any, path: str | Path, *, figures: Mapping[str, bytes],
               renders: Mapping[str, Path] | None = None) -> Path:
    """Write :func:`render_html` to ``path`` (atomic); returns the path."""
    from eddyphone.export import atomic_write_text

    path = Path(path)
    return atomic_write_text(path, render_html(analysis, figures=figures, renders=renders,
                                               out_dir=path.parent))
