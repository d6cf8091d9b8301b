#!/usr/bin/python3
"""Benchmark `habcast predict` against a numpy + GDAL peer and the I/O floor. See bench/README.md.

Usage:  /usr/bin/python3 bench/run.py [--sizes 25,100] [--reps 3] [--warmup 1] [--build-dir DIR]

Builds habcast and habcast_io_floor (project default build type, RelWithDebInfo), generates the
invented stacks if missing, then for each size runs every contender in a fresh process, in
turn (the order rotates every round), `warmup` unmeasured rounds then `reps` measured ones.
Reports medians of wall time, Mpix/s, CPU time (user + sys) and peak RSS (from /usr/bin/time, for
that one child), the ratios habcast/floor and peer/habcast, checks that habcast's and the peer's
outputs agree to 1e-5, measures 1 vs 2 threads (speed-up and bit-identity of the outputs), and
writes everything to bench/results/bench-<UTC time>.json.
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
from pathlib import Path

import numpy as np
from osgeo import gdal

import precision_budget

gdal.UseExceptions()

BENCH = Path(__file__).resolve().parent
REPO = BENCH.parent
COVARIATES = ["tmin", "precip", "slope", "soil_ph", "landcover"]
OUTPUTS = [("suitability.tif", 1), ("uncertainty.tif", 1), ("uncertainty.tif", 2), ("uncertainty.tif", 3),
           ("extrapolation.tif", 1)]
TOLERANCE = 1e-5  # agreement required between habcast and the peer (probability units)
MAX_ERROR = 1e-4  # the --max-error row


def sh(cmd, **kw):
    return subprocess.run(cmd, check=True, **kw)


def build(build_dir):
    generator = ["-G", "Ninja"] if shutil.which("ninja") else []
    sh(["cmake", "-S", str(REPO), "-B", str(build_dir), *generator, "-DHABCAST_BUILD_TESTS=OFF"],
       stdout=subprocess.DEVNULL)
    sh(["cmake", "--build", str(build_dir), "--target", "habcast", "habcast_io_floor", "habcast_stage_cost", "-j2"],
       stdout=subprocess.DEVNULL)
    return build_dir / "habcast", build_dir / "bench" / "habcast_io_floor"


def ensure_stack(size):
    stack = BENCH / "data" / f"stack-{size:g}"
    if not (stack / "model.toml").exists():
        sh(["/usr/bin/python3", str(BENCH / "make_stack.py"), "--mpix", f"{size:g}"])
    if not (stack / "model-splines.toml").exists():  # stacks made before the spline row
        sh(["/usr/bin/python3", str(BENCH / "make_stack.py"), "--mpix", f"{size:g}", "--spline-model-only"])
    return stack


def spline_ratio(habcast, stack, args):
    """predict with two ns(df = 4) terms and their 16 products (model-splines.toml) against the
    quadratic model on the same stack: median wall times, alternating, and their ratio."""
    out_root = Path(args.work) / stack.name
    walls = {"model.toml": [], "model-splines.toml": []}
    cpus = {"model.toml": [], "model-splines.toml": []}
    for rnd in range(args.warmup + args.reps):
        for name in (list(walls) if rnd % 2 == 0 else list(walls)[::-1]):
            out = out_root / ("spline-row-" + name.split(".")[0])
            m = measure([str(habcast), "predict", str(stack / name), "-o", str(out), "--overwrite", "-q",
                         "--checks", "range"], out)
            if rnd >= args.warmup:
                walls[name].append(m["wall_s"])
                cpus[name].append(m["cpu_s"])
            print(f"  {stack.name} round {rnd + 1} {name:20s} {m['wall_s']:7.2f} s  cpu {m['cpu_s']:7.2f} s", flush=True)
    quadratic = statistics.median(walls["model.toml"])
    splines = statistics.median(walls["model-splines.toml"])
    cpu_ratio = statistics.median(cpus["model-splines.toml"]) / statistics.median(cpus["model.toml"])
    return {"stack": stack.name, "quadratic_wall_s": quadratic, "splines_wall_s": splines,
            "splines_over_quadratic": splines / quadratic, "splines_over_quadratic_cpu": cpu_ratio}


def measure(cmd, out_dir):
    """Runs cmd once in a fresh process; returns wall seconds, CPU seconds, peak RSS MiB, output bytes.

    CPU and peak RSS come from /usr/bin/time, not from this script's own wait4(): a child spawned
    by this (numpy-sized) Python process inherits the parent's memory high-water mark at exec, so
    wait4 would report the script's memory, not the tool's.
    """
    shutil.rmtree(out_dir, ignore_errors=True)
    out_dir.mkdir(parents=True)
    usage_file = out_dir.parent / f".{out_dir.name}.usage"
    start = time.perf_counter()
    proc = subprocess.run(["/usr/bin/time", "-f", "%M %U %S", "-o", str(usage_file), *map(str, cmd)],
                          stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    wall = time.perf_counter() - start
    stderr = proc.stderr.decode(errors="replace")
    if proc.returncode not in (0, 5):
        raise SystemExit(f"failed ({proc.returncode}): {' '.join(map(str, cmd))}\n{stderr}")
    # The last line holds the numbers (a killed child adds a "Command exited..." line before it).
    rss_kib, user_s, sys_s = usage_file.read_text().split("\n")[-2].split()
    usage_file.unlink()
    out_bytes = sum(f.stat().st_size for f in out_dir.glob("*.tif"))
    return {"wall_s": wall, "cpu_s": float(user_s) + float(sys_s), "rss_mib": int(rss_kib) / 1024.0,
            "output_bytes": out_bytes}


def pixels_of(stack):
    ds = gdal.Open(str(stack / "tmin.tif"))
    return ds.RasterXSize * ds.RasterYSize


def read_band(path, band):
    ds = gdal.Open(str(path))
    return ds.GetRasterBand(band).ReadAsArray()


def compare(dir_a, dir_b, tolerance, rows=2048):
    """Largest |a - b| over every output band (read in strips to bound memory); nodata must match."""
    worst = 0.0
    for name, band in OUTPUTS:
        da, db = gdal.Open(str(dir_a / name)), gdal.Open(str(dir_b / name))
        ba, bb = da.GetRasterBand(band), db.GetRasterBand(band)
        for y in range(0, da.RasterYSize, rows):
            h = min(rows, da.RasterYSize - y)
            a = ba.ReadAsArray(0, y, da.RasterXSize, h).astype(np.float64)
            b = bb.ReadAsArray(0, y, da.RasterXSize, h).astype(np.float64)
            nodata = ba.GetNoDataValue()
            if not np.array_equal(a == nodata, b == nodata):
                return {"agree": False, "max_abs_diff": None, "why": f"{name} band {band}: nodata differs"}
            if name.startswith("extrapolation") and not np.array_equal(a, b):
                return {"agree": False, "max_abs_diff": None, "why": f"{name}: flags differ"}
            if a.size:
                worst = max(worst, float(np.abs(a - b).max()))
    return {"agree": worst <= tolerance, "max_abs_diff": worst}


def same_files(dir_a, dir_b):
    """Whether the output rasters are the same bytes (block order, tags), not only the same pixels."""
    for name in sorted({name for name, _ in OUTPUTS}):
        with open(dir_a / name, "rb") as fa, open(dir_b / name, "rb") as fb:
            while True:
                a, b = fa.read(1 << 24), fb.read(1 << 24)
                if a != b:
                    return False
                if not a:
                    break
    return True


def identical(dir_a, dir_b):
    for name, band in OUTPUTS:
        if read_band(dir_a / name, band).tobytes() != read_band(dir_b / name, band).tobytes():
            return False
    return True


def contenders(habcast, floor, stack, out_root, args):
    model = stack / "model.toml"
    inputs = [str(stack / f"{c}.tif") for c in COVARIATES]
    base = [str(habcast), "predict", str(model), "--overwrite", "-q"]
    # "habcast" writes exactly what the floor and the peer write (suitability, 3-band uncertainty,
    # range flags), so the three race on equal terms; the training-domain checks are their own rows.
    same_outputs = ["--checks", "range"]
    runs = {
        "habcast": lambda out: base + ["-o", str(out), *same_outputs],
        "peer": lambda out: ["/usr/bin/python3", str(BENCH / "peer_numpy_gdal.py"), str(model), str(out)],
        # The floor encodes habcast's own output values (see io_floor.cpp and values_for_floor) ...
        "floor": lambda out: [str(floor), str(out), *inputs, "--values", str(out_root / "floor-values")],
        # ... and, for reference, copies of its inputs (deflate's cost depends on the data).
        "floor (input copies)": lambda out: [str(floor), str(out), *inputs],
        # Decoding the inputs alone: no output codec or --max-error can make a run faster than this.
        "read inputs only": lambda out: [str(floor), str(out), *inputs, "--read-only"],
    }
    help_text = subprocess.run([str(habcast), "predict", "--help"], capture_output=True, text=True).stdout
    if args.domain_option.split()[0] in help_text:
        # The issue's own case: the exact hull of the training sites (with the range check) ...
        runs["habcast+hull"] = lambda out: base + ["-o", str(out), "--checks", "range,hull"]
        # ... every check (exact hull, pairwise hulls, NT2, MESS) feeding the same flag raster ...
        runs["habcast+checks"] = lambda out: base + ["-o", str(out), *args.domain_option.split(),
                                                     "--no-novelty-rasters"]
        # ... and predict's defaults, which also write novelty.tif (3 Float32 bands) and least_similar.tif,
        # against a floor that encodes that default output set with the default run's own values.
        runs["habcast default"] = lambda out: base + ["-o", str(out)]
        runs["floor (defaults)"] = lambda out: [str(floor), str(out), *inputs, "--defaults", "--values",
                                                str(out_root / "floor-values-default")]
    if "--units" in help_text:
        # 1,000 management units summarised in the same pass (exact coverage, delta-method SEs).
        units = ensure_units(stack)
        runs["habcast+units"] = lambda out: base + ["-o", str(out), *same_outputs, "--units", str(units)]
    if "--max-error" in help_text:
        runs["habcast--max-error"] = lambda out: base + ["-o", str(out), *same_outputs, "--max-error", f"{MAX_ERROR:g}"]
    return {name: (make, out_root / name) for name, make in runs.items()}


def ensure_units(stack, count_x=40, count_y=25):
    """1,000 management units tiling the stack: jittered quadrilaterals whose shared edges wiggle
    through 8 segments each, so their boundaries cross cells at every angle. Deterministic."""
    path = stack / "units.gpkg"
    if path.exists():
        return path
    import random
    from osgeo import ogr, osr
    ds = gdal.Open(str(stack / "tmin.tif"))
    gt, w, h = ds.GetGeoTransform(), ds.RasterXSize, ds.RasterYSize
    srs = osr.SpatialReference(wkt=ds.GetProjection())
    rng = random.Random(7)
    sx, sy = w * gt[1] / count_x, h * gt[5] / count_y
    corner = {(i, j): (gt[0] + i * sx + (rng.uniform(-0.2, 0.2) * sx if 0 < i < count_x else 0),
                       gt[3] + j * sy + (rng.uniform(-0.2, 0.2) * sy if 0 < j < count_y else 0))
              for i in range(count_x + 1) for j in range(count_y + 1)}
    edges = {}

    def edge(a, b):
        """Points from corner a towards corner b, b itself excluded; both sides see the same wiggle."""
        key = (min(a, b), max(a, b))
        if key not in edges:
            (x0, y0), (x1, y1) = corner[key[0]], corner[key[1]]
            (i0, j0), (i1, j1) = key
            border = (i0 == i1 and i0 in (0, count_x)) or (j0 == j1 and j0 in (0, count_y))
            pts = []
            for k in range(8):
                t = k / 8
                jitter = 0.0 if border or k == 0 else rng.uniform(-0.03, 0.03)
                pts.append((x0 + t * (x1 - x0) - jitter * (y1 - y0), y0 + t * (y1 - y0) + jitter * (x1 - x0)))
            edges[key] = pts
        pts = edges[key]
        return pts if key[0] == a else [corner[a]] + pts[:0:-1]

    tmp = path.with_suffix(".tmp.gpkg")
    out = ogr.GetDriverByName("GPKG").CreateDataSource(str(tmp))
    layer = out.CreateLayer("units", srs, ogr.wkbPolygon)
    layer.CreateField(ogr.FieldDefn("unit", ogr.OFTString))
    for i in range(count_x):
        for j in range(count_y):
            ring = ogr.Geometry(ogr.wkbLinearRing)
            loop = [(i, j), (i + 1, j), (i + 1, j + 1), (i, j + 1), (i, j)]
            for a, b in zip(loop, loop[1:]):
                for x, y in edge(a, b):
                    ring.AddPoint_2D(x, y)
            ring.CloseRings()
            poly = ogr.Geometry(ogr.wkbPolygon)
            poly.AddGeometry(ring)
            f = ogr.Feature(layer.GetLayerDefn())
            f.SetField("unit", f"u{i:02d}_{j:02d}")
            f.SetGeometry(poly)
            layer.CreateFeature(f)
    out = None
    tmp.rename(path)
    return path


def values_for_floor(habcast_cmd, out_root, target_name="floor-values",
                     names=("suitability.tif", "uncertainty.tif", "extrapolation.tif")):
    """Uncompressed copies of habcast's outputs, so the floor can encode exactly the same values."""
    source, target = out_root / "floor-values-source", out_root / target_name
    measure(habcast_cmd(source), source)
    shutil.rmtree(target, ignore_errors=True)
    target.mkdir(parents=True)
    for name in names:
        # gdal_translate in its own process, so this script's memory stays small.
        subprocess.run(["gdal_translate", "-q", "-co", "TILED=YES", "-co", "COMPRESS=NONE", str(source / name),
                        str(target / name)], check=True)
    shutil.rmtree(source, ignore_errors=True)


def race(habcast, floor, stack, args):
    out_root = Path(args.work) / stack.name
    tools = contenders(habcast, floor, stack, out_root, args)
    values_for_floor(tools["habcast"][0], out_root)
    if "floor (defaults)" in tools:
        values_for_floor(tools["habcast default"][0], out_root, "floor-values-default",
                         ("suitability.tif", "uncertainty.tif", "extrapolation.tif", "novelty.tif",
                          "least_similar.tif"))
    names = list(tools)
    samples = {n: [] for n in names}
    for rnd in range(args.warmup + args.reps):
        order = names[rnd % len(names):] + names[:rnd % len(names)]
        for name in order:
            make, out = tools[name]
            m = measure(make(out), out)
            if rnd >= args.warmup:
                samples[name].append(m)
            print(f"  {stack.name} round {rnd + 1} {name:20s} {m['wall_s']:7.2f} s  cpu {m['cpu_s']:7.2f} s  "
                  f"rss {m['rss_mib']:6.0f} MiB", flush=True)
    mpix = pixels_of(stack) / 1e6
    result = {"mpix": mpix, "tools": {}}
    for name in names:
        s = samples[name]
        wall = statistics.median(x["wall_s"] for x in s)
        result["tools"][name] = {
            "wall_s": wall, "wall_all_s": [x["wall_s"] for x in s], "mpix_per_s": mpix / wall,
            "cpu_s": statistics.median(x["cpu_s"] for x in s), "rss_mib": max(x["rss_mib"] for x in s),
            "output_bytes": s[-1]["output_bytes"]}
    t = result["tools"]
    result["habcast_over_floor"] = t["habcast"]["wall_s"] / t["floor"]["wall_s"]
    result["habcast_over_floor_input_copies"] = t["habcast"]["wall_s"] / t["floor (input copies)"]["wall_s"]
    result["peer_over_habcast"] = t["peer"]["wall_s"] / t["habcast"]["wall_s"]
    if "habcast+checks" in t:
        result["hull_over_habcast"] = t["habcast+hull"]["wall_s"] / t["habcast"]["wall_s"]
        result["checks_over_habcast"] = t["habcast+checks"]["wall_s"] / t["habcast"]["wall_s"]
        result["default_over_habcast"] = t["habcast default"]["wall_s"] / t["habcast"]["wall_s"]
        result["default_over_floor_defaults"] = t["habcast default"]["wall_s"] / t["floor (defaults)"]["wall_s"]
    if "habcast+units" in t:
        result["units_over_habcast"] = t["habcast+units"]["wall_s"] / t["habcast"]["wall_s"]
    if "habcast--max-error" in t:
        result["bytes_lossless_over_max_error"] = t["habcast"]["output_bytes"] / t["habcast--max-error"]["output_bytes"]
        result["time_lossless_over_max_error"] = t["habcast"]["wall_s"] / t["habcast--max-error"]["wall_s"]
        # The most any --max-error could save in time: everything but decoding the inputs.
        result["time_lossless_over_read_only"] = t["habcast"]["wall_s"] / t["read inputs only"]["wall_s"]
        # What an entropy coder could reach at that error on these very values (precision_budget.py).
        budget = precision_budget.estimate(tools["habcast"][1], MAX_ERROR, echo=lambda line: print("  " + line))
        result["bytes_lossless_over_entropy_estimate"] = budget["lossless_bytes"] / budget["estimate_bytes"]
        result["entropy_bits_per_value"] = budget["bits_per_value"]
    result["peer_agreement"] = compare(tools["habcast"][1], tools["peer"][1], TOLERANCE)
    return result


def thread_scaling(habcast, stack, args):
    """1 vs 2 threads: median wall times and whether the outputs are bit-identical."""
    out_root = Path(args.work) / stack.name
    model = stack / "model.toml"
    walls = {1: [], 2: []}
    for rnd in range(args.warmup + args.reps):
        for threads in ((1, 2) if rnd % 2 == 0 else (2, 1)):
            out = out_root / f"threads-{threads}"
            m = measure([str(habcast), "predict", str(model), "-o", str(out), "--overwrite", "-q",
                         "--checks", "range", "--threads", str(threads)], out)
            if rnd >= args.warmup:
                walls[threads].append(m["wall_s"])
            print(f"  {stack.name} round {rnd + 1} threads={threads} {m['wall_s']:7.2f} s", flush=True)
    one, two = statistics.median(walls[1]), statistics.median(walls[2])
    return {"wall_1_thread_s": one, "wall_2_threads_s": two, "speedup": one / two,
            "bit_identical": identical(out_root / "threads-1", out_root / "threads-2"),
            "files_identical": same_files(out_root / "threads-1", out_root / "threads-2")}


STAGE_NAMES = ["values", "design", "eta+se", "links", "range", "model", "mess", "nt2", "hull", "pairs", "checks"]


def stage_costs(stage_cost, stack, args):
    """ns per pixel per core of each stage of predict's computation (bench/stage_cost.cpp), and
    with --stage-counts callgrind's instruction counts per pixel, which do not depend on load."""
    model = str(stack / "model.toml")
    out = subprocess.run([str(stage_cost), model, "--reps", str(args.stage_reps), "--json"], check=True,
                         capture_output=True, text=True).stdout
    result = json.loads(out)
    if args.stage_counts:
        pixels = 262144
        for stage in result["stages"]:
            run = subprocess.run(["valgrind", "--tool=callgrind", "--collect-atstart=no", "--callgrind-out-file=/dev/null",
                                  str(stage_cost), model, "--pixels", str(pixels), "--count", stage],
                                 capture_output=True, text=True, check=True)
            collected = [line for line in run.stderr.splitlines() if "Collected :" in line]
            counted = int(run.stdout.split()[-2])  # "counted stage S over N pixels"
            result["stages"][stage]["instructions"] = int(collected[-1].split()[-1]) / counted
    return result


def print_table(results):
    print()
    print(f"{'stack':>10} {'tool':>20} {'wall s':>8} {'Mpix/s':>7} {'cpu s':>7} {'RSS MiB':>8} {'out MB':>7}")
    for key, r in results["stacks"].items():
        for name, t in r["tools"].items():
            print(f"{key:>10} {name:>20} {t['wall_s']:8.2f} {t['mpix_per_s']:7.2f} {t['cpu_s']:7.2f} "
                  f"{t['rss_mib']:8.0f} {t['output_bytes'] / 1e6:7.1f}")
        agree = r["peer_agreement"]
        print(f"{key:>10}   habcast/floor {r['habcast_over_floor']:.2f}   peer/habcast {r['peer_over_habcast']:.2f}"
              f"   peer agrees to {TOLERANCE:g}: {agree['agree']} (max |diff| {agree['max_abs_diff']})")
        for extra in ("habcast_over_floor_input_copies", "hull_over_habcast", "checks_over_habcast", "default_over_habcast", "default_over_floor_defaults", "units_over_habcast", "bytes_lossless_over_max_error", "time_lossless_over_max_error",
                      "time_lossless_over_read_only", "bytes_lossless_over_entropy_estimate"):
            if extra in r:
                print(f"{key:>10}   {extra} {r[extra]:.2f}")
    if "threads" in results:
        t = results["threads"]
        print(f"threads ({t['stack']}): 1 -> {t['wall_1_thread_s']:.2f} s, 2 -> {t['wall_2_threads_s']:.2f} s, "
              f"speed-up {t['speedup']:.2f}, pixels identical {t['bit_identical']}, files identical {t.get('files_identical')}")
    if "splines" in results:
        s = results["splines"]
        print(f"splines ({s['stack']}): quadratic {s['quadratic_wall_s']:.2f} s, two ns(df=4) + products "
              f"{s['splines_wall_s']:.2f} s, ratio {s['splines_over_quadratic']:.2f} (target <= 1.25), "
              f"cpu ratio {s['splines_over_quadratic_cpu']:.2f}")
    if "rss_growth" in results:
        print(f"habcast peak RSS, largest vs smallest stack: {results['rss_growth']:.3f}x")
    if "stages" in results:
        st = results["stages"]
        print(f"stages ({st['stack']}, {st['pixels']} pixels, {st['terms']} terms, one core): "
              "ns/pixel min [median] (instructions/pixel)")
        for name, v in st["stages"].items():
            counted = f" ({v['instructions']:.0f})" if "instructions" in v else ""
            print(f"{'':>10}   {name:>8} {v['min_ns']:7.1f} [{v['median_ns']:.1f}]{counted}")
    print(f"load average before/after: {results['load_before']} / {results['load_after']}")


def main():
    parser = argparse.ArgumentParser(description="habcast predict benchmark")
    parser.add_argument("--sizes", default="25,100", help="stack sizes in Mpix, comma-separated")
    parser.add_argument("--reps", type=int, default=3, help="measured rounds")
    parser.add_argument("--warmup", type=int, default=1, help="unmeasured rounds first (page cache, etc.)")
    parser.add_argument("--build-dir", default=str(REPO / "build-bench"))
    parser.add_argument("--no-build", action="store_true", help="use the binaries already in --build-dir")
    parser.add_argument("--work", default=str(BENCH / "data" / "runs"), help="where outputs go (same disk as data)")
    parser.add_argument("--no-threads", action="store_true", help="skip the 1 vs 2 threads comparison")
    parser.add_argument("--stage-reps", type=int, default=15, help="repetitions of the per-stage timing")
    parser.add_argument("--stage-counts", action="store_true",
                        help="also count instructions per pixel of each stage under callgrind (slow)")
    parser.add_argument("--stages-only", action="store_true", help="only the per-stage costs (first size), no race")
    parser.add_argument("--splines-only", action="store_true",
                        help="only the spline row (model-splines.toml vs model.toml); needs no floor binary")
    parser.add_argument("--domain-option", default="--checks range,hull,pairs,nt2,mess",
                        help="predict option for the training-domain row, run only if predict --help shows it")
    args = parser.parse_args()
    build_dir = Path(args.build_dir)
    if args.no_build:
        habcast, floor = build_dir / "habcast", build_dir / "bench" / "habcast_io_floor"
    else:
        habcast, floor = build(build_dir)
    stage_cost = build_dir / "bench" / "habcast_stage_cost"
    sizes = [float(s) for s in args.sizes.split(",")]
    stacks = [ensure_stack(s) for s in sizes]
    results = {"started_utc": dt.datetime.now(dt.timezone.utc).isoformat(timespec="seconds"),
               "git_commit": subprocess.run(["git", "-C", str(REPO), "rev-parse", "HEAD"], capture_output=True,
                                            text=True).stdout.strip(),
               "gdal": gdal.__version__, "cpus": os.cpu_count(), "reps": args.reps, "warmup": args.warmup,
               "load_before": [round(x, 2) for x in os.getloadavg()], "stacks": {}}
    if args.splines_only:
        results["splines"] = spline_ratio(habcast, stacks[0], args)
        s = results["splines"]
        print(f"splines ({s['stack']}): quadratic {s['quadratic_wall_s']:.2f} s, two ns(df=4) + products "
              f"{s['splines_wall_s']:.2f} s, ratio {s['splines_over_quadratic']:.2f} (target <= 1.25), "
              f"cpu ratio {s['splines_over_quadratic_cpu']:.2f}")
        return 0
    if stage_cost.exists():
        results["stages"] = {"stack": stacks[0].name, **stage_costs(stage_cost, stacks[0], args)}
    for stack in ([] if args.stages_only else stacks):
        results["stacks"][stack.name] = race(habcast, floor, stack, args)
    if not args.stages_only:
        results["splines"] = spline_ratio(habcast, stacks[0], args)
    if not args.no_threads and not args.stages_only:
        results["threads"] = {"stack": stacks[0].name, **thread_scaling(habcast, stacks[0], args)}
    if len(stacks) > 1 and not args.stages_only:
        rss = [results["stacks"][s.name]["tools"]["habcast"]["rss_mib"] for s in stacks]
        results["rss_growth"] = rss[-1] / rss[0]
    results["load_after"] = [round(x, 2) for x in os.getloadavg()]
    out = BENCH / "results"
    out.mkdir(exist_ok=True)
    path = out / f"bench-{results['started_utc'].replace(':', '')[:17]}.json"
    path.write_text(json.dumps(results, indent=2) + "\n")
    print_table(results)
    print(f"written {path}")


if __name__ == "__main__":
    sys.exit(main())
