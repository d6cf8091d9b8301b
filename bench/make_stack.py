#!/usr/bin/python3
"""Write the invented covariate stack, model file and training table used by the benchmark.

Usage:  /usr/bin/python3 bench/make_stack.py [--mpix 25] [--out bench/data]

Writes bench/data/stack-<MPIX>/{tmin,precip,slope,soil_ph,landcover}.tif, model.toml and
training.csv. The rasters are square (side = sqrt(MPIX * 1e6), rounded to whole 256-pixel tiles),
Float32 (landcover UInt8), tiled 256 x 256, DEFLATE with the floating-point predictor (horizontal
differencing for landcover), like the outputs habcast writes by default.

The fields are smooth functions of the normalised position (x, y in [0, 1]) plus Gaussian noise,
so stacks of different sizes describe the same invented region at different resolutions and
compress like real covariates rather than like constants. A small lake (nodata in every
covariate) and scattered nodata pixels in tmin exercise the nodata paths. Landcover code 5 is not
declared in the model (no prediction, flagged as an unseen level).

Deterministic: fixed seeds, no clocks; re-running gives identical pixels, CSV and TOML.
Needs Debian's python3-numpy and python3-gdal (run with /usr/bin/python3).
"""

import argparse
import math
from pathlib import Path

import numpy as np
from osgeo import gdal, osr

gdal.UseExceptions()

SEED = 7_2026
TILE = 256
PIXEL = 30.0                               # metres, whatever the size: the region grows with it
ORIGIN_X, ORIGIN_Y = 500000.0, 6200000.0   # EPSG:32633; an invented region
EPSG = 32633
NODATA_F = -9999.0
NODATA_LC = 0
TRAINING_POINTS = 2000
# Training sites come from the western 75 % of the region, so the east is partly extrapolation.
TRAINING_MAX_X = 0.75

FLOAT_OPTIONS = ["TILED=YES", f"BLOCKXSIZE={TILE}", f"BLOCKYSIZE={TILE}", "COMPRESS=DEFLATE",
                 "PREDICTOR=3", "BIGTIFF=IF_SAFER", "NUM_THREADS=ALL_CPUS"]
BYTE_OPTIONS = ["TILED=YES", f"BLOCKXSIZE={TILE}", f"BLOCKYSIZE={TILE}", "COMPRESS=DEFLATE",
                "PREDICTOR=2", "BIGTIFF=IF_SAFER", "NUM_THREADS=ALL_CPUS"]

# name: (units, mean, amplitude, noise sd, lower clip)
CONTINUOUS = {
    "tmin": ("degC", 3.0, 7.0, 0.08, None),
    "precip": ("mm", 1500.0, 700.0, 6.0, 50.0),
    "slope": ("degrees", 12.0, 11.0, 0.4, 0.0),
    "soil_ph": ("pH", 6.0, 1.8, 0.03, 3.0),
}
# Separable waves: sum of a * sin(kx * x + px) * cos(ky * y + py) (cheap as outer products).
WAVES = {
    "tmin": [(0.7, 2.1, 0.3, 1.3, 0.2), (0.3, 5.0, 1.1, 4.2, 2.0), (0.12, 17.0, 0.5, 13.0, 1.0)],
    "precip": [(0.6, 1.7, 2.0, 2.4, 0.9), (0.35, 6.3, 0.1, 3.1, 1.7), (0.1, 21.0, 2.2, 19.0, 0.4)],
    "slope": [(0.5, 9.0, 0.6, 7.5, 1.2), (0.35, 23.0, 1.9, 29.0, 0.3), (0.2, 61.0, 0.7, 53.0, 2.5)],
    "soil_ph": [(0.6, 3.3, 1.4, 1.9, 0.5), (0.3, 8.1, 0.2, 11.0, 2.2), (0.1, 27.0, 1.0, 31.0, 0.8)],
}
LANDCOVER_WAVES = [(0.6, 4.0, 0.4, 3.6, 1.1), (0.4, 13.0, 2.0, 11.0, 0.2)]
LANDCOVER_NAMES = {1: "heath", 2: "bog", 3: "woodland", 4: "grassland"}  # 5 (scree) undeclared


def side_for(mpix):
    return max(TILE, int(round(math.sqrt(mpix * 1e6) / TILE)) * TILE)


def field(waves, x, y):
    """Smooth field in [-~1, ~1] on the grid x (columns) by y (rows), normalised coordinates."""
    out = np.zeros((y.size, x.size), dtype=np.float64)
    for a, kx, px, ky, py in waves:
        out += a * np.outer(np.cos(ky * y + py), np.sin(kx * x + px))
    return out


def lake(x, y):
    """An elliptical lake around (0.62, 0.35): nodata in every covariate."""
    return ((x[None, :] - 0.62) / 0.04) ** 2 + ((y[:, None] - 0.35) / 0.025) ** 2 < 1.0


def create(path, side, data_type, options, nodata):
    driver = gdal.GetDriverByName("GTiff")
    ds = driver.Create(str(path), side, side, 1, data_type, options)
    ds.SetGeoTransform((ORIGIN_X, PIXEL, 0.0, ORIGIN_Y, 0.0, -PIXEL))
    srs = osr.SpatialReference()
    srs.ImportFromEPSG(EPSG)
    ds.SetProjection(srs.ExportToWkt())
    ds.GetRasterBand(1).SetNoDataValue(nodata)
    return ds


def training_sites(side):
    rng = np.random.default_rng(SEED + 1)
    cols = rng.integers(0, int(side * TRAINING_MAX_X), size=TRAINING_POINTS * 2)
    rows = rng.integers(0, side, size=TRAINING_POINTS * 2)
    return rows, cols


def write_stack(out_dir, side):
    x = (np.arange(side) + 0.5) / side
    datasets = {name: create(out_dir / f"{name}.tif", side, gdal.GDT_Float32, FLOAT_OPTIONS, NODATA_F)
                for name in CONTINUOUS}
    datasets["landcover"] = create(out_dir / "landcover.tif", side, gdal.GDT_Byte, BYTE_OPTIONS, NODATA_LC)
    site_rows, site_cols = training_sites(side)
    samples = {name: np.full(site_rows.size, np.nan) for name in datasets}
    for strip, top in enumerate(range(0, side, TILE)):
        h = min(TILE, side - top)
        y = (np.arange(top, top + h) + 0.5) / side
        rng = np.random.default_rng([SEED, strip])
        water = lake(x, y)
        in_strip = (site_rows >= top) & (site_rows < top + h)
        for name, (_, mean, amplitude, noise, clip) in CONTINUOUS.items():
            values = mean + amplitude * field(WAVES[name], x, y)
            values += rng.normal(0.0, noise, size=values.shape)
            if clip is not None:
                np.maximum(values, clip, out=values)
            values = values.astype(np.float32)
            values[water] = NODATA_F
            if name == "tmin":  # scattered nodata pixels, about 1 in 20,000
                values[rng.random(values.shape) < 5e-5] = NODATA_F
            datasets[name].GetRasterBand(1).WriteArray(values, 0, top)
            samples[name][in_strip] = values[site_rows[in_strip] - top, site_cols[in_strip]]
        lc_field = field(LANDCOVER_WAVES, x, y) + rng.normal(0.0, 0.05, size=(h, side))
        landcover = np.digitize(lc_field, [-0.6, -0.1, 0.3, 0.75]).astype(np.uint8) + 1  # 1..5
        landcover[water] = NODATA_LC
        datasets["landcover"].GetRasterBand(1).WriteArray(landcover, 0, top)
        samples["landcover"][in_strip] = landcover[site_rows[in_strip] - top, site_cols[in_strip]]
    for ds in datasets.values():
        ds.FlushCache()
    datasets.clear()  # closes the files
    return samples


def write_training(path, samples):
    names = list(CONTINUOUS) + ["landcover"]
    usable = np.ones(samples["tmin"].size, dtype=bool)
    for name in CONTINUOUS:
        usable &= samples[name] != NODATA_F
    usable &= (samples["landcover"] >= 1) & (samples["landcover"] <= 4)  # no surveys on scree
    index = np.flatnonzero(usable)[:TRAINING_POINTS]
    lines = ["# Invented training sites for habcast's benchmark; not for any real decision.",
             "site," + ",".join(names)]
    for i, k in enumerate(index):
        values = [f"{samples[n][k]:.6g}" for n in CONTINUOUS] + [str(int(samples["landcover"][k]))]
        lines.append(f"{i + 1}," + ",".join(values))
    path.write_text("\n".join(lines) + "\n")


TERMS = ["(Intercept)", "tmin", "tmin^2", "precip", "precip^2", "tmin:precip", "slope", "slope^2",
         "soil_ph", "soil_ph^2", "tmin:soil_ph", "landcover[bog]", "landcover[woodland]",
         "landcover[grassland]"]
ESTIMATES = [0.4, 0.9, -0.8, 0.5, -0.6, 0.35, -0.45, -0.1, 0.2, -0.5, 0.25, 0.45, -0.7, -1.1]
# Standardisation: model value = (raw - center) / scale.
STANDARD = {"tmin": (3.0, 5.0), "precip": (1500.0, 500.0), "slope": (12.0, 8.0), "soil_ph": (6.0, 1.2)}


def covariance():
    """A symmetric positive-definite covariance of plausible size for 2,000 sites."""
    rng = np.random.default_rng(SEED + 2)
    p = len(TERMS)
    a = rng.normal(0.0, 1.0, size=(p, p))
    return (a @ a.T) / p * 0.004 + np.eye(p) * 0.001


def write_model(path):
    lines = ["# Invented benchmark model for habcast (written by bench/make_stack.py); not for any real decision.",
             "habcast_model = 1", "", "[model]", 'name = "benchmark niche (invented)"',
             'response = "presence"', 'family = "binomial"', 'link = "logit"', "",
             "[training]", 'samples = "training.csv"', ""]
    for name, (units, *_rest) in CONTINUOUS.items():
        center, scale = STANDARD[name]
        lines += [f"[covariates.{name}]", f'units = "{units}"', f"center = {center!r}", f"scale = {scale!r}",
                  f'raster = "{name}.tif"', ""]
    levels = ", ".join(f'{{ code = {c}, name = "{n}" }}' for c, n in LANDCOVER_NAMES.items())
    lines += ["[covariates.landcover]", 'type = "categorical"', f"levels = [ {levels} ]", 'reference = "heath"',
              'raster = "landcover.tif"', "", "[coefficients]",
              "terms = [ " + ", ".join(f'"{t}"' for t in TERMS) + " ]",
              "estimates = [ " + ", ".join(repr(e) for e in ESTIMATES) + " ]", "covariance = ["]
    for row in covariance():
        lines.append("  [ " + ", ".join(repr(float(v)) for v in row) + " ],")
    lines.append("]")
    path.write_text("\n".join(lines) + "\n")


def quantile7(sorted_values, p):
    """R's quantile(x, p, type = 7), the rule splines::ns uses for its knots."""
    h = (len(sorted_values) - 1) * p
    lo = int(np.floor(h))
    hi = int(np.ceil(h))
    return sorted_values[lo] if hi == lo else (1 - (h - lo)) * sorted_values[lo] + (h - lo) * sorted_values[hi]


def write_spline_model(path, training_path):
    """The quadratic model's tmin and precip replaced by natural splines with 4 columns each (R's
    ns(x, df = 4): boundary knots at the training range, interior knots at its quartiles, in model
    units) and all 16 products of their columns; slope, soil_ph and landcover as before."""
    rows = [line.split(",") for line in training_path.read_text().splitlines()[2:]]
    header = training_path.read_text().splitlines()[1].split(",")
    rng = np.random.default_rng(SEED + 3)
    lines = ["# Invented benchmark model with spline terms (written by bench/make_stack.py); not for any real decision.",
             "habcast_model = 1", "", "[model]", 'name = "benchmark niche with natural splines (invented)"',
             'response = "presence"', 'family = "binomial"', 'link = "logit"', "",
             "[training]", 'samples = "training.csv"', ""]
    for name, (units, *_rest) in CONTINUOUS.items():
        center, scale = STANDARD[name]
        lines += [f"[covariates.{name}]", f'units = "{units}"', f"center = {center!r}", f"scale = {scale!r}",
                  f'raster = "{name}.tif"']
        if name in ("tmin", "precip"):
            col = header.index(name)
            v = sorted((float(r[col]) - center) / scale for r in rows)
            knots = [quantile7(v, p) for p in (0.25, 0.5, 0.75)]
            lines.append(f"ns = {{ knots = [ {', '.join(repr(k) for k in knots)} ], boundary = [ {v[0]!r}, {v[-1]!r} ] }}")
        lines.append("")
    levels = ", ".join(f'{{ code = {c}, name = "{n}" }}' for c, n in LANDCOVER_NAMES.items())
    terms = (["(Intercept)"] + [f"ns(tmin)[{i}]" for i in range(1, 5)] + [f"ns(precip)[{j}]" for j in range(1, 5)]
             + [f"ns(tmin)[{i}]:ns(precip)[{j}]" for i in range(1, 5) for j in range(1, 5)]
             + ["slope", "slope^2", "soil_ph", "soil_ph^2", "landcover[bog]", "landcover[woodland]", "landcover[grassland]"])
    estimates = [float(x) for x in rng.normal(0.0, 0.6, size=len(terms))]
    a = rng.normal(0.0, 1.0, size=(len(terms), len(terms)))
    cov = (a @ a.T) / len(terms) * 0.004 + np.eye(len(terms)) * 0.001
    lines += ["[covariates.landcover]", 'type = "categorical"', f"levels = [ {levels} ]", 'reference = "heath"',
              'raster = "landcover.tif"', "", "[coefficients]",
              "terms = [ " + ", ".join(f'"{t}"' for t in terms) + " ]",
              "estimates = [ " + ", ".join(repr(e) for e in estimates) + " ]", "covariance = ["]
    for row in cov:
        lines.append("  [ " + ", ".join(repr(float(v)) for v in row) + " ],")
    lines.append("]")
    path.write_text("\n".join(lines) + "\n")


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--mpix", type=float, default=25.0, help="pixels per covariate, in millions")
    parser.add_argument("--out", default=str(Path(__file__).resolve().parent / "data"))
    parser.add_argument("--spline-model-only", action="store_true",
                        help="only (re)write model-splines.toml of an existing stack")
    args = parser.parse_args()
    side = side_for(args.mpix)
    out_dir = Path(args.out) / f"stack-{args.mpix:g}"
    if args.spline_model_only:
        write_spline_model(out_dir / "model-splines.toml", out_dir / "training.csv")
        return
    out_dir.mkdir(parents=True, exist_ok=True)
    gdal.SetCacheMax(256 << 20)
    samples = write_stack(out_dir, side)
    write_training(out_dir / "training.csv", samples)
    write_model(out_dir / "model.toml")
    write_spline_model(out_dir / "model-splines.toml", out_dir / "training.csv")
    print(f"{out_dir}: {side} x {side} pixels ({side * side / 1e6:.1f} Mpix)")


if __name__ == "__main__":
    main()
