"""Benchmark: transient surface response, all surface x finish columns at once vs one at a time.

One climate-year (Greensboro NC TMY3, shipped with pvlib) x 17 orientations (tilts 0, 30 and
90 at 8 azimuths, the horizontal once) x 6 finishes, transient conduction (BDF2, 10-minute
steps) through the 4-layer ``insulated_membrane_roof``, dew and frost on, ISO 6946 R_si by
heat-flow direction. The exterior forcing and the sol-air temperatures are computed once
beforehand (not timed); the timed part is :func:`solair.response.surface_response`.

"one at a time" solves single columns with the same function, the way a loop over surfaces
and finishes would; it is timed on a sample of ``--sample`` columns (spread over surfaces
and finishes) and scaled to the 102 columns. Both run in this process, alternately.

Run: /work/venv/bin/python benchmarks/bench_response.py [--repeat N] [--sample K] [--no-dew]
"""

from __future__ import annotations

import argparse
import os
import statistics
import time
from pathlib import Path

import numpy as np
import pvlib
import xarray as xr

import solair
from solair import engine
from solair.constructions import CONSTRUCTIONS
from solair.finishes import FINISHES
from solair.response import surface_response
from solair.surfaces import Surface

PATH = Path(pvlib.__path__[0]) / "data" / "723170TYA.CSV"
AZIMUTHS = (0.0, 45.0, 90.0, 135.0, 180.0, 225.0, 270.0, 315.0)
SURFACES = [Surface("h", 0.0, 180.0)] + [
    Surface(f"t{int(t)}_a{int(a)}", t, a) for t in (30.0, 90.0) for a in AZIMUTHS
]
FINISH_NAMES = ["black_membrane", "white_single_ply_membrane", "light_grey_membrane",
                "galvanised_steel", "red_clay_tile", "white_render"]


def inputs():
    w = solair.read_weather(PATH)
    forcing = engine.exterior_forcing(w, SURFACES)
    fins = [FINISHES[n] for n in FINISH_NAMES]
    a = xr.DataArray([f.absorptance for f in fins], dims="finish", coords={"finish": FINISH_NAMES})
    e = xr.DataArray([f.emissivity for f in fins], dims="finish", coords={"finish": FINISH_NAMES})
    sa = engine.sol_air(forcing, a, e, linearisation="surface")
    dims = ("time", "surface", "finish")
    t_eq = sa["temp_sol_air"].transpose(*dims).values
    h_e = sa["h_e"].transpose(*dims).values
    h_c = sa["h_conv"].transpose(*dims).values
    ta = forcing["temp_air"].values[:, None, None]
    dew = {"temp_air": ta, "temp_dew": forcing["temp_dew"].values[:, None, None],
           "pressure": forcing["pressure"].values[:, None, None], "h_conv": h_c}
    tilt = forcing["surface_tilt"].values[:, None]
    return t_eq, h_e, dew, tilt


def run(t_eq, h_e, dew, tilt, cons):
    return surface_response(t_eq, h_e, model="transient", construction=cons, surface_tilt=tilt,
                            dew=dew)["temp_surface"]


def _column(v, i, j):
    v = np.asarray(v)
    if v.ndim < 3:
        return v
    i = i if v.shape[1] > 1 else 0
    j = j if v.shape[2] > 1 else 0
    return v[:, i:i + 1, j:j + 1]


def one(t_eq, h_e, dew, tilt, cons, i, j):
    d = None if dew is None else {k: _column(v, i, j) for k, v in dew.items()}
    return surface_response(t_eq[:, i:i + 1, j:j + 1], h_e[:, i:i + 1, j:j + 1],
                            model="transient", construction=cons,
                            surface_tilt=tilt[i:i + 1], dew=d)["temp_surface"][:, 0, 0]


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--sample", type=int, default=6)
    ap.add_argument("--no-dew", action="store_true")
    args = ap.parse_args()
    cons = CONSTRUCTIONS["insulated_membrane_roof"]
    t_eq, h_e, dew, tilt = inputs()
    if args.no_dew:
        dew = None
    n_s, n_f = t_eq.shape[1:]
    cols = n_s * n_f
    rng = np.random.default_rng(0)
    picks = [(int(k) // n_f, int(k) % n_f) for k in rng.choice(cols, args.sample, replace=False)]
    vec_times, one_times = [], []
    worst = 0.0
    for _ in range(args.repeat):
        t0 = time.perf_counter()
        allc = run(t_eq, h_e, dew, tilt, cons)
        vec_times.append(time.perf_counter() - t0)
        t0 = time.perf_counter()
        for i, j in picks:
            single = one(t_eq, h_e, dew, tilt, cons, i, j)
            worst = max(worst, float(np.max(np.abs(single - allc[:, i, j]))))
        one_times.append((time.perf_counter() - t0) / len(picks))
    vec = statistics.median(vec_times)
    per_one = statistics.median(one_times)
    print(f"cpu: {os.cpu_count()} cores; weather: {PATH.name}; construction: {cons.name} "
          f"({len(cons.layers)} layers); dew {'off' if dew is None else 'on'}; "
          f"{n_s} surfaces x {n_f} finishes = {cols} columns x 8760 h x 6 steps/h")
    print(f"vectorised, all {cols} columns : {vec:8.2f} s  "
          f"= {1000 * vec / cols:8.1f} ms per surface-finish-year")
    print(f"one column at a time ({len(picks)} sampled): {per_one:8.2f} s per surface-finish-year "
          f"-> {per_one * cols:8.1f} s for {cols}")
    print(f"ratio (one at a time / vectorised): {per_one * cols / vec:6.1f}x")
    print(f"largest difference vectorised vs single: {worst:.2e} K")


if __name__ == "__main__":
    main()
