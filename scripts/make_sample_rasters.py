#!/usr/bin/python3
"""Build habcast's invented demo scenario: covariate rasters, survey sites and a fitted model.

The Fenmarrow Uplands and the Fenmarrow frost-carpet moth (Psychrocarpa fenmarrensis) are
invented. Nothing here describes a real place or species; the data are not for any real decision.

Usage:  /usr/bin/python3 scripts/make_sample_rasters.py [OUTPUT_DIR]     (default: sample-rasters/)

Writes tmin.tif, precip.tif, slope.tif, soil_ph.tif, landcover.tif (+ .aux.xml with the category
names), training.csv, demo-model.toml. Deterministic: a fixed seed, no clocks, so two runs give
byte-identical CSV/TOML and identical pixel values.

Needs Debian's python3-numpy, python3-gdal and python3-statsmodels (run with /usr/bin/python3).
"""

import argparse
import math
import sys
from pathlib import Path

import numpy as np
import statsmodels
import statsmodels.api as sm
from osgeo import gdal, osr

gdal.UseExceptions()

SEED = 20260314
NX, NY = 320, 240                      # pixels; 32 km x 24 km at 100 m
PIXEL = 100.0                          # metres
# Upper-left corner, EPSG:32630. Deliberately on open sea in the Bay of Biscay (about 46 N, 4.6 W),
# so the invented terrain can never be mistaken for a real place's.
ORIGIN_X, ORIGIN_Y = 380000.0, 5110000.0
EPSG = 32630
NODATA_F = -9999.0
NODATA_LC = 0
N_SITES = 400

LANDCOVER = {1: "heath", 2: "bog", 3: "woodland", 4: "grassland", 5: "scree"}
LANDCOVER_RGB = {1: (142, 84, 130), 2: (96, 140, 120), 3: (34, 100, 46),
                 4: (176, 206, 96), 5: (168, 168, 160)}
SCREE = 5

# Survey design: only the western part of the region, below this elevation, was visited.
SURVEY_MAX_COLUMN = 230                # x < 23 km: the western 72 %
SURVEY_MAX_ELEVATION = 780.0          # metres


# ---------------------------------------------------------------------------------------------
# Terrain and covariates
# ---------------------------------------------------------------------------------------------
def grid_km():
    """Pixel-centre coordinates in km from the upper-left corner (x east, y south)."""
    x = (np.arange(NX) + 0.5) * PIXEL / 1000.0
    y = (np.arange(NY) + 0.5) * PIXEL / 1000.0
    return np.meshgrid(x, y)


def smooth_noise(rng, sigma_px):
    """Gaussian-smoothed white noise scaled to unit sd (FFT filter, so numpy is enough)."""
    white = rng.standard_normal((NY, NX))
    fy = np.fft.fftfreq(NY)[:, None]
    fx = np.fft.fftfreq(NX)[None, :]
    kernel = np.exp(-2.0 * (math.pi ** 2) * (sigma_px ** 2) * (fx ** 2 + fy ** 2))
    field = np.real(np.fft.ifft2(np.fft.fft2(white) * kernel))
    return (field - field.mean()) / field.std()


def gaussian_hill(x, y, cx, cy, sx, sy, height):
    return height * np.exp(-0.5 * (((x - cx) / sx) ** 2 + ((y - cy) / sy) ** 2))


def elevation_m(rng, x, y):
    """An invented massif in the east, a lower fell in the north-west, rolling ground between."""
    z = 170.0 + 6.0 * x                                            # ground rises eastwards
    z += gaussian_hill(x, y, 25.5, 9.0, 4.2, 5.5, 560.0)            # main massif
    z += gaussian_hill(x, y, 21.0, 16.0, 2.6, 2.0, 260.0)           # southern shoulder
    z += gaussian_hill(x, y, 7.0, 6.0, 3.0, 2.6, 330.0)             # north-western fell
    z += 55.0 * smooth_noise(rng, 12.0) + 18.0 * smooth_noise(rng, 3.0)
    ridges = np.abs(smooth_noise(rng, 6.0))                         # crags on high ground
    z += 90.0 * ridges * np.clip((z - 500.0) / 300.0, 0.0, 1.0)
    return z


def slope_deg(z):
    dzdy, dzdx = np.gradient(z, PIXEL)
    return np.degrees(np.arctan(np.hypot(dzdx, dzdy)))


def quantise(a, step):
    """Round to a power-of-two step: float32 then holds the value exactly, the CSV's decimal text
    is that exact value, and DEFLATE compresses the rasters far better."""
    return np.round(a / step) * step


def tmin_degc(rng, x, z):
    """Lapse rate of about 6 degC/km, slightly colder to the east (further from the coast)."""
    t = 3.4 - 0.0062 * z - 0.035 * x + 0.15 * smooth_noise(rng, 4.0)
    return quantise(t, 1.0 / 128.0)


def precip_mm(rng, x, z):
    """Wet west, drier east, plus orographic rain on high ground."""
    p = 2450.0 - 42.0 * x + 0.85 * (z - 170.0) + 45.0 * smooth_noise(rng, 8.0)
    return quantise(p, 1.0)


def soil_ph(rng, precip, lc):
    """Acid under wet heath and bog, less so under woodland and grassland."""
    ph = 7.4 - 0.0011 * precip + 0.12 * smooth_noise(rng, 5.0)
    ph += np.select([lc == 2, lc == 3, lc == 4, lc == 5], [-0.7, 0.35, 0.55, 0.2], 0.0)
    return quantise(ph, 1.0 / 128.0)


def landcover_codes(rng, x, z, slope, precip):
    n1, n2, n3 = smooth_noise(rng, 5.0), smooth_noise(rng, 4.0), smooth_noise(rng, 6.0)
    lc = np.ones((NY, NX), dtype=np.uint8)                          # heath
    # Grassland on the lower, drier ground, thinning out as the ground rises.
    lc[(z < 480.0) & (precip < 2050.0) & (n3 > -0.4 + (480.0 - z) / 1200.0)] = 4
    lc[(z < 420.0) & (slope > 2.0) & (n2 > 0.35)] = 3               # woodland in valleys
    lc[(slope < 3.0) & (precip > 1850.0) & (n1 > -0.2)] = 2         # bog on wet flats
    lc[(z > 760.0) & (slope > 9.0)] = SCREE                          # scree only on high ground
    return lc


def lake_mask(x, y):
    """A small lake in the surveyed west: nodata in every raster."""
    return (((x - 11.5) / 1.3) ** 2 + ((y - 14.5) / 0.75) ** 2) <= 1.0


def precip_gap_mask(x, y):
    """A strip along the northern edge missing from the invented precipitation product only."""
    return (y < 0.5) & (x > 4.0) & (x < 19.0)


def build_layers(rng):
    x, y = grid_km()
    z = elevation_m(rng, x, y)
    lake = lake_mask(x, y)
    slope = quantise(slope_deg(z), 1.0 / 64.0)
    tmin = tmin_degc(rng, x, z)
    precip = precip_mm(rng, x, z)
    lc = landcover_codes(rng, x, z, slope, precip)
    ph = soil_ph(rng, precip, lc)
    for a in (tmin, precip, slope, ph):
        a[lake] = NODATA_F
    lc[lake] = NODATA_LC
    precip[precip_gap_mask(x, y)] = NODATA_F
    return {"elevation": z, "tmin": tmin, "precip": precip, "slope": slope,
            "soil_ph": ph, "landcover": lc}


# ---------------------------------------------------------------------------------------------
# GeoTIFF output
# ---------------------------------------------------------------------------------------------
FLOAT_RASTERS = [
    ("tmin", "degC", "Mean daily minimum temperature of the coldest month"),
    ("precip", "mm", "Annual precipitation"),
    ("slope", "degrees", "Terrain slope"),
    ("soil_ph", "pH", "Topsoil pH (in water)"),
]


def create_geotiff(path, gdal_type, predictor):
    options = ["TILED=YES", "BLOCKXSIZE=256", "BLOCKYSIZE=256", "COMPRESS=DEFLATE",
               "ZLEVEL=9", f"PREDICTOR={predictor}"]
    ds = gdal.GetDriverByName("GTiff").Create(str(path), NX, NY, 1, gdal_type, options)
    ds.SetGeoTransform((ORIGIN_X, PIXEL, 0.0, ORIGIN_Y, 0.0, -PIXEL))
    srs = osr.SpatialReference()
    srs.ImportFromEPSG(EPSG)
    ds.SetProjection(srs.ExportToWkt())
    ds.SetMetadataItem("DATA_NOTE", "Invented demo data (Fenmarrow Uplands); not for real decisions")
    return ds


def write_float_raster(out_dir, name, units, description, values):
    ds = create_geotiff(out_dir / f"{name}.tif", gdal.GDT_Float32, 3)
    band = ds.GetRasterBand(1)
    band.SetNoDataValue(NODATA_F)
    band.SetDescription(description)
    band.SetUnitType(units)
    band.WriteArray(values.astype(np.float32))
    ds.FlushCache()
    ds = None                                                        # closes the file


def write_landcover_raster(out_dir, values):
    ds = create_geotiff(out_dir / "landcover.tif", gdal.GDT_Byte, 2)
    band = ds.GetRasterBand(1)
    band.SetNoDataValue(NODATA_LC)
    band.SetDescription("Land cover class")
    band.SetUnitType("class")
    colours = gdal.ColorTable()
    colours.SetColorEntry(NODATA_LC, (0, 0, 0, 0))
    for code, rgb in LANDCOVER_RGB.items():
        colours.SetColorEntry(code, (*rgb, 255))
    band.SetColorTable(colours)
    band.SetCategoryNames([""] + [LANDCOVER[c] for c in sorted(LANDCOVER)])
    band.WriteArray(values)
    ds.FlushCache()
    ds = None


def write_rasters(out_dir, layers):
    for name, units, description in FLOAT_RASTERS:
        write_float_raster(out_dir, name, units, description, layers[name])
    write_landcover_raster(out_dir, layers["landcover"])


# ---------------------------------------------------------------------------------------------
# Survey sites and the invented "true" niche
# ---------------------------------------------------------------------------------------------
def valid_mask(layers):
    """Pixels where every raster the model reads has data."""
    ok = layers["landcover"] != NODATA_LC
    for name in ("tmin", "precip", "slope"):
        ok &= layers[name] != NODATA_F
    return ok


def survey_frame(layers):
    cols = np.broadcast_to(np.arange(NX)[None, :], (NY, NX))
    return (valid_mask(layers) & (layers["soil_ph"] != NODATA_F) & (cols < SURVEY_MAX_COLUMN)
            & (layers["elevation"] < SURVEY_MAX_ELEVATION) & (layers["landcover"] != SCREE))


def true_logit(tmin, precip, slope, lc):
    """A rotated elliptical dome in (tmin, precip): the moth likes cool, wet ground, and its
    preferred rainfall falls as the ground gets colder (hence the rotation). Gentle slopes and
    bog help it; woodland and grassland do not. Raw units throughout."""
    u = (tmin - 0.3) / 1.3
    v = (precip - 2150.0) / 260.0
    theta = math.radians(35.0)
    a = u * math.cos(theta) + v * math.sin(theta)
    b = -u * math.sin(theta) + v * math.cos(theta)
    eta = 1.6 - 0.8 * a ** 2 - 1.9 * b ** 2 - 0.15 * (slope - 4.0)
    eta += np.select([lc == 2, lc == 3, lc == 4], [0.7, -1.2, -0.6], 0.0)
    return eta


def sample_sites(rng, layers):
    rows, cols = np.nonzero(survey_frame(layers))
    pick = np.sort(rng.choice(rows.size, size=N_SITES, replace=False))
    r, c = rows[pick], cols[pick]
    site = {name: layers[name][r, c] for name in ("tmin", "precip", "slope", "soil_ph", "landcover")}
    site["x"] = ORIGIN_X + (c + 0.5) * PIXEL
    site["y"] = ORIGIN_Y - (r + 0.5) * PIXEL
    eta = true_logit(site["tmin"].astype(float), site["precip"].astype(float),
                     site["slope"].astype(float), site["landcover"])
    site["presence"] = (rng.random(N_SITES) < 1.0 / (1.0 + np.exp(-eta))).astype(int)
    return site


# ---------------------------------------------------------------------------------------------
# Model fit (statsmodels) and model file
# ---------------------------------------------------------------------------------------------
TERMS = ["(Intercept)", "tmin", "tmin^2", "precip", "precip^2", "tmin:precip", "slope",
         "landcover[bog]", "landcover[woodland]", "landcover[grassland]"]
CONTINUOUS = ["tmin", "precip", "slope"]


def standardisation(site):
    """Training mean and sample sd (ddof = 1, as R's sd()), written as center/scale."""
    return {n: (float(np.mean(site[n], dtype=np.float64)),
                float(np.std(site[n], dtype=np.float64, ddof=1))) for n in CONTINUOUS}


def design_matrix(site, std):
    z = {n: (site[n].astype(np.float64) - std[n][0]) / std[n][1] for n in CONTINUOUS}
    lc = site["landcover"]
    cols = [np.ones(lc.size), z["tmin"], z["tmin"] ** 2, z["precip"], z["precip"] ** 2,
            z["tmin"] * z["precip"], z["slope"],
            (lc == 2).astype(float), (lc == 3).astype(float), (lc == 4).astype(float)]
    return np.column_stack(cols)


def fit_glm(site, std):
    X = design_matrix(site, std)
    result = sm.GLM(site["presence"].astype(float), X, family=sm.families.Binomial()).fit(
        method="IRLS", tol=1e-12, maxiter=100)
    if not result.converged:
        sys.exit("make_sample_rasters: the demo GLM did not converge; change SEED or the niche")
    cov = np.asarray(result.cov_params())
    # cov_params() comes from a pseudo-inverse, which can be asymmetric in the last bit; the
    # model format requires an exactly symmetric matrix.
    cov = 0.5 * (cov + cov.T)
    return np.asarray(result.params), cov, result


def num(v):
    """Shortest text that reads back as the same double (Python's repr: at most 17 digits)."""
    v = float(v)
    if not math.isfinite(v):
        sys.exit("make_sample_rasters: non-finite number in output")
    return repr(v)


def toml_array(items):
    return "[ " + ", ".join(items) + " ]"


def versions_line():
    return (f"numpy {np.__version__}, statsmodels {statsmodels.__version__}, "
            f"GDAL {gdal.__version__}, Python {sys.version.split()[0]}")


def model_toml(std, params, cov, result):
    lines = [
        "# Generated by scripts/make_sample_rasters.py - do not edit; rerun the script instead.",
        f"# {versions_line()}.",
        "# Invented demo scenario (Fenmarrow Uplands, Fenmarrow frost-carpet moth); not for any",
        "# real decision. Fitted with statsmodels GLM, Binomial family, logit link.",
        "",
        "habcast_model = 1",
        "",
        "[model]",
        'name = "Fenmarrow frost-carpet occupancy (invented demo)"',
        'response = "presence"',
        'family = "binomial"',
        'link = "logit"',
        ('description = "Invented example: presence of the Fenmarrow frost-carpet at '
         f'{int(result.nobs)} survey sites in the western Fenmarrow Uplands; residual deviance '
         f'{result.deviance:.4f} on {int(result.df_resid)} df."'),
        "",
        "[training]",
        'samples = "training.csv"',
    ]
    descriptions = dict((n, (u, d)) for n, u, d in FLOAT_RASTERS)
    for name in CONTINUOUS:
        units, description = descriptions[name]
        lines += ["", f"[covariates.{name}]", 'type = "continuous"', f'units = "{units}"',
                  f'description = "{description}"', f"center = {num(std[name][0])}",
                  f"scale = {num(std[name][1])}", f'raster = "{name}.tif"']
    levels = ", ".join(f'{{ code = {c}, name = "{LANDCOVER[c]}" }}' for c in (1, 2, 3, 4))
    lines += ["", "[covariates.landcover]", 'type = "categorical"',
              'description = "Land cover class; code 5 (scree) never occurs at survey sites"',
              f"levels = [ {levels} ]", 'reference = "heath"', 'raster = "landcover.tif"']
    lines += ["", "[coefficients]",
              "terms = " + toml_array(f'"{t}"' for t in TERMS),
              "estimates = " + toml_array(num(v) for v in params),
              "covariance = ["]
    lines += ["  " + toml_array(num(v) for v in row) + "," for row in cov]
    lines += ["]", ""]
    return "\n".join(lines)


def training_csv(site):
    """habcast skips the leading "#" lines. x, y are pixel centres (EPSG:32630); soil_ph is an
    extra column the model does not use (habcast ignores columns it has no covariate for)."""
    rows = [
        "# Generated by scripts/make_sample_rasters.py - do not edit; rerun the script instead.",
        f"# {versions_line()}.",
        "# Invented survey of the invented Fenmarrow frost-carpet moth; not for any real decision.",
        "# Raw pixel values at each site; landcover codes: 1 heath, 2 bog, 3 woodland, 4 grassland.",
        "site_id,x,y,tmin,precip,slope,soil_ph,landcover,presence",
    ]
    for i in range(N_SITES):
        rows.append(",".join([f"S{i + 1:03d}", num(site["x"][i]), num(site["y"][i]),
                              num(site["tmin"][i]), num(site["precip"][i]),
                              num(site["slope"][i]), num(site["soil_ph"][i]),
                              str(int(site["landcover"][i])), str(int(site["presence"][i]))]))
    return "\n".join(rows) + "\n"


# ---------------------------------------------------------------------------------------------
# Report
# ---------------------------------------------------------------------------------------------
def extrapolation_report(layers, site):
    valid = valid_mask(layers)
    n_valid = int(valid.sum())
    union = np.zeros_like(valid)
    print(f"valid pixels (tmin, precip, slope, landcover all present): {n_valid} of {NX * NY}")
    for name in CONTINUOUS:
        lo, hi = float(site[name].min()), float(site[name].max())
        values = layers[name]
        outside = valid & ((values < lo) | (values > hi))
        union |= outside
        print(f"  {name:7s} training range [{lo:g}, {hi:g}]: "
              f"{100.0 * outside.sum() / n_valid:5.1f} % of valid pixels outside")
    print(f"  any continuous covariate outside its range: {100.0 * union.sum() / n_valid:5.1f} %")
    scree = valid & (layers["landcover"] == SCREE)
    print(f"  landcover level not seen in training (scree): {100.0 * scree.sum() / n_valid:5.1f} %")


def fit_report(site, std, params, cov):
    print(f"sites: {N_SITES}, presences: {int(site['presence'].sum())} "
          f"(prevalence {site['presence'].mean():.3f})")
    levels = np.bincount(site["landcover"], minlength=6)[1:]
    print("sites per landcover code 1-5:", " ".join(str(int(n)) for n in levels))
    for name in CONTINUOUS:
        print(f"  {name}: center {std[name][0]:.6g}, scale {std[name][1]:.6g}")
    se = np.sqrt(np.diag(cov))
    for term, b, s in zip(TERMS, params, se):
        print(f"  {term:22s} {b:10.4f}  (se {s:.4f})")


def check_shape(params):
    """The demo is meant to show a rotated dome; stop rather than write a model that does not."""
    quad_t, quad_p, inter = params[2], params[4], params[5]
    hessian = np.array([[2 * quad_t, inter], [inter, 2 * quad_p]])
    if not (quad_t < 0 and quad_p < 0 and np.all(np.linalg.eigvalsh(hessian) < 0)):
        sys.exit("make_sample_rasters: fitted (tmin, precip) surface is not a dome")
    if abs(inter) < 0.05:
        sys.exit("make_sample_rasters: fitted interaction too small to show a rotated dome")


def main():
    default_out = Path(__file__).resolve().parent.parent / "sample-rasters"
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("output_dir", nargs="?", default=str(default_out),
                        help="folder to write into (default: %(default)s)")
    out_dir = Path(parser.parse_args().output_dir)
    out_dir.mkdir(parents=True, exist_ok=True)

    rng = np.random.default_rng(SEED)
    layers = build_layers(rng)
    site = sample_sites(rng, layers)
    std = standardisation(site)
    params, cov, result = fit_glm(site, std)
    check_shape(params)

    write_rasters(out_dir, layers)
    (out_dir / "training.csv").write_text(training_csv(site))
    (out_dir / "demo-model.toml").write_text(model_toml(std, params, cov, result))

    print(versions_line())
    fit_report(site, std, params, cov)
    extrapolation_report(layers, site)
    print(f"wrote {out_dir}")


if __name__ == "__main__":
    main()
