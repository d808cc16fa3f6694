"""Batch runs of a portfolio: dask cluster and serial paths, failure isolation, resume, SIGKILL.

The weather files are the real NREL typical years installed with pvlib (Greensboro NC and
Sand Point AK TMY3, Miami FL TMY2), the open ERA-derived EPW of tests/data (45 N 8 E, rows in
UTC), and variants of the TMY3 files made here by shifting the air and dew-point temperatures,
scaling the irradiance and the wind (synthetic: for the batch machinery only). Few surfaces
and finishes keep the tests fast.
"""

from __future__ import annotations

import io
import json
import os
import platform
import shutil
import signal
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
import xarray as xr
from click.testing import CliRunner

from solair.batch import (
    _Manifest,
    atomic_write,
    flush_filesystem,
    read_manifest,
    run_portfolio,
)
from solair.cli import cli
from solair.cli.batch import Progress
from solair.cluster import check_version_skew
from solair.errors import ConfigurationError
from solair.portfolio import load_portfolio
from solair.testing import tmy3_variant

DATA = Path(__file__).parent / "data"
ERA_EPW = DATA / "tmy_45.000_8.000_2005_2023.epw"

# synthetic variants of the real TMY3 files: (source, name, temperature shift [K],
# irradiance factor, wind factor)
VARIANTS = [
    ("723170TYA.CSV", "greensboro_warm1", 1.0, 1.0, 1.0),
    ("723170TYA.CSV", "greensboro_warm2", 2.0, 0.95, 1.0),
    ("723170TYA.CSV", "greensboro_cool1", -1.0, 1.0, 1.2),
    ("723170TYA.CSV", "greensboro_dim", 0.0, 0.9, 1.0),
    ("703165TY.csv", "sand_point_warm1", 1.0, 1.0, 1.0),
    ("703165TY.csv", "sand_point_windy", 0.0, 1.0, 1.3),
    ("703165TY.csv", "sand_point_dim", 0.5, 0.9, 1.0),
]


def corrupt_copy(src: Path, dst: Path) -> Path:
    """A TMY3 file cut to its header and 48 data rows (a truncated download)."""
    lines = src.read_text(encoding="utf-8").splitlines(keepends=True)
    dst.write_text("".join(lines[:50]), encoding="utf-8")
    return dst


def portfolio_text(weather_dir: Path, *, absorptance: float = 0.85, extra: str = "") -> str:
    return f"""\
name = "test_estate"
output = "results"

[[climates]]
path = "{weather_dir}/*.csv"

[[climates]]
path = "{{pvlib_data}}/12839.tm2"
label = "miami"

[[climates]]
path = "{ERA_EPW}"
label = "era_45n_8e"
utc_offset = 0
{extra}
[models]
dew = false          # dew and frost are checked in test_compare; keep the machinery tests fast

[surfaces]
set = "none"

[[surfaces.custom]]
name = "roof"
surface_tilt = 0
surface_azimuth = 180

[[surfaces.custom]]
name = "south"
surface_tilt = 90
surface_azimuth = 180

[[finishes]]
name = "dark_membrane"
absorptance = {absorptance}
emissivity = 0.9

[[finishes]]
name = "white_membrane"
absorptance = 0.25
emissivity = 0.9
"""


@pytest.fixture(scope="module")
def estate(tmp_path_factory, pvlib_data_dir):
    """12 weather files (11 good, 1 corrupt) and a portfolio over them."""
    root = tmp_path_factory.mktemp("estate")
    weather = root / "weather"
    weather.mkdir()
    shutil.copy(pvlib_data_dir / "723170TYA.CSV", weather / "greensboro.csv")
    shutil.copy(pvlib_data_dir / "703165TY.csv", weather / "sand_point.csv")
    for src, name, dt, irr, wind in VARIANTS:
        tmy3_variant(pvlib_data_dir / src, weather / f"{name}.csv", dt, irr, wind)
    corrupt_copy(pvlib_data_dir / "723170TYA.CSV", weather / "truncated_download.csv")
    pf = root / "portfolio.toml"
    pf.write_text(portfolio_text(weather), encoding="utf-8")
    return root


N_FILES, N_GOOD = 12, 11


def nc_files(out: Path) -> list[Path]:
    return sorted((out / "climates").glob("*.nc"))


def statuses(out: Path) -> dict[str, str]:
    return {k: v["status"] for k, v in read_manifest(out / "manifest.jsonl").items()}


def run_cli(args: list[str]):
    return CliRunner().invoke(cli, ["batch", *args], catch_exceptions=False)


@pytest.fixture(scope="module")
def cluster_run(estate):
    """The portfolio run once on a local cluster of 2 worker processes (via the CLI)."""
    out = estate / "cluster"
    result = run_cli([str(estate / "portfolio.toml"), "--workers", "2", "-o", str(out)])
    return out, result


@pytest.mark.slow
def test_cluster_run_isolates_the_corrupt_file(estate, cluster_run):
    out, result = cluster_run
    assert result.exit_code == 1, result.output
    names = [p.stem for p in nc_files(out)]
    assert len(names) == N_GOOD and "truncated_download" not in names
    st = statuses(out)
    assert len(st) == N_FILES
    assert sorted(st.values()).count("done") == N_GOOD
    assert st["truncated_download"] == "failed"
    rec = read_manifest(out / "manifest.jsonl")["truncated_download"]
    assert "truncated_download.csv" in rec["error"] and "\n" not in rec["error"]
    assert "failed: truncated_download" in result.output
    assert "11 done, 0 skipped, 1 failed" in result.output
    # the manifest holds hashes, versions and timing
    good = read_manifest(out / "manifest.jsonl")["greensboro"]
    assert len(good["input_sha256"]) == 64 and len(good["config_sha256"]) == 64
    assert good["versions"]["pvlib"] and good["seconds"] > 0
    # the summary: one row per climate x surface x finish
    summary = pd.read_csv(out / "summary.csv")
    assert len(summary) == N_GOOD * 2 * 2
    assert set(summary["climate"]) == set(names)
    if (out / "summary.parquet").exists():
        pd.testing.assert_frame_equal(pd.read_parquet(out / "summary.parquet"), summary,
                                      check_dtype=False)
    with xr.open_dataset(nc_files(out)[0], engine="h5netcdf") as ds:
        assert dict(ds.sizes)["surface"] == 2 and dict(ds.sizes)["finish"] == 2
        assert ds.sizes["time"] == 8760
        assert "engineering estimate" in ds.attrs["caution"]


@pytest.mark.slow
def test_resume_skips_and_recomputes_exactly_what_changed(estate, cluster_run, tmp_path):
    src, _ = cluster_run
    out = tmp_path / "resumed"
    shutil.copytree(src, out)
    pf = estate / "portfolio.toml"
    # 1. a second run skips every good climate (the corrupt one is retried and fails again)
    result = run_cli([str(pf), "--workers", "0", "-o", str(out)])
    assert result.exit_code == 1
    assert "0 done, 11 skipped, 1 failed" in result.output
    mtimes = {p.name: p.stat().st_mtime_ns for p in nc_files(out)}
    # 2. one weather file changed: exactly that climate is recomputed
    weather = tmp_path / "weather"
    shutil.copytree(estate / "weather", weather)
    pf2 = tmp_path / "portfolio.toml"
    pf2.write_text(portfolio_text(weather), encoding="utf-8")
    # the weather folder moved, but contents and labels are the same: still skipped
    result = run_cli([str(pf2), "--workers", "0", "-o", str(out)])
    assert "0 done, 11 skipped, 1 failed" in result.output, result.output
    tmy3_variant(estate / "weather" / "greensboro_dim.csv", weather / "greensboro_dim.csv",
                 d_temp=0.3)
    result = run_cli([str(pf2), "--workers", "0", "-o", str(out)])
    assert "1 done, 10 skipped, 1 failed" in result.output, result.output
    assert read_manifest(out / "manifest.jsonl")["greensboro_dim"]["status"] == "done"
    changed = {p.name for p in nc_files(out) if p.stat().st_mtime_ns != mtimes[p.name]}
    assert changed == {"greensboro_dim.nc"}
    # 3. a climate's own setting (its utc_offset) changed: only that climate
    pf2.write_text(portfolio_text(weather).replace("utc_offset = 0", "utc_offset = 1"),
                   encoding="utf-8")
    result = run_cli([str(pf2), "--workers", "0", "-o", str(out)])
    assert "1 done, 10 skipped, 1 failed" in result.output, result.output
    # 4. a setting every climate depends on: all recomputed
    pf2.write_text(portfolio_text(weather, absorptance=0.8).replace(
        "utc_offset = 0", "utc_offset = 1"), encoding="utf-8")
    result = run_cli([str(pf2), "--workers", "0", "-o", str(out)])
    assert "11 done, 0 skipped, 1 failed" in result.output, result.output
    # 5. --force recomputes everything
    result = run_cli([str(pf2), "--workers", "0", "-o", str(out), "--force"])
    assert "11 done, 0 skipped, 1 failed" in result.output, result.output


def assert_same_results(a: Path, b: Path) -> None:
    fa, fb = nc_files(a), nc_files(b)
    assert [p.name for p in fa] == [p.name for p in fb]
    for x, y in zip(fa, fb):
        with (xr.open_dataset(x, engine="h5netcdf") as dx,
              xr.open_dataset(y, engine="h5netcdf") as dy):
            xr.testing.assert_identical(dx.load(), dy.load())
    pd.testing.assert_frame_equal(pd.read_csv(a / "summary.csv"), pd.read_csv(b / "summary.csv"))


@pytest.mark.slow
def test_serial_and_cluster_give_identical_results(estate, cluster_run):
    out_cluster, _ = cluster_run
    out = estate / "serial"
    result = run_cli([str(estate / "portfolio.toml"), "--workers", "0", "-o", str(out)])
    assert result.exit_code == 1
    assert_same_results(out_cluster, out)


@pytest.mark.slow
def test_sigkill_leaves_no_truncated_output(estate, cluster_run, tmp_path):
    out_ref, _ = cluster_run
    out = tmp_path / "killed"
    cmd = [sys.executable, "-m", "solair", "batch", str(estate / "portfolio.toml"),
           "--workers", "2", "-o", str(out)]
    proc = subprocess.Popen(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL,
                            start_new_session=True)
    try:
        deadline = time.monotonic() + 120
        while time.monotonic() < deadline and proc.poll() is None:
            if out.exists() and len(nc_files(out)) >= 2:
                break
            time.sleep(0.02)
        assert proc.poll() is None, "the run ended before it could be killed"
        os.killpg(proc.pid, signal.SIGKILL)  # the client and its worker processes
        proc.wait(timeout=30)
    finally:
        if proc.poll() is None:
            os.killpg(proc.pid, signal.SIGKILL)
    assert proc.returncode == -signal.SIGKILL
    present = nc_files(out)
    assert 2 <= len(present) < N_GOOD
    for path in present:  # every file under a final name is complete
        with xr.open_dataset(path, engine="h5netcdf") as ds:
            ds.load()
            assert ds.sizes["time"] == 8760
        with xr.open_dataset(out_ref / "climates" / path.name, engine="h5netcdf") as ref:
            with xr.open_dataset(path, engine="h5netcdf") as ds:
                xr.testing.assert_identical(ds.load(), ref.load())
    # the rerun completes and equals the uninterrupted run
    result = run_cli([str(estate / "portfolio.toml"), "--workers", "0", "-o", str(out)])
    assert result.exit_code == 1
    assert not list((out / "climates").glob(".*.tmp-*"))
    assert not list((out / ".records").glob("*.json"))  # records the killed client never read
    assert_same_results(out_ref, out)


@pytest.mark.slow
def test_existing_scheduler(estate, tmp_path, monkeypatch):
    """--scheduler and DASK_SCHEDULER_ADDRESS connect to a cluster started elsewhere.

    The cluster is the one ``solair.batch`` starts by itself, so this also checks that its
    workers were spawned with the allocator setting (``WORKER_ENV``) and without the
    dashboard's periodic work (``LOCAL_CLUSTER_CONFIG``).
    """
    import functools
    import os

    import dask
    from distributed import Client

    from solair.cluster import LOCAL_CLUSTER_CONFIG, WORKER_ENV, start_local_cluster

    weather = tmp_path / "weather"
    weather.mkdir()
    shutil.copy(estate / "weather" / "greensboro.csv", weather / "greensboro.csv")
    pf = tmp_path / "portfolio.toml"
    pf.write_text(portfolio_text(weather), encoding="utf-8")
    with start_local_cluster(1) as cluster:
        with Client(cluster) as client:
            for name, value in WORKER_ENV.items():
                got = client.run(functools.partial(os.getenv, name))
                assert list(got.values()) == [value], name
            for name, value in LOCAL_CLUSTER_CONFIG.items():
                got = client.run(functools.partial(dask.config.get, name))
                assert list(got.values()) == [value], name
            profiling = client.run(lambda dask_worker: "profile" in dask_worker.periodic_callbacks)
            assert list(profiling.values()) == [False]
        result = run_cli([str(pf), "--scheduler", cluster.scheduler_address,
                          "-o", str(tmp_path / "a")])
        assert result.exit_code == 0, result.output
        assert "3 done, 0 skipped, 0 failed" in result.output
        monkeypatch.setenv("DASK_SCHEDULER_ADDRESS", cluster.scheduler_address)
        result = run_cli([str(pf), "--force", "-o", str(tmp_path / "b")])
        assert "3 done, 0 skipped, 0 failed" in result.output, result.output
        monkeypatch.delenv("DASK_SCHEDULER_ADDRESS")
        # the file `dask scheduler --scheduler-file` writes holds the address under "address"
        (tmp_path / "scheduler.json").write_text(
            json.dumps({"type": "Scheduler", "address": cluster.scheduler_address}))
        result = run_cli([str(pf), "--scheduler-file", str(tmp_path / "scheduler.json"),
                          "-o", str(tmp_path / "c")])
        assert "3 done, 0 skipped, 0 failed" in result.output, result.output
    assert_same_results(tmp_path / "a", tmp_path / "b")
    assert_same_results(tmp_path / "a", tmp_path / "c")


# --------------------------------------------------------------------------- fast checks

@pytest.mark.parametrize(
    ("old", "new", "pattern"),
    [
        ('label = "miami"', 'label = "miami"\nlabell = "x"', r'climates\[1\] \("miami"\)\.labell'),
        ("surface_tilt = 0", 'surface_tilt = "flat"', r'surfaces\.custom\[0\] \("roof"\)'
                                                      r"\.surface_tilt = 'flat'"),
        ("absorptance = 0.25", "absorptance = 1.25",
         r'finishes\[1\] \("white_membrane"\)\.absorptance = 1\.25: input should be less'),
        ("12839.tm2", "12839.tm3", r'climates\[1\] \("miami"\)\.path = .*no such file'),
        ("*.csv", "*.epw", r"climates\[0\] .*\.path = .*the glob pattern matches no file"),
    ],
)
def test_configuration_errors_exit_2(estate, tmp_path, old, new, pattern):
    import re

    text = (estate / "portfolio.toml").read_text(encoding="utf-8")
    assert old in text
    pf = tmp_path / "portfolio.toml"
    pf.write_text(text.replace(old, new, 1), encoding="utf-8")
    result = CliRunner().invoke(cli, ["batch", str(pf), "--workers", "0"])
    assert result.exit_code == 2, result.output
    assert "Traceback" not in result.output
    assert re.search(pattern, result.output), result.output
    assert not (tmp_path / "results").exists()


def test_conflicting_options_exit_2(estate, tmp_path):
    pf = estate / "portfolio.toml"
    result = CliRunner().invoke(cli, ["batch", str(pf), "--workers", "2", "--scheduler",
                                      "tcp://127.0.0.1:1", "-o", str(tmp_path)])
    assert result.exit_code == 2
    assert "cannot be combined with --scheduler" in result.output
    result = CliRunner().invoke(cli, ["batch", str(pf), "--workers", "-1", "-o", str(tmp_path)])
    assert result.exit_code == 2 and "--workers = -1" in result.output
    result = CliRunner().invoke(cli, ["batch", str(pf), "--memory-limit", "lots", "-o",
                                      str(tmp_path)])
    assert result.exit_code == 2 and "--memory-limit = 'lots': not a size" in result.output


def test_unreachable_scheduler_exit_2(estate, tmp_path, monkeypatch):
    import solair.cluster

    monkeypatch.setattr(solair.cluster, "CONNECT_TIMEOUT", "1s")
    result = CliRunner().invoke(cli, ["batch", str(estate / "portfolio.toml"), "--scheduler",
                                      "tcp://127.0.0.1:9", "-o", str(tmp_path)])
    assert result.exit_code == 2, result.output
    assert "cannot connect to the dask scheduler 'tcp://127.0.0.1:9'" in result.output


class _FakeClient:
    def __init__(self, worker_versions):
        self._versions = worker_versions

    def get_versions(self, check=False):
        return {}

    def run(self, fn):
        return {"tcp://10.0.0.5:4000": self._versions}


def test_version_skew_is_refused():
    from solair.cluster import versions

    here = versions()
    check_version_skew(_FakeClient(dict(here)), here)  # same versions: no error
    with pytest.raises(ConfigurationError,
                       match=r"worker tcp://10\.0\.0\.5:4000 runs other versions than this "
                             r"client: pvlib .* here but 0\.9\.0 on the worker"):
        check_version_skew(_FakeClient({**here, "pvlib": "0.9.0"}), here)


@pytest.mark.parametrize("durable", [True, False])
def test_atomic_write_leaves_old_file_or_new_file(tmp_path, durable):
    target = tmp_path / "x.csv"
    atomic_write(target, lambda tmp: tmp.write_text("old"), durable=durable)

    def broken(tmp: Path) -> None:
        tmp.write_text("half")
        raise OSError("disk full")

    with pytest.raises(OSError, match="disk full"):
        atomic_write(target, broken, durable=durable)
    assert target.read_text() == "old"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["x.csv"]
    atomic_write(target, lambda tmp: tmp.write_text("new"), durable=durable)
    assert target.read_text() == "new"
    flush_filesystem(tmp_path)  # syncfs on Linux; must not fail on a plain folder


def test_manifest_survives_a_torn_last_line(tmp_path):
    path = tmp_path / "manifest.jsonl"
    m = _Manifest(path)
    m.write({"event": "task", "label": "a", "status": "done"})
    m.close()
    with open(path, "a") as fh:
        fh.write('{"event": "task", "label": "b", "sta')  # killed mid-write
    assert set(read_manifest(path)) == {"a"}
    m = _Manifest(path)
    m.write({"event": "task", "label": "b", "status": "failed"})
    m.close()
    assert {k: v["status"] for k, v in read_manifest(path).items()} == {"a": "done",
                                                                       "b": "failed"}
    assert all(json.loads(ln) for ln in path.read_text().splitlines()[:1])


def test_progress_lines_when_not_a_terminal():
    stream = io.StringIO()
    bar = Progress(3, stream, tty=False)
    bar.skip(1)
    bar.update({"label": "a", "status": "done", "seconds": 1.25})
    bar.update({"label": "b", "status": "failed", "seconds": 0.1, "error": "b.csv: bad"})
    bar.close()
    text = stream.getvalue()
    assert "\r" not in text
    assert text.splitlines() == [
        "solair batch: 1 climate(s) unchanged since the last run, skipped",
        "solair batch: [2/3] done a (1.2 s)",
        "solair batch: [3/3] failed b (0.1 s): b.csv: bad",
    ]


def test_progress_bar_on_a_terminal():
    stream = io.StringIO()
    bar = Progress(4, stream, tty=True)
    bar.update({"label": "a", "status": "done", "seconds": 1.0})
    bar.close()
    text = stream.getvalue()
    assert "\r[" in text and "1/4" in text and "ETA 0:00:" in text
    assert text.endswith("\n")


def only_folder(text: str, keep_from: str = "[surfaces]") -> str:
    """``portfolio_text`` with only its weather-folder climate: the other climates (and
    whatever stands before ``keep_from``) are cut out."""
    start = text.index('[[climates]]\npath = "{pvlib_data}')
    return text[:start] + text[text.index(keep_from):]


def test_serial_run_small(estate, tmp_path, pvlib_data_dir):
    """One good file and one corrupt one, serially in-process, through the library."""
    weather = tmp_path / "weather"
    weather.mkdir()
    shutil.copy(pvlib_data_dir / "723170TYA.CSV", weather / "greensboro.csv")
    corrupt_copy(pvlib_data_dir / "723170TYA.CSV", weather / "broken.csv")
    pf = tmp_path / "portfolio.toml"
    pf.write_text(only_folder(portfolio_text(weather)), encoding="utf-8")
    res = run_portfolio(load_portfolio(pf).resolve(), workers=0)
    assert res.done == ["greensboro"] and [r["label"] for r in res.failed] == ["broken"]
    assert res.exit_code == 1
    with xr.open_dataset(tmp_path / "results" / "climates" / "greensboro.nc",
                         engine="h5netcdf") as ds:
        for name, var in ds.data_vars.items():
            assert "units" in var.attrs and "long_name" in var.attrs, name
            if np.issubdtype(var.dtype, np.floating):
                assert not np.isnan(var.values).all(), name


def test_hourly_subset_float32_and_kept_metrics(tmp_path, pvlib_data_dir):
    """[hourly] and [metrics] choose what is written; both are part of the configuration hash."""
    weather = tmp_path / "weather"
    weather.mkdir()
    shutil.copy(pvlib_data_dir / "703165TY.csv", weather / "sand_point.csv")
    text = only_folder(portfolio_text(weather), keep_from="[models]")
    text += ('\n[hourly]\nvariables = ["temp_surface", "temp_sol_air"]\ndtype = "float32"\n'
             '\n[metrics]\nkeep = ["temp_surface_max", "dew_hours"]\n')
    pf = tmp_path / "portfolio.toml"
    pf.write_text(text, encoding="utf-8")
    res = run_portfolio(load_portfolio(pf).resolve(), workers=0)
    assert res.done == ["sand_point"], res.failed
    with xr.open_dataset(tmp_path / "results" / "climates" / "sand_point.nc",
                         engine="h5netcdf") as ds:
        assert sorted(ds.data_vars) == ["temp_sol_air", "temp_surface"]
        assert ds["temp_surface"].dtype == np.float32
    table = pd.read_csv(tmp_path / "results" / "summary.csv")
    assert {"climate", "surface", "finish", "temp_surface_max", "dew_hours"} <= set(table)
    assert "heat_gain" not in table
    before = load_portfolio(pf).resolve().config_hash
    pf.write_text(text.replace('dtype = "float32"', 'dtype = "float64"'), encoding="utf-8")
    assert load_portfolio(pf).resolve().config_hash != before


def test_resume_recomputes_outputs_a_crash_left_short(tmp_path, pvlib_data_dir):
    """The per-climate files are renamed into place without an fsync each (one flush of the
    file system ends the run): an operating-system crash before that flush can leave a new
    file empty or short under its final name. Resume compares each output's size with the one
    the manifest recorded and recomputes the climate whose files differ; the others are
    skipped."""
    weather = tmp_path / "weather"
    weather.mkdir()
    for name in ("a.csv", "b.csv"):
        shutil.copy(pvlib_data_dir / "703165TY.csv", weather / name)
    pf = tmp_path / "portfolio.toml"
    pf.write_text(only_folder(portfolio_text(weather)), encoding="utf-8")
    res = run_portfolio(load_portfolio(pf).resolve(), workers=0)
    assert res.done == ["a", "b"], res.failed
    out = tmp_path / "results"
    manifest = read_manifest(out / "manifest.jsonl")
    for label in ("a", "b"):
        sizes = manifest[label]["output_bytes"]
        assert sizes == [(out / "climates" / f"{label}{ext}").stat().st_size
                         for ext in (".nc", ".metrics.csv")]
    nc = out / "climates" / "a.nc"
    good = nc.read_bytes()
    nc.write_bytes(b"")  # what delayed allocation leaves of a new file after a power cut
    res = run_portfolio(load_portfolio(pf).resolve(), workers=0)
    assert (res.done, res.skipped) == (["a"], ["b"])
    assert nc.read_bytes() == good
    csv = out / "climates" / "b.metrics.csv"
    csv.write_bytes(csv.read_bytes()[:100])  # a short file
    res = run_portfolio(load_portfolio(pf).resolve(), workers=0)
    assert (res.done, res.skipped) == (["b"], ["a"])


def test_one_run_per_output_folder(tmp_path, estate):
    """A second run on a folder that a live run holds is refused (the lock dies with the run)."""
    import fcntl

    out = tmp_path / "busy"
    (out / "climates").mkdir(parents=True)
    with open(out / ".solair-batch.lock", "a+") as fh:
        fcntl.flock(fh.fileno(), fcntl.LOCK_EX | fcntl.LOCK_NB)
        result = CliRunner().invoke(cli, ["batch", str(estate / "portfolio.toml"), "--workers",
                                          "0", "-o", str(out)])
    assert result.exit_code == 2
    assert "another solair batch is running on this folder" in result.output


def _lost_marker(task, exc):
    return {"label": task["label"], "status": "failed", "error": type(exc).__name__}


@pytest.mark.slow
def test_run_on_dask_hands_on_tasks_that_return_nothing():
    """A task whose future raises (here a KeyError inside the worker, as a killed worker's
    KilledWorker would) reaches ``finish`` as ``lost(task, exc)``; the others complete."""
    import operator

    from solair.cluster import run_on_dask, start_local_cluster
    from solair.provenance import versions

    tasks = [{"label": "a", "value": 1}, {"label": "b"}, {"label": "c", "value": 3}]
    got = []
    with start_local_cluster(1) as cluster:
        run_on_dask(operator.itemgetter("value"), tasks,
                    lambda rec: got.append(rec), _lost_marker, workers=None,
                    scheduler=cluster.scheduler_address, scheduler_file=None,
                    memory_limit=None, client_versions=versions())
    assert sorted(got, key=str) == sorted(
        [1, 3, {"label": "b", "status": "failed", "error": "KeyError"}], key=str)


def _record_or_set(task):
    if task["label"] == "set":
        return {1, 2}  # JSON cannot hold it: left for the client to fetch from the worker
    return {"label": task["label"], "twice": 2 * task["value"]}


@pytest.mark.slow
def test_run_on_dask_takes_records_from_the_shared_folder(tmp_path, monkeypatch):
    """With ``record_dir`` the workers leave their records as JSON files and the client reads
    (and removes) them instead of fetching each result; a record JSON cannot hold, and a task
    that failed, still arrive through the future."""
    import distributed

    from solair.cluster import run_on_dask, start_local_cluster
    from solair.provenance import versions

    fetched = []
    real_result = distributed.Future.result

    def counting_result(self, *args, **kwargs):
        fetched.append(self.key)
        return real_result(self, *args, **kwargs)

    monkeypatch.setattr(distributed.Future, "result", counting_result)
    tasks = [{"label": "a", "value": 1}, {"label": "b"}, {"label": "c", "value": 3},
             {"label": "set"}]
    got = []
    records = tmp_path / "records"
    records.mkdir()
    with start_local_cluster(1) as cluster:
        run_on_dask(_record_or_set, tasks, got.append, _lost_marker, workers=None,
                    scheduler=cluster.scheduler_address, scheduler_file=None,
                    memory_limit=None, client_versions=versions(), record_dir=records)
    assert sorted(got, key=str) == sorted(
        [{"label": "a", "twice": 2}, {"label": "c", "twice": 6}, {1, 2},
         {"label": "b", "status": "failed", "error": "KeyError"}], key=str)
    assert sorted(k.split("-")[2] for k in fetched) == ["b", "set"]  # the others from files
    assert list(records.iterdir()) == []


@pytest.mark.skipif(platform.libc_ver()[0] != "glibc", reason="mallopt is glibc's")
def test_tune_allocator_takes_on_glibc():
    """Every task process gets the allocator thresholds, whoever started it (mallopt)."""
    from solair.cluster import tune_allocator

    assert tune_allocator() is True
    assert tune_allocator() is True  # once per process; a second call changes nothing
