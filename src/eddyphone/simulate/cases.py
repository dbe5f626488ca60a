"""Case lists: the demo set of ``sample_audio/`` and the graded benchmark set.

Public functions
----------------
demo_specs
    The demo cases by name (a fictional community clinic's afternoon list).
benchmark_specs
    ``n`` graded cases over SNR, heart rate, murmur cause, rate and device.
site_specs
    One case recorded at each auscultation site (a patient's examination round).
write_demo, write_benchmark
    Generate and write a set, with an ``index.csv``.
"""

from __future__ import annotations

import csv
from pathlib import Path

import numpy as np

from eddyphone.simulate.chain import DEVICES
from eddyphone.simulate.spec import MURMUR_CAUSES, SITES, CaseSpec, MurmurSpec

#: The invented scenario of the demo set.
DEMO_SCENARIO = ("Afternoon list of the Quillan Row Community Clinic, a fictional clinic: "
                 "ten recordings taken by its nurse practitioner, and one patient examined "
                 "at all four areas. Every patient is invented and every sound is synthetic.")

#: The demo patient examined at the four areas: its recordings are named
#: ``<DEMO_PATIENT_PREFIX><site>`` and ``index.csv`` names the patient.
DEMO_PATIENT = "QR-11"
DEMO_PATIENT_PREFIX = "11_four_areas_"

#: What the clinic's chart says about each demo patient (invented): the patient
#: context a clinician would pass with the sound, written to the demo's
#: ``manifest.csv`` (columns of :mod:`eddyphone.io.manifest`). The anemic patient's
#: blood count is on file; the runner came straight from a training run.
DEMO_CHART: dict[str, dict[str, object]] = {
    "02_runner_after_exercise": {"age_years": 23, "states": ("exercise",)},
    "03_older_adult_outflow": {"age_years": 78},
    "04_severe_anemia": {"age_years": 41, "hematocrit": 0.19},
    "10_continuous_shunt": {"age_years": 19},
    **{f"{DEMO_PATIENT_PREFIX}{site}": {"age_years": 66} for site in SITES},
}
#: Columns of the demo's ``manifest.csv``.
DEMO_MANIFEST_FIELDS = ("path", "patient", "site", "age_years", "hematocrit", "states")


def _d_from_area_cm2(area_cm2: float) -> float:
    return float(np.sqrt(4 * area_cm2 * 1e-4 / np.pi))


def demo_specs() -> dict[str, CaseSpec]:
    """The demo set: ten single recordings and one patient's four areas (fourteen
    cases), each at most 20 s at 4 kHz, 16-bit.

    Returns
    -------
    dict
        Case id to :class:`CaseSpec`, in list order.
    """
    base = CaseSpec(duration_s=15.0, fs=4000.0, bit_depth=16)
    cases = {
        "01_resting_adult": base.with_(
            heart_rate_bpm=66, rsa_swing_bpm=6, site="mitral", device="diaphragm", snr_db=24,
            breathing=0.35, seed=101,
            note="Resting adult, routine check; no murmur"),
        "02_runner_after_exercise": base.with_(
            heart_rate_bpm=112, respiration_per_min=22, rsa_swing_bpm=3, site="pulmonic",
            device="bell", snr_db=20, breathing=0.6, s3=True, seed=102,
            murmur=MurmurSpec(cause="high_flow", diameter_m=0.021, velocity_m_s=2.1,
                              hematocrit=0.44),
            note="Young runner just after a training run; soft flow murmur and S3"),
        "03_older_adult_outflow": base.with_(
            heart_rate_bpm=74, site="aortic", device="diaphragm", snr_db=22, breathing=0.3,
            s4=True, s2_split="single", seed=103,
            murmur=MurmurSpec(cause="narrowed_outflow", diameter_m=_d_from_area_cm2(0.8),
                              velocity_m_s=4.3),
            note="Older adult, breathless on stairs; narrowed outflow valve, late-peaking"),
        "04_severe_anemia": base.with_(
            heart_rate_bpm=104, site="pulmonic", device="diaphragm", snr_db=22, breathing=0.4,
            seed=104,
            murmur=MurmurSpec(cause="low_viscosity", diameter_m=0.022, velocity_m_s=1.8,
                              hematocrit=0.19),
            note="Adult with severe anemia (hematocrit 19%); soft early ejection murmur"),
        "05_systolic_leak": base.with_(
            heart_rate_bpm=82, site="mitral", device="diaphragm", snr_db=20, breathing=0.3,
            s3=True, seed=105,
            murmur=MurmurSpec(cause="systolic_leak", diameter_m=0.005, velocity_m_s=5.0),
            note="Adult with a leaking inflow valve; holosystolic plateau murmur"),
        "06_noisy_room": base.with_(
            heart_rate_bpm=78, site="tricuspid", device="diaphragm", snr_db=8, breathing=0.4,
            speech=0.45, friction_per_min=14, hum_hz=50.0, hum_db=-12, seed=106,
            note="Normal heart recorded in a busy waiting room: speech, friction, mains hum"),
        "07_fast_irregular": base.with_(
            heart_rate_bpm=128, rhythm="irregular", site="mitral", device="steep_tilt",
            snr_db=18,
            breathing=0.3, seed=107,
            note="Palpitations; fast irregular rhythm, no murmur"),
        "08_diastolic_rumble": base.with_(
            heart_rate_bpm=78, site="mitral", device="bell", snr_db=22, breathing=0.25,
            opening_snap=True, seed=108,
            murmur=MurmurSpec(cause="narrowed_inflow", diameter_m=_d_from_area_cm2(1.0),
                              velocity_m_s=2.3),
            note="Narrowed inflow valve: opening snap, mid-diastolic rumble, "
                 "presystolic accent"),
        "09_diastolic_leak": base.with_(
            heart_rate_bpm=64, site="tricuspid", device="diaphragm", snr_db=24, breathing=0.3,
            seed=109,
            murmur=MurmurSpec(cause="diastolic_leak", diameter_m=0.005, velocity_m_s=4.2),
            note="Leaking outflow valve; blowing decrescendo from A2 on through diastole"),
        "10_continuous_shunt": base.with_(
            heart_rate_bpm=96, site="pulmonic", device="diaphragm", snr_db=22, breathing=0.3,
            ectopic_rate=0.05, seed=110,
            murmur=MurmurSpec(cause="continuous", diameter_m=0.006, velocity_m_s=4.5),
            note="Young adult with an open shunt; continuous murmur through S2, "
                 "occasional early beats"),
    }
    round_ = base.with_(
        heart_rate_bpm=72, site="mitral", device="diaphragm", snr_db=22, breathing=0.3,
        seed=111,
        murmur=MurmurSpec(cause="systolic_leak", diameter_m=0.004, velocity_m_s=5.0))
    for site, spec in site_specs(round_).items():
        cases[f"{DEMO_PATIENT_PREFIX}{site}"] = spec.with_(
            note=f"Patient {DEMO_PATIENT}, breathless on exertion, examined at the four "
                 f"areas: {site} area; leaking inflow valve, loudest at the apex")
    return cases


def _draw_murmur(cause: str, rng: np.random.Generator) -> MurmurSpec:
    u = rng.uniform
    if cause == "high_flow":
        # about a third musical (a thin structure in the stream sheds vortices)
        tone = u(0.0015, 0.003) if rng.uniform() < 0.35 else None
        return MurmurSpec(cause, diameter_m=u(0.018, 0.024), velocity_m_s=u(1.6, 2.5),
                          hematocrit=u(0.38, 0.48), tone_diameter_m=tone)
    if cause == "low_viscosity":
        return MurmurSpec(cause, diameter_m=u(0.019, 0.024), velocity_m_s=u(1.4, 2.1),
                          hematocrit=u(0.15, 0.28))
    if cause == "wall_irregularity":
        return MurmurSpec(cause, diameter_m=u(0.020, 0.026), velocity_m_s=u(1.3, 2.0),
                          hematocrit=u(0.38, 0.47), transition_factor=u(0.3, 0.6))
    if cause == "narrowed_outflow":
        # severity ties the two together: a smaller valve area gives a faster jet
        sev = u(0.0, 1.0)
        return MurmurSpec(cause, diameter_m=_d_from_area_cm2(1.5 - 0.9 * sev + u(-0.1, 0.1)),
                          velocity_m_s=float(np.clip(2.5 + 2.5 * sev + u(-0.3, 0.3), 2.2, 5.5)),
                          hematocrit=u(0.36, 0.48))
    if cause == "systolic_leak":
        return MurmurSpec(cause, diameter_m=u(0.003, 0.008), velocity_m_s=u(4.0, 6.0))
    if cause == "diastolic_leak":
        return MurmurSpec(cause, diameter_m=u(0.003, 0.007), velocity_m_s=u(3.0, 4.8))
    if cause == "narrowed_inflow":
        sev = u(0.0, 1.0)
        return MurmurSpec(cause, diameter_m=_d_from_area_cm2(2.0 - 1.2 * sev + u(-0.1, 0.1)),
                          velocity_m_s=float(np.clip(1.5 + 1.0 * sev + u(-0.15, 0.15), 1.3, 2.7)))
    return MurmurSpec("continuous", diameter_m=u(0.003, 0.007), velocity_m_s=u(3.5, 5.0))


def benchmark_specs(n: int, *, seed: int = 0, duration_s: float = 15.0) -> list[CaseSpec]:
    """A graded benchmark set of ``n`` cases.

    SNR is spread evenly over 0-30 dB and heart rate over 40-180 bpm (stratified, then
    shuffled); about a third of the cases have no murmur and the rest cycle through
    every murmur cause; sample rates 2, 3, 4 and 8 kHz; every device response; about
    one case in five is irregular; breathing everywhere, friction, hum and speech in
    some, in normal and murmur cases alike (and about one in seven with the breath
    held); lung crackles or wheezes in one in five; heart-rate trends, slow drift of
    the sounds' pitch and loudness, unit-to-unit device ripple, slow gain wander and DC
    offsets.

    Parameters
    ----------
    n : int
        Number of cases (1 or more).
    seed : int
        Seed of the draw; case ``i`` gets seed ``seed * 100003 + i``.
    duration_s : float
        Length of each case.
    """
    from eddyphone.errors import ParameterError

    if n < 1:
        raise ParameterError(f"n={n!r} must be at least 1")
    rng = np.random.default_rng(seed)
    snr = rng.permutation(np.linspace(0.0, 30.0, n)) if n > 1 else np.array([15.0])
    hr = rng.permutation(np.linspace(40.0, 180.0, n)) if n > 1 else np.array([75.0])
    causes = [c for c in MURMUR_CAUSES if c != "none"]
    labels = []
    for i in range(n):
        labels.append("none" if i % 3 == 0 else causes[(i - i // 3 - 1) % len(causes)])
    labels = list(rng.permutation(labels))
    devices = sorted(DEVICES)
    out = []
    for i in range(n):
        cause = labels[i]
        irregular = rng.uniform() < 0.2
        murmur = None if cause == "none" else _draw_murmur(cause, rng)
        sinus = not irregular
        # about one case in seven is recorded with the breath held: no breath sounds,
        # no sinus arrhythmia, no respiratory splitting
        held = rng.uniform() < 0.15
        out.append(CaseSpec(
            heart_rate_bpm=float(np.round(hr[i], 1)),
            rhythm="irregular" if irregular else "sinus",
            ectopic_rate=float(rng.choice([0.0, 0.0, 0.0, 0.04, 0.1])),
            respiration_per_min=float(rng.uniform(10, 24)),
            breath_held=bool(held),
            rsa_swing_bpm=0.0 if held else float(rng.uniform(1, 10)),
            heart_rate_trend_bpm_per_min=float(rng.choice([0.0] * 5 + [rng.uniform(-30, 10)]))
            if sinus else 0.0,
            duration_s=duration_s,
            fs=float(rng.choice([2000.0, 3000.0, 4000.0, 4000.0, 8000.0])),
            bit_depth=16,
            sex=str(rng.choice(["male", "female"])),
            murmur=murmur,
            s3=bool(rng.uniform() < 0.15),
            s4=bool(sinus and rng.uniform() < 0.12),
            ejection_click=bool(cause == "narrowed_outflow" and rng.uniform() < 0.3),
            opening_snap=bool(cause == "narrowed_inflow" and rng.uniform() < 0.7),
            s2_split=str(rng.choice(["physiological"] * 7 + ["fixed", "single", "paradoxical"])),
            snr_db=float(np.round(snr[i], 2)),
            device=devices[i % len(devices)] if rng.uniform() < 0.8 else "steep_tilt",
            chest_wall_cutoff_hz=float(rng.uniform(150, 600)),
            breathing=0.0 if held else float(rng.uniform(0.1, 0.7)),
            speech=float(rng.choice([0.0, 0.0, 0.0, rng.uniform(0.1, 0.5)])),
            friction_per_min=float(rng.choice([0.0, 0.0, rng.uniform(2, 20)])),
            hum_hz=rng.choice([None, None, None, None, 50.0, 60.0]),
            hum_db=float(rng.uniform(-30, -6)),
            peak_dbfs=float(rng.uniform(-12, -0.5)),
            overdrive_db=float(rng.choice([0.0] * 9 + [rng.uniform(1, 6)])),
            site=str(rng.choice(SITES)),
            precordial_motion=float(rng.uniform(0.0, 0.8)),
            timbre_drift=float(rng.uniform(0.0, 0.12)),
            respiratory_loudness=float(rng.uniform(0.0, 0.3)),
            adventitious=str(rng.choice(["none"] * 8 + ["crackles", "wheeze"])),
            adventitious_db=float(rng.uniform(-24, -6)),
            device_ripple_db=float(rng.uniform(0.0, 3.0)),
            gain_wander_db=float(rng.choice([0.0, 0.0, rng.uniform(1, 6)])),
            noise_wander_db=float(rng.choice([0.0, rng.uniform(1, 8)])),
            dc_offset=float(rng.choice([0.0] * 4 + [rng.uniform(-0.02, 0.02)])),
            seed=int(seed * 100003 + i),
            note=f"benchmark case {i}",
        ))
    return out


_INDEX_FIELDS = ["id", "file", "truth_csv", "truth_json", "heart_rate_bpm", "rhythm",
                 "n_premature", "fs_hz", "duration_s", "snr_db", "device", "site",
                 "patient", "murmur_present", "murmur_audible_in_recording", "murmur_to_noise_db",
                 "murmur_cause", "murmur_phase", "murmur_timing",
                 "murmur_shape", "murmur_measured_timing", "murmur_measured_shape",
                 "murmur_grade", "murmur_level_db_re_s1", "murmur_pitch", "murmur_quality",
                 "murmur_centre_hz", "reynolds", "peak_velocity_m_s", "diameter_m",
                 "hematocrit", "s3", "s4", "click", "snap", "s2_split", "breathing",
                 "speech", "friction_per_min", "hum_hz", "clipped_fraction", "note"]


def _index_row(case_id: str, sim, spec: CaseSpec) -> dict:
    t = sim.truth
    m = t["murmur"]
    phys = m.get("physics", {})
    return {
        "id": case_id, "file": f"{case_id}.wav", "truth_csv": f"{case_id}.truth.csv",
        "truth_json": f"{case_id}.truth.json",
        "heart_rate_bpm": round(t["rhythm"]["heart_rate_bpm"], 2),
        "rhythm": spec.rhythm, "n_premature": t["rhythm"]["n_premature"],
        "fs_hz": int(spec.fs), "duration_s": spec.duration_s,
        "snr_db": round(t["noise"]["snr_db"], 2), "device": spec.device, "site": spec.site,
        "patient": DEMO_PATIENT if case_id.startswith(DEMO_PATIENT_PREFIX) else "",
        "murmur_present": m["present"],
        "murmur_audible_in_recording": m.get("audible_in_recording", False),
        "murmur_to_noise_db": round(m["murmur_to_noise_db"], 1)
        if m.get("murmur_to_noise_db") is not None else "",
        "murmur_cause": m["cause"],
        "murmur_phase": m.get("phase", ""), "murmur_timing": m.get("timing", ""),
        "murmur_shape": m.get("shape", ""),
        "murmur_measured_timing": (m.get("measured") or {}).get("timing") or "",
        "murmur_measured_shape": (m.get("measured") or {}).get("shape") or "",
        "murmur_grade": m.get("grade", 0),
        "murmur_level_db_re_s1": round(m["level_db_re_s1"], 2) if "level_db_re_s1" in m else "",
        "murmur_pitch": m.get("pitch", ""), "murmur_quality": m.get("quality", ""),
        "murmur_centre_hz": round(m["centre_hz"], 1) if "centre_hz" in m else "",
        "reynolds": round(phys["reynolds"]) if phys else "",
        "peak_velocity_m_s": round(phys["peak_velocity_m_s"], 3) if phys else "",
        "diameter_m": round(phys["diameter_m"], 5) if phys else "",
        "hematocrit": round(phys["hematocrit"], 3) if phys else "",
        "s3": spec.s3, "s4": spec.s4, "click": spec.ejection_click, "snap": spec.opening_snap,
        "s2_split": spec.s2_split, "breathing": round(spec.breathing, 3),
        "speech": round(spec.speech, 3), "friction_per_min": round(spec.friction_per_min, 2),
        "hum_hz": spec.hum_hz or "", "clipped_fraction": t["recording"]["clipped_fraction"],
        "note": spec.note,
    }


def _write_set(specs: dict[str, CaseSpec], out_dir: str | Path, *, overwrite: bool,
               index_name: str = "index.csv") -> Path:
    from eddyphone.errors import InputError
    from eddyphone.simulate.generator import generate
    from eddyphone.simulate.writer import write

    out = Path(out_dir)
    index = out / index_name
    if index.exists() and not overwrite:
        raise InputError(str(index), "already exists and would be overwritten",
                         "choose another --out folder or pass --overwrite")
    if not overwrite:
        for case_id in specs:
            for suffix in (".wav", ".truth.csv", ".truth.json"):
                p = out / f"{case_id}{suffix}"
                if p.exists():
                    raise InputError(str(p), "already exists and would be overwritten",
                                     "choose another --out folder or pass --overwrite")
    rows = []
    for case_id, spec in specs.items():
        sim = generate(spec)
        write(sim, out, case_id, overwrite=overwrite)
        rows.append(_index_row(case_id, sim, spec))
    if index.exists():
        # rewriting some cases of a folder keeps the index rows of the others
        with open(index) as fh:
            old = [r for r in csv.DictReader(fh) if r.get("id") not in specs]
        if old and set(old[0]) == set(_INDEX_FIELDS):
            rows = sorted(old + rows, key=lambda r: r["id"])
    with open(index, "w", newline="") as fh:
        w = csv.DictWriter(fh, fieldnames=_INDEX_FIELDS, lineterminator="\n")
        w.writeheader()
        w.writerows(rows)
    return index


def site_specs(spec: CaseSpec) -> dict[str, CaseSpec]:
    """The case recorded at each auscultation site of :data:`SITES`.

    Same murmur, rate, rhythm, device, SNR and kinds of noise; each site its own
    seed (``10 * spec.seed + k``: its own beats, breaths and noise), and the murmur at
    the simulator's level for that site.
    """
    return {site: spec.with_(site=site, seed=10 * spec.seed + k)
            for k, site in enumerate(SITES)}


def write_benchmark(out_dir: str | Path, n: int, seed: int = 0, *, overwrite: bool = False
                    ) -> Path:
    """Generate ``benchmark_specs(n, seed=seed)`` into ``out_dir`` with ``index.csv``.

    Returns the path of the index file.
    """
    specs = {f"bench_{seed:03d}_{i:04d}": s for i, s in
             enumerate(benchmark_specs(n, seed=seed))}
    return _write_set(specs, out_dir, overwrite=overwrite)


_ROMAN = ("-", "I", "II", "III", "IV", "V", "VI")


def demo_readme(index_rows: list[dict], specs: dict[str, CaseSpec]) -> str:
    """The ``README.md`` of a demo folder: the scenario, a table of cases, the file layout."""
    lines = [
        "# Demo recordings (synthetic)",
        "",
        "**Every recording in this folder is synthetic.** They were made by "
        "`eddyphone simulate` (module `eddyphone.simulate`); no real patient, person or "
        "device was recorded. " + DEMO_SCENARIO,
        "",
        "All files are mono WAV, 16-bit PCM at 4 kHz, at most 20 s long. Each has two "
        "truth files made at the same time as the sound, so the truth is exact.",
        "",
        "| id | case | heart rate, rhythm | murmur (cause: phase, timing, shape, grade, pitch, "
        "quality)"
        " | extra sounds | site / device | SNR, noise |",
        "|---|---|---|---|---|---|---|",
    ]
    for r in index_rows:
        spec = specs[r["id"]]
        if r["murmur_cause"] == "none":
            mur = "none"
        else:
            mur = (f"{r['murmur_cause']}: {r['murmur_phase']}, {r['murmur_timing']}, "
                   f"{r['murmur_shape']}, grade {_ROMAN[int(r['murmur_grade'])]}, "
                   f"{r['murmur_pitch']}, {r['murmur_quality']}")
        extras = ", ".join(k for k, on in (("S3", spec.s3), ("S4", spec.s4),
                                           ("ejection click", spec.ejection_click),
                                           ("opening snap", spec.opening_snap)) if on) or "-"
        noise = [k for k, on in (("speech", spec.speech), ("friction", spec.friction_per_min),
                                 (f"{spec.hum_hz or 0:.0f} Hz hum", spec.hum_hz)) if on]
        lines.append(
            f"| `{r['id']}` | {spec.note} | {float(r['heart_rate_bpm']):.0f} bpm, {spec.rhythm}"
            f" | {mur} | {extras} | {spec.site} / {spec.device} | "
            f"{float(r['snr_db']):.0f} dB{', ' + ', '.join(noise) if noise else ''} |")
    lines += [
        "",
        "## Files",
        "",
        "- `<id>.wav`: the recording, peak-normalised, with the chest wall, the stethoscope "
        "response (`diaphragm`, `bell`, `steep_tilt`: strong low-frequency tilt, about "
        "-35 dB from 20 to 200 Hz and -70 dB by 400 Hz; `phone`; `flat`) and noise applied.",
        "- `<id>.truth.csv`: header `start_s,end_s,label`. First the segments `S1`, "
        "`systole`, `S2`, `diastole` in time order, covering whole cycles only; then rows for "
        "extra sounds (`S3`, `S4`, `click`, `snap`) and `murmur` spans (per beat, where the "
        "murmur is within 20 dB of that beat's peak).",
        "- `<id>.truth.json`: everything: the spec, every beat (valve components M1, T1, A2, "
        "P2, splits, lung volume), the murmur (phase, designed timing and shape, the same "
        "measured from the signal, pitch band, grade, level re S1, and the flow physics: "
        "diameter, velocity, hematocrit, viscosity, Reynolds number and regime, Bernoulli "
        "gradient, Strouhal break frequency), noise levels and the device response.",
        "- `index.csv`: one row per recording with the main fields.",
        "- `manifest.csv`: the clinic's list as eddyphone reads it (`eddyphone analyze "
        "--manifest`, `eddyphone batch`, `eddyphone demo`): each recording's site, patient "
        "and what the chart says (age, hematocrit from a blood count, a state such as "
        "exercise), nothing of the simulator's truth.",
        "",
        "Murmur grades follow our own loudness convention (murmur peak RMS relative to S1 "
        "RMS; edges -20/-13/-6/0/+6 dB), not a clinical examination: grades IV and above "
        "would need a palpable thrill, which no sound file can show.",
        "",
        "Regenerate with `eddyphone simulate --out sample_audio --overwrite`; the same "
        "version and seed give the same bytes. How the sounds are made, the truth fields "
        "and what is still unlike real recordings: `docs/simulator.md`.",
        "",
    ]
    return "\n".join(lines)


def demo_manifest_rows(index_rows: list[dict]) -> list[dict[str, object]]:
    """The demo's manifest: each recording with its site, patient and chart context."""
    rows = []
    for r in index_rows:
        chart = DEMO_CHART.get(r["id"], {})
        rows.append({"path": r["file"], "patient": r.get("patient", ""), "site": r["site"],
                     "age_years": chart.get("age_years", ""),
                     "hematocrit": chart.get("hematocrit", ""),
                     "states": ";".join(chart.get("states", ()))})  # type: ignore[arg-type]
    return rows


def write_demo(out_dir: str | Path, names: list[str] | None = None, *, seed: int | None = None,
               overwrite: bool = False) -> Path:
    """Generate the demo cases (all, or ``names``) into ``out_dir`` with ``index.csv``,
    ``manifest.csv`` (site, patient and chart context per recording) and ``README.md``.

    ``seed`` replaces every case's own seed when given.
    """
    from eddyphone.errors import InputError

    all_specs = demo_specs()
    names = names if names else list(all_specs)
    unknown = [nm for nm in names if nm not in all_specs]
    if unknown:
        raise InputError(None, f"unknown case {unknown[0]!r}",
                         f"choose from {', '.join(all_specs)}")
    specs = {nm: (all_specs[nm] if seed is None else all_specs[nm].with_(seed=seed))
             for nm in names}
    readme, manifest = Path(out_dir) / "README.md", Path(out_dir) / "manifest.csv"
    for path in (readme, manifest):
        if path.exists() and not overwrite:
            raise InputError(str(path), "already exists and would be overwritten",
                             "choose another --out folder or pass --overwrite")
    index = _write_set(specs, out_dir, overwrite=overwrite)
    with open(index) as fh:
        rows = [r for r in csv.DictReader(fh) if r["id"] in all_specs]
    readme.write_text(demo_readme(rows, {r["id"]: all_specs[r["id"]] for r in rows}))
    with open(manifest, "w", newline="") as fh:
        w = csv.DictWriter(fh, fieldnames=DEMO_MANIFEST_FIELDS, lineterminator="\n")
        w.writeheader()
        w.writerows(demo_manifest_rows(rows))
    return index
