#include "render/quicklook.hpp"

#include <gdal_priv.h>

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <limits>
#include <vector>

#include "core/base/error.hpp"
#include "raster/gdal_handles.hpp"
#include "raster/gdal_session.hpp"
#include "raster/raster_grid.hpp"
#include "render/drawing.hpp"

namespace habcast {

namespace {

namespace fs = figure_style;

constexpr double kPageMargin = 8.0, kMapBoxWidth = 330.0, kMapBoxHeight = 360.0, kMapLegendGap = 18.0;
constexpr double kMapTop = kPageMargin + fs::kTitleSize + 14.0;
const Rgb kNoData{228, 228, 228};
constexpr int kRampSteps = 255;  // palette 0..254: the ramp; 255: no data

/// The band to read for a picture of w x h: the smallest overview still at least that size, or
/// the band itself. Choosing it here (rather than leaving it to GDAL) lets the reads below go row
/// by row and still use overviews.
GDALRasterBand& source_band(GDALRasterBand& band, int w, int h) {
  GDALRasterBand* best = &band;
  for (int i = 0; i < band.GetOverviewCount(); ++i) {
    GDALRasterBand* o = band.GetOverview(i);
    if (o && o->GetXSize() >= w && o->GetYSize() >= h && o->GetXSize() < best->GetXSize()) best = o;
  }
  return *best;
}

/// One band read at the picture's size, nearest cell: for each picture row, the source row under
/// its centre, decimated across by RasterIO. Rows are taken in order, and the band's cached
/// blocks are dropped whenever the reads leave a row of blocks, so GDAL holds one row of blocks
/// at a time: memory follows the picture's width, not the raster's size, and each block is
/// decoded once.
template <typename T>
std::vector<T> read_decimated(GDALDataset& ds, const std::string& path, int w, int h, GDALDataType type) {
  GDALRasterBand& band = source_band(input_band(ds, path, 1), w, h);
  const int W = band.GetXSize(), H = band.GetYSize();
  int block_w = 0, block_h = 0;
  band.GetBlockSize(&block_w, &block_h);
  std::vector<T> values(static_cast<std::size_t>(w) * static_cast<std::size_t>(h));
  int cached_block_row = -1;
  for (int j = 0; j < h; ++j) {
    const int row = std::min(H - 1, static_cast<int>((j + 0.5) * H / h));
    if (row / std::max(block_h, 1) != cached_block_row) {
      band.FlushCache();
      cached_block_row = row / std::max(block_h, 1);
    }
    if (band.RasterIO(GF_Read, 0, row, W, 1, values.data() + static_cast<std::size_t>(j) * static_cast<std::size_t>(w), w, 1, type, 0, 0,
                      nullptr) != CE_None)
      throw InputError(path + ": cannot read the raster for the quicklook (" + gdal_reason() + ")");
  }
  band.FlushCache();
  return values;
}

struct Field {
  std::vector<float> values;
  std::vector<std::uint8_t> flags;  // empty without an extrapolation raster
  float nodata = std::numeric_limits<float>::quiet_NaN();
  bool has_nodata = false;
  double lo = 0.0, hi = 1.0;
  std::string units;
  [[nodiscard]] bool valid(std::size_t i) const { return std::isfinite(values[i]) && !(has_nodata && values[i] == nodata); }
  [[nodiscard]] bool flagged(std::size_t i) const { return !flags.empty() && flags[i] != 0 && flags[i] != 255; }
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

/// The palette index of a value: its position on the ramp in 255 steps.
std::uint8_t ramp_index(const Field& f, double v) {
  const double t = std::clamp((v - f.lo) / (f.hi - f.lo), 0.0, 1.0);
  return static_cast<std::uint8_t>(std::lround(t * (kRampSteps - 1)));
}

/// The map image, and the extrapolated pixels split by the lightness beneath them: hatched in ink
/// over light colours and in white over dark ones, so the hatching shows everywhere, in greyscale too.
struct MapLayers {
  IndexedImage image;
  PixelMask dark_hatch, light_hatch;
  bool any_flagged = false;
};

/// Each value of a w x h raster repeated into a k x k square.
std::vector<std::uint8_t> repeated(const std::vector<std::uint8_t>& v, int w, int h, int k) {
  if (k == 1) return v;
  std::vector<std::uint8_t> out(v.size() * static_cast<std::size_t>(k) * static_cast<std::size_t>(k));
  const std::size_t W = static_cast<std::size_t>(w) * static_cast<std::size_t>(k);
  for (std::size_t y = 0; y < static_cast<std::size_t>(h) * static_cast<std::size_t>(k); ++y)
    for (std::size_t x = 0; x < W; ++x)
      out[y * W + x] = v[(y / static_cast<std::size_t>(k)) * static_cast<std::size_t>(w) + x / static_cast<std::size_t>(k)];
  return out;
}

void repeat_cells(MapLayers& m, int k) {
  const int w = m.image.width, h = m.image.height;
  m.image.index = repeated(m.image.index, w, h, k);
  m.dark_hatch.on = repeated(m.dark_hatch.on, w, h, k);
  m.light_hatch.on = repeated(m.light_hatch.on, w, h, k);
  m.image.width = m.dark_hatch.width = m.light_hatch.width = w * k;
  m.image.height = m.dark_hatch.height = m.light_hatch.height = h * k;
}

MapLayers map_layers(const Field& f, int w, int h) {
  MapLayers m;
  m.image.width = w;
  m.image.height = h;
  for (int k = 0; k < kRampSteps; ++k) m.image.palette.push_back(ramp_colour(static_cast<double>(k) / (kRampSteps - 1)));
  m.image.palette.push_back(kNoData);
  const std::size_t n = static_cast<std::size_t>(w) * static_cast<std::size_t>(h);
  m.image.index.resize(n);
  m.dark_hatch = {w, h, std::vector<std::uint8_t>(n, 0)};
  m.light_hatch = {w, h, std::vector<std::uint8_t>(n, 0)};
  for (std::size_t i = 0; i < n; ++i) {
    if (!f.valid(i)) {
      m.image.index[i] = kRampSteps;
      continue;
    }
    m.image.index[i] = ramp_index(f, f.values[i]);
    if (f.flagged(i)) {
      m.any_flagged = true;
      (lightness(m.image.palette[m.image.index[i]]) > 55.0 ? m.dark_hatch : m.light_hatch).on[i] = 1;
    }
  }
  return m;
}

Hatch map_hatch(Rgb colour) { return {colour, 3.2, 0.7}; }

Legend map_legend(const Field& f, bool flagged, double width) {
  Legend legend(width);
  legend.heading(f.units.empty() ? "Suitability" : "Suitability (" + typeset_units(f.units) + ")");
  std::vector<std::pair<double, std::string>> labels;
  for (const Tick& t : round_ticks(f.lo, f.hi, 4)) labels.emplace_back((t.value - f.lo) / (f.hi - f.lo), t.label);
  legend.colour_ramp(labels, 110.0);
  legend.gap(6.0);
  if (flagged) legend.swatch("outside the training data (extrapolated)", Fill{ramp_colour(0.8)}, Stroke{kInk, 0.4}, map_hatch(kInk));
  legend.swatch("no data", Fill{kNoData}, Stroke{kInk, 0.4});
  return legend;
}

std::string cells_text(long long n) {
  std::string s = std::to_string(n), out;
  for (std::size_t i = 0; i < s.size(); ++i) {
    if (i > 0 && (s.size() - i) % 3 == 0) out += "\u2009";  // thin space between thousands
    out += s[i];
  }
  return out;
}

/// The scale bar (projected CRS in known units only) and a line on how the map was sampled.
double draw_scale(Figure& fig, const RasterGrid& grid, const QuicklookLayout& l, double y) {
  const double raster_units_per_point = std::fabs(grid.geotransform[1]) * grid.width / l.map.width;
  std::string sampling = cells_text(grid.width) + " × " + cells_text(grid.height) + " cells";
  if (l.pixels_x < grid.width || l.pixels_y < grid.height)
    sampling += ", drawn from " + cells_text(l.pixels_x) + " × " + cells_text(l.pixels_y) + " of them (nearest cell)";
  if (grid.has_geotransform && grid.linear_units_to_metre > 0.0) {
    scale_bar(fig, {l.map.x, y + 22.0}, raster_units_per_point * grid.linear_units_to_metre, l.map.width / 3.0);
    sampling += "; " + grid.crs_name;
    y += 26.0;
  } else if (grid.has_geotransform) {
    sampling += "; not a projected CRS, so no scale bar" + (grid.crs_name.empty() ? std::string() : " (" + grid.crs_name + ")");
  } else {
    sampling += "; no georeferencing, so no scale";
  }
  y += 4.0 + fs::kNoteSize;
  for (const std::string& line : wrap_text(sampling, fs::note(), fig.width() - 2 * kPageMargin)) {
    fig.text({kPageMargin, y}, line, fs::note(), "sampling-note");
    y += 1.3 * fs::kNoteSize;
  }
  return y;
}

}  // namespace

QuicklookLayout quicklook_layout(int raster_width, int raster_height) {
  QuicklookLayout l;
  const double scale = std::min(kMapBoxWidth / raster_width, kMapBoxHeight / raster_height);
  l.map = {kPageMargin, kMapTop, raster_width * scale, raster_height * scale};
  const double per_point = kPngDpi / 72.0;
  l.pixels_x = std::clamp(static_cast<int>(std::lround(l.map.width * per_point)), 1, raster_width);
  l.pixels_y = std::clamp(static_cast<int>(std::lround(l.map.height * per_point)), 1, raster_height);
  l.repeat = std::max(1, std::min(static_cast<int>(l.map.width * per_point) / l.pixels_x, static_cast<int>(l.map.height * per_point) / l.pixels_y));
  l.width = kA4FigureWidth;
  return l;
}

Figure quicklook_figure(const std::string& suitability_path, const std::string& extrapolation_path, const std::string& title,
                        const std::string& caption) {
  ensure_gdal();
  // predict's outputs are GeoTIFFs, whose driver decodes the blocks of one read on all cores.
  DatasetPtr suitability = open_input_raster(suitability_path, {"NUM_THREADS=ALL_CPUS"});
  const int W = suitability->GetRasterXSize(), H = suitability->GetRasterYSize();
  const QuicklookLayout layout = quicklook_layout(W, H);

  Field field;
  field.values = read_decimated<float>(*suitability, suitability_path, layout.pixels_x, layout.pixels_y, GDT_Float32);
  GDALRasterBand& band = input_band(*suitability, suitability_path, 1);
  int has = 0;
  const double nd = band.GetNoDataValue(&has);
  field.has_nodata = has != 0;
  field.nodata = static_cast<float>(nd);
  field.units = band.GetUnitType();
  if (!extrapolation_path.empty()) {
    DatasetPtr flags = open_input_raster(extrapolation_path, {"NUM_THREADS=ALL_CPUS"});
    if (flags->GetRasterXSize() != W || flags->GetRasterYSize() != H)
      throw InputError(extrapolation_path + ": not the size of " + suitability_path + "; the quicklook needs both from one run");
    field.flags = read_decimated<std::uint8_t>(*flags, extrapolation_path, layout.pixels_x, layout.pixels_y, GDT_Byte);
  }
  value_range(field);
  MapLayers layers = map_layers(field, layout.pixels_x, layout.pixels_y);
  field.values = {};  // the float buffer is no longer needed
  repeat_cells(layers, layout.repeat);
  const RasterGrid grid = read_grid(suitability_path);

  const double legend_x = layout.map.right() + kMapLegendGap;
  const Legend legend = map_legend(field, layers.any_flagged, layout.width - legend_x - kPageMargin);
  // Lay out the foot (scale bar, sampling note, caption) on a scratch page to learn its height.
  Figure scratch(layout.width, 1.0);
  const double body = kMapTop + std::max(layout.map.height, legend.height());
  double bottom = draw_scale(scratch, grid, layout, body);
  const std::vector<std::string> caption_lines = wrap_text(caption, fs::note(), layout.width - 2 * kPageMargin);
  bottom += 1.3 * fs::kNoteSize * static_cast<double>(caption_lines.size());

  Figure fig(layout.width, bottom + kPageMargin);
  fig.title = title;
  fig.subject = "suitability map quicklook";
  fig.text({kPageMargin, kPageMargin + fs::kTitleSize}, title, fs::title(), "title");
  fig.image(layout.map, std::move(layers.image), "map");
  if (layers.any_flagged) {
    fig.hatch_mask(layout.map, std::move(layers.dark_hatch), map_hatch(kInk), "extrapolated");
    fig.hatch_mask(layout.map, std::move(layers.light_hatch), map_hatch(fs::kWhite), "extrapolated");
  }
  fig.rect(layout.map, std::nullopt, Stroke{kInk, 0.5}, "frame");
  legend.draw(fig, {legend_x, kMapTop});
  const double y = draw_scale(fig, grid, layout, body);
  fig.text_lines({kPageMargin, y}, caption_lines, fs::note(), 1.3, "caption");
  return fig;
}

}  // namespace habcast
