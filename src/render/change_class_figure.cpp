#include "render/change_class_figure.hpp"

#include <algorithm>
#include <cmath>

#include "core/prediction/change_classes.hpp"
#include "raster/gdal_session.hpp"
#include "raster/raster_grid.hpp"
#include "render/drawing.hpp"
#include "render/quicklook.hpp"

namespace habcast {

namespace {

namespace fs = figure_style;

constexpr double kMargin = 8.0, kLegendGap = 18.0;
constexpr double kTop = kMargin + fs::kTitleSize + 14.0;
const Rgb kNoData{228, 228, 228};
constexpr std::uint8_t kNoDataIndex = change_class::class_count + 1;

Hatch class_hatch(Rgb colour) { return {colour, 3.2, 0.7}; }

/// The colours of the unmarked classes, from the same table as change_class.tif's colour table.
std::vector<Rgb> class_palette() {
  std::vector<Rgb> palette(kNoDataIndex + 1, kNoData);
  for (const auto& e : change_class::class_colour_table())
    if (e.value >= 1 && e.value <= change_class::class_count) palette[e.value] = Rgb{e.r, e.g, e.b};
  return palette;
}

}  // namespace

Figure change_class_figure(const std::string& class_path, const std::string& title, const std::string& threshold_text) {
  const RasterGrid grid = read_grid(class_path);
  const QuicklookLayout layout = quicklook_layout(grid.width, grid.height);
  const int w = layout.pixels_x, h = layout.pixels_y;
  const std::vector<std::uint8_t> codes = read_byte_band_decimated(class_path, w, h);

  IndexedImage image;
  image.width = w;
  image.height = h;
  image.palette = class_palette();
  const std::size_t n = codes.size();
  image.index.resize(n);
  PixelMask dark{w, h, std::vector<std::uint8_t>(n, 0)}, light{w, h, std::vector<std::uint8_t>(n, 0)};
  bool any_marked = false;
  for (std::size_t i = 0; i < n; ++i) {
    const std::uint8_t v = codes[i];
    const std::uint8_t cls = static_cast<std::uint8_t>(v & 15);
    if (v == change_class::nodata || cls < 1 || cls > change_class::class_count) {
      image.index[i] = kNoDataIndex;
      continue;
    }
    image.index[i] = cls;
    if (v & (change_class::baseline_extrapolated | change_class::scenario_extrapolated)) {
      any_marked = true;
      // Ink over light colours, white over dark ones, so the hatching shows on every class.
      (lightness(image.palette[cls]) > 55.0 ? dark : light).on[i] = 1;
    }
  }

  const double legend_x = layout.map.right() + kLegendGap;
  Legend legend(layout.width - legend_x - kMargin);
  legend.heading("Change " + threshold_text);
  for (std::uint8_t c : {change_class::gain, change_class::loss, change_class::not_distinguishable,
                         change_class::stable_suitable, change_class::stable_unsuitable})
    legend.swatch(change_class::class_name(c), Fill{image.palette[c]}, Stroke{kInk, 0.4});
  legend.gap(6.0);
  if (any_marked)
    legend.swatch("baseline or scenario extrapolated", Fill{image.palette[change_class::loss]}, Stroke{kInk, 0.4},
                  class_hatch(kInk));
  legend.swatch("no data", Fill{kNoData}, Stroke{kInk, 0.4});

  std::string sampling = std::to_string(grid.width) + " × " + std::to_string(grid.height) + " cells";
  if (w < grid.width || h < grid.height)
    sampling += ", drawn from " + std::to_string(w) + " × " + std::to_string(h) + " of them (nearest cell)";
  sampling += ". Not distinguishable: the pixel crosses the threshold but the change's interval includes zero.";
  const std::vector<std::string> notes = wrap_text(sampling, fs::note(), layout.width - 2 * kMargin);
  const double body = kTop + std::max(layout.map.height, legend.height());
  const double bottom = body + 4.0 + 1.3 * fs::kNoteSize * static_cast<double>(notes.size()) + fs::kNoteSize;

  Figure fig(layout.width, bottom + kMargin);
  fig.title = title;
  fig.subject = "change classes of a scenario";
  fig.text({kMargin, kMargin + fs::kTitleSize}, title, fs::title(), "title");
  const int k = layout.repeat;
  if (k > 1) {
    // Cells repeated k x k so that a viewer's smoothing keeps them crisp, as in the quicklook.
    auto repeat = [&](const std::vector<std::uint8_t>& v) {
      std::vector<std::uint8_t> out(v.size() * static_cast<std::size_t>(k * k));
      const auto W = static_cast<std::size_t>(w * k);
      for (std::size_t y = 0; y < static_cast<std::size_t>(h * k); ++y)
        for (std::size_t x = 0; x < W; ++x)
          out[y * W + x] = v[(y / static_cast<std::size_t>(k)) * static_cast<std::size_t>(w) + x / static_cast<std::size_t>(k)];
      return out;
    };
    image.index = repeat(image.index);
    dark.on = repeat(dark.on);
    light.on = repeat(light.on);
    image.width = dark.width = light.width = w * k;
    image.height = dark.height = light.height = h * k;
  }
  fig.image(layout.map, std::move(image), "map");
  if (any_marked) {
    fig.hatch_mask(layout.map, std::move(dark), class_hatch(kInk), "extrapolated");
    fig.hatch_mask(layout.map, std::move(light), class_hatch(fs::kWhite), "extrapolated");
  }
  fig.rect(layout.map, std::nullopt, Stroke{kInk, 0.5}, "frame");
  legend.draw(fig, {legend_x, kTop});
  fig.text_lines({kMargin, body + 4.0 + fs::kNoteSize}, notes, fs::note(), 1.3, "sampling-note");
  return fig;
}

}  // namespace habcast
