#include "render/quicklook.hpp"

#include <gdal_priv.h>

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <cstdio>
#include <limits>
#include <vector>

#include "core/base/error.hpp"
#include "core/base/number_text.hpp"
#include "raster/gdal_handles.hpp"
#include "raster/gdal_session.hpp"
#include "raster/raster_grid.hpp"
#include "render/canvas.hpp"
#include "render/png_writer.hpp"

namespace habcast {

namespace {

constexpr int kMargin = 16, kTitle = 40, kLegend = 220, kFooter = 60, kMinMapHeight = 240;
const Rgb kNoData{228, 228, 228};

/// One band read at the picture's size: GDAL picks the source pixels (nearest neighbour, from an
/// overview when the file has one), so only map_width x map_height values are ever held.
template <typename T>
std::vector<T> read_decimated(GDALDataset& ds, const std::string& path, int map_w, int map_h, GDALDataType type) {
  GDALRasterBand& band = input_band(ds, path, 1);
  std::vector<T> values(static_cast<std::size_t>(map_w) * static_cast<std::size_t>(map_h));
  if (band.RasterIO(GF_Read, 0, 0, ds.GetRasterXSize(), ds.GetRasterYSize(), values.data(), map_w, map_h, type, 0, 0,
                    nullptr) != CE_None)
    throw InputError(path + ": cannot read the raster for the quicklook (" + gdal_reason() + ")");
  return values;
}

struct Field {
  std::vector<float> values;
  std::vector<std::uint8_t> flags;  // empty without an extrapolation raster
  float nodata = std::numeric_limits<float>::quiet_NaN();
  bool has_nodata = false;
  double lo = 0.0, hi = 1.0;
  std::string units;
  [[nodiscard]] bool valid(std::size_t i) const {
    return std::isfinite(values[i]) && !(has_nodata && values[i] == nodata);
  }
};

void value_range(Field& f) {
  double lo = std::numeric_limits<double>::infinity(), hi = -lo;
  for (std::size_t i = 0; i < f.values.size(); ++i)
    if (f.valid(i)) {
      lo = std::min(lo, static_cast<double>(f.values[i]));
      hi = std::max(hi, static_cast<double>(f.values[i]));
    }
  // Probabilities always span 0..1 so that two quicklooks can be compared by eye.
  if (f.units == "probability" || (lo >= 0.0 && hi <= 1.0)) {
    f.lo = 0.0;
    f.hi = 1.0;
  } else if (hi > lo) {
    f.lo = lo;
    f.hi = hi;
  }
}

/// Extrapolated pixels: diagonal stripes in whichever of black or white contrasts with the colour
/// underneath, so the hatching stays visible in greyscale too.
void draw_map(Canvas& canvas, const Field& f, int x0, int y0, int w, int h) {
  for (int y = 0; y < h; ++y)
    for (int x = 0; x < w; ++x) {
      const std::size_t i = static_cast<std::size_t>(y) * static_cast<std::size_t>(w) + static_cast<std::size_t>(x);
      if (!f.valid(i)) {
        canvas.set(x0 + x, y0 + y, kNoData);
        continue;
      }
      const Rgb c = ramp_colour((f.values[i] - f.lo) / (f.hi - f.lo));
      const bool extrapolated = !f.flags.empty() && f.flags[i] != 0 && f.flags[i] != 255;
      const bool stripe = extrapolated && (x + y) % 6 < 2;
      canvas.set(x0 + x, y0 + y, stripe ? (lightness(c) > 55.0 ? kInk : Rgb{255, 255, 255}) : c);
    }
  canvas.rect_outline(x0 - 1, y0 - 1, w + 2, h + 2, kInk);
}

void draw_legend(Canvas& canvas, const Field& f, int x0, int y0, bool has_flags) {
  canvas.text(x0, y0, f.units.empty() ? "SUITABILITY" : "SUITABILITY (" + f.units + ")", kInk);
  const int bar_top = y0 + 16, bar_h = 120;
  for (int y = 0; y < bar_h; ++y) canvas.line(x0, bar_top + y, x0 + 18, bar_top + y, ramp_colour(1.0 - static_cast<double>(y) / (bar_h - 1)));
  canvas.rect_outline(x0, bar_top, 19, bar_h, kInk);
  canvas.text(x0 + 26, bar_top, significant(f.hi, 3), kInk);
  canvas.text(x0 + 26, bar_top + bar_h / 2 - 3, significant((f.lo + f.hi) / 2, 3), kInk);
  canvas.text(x0 + 26, bar_top + bar_h - 7, significant(f.lo, 3), kInk);
  int y = bar_top + bar_h + 14;
  if (has_flags) {
    for (int yy = 0; yy < 12; ++yy)
      for (int xx = 0; xx < 19; ++xx) canvas.set(x0 + xx, y + yy, (xx + yy) % 6 < 2 ? kInk : ramp_colour(0.8));
    canvas.rect_outline(x0, y, 19, 12, kInk);
    canvas.text(x0 + 26, y + 3, "OUTSIDE TRAINING DATA", kInk);
    y += 18;
  }
  canvas.fill_rect(x0, y, 19, 12, kNoData);
  canvas.rect_outline(x0, y, 19, 12, kInk);
  canvas.text(x0 + 26, y + 3, "NO DATA", kInk);
}

/// A bar of a round length (1, 2 or 5 times a power of ten metres) close to a quarter of the map.
void draw_scale(Canvas& canvas, const RasterGrid& grid, int raster_w, int map_w, int x0, int y0) {
  const double map_pixel = std::fabs(grid.geotransform[1]) * raster_w / map_w;  // CRS units per map pixel
  std::string note;
  if (grid.has_geotransform && grid.linear_units_to_metre > 0.0) {
    const double metres_per_pixel = map_pixel * grid.linear_units_to_metre;
    const double target = metres_per_pixel * map_w / 4.0;
    const double power = std::pow(10.0, std::floor(std::log10(target)));
    double length = power;
    for (double m : {2.0, 5.0})
      if (m * power <= target) length = m * power;
    const int bar = static_cast<int>(std::lround(length / metres_per_pixel));
    canvas.fill_rect(x0, y0, bar, 4, kInk);
    canvas.line(x0, y0 - 3, x0, y0 + 6, kInk);
    canvas.line(x0 + bar, y0 - 3, x0 + bar, y0 + 6, kInk);
    canvas.text(x0 + bar + 8, y0 - 1, length >= 1000 ? significant(length / 1000, 3) + " KM" : significant(length, 3) + " M", kInk);
    note = "1 PIXEL HERE = " + significant(metres_per_pixel, 3) + " M ON THE GROUND (" + grid.crs_name + ")";
  } else if (grid.has_geotransform) {
    note = "1 PIXEL HERE = " + significant(map_pixel, 3) + " CRS UNITS (NOT A PROJECTED CRS: NO SCALE BAR)";
  } else {
    note = "NO GEOREFERENCING: NO SCALE";
  }
  canvas.text(x0, y0 + 16, note, kInk);
}

}  // namespace

QuicklookLayout quicklook_layout(int raster_width, int raster_height, int max_edge) {
  QuicklookLayout l;
  const double s = static_cast<double>(max_edge) / std::max(raster_width, raster_height);
  l.map_width = std::max(1, static_cast<int>(std::lround(raster_width * s)));
  l.map_height = std::max(1, static_cast<int>(std::lround(raster_height * s)));
  l.width = l.map_width + 2 * kMargin + kLegend;
  l.height = std::max(l.map_height, kMinMapHeight) + kTitle + kFooter;
  return l;
}

QuicklookLayout write_quicklook(const std::string& suitability_path, const std::string& extrapolation_path,
                                const std::string& png_path, const std::string& title, int max_edge) {
  if (max_edge < 16) throw UsageError("the quicklook needs at least 16 pixels on its longer side");
  ensure_gdal();
  DatasetPtr suitability = open_input_raster(suitability_path);
  const int W = suitability->GetRasterXSize(), H = suitability->GetRasterYSize();
  const QuicklookLayout layout = quicklook_layout(W, H, max_edge);

  Field field;
  field.values = read_decimated<float>(*suitability, suitability_path, layout.map_width, layout.map_height, GDT_Float32);
  int has = 0;
  const double nd = input_band(*suitability, suitability_path, 1).GetNoDataValue(&has);
  field.has_nodata = has != 0;
  field.nodata = static_cast<float>(nd);
  field.units = input_band(*suitability, suitability_path, 1).GetUnitType();
  if (!extrapolation_path.empty()) {
    DatasetPtr flags = open_input_raster(extrapolation_path);
    if (flags->GetRasterXSize() != W || flags->GetRasterYSize() != H)
      throw InputError(extrapolation_path + ": not the size of " + suitability_path + "; the quicklook needs both from one run");
    field.flags = read_decimated<std::uint8_t>(*flags, extrapolation_path, layout.map_width, layout.map_height, GDT_Byte);
  }
  value_range(field);

  Canvas canvas(layout.width, layout.height);
  const int title_scale = Canvas::text_width(title, 2) <= layout.width - 2 * kMargin ? 2 : 1;
  canvas.text(kMargin, 14, title, kInk, title_scale);
  draw_map(canvas, field, kMargin, kTitle, layout.map_width, layout.map_height);
  draw_legend(canvas, field, kMargin + layout.map_width + 20, kTitle, !field.flags.empty());
  const RasterGrid grid = read_grid(suitability_path);
  draw_scale(canvas, grid, W, layout.map_width, kMargin, kTitle + std::max(layout.map_height, kMinMapHeight) + 16);
  write_png(canvas, png_path, {{"Title", title}, {"Software", "habcast predict --quicklook"}});
  return layout;
}

}  // namespace habcast
