#!/usr/bin/python3
"""Benchmark several predictions per pixel: 3 scenarios, and a set of 3 models. See bench/README.md.

Usage:  /usr/bin/python3 bench/several.py [--mpix 25] [--reps 3] [--build-dir DIR] [--no-build]

Scenarios (issue 18's row): on the invented stack of make_stack.py, 3 scenarios each replacing 2 of
the 5 covariates (tmin and precip, shifted by invented amounts), every output on (predict's
defaults plus change.tif and change_class.tif at a threshold). Compared with
  - the I/O floor (habcast_io_floor --mirror): decodes the same 11 distinct inputs once and encodes
    the same output values into the same files (uncompressed copies of one habcast run); target
    habcast <= 1.15 x floor;
  - the separate way: 4 predict calls (baseline and each scenario) plus a raster-calculator change
    step per scenario (numpy + GDAL, the same creation options), timed two ways: the difference of
    the two suitability rasters only (one band), and the same change outputs as the scenario run
    (difference, naive standard error, interval, probability of a fall, classes marked where either
    side is flagged); habcast should be faster than the latter, which is the same work.
Model set (issue 19's row): 3 models (the stack's model, and two invented variants without the
interaction terms, aic 100, 101, 102.5) over the same stack; compared with one model's predict
writing the same kinds of output (suitability, uncertainty, flags); target <= 1.3.
Prints the ratios and writes bench/results/several-<UTC>.json. Run by hand only.
"""

import argparse
import datetime as dt
import json
import os
import shutil
import statistics
import subprocess
import sys
import time
import tomllib
from pathlib import Path

import numpy as np
from osgeo import gdal

from run import BENCH, REPO, build, ensure_stack, measure

gdal.UseExceptions()

FLOAT_OPTIONS = ["TILED=YES", "BLOCKXSIZE=256", "BLOCKYSIZE=256", "COMPRESS=DEFLATE", "PREDICTOR=3",
                 "BIGTIFF=IF_SAFER", "NUM_THREADS=ALL_CPUS"]
# Invented scenarios: (tmin shift in degC, precip factor).
SCENARIOS = {"s1": (0.8, 0.97), "s2": (1.6, 0.93), "s3": (2.6, 0.88)}
THRESHOLD = 0.5


def transform(src, dst, fn, rows=1024):
    """Writes fn(values) of src (nodata kept) as dst with the stack's creation options, in strips."""
    if dst.exists():
        return
    s = gdal.Open(str(src))
    band = s.GetRasterBand(1)
    nodata = band.GetNoDataValue()
    d = gdal.GetDriverByName("GTiff").Create(str(dst), s.RasterXSize, s.RasterYSize, 1, gdal.GDT_Float32, FLOAT_OPTIONS)
    d.SetGeoTransform(s.GetGeoTransform())
    d.SetProjection(s.GetProjection())
    d.GetRasterBand(1).SetNoDataValue(nodata)
    for y in range(0, s.RasterYSize, rows):
        h = min(rows, s.RasterYSize - y)
        a = band.ReadAsArray(0, y, s.RasterXSize, h).astype(np.float64)
        out = np.where(a == nodata, nodata, fn(a))
        d.GetRasterBand(1).WriteArray(out.astype(np.float32), 0, y)
    d = None


def prepare(stack):
    """Scenario rasters, the scenario file and two model variants (written once per stack)."""
    lines = ["# Invented scenarios for the benchmark (bench/several.py).", "habcast_scenarios = 1",
             f"threshold = {THRESHOLD}"]
    for name, (shift, factor) in SCENARIOS.items():
        transform(stack / "tmin.tif", stack / f"tmin_{name}.tif", lambda a, s=shift: a + s)
        transform(stack / "precip.tif", stack / f"precip_{name}.tif", lambda a, f=factor: a * f)
        lines += ["", "[[scenario]]", f'name = "{name}"', "[scenario.covariates]",
                  f'tmin = "tmin_{name}.tif"', f'precip = "precip_{name}.tif"']
    (stack / "scenarios.toml").write_text("\n".join(lines) + "\n")
    model = tomllib.loads((stack / "model.toml").read_text())
    text = (stack / "model.toml").read_text()
    terms = model["coefficients"]["terms"]
    for variant, drop, aic in (("model_a.toml", [], 100.0), ("model_b.toml", ["tmin:soil_ph"], 101.0),
                               ("model_c.toml", ["tmin:soil_ph", "tmin:precip"], 102.5)):
        keep = [i for i, t in enumerate(terms) if t not in drop]
        est = [model["coefficients"]["estimates"][i] for i in keep]
        cov = [[model["coefficients"]["covariance"][i][j] for j in keep] for i in keep]
        head = text[:text.index("[coefficients]")].replace('link = "logit"', f'link = "logit"\naic = {aic}')
        body = ["[coefficients]", "terms = [ " + ", ".join(f'"{terms[i]}"' for i in keep) + " ]",
                "estimates = [ " + ", ".join(repr(e) for e in est) + " ]", "covariance = ["]
        body += ["  [ " + ", ".join(repr(v) for v in row) + " ]," for row in cov] + ["]"]
        (stack / variant).write_text(head + "\n".join(body) + "\n")


def change_step(habcast_out, scenario):
    """The raster-calculator step of the separate way: scenario suitability minus baseline's."""
    def run(out):
        b = gdal.Open(str(habcast_out / "baseline" / "suitability.tif"))
        s = gdal.Open(str(habcast_out / scenario / "suitability.tif"))
        d = gdal.GetDriverByName("GTiff").Create(str(out / f"change_{scenario}.tif"), b.RasterXSize, b.RasterYSize, 1,
                                                 gdal.GDT_Float32, FLOAT_OPTIONS)
        d.SetGeoTransform(b.GetGeoTransform())
        d.SetProjection(b.GetProjection())
        d.GetRasterBand(1).SetNoDataValue(-9999.0)
        for y in range(0, b.RasterYSize, 1024):
            h = min(1024, b.RasterYSize - y)
            x = b.GetRasterBand(1).ReadAsArray(0, y, b.RasterXSize, h)
            z = s.GetRasterBand(1).ReadAsArray(0, y, b.RasterXSize, h)
            d.GetRasterBand(1).WriteArray(np.where((x == -9999) | (z == -9999), -9999, z - x).astype(np.float32), 0, y)
        d = None
    return run


BYTE_OPTIONS = ["TILED=YES", "BLOCKXSIZE=256", "BLOCKYSIZE=256", "COMPRESS=DEFLATE", "NUM_THREADS=ALL_CPUS"]


def full_change_step(habcast_out, scenario, z=1.959963984540054):
    """The separate way's change step with the same change outputs as the scenario run: the
    difference, its standard error, the interval, the probability of a fall (5 Float32 bands) and
    the classes at the threshold marked where either side is flagged (Byte), written with the same
    creation options. The only standard error a raster calculator can form from two uncertainty
    rasters is the naive sqrt(se_s^2 + se_b^2), which ignores the correlation the scenario run
    accounts for (docs/scenarios.md): the race is of the work, not of the answer."""
    from scipy.special import ndtr

    def run(out):
        files = {side: {k: gdal.Open(str(habcast_out / side / f"{k}.tif"))
                        for k in ("suitability", "uncertainty", "extrapolation")} for side in ("baseline", scenario)}
        b0 = files["baseline"]["suitability"]
        width, height = b0.RasterXSize, b0.RasterYSize
        d = gdal.GetDriverByName("GTiff").Create(str(out / "change.tif"), width, height, 5, gdal.GDT_Float32,
                                                 FLOAT_OPTIONS)
        c = gdal.GetDriverByName("GTiff").Create(str(out / "change_class.tif"), width, height, 1, gdal.GDT_Byte,
                                                 BYTE_OPTIONS)
        for r in (d, c):
            r.SetGeoTransform(b0.GetGeoTransform())
            r.SetProjection(b0.GetProjection())
        for k in range(1, 6):
            d.GetRasterBand(k).SetNoDataValue(-9999.0)
        c.GetRasterBand(1).SetNoDataValue(255)
        for y in range(0, height, 1024):
            h = min(1024, height - y)

            def read(side, name, band=1):
                return files[side][name].GetRasterBand(band).ReadAsArray(0, y, width, h)
            mb, ms = read("baseline", "suitability").astype(np.float64), read(scenario, "suitability").astype(np.float64)
            sb, ss = read("baseline", "uncertainty").astype(np.float64), read(scenario, "uncertainty").astype(np.float64)
            fb, fs = read("baseline", "extrapolation"), read(scenario, "extrapolation")
            nodata = (mb == -9999) | (ms == -9999)
            diff = ms - mb
            se = np.sqrt(sb * sb + ss * ss)
            lower, upper = diff - z * se, diff + z * se
            with np.errstate(divide="ignore", invalid="ignore"):
                fell = np.where(se > 0, ndtr(-diff / se), (diff < 0).astype(np.float64))
            for k, a in enumerate((diff, se, lower, upper, fell), start=1):
                d.GetRasterBand(k).WriteArray(np.where(nodata, -9999, a).astype(np.float32), 0, y)
            was, now = mb >= THRESHOLD, ms >= THRESHOLD
            cls = np.where(was == now, np.where(was, 2, 1),
                           np.where((lower <= 0) & (upper >= 0), 5, np.where(now, 3, 4))).astype(np.uint8)
            cls |= np.where((fb != 0) & (fb != 255), 16, 0).astype(np.uint8)
            cls |= np.where((fs != 0) & (fs != 255), 32, 0).astype(np.uint8)
            c.GetRasterBand(1).WriteArray(np.where(nodata, 255, cls).astype(np.uint8), 0, y)
        d = c = None
    return run


def timed(fn, out):
    shutil.rmtree(out, ignore_errors=True)
    out.mkdir(parents=True)
    start = time.perf_counter()
    fn(out)
    return time.perf_counter() - start


def mirror_values(source, target):
    """Uncompressed copies of every output raster of a run, for the floor."""
    shutil.rmtree(target, ignore_errors=True)
    for tif in source.rglob("*.tif"):
        dst = target / tif.relative_to(source)
        dst.parent.mkdir(parents=True, exist_ok=True)
        subprocess.run(["gdal_translate", "-q", "-co", "TILED=YES", "-co", "COMPRESS=NONE", str(tif), str(dst)], check=True)


def main():
    parser = argparse.ArgumentParser(description="habcast scenarios and model-set benchmark")
    parser.add_argument("--mpix", type=float, default=25.0)
    parser.add_argument("--reps", type=int, default=3)
    parser.add_argument("--build-dir", default=str(REPO / "build-bench"))
    parser.add_argument("--no-build", action="store_true")
    parser.add_argument("--models-only", action="store_true",
                        help="only the model-set row (one model and the set of 3, taking turns), e.g. with --reps 5")
    parser.add_argument("--work", default=str(BENCH / "data" / "runs-several"))
    args = parser.parse_args()
    if not args.models_only:
        try:
            import scipy.special  # noqa: F401  (the separate way's change step; checked before any run)
        except ImportError:
            sys.exit("several.py: the scenario rows need SciPy (Debian's python3-scipy): "
                     "run scripts/install-deps.sh --with-bench-tools, or pass --models-only")
    build_dir = Path(args.build_dir)
    habcast, floor = ((build_dir / "habcast", build_dir / "bench" / "habcast_io_floor") if args.no_build
                      else build(build_dir))
    stack = ensure_stack(args.mpix)
    prepare(stack)
    work = Path(args.work) / stack.name
    inputs = [str(stack / f"{c}.tif") for c in ("tmin", "precip", "slope", "soil_ph", "landcover")]
    inputs += [str(stack / f"{v}_{s}.tif") for s in SCENARIOS for v in ("tmin", "precip")]
    scen = [str(habcast), "predict", str(stack / "model.toml"), "--scenarios", str(stack / "scenarios.toml"),
            "--overwrite", "-q"]
    if not args.models_only:
        # One habcast run gives the floor its output values.
        measure(scen + ["-o", str(work / "values-source")], work / "values-source")
        mirror_values(work / "values-source", work / "values")
    single = [str(habcast), "predict", str(stack / "model_a.toml"), "--overwrite", "-q", "--no-novelty-rasters"]
    models = [str(habcast), "predict", *(str(stack / m) for m in ("model_a.toml", "model_b.toml", "model_c.toml")),
              "--overwrite", "-q"]
    runs = {
        "scenarios": lambda out: scen + ["-o", str(out)],
        "floor (same outputs)": lambda out: [str(floor), str(out), *inputs, "--mirror", str(work / "values")],
        "single model": lambda out: single + ["-o", str(out)],
        "model set of 3": lambda out: models + ["-o", str(out)],
    }
    if args.models_only:
        runs = {n: make for n, make in runs.items() if n in ("single model", "model set of 3")}
    samples = {n: [] for n in runs}
    separate = []
    separate_full = []
    for rnd in range(args.reps):
        for name, make in runs.items():
            out = work / name.replace(" ", "-")
            m = measure(make(out), out)
            samples[name].append(m)
            print(f"  round {rnd + 1} {name:22s} {m['wall_s']:7.2f} s  rss {m['rss_mib']:6.0f} MiB", flush=True)
        if args.models_only:
            continue
        # The separate way: 4 predict calls, then the change step per scenario.
        sep = work / "separate"
        total = 0.0
        base = [str(habcast), "predict", str(stack / "model.toml"), "--overwrite", "-q"]
        total += measure(base + ["-o", str(sep / "baseline")], sep / "baseline")["wall_s"]
        for s in SCENARIOS:
            total += measure(base + ["-c", f"tmin={stack / f'tmin_{s}.tif'}", "-c", f"precip={stack / f'precip_{s}.tif'}",
                                     "-o", str(sep / s)], sep / s)["wall_s"]
        predicts = total
        for s in SCENARIOS:
            total += timed(change_step(sep, s), work / "separate-change" / s)
        separate.append(total)
        print(f"  round {rnd + 1} {'separate (4 + change)':22s} {total:7.2f} s", flush=True)
        full = predicts
        for s in SCENARIOS:
            full += timed(full_change_step(sep, s), work / "separate-full-change" / s)
        separate_full.append(full)
        print(f"  round {rnd + 1} {'separate, same outputs':22s} {full:7.2f} s", flush=True)
    wall = {n: statistics.median(x["wall_s"] for x in s) for n, s in samples.items()}
    result = {"started_utc": dt.datetime.now(dt.timezone.utc).isoformat(timespec="seconds"),
              "git_commit": subprocess.run(["git", "-C", str(REPO), "rev-parse", "HEAD"], capture_output=True,
                                           text=True).stdout.strip(),
              "mpix": args.mpix, "reps": args.reps, "cpus": os.cpu_count(),
              "wall_s": wall, "wall_all_s": {n: [x["wall_s"] for x in s] for n, s in samples.items()},
              "rss_mib": {n: max(x["rss_mib"] for x in s) for n, s in samples.items()},
              "model_set_over_single": wall["model set of 3"] / wall["single model"]}
    if not args.models_only:
        result.update({"separate_wall_s": statistics.median(separate),
                       "scenarios_over_floor": wall["scenarios"] / wall["floor (same outputs)"],
                       "separate_over_scenarios": statistics.median(separate) / wall["scenarios"],
                       "separate_full_wall_s": statistics.median(separate_full),
                       "separate_full_over_scenarios": statistics.median(separate_full) / wall["scenarios"]})
    print()
    for n in runs:
        print(f"{n:>24} {wall[n]:8.2f} s ({min(result['wall_all_s'][n]):.2f}-{max(result['wall_all_s'][n]):.2f})  "
              f"RSS {result['rss_mib'][n]:6.0f} MiB")
    if not args.models_only:
        print(f"{'separate (4 + change)':>24} {result['separate_wall_s']:8.2f} s")
        print(f"{'separate, same outputs':>24} {result['separate_full_wall_s']:8.2f} s")
        print(f"scenarios / floor          {result['scenarios_over_floor']:.2f}   (target <= 1.15)")
        print(f"separate (difference only) / scenarios   {result['separate_over_scenarios']:.2f}")
        print(f"separate (same change outputs) / scenarios {result['separate_full_over_scenarios']:.2f}   (target > 1)")
    print(f"model set of 3 / single    {result['model_set_over_single']:.2f}   (target <= 1.3)")
    out = BENCH / "results"
    out.mkdir(exist_ok=True)
    path = out / f"several-{result['started_utc'].replace(':', '')[:17]}.json"
    path.write_text(json.dumps(result, indent=2) + "\n")
    print(f"written {path}")


if __name__ == "__main__":
    sys.exit(main())
