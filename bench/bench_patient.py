"""Benchmark: murmur presence and phase per patient, over four auscultation sites.

Each case of :func:`eddyphone.simulate.benchmark_specs` becomes a patient recorded at
the aortic, pulmonic, tricuspid and mitral areas
(:func:`eddyphone.simulate.site_specs`: the same murmur, rate, rhythm, device, SNR
and kinds of noise, each site with its own seed, the murmur at the simulator's level
for that site). Each recording is conditioned, segmented (``--beats truth|hsmm``)
and described, and :func:`eddyphone.findings.summarise_patient` combines the four.

Truth: a patient has a murmur when at least one of the four recordings carries it
(``truth['murmur']['audible_in_recording']``); patients whose murmur no recording
carries are left out and counted apart; murmur-free patients count as absent. The
loudest site is the one with the highest truth level re S1. Printed, measured in this
run: patient presence accuracy (SNR >= 10 dB and overall), false patient calls,
phase of the patient's main murmur, the loudest site, extra murmur phases called,
the patients left with only a possible murmur (present in one recording only), and
beside them the same figures for the single recordings of the same run.

    python bench/bench_patient.py [--n 150] [--seed 1] [--beats truth|hsmm] [--jobs 2]
        [--rows rows.json]
"""

from __future__ import annotations

import json
import time
from collections import Counter
from concurrent.futures import ProcessPoolExecutor

from bench_findings import _acc, _prepare, draw_parser


def _patient(args: tuple) -> dict:
    """Generate, analyse and combine one patient's four recordings."""
    spec, beats_from = args
    from eddyphone.findings import describe, summarise_patient
    from eddyphone.simulate import site_specs

    t0 = time.perf_counter()
    sites = []
    for site, site_spec in site_specs(spec).items():
        case = _prepare(site_spec, beats_from)
        f = describe(case["x"], case["fs"], case["beats"])
        m = case["murmur"]
        sites.append({
            "site": site, "f": f, "t_audible": bool(m.get("audible_in_recording")),
            "t_level": m.get("level_db_re_s1"),
            "presence": f.presence,
            "murmurs": [{"phase": mm.phase, "presence": mm.presence,
                         "level": mm.level_db_re_s1, "confidence": mm.confidence,
                         "consistency": mm.consistency, "snr_db": mm.snr_db,
                         "timing": mm.timing, "shape": mm.shape, "pitch": mm.pitch}
                        for mm in f.murmurs],
        })
    p = summarise_patient([(s["site"], s.pop("f")) for s in sites])
    t_levels = {s["site"]: s["t_level"] for s in sites if s["t_level"] is not None}
    m = spec.murmur
    return {
        "seed": spec.seed, "snr_db": spec.snr_db, "device": spec.device,
        "hr": spec.heart_rate_bpm, "rhythm": spec.rhythm,
        "t_cause": m.cause if m is not None else "none",
        "t_phase": case["murmur"].get("phase"),
        "t_carried": any(s["t_audible"] for s in sites),
        "t_loudest": max(t_levels, key=t_levels.get) if t_levels else None,
        "sites": sites,
        "presence": p.presence,
        "phases": [pm.phase for pm in p.murmurs if not pm.possible],
        "possible": [pm.phase for pm in p.murmurs if pm.possible],
        "loudest": p.murmurs[0].loudest_site if p.presence == "present" else None,
        "t_s": time.perf_counter() - t0,
    }


#: A site whose truth level lies within this many dB of the loudest site's counts as
#: near the loudest: the measured level re S1 of one murmur spreads by about +-2 dB
#: from recording to recording through one device (10th-90th percentile, seed 1).
NEAR_DB = 3.0


def _near_loudest(r: dict) -> bool:
    t = {s["site"]: s["t_level"] for s in r["sites"] if s["t_level"] is not None}
    return r["loudest"] in t and t[r["loudest"]] >= max(t.values()) - NEAR_DB


def summarise(rows: list[dict], *, seed: int, beats: str, jobs: int, wall: float) -> None:
    """Print the patient-level figures and the single-recording ones beside them."""
    print(f"patients: {len(rows)} (seed {seed}, four sites each), beats from {beats}; "
          f"{sum(r['t_cause'] != 'none' for r in rows)} with a murmur as generated, "
          f"{sum(r['t_carried'] for r in rows)} carried by at least one recording")
    for name, sel in (("SNR >= 10 dB", [r for r in rows if r["snr_db"] >= 10]),
                      ("all SNR", rows)):
        scored = [r for r in sel if r["t_carried"] or r["t_cause"] == "none"]
        left = [r for r in sel if r["t_cause"] != "none" and not r["t_carried"]]
        pairs = [(r["t_carried"], r["presence"] == "present") for r in scored]
        print(f"patient presence, {name}: {_acc(pairs)}  ({len(left)} patients whose "
              f"murmur no recording carries left out, "
              f"{sum(r['presence'] == 'present' for r in left)} called present)")
        recs = [(s["t_audible"], s["presence"] == "present") for r in sel
                for s in r["sites"] if s["t_audible"] or r["t_cause"] == "none"]
        print(f"  single recordings, same run: {_acc(recs)}")
    normals = [r for r in rows if r["t_cause"] == "none"]
    fp = sum(r["presence"] == "present" for r in normals)
    fp_rec = sum(s["presence"] == "present" for r in normals for s in r["sites"])
    print(f"false murmur calls: {fp}/{len(normals)} murmur-free patients "
          f"({fp / max(len(normals), 1):.3f}); single recordings {fp_rec}/{4 * len(normals)} "
          f"({fp_rec / max(4 * len(normals), 1):.3f})")
    only = Counter("murmur-free" if r["t_cause"] == "none" else
                   "carried" if r["t_carried"] else "not carried"
                   for r in rows if r["presence"] != "present" and r["possible"])
    print(f"patients with only a possible murmur (present in one recording; patient "
          f"'uncertain'): {dict(only)}")
    det = [r for r in rows if r["snr_db"] >= 10 and r["t_carried"] and r["presence"] == "present"]
    print(f"on patients with a carried murmur called present, SNR >= 10 dB (n={len(det)}):")
    print(f"  phase of the main murmur  {_acc([(r['t_phase'], r['phases'][0]) for r in det])}")
    print(f"  phase among those called  "
          f"{_acc([(True, r['t_phase'] in r['phases']) for r in det])}")
    print(f"  a second murmur phase called as well: "
          f"{sum(len(r['phases']) > 1 for r in det)}/{len(det)}")
    print(f"  loudest site  {_acc([(r['t_loudest'], r['loudest']) for r in det])}")
    print(f"  loudest site within {NEAR_DB:.0f} dB of the truth's loudest  "
          f"{_acc([(True, _near_loudest(r)) for r in det])}")
    by = Counter((r["t_cause"], r["presence"] == "present")
                 for r in rows if r["snr_db"] >= 10 and r["t_carried"])
    print("per cause (SNR >= 10): patients called present / carried")
    for cause in sorted({c for c, _ in by}):
        print(f"  {cause:18s} {by[(cause, True)]}/{by[(cause, True)] + by[(cause, False)]}")
    per = sum(r["t_s"] for r in rows) / max(len(rows), 1)
    print(f"time per patient (four 15-s recordings, generated, conditioned, segmented, "
          f"described): {per:.2f} s; wall {wall:.1f} s with {jobs} jobs")


def main() -> None:
    ap = draw_parser(__doc__)
    ap.add_argument("--rows", help="also write the per-patient rows to this JSON file")
    a = ap.parse_args()
    from eddyphone.simulate import benchmark_specs

    specs = benchmark_specs(a.n, seed=a.seed)
    t0 = time.perf_counter()
    with ProcessPoolExecutor(a.jobs) as ex:
        rows = list(ex.map(_patient, [(s, a.beats) for s in specs], chunksize=2))
    wall = time.perf_counter() - t0
    if a.rows:
        with open(a.rows, "w") as fh:
            json.dump(rows, fh, indent=1, default=str)
    summarise(rows, seed=a.seed, beats=a.beats, jobs=a.jobs, wall=wall)


if __name__ == "__main__":
    main()
