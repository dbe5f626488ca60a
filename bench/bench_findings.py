"""Benchmark: murmur findings on the simulator's graded benchmark set.

Generates ``--n`` cases with :func:`eddyphone.simulate.benchmark_specs`, conditions
them, takes the beats from the simulator's truth segments (``--beats truth``) or
from the segmenter (``--beats hsmm``), runs :func:`eddyphone.findings.describe` and
prints, measured in this run: presence accuracy (SNR >= 10 dB and overall), phase,
timing, shape and pitch accuracy on detected true murmurs, grade within one step,
false murmur calls on normal recordings, seconds per case, and the worst cases.

Truth: ``truth.json['murmur']``. Presence is scored on what the recording carries:
murmurs with ``audible_in_recording`` as present, murmur-free cases as absent; the
generated murmurs the recording does not carry (below grade I, or under the noise in
every band) are left out and counted apart, and the old "as generated" figure is
printed as a secondary line. Pitch is compared with the truth's ``pitch`` (at the
chest surface, after the chest wall). Timing and shape are compared with the simulator's
*measured* labels (its rules applied to the clean murmur envelope) and, for
reference, with its designed labels. Grades above III are compared as "III or
more" (sound alone cannot show the thrill that grades IV-VI need).

    python bench/bench_findings.py [--n 150] [--seed 1] [--beats truth|hsmm] [--jobs 2]
        [--rows rows.json] [--cache DIR]
"""

from __future__ import annotations

import argparse
import hashlib
import pickle
import time
from collections import Counter
from concurrent.futures import ProcessPoolExecutor
from pathlib import Path

from scipy.stats import binomtest


def _prepare(spec, beats_from: str) -> dict:
    """Generate, condition and segment one case (what the findings take as input)."""
    from eddyphone.condition import condition
    from eddyphone.segment.beats import Segment, beats_from_segments
    from eddyphone.simulate import generate

    sim = generate(spec)
    c = condition(sim.x, sim.fs)
    if beats_from == "truth":
        segs = [Segment(a, b, lab) for a, b, lab in sim.segments]
        beats = beats_from_segments(segs, [1.0] * len(segs))
    else:
        from eddyphone.segment import segment

        beats = segment(c.x, c.fs).beats
    return {"x": c.x, "fs": c.fs, "beats": beats, "murmur": sim.truth["murmur"],
            "events": sim.events}


def _one(args: tuple) -> dict:
    spec, beats_from, cache = args
    from eddyphone.findings import describe

    t0 = time.perf_counter()
    # keyed by the whole case (a draw's case seed alone names different cases for
    # different --n)
    key = hashlib.sha1(repr(spec).encode()).hexdigest()[:12]
    path = Path(cache) / f"{spec.seed}_{key}_{beats_from}.pkl" if cache else None
    if path is not None and path.exists():
        with open(path, "rb") as fh:
            case = pickle.load(fh)
    else:
        case = _prepare(spec, beats_from)
        if path is not None:
            with open(path, "wb") as fh:
                pickle.dump(case, fh)
    t1 = time.perf_counter()
    f = describe(case["x"], case["fs"], case["beats"])
    t2 = time.perf_counter()
    return row(spec, case["murmur"], case["events"], case["beats"], f, t1 - t0, t2 - t1)


def row(spec, m: dict, events, beats, f, t_prep_s: float, t_findings_s: float) -> dict:
    """One benchmark row: the case, its truth (``m`` = ``truth['murmur']``) and what
    the findings read."""
    main = f.main()
    return {
        "seed": spec.seed, "snr_db": spec.snr_db, "device": spec.device, "hr": spec.heart_rate_bpm,
        "rhythm": spec.rhythm, "friction": spec.friction_per_min, "breathing": spec.breathing,
        "t_present": bool(m.get("present")), "t_cause": m.get("cause"),
        "t_phase": m.get("phase"), "t_timing": (m.get("measured") or {}).get("timing"),
        "t_timing_designed": m.get("timing"), "t_shape": (m.get("measured") or {}).get("shape"),
        "t_shape_designed": m.get("shape"), "t_pitch": m.get("pitch"),
        "t_grade": m.get("grade"), "t_level": m.get("level_db_re_s1"),
        "t_centre": m.get("centre_hz"), "t_pitch_source": m.get("pitch_source"),
        "mnr_db": m.get("murmur_to_noise_db"),
        "t_audible": bool(m.get("audible_in_recording")),
        "t_inaudible_reason": m.get("inaudible_reason", ""),
        "presence": f.presence, "phase": main.phase if main else None,
        "timing": main.timing if main else None, "shape": main.shape if main else None,
        "pitch": main.pitch if main else None,
        "grade": tuple(main.grade_range) if main else None,
        "level": main.level_db_re_heart_sounds if main else None,
        "centroid": main.centroid_hz if main else None,
        "reason": f.presence_reason, "n_beats": len(beats),
        "t_extras": sorted({lab for _, _, lab in events} & {"S3", "S4", "click", "snap"}),
        # the share of cycles the simulator gave each extra sound (at fast rates it
        # leaves an S3 or snap out of the cycles with no room for it)
        "t_extra_share": {k: sum(lab == k for _, _, lab in events)
                          / max(sum(lab == "M1" for _, _, lab in events), 1)
                          for k in ("S3", "S4", "click", "snap")},
        "extras": sorted(e.kind for e in f.extra_sounds),
        "t_split": spec.s2_split,
        "split": next(({True: "varies", False: "fixed", None: "narrow"}[e.details["varies"]]
                       for e in f.extra_sounds if e.kind == "split_S2"), "none"),
        "t_prep_s": t_prep_s, "t_findings_s": t_findings_s,
    }


def _acc(pairs: list[tuple]) -> str:
    if not pairs:
        return "n/a (0)"
    ok = sum(a == b for a, b in pairs)
    ci = binomtest(ok, len(pairs)).proportion_ci(method="wilson")
    return f"{ok / len(pairs):.3f} ({ok}/{len(pairs)}; 95 % interval {ci.low:.2f}-{ci.high:.2f})"


def draw_parser(doc: str) -> argparse.ArgumentParser:
    """Options the findings benchmarks share: the draw (``--n``, ``--seed``), where the
    beats come from (``--beats``) and the worker processes (``--jobs``)."""
    ap = argparse.ArgumentParser(description=doc.splitlines()[0])
    ap.add_argument("--n", type=int, default=150)
    ap.add_argument("--seed", type=int, default=1)
    ap.add_argument("--beats", choices=("truth", "hsmm"), default="truth")
    ap.add_argument("--jobs", type=int, default=2)
    return ap


def main() -> None:
    ap = draw_parser(__doc__)
    ap.add_argument("--worst", type=int, default=12)
    ap.add_argument("--rows", help="also write the per-case rows to this JSON file")
    ap.add_argument("--cache", help="keep each case's conditioned samples and beats in this "
                    "folder and reuse them on later runs, so that two runs differ only by the "
                    "findings code (the segmenter changes too; the timing line then counts "
                    "loading, not generating)")
    a = ap.parse_args()
    from eddyphone.simulate import benchmark_specs

    specs = benchmark_specs(a.n, seed=a.seed)
    if a.cache:
        Path(a.cache).mkdir(parents=True, exist_ok=True)
    t0 = time.perf_counter()
    with ProcessPoolExecutor(a.jobs) as ex:
        rows = list(ex.map(_one, [(s, a.beats, a.cache) for s in specs], chunksize=2))
    wall = time.perf_counter() - t0
    if a.rows:
        import json

        with open(a.rows, "w") as fh:
            json.dump(rows, fh, indent=1, default=str)
    summarise(rows, seed=a.seed, beats=a.beats, jobs=a.jobs, wall=wall, worst=a.worst)


def summarise(rows: list[dict], *, seed: int, beats: str, jobs: int, wall: float,
              worst: int = 12) -> None:
    """Print the benchmark figures from the per-case rows."""
    hi = [r for r in rows if r["snr_db"] >= 10]
    print(f"benchmark set: {len(rows)} cases (seed {seed}), beats from {beats}; "
          f"{sum(r['t_present'] for r in rows)} with a murmur as generated, "
          f"{sum(r['t_audible'] for r in rows)} of them carried by the recording")
    # headline: murmurs the recording carries (truth 'audible_in_recording') against
    # murmur-free cases; murmurs generated but not carried are left out
    for name, sel in (("SNR >= 10 dB", hi), ("all SNR", rows)):
        scored = [r for r in sel if r["t_audible"] or r["t_cause"] == "none"]
        out = [r for r in sel if r["t_cause"] != "none" and not r["t_audible"]]
        strict = [(r["t_audible"], r["presence"] == "present") for r in scored]
        unc = sum(r["presence"] == "uncertain" for r in scored)
        why = Counter(r["t_inaudible_reason"] for r in out)
        print(f"presence accuracy, {name}: {_acc(strict)}  (uncertain counted as not "
              f"present; {unc} uncertain; {len(out)} murmurs not carried by the recording "
              f"left out {dict(why)}, {sum(r['presence'] == 'present' for r in out)} of "
              f"them called present)")
    # the same cases with 'uncertain' taken as the tool declining to decide: how often
    # it is right when it does decide, and how often it declines
    scored_hi = [r for r in hi if r["t_audible"] or r["t_cause"] == "none"]
    decided = [(r["t_audible"], r["presence"] == "present") for r in scored_hi
               if r["presence"] != "uncertain"]
    undecided = Counter(bool(r["t_audible"]) for r in scored_hi if r["presence"] == "uncertain")
    print(f"  on the cases it decides, SNR >= 10 dB: {_acc(decided)}; undecided "
          f"{len(scored_hi) - len(decided)}/{len(scored_hi)} (murmurs {undecided[True]}, "
          f"murmur-free {undecided[False]})")
    for name, sel in (("SNR >= 10 dB", hi), ("all SNR", rows)):
        pairs = [(r["t_present"], r["presence"] == "present") for r in sel]
        print(f"  as generated (every generated murmur counted present), {name}: "
              f"{_acc(pairs)}")
    print("detection rate by recorded murmur-to-noise ratio (dB):")
    for lo, hi_ in ((-99, -10), (-10, -5), (-5, 0), (0, 5), (5, 10), (10, 99)):
        sel = [r for r in rows if r["t_cause"] != "none" and r["mnr_db"] is not None
               and lo <= r["mnr_db"] < hi_]
        if sel:
            k = sum(r["presence"] == "present" for r in sel)
            print(f"  [{lo:4d}, {hi_:3d}): {k}/{len(sel)}")
    det = [r for r in hi if r["t_audible"] and r["presence"] == "present"]
    print(f"on detected true murmurs, SNR >= 10 dB (n={len(det)}):")
    print(f"  phase  {_acc([(r['t_phase'], r['phase']) for r in det])}")
    tm = [r for r in det if r["t_timing"]]
    tn = [r for r in tm if r["t_phase"] != "continuous"]
    print(f"  timing {_acc([(r['t_timing'], r['timing']) for r in tn])}   (designed labels: "
          f"{_acc([(r['t_timing_designed'], r['timing']) for r in tn])})")
    print(f"  shape  {_acc([(r['t_shape'], r['shape']) for r in tm])}   (designed labels: "
          f"{_acc([(r['t_shape_designed'], r['shape']) for r in tm])})")
    print(f"  pitch  {_acc([(r['t_pitch'], r['pitch']) for r in det])}")
    cont = [r for r in rows if r["t_phase"] == "continuous" and r["presence"] == "present"]
    wrong_cont = sum(r["phase"] == "continuous" for r in rows
                     if r["t_present"] and r["t_phase"] != "continuous")
    print(f"continuous murmurs read as continuous (all SNR, detected ones): "
          f"{sum(r['phase'] == 'continuous' for r in cont)}/{len(cont)}; continuous calls on "
          f"other murmurs: {wrong_cont}")

    def within(r: dict) -> bool:
        g = min(int(r["t_grade"]), 3)
        lo, hi_ = r["grade"]
        return lo - 1 <= g <= hi_ + 1

    gw = [within(r) for r in det]
    print(f"  grade within one step (truth IV+ read as III): "
          f"{(sum(gw) / len(gw) if gw else float('nan')):.3f} ({sum(gw)}/{len(gw)})")
    normals = [r for r in rows if not r["t_present"] and r["t_cause"] == "none"]
    fp = [r for r in normals if r["presence"] == "present"]
    fu = [r for r in normals if r["presence"] == "uncertain"]
    noisy = [r for r in normals if r["friction"] > 0 or r["breathing"] >= 0.3]
    print(f"false murmur calls on normal recordings: {len(fp)}/{len(normals)} = "
          f"{len(fp) / max(len(normals), 1):.3f} present, {len(fu)} uncertain; "
          f"with breathing >= 0.3 or friction: "
          f"{sum(r['presence'] == 'present' for r in noisy)}/{len(noisy)}")
    print("per cause (SNR >= 10): detected / carried by the recording")
    by = Counter((r["t_cause"], r["presence"] == "present") for r in hi if r["t_audible"])
    for cause in sorted({r["t_cause"] for r in hi if r["t_audible"]}):
        print(f"  {cause:18s} {by[(cause, True)]}/{by[(cause, True)] + by[(cause, False)]}")
    conf = Counter((r["t_timing"], r["timing"]) for r in det)
    print("timing confusions (truth, found):", dict(conf))
    conf = Counter((r["t_shape"], r["shape"]) for r in det)
    print("shape confusions (truth, found):", dict(conf))
    conf = Counter((r["t_pitch"], r["pitch"], r["device"]) for r in det
                   if r["t_pitch"] != r["pitch"])
    print("pitch errors (truth, found, device):", dict(conf))
    print("extra sounds, SNR >= 10: found where the simulator sounded it in at least half "
          "the cycles (as reported) / in fewer / called where it has none")
    names = {"S3": "S3", "S4": "S4", "click": "ejection_click", "snap": "opening_snap"}
    for t_name, kind in names.items():
        share = [r["t_extra_share"][t_name] if t_name in r["t_extras"] else 0.0 for r in hi]
        groups = ([r for r, v in zip(hi, share) if v >= 0.5],
                  [r for r, v in zip(hi, share) if 0 < v < 0.5],
                  [r for r, v in zip(hi, share) if v == 0])
        most, few, none = (f"{sum(kind in r['extras'] for r in g)}/{len(g)}" for g in groups)
        print(f"  {kind:15s} {most:>7s}   in fewer {few:>5s}   false {none}")
    conf = Counter((r["t_split"], r["split"]) for r in hi if "t_split" in r)
    print("split S2, SNR >= 10 (simulated kind: reported none / fixed / varies / "
          "steady but narrow):")
    for kind in sorted({k for k, _ in conf}):
        print(f"  {kind:13s} " + " / ".join(str(conf[(kind, v)])
                                            for v in ("none", "fixed", "varies", "narrow")))
    prep = sum(r["t_prep_s"] for r in rows) / len(rows)
    fnd = sum(r["t_findings_s"] for r in rows) / len(rows)
    print(f"time per 15-s case: findings {fnd * 1000:.0f} ms, generate+condition+beats "
          f"{prep * 1000:.0f} ms (ratio findings/rest {fnd / prep:.2f}); wall {wall:.1f} s "
          f"with {jobs} jobs")
    wrong = [r for r in hi if (r["t_audible"] or r["t_cause"] == "none")
             and r["t_audible"] != (r["presence"] == "present")]
    wrong.sort(key=lambda r: -r["snr_db"])
    print(f"worst presence errors at SNR >= 10 (of {len(wrong)}):")
    for r in wrong[: worst]:
        print(f"  seed {r['seed']} snr {r['snr_db']:.1f} {r['device']:10s} hr {r['hr']:.0f} "
              f"{r['rhythm']:9s} truth {r['t_cause']} g{r['t_grade']} L{r['t_level'] or 0:.0f} "
              f"MNR {r['mnr_db'] if r['mnr_db'] is not None else float('nan'):.0f}"
              f" -> {r['presence']}: {r['reason'][:110]}")



if __name__ == "__main__":
    main()
