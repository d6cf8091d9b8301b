#pragma once
// A small invented region for the batch tests: a Poisson model of two covariates (one continuous,
// one categorical) and a grid cut into rows x cols tiles, each a folder of GeoTIFFs written with
// GDAL itself. The same values are also written as one whole-grid raster per covariate, so a
// mosaic of tiles can be compared with a single prediction over the whole grid.
#include <chrono>
#include <filesystem>
#include <string>
#include <vector>

#include "pipeline/progress.hpp"
#include "test_support.hpp"

namespace habcast::test {

/// A Progress that shows nothing, for library calls in tests.
class SilentProgress final : public Progress {
 public:
  void start(const std::string&, std::int64_t) override {}
  void advance(std::int64_t) override {}
  void finish() override {}
  void message(const std::string&, const std::string&) override {}
};

class BatchScene {
 public:
  static constexpr const char* kModel =
      "habcast_model = 1\n[model]\nfamily = \"poisson\"\n"
      "[training]\nsamples = \"train.csv\"\n"
      "[covariates.elev]\nunits = \"m\"\ncenter = 500\nscale = 100\n"
      "[covariates.cover]\ntype = \"categorical\"\nlevels = [{code = 1, name = \"open\"}, {code = 2, name = \"forest\"}]\n"
      "[coefficients]\nterms = [\"(Intercept)\", \"elev\", \"elev^2\", \"cover[forest]\"]\n"
      "estimates = [1.0, 0.2, -0.3, 0.5]\n"
      "covariance = [[0.01, 0, 0, 0], [0, 0.004, 0, 0], [0, 0, 0.002, 0], [0, 0, 0, 0.02]]\n";

  /// `rows` x `cols` tiles of about tile_w x tile_h pixels (the last row/column may differ by
  /// `ragged` pixels, so seams do not fall on block edges).
  BatchScene(int rows, int cols, int tile_w, int tile_h, int ragged = 3)
      : dir_("batch"), rows_(rows), cols_(cols) {
    width_ = cols * tile_w + ragged;
    height_ = rows * tile_h + ragged;
    for (int r = 0; r <= rows; ++r) row_edges_.push_back(r == rows ? height_ : r * tile_h);
    for (int c = 0; c <= cols; ++c) col_edges_.push_back(c == cols ? width_ : c * tile_w);
    write_text(model(), kModel);
    write_text(dir_.file("train.csv"), "elev,cover\n320,open\n600,forest\n450,forest\n500,open\n");
    for (int r = 0; r < rows; ++r)
      for (int c = 0; c < cols; ++c) write_tile(r, c, 0.0);
    write_whole("elev.tif", "cover.tif");
    write_manifest("");
  }

  static double elev(int row, int col) { return 250.0 + row * 4.0 + col * 3.0 + (row * col) % 7; }
  static double cover(int row, int col) { return ((row / 5 + col / 7) % 3 == 0) ? 2.0 : (col % 29 == 28 ? 3.0 : 1.0); }

  [[nodiscard]] std::string model() const { return dir_.file("model.toml"); }
  [[nodiscard]] std::string manifest() const { return dir_.file("region.toml"); }
  [[nodiscard]] std::string out() const { return dir_.file("out"); }
  [[nodiscard]] std::string file(const std::string& name) const { return dir_.file(name); }
  [[nodiscard]] static std::string id(int r, int c) { return "t" + std::to_string(r) + "_" + std::to_string(c); }
  [[nodiscard]] std::string tile_out(const std::string& out_dir, int r, int c) const {
    return out_dir + "/tiles/" + id(r, c);
  }
  [[nodiscard]] int width() const { return width_; }
  [[nodiscard]] int height() const { return height_; }
  [[nodiscard]] int row_edge(int r) const { return row_edges_[static_cast<std::size_t>(r)]; }
  [[nodiscard]] int col_edge(int c) const { return col_edges_[static_cast<std::size_t>(c)]; }
  [[nodiscard]] int tiles() const { return rows_ * cols_; }

  /// Rewrites tile (r, c)'s elevation, shifted by `elev_shift` metres.
  void write_tile(int r, int c, double elev_shift) {
    const std::string folder = dir_.file("tiles/" + id(r, c));
    std::filesystem::create_directories(folder);
    const int x0 = col_edge(c), y0 = row_edge(r);
    GridSpec g = grid_at(x0, y0, col_edge(c + 1) - x0, row_edge(r + 1) - y0);
    write_raster(folder + "/elev.tif", g, "Float32", [&](int row, int col) { return elev(row + y0, col + x0) + elev_shift; });
    write_raster(folder + "/cover.tif", g, "Byte", [&](int row, int col) { return cover(row + y0, col + x0); }, true, 0.0);
  }

  /// Writes tile (r, c)'s elevation under scenario `name` into tiles/<id>/<name>/elev.tif: the
  /// baseline's shifted by `elev_shift` metres. Its modification time is set a second past the
  /// previous file's, so that a rewrite is seen whatever the file system's clock granularity.
  void write_scenario_tile(int r, int c, const std::string& name, double elev_shift) const {
    const std::string folder = dir_.file("tiles/" + id(r, c) + "/" + name);
    std::filesystem::create_directories(folder);
    const std::string path = folder + "/elev.tif";
    std::error_code ec;
    const auto before = std::filesystem::last_write_time(path, ec);
    const bool existed = !ec;
    const int x0 = col_edge(c), y0 = row_edge(r);
    GridSpec g = grid_at(x0, y0, col_edge(c + 1) - x0, row_edge(r + 1) - y0);
    write_raster(path, g, "Float32", [&](int row, int col) { return elev(row + y0, col + x0) + elev_shift; });
    if (existed) std::filesystem::last_write_time(path, before + std::chrono::seconds(1));
  }

  /// The same scenario over the whole grid, as <name>_elev.tif, for a single predict to compare with.
  void write_whole_scenario(const std::string& name, double elev_shift) const {
    const GridSpec g = grid_at(0, 0, width_, height_);
    write_raster(dir_.file(name + "_elev.tif"), g, "Float32", [&](int row, int col) { return elev(row, col) + elev_shift; });
  }

  /// Manifest with the pattern; `extra` is appended (e.g. a [predict] table).
  void write_manifest(const std::string& extra) const {
    write_text(manifest(), "habcast_batch = 1\nmodel = \"model.toml\"\noutput = \"out\"\n" + extra +
                               "[tiles]\npattern = \"tiles/{tile}/{covariate}.tif\"\n");
  }

  int run(const std::vector<std::string>& extra, std::string* out = nullptr, std::string* err = nullptr) const {
    std::vector<std::string> args{"batch", manifest()};
    args.insert(args.end(), extra.begin(), extra.end());
    return run_cli(args, out, err);
  }

 private:
  [[nodiscard]] GridSpec grid_at(int x0, int y0, int w, int h) const {
    GridSpec g;
    g.width = w;
    g.height = h;
    g.origin_x = 500000.0 + x0 * g.pixel;
    g.origin_y = 4000000.0 - y0 * g.pixel;
    g.block = 16;
    return g;
  }
  void write_whole(const std::string& elev_name, const std::string& cover_name) const {
    const GridSpec g = grid_at(0, 0, width_, height_);
    write_raster(dir_.file(elev_name), g, "Float32", [](int row, int col) { return elev(row, col); });
    write_raster(dir_.file(cover_name), g, "Byte", [](int row, int col) { return cover(row, col); }, true, 0.0);
  }

  TempDir dir_;
  int rows_, cols_;
  int width_ = 0, height_ = 0;
  std::vector<int> row_edges_, col_edges_;
};

}  // namespace habcast::test
