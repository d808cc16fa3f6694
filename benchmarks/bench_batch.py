"""Benchmark of portfolio runs: throughput, parallel efficiency and worker memory.

200 climate-years (synthetic variants of the real NREL TMY3 files installed with pvlib:
Greensboro NC and Sand Point AK, with shifted temperatures and scaled irradiance and wind)
x 17 surfaces (the horizontal, tilts 30 and 90 degrees at 8 azimuths) x 4 catalogue finishes.

Prints, in one run:

* the time per climate-year of each stage in-process (read, compute, write);
* throughput [climate-years/s] with 1 and 2 local worker processes, and the parallel
  efficiency T1 / (2 T2): each measured run is a whole portfolio run of all the climates,
  as a user starts it (connect, version check, tasks, manifest, summary), on a cluster
  started (and warmed up with one climate per worker) beforehand and alone on the machine;
  1 and 2 workers take turns (1, 2, 1, 2, ...) so that a change of the machine's load hits
  both alike;
* the fraction of the workers' wall time spent inside tasks (what the orchestration costs);
* the peak RSS per worker process of the 2-worker cluster after 50 and after 200 climates.

Targets (issue 5): efficiency >= 85 %; peak RSS per worker flat within 10 % from 50 to 200
climates; >= 15 climate-years/s on the 2-core machine.

Usage::

    python benchmarks/bench_batch.py [--climates 200] [--repeats 2] [--response NAME]
        [--construction NAME] [--no-dew] [--hourly temp_surface,heat_flux] [--float32]
        [--keep-files] [--weather-dir DIR]
"""

from __future__ import annotations

import argparse
import contextlib
import logging
import os
import shutil
import sys
import tempfile
import time
import warnings
from pathlib import Path

import numpy as np

FINISHES = ["black_membrane", "white_single_ply_membrane", "grey_concrete", "galvanised_steel"]


def make_climates(folder: Path, n: int) -> list[Path]:
    import pvlib

    from solair.testing import tmy3_variant

    data = Path(pvlib.__path__[0]) / "data"
    sources = [data / "723170TYA.CSV", data / "703165TY.csv"]
    rng = np.random.default_rng(20261201)
    out = []
    for i in range(n):
        dst = folder / f"variant_{i:03d}.csv"
        if not dst.exists():
            tmy3_variant(sources[i % 2], dst, d_temp=round(float(rng.uniform(-3, 3)), 1),
                         irradiance=round(float(rng.uniform(0.85, 1.0)), 3),
                         wind=round(float(rng.uniform(0.8, 1.3)), 2))
        out.append(dst)
    return out


OPTIONS: dict = {"response": None, "construction": None, "dew": None, "hourly": None}


def portfolio(climates: list[Path], out: Path, response: str | None):
    from solair.portfolio import portfolio_from_dict

    models = {} if response is None else {"response": response}
    if OPTIONS["dew"] is not None:
        models["dew"] = OPTIONS["dew"]
    data = {
        "name": "bench",
        "climates": [{"path": str(p)} for p in climates],
        "surfaces": {"set": "orientations_17"},
        "finishes": [{"name": f} for f in FINISHES],
        "models": models,
    }
    if OPTIONS["construction"]:
        data["construction"] = OPTIONS["construction"]
    if OPTIONS["hourly"]:
        data["hourly"] = OPTIONS["hourly"]
    pf = portfolio_from_dict(data, source=str(out / "bench.toml"))
    return pf.resolve(out)


def profile_one(path: Path, response: str | None, tmp: Path, top: int = 14) -> None:
    """Where the time of one task goes (cProfile, cumulative)."""
    import cProfile
    import io
    import pstats

    from solair import batch

    res = portfolio([path], tmp, response)
    (tmp / "climates").mkdir(parents=True, exist_ok=True)
    task = {"label": "p", "path": str(path), "out_dir": str(tmp), "settings": res.settings,
            "config_hash": "bench"}
    prof = cProfile.Profile()
    prof.enable()
    batch.run_climate(task)
    prof.disable()
    text = io.StringIO()
    pstats.Stats(prof, stream=text).sort_stats("cumulative").print_stats(top)
    lines = [ln for ln in text.getvalue().splitlines() if ln.strip()]
    start = next(i for i, ln in enumerate(lines) if ln.lstrip().startswith("ncalls"))
    print("\nprofile of one task (cumulative s):")
    for ln in lines[start:start + top + 1]:
        print("  " + ln.strip()[:150])


def stage_times(climates: list[Path], response: str | None, tmp: Path) -> dict[str, float]:
    """Median seconds per climate of read / compute (and its parts) / write, in-process."""
    import solair
    import solair.compare
    import solair.engine
    from solair import batch
    from solair.cluster import tune_allocator

    tune_allocator()  # as in every process that runs tasks
    res = portfolio(climates, tmp, response)
    settings = res.settings
    times: dict[str, list[float]] = {"read": [], "compute (incl. read)": [],
                                     "  exterior_forcing": [], "  sol_air": [],
                                     "  surface_response": [], "  rest of compare": [],
                                     "write NetCDF": [], "whole task": []}
    parts: dict[str, float] = {}

    def timed(name, fn):
        def wrapper(*args, **kwargs):
            t0 = time.perf_counter()
            try:
                return fn(*args, **kwargs)
            finally:
                parts[name] = parts.get(name, 0.0) + time.perf_counter() - t0
        return wrapper

    patches = [(solair.engine, "exterior_forcing", "  exterior_forcing"),
               (solair.engine, "sol_air", "  sol_air"),
               (solair.compare, "surface_response", "  surface_response")]
    hourly = settings.get("hourly", {})
    (tmp / "climates").mkdir(parents=True, exist_ok=True)
    for path in climates:
        t0 = time.perf_counter()
        solair.read_weather(path)
        times["read"].append(time.perf_counter() - t0)
        parts.clear()
        saved = [(mod, attr, getattr(mod, attr)) for mod, attr, _ in patches]
        for mod, attr, name in patches:
            setattr(mod, attr, timed(name, getattr(mod, attr)))
        try:
            t0 = time.perf_counter()
            ds, _ = batch.compute_climate(str(path), settings)
            whole = time.perf_counter() - t0
        finally:
            for mod, attr, fn in saved:
                setattr(mod, attr, fn)
        times["compute (incl. read)"].append(whole)
        for _, _, name in patches:
            times[name].append(parts.get(name, 0.0))
        times["  rest of compare"].append(whole - times["read"][-1] - sum(parts.values()))
        t0 = time.perf_counter()
        batch._write_netcdf(batch._hourly_subset(ds, hourly), tmp / "climates" / "x.nc",
                            hourly.get("dtype", "float64"))
        times["write NetCDF"].append(time.perf_counter() - t0)
        t0 = time.perf_counter()
        batch.run_climate({"label": "x", "path": str(path), "out_dir": str(tmp),
                           "settings": settings, "config_hash": "bench"})
        times["whole task"].append(time.perf_counter() - t0)
    return {k: float(np.median(v)) for k, v in times.items()}


def run_chunk(client, address: str, climates: list[Path], out: Path, response: str | None,
              n_workers: int) -> tuple[float, float]:
    """Wall time of run_portfolio on a running cluster, and the fraction of it spent in tasks."""
    from solair.batch import read_manifest, run_portfolio

    res = portfolio(climates, out, response)
    t0 = time.perf_counter()
    result = run_portfolio(res, scheduler=address, force=True)
    wall = time.perf_counter() - t0
    if result.failed:
        raise SystemExit(f"benchmark run failed: {result.failed[0]}")
    busy = sum(r["seconds"] for r in read_manifest(out / "manifest.jsonl").values())
    shutil.rmtree(out / "climates", ignore_errors=True)  # keep the disk use bounded
    return wall, busy / (n_workers * wall)


def _warm_up() -> None:
    import importlib

    for module in ("solair.engine", "solair.compare", "solair.batch"):  # imports paid before
        with contextlib.suppress(ImportError):                          # timing, as on a
            importlib.import_module(module)                             # long-lived worker


def _peak_rss_mib() -> float:
    import resource

    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0


def main(argv: list[str] | None = None) -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--climates", type=int, default=200)
    ap.add_argument("--small", type=int, default=50, help="climates of the first memory point")
    ap.add_argument("--repeats", type=int, default=2,
                    help="whole runs per cluster size, taking turns (default 2)")
    ap.add_argument("--response", default=None, help="response model passed to compare()")
    ap.add_argument("--construction", default=None, help="library construction (default none)")
    ap.add_argument("--no-dew", action="store_true", help="dew and frost off")
    ap.add_argument("--hourly", default=None,
                    help="hourly variables to keep in the NetCDF, comma-separated (default all)")
    ap.add_argument("--float32", action="store_true", help="write the hourly NetCDF as float32")
    ap.add_argument("--keep-files", action="store_true")
    ap.add_argument("--weather-dir", default=None,
                    help="folder to generate (or reuse) the weather variants in")
    args = ap.parse_args(argv)
    warnings.simplefilter("ignore")
    hourly = {}
    if args.hourly:
        hourly["variables"] = [v.strip() for v in args.hourly.split(",") if v.strip()]
    if args.float32:
        hourly["dtype"] = "float32"
    OPTIONS.update(construction=args.construction, dew=False if args.no_dew else None,
                   hourly=hourly or None)
    print(f"load average at start: {os.getloadavg()[0]:.2f} on {os.cpu_count()} cores")

    tmp = Path(tempfile.mkdtemp(prefix="solair-bench-batch-"))
    try:
        t0 = time.perf_counter()
        weather = Path(args.weather_dir) if args.weather_dir else tmp / "weather"
        weather.mkdir(parents=True, exist_ok=True)
        climates = make_climates(weather, args.climates)
        print(f"generated {len(climates)} climate-years in {time.perf_counter() - t0:.1f} s "
              f"(17 surfaces x {len(FINISHES)} finishes each; response={args.response}, "
              f"construction={args.construction}, dew={'off' if args.no_dew else 'on'}, "
              f"hourly={hourly or 'all variables, float64'})")

        stages = stage_times(climates[:4], args.response, tmp / "stages")
        print("\nper climate-year, in-process (median of 4):")
        for k, v in stages.items():
            print(f"  {k:<22} {v * 1000:8.0f} ms")

        profile_one(climates[0], args.response, tmp / "profile")

        from distributed import Client

        from solair.cluster import start_local_cluster

        n = len(climates)
        # 1 and 2 workers take turns on whole runs of all the climates, so that a change of the
        # machine's load (other jobs) hits both alike; each run has its cluster alone on the
        # machine (started before and closed after its timing, as a user's run has one), and
        # each cluster's workers have run a warm-up climate first (imports, compiled kernels
        # loaded from numba's cache), as long-lived workers have
        walls: dict[int, list[float]] = {1: [], 2: []}
        utils: dict[int, list[float]] = {1: [], 2: []}
        rss_small = rss2 = rss1 = None
        for i in range(args.repeats):
            for w in (1, 2):
                with start_local_cluster(w, silence_logs=logging.ERROR) as cl, Client(cl) as k:
                    k.run(_warm_up)
                    if w == 2 and rss_small is None:
                        # first memory point: a run of the first `small` climates
                        run_chunk(k, cl.scheduler_address, climates[:args.small], tmp / "small",
                                  args.response, 2)
                        rss_small = sorted(k.run(_peak_rss_mib).values())
                    else:
                        run_chunk(k, cl.scheduler_address, climates[:w], tmp / f"warm{w}",
                                  args.response, w)
                    wall, util = run_chunk(k, cl.scheduler_address, climates,
                                           tmp / f"w{w}_{i}", args.response, w)
                    rss = sorted(k.run(_peak_rss_mib).values())
                    if w == 2 and rss2 is None:
                        rss2 = rss
                    elif w == 1:
                        rss1 = rss
                walls[w].append(wall)
                utils[w].append(util)
                print(f"  run {i + 1}/{args.repeats}, {w} worker{'s' if w > 1 else ' '}: "
                      f"{n} climates in {wall:6.1f} s = {n / wall:6.2f} climate-years/s, "
                      f"workers busy {util * 100:5.1f} %, load {os.getloadavg()[0]:.1f}",
                      flush=True)
        t1, t2 = float(np.median(walls[1])), float(np.median(walls[2]))
        pairs = [a / (2 * b) for a, b in zip(walls[1], walls[2])]
        eff = t1 / (2 * t2)
        print(f"\n{n} climate-years x 17 surfaces x {len(FINISHES)} finishes, whole runs "
              f"(cluster start-up excluded), median of {args.repeats}:")
        print(f"  1 worker : {t1:7.1f} s  {n / t1:6.2f} climate-years/s")
        print(f"  2 workers: {t2:7.1f} s  {n / t2:6.2f} climate-years/s   (target >= 15)")
        print(f"  parallel efficiency T1/(2 T2): {eff * 100:5.1f} % (medians); per pair "
              f"{', '.join(f'{p * 100:.1f} %' for p in pairs)}   (target >= 85 %)")
        print(f"  worker utilisation (time in tasks / workers x wall): 1 worker "
              f"{np.mean(utils[1]) * 100:.1f} %, 2 workers {np.mean(utils[2]) * 100:.1f} %")
        print("\npeak RSS per worker process [MiB] (2 workers):")
        print(f"  after {args.small:3d} climates: "
              f"{', '.join(f'{r:.0f}' for r in (rss_small or rss2))}")
        print(f"  after {args.small + n:3d} climates ({args.small}, then {n}): "
              f"{', '.join(f'{r:.0f}' for r in rss2)}")
        growth = max(rss2) / max(rss_small or rss2) - 1.0
        print(f"  growth {args.small} -> {n}: {growth * 100:+.1f} %   (target within 10 %)")
        print(f"  1-worker cluster, after {1 + n} climates: {', '.join(f'{r:.0f}' for r in rss1)}")
        print(f"load average at the end: {os.getloadavg()[0]:.2f}")
    finally:
        if args.keep_files:
            print(f"\nfiles kept in {tmp}")
        else:
            with contextlib.suppress(OSError):
                shutil.rmtree(tmp)


if __name__ == "__main__":
    main(sys.argv[1:])
