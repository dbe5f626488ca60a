"""Speed of the simulator: seconds per recording, measured in this run.

Prints, for a 20-s case with every noise source on, the generation time at each sample
rate and its ratio to the recording's duration (the target is well under 1 s per
20-s case), then the throughput of writing a small benchmark set.

Run: ``python bench/bench_simulate.py [--n 40]``.
"""

from __future__ import annotations

import argparse
import tempfile
import time

from eddyphone.simulate import CaseSpec, MurmurSpec, generate, write_benchmark


def _time(spec: CaseSpec, repeat: int = 5) -> tuple[float, float]:
    """Mean (wall, CPU) seconds per generate(); CPU time is immune to other load."""
    generate(spec)  # warm-up (imports, first FFT plans)
    t0, c0 = time.perf_counter(), time.process_time()
    for i in range(repeat):
        generate(spec, seed=i)
    return (time.perf_counter() - t0) / repeat, (time.process_time() - c0) / repeat


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__)
    parser.add_argument("--n", type=int, default=40, help="benchmark-set size to write")
    args = parser.parse_args()
    full = CaseSpec(duration_s=20.0, heart_rate_bpm=90, speech=0.3, breathing=0.4,
                    friction_per_min=10, hum_hz=50.0, adventitious="crackles",
                    device_ripple_db=2.0, gain_wander_db=3.0,
                    murmur=MurmurSpec("narrowed_outflow", diameter_m=0.01, velocity_m_s=4.0))
    print("20-s case, all noise sources and a murmur:")
    for fs in (2000.0, 4000.0, 8000.0, 16000.0):
        dt, cpu = _time(full.with_(fs=fs))
        print(f"  fs {fs:7.0f} Hz: {dt * 1000:7.1f} ms wall, {cpu * 1000:7.1f} ms CPU per case "
              f"({20.0 / cpu:5.0f}x real time on CPU)")
    quiet = full.with_(speech=0.0, friction_per_min=0.0, hum_hz=None, adventitious="none")
    dt, cpu = _time(quiet)
    print(f"  fs 4000 Hz without speech/friction/hum/lung sounds: {dt * 1000:.1f} ms wall, "
          f"{cpu * 1000:.1f} ms CPU per case")
    with tempfile.TemporaryDirectory() as d:
        t0, c0 = time.perf_counter(), time.process_time()
        write_benchmark(d, args.n, seed=0)
        dt, cpu = time.perf_counter() - t0, time.process_time() - c0
    print(f"write_benchmark n={args.n} (15-s cases, WAV + truth files): {dt:.1f} s wall, "
          f"{cpu / args.n * 1000:.0f} ms CPU per case")


if __name__ == "__main__":
    main()
