#!/usr/bin/python3
"""The benchmark's peer: what a competent practitioner would write with numpy + GDAL instead of
habcast, producing the same three rasters with the same creation options.

Usage:  /usr/bin/python3 bench/peer_numpy_gdal.py MODEL.toml OUT_DIR [--window 1024] [--threads ALL_CPUS]

Reads the model file (terms of the forms "(Intercept)", "a", "a^2", "a:b", "a:b^2", "f[level]"),
the covariate rasters it names and its training table; then, window by window (aligned to the
256 x 256 tiles), computes with vectorised numpy in float64:
  eta = X b,  se(eta) = sqrt(rowsum((X V) * X)),  mu = logistic(eta),
  se(mu) = mu (1 - mu) se(eta)  (delta method),  limits = logistic(eta -/+ z se(eta)),
and writes suitability.tif (Float32), uncertainty.tif (3 x Float32: se, lower, upper) and
extrapolation.tif (UInt8: 1 outside a training range, 4 unseen level, 255 nodata).

GDAL threading is set as well as GDAL allows: GDAL_NUM_THREADS for multi-threaded decoding of
multi-tile reads, NUM_THREADS for multi-threaded compression on write, and a block cache that
holds a window row of every output.
"""

import argparse
import re
import tomllib
from pathlib import Path

import numpy as np
from osgeo import gdal

gdal.UseExceptions()

NODATA_F = -9999.0
NODATA_FLAGS = 255
Z_95 = 1.959963984540054  # standard normal 0.975 quantile (any table of the normal distribution)


def creation_options(predictor, threads):
    return ["TILED=YES", "BLOCKXSIZE=256", "BLOCKYSIZE=256", "COMPRESS=DEFLATE", f"PREDICTOR={predictor}",
            "BIGTIFF=IF_SAFER", f"NUM_THREADS={threads}"]


def parse_term(term, levels):
    """A term as a list of (covariate, power) or (covariate, level code) factors; [] = intercept."""
    if term in ("(Intercept)", "1"):
        return []
    factors = []
    for part in term.split(":"):
        m = re.fullmatch(r"(\w+)\[(\w+)\]", part)
        if m:
            factors.append((m.group(1), "level", levels[m.group(1)][m.group(2)]))
            continue
        m = re.fullmatch(r"(\w+)(?:\^(\d))?", part)
        if not m:
            raise SystemExit(f"peer: term {term!r} is beyond this script")
        factors.append((m.group(1), "power", int(m.group(2) or 1)))
    return factors


class Model:
    def __init__(self, path):
        path = Path(path)
        spec = tomllib.loads(path.read_text())
        self.dir = path.parent
        self.covariates = spec["covariates"]
        self.levels = {name: {lv["name"]: lv["code"] for lv in c["levels"]}
                       for name, c in self.covariates.items() if c.get("type") == "categorical"}
        coef = spec["coefficients"]
        self.terms = [parse_term(t, self.levels) for t in coef["terms"]]
        self.beta = np.array(coef["estimates"])
        self.V = np.array(coef["covariance"])
        self.training_ranges(self.dir / spec["training"]["samples"])

    def training_ranges(self, csv_path):
        lines = [ln for ln in csv_path.read_text().splitlines() if ln and not ln.startswith("#")]
        header = lines[0].split(",")
        table = np.array([[float(v) for v in ln.split(",")] for ln in lines[1:]])
        self.ranges, self.seen = {}, {}
        for name in self.covariates:
            col = table[:, header.index(name)]
            if name in self.levels:
                self.seen[name] = np.unique(col)
            else:
                self.ranges[name] = (col.min(), col.max())

    def design(self, values, n):
        X = np.empty((n, len(self.terms)))
        for j, factors in enumerate(self.terms):
            col = np.ones(n)
            for name, kind, arg in factors:
                if kind == "level":
                    col *= values[name] == arg
                else:
                    col *= values[name] ** arg
            X[:, j] = col
        return X


def logistic(eta):
    return 0.5 * (1.0 + np.tanh(0.5 * eta))  # overflow-free logistic


def predict_window(model, raw, nodata):
    """Outputs of one window; raw: name -> 2-D array in raster units."""
    shape = next(iter(raw.values())).shape
    valid = np.ones(shape, dtype=bool)
    for name, a in raw.items():
        valid &= np.isfinite(a)
        if nodata[name] is not None:
            valid &= a != nodata[name]
    flags = np.zeros(shape, dtype=np.uint8)
    for name, (lo, hi) in model.ranges.items():
        # In float64: numpy would compare a float32 array with a float64 scalar in float32,
        # rounding the training limit and flagging pixels that lie exactly on it differently.
        r = raw[name].astype(np.float64)
        flags[(r < lo) | (r > hi)] |= 1
    for name, seen in model.seen.items():
        flags[~np.isin(raw[name], seen)] |= 4
    flags[~valid] = NODATA_FLAGS
    # Undeclared categorical codes get no prediction.
    predictable = valid.copy()
    for name, levels in model.levels.items():
        predictable &= np.isin(raw[name], list(levels.values()))
    idx = np.flatnonzero(predictable)
    values = {}
    for name, c in model.covariates.items():
        v = raw[name].ravel()[idx].astype(np.float64)
        values[name] = v if name in model.levels else (v - c.get("center", 0.0)) / c.get("scale", 1.0)
    X = model.design(values, idx.size)
    eta = X @ model.beta
    se_eta = np.sqrt(np.maximum(np.einsum("ij,ij->i", X @ model.V, X), 0.0))
    mu = logistic(eta)
    outs = [np.full(shape, NODATA_F, dtype=np.float32) for _ in range(4)]
    for out, v in zip(outs, (mu, mu * (1.0 - mu) * se_eta, logistic(eta - Z_95 * se_eta), logistic(eta + Z_95 * se_eta))):
        out.ravel()[idx] = v
    return outs, flags


def main():
    parser = argparse.ArgumentParser(description="numpy + GDAL peer of habcast predict")
    parser.add_argument("model")
    parser.add_argument("out_dir")
    parser.add_argument("--window", type=int, default=1024, help="window edge in pixels (a multiple of 256)")
    parser.add_argument("--threads", default="ALL_CPUS", help="GDAL threads for decoding and compression")
    args = parser.parse_args()
    gdal.SetConfigOption("GDAL_NUM_THREADS", args.threads)
    gdal.SetCacheMax(256 << 20)
    model = Model(args.model)

    inputs = {name: gdal.Open(str(model.dir / c["raster"])) for name, c in model.covariates.items()}
    bands = {name: ds.GetRasterBand(1) for name, ds in inputs.items()}
    nodata = {name: b.GetNoDataValue() for name, b in bands.items()}
    ref = next(iter(inputs.values()))
    width, height = ref.RasterXSize, ref.RasterYSize
    out_dir = Path(args.out_dir)
    out_dir.mkdir(parents=True, exist_ok=True)
    driver = gdal.GetDriverByName("GTiff")

    def create(name, bands_count, data_type, predictor, nd):
        ds = driver.Create(str(out_dir / name), width, height, bands_count, data_type,
                           creation_options(predictor, args.threads))
        ds.SetGeoTransform(ref.GetGeoTransform())
        ds.SetProjection(ref.GetProjection())
        for b in range(1, bands_count + 1):
            ds.GetRasterBand(b).SetNoDataValue(nd)
        return ds

    suit = create("suitability.tif", 1, gdal.GDT_Float32, 3, NODATA_F)
    unc = create("uncertainty.tif", 3, gdal.GDT_Float32, 3, NODATA_F)
    ext = create("extrapolation.tif", 1, gdal.GDT_Byte, 2, NODATA_FLAGS)

    w = args.window
    for y in range(0, height, w):
        h = min(w, height - y)
        for x in range(0, width, w):
            ww = min(w, width - x)
            raw = {name: b.ReadAsArray(x, y, ww, h) for name, b in bands.items()}
            (mu, se, lo, hi), flags = predict_window(model, raw, nodata)
            suit.GetRasterBand(1).WriteArray(mu, x, y)
            for b, a in zip((1, 2, 3), (se, lo, hi)):
                unc.GetRasterBand(b).WriteArray(a, x, y)
            ext.GetRasterBand(1).WriteArray(flags, x, y)
    for ds in (suit, unc, ext):
        ds.FlushCache()
    suit = unc = ext = None


if __name__ == "__main__":
    main()
