"""``solair batch``: run a portfolio of climates x surfaces x finishes.

Exit status: 0 when every climate is done or skipped, 1 when any climate failed
(each failure is listed in one line), 2 for a configuration error (the group
turns :class:`solair.errors.SolairError` into one stderr line).
"""

from __future__ import annotations

import sys
import time
from typing import Any, TextIO

import click


class Progress:
    """A progress bar with ETA on a terminal; one log line per finished task otherwise.

    On a terminal the bar is redrawn in place on ``stream`` (counts, elapsed
    time, ETA from the mean time per task run so far); elsewhere (CI, a queue's
    log file) each finished task prints one line, so logs never fill with
    carriage returns.
    """

    def __init__(self, total: int, stream: TextIO | None, tty: bool | None = None):
        self.total, self.stream = total, stream
        self.tty = bool(tty if tty is not None else (stream is not None and stream.isatty()))
        self.count = {"done": 0, "skipped": 0, "failed": 0}
        self.t0 = time.monotonic()
        self.n_run = 0

    def _finished(self) -> int:
        return sum(self.count.values())

    def skip(self, n: int) -> None:
        self.count["skipped"] += n
        if self.stream is not None and n and not self.tty:
            print(f"solair batch: {n} climate(s) unchanged since the last run, skipped",
                  file=self.stream, flush=True)
        self._draw()

    def update(self, rec: dict[str, Any]) -> None:
        self.count[rec["status"]] += 1
        self.n_run += 1
        if self.stream is None:
            return
        if self.tty:
            self._draw()
            if rec["status"] == "failed":
                self.stream.write("\r\x1b[K" + f"failed: {rec['label']}: {rec['error']}\n")
                self._draw()
        else:
            n = self._finished()
            what = f"{rec['status']} {rec['label']} ({rec.get('seconds', 0):.1f} s)"
            if rec["status"] == "failed":
                what += f": {rec['error']}"
            print(f"solair batch: [{n}/{self.total}] {what}", file=self.stream, flush=True)

    def _draw(self) -> None:
        if self.stream is None or not self.tty:
            return
        n, width = self._finished(), 30
        frac = n / self.total if self.total else 1.0
        bar = "#" * int(width * frac) + "." * (width - int(width * frac))
        elapsed = time.monotonic() - self.t0
        left = self.total - n
        eta = "--:--" if self.n_run == 0 else _hms(elapsed / self.n_run * left)
        c = self.count
        self.stream.write(f"\r[{bar}] {n}/{self.total} | done {c['done']}, skipped "
                          f"{c['skipped']}, failed {c['failed']} | elapsed {_hms(elapsed)} | "
                          f"ETA {eta}\x1b[K")
        self.stream.flush()

    def close(self) -> None:
        if self.stream is not None and self.tty:
            self._draw()
            self.stream.write("\n")
            self.stream.flush()


def _hms(seconds: float) -> str:
    s = int(round(seconds))
    return f"{s // 3600:d}:{s % 3600 // 60:02d}:{s % 60:02d}"


@click.command("batch")
@click.argument("portfolio", type=click.Path(dir_okay=False, path_type=str))
@click.option("--check", is_flag=True,
              help="Validate the portfolio file (schema, files, globs, names) and stop.")
@click.option("--workers", type=int, default=None, metavar="N",
              help="Local worker processes (default: one per core); 0 runs serially in-process. "
                   "Given, it wins over $DASK_SCHEDULER_ADDRESS.")
@click.option("--scheduler", metavar="ADDRESS", default=None,
              help="Address of an existing dask.distributed scheduler, e.g. tcp://host:8786 "
                   "(default: $DASK_SCHEDULER_ADDRESS if set).")
@click.option("--scheduler-file", type=click.Path(dir_okay=False, path_type=str), default=None,
              help="Scheduler file written by `dask scheduler --scheduler-file`.")
@click.option("--force", is_flag=True, help="Recompute every climate, even unchanged ones.")
@click.option("--output", "-o", type=click.Path(file_okay=False, path_type=str), default=None,
              help="Output folder (overrides the portfolio's `output`).")
@click.option("--memory-limit", default="auto", show_default=True, metavar="SIZE",
              help="Memory limit per local worker (e.g. 4GiB).")
def batch(portfolio: str, check: bool, workers: int | None, scheduler: str | None,
          scheduler_file: str | None, force: bool, output: str | None,
          memory_limit: str) -> None:
    """Run PORTFOLIO (a TOML file): one task per weather file, results streamed to disk.

    Writes, in the output folder, one NetCDF per climate (time x surface x
    finish) under climates/, summary.csv (and summary.parquet when pyarrow is
    installed) of the metrics per climate x surface x finish, and manifest.jsonl.
    Unchanged climates are skipped on a rerun. Exit status 0 when every
    climate is done or skipped, 1 when any failed, 2 for a configuration
    error. Results are an engineering estimate; verify against local codes
    and licensed professional practice.
    """
    from solair.portfolio import load_portfolio

    resolved = load_portfolio(portfolio).resolve(output)
    n_files = len(resolved.climates)
    if check:
        click.echo(f"{portfolio}: valid: {n_files} weather file(s), "
                   f"{len(resolved.settings['surfaces'])} surface(s), "
                   f"{len(resolved.settings['finishes'])} finish(es); output to "
                   f"{resolved.output_dir}")
        return
    from solair.batch import CAUTION, run_portfolio

    result = run_portfolio(resolved, workers=workers, scheduler=scheduler,
                           scheduler_file=scheduler_file, force=force,
                           memory_limit=memory_limit,
                           progress=Progress(len(resolved.climates), sys.stderr))
    for rec in result.failed:
        click.echo(f"failed: {rec['label']} ({rec['path']}): {rec['error']}", err=True)
    click.echo(f"solair batch: {result.line()}; results in {result.output_dir}", err=True)
    if result.summary_csv is not None:
        click.echo(f"summary: {result.summary_csv} ({CAUTION})", err=True)
    sys.exit(result.exit_code)
