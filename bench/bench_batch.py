"""Benchmark: batch throughput, speed-up with workers, overhead, memory, resume cost.

Writes ``--n`` simulated recordings of ``--duration`` seconds
(:func:`eddyphone.simulate.benchmark_specs`), then measures in this run:

- the sum of single analyses: ``eddyphone.analyze(path).to_dict()`` on each file,
  one after another in this process (the work a batch has to do anyway);
- ``run_batch`` with 1 worker and with ``--workers`` workers (fresh output folders),
  wall time from call to return, including start-up, hashing and consolidation;
- throughput (recordings per second), speed-up over 1 worker, batch overhead of the
  1-worker run over the sum of single analyses (in wall time and in CPU time: CPU
  time is what the batch adds even on a machine shared with other work), peak
  resident memory per worker process (from each worker's own ``getrusage``), and
  the time a re-run takes when everything is already done.

Wall-time ratios only mean something on an otherwise idle machine; the load
average is printed before and after the timed part, with a control: the speed-up a
pure CPU loop gets on the same number of processes at that moment.

Targets (tracker issue 9): speed-up >= 1.8 with 2 workers; overhead < 10 %.

    python bench/bench_batch.py [--n 200] [--duration 20] [--workers 2] [--seed 0]
"""

from __future__ import annotations

import os

# The single analyses run with one thread each, as the batch workers do (set before
# numpy is imported), so that both sides of the overhead figure do the same work.
for _name in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_name, "1")

import argparse  # noqa: E402
import json  # noqa: E402
import shutil  # noqa: E402
import tempfile  # noqa: E402
import time  # noqa: E402
from concurrent.futures import ProcessPoolExecutor  # noqa: E402
from pathlib import Path  # noqa: E402


def _write_case(args: tuple) -> str:
    spec, folder, case_id = args
    from eddyphone.simulate import generate, write

    return str(write(generate(spec), folder, case_id, overwrite=True)["wav"])


def _records(out: Path) -> list[dict]:
    found = []
    for p in (out / "records").rglob("*.json"):
        if not p.name.startswith(".") and not p.name.endswith(".analysis.json"):
            found.append(json.loads(p.read_text()))
    return found


def _cpu_now() -> float:
    """CPU seconds of this process and of its finished (waited-for) children."""
    import resource

    own = resource.getrusage(resource.RUSAGE_SELF)
    kids = resource.getrusage(resource.RUSAGE_CHILDREN)
    return own.ru_utime + own.ru_stime + kids.ru_utime + kids.ru_stime


def _burn(n: int) -> float:
    x = 0
    for i in range(n):
        x += i * i
    return float(x)


def _ceiling(workers: int, n: int = 10_000_000) -> float:
    """Speed-up a pure CPU loop gets on ``workers`` processes right now (the machine's
    own limit: below ``workers`` when other programs hold the cores)."""
    start = time.perf_counter()
    _burn(n)
    one = time.perf_counter() - start
    with ProcessPoolExecutor(max_workers=workers) as pool:
        list(pool.map(_burn, [1000] * workers))  # start the processes first
        start = time.perf_counter()
        list(pool.map(_burn, [n] * workers))
        many = time.perf_counter() - start
    return workers * one / many


def _load() -> str:
    one, five, _ = os.getloadavg()
    return f"{one:.1f} (1 min), {five:.1f} (5 min) on {os.cpu_count()} cores"


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--n", type=int, default=200)
    parser.add_argument("--duration", type=float, default=20.0)
    parser.add_argument("--workers", type=int, default=2)
    parser.add_argument("--seed", type=int, default=0)
    parser.add_argument("--repeat", type=int, default=1,
                        help="time each batch run this many times and keep the fastest")
    parser.add_argument("--keep", metavar="DIR",
                        help="work in DIR and keep it (its recordings are reused next time)")
    args = parser.parse_args()

    from eddyphone import analyze
    from eddyphone.batch import run_batch
    from eddyphone.simulate import benchmark_specs

    work = Path(args.keep) if args.keep else Path(tempfile.mkdtemp(prefix="bench_batch_"))
    folder = work / "recordings"
    specs = benchmark_specs(args.n, seed=args.seed, duration_s=args.duration)
    t0 = time.perf_counter()
    files = sorted(str(p) for p in folder.glob("case_*.wav")) if folder.is_dir() else []
    if len(files) == args.n:
        print(f"reusing {len(files)} recordings in {folder}")
    else:
        with ProcessPoolExecutor(max_workers=os.cpu_count()) as pool:
            files = list(pool.map(_write_case, [(s, folder, f"case_{i:04d}")
                                                for i, s in enumerate(specs)]))
        print(f"wrote {len(files)} recordings of {args.duration:g} s in "
              f"{time.perf_counter() - t0:.1f} s ({os.cpu_count()} cores)")

    print(f"load average before timing: {_load()}")
    ceilings = [_ceiling(args.workers)] if args.workers > 1 else []
    singles, singles_cpu = [], []
    failed_single = 0
    for path in files:
        start, cpu = time.perf_counter(), time.process_time()
        try:
            analyze(path).to_dict()
        except Exception:  # noqa: BLE001 - counted, as the batch counts them
            failed_single += 1
        singles.append(time.perf_counter() - start)
        singles_cpu.append(time.process_time() - cpu)
    sum_single, sum_single_cpu = sum(singles), sum(singles_cpu)
    print(f"single analyses, one after another: {sum_single:.1f} s wall "
          f"({sum_single_cpu:.1f} s CPU) in total, {1000 * sum_single / len(files):.0f} ms "
          f"per recording ({failed_single} failed)")

    walls: dict[int, float] = {}
    cpus: dict[int, float] = {}
    last: dict[int, tuple[float, float]] = {}
    runs = {}
    for _ in range(args.repeat):
        for workers in sorted({1, args.workers}):
            out = work / f"out_w{workers}"
            shutil.rmtree(out, ignore_errors=True)
            before = _cpu_now()
            start = time.perf_counter()
            table = run_batch([folder], out, workers=workers, progress=False)
            wall = time.perf_counter() - start
            cpu = _cpu_now() - before
            if wall < walls.get(workers, float("inf")):
                walls[workers], cpus[workers] = wall, cpu
            runs[workers] = (out, table)
            last[workers] = (wall, cpu)
            counts = table.attrs["counts"]
            print(f"batch, {workers} worker(s): {wall:.1f} s wall, {cpu:.1f} s CPU "
                  f"(main + workers), {counts['succeeded']} rows, {counts['failed']} failed, "
                  f"{len(files) / wall:.2f} recordings/s")
    print(f"load average after timing: {_load()}")
    if args.workers > 1:
        ceilings.append(_ceiling(args.workers))
        print(f"control: a pure CPU loop on {args.workers} processes ran "
              f"{ceilings[0]:.2f}x (before) and {ceilings[1]:.2f}x (after) as fast as on one: "
              "the most any program could gain on this machine at the time")
    if failed_single or any(t.attrs["counts"]["failed"] for _, t in runs.values()):
        print("WARNING: some analyses failed; the timings below do not describe full "
              "analyses")

    out1, table1 = runs[1]
    in_worker = sum(r.get("elapsed_s", 0.0) for r in _records(out1))
    for workers, (out, _) in sorted(runs.items()):
        records = _records(out)
        task_cpu = sum(r.get("cpu_s", 0.0) for r in records)
        task_wall = sum(r.get("elapsed_s", 0.0) for r in records)
        wall, cpu = last[workers]
        machinery = cpu - task_cpu
        print(f"{workers} worker(s): batch machinery CPU (all but the analyses themselves) "
              f"{machinery:.2f} s = {100 * machinery / task_cpu:.1f} % of the {task_cpu:.1f} s "
              f"CPU of the analyses; analyses in flight on average "
              f"{task_wall / wall:.2f}; cores' worth of CPU obtained {cpu / wall:.2f} "
              "(last run)")
    overhead = (walls[1] - sum_single) / sum_single
    overhead_cpu = (last[1][1] - sum_single_cpu) / sum_single_cpu
    print(f"throughput: {len(files) / walls[args.workers]:.2f} recordings/s with "
          f"{args.workers} worker(s), {len(files) / walls[1]:.2f} with 1")
    print(f"overhead of the 1-worker batch over the sum of single analyses: wall "
          f"{100 * overhead:+.1f} %, CPU {100 * overhead_cpu:+.1f} % (target < 10 %); "
          f"in-worker analysis wall time {in_worker:.1f} s")
    if args.workers > 1:
        speedup = walls[1] / walls[args.workers]
        print(f"speed-up with {args.workers} workers over 1: {speedup:.2f} "
              f"(target >= 1.8 for 2 workers; wall-time ratios need an otherwise idle "
              f"machine, see the load averages)")
        outw, tablew = runs[args.workers]
        same = table1.equals(tablew)
        print(f"tables of the 1-worker and {args.workers}-worker runs identical: {same}")
        if not same:
            differ = [c for c in table1.columns if not table1[c].equals(tablew[c])]
            print(f"  columns that differ: {differ[:10]} (code edited during the run?)")
    else:
        outw = out1
    peaks: dict[str, float] = {}
    for r in _records(outw):
        if r.get("peak_rss_mb") is not None:
            peaks[r["worker"]] = max(peaks.get(r["worker"], 0.0), r["peak_rss_mb"])
    if peaks:
        print("peak resident memory per worker process: "
              + ", ".join(f"{v:.0f} MB" for v in sorted(peaks.values()))
              + f" ({len(peaks)} processes)")
    start = time.perf_counter()
    again = run_batch([folder], outw, workers=args.workers, progress=False)
    wall = time.perf_counter() - start
    print(f"re-run with everything done: {wall:.2f} s for {len(files)} recordings "
          f"({again.attrs['counts']['analysed']} analysed again)")
    if not args.keep:
        shutil.rmtree(work, ignore_errors=True)


if __name__ == "__main__":
    main()
