// Timing of the training-domain checks at raster scale (not a test): generates a stack of four
// smooth covariate rasters (SIZE x SIZE pixels, default 5000 = 25 Mpix), 2,000 training samples
// drawn from its pixels, and a model with quadratic and interaction terms, then times
// `habcast predict` with range checks only, with every check but the full hull, and with all.
// The budget: the full hull may add at most 50 % to the wall time of predict without it.
//
//   habcast_hull_cost FOLDER [SIZE] [THREADS]
//
// FOLDER is created and reused (inputs are generated once); outputs go to FOLDER/out-*.
#include <gdal_priv.h>
#include <ogr_spatialref.h>

#include <chrono>
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <iostream>
#include <random>
#include <string>
#include <vector>

#include "predict/predict_run.hpp"
#include "raster/gdal_session.hpp"

namespace {

namespace fs = std::filesystem;

double field(int k, int row, int col) {
  const double x = col / 500.0, y = row / 500.0;
  switch (k) {
    case 0: return 8.0 + 4.0 * std::sin(x) * std::cos(0.7 * y) + 0.5 * y;
    case 1: return 900.0 + 300.0 * std::cos(0.5 * x + 0.3 * y) + 80.0 * std::sin(2.1 * y);
    case 2: return 40.0 + 15.0 * std::sin(0.9 * x - 0.4 * y) * std::sin(0.6 * y + 1.0);
    default: return 2.0 + std::sin(1.3 * x) + std::cos(1.1 * y) + 0.3 * std::sin(x * y / 4.0);
  }
}

const char* kNames[4] = {"tmin", "precip", "slope", "soil_ph"};

void write_inputs(const fs::path& dir, int size) {
  GDALDriver* driver = GetGDALDriverManager()->GetDriverByName("GTiff");
  for (int k = 0; k < 4; ++k) {
    const std::string path = (dir / (std::string(kNames[k]) + ".tif")).string();
    if (fs::exists(path)) continue;
    const char* options[] = {"TILED=YES", "COMPRESS=DEFLATE", "PREDICTOR=3", "BIGTIFF=IF_SAFER", nullptr};
    GDALDataset* ds = driver->Create(path.c_str(), size, size, 1, GDT_Float32, const_cast<char**>(options));
    double gt[6] = {500000.0, 30.0, 0.0, 4650000.0, 0.0, -30.0};
    ds->SetGeoTransform(gt);
    OGRSpatialReference srs;
    srs.importFromEPSG(32630);
    ds->SetSpatialRef(&srs);
    std::vector<float> row(static_cast<std::size_t>(size));
    for (int r = 0; r < size; ++r) {
      for (int c = 0; c < size; ++c) row[static_cast<std::size_t>(c)] = static_cast<float>(field(k, r, c));
      if (ds->GetRasterBand(1)->RasterIO(GF_Write, 0, r, size, 1, row.data(), size, 1, GDT_Float32, 0, 0) != CE_None)
        throw std::runtime_error("cannot write " + path);
    }
    GDALClose(GDALDataset::ToHandle(ds));
  }
  std::ofstream csv(dir / "train.csv");
  csv << "tmin,precip,slope,soil_ph\n";
  std::mt19937_64 rng(42);
  std::uniform_int_distribution<int> pick(0, size - 1);
  // Samples from the central 60 % of the area, so some of the map is a genuine extrapolation.
  for (int i = 0; i < 2000; ++i) {
    const int r = size / 5 + pick(rng) * 3 / 5, c = size / 5 + pick(rng) * 3 / 5;
    csv << static_cast<float>(field(0, r, c)) << "," << static_cast<float>(field(1, r, c)) << ","
        << static_cast<float>(field(2, r, c)) << "," << static_cast<float>(field(3, r, c)) << "\n";
  }
  std::ofstream model(dir / "model.toml");
  model << "habcast_model = 1\n[model]\nfamily = \"binomial\"\n[training]\nsamples = \"train.csv\"\n"
           "[covariates.tmin]\ncenter = 8\nscale = 3\nraster = \"tmin.tif\"\n"
           "[covariates.precip]\ncenter = 900\nscale = 200\nraster = \"precip.tif\"\n"
           "[covariates.slope]\ncenter = 40\nscale = 10\nraster = \"slope.tif\"\n"
           "[covariates.soil_ph]\ncenter = 2\nscale = 1\nraster = \"soil_ph.tif\"\n"
           "[coefficients]\nterms = [\"(Intercept)\", \"tmin\", \"tmin^2\", \"precip\", \"precip^2\", \"slope\", "
           "\"soil_ph\", \"tmin:precip\", \"slope:soil_ph\"]\n"
           "estimates = [0.2, 0.5, -0.4, 0.3, -0.2, -0.1, 0.2, 0.15, -0.05]\n";
}

double time_predict(const fs::path& dir, const std::string& name, const habcast::NoveltyOptions& checks, int threads) {
  habcast::PredictOptions options;
  options.model_path = (dir / "model.toml").string();
  options.output_dir = (dir / ("out-" + name)).string();
  options.overwrite = true;
  options.threads = threads;
  options.novelty = checks;
  auto progress = habcast::make_progress(habcast::ProgressStyle::quiet, std::cerr, false);
  const auto t0 = std::chrono::steady_clock::now();
  const habcast::PredictSummary summary = habcast::run_predict(options, *progress, "bench");
  const double seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
  std::printf("%-24s %8.2f s   flagged %.4f\n", name.c_str(), seconds,
              summary.report["extrapolation"]["flagged_share"].get<double>());
  return seconds;
}

}  // namespace

int main(int argc, char** argv) {
  if (argc < 2) {
    std::fprintf(stderr, "usage: habcast_hull_cost FOLDER [SIZE=5000] [THREADS=2]\n");
    return 2;
  }
  const fs::path dir = argv[1];
  const int size = argc > 2 ? std::atoi(argv[2]) : 5000;
  const int threads = argc > 3 ? std::atoi(argv[3]) : 2;
  fs::create_directories(dir);
  habcast::ensure_gdal();
  write_inputs(dir, size);

  habcast::NoveltyOptions range_only;
  range_only.hull = range_only.pairs = range_only.nt2 = range_only.mess = false;
  habcast::NoveltyOptions no_hull;
  no_hull.hull = false;
  habcast::NoveltyOptions hull_only = range_only;
  hull_only.hull = true;
  const habcast::NoveltyOptions all;
  const double t_range = time_predict(dir, "range", range_only, threads);
  const double t_hull_only = time_predict(dir, "range+hull", hull_only, threads);
  const double t_no_hull = time_predict(dir, "all-but-hull", no_hull, threads);
  const double t_all = time_predict(dir, "all", all, threads);
  std::printf("hull cost: %+.1f %% over range only, %+.1f %% over every other check\n",
              100.0 * (t_hull_only / t_range - 1.0), 100.0 * (t_all / t_no_hull - 1.0));
  return 0;
}
