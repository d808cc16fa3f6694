"""Batch runner of a portfolio: one task per weather file, on dask or in-process.

Each task receives a weather file's *path* and the plain settings of the run (no
data frames travel), reads the file, computes every surface x finish in one
vectorised call (:func:`solair.compare.compare`), and writes, inside the task:

* ``climates/<label>.nc``: the hourly results (time x surface x finish), NetCDF
  through h5netcdf, written with dask's synchronous scheduler (inside a
  distributed worker xarray would otherwise take a distributed lock per file);
* ``climates/<label>.metrics.csv``: the small table of metrics per surface x finish.

Both are written atomically: to a temporary name in the same folder, then renamed
over the final name with :func:`os.replace`, so a killed run never leaves a
truncated result under a final name. They are not fsynced one by one (that held
the tasks in I/O wait: up to ~20 % of the throughput of two workers, measured); the
task records their sizes, the client flushes the output folder's file system
once at the end of the run (:func:`flush_filesystem`), and resume recomputes a
climate whose files do not have the recorded sizes (what an operating-system
crash or power cut before that flush leaves). The task returns only a small
status dict; on dask it also leaves it as JSON in ``.records/``, where the client
reads it instead of fetching it from the worker (:func:`solair.cluster.run_on_dask`).
The client alone appends one JSON line per task to
``manifest.jsonl`` (inputs' sha256, configuration hash, versions, status, error,
timing) as tasks finish (:func:`distributed.as_completed`), and writes
``summary.csv`` (and ``summary.parquet`` when pyarrow is importable) from the
per-climate metric files at the end. Nothing is gathered whole in the client, so
its memory stays flat in the number of climates.

Resume: a climate whose latest manifest record is done with the same weather
file hash and configuration hash, and whose outputs exist, is skipped unless
``force=True``.
"""

from __future__ import annotations

import contextlib
import json
import os
import socket
import time
import warnings
from collections.abc import Iterable, Iterator
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, TextIO

from solair.atomic import TMP_MARK, atomic_write, file_sha256, flush_filesystem
from solair.cluster import run_on_dask, tune_allocator
from solair.errors import ConfigurationError, one_line
from solair.portfolio import ResolvedPortfolio
from solair.provenance import CAUTION, versions

__all__ = [
    "CAUTION",
    "BatchResult",
    "atomic_write",
    "file_sha256",
    "flush_filesystem",
    "read_manifest",
    "run_climate",
    "run_portfolio",
    "versions",
]

MANIFEST = "manifest.jsonl"
CLIMATES_DIR = "climates"
SUMMARY = "summary"
#: where the workers leave each task's record for the client (read and removed at once)
RECORDS_DIR = ".records"


# --------------------------------------------------------------------------- outputs

def _outputs(out_dir: Path, label: str) -> tuple[Path, Path]:
    d = out_dir / CLIMATES_DIR
    return d / f"{label}.nc", d / f"{label}.metrics.csv"


# --------------------------------------------------------------------------- the task

def run_climate(task: dict[str, Any]) -> dict[str, Any]:
    """Compute one climate and write its outputs; never raises for a bad input.

    Parameters
    ----------
    task : dict
        ``label``, ``path`` (the weather file), ``out_dir``, ``settings`` (see
        :class:`solair.portfolio.ResolvedPortfolio`), ``config_hash``.

    Returns
    -------
    dict
        A small status record: ``label``, ``path``, ``status`` ("done" or
        "failed"), ``error`` (one line, or None), ``input_sha256``, ``seconds``,
        ``worker``, ``n_metric_rows``, ``output_bytes`` (sizes of the NetCDF and the
        metrics CSV, when done).
    """
    t0 = time.perf_counter()
    record: dict[str, Any] = {
        "label": task["label"], "path": task["path"], "status": "failed", "error": None,
        "input_sha256": None, "config_sha256": task["config_hash"],
        "worker": f"{socket.gethostname()}:{os.getpid()}",
        "n_metric_rows": 0,
    }
    try:
        record["input_sha256"] = file_sha256(task["path"])
    except OSError as exc:
        record["error"] = f"{task['path']}: cannot read the weather file ({exc.strerror})"
        record["seconds"] = round(time.perf_counter() - t0, 4)
        return record
    try:
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            ds, metrics = compute_climate(task["path"], task["settings"], task.get("utc_offset"))
        notes = sorted({" ".join(str(w.message).split()) for w in caught})
        if notes:
            record["warnings"] = notes
        ds.attrs.update({
            "climate_label": task["label"],
            "weather_file_sha256": record["input_sha256"],
            "config_sha256": task["config_hash"],
            "batch_warnings": "; ".join(notes),
            "portfolio": task.get("portfolio", ""),
            "caution": CAUTION,
        })
        metrics = metrics.copy()
        metrics.insert(0, "climate", task["label"])
        nc_path, metrics_path = _outputs(Path(task["out_dir"]), task["label"])
        hourly = task["settings"].get("hourly", {})
        _write_netcdf(_hourly_subset(ds, hourly), nc_path, hourly.get("dtype", "float64"))
        atomic_write(metrics_path, lambda tmp: metrics.to_csv(tmp, index=False),
                     durable=False)
        # what resume checks the files against (a crash before the end-of-run flush
        # leaves new files empty or short, under their final names)
        record["output_bytes"] = [p.stat().st_size for p in (nc_path, metrics_path)]
        record["n_metric_rows"] = int(len(metrics))
        record["status"] = "done"
    except MemoryError:
        record["error"] = "MemoryError: the worker ran out of memory on this climate"
    except Exception as exc:  # failure isolation: one bad climate never stops the others
        record["error"] = one_line(exc)
    record["seconds"] = round(time.perf_counter() - t0, 4)
    return record


def _hourly_subset(ds, hourly: dict[str, Any]):
    """Keep the hourly variables asked for (dew variables exist only with dew on)."""
    names = hourly.get("variables") or []
    if names:
        ds = ds[[n for n in names if n in ds.data_vars]]
    return ds


def _write_netcdf(ds, path: Path, dtype: str = "float64") -> None:
    import dask
    import numpy as np

    from solair.netcdf_h5py import write_netcdf_h5py

    encoding = {name: {"dtype": dtype} for name, var in ds.data_vars.items()
                if np.issubdtype(var.dtype, np.floating) and dtype != "float64"}

    def write(tmp: Path) -> None:
        # straight through h5py: the same file as xarray's h5netcdf writer reads back,
        # without its per-variable look-ups (about 60 -> 20 ms for 2 hourly variables)
        with dask.config.set(scheduler="synchronous"):  # no distributed lock per file
            write_netcdf_h5py(ds, tmp, encoding)

    atomic_write(path, write, durable=False)  # made durable at the end of the run


def compute_climate(path: str, settings: dict[str, Any], utc_offset: float | None = None):
    """Hourly results (time x surface x finish) and the metrics table of one weather file.

    Calls :func:`solair.compare.compare` with the portfolio's surfaces, finishes,
    construction and model choices; keeps only the metric columns asked for.
    """
    import solair
    from solair.compare import compare
    from solair.constructions import Construction, Layer
    from solair.finishes import Finish

    weather = solair.read_weather(path, utc_offset=utc_offset)
    surfaces = [solair.Surface(s["name"], s["surface_tilt"], s["surface_azimuth"])
                for s in settings["surfaces"]]
    finishes = [Finish(**f) for f in settings["finishes"]]
    construction = settings.get("construction")
    if construction is not None:
        construction = Construction(**{**construction, "layers": tuple(
            Layer(**layer) for layer in construction["layers"])})
    options = {k: v for k, v in settings["models"].items() if v is not None}
    threshold = settings.get("metrics", {}).get("threshold")
    if threshold is not None:
        options["threshold"] = threshold
    ds, metrics = compare(weather, surfaces, finishes, construction=construction, **options)
    keep = settings.get("metrics", {}).get("keep") or []
    if keep:
        from solair.compare import METRIC_COLUMNS

        ids = [c for c in metrics.columns if c not in METRIC_COLUMNS]
        metrics = metrics[ids + [c for c in keep if c not in ids]]
    return ds, metrics


# --------------------------------------------------------------------------- manifest

def read_manifest(path: str | os.PathLike) -> dict[str, dict[str, Any]]:
    """The latest task record per climate label; a torn last line (killed run) is ignored."""
    latest: dict[str, dict[str, Any]] = {}
    try:
        fh = open(path, encoding="utf-8")
    except FileNotFoundError:
        return latest
    with fh:
        for line in fh:
            try:
                rec = json.loads(line)
            except json.JSONDecodeError:
                continue
            if isinstance(rec, dict) and rec.get("event") == "task" and "label" in rec:
                latest[rec["label"]] = rec
    return latest


class _Manifest:
    """Append-only JSON lines, one per event, flushed and fsynced as written (client only)."""

    def __init__(self, path: Path):
        self.path = path
        self._fh: TextIO = open(path, "a", encoding="utf-8")
        # a killed run can leave a torn last line: start on a fresh line
        if self._fh.tell() > 0:
            with open(path, "rb") as fh:
                fh.seek(-1, os.SEEK_END)
                if fh.read(1) != b"\n":
                    self._fh.write("\n")

    def write(self, record: dict[str, Any]) -> None:
        self._fh.write(json.dumps(record, sort_keys=True, default=str) + "\n")
        self._fh.flush()
        os.fsync(self._fh.fileno())

    def close(self) -> None:
        self._fh.close()


# --------------------------------------------------------------------------- the run

@dataclass
class BatchResult:
    """What a batch run did. ``exit_code`` is 1 when any climate failed, else 0."""

    output_dir: Path
    done: list[str] = field(default_factory=list)
    skipped: list[str] = field(default_factory=list)
    failed: list[dict[str, Any]] = field(default_factory=list)
    summary_csv: Path | None = None
    summary_parquet: Path | None = None
    manifest: Path | None = None
    seconds: float = 0.0

    @property
    def exit_code(self) -> int:
        return 1 if self.failed else 0

    def line(self) -> str:
        """The closing one-line count."""
        return (f"{len(self.done)} done, {len(self.skipped)} skipped, {len(self.failed)} failed "
                f"in {self.seconds:.1f} s")


def run_portfolio(
    portfolio: ResolvedPortfolio,
    *,
    workers: int | None = None,
    scheduler: str | None = None,
    scheduler_file: str | None = None,
    force: bool = False,
    memory_limit: str | float | None = "auto",
    progress: Any = None,
) -> BatchResult:
    """Run every climate of a resolved portfolio; stream results to disk as tasks finish.

    Parameters
    ----------
    portfolio : ResolvedPortfolio
        From :meth:`solair.portfolio.Portfolio.resolve`.
    workers : int, optional
        ``0`` runs serially in this process; ``N`` starts a local dask cluster of
        N single-threaded worker processes; None (default) takes one worker per core.
    scheduler, scheduler_file : str, optional
        Connect to an existing dask.distributed scheduler instead (address, or
        scheduler file); the environment variable ``DASK_SCHEDULER_ADDRESS`` is
        used when neither is given and ``workers`` is None.
    force : bool
        Recompute every climate even when its inputs and settings are unchanged.
    memory_limit : str or float
        Memory limit per local worker (dask syntax, e.g. "4GiB"; "auto" shares
        the machine's memory among the workers).
    progress : object, optional
        Told of progress: ``progress.skip(n)`` once with the number of unchanged
        climates, ``progress.update(record)`` as each task finishes,
        ``progress.close()`` at the end (e.g. :class:`solair.cli.batch.Progress`);
        None keeps quiet.

    Returns
    -------
    BatchResult

    Raises
    ------
    ConfigurationError
        Conflicting options, a scheduler that cannot be reached, or versions that
        differ between the client and the workers.
    """
    if scheduler and scheduler_file:
        raise ConfigurationError("give either --scheduler or --scheduler-file, not both")
    if workers is not None and workers < 0:
        raise ConfigurationError(f"--workers = {workers}: must be 0 (serial) or a positive count")
    if workers is not None and (scheduler or scheduler_file):
        raise ConfigurationError(
            "--workers sets up a local cluster; it cannot be combined with --scheduler or "
            "--scheduler-file (the cluster decides its own workers)")
    if workers is None and not (scheduler or scheduler_file):
        scheduler = os.environ.get("DASK_SCHEDULER_ADDRESS") or None
    if isinstance(memory_limit, str) and memory_limit != "auto":
        from dask.utils import parse_bytes

        try:
            parse_bytes(memory_limit)
        except ValueError:
            raise ConfigurationError(
                f"--memory-limit = {memory_limit!r}: not a size; give e.g. '4GiB', '2000MB' or "
                f"'auto'") from None

    out_dir = Path(portfolio.output_dir)
    try:
        (out_dir / CLIMATES_DIR).mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise ConfigurationError(f"output = {str(out_dir)!r}: cannot create the folder "
                                 f"({exc.strerror})") from None
    with _folder_lock(out_dir):
        return _run(portfolio, out_dir, workers=workers, scheduler=scheduler,
                    scheduler_file=scheduler_file, force=force, memory_limit=memory_limit,
                    progress=progress)


@contextlib.contextmanager
def _folder_lock(out_dir: Path) -> Iterator[None]:
    """One run per output folder at a time (an flock the OS drops if the run is killed)."""
    import fcntl

    fh = open(out_dir / ".solair-batch.lock", "a+")
    try:
        try:
            fcntl.flock(fh.fileno(), fcntl.LOCK_EX | fcntl.LOCK_NB)
        except OSError:
            raise ConfigurationError(
                f"output = {str(out_dir)!r}: another solair batch is running on this folder; "
                f"wait for it or give another --output") from None
        yield
    finally:
        fh.close()


def _run(portfolio: ResolvedPortfolio, out_dir: Path, *, workers, scheduler, scheduler_file,
         force, memory_limit, progress) -> BatchResult:
    t0 = time.monotonic()
    _remove_stale_temporaries(out_dir)
    cfg_hash = portfolio.config_hash
    vers = versions()
    result = BatchResult(output_dir=out_dir, manifest=out_dir / MANIFEST)
    previous = read_manifest(out_dir / MANIFEST)

    tasks: list[dict[str, Any]] = []
    skipped: list[dict[str, Any]] = []
    for clim in portfolio.climates:
        task_hash = portfolio.task_config_hash(clim)
        task = {"label": clim.label, "path": clim.path, "out_dir": str(out_dir),
                "settings": portfolio.settings, "config_hash": task_hash,
                "utc_offset": clim.utc_offset, "portfolio": portfolio.name}
        prev = previous.get(clim.label)
        # the client hashes a weather file only to decide a resume; the task hashes what it
        # reads itself (a first or forced run of 200 files spares ~0.5 s before any task starts)
        sha = None
        if not force and prev and prev.get("status") in ("done", "skipped"):
            with contextlib.suppress(OSError):
                sha = file_sha256(clim.path)
        if sha is not None and _is_current(prev, sha, task_hash, out_dir):
            skipped.append({**prev, "status": "skipped", "seconds": 0.0, "started": None,
                            "finished": None})
        else:
            tasks.append(task)

    manifest = _Manifest(out_dir / MANIFEST)
    bar = progress if progress is not None else _Quiet()
    try:
        manifest.write({"event": "run", "portfolio": portfolio.name, "source": portfolio.source,
                        "config_sha256": cfg_hash, "settings": portfolio.settings,
                        "versions": vers, "n_climates": len(portfolio.climates),
                        "n_to_run": len(tasks), "force": force, "started": _now()})
        for rec in skipped:
            result.skipped.append(rec["label"])
            manifest.write({**_task_record(rec, vers), "status": "skipped",
                            "skipped_because": "weather file and settings unchanged"})
        bar.skip(len(skipped))

        def finish(rec: dict[str, Any]) -> None:
            if rec["status"] == "done":
                result.done.append(rec["label"])
            else:
                result.failed.append(rec)
                for p in _outputs(out_dir, rec["label"]):  # never keep stale results
                    with contextlib.suppress(OSError):
                        p.unlink()
            manifest.write(_task_record(rec, vers))
            bar.update(rec)

        if tasks:
            if workers == 0:
                for task in tasks:
                    finish(_run_task(task))
            else:
                records = out_dir / RECORDS_DIR
                records.mkdir(exist_ok=True)
                run_on_dask(_run_task, tasks, finish, _lost_task, workers=workers,
                            scheduler=scheduler, scheduler_file=scheduler_file,
                            memory_limit=memory_limit, client_versions=vers,
                            record_dir=records)
    finally:
        bar.close()
        manifest.close()
        if tasks:  # the outputs were written without fsync: one flush makes them durable
            flush_filesystem(out_dir / CLIMATES_DIR)

    ok = [c.label for c in portfolio.climates if c.label in set(result.done) | set(result.skipped)]
    result.summary_csv, result.summary_parquet = _write_summary(out_dir, ok)
    result.seconds = time.monotonic() - t0
    return result


class _Quiet:
    def skip(self, n: int) -> None:
        pass

    def update(self, rec: dict[str, Any]) -> None:
        pass

    def close(self) -> None:
        pass


def _now() -> str:
    return time.strftime("%Y-%m-%dT%H:%M:%SZ", time.gmtime())


def _run_task(task: dict[str, Any]) -> dict[str, Any]:
    """:func:`run_climate` with its start time (what a worker, or the serial loop, runs)."""
    tune_allocator()  # once per process: keep the hourly arrays' heap pages between tasks
    started = _now()
    rec = run_climate(task)
    rec["started"] = started
    return rec


def _lost_task(task: dict[str, Any], exc: BaseException) -> dict[str, Any]:
    """The failed record of a task that returned nothing (e.g. its worker was killed)."""
    sha = None
    with contextlib.suppress(OSError):
        sha = file_sha256(task["path"])
    return {"label": task["label"], "path": task["path"], "status": "failed",
            "error": one_line(exc), "input_sha256": sha,
            "config_sha256": task["config_hash"], "seconds": None, "worker": None}


def _task_record(rec: dict[str, Any], vers: dict[str, str]) -> dict[str, Any]:
    return {
        "event": "task", "label": rec["label"],
        "weather_file": rec.get("path") or rec.get("weather_file"),
        "input_sha256": rec.get("input_sha256"), "config_sha256": rec.get("config_sha256"),
        "status": rec["status"], "error": rec.get("error"), "seconds": rec.get("seconds"),
        "worker": rec.get("worker"), "started": rec.get("started"),
        "finished": rec.get("finished") or _now(), "versions": rec.get("versions") or vers,
        "n_metric_rows": rec.get("n_metric_rows"), "warnings": rec.get("warnings", []),
        "output_bytes": rec.get("output_bytes"),
    }


def _is_current(prev: dict[str, Any] | None, sha: str, cfg_hash: str, out_dir: Path) -> bool:
    if not prev or prev.get("status") not in ("done", "skipped"):
        return False
    if prev.get("input_sha256") != sha or prev.get("config_sha256") != cfg_hash:
        return False
    try:
        actual = [p.stat().st_size for p in _outputs(out_dir, prev["label"])]
    except OSError:  # an output is missing
        return False
    sizes = prev.get("output_bytes")  # None in manifests written before sizes were recorded
    return sizes is None or actual == list(sizes)


def _remove_stale_temporaries(out_dir: Path) -> None:
    """Remove temporary files a killed run left behind (they never carry a final name)."""
    for folder in (out_dir, out_dir / CLIMATES_DIR):
        for p in folder.glob(f".*{TMP_MARK}*"):
            with contextlib.suppress(OSError):
                p.unlink()
    for p in (out_dir / RECORDS_DIR).glob("*.json"):  # records of tasks a killed run never read
        with contextlib.suppress(OSError):
            p.unlink()


def _write_summary(out_dir: Path, labels: Iterable[str]) -> tuple[Path | None, Path | None]:
    """Concatenate the per-climate metric files into summary.csv (+ .parquet), atomically.

    The metric files of one configuration share their header, so the CSV is their text
    joined under one header (no parse and re-format: ~0.1 ms per climate instead of a
    ``read_csv`` each, which made the summary of 200 climates cost about a second at the end
    of the run); files with another header fall back to a pandas concat (union of columns).
    The Parquet table is parsed once from the finished CSV.
    """
    paths = [_outputs(out_dir, label)[1] for label in labels]
    if not paths:
        return None, None
    texts = [p.read_text(encoding="utf-8") for p in paths]
    heads = {t.split("\n", 1)[0] for t in texts}
    if len(heads) == 1:
        def write(tmp: Path) -> None:
            with open(tmp, "w", encoding="utf-8", newline="") as fh:
                fh.write(texts[0].split("\n", 1)[0] + "\n")
                for t in texts:
                    body = t.split("\n", 1)[1] if "\n" in t else ""
                    fh.write(body if not body or body.endswith("\n") else body + "\n")
    else:
        import io

        import pandas as pd

        table = pd.concat([pd.read_csv(io.StringIO(t)) for t in texts], ignore_index=True)

        def write(tmp: Path) -> None:
            table.to_csv(tmp, index=False)
    csv_path = atomic_write(out_dir / f"{SUMMARY}.csv", write)
    parquet_path = None
    try:
        import pyarrow  # noqa: F401
    except ImportError:
        pass
    else:
        import pandas as pd

        table = pd.read_csv(csv_path)
        target = out_dir / f"{SUMMARY}.parquet"
        parquet_path = atomic_write(target, lambda tmp: table.to_parquet(tmp, index=False))
    return csv_path, parquet_path
