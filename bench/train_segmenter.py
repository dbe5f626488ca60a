"""Refit the segmenter's emission model and write ``src/eddyphone/data/segmenter_emissions.json``.

Training set
------------
``N_TRAIN`` synthetic recordings from :func:`eddyphone.simulate.generate`, drawn by
:func:`training_specs` with seeds ``TRAIN_SEED_BASE + i`` (7000000 upwards). The
benchmark (``bench/bench_segmentation.py``) uses ``eddyphone.simulate.benchmark_specs``
whose case ``i`` of draw ``k`` has seed ``k * 100003 + i`` (draws 0-9 stay below
1000100), so training and test recordings never share a seed. The draws vary on
purpose, so that no single device or noise type is learnt: heart rate 40-200 bpm,
sinus or irregular rhythm with premature beats, all five device responses, sample
rates 2-8 kHz (resampled to 4 kHz by the loader), chest-wall corner 150-900 Hz, SNR -3 to 40 dB,
breathing, speech, friction bursts, mains hum, clipping, murmurs of every cause,
S3, S4, clicks and snaps, and every auscultation site.

Each recording is conditioned (``eddyphone.condition``) and turned into frame
features (``eddyphone.segment.emissions.frame_features``); frames are labelled by
the truth segment holding their centre (frames outside whole cycles are left
out). Frames are weighted so that every recording counts equally.

Usage::

    python bench/train_segmenter.py [--n 240] [--out PATH]
"""

from __future__ import annotations

import argparse
import json
import time
from pathlib import Path

import numpy as np

from eddyphone.condition import condition
from eddyphone.envelope import envelopes
from eddyphone.io.load import from_array
from eddyphone.segment.emissions import fit_emission_model, frame_features
from eddyphone.simulate import CaseSpec, MurmurSpec, generate
from eddyphone.simulate.chain import DEVICES

TRAIN_SEED_BASE = 7_000_000
N_TRAIN = 240
LABELS = {"S1": 0, "systole": 1, "S2": 2, "diastole": 3}
OUT = Path(__file__).resolve().parents[1] / "src" / "eddyphone" / "data" / \
    "segmenter_emissions.json"

_CAUSES = ("high_flow", "narrowed_outflow", "systolic_leak", "diastolic_leak",
           "narrowed_inflow", "low_viscosity", "wall_irregularity", "continuous")


def training_specs(n: int, seed_base: int = TRAIN_SEED_BASE) -> list[CaseSpec]:
    """Varied case specs for training, seed ``seed_base + i`` each."""
    specs = []
    devices = sorted(DEVICES)
    for i in range(n):
        seed = seed_base + i
        rng = np.random.default_rng(seed)
        irregular = rng.random() < 0.25
        murmur = None
        if rng.random() < 0.45:
            cause = str(rng.choice(_CAUSES))
            murmur = MurmurSpec(cause=cause, diameter_m=float(rng.uniform(0.003, 0.02)),
                                velocity_m_s=float(rng.uniform(1.0, 5.5)),
                                hematocrit=float(rng.uniform(0.25, 0.55)))
        hum = rng.random() < 0.15
        specs.append(CaseSpec(
            heart_rate_bpm=float(np.exp(rng.uniform(np.log(40.0), np.log(200.0)))),
            rhythm="irregular" if irregular else "sinus",
            ectopic_rate=float(rng.choice([0.0, 0.0, 0.05, 0.15])),
            rsa_swing_bpm=float(rng.uniform(0.0, 10.0)),
            respiration_per_min=float(rng.uniform(8.0, 30.0)),
            duration_s=float(rng.uniform(8.0, 20.0)),
            fs=float(rng.choice([2000.0, 3000.0, 4000.0, 4000.0, 8000.0])),
            sex=str(rng.choice(["male", "female"])),
            murmur=murmur,
            s3=bool(rng.random() < 0.2), s4=bool(rng.random() < 0.15),
            ejection_click=bool(rng.random() < 0.1), opening_snap=bool(rng.random() < 0.08),
            snr_db=float(rng.uniform(-3.0, 40.0)),
            device=str(devices[i % len(devices)]),
            chest_wall_cutoff_hz=float(rng.uniform(150.0, 900.0)),
            breathing=float(rng.uniform(0.0, 1.0)),
            speech=float(rng.uniform(0.0, 0.6)) if rng.random() < 0.3 else 0.0,
            friction_per_min=float(rng.uniform(0.0, 8.0)) if rng.random() < 0.3 else 0.0,
            hum_hz=float(rng.choice([50.0, 60.0])) if hum else None,
            hum_db=float(rng.uniform(-30.0, -5.0)),
            overdrive_db=float(rng.uniform(0.0, 6.0)) if rng.random() < 0.1 else 0.0,
            site=str(rng.choice(["aortic", "pulmonic", "tricuspid", "mitral"])),
            seed=seed,
        ))
    return specs


def frame_labels(t: np.ndarray, segments) -> np.ndarray:
    """State index of the segment holding each frame centre, -1 outside every segment."""
    starts = np.array([s for s, _, _ in segments])
    ends = np.array([e for _, e, _ in segments])
    codes = np.array([LABELS[lab] for _, _, lab in segments])
    k = np.searchsorted(starts, t, side="right") - 1
    ok = (k >= 0) & (t < ends[np.clip(k, 0, None)])
    out = np.full(len(t), -1)
    out[ok] = codes[k[ok]]
    return out


def recording_frames(spec: CaseSpec) -> tuple[np.ndarray, np.ndarray]:
    """Features and labels of one synthetic recording."""
    sim = generate(spec)
    rec = from_array(sim.x, sim.fs)
    cond = condition(rec.x, rec.fs)
    env = envelopes(cond.x, cond.fs)
    feats = frame_features(env)
    labels = frame_labels(env.t, sim.segments)
    keep = labels >= 0
    return feats[keep], labels[keep]


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--n", type=int, default=N_TRAIN)
    parser.add_argument("--out", type=Path, default=OUT)
    parser.add_argument("--l2", type=float, default=1e-3)
    args = parser.parse_args()

    t0 = time.perf_counter()
    specs = training_specs(args.n)
    feats, labels, weights, rec = [], [], [], []
    for i, spec in enumerate(specs):
        f, y = recording_frames(spec)
        feats.append(f)
        labels.append(y)
        weights.append(np.full(len(y), 1.0 / max(len(y), 1)))
        rec.append(np.full(len(y), i))
    feats_all = np.concatenate(feats)
    labels_all = np.concatenate(labels)
    weights_all = np.concatenate(weights)
    rec_all = np.concatenate(rec)
    print(f"{args.n} recordings, {len(labels_all)} frames in {time.perf_counter() - t0:.1f} s")

    # Check on the last fifth of the recordings before fitting on all of them.
    hold = rec_all >= int(0.8 * args.n)
    probe = fit_emission_model(feats_all[~hold], labels_all[~hold],
                               sample_weight=weights_all[~hold], l2=args.l2)
    pred = np.argmax(probe.log_likelihood(feats_all[hold]) + probe.log_prior, axis=1)
    held_acc = float(np.mean(pred == labels_all[hold]))
    sound = np.isin(labels_all[hold], (0, 2))
    sound_acc = float(np.mean(np.isin(pred, (0, 2)) == sound))
    print(f"held-out frame accuracy {held_acc:.3f} (sound vs silence {sound_acc:.3f})")

    info = {
        "training_set": "eddyphone.simulate recordings drawn by bench/train_segmenter.py "
                        "training_specs (varied devices, noise, rhythms, murmurs)",
        "seeds": [TRAIN_SEED_BASE, TRAIN_SEED_BASE + args.n - 1],
        "n_recordings": args.n,
        "n_frames": int(len(labels_all)),
        "l2": args.l2,
        "held_out_frame_accuracy": round(held_acc, 4),
        "held_out_sound_vs_silence_accuracy": round(sound_acc, 4),
        "states": list(LABELS),
    }
    model = fit_emission_model(feats_all, labels_all, sample_weight=weights_all, l2=args.l2,
                               info=info)
    model.save(args.out)
    print(json.dumps(info, indent=1))
    print(f"wrote {args.out} in {time.perf_counter() - t0:.1f} s")


if __name__ == "__main__":
    main()
