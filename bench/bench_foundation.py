"""Benchmark: load + condition + quality against a plain ``soundfile.read`` of the same file.

Prints seconds per minute of audio for both and their ratio, measured in the same run,
plus the start-up time of ``eddyphone --help``.

    python bench/bench_foundation.py [--minutes 5] [--repeats 5]
"""

from __future__ import annotations

import argparse
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import soundfile as sf

from eddyphone.condition import condition
from eddyphone.io import load
from eddyphone.quality import assess


def _make_file(folder: Path, minutes: float, fs: int) -> Path:
    rng = np.random.default_rng(0)
    n = int(minutes * 60 * fs)
    t = np.arange(n) / fs
    x = 0.002 * rng.standard_normal(n)
    for onset in np.arange(0.1, minutes * 60 - 1, 0.85):
        for offset, f in ((0.0, 45.0), (0.3, 70.0)):
            m = slice(int((onset + offset) * fs), int((onset + offset + 0.06) * fs))
            x[m] += 0.4 * np.sin(2 * np.pi * f * t[m]) * np.hanning(m.stop - m.start)
    path = folder / "bench.wav"
    sf.write(path, x, fs, subtype="PCM_16")
    return path


def _best(fn, repeats: int) -> float:
    times = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return min(times)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--minutes", type=float, default=5.0)
    parser.add_argument("--repeats", type=int, default=5)
    parser.add_argument("--fs", type=int, default=4000)
    args = parser.parse_args()
    with tempfile.TemporaryDirectory() as tmp:
        path = _make_file(Path(tmp), args.minutes, args.fs)

        def ours() -> None:
            # As eddyphone.analyze runs it: quality reuses the hum conditioning found.
            rec = load(path)
            cond = condition(rec.x, rec.fs)
            assess(rec.x, rec.fs, hum_hz=cond.hum_hz)

        read = _best(lambda: sf.read(path), args.repeats)
        full = _best(ours, args.repeats)
    per_min = 1.0 / args.minutes
    print(f"audio: {args.minutes:g} min at {args.fs} Hz, best of {args.repeats}")
    print(f"soundfile.read                : {read * per_min * 1000:8.2f} ms per minute of audio")
    print(f"load + condition + quality    : {full * per_min * 1000:8.2f} ms per minute of audio")
    print(f"ratio (ours / soundfile.read) : {full / read:8.1f}")
    print(f"real-time factor              : {args.minutes * 60 / full:8.0f} x")
    starts = []
    for _ in range(5):
        t0 = time.perf_counter()
        subprocess.run([sys.executable, "-m", "eddyphone.cli", "--help"], check=True,
                       capture_output=True)
        starts.append(time.perf_counter() - t0)
    t0 = time.perf_counter()
    for _ in range(5):
        subprocess.run([sys.executable, "-c", "pass"], check=True)
    bare = (time.perf_counter() - t0) / 5
    print(f"eddyphone --help start-up     : {statistics.median(starts) * 1000:8.0f} ms "
          f"(bare python start-up {bare * 1000:.0f} ms)")


if __name__ == "__main__":
    main()
