#!/usr/bin/python3
"""How small can --max-error outputs get? An estimate from the data, independent of any codec.

For each Float32 band of a lossless habcast output folder, the values are rounded to the grid that
`predict --max-error E` uses (step q = largest n * 2^s <= 2E with n in 4..7), each value is predicted
from its causal neighbours (left; and the median edge detector, MED, of lossless JPEG / LOCO-I:
Weinberger, Seroussi & Sapiro 1996/2000, IEEE Trans. Image Processing 9(8)), and the zeroth-order
entropy of the prediction residuals is taken (Shannon 1948). Bits per value times pixels is about
what a good entropy coder needs for values that must stay within E; a codec can do better only by
modelling context beyond these predictors, which the noise in the covariates leaves little of.

usage: precision_budget.py LOSSLESS_DIR [--max-error 1e-4] [--sample-rows 2048]
Prints, per band, bits/value and the implied bytes, and the ratio to the lossless files' bytes.
"""
import argparse
import math
import os
from pathlib import Path

import numpy as np
from osgeo import gdal

gdal.UseExceptions()


def step_for(max_error):
    m, e = math.frexp(2.0 * max_error)          # 2E = m * 2^e, m in [0.5, 1)
    return math.ldexp(math.floor(8.0 * m), e - 3)


def entropy_bits(residuals):
    _, counts = np.unique(residuals, return_counts=True)
    p = counts / counts.sum()
    return float(-(p * np.log2(p)).sum())


def med(k):
    """Median edge detector prediction of k[1:, 1:] from its west, north and north-west pixels."""
    a, b, c = k[1:, :-1], k[:-1, 1:], k[:-1, :-1]
    return np.where(c >= np.maximum(a, b), np.minimum(a, b), np.where(c <= np.minimum(a, b), np.maximum(a, b), a + b - c))


def estimate(folder, max_error, sample_rows=2048, echo=print):
    """Entropy estimate of suitability.tif + uncertainty.tif in `folder` at `max_error`.

    Returns {"step", "lossless_bytes", "estimate_bytes", "bits_per_value": {band: bits}}."""
    q = step_for(max_error)
    folder = Path(folder)
    result = {"step": q, "lossless_bytes": 0, "estimate_bytes": 0.0, "bits_per_value": {}}
    echo(f"--max-error {max_error:g}: grid step q = {q:.6g} (|error| <= {q / 2:.6g})")
    for name in ("suitability.tif", "uncertainty.tif"):
        ds = gdal.Open(str(folder / name))
        result["lossless_bytes"] += os.path.getsize(folder / name)
        rows = ds.RasterYSize if sample_rows <= 0 else min(sample_rows, ds.RasterYSize)
        for b in range(1, ds.RasterCount + 1):
            band = ds.GetRasterBand(b)
            v = band.ReadAsArray(0, 0, ds.RasterXSize, rows).astype(np.float64)
            nodata = band.GetNoDataValue()
            valid = np.isfinite(v) & (v != nodata if nodata is not None else True)
            k = np.where(valid, np.rint(v / q), 0).astype(np.int64)
            both = valid[1:, 1:] & valid[1:, :-1] & valid[:-1, 1:] & valid[:-1, :-1]
            left = entropy_bits((k[1:, 1:] - k[1:, :-1])[both])
            planar = entropy_bits((k[1:, 1:] - med(k))[both])
            bits = min(left, planar)
            result["bits_per_value"][f"{name}:{b}"] = bits
            result["estimate_bytes"] += bits * ds.RasterXSize * ds.RasterYSize / 8
            echo(f"  {name} band {b} ({band.GetDescription() or 'value'}): "
                 f"{left:.2f} bits/value after left, {planar:.2f} after MED")
    echo(f"lossless Float32 files: {result['lossless_bytes'] / 1e6:.1f} MB; entropy estimate at this error: "
         f"{result['estimate_bytes'] / 1e6:.1f} MB, i.e. {result['lossless_bytes'] / result['estimate_bytes']:.2f}x "
         "smaller (an estimate for coders built on these predictors, not a proof)")
    return result


def main():
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("folder")
    ap.add_argument("--max-error", type=float, default=1e-4)
    ap.add_argument("--sample-rows", type=int, default=2048, help="rows read from the top of each band (0 = all)")
    args = ap.parse_args()
    estimate(args.folder, args.max_error, args.sample_rows)


if __name__ == "__main__":
    main()
