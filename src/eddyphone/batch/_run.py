"""The steps of :func:`eddyphone.batch.run_batch`: collect, hash, skip, run, consolidate."""

from __future__ import annotations

import json
import os
import sys
import time
from collections.abc import Mapping, Sequence
from contextlib import contextmanager
from pathlib import Path
from typing import Any

from eddyphone.batch.inputs import BatchItem, collect, content_hash
from eddyphone.batch.store import (
    Store,
    atomic_write,
    code_digest,
    harmonise,
    record_key,
    write_errors,
    write_table,
)
from eddyphone.errors import InputError, ParameterError

_FIRST_COLUMNS = ("path", "patient", "site", "posture")


def run(inputs: Any, out_dir: str | Path, *, workers: int | None, scheduler: str | None,
        config: Any, beats: bool, fmt: str, per_recording_json: bool, retry_failed: bool,
        progress: bool, segment_labels: Any = None) -> Any:
    """See :func:`eddyphone.batch.run_batch`."""
    from eddyphone._version import __version__
    from eddyphone.config import Config
    from eddyphone.evaluate import parse_label_map

    labels = parse_label_map(segment_labels)

    if fmt not in ("parquet", "csv"):
        raise ParameterError(f"fmt={fmt!r} is not a table format; use 'parquet' or 'csv'")
    if workers is not None and (not isinstance(workers, int) or workers < 1):
        raise ParameterError(f"workers={workers!r} must be a whole number of 1 or more")
    inputs = [inputs] if isinstance(inputs, (str, os.PathLike)) else list(inputs)
    config = config or Config()
    workers = workers or _cpu_count()
    out_dir = Path(out_dir)
    items = collect(inputs)
    out_dir.mkdir(parents=True, exist_ok=True)
    started = time.time()
    say = _printer(progress)
    with _lock(out_dir):
        store = Store(out_dir)
        _remove_temporaries(out_dir)
        digest = config.digest()
        code = code_digest()
        keys, hash_errors, hashes = _keys(items, digest, f"{__version__}+{code}", labels)
        records: dict[str, dict[str, Any]] = {}
        reused = set()
        for key in dict.fromkeys(k for k in keys if k is not None):
            record = store.get(key)
            if record is None:
                continue
            done = record["status"] == "ok" and (
                not per_recording_json or store.analysis_json_path(key).exists())
            known_failure = (record["status"] == "error" and bool(record.get("cacheable"))
                             and not retry_failed)
            if done or known_failure:
                records[key] = _slim(record)
                reused.add(key)
        tasks, queued = [], set()
        for item, key in zip(items, keys):
            if key is None or key in records or key in queued:
                continue
            queued.add(key)
            tasks.append({"key": key, "path": item.path, "load": dict(item.load),
                          "context": dict(item.context), "extra": dict(item.extra),
                          "config": config, "want_json": per_recording_json,
                          "code_digest": code, "segment_labels": labels})
        where = f"the cluster at {scheduler}" if scheduler else \
            f"{min(workers, max(len(tasks), 1))} worker process(es)"
        say(f"{len(items)} recordings: {len(reused)} already done, "
            + (f"{len(tasks)} to analyse on {where}" if tasks else "nothing to analyse"))
        bar = _progress(len(tasks), progress)

        def on_result(record: dict[str, Any]) -> None:
            analysis = record.pop("analysis", None)
            if record["status"] == "ok" and analysis is not None:
                store.put_analysis_json(record["key"], analysis)
            if record["status"] == "ok" or record.get("cacheable"):
                store.put(record)
            records[record["key"]] = _slim(record)
            bar.update(failed=record["status"] != "ok")

        try:
            if tasks and scheduler:
                from eddyphone.batch.runner import run_cluster

                run_cluster(tasks, scheduler, on_result)
            elif tasks:
                from eddyphone.batch.runner import run_local

                run_local(tasks, workers, on_result)
        finally:
            bar.close()
        table, errors, beat_table = _consolidate(items, keys, hashes, hash_errors, records,
                                                 store if beats else None)
        patients = _patient_table(items, keys, records)
        paths = _write_outputs(out_dir, fmt, table, errors, beat_table if beats else None,
                               items, keys, store if per_recording_json else None, patients)
        counts = {"recordings": len(items), "analysed": len(tasks),
                  "reused": sum(k in reused for k in keys if k is not None),
                  "failed": len(errors), "succeeded": len(table)}
        run_info = {
            "eddyphone_version": __version__, "code_digest": code, "config_digest": digest,
            "config": config.to_dict(), "inputs": [str(i) for i in inputs],
            "scheduler": scheduler, "workers": None if scheduler else workers,
            "started_utc": _utc(started), "finished_utc": _utc(time.time()),
            "wall_s": round(time.time() - started, 3), "counts": counts,
            "outputs": {k: str(v) for k, v in paths.items()},
        }
        atomic_write(out_dir / "run.json", (json.dumps(run_info, indent=2) + "\n").encode())
    say(f"{counts['succeeded']} recordings in {paths['features']}; {counts['failed']} failed"
        + (f" (see {paths['errors']})" if counts["failed"] else ""))
    table.attrs.update(errors=errors, beats=beat_table if beats else None, counts=counts,
                       paths=paths)
    return table


def _keys(items: Sequence[BatchItem], digest: str, version: str,
          segment_labels: Mapping[str, str] | None = None
          ) -> tuple[list[str | None], dict[int, str], list[str | None]]:
    """Record key of each item (None where the file cannot be read, with the reason)."""
    from concurrent.futures import ThreadPoolExecutor

    def one(item: BatchItem) -> tuple[str | None, str | None, str | None]:
        """(recording hash, given segments' hash, problem)."""
        try:
            sha = content_hash(item.path)
        except FileNotFoundError:
            return None, None, "file not found; check the path and the file name"
        except IsADirectoryError:
            return None, None, "is a folder, not a recording; give the folder itself as an input"
        except OSError as exc:
            return None, None, (f"cannot be read ({exc.strerror or exc}); check the file "
                                "permissions")
        given = item.extra.get("segments")
        if given is None:
            return sha, None, None
        try:  # a corrected segmentation makes a new result: its content is in the key
            return sha, content_hash(given), None
        except OSError:
            return None, None, (f"its segments file {given} cannot be read; check the "
                                "manifest's segments column")

    with ThreadPoolExecutor(max_workers=4) as pool:
        results = list(pool.map(one, items))
    keys: list[str | None] = []
    hashes: list[str | None] = []
    errors: dict[int, str] = {}
    for i, (item, (sha, segments_sha, problem)) in enumerate(zip(items, results)):
        hashes.append(sha)
        if sha is None:
            keys.append(None)
            errors[i] = problem or "cannot be read"
            continue
        options = {"load": dict(item.load), "context": _plain(item.context),
                   "extra": dict(item.extra)}
        if segments_sha is not None:
            options["segments_sha256"] = segments_sha
            if segment_labels:
                options["segment_labels"] = dict(segment_labels)
        keys.append(record_key(sha, digest, version, options))
    return keys, errors, hashes


def _slim(record: dict[str, Any]) -> dict[str, Any]:
    """What consolidation needs in memory; per-beat rows are read back from the store."""
    return {k: v for k, v in record.items() if k != "beats"}


def _consolidate(items: Sequence[BatchItem], keys: Sequence[str | None],
                 hashes: Sequence[str | None], hash_errors: Mapping[int, str],
                 records: Mapping[str, Mapping[str, Any]], store: Store | None
                 ) -> tuple[Any, Any, Any]:
    """Feature rows, error rows and (with a store) beat rows of the current inputs."""
    import pandas as pd

    rows, errors, beat_rows = [], [], []
    for i, (item, key) in enumerate(zip(items, keys)):
        record = records.get(key) if key is not None else None
        if key is None:
            errors.append((item.path, hash_errors[i]))
            continue
        if record is None:  # cannot happen unless a worker lost a task silently
            errors.append((item.path, "no result came back for this file; run again"))
            continue
        if record["status"] != "ok":
            errors.append((item.path, record.get("error") or "failed"))
            continue
        features = dict(record["features"])
        extras = {(f"manifest_{k}" if k in features or k in _FIRST_COLUMNS else k): v
                  for k, v in item.extra.items()}
        head = {"path": item.path, **{k: features.pop(k, None) for k in _FIRST_COLUMNS[1:]}}
        rows.append({**head, **extras, "content_sha256": hashes[i], **features})
        stored = store.get(key) if store is not None else None
        for beat in (stored or {}).get("beats") or []:
            beat_rows.append({"path": item.path, "patient": head["patient"],
                              "site": head["site"], **beat})
    table = pd.DataFrame(rows, columns=None if rows else list(_FIRST_COLUMNS))
    error_table = pd.DataFrame(errors, columns=["path", "reason"])
    beat_table = pd.DataFrame(beat_rows, columns=None if beat_rows else ["path", "patient",
                                                                          "site"])
    return harmonise(table), error_table, harmonise(beat_table)


def _patient_table(items: Sequence[BatchItem], keys: Sequence[str | None],
                   records: Mapping[str, Mapping[str, Any]]) -> Any:
    """One row per patient named by the manifest (:func:`summarise_patient` over the
    patient's recordings that succeeded), or None when no recording has a patient."""
    import pandas as pd

    from eddyphone.findings import summarise_patient
    from eddyphone.findings.records import Findings

    groups: dict[str, list[tuple[str, str | None, Findings]]] = {}
    paths: dict[str, list[str]] = {}
    for item, key in zip(items, keys):
        record = records.get(key) if key is not None else None
        if not record or record["status"] != "ok" or "findings" not in record:
            continue
        patient = str(record["features"].get("patient"))
        f = record["findings"]
        site = record["features"].get("site") or Path(item.path).stem
        groups.setdefault(patient, []).append(
            (site, record["features"].get("posture"),
             Findings.from_json(f["list"], f["presence"], f["reason"])))
        paths.setdefault(patient, []).append(item.path)
    if not groups:
        return None
    rows = []
    for patient, pairs in groups.items():
        p = summarise_patient(pairs, patient_id=patient)
        main = next((m for m in p.murmurs if not m.possible), None)
        rows.append({
            "patient": patient, "recordings": len(pairs), "sites": "; ".join(p.sites),
            "presence": p.presence,
            "phases": "; ".join(m.phase for m in p.murmurs if not m.possible),
            "possible_phases": "; ".join(m.phase for m in p.murmurs if m.possible),
            "main_phase": main.phase if main else None,
            "main_loudest_site": main.loudest_site if main else None,
            "main_present_at": "; ".join(main.present_at) if main else None,
            "main_description": main.description if main else None,
            "main_spread": main.spread if main else None,
            "main_level_db_re_s1_by_site": "; ".join(
                f"{site} {level:.1f}" for site, level in main.level_db_by_site.items())
            if main else None,
            "extra_sounds": "; ".join(p.extra_sounds), "summary": p.summary,
            "paths": "; ".join(paths[patient])})
    return harmonise(pd.DataFrame(rows))


def _write_outputs(out_dir: Path, fmt: str, table: Any, errors: Any, beat_table: Any,
                   items: Sequence[BatchItem], keys: Sequence[str | None],
                   store: Store | None, patients: Any = None) -> dict[str, Path]:
    suffix = ".parquet" if fmt == "parquet" else ".csv"
    paths = {"features": write_table(table, out_dir / f"features{suffix}", fmt)}
    if beat_table is not None:
        paths["beats"] = write_table(beat_table, out_dir / f"beats{suffix}", fmt)
    if patients is not None:
        paths["patients"] = write_table(patients, out_dir / f"patients{suffix}", fmt)
    paths["errors"] = write_errors(errors.itertuples(index=False, name=None),
                                   out_dir / "errors.csv")
    if store is not None:
        paths["json"] = out_dir / "json"
        for name, key in _json_names(items, keys).items():
            source = store.analysis_json_path(key)
            if source.exists():
                atomic_write(paths["json"] / f"{name}.json", source.read_bytes())
    return paths


def _json_names(items: Sequence[BatchItem], keys: Sequence[str | None]) -> dict[str, str]:
    """File stem -> key; stems met more than once get the key's start appended."""
    stems = [Path(i.path).stem for i in items]
    taken = {s for s in stems if stems.count(s) > 1}
    return {(f"{s}-{k[:8]}" if s in taken else s): k
            for s, k in zip(stems, keys) if k is not None}


@contextmanager
def _lock(out_dir: Path):
    """Hold ``out_dir/.lock`` so two batches never write the same folder at once.

    A POSIX record lock: owned by this process alone (worker processes forked
    from it do not inherit it) and released by the system when it dies.
    """
    try:
        import fcntl
    except ImportError:  # not POSIX: no lock
        yield
        return
    fh = (out_dir / ".lock").open("a+")
    try:
        try:
            fcntl.lockf(fh, fcntl.LOCK_EX | fcntl.LOCK_NB)
        except OSError:
            raise InputError(str(out_dir), "another batch is writing to this folder",
                             "wait for it to finish, or choose another --out folder") from None
        fh.seek(0)
        fh.truncate()
        fh.write(f"{os.getpid()}\n")
        fh.flush()
        yield
    finally:
        fh.close()


def _remove_temporaries(out_dir: Path) -> None:
    """Delete temporary files left by a run that was killed while writing."""
    for folder in (out_dir, out_dir / "records", out_dir / "json"):
        if not folder.is_dir():
            continue
        pattern = "**/.*.tmp" if folder.name == "records" else ".*.tmp"
        for tmp in folder.glob(pattern):
            tmp.unlink(missing_ok=True)


def _cpu_count() -> int:
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except AttributeError:  # not Linux
        return max(1, os.cpu_count() or 1)


def _plain(mapping: Mapping[str, Any]) -> dict[str, Any]:
    return {k: list(v) if isinstance(v, tuple) else v for k, v in mapping.items()}


def _utc(t: float) -> str:
    return time.strftime("%Y-%m-%dT%H:%M:%SZ", time.gmtime(t))


def _printer(enabled: bool):
    def say(text: str) -> None:
        if enabled:
            print(f"eddyphone batch: {text}", file=sys.stderr, flush=True)

    return say


def _progress(total: int, enabled: bool):
    from eddyphone.batch.runner import Progress

    return Progress(total, sys.stderr, enabled=enabled)
