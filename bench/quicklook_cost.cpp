// Timing of the map quicklook on a large raster (not a test): generates a SIZE x SIZE Float32
// suitability raster (default 10000 = 100 Mpix; tiled 256 x 256, DEFLATE) with an extrapolation
// flag raster beside it, once without and once with internal overviews, then draws the quicklook
// of each as PNG and PDF and prints the wall time of each drawing. Run it under /usr/bin/time -v
// to see that peak memory follows the picture, not the raster.
//
//   habcast_quicklook_cost FOLDER [SIZE]
//
// FOLDER is created and reused (the rasters are generated once).
#include <gdal_priv.h>
#include <ogr_spatialref.h>

#include <chrono>
#include <cmath>
#include <ctime>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <stdexcept>
#include <string>
#include <vector>

#include "raster/gdal_session.hpp"
#include "render/figure_file.hpp"
#include "render/quicklook.hpp"

namespace {

namespace fs = std::filesystem;

/// A smooth field of hills in 0..1 and a band of extrapolated cells, written row block by row block.
void make_rasters(const std::string& suitability, const std::string& flags, int size, bool overviews) {
  GDALDriver* gtiff = GetGDALDriverManager()->GetDriverByName("GTiff");
  char** options = nullptr;
  options = CSLSetNameValue(options, "TILED", "YES");
  options = CSLSetNameValue(options, "COMPRESS", "DEFLATE");
  options = CSLSetNameValue(options, "BIGTIFF", "IF_SAFER");
  GDALDataset* s = gtiff->Create(suitability.c_str(), size, size, 1, GDT_Float32, options);
  GDALDataset* f = gtiff->Create(flags.c_str(), size, size, 1, GDT_Byte, options);
  CSLDestroy(options);
  OGRSpatialReference utm;
  utm.importFromEPSG(32630);
  double gt[6] = {400000.0, 10.0, 0.0, 5000000.0, 0.0, -10.0};
  for (GDALDataset* ds : {s, f}) {
    ds->SetSpatialRef(&utm);
    ds->SetGeoTransform(gt);
  }
  s->GetRasterBand(1)->SetNoDataValue(-9999.0);
  f->GetRasterBand(1)->SetNoDataValue(255.0);
  const int rows = 256;
  std::vector<float> v(static_cast<std::size_t>(size) * rows);
  std::vector<std::uint8_t> b(v.size());
  for (int r0 = 0; r0 < size; r0 += rows) {
    const int n = std::min(rows, size - r0);
    for (int r = 0; r < n; ++r)
      for (int c = 0; c < size; ++c) {
        const double x = static_cast<double>(c) / size, y = static_cast<double>(r0 + r) / size;
        const std::size_t i = static_cast<std::size_t>(r) * static_cast<std::size_t>(size) + static_cast<std::size_t>(c);
        v[i] = static_cast<float>(0.5 + 0.45 * std::sin(9.0 * x) * std::cos(7.0 * y));
        b[i] = x > 0.75 ? 1 : 0;
      }
    if (s->GetRasterBand(1)->RasterIO(GF_Write, 0, r0, size, n, v.data(), size, n, GDT_Float32, 0, 0, nullptr) != CE_None ||
        f->GetRasterBand(1)->RasterIO(GF_Write, 0, r0, size, n, b.data(), size, n, GDT_Byte, 0, 0, nullptr) != CE_None)
      throw std::runtime_error("cannot write the benchmark rasters");
  }
  if (overviews) {
    int levels[] = {2, 4, 8, 16, 32};
    s->BuildOverviews("AVERAGE", 5, levels, 0, nullptr, nullptr, nullptr);
    f->BuildOverviews("NEAREST", 5, levels, 0, nullptr, nullptr, nullptr);
  }
  GDALClose(s);
  GDALClose(f);
}

}  // namespace

int main(int argc, char** argv) {
  const std::vector<std::string> args(argv + 1, argv + argc);
  if (args.empty()) return std::fputs("usage: habcast_quicklook_cost FOLDER [SIZE=10000]\n", stderr), 2;
  const fs::path folder = args[0];
  const int size = args.size() > 1 ? std::stoi(args[1]) : 10000;
  fs::create_directories(folder);
  habcast::ensure_gdal();
  for (const bool overviews : {false, true}) {
    const std::string tag = std::to_string(size) + (overviews ? "-overviews" : "-plain");
    const std::string suitability = (folder / ("suitability-" + tag + ".tif")).string();
    const std::string flags = (folder / ("extrapolation-" + tag + ".tif")).string();
    if (!fs::exists(suitability) || !fs::exists(flags)) make_rasters(suitability, flags, size, overviews);
    for (const char* ext : {".png", ".pdf"}) {
      const auto start = std::chrono::steady_clock::now();
      const std::clock_t cpu_start = std::clock();
      const habcast::Figure fig = habcast::quicklook_figure(suitability, flags, "Quicklook cost " + tag);
      const std::string path = (folder / ("quicklook-" + tag + ext)).string();
      std::ofstream(path, std::ios::binary) << habcast::encode_figure(fig, path);
      const double seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
      const double cpu = static_cast<double>(std::clock() - cpu_start) / CLOCKS_PER_SEC;
      std::printf("%-20s %-4s wall %6.2f s  cpu %6.2f s\n", tag.c_str(), ext + 1, seconds, cpu);
    }
  }
  return 0;
}
