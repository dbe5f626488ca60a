"""Batch feature extraction at study scale: all cores, resumable, Parquet, Dask.

``run_batch`` analyses every recording of folders, glob patterns or manifest
CSV files and writes, in ``out_dir``:

- ``features.parquet`` (or ``.csv``): one row per recording (see
  :mod:`eddyphone.batch.features` for the columns), manifest columns carried
  through;
- ``errors.csv``: ``path,reason``, one row per recording that failed;
- ``beats.parquet`` (with ``beats=True``): one row per beat;
- ``json/<stem>.json`` (with ``per_recording_json=True``): the full output
  contract of each recording;
- ``run.json``: settings, version and counts of the last run;
- ``records/``: one result per recording, keyed by content and settings, which
  makes a re-run skip finished work (safe to delete; it only costs time).

Public API
----------
run_batch(inputs, out_dir, *, workers, scheduler, config, beats, fmt,
          per_recording_json, retry_failed, progress) -> pandas.DataFrame
collect(inputs) -> list[BatchItem]
"""

from __future__ import annotations

from eddyphone.batch.inputs import BatchItem, collect

__all__ = ["run_batch", "collect", "BatchItem", "FORMATS"]

#: Table formats ``run_batch`` writes.
FORMATS = ("parquet", "csv")


def run_batch(inputs, out_dir, *, workers=None, scheduler=None, config=None, beats=False,
              fmt="parquet", per_recording_json=False, retry_failed=False, progress=True,
              segment_labels=None):
    """Analyse many recordings and write the study tables.

    Parameters
    ----------
    inputs : str, Path or sequence of them
        Recordings, folders (recursive), glob patterns or manifest CSV files.
    out_dir : str or Path
        Output folder (created); re-running into it resumes.
    workers : int, optional
        Local worker processes; all cores by default. Ignored with ``scheduler``.
    scheduler : str, optional
        Address of a Dask distributed scheduler (``tcp://host:8786``); the
        recordings must be readable by the workers at the same paths.
    config : Config, optional
        Analysis settings (defaults otherwise); their digest is in every row.
    beats : bool
        Also write ``beats.parquet`` (one row per beat).
    fmt : {'parquet', 'csv'}
        Table format.
    per_recording_json : bool
        Also write the full JSON of every recording under ``out_dir/json``.
    retry_failed : bool
        Analyse again files that failed with an input or quality error before
        (by default they are reported again without a new attempt).
    progress : bool
        Show a progress line on stderr.
    segment_labels : str or mapping, optional
        How the manifest's ``segments`` files spell the cycle states (``"1=S1,2=systole,
        3=S2,4=diastole"``, as :func:`eddyphone.evaluate.parse_label_map` reads it).

    Returns
    -------
    pandas.DataFrame
        The feature table, in input order. ``attrs`` holds ``errors`` (DataFrame
        ``path, reason``), ``beats`` (DataFrame or None), ``counts`` (recordings,
        analysed, reused, failed) and ``paths`` (files written).

    Raises
    ------
    InputError
        No inputs found, an input does not exist, or another batch is writing
        to ``out_dir``.
    ParameterError
        ``workers``, ``fmt`` or ``segment_labels`` not allowed.
    """
    from eddyphone.batch._run import run

    return run(inputs, out_dir, workers=workers, scheduler=scheduler, config=config,
               beats=beats, fmt=fmt, per_recording_json=per_recording_json,
               retry_failed=retry_failed, progress=progress, segment_labels=segment_labels)
