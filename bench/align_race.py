#!/usr/bin/python3
"""Covariates on other grids: habcast aligning them on the fly vs the practitioner's path.

Usage:  /usr/bin/python3 bench/align_race.py [--sizes 26,100] [--reps 3] [--build-dir DIR --no-build]

From the benchmark stack (bench/make_stack.py, UTM 33N, 30 m) it derives a mixed stack of 4
covariates on the 30 m target grid: slope and soil_ph as they are, tmin re-gridded to geographic
coordinates at 0.01 degree (a climate grid) and precip to the European equal-area CRS (EPSG:3035)
at 250 m; both of those must be reprojected and resampled back. Then, side by side in each round:

  habcast (on the fly)   habcast predict on the mixed stack, aligning window by window
                         (exact transforms, the default)
  habcast (--warp-error) the same with GDAL's approximate transformer (0.125 source pixels)
  practitioner           gdalwarp of tmin and precip onto the target grid (-multi, -wo
                         NUM_THREADS=ALL_CPUS, tiled DEFLATE GeoTIFFs, the same resampling),
                         then habcast predict on the aligned inputs; wall and CPU summed

and prints the ratios: on-the-fly / practitioner (target <= 0.8) and peak RSS (target <= 300 MiB,
flat from 25 to 100 Mpix). Run by hand, never by the test suite. Writes
bench/results/align-<UTC>.json.
"""

import argparse
import json
import shutil
import statistics
import subprocess
import sys
import time
from pathlib import Path

from osgeo import gdal

gdal.UseExceptions()
BENCH = Path(__file__).resolve().parent
sys.path.insert(0, str(BENCH))
import run  # noqa: E402  (the main benchmark's build, stack and measurement helpers)

MODEL = """# Invented benchmark model for habcast (written by bench/align_race.py); not for any real decision.
habcast_model = 1
[model]
name = "mixed-grid benchmark (invented)"
family = "binomial"
[covariates.slope]
center = 10.0
scale = 6.0
raster = "slope.tif"
[covariates.tmin]
center = 2.0
scale = 4.0
raster = "tmin.tif"
[covariates.precip]
center = 900.0
scale = 250.0
raster = "precip.tif"
[covariates.soil_ph]
center = 6.0
scale = 1.0
raster = "soil_ph.tif"
[coefficients]
terms = ["(Intercept)", "slope", "tmin", "tmin^2", "precip", "soil_ph", "tmin:precip"]
estimates = [0.3, -0.4, 0.8, -0.5, 0.6, 0.2, 0.15]
"""


def mixed_stack(stack):
    """The mixed stack beside `stack`, made once: two covariates moved to other grids."""
    mixed = stack.parent / (stack.name + "-mixed")
    if (mixed / "model.toml").exists():
        return mixed
    mixed.mkdir(parents=True, exist_ok=True)
    for name in ("slope", "soil_ph"):
        shutil.copy(stack / f"{name}.tif", mixed / f"{name}.tif")
    options = ["TILED=YES", "COMPRESS=DEFLATE", "PREDICTOR=3"]
    gdal.Warp(str(mixed / "tmin.tif"), str(stack / "tmin.tif"), dstSRS="EPSG:4326", xRes=0.01, yRes=0.01,
              resampleAlg="average", creationOptions=options, multithread=True)
    gdal.Warp(str(mixed / "precip.tif"), str(stack / "precip.tif"), dstSRS="EPSG:3035", xRes=250, yRes=250,
              resampleAlg="average", creationOptions=options, multithread=True)
    (mixed / "model.toml").write_text(MODEL)
    return mixed


def gdalwarp_cmd(source, target_grid, out, method):
    ds = gdal.Open(str(target_grid))
    gt = ds.GetGeoTransform()
    xmin, ymax = gt[0], gt[3]
    xmax, ymin = xmin + gt[1] * ds.RasterXSize, ymax + gt[5] * ds.RasterYSize
    return ["gdalwarp", "-q", "-overwrite", "-multi", "-wo", "NUM_THREADS=ALL_CPUS", "-t_srs", ds.GetProjection(),
            "-te", repr(xmin), repr(ymin), repr(xmax), repr(ymax), "-ts", str(ds.RasterXSize), str(ds.RasterYSize),
            "-r", method, "-ot", "Float32", "-co", "TILED=YES", "-co", "COMPRESS=DEFLATE", "-co", "PREDICTOR=3",
            "-co", "BIGTIFF=IF_SAFER", str(source), str(out)]


def largest_difference(dir_a, dir_b, rows=2048):
    """Largest |a - b| of suitability.tif, read in strips; None when nodata differs."""
    import numpy as np
    da, db = gdal.Open(str(dir_a / "suitability.tif")), gdal.Open(str(dir_b / "suitability.tif"))
    ba, bb = da.GetRasterBand(1), db.GetRasterBand(1)
    worst = 0.0
    for y in range(0, da.RasterYSize, rows):
        h = min(rows, da.RasterYSize - y)
        a = ba.ReadAsArray(0, y, da.RasterXSize, h).astype(np.float64)
        b = bb.ReadAsArray(0, y, da.RasterXSize, h).astype(np.float64)
        if not np.array_equal(a == ba.GetNoDataValue(), b == bb.GetNoDataValue()):
            return None
        worst = max(worst, float(np.abs(a - b).max()))
    return worst


def race(habcast, stack, args):
    mixed = mixed_stack(stack)
    work = Path(args.work) / f"align-{stack.name}"
    work.mkdir(parents=True, exist_ok=True)
    model = mixed / "model.toml"
    on_the_fly = [habcast, "predict", model, "--grid-of", "slope", "--overwrite", "-q", "-o"]
    approx = [habcast, "predict", model, "--grid-of", "slope", "--warp-error", "0.125", "--overwrite", "-q", "-o"]
    aligned = work / "aligned"
    aligned.mkdir(exist_ok=True)
    after_warp = [habcast, "predict", model, "-c", f"tmin={aligned / 'tmin.tif'}", "-c",
                  f"precip={aligned / 'precip.tif'}", "--overwrite", "-q", "-o"]
    rows = {"habcast (on the fly)": [], "habcast (--warp-error 0.125)": [], "practitioner (gdalwarp + habcast)": []}
    for rnd in range(args.warmup + args.reps):
        fly = run.measure(on_the_fly + [work / "fly"], work / "fly")
        fast = run.measure(approx + [work / "approx"], work / "approx")
        warps = []
        for name in ("tmin", "precip"):
            out = aligned / f"{name}.tif"
            # The practitioner warps into a fresh folder each time, so measure() clears a scratch one.
            warps.append(run.measure(gdalwarp_cmd(mixed / f"{name}.tif", mixed / "slope.tif", out, "bilinear"),
                                     work / f"warp-{name}"))
        predict = run.measure(after_warp + [work / "after"], work / "after")
        practitioner = {"wall_s": sum(w["wall_s"] for w in warps) + predict["wall_s"],
                        "cpu_s": sum(w["cpu_s"] for w in warps) + predict["cpu_s"],
                        "rss_mib": max([w["rss_mib"] for w in warps] + [predict["rss_mib"]]),
                        "output_bytes": predict["output_bytes"]}
        if rnd >= args.warmup:
            rows["habcast (on the fly)"].append(fly)
            rows["habcast (--warp-error 0.125)"].append(fast)
            rows["practitioner (gdalwarp + habcast)"].append(practitioner)
    summary = {}
    for name, runs in rows.items():
        summary[name] = {"wall_s": statistics.median(r["wall_s"] for r in runs),
                         "cpu_s": statistics.median(r["cpu_s"] for r in runs),
                         "rss_mib": max(r["rss_mib"] for r in runs)}
    p = summary["practitioner (gdalwarp + habcast)"]
    summary["ratios"] = {
        "on_the_fly_over_practitioner_wall": summary["habcast (on the fly)"]["wall_s"] / p["wall_s"],
        "approximate_over_practitioner_wall": summary["habcast (--warp-error 0.125)"]["wall_s"] / p["wall_s"],
    }
    # Not zero: gdalwarp approximates the transform (its -et 0.125), habcast transforms exactly.
    summary["agreement"] = largest_difference(work / "fly", work / "after")
    summary["pixels"] = run.pixels_of(stack)
    return summary


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--sizes", default="26,100", help="target sizes in Mpix, comma-separated")
    parser.add_argument("--reps", type=int, default=3)
    parser.add_argument("--warmup", type=int, default=1)
    parser.add_argument("--build-dir", default=str(run.REPO / "build-bench"))
    parser.add_argument("--no-build", action="store_true")
    parser.add_argument("--work", default=str(BENCH / "data" / "runs"))
    args = parser.parse_args()
    build_dir = Path(args.build_dir)
    habcast = build_dir / "habcast" if args.no_build else run.build(build_dir)[0]
    results = {}
    for size in (float(s) for s in args.sizes.split(",")):
        results[f"{size:g}"] = race(habcast, run.ensure_stack(size), args)
    print(f"{'Mpix':>6} {'tool':<36} {'wall s':>8} {'cpu s':>8} {'RSS MiB':>8}")
    for size, r in results.items():
        for name in ("habcast (on the fly)", "habcast (--warp-error 0.125)", "practitioner (gdalwarp + habcast)"):
            row = r[name]
            print(f"{size:>6} {name:<36} {row['wall_s']:8.2f} {row['cpu_s']:8.2f} {row['rss_mib']:8.1f}")
        ratios = r["ratios"]
        print(f"{size:>6} on the fly / practitioner: {ratios['on_the_fly_over_practitioner_wall']:.2f} (target <= 0.8); "
              f"--warp-error 0.125 / practitioner: {ratios['approximate_over_practitioner_wall']:.2f}; "
              f"largest |difference| of outputs: {r['agreement']}")
    out = BENCH / "results" / f"align-{time.strftime('%Y%m%dT%H%M%SZ', time.gmtime())}.json"
    out.parent.mkdir(exist_ok=True)
    out.write_text(json.dumps(results, indent=2) + "\n")
    print(f"written {out}")


if __name__ == "__main__":
    sys.exit(main())
