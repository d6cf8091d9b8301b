#include "evaluate/evaluate_run.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <limits>
#include <set>
#include <sstream>

#include "core/base/csv_table.hpp"
#include "core/base/error.hpp"
#include "core/base/number_text.hpp"
#include "core/stats/boyce_index.hpp"
#include "core/stats/calibration.hpp"
#include "core/stats/discrimination.hpp"
#include "evaluate/binary_map.hpp"
#include "evaluate/score_source.hpp"
#include "pipeline/atomic_file.hpp"
#include "core/model/model_file.hpp"
#include "pipeline/folder_lock.hpp"
#include "pipeline/output_guard.hpp"
#include "pipeline/run_files.hpp"
#include "raster/gdal_session.hpp"
#include "raster/point_sampler.hpp"
#include "raster/point_source.hpp"
#include "raster/point_transform.hpp"
#include "render/evaluation_figure.hpp"
#include "render/figure_file.hpp"

namespace habcast {

namespace {

namespace fs = std::filesystem;

/// SplitMix64 (Steele, Lea & Flood 2014, "Fast splittable pseudorandom number generators",
/// OOPSLA): fully specified, so background points are the same on every platform and compiler.
class SplitMix64 {
 public:
  explicit SplitMix64(std::uint64_t seed) : state_(seed) {}
  std::uint64_t next() {
    std::uint64_t z = (state_ += 0x9E3779B97F4A7C15ULL);
    z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ULL;
    z = (z ^ (z >> 27)) * 0x94D049BB133111EBULL;
    return z ^ (z >> 31);
  }

 private:
  std::uint64_t state_;
};

double json_number(double v) { return std::isfinite(v) ? v : std::numeric_limits<double>::quiet_NaN(); }

nlohmann::ordered_json confusion_json(const Confusion& c) {
  return {{"threshold", c.threshold},       {"sensitivity", c.sensitivity()}, {"specificity", c.specificity()},
          {"tss", c.tss()},                 {"true_positive", c.true_positive}, {"false_negative", c.false_negative},
          {"true_negative", c.true_negative}, {"false_positive", c.false_positive}};
}

struct Dropped {
  std::string where;
  std::string reason;
};

struct Observations {
  std::vector<double> scores;
  std::vector<std::uint8_t> observed;
  std::vector<std::int64_t> pixel;   ///< pixel of each used point on the prediction grid
  std::vector<std::string> where;    ///< file:line of each used point
  std::vector<Dropped> dropped;      ///< every point not used, in file order, with the reason
  std::int64_t read = 0, outside = 0, nodata = 0, not_transformed = 0, no_response = 0, absences_ignored = 0;
};

Observations observe_points(const EvaluateOptions& o, ScoreSource& source, std::string& crs_name) {
  PointSourceOptions po = o.points;
  if (!o.response.empty()) po.columns = {o.response};
  Points pts = read_points(po);
  const std::string crs = !o.points_crs.empty() ? o.points_crs : !pts.crs_wkt.empty() ? pts.crs_wkt : "EPSG:4326";
  const PointTransformer transformer(crs, source.grid().crs_wkt, o.points.path);
  crs_name = transformer.source_name();
  transformer.refuse_impossible_lonlat(pts.x, pts.y, pts.where, o.points.path,
                                       !o.points_crs.empty() ? "given with --crs"
                                       : !pts.crs_wkt.empty() ? "declared by the points file"
                                                              : std::string("the default for a CSV without --crs"));
  std::vector<std::uint8_t> ok;
  transformer.transform(pts.x, pts.y, ok);
  SampledPoints status;
  const std::vector<double> scores = source.at_points(pts.x, pts.y, ok, &status);
  Observations obs;
  obs.read = static_cast<std::int64_t>(pts.size());
  for (std::size_t i = 0; i < pts.size(); ++i) {
    if (status.status[i] == PointStatus::not_transformed) {
      ++obs.not_transformed;
      obs.dropped.push_back({pts.where[i], "PROJ cannot transform it into the grid's CRS"});
      continue;
    }
    if (status.status[i] == PointStatus::outside) {
      ++obs.outside;
      obs.dropped.push_back({pts.where[i], "outside the grid"});
      continue;
    }
    if (std::isnan(scores[i])) {
      ++obs.nodata;
      const bool covariate = status.status[i] == PointStatus::nodata && status.nodata_input[i] >= 0 && source.model() &&
                             o.prediction_path.empty();
      obs.dropped.push_back({pts.where[i], covariate ? "nodata in covariate \"" +
                                                           source.model()->covariates[static_cast<std::size_t>(status.nodata_input[i])].name + "\""
                                                     : "no prediction (nodata) there"});
      continue;
    }
    std::uint8_t observed = 1;
    if (!o.response.empty()) {
      const double v = pts.values[0][i];
      if (std::isnan(v)) {
        ++obs.no_response;
        obs.dropped.push_back({pts.where[i], "no value in column \"" + o.response + "\""});
        continue;
      }
      if (v != 0.0 && v != 1.0)
        throw InputError(pts.where[i] + ": observed value " + significant(v, 4) + " in column \"" + o.response +
                         "\" is not 0 (absent) or 1 (present)");
      observed = static_cast<std::uint8_t>(v);
      if (o.presence_only && !observed) {  // presence-only: absences in the file are not used
        ++obs.absences_ignored;
        obs.dropped.push_back({pts.where[i], "an absence (0), not used in presence-only evaluation"});
        continue;
      }
    }
    obs.scores.push_back(scores[i]);
    obs.observed.push_back(observed);
    obs.pixel.push_back(status.pixel[i]);
    obs.where.push_back(pts.where[i]);
  }
  if (obs.scores.empty())
    throw InputError(o.points.path + ": none of the " + std::to_string(obs.read) + " points has a prediction: " +
                     std::to_string(obs.outside) + " outside the grid, " + std::to_string(obs.nodata) + " on nodata, " +
                     std::to_string(obs.not_transformed) + " not transformable, " + std::to_string(obs.no_response) +
                     " without an observed value. Check the points' CRS (--crs; default EPSG:4326, longitude in x) and "
                     "the --x/--y columns");
  return obs;
}

/// Evaluation points in the same pixel of the prediction grid as a site of the model's training
/// table (its x, y columns, in the rasters' CRS, as fit writes them).
struct TrainingOverlap {
  bool checked = false;
  std::string why_not;               ///< when not checked
  std::string table;
  std::int64_t points = 0;           ///< evaluation points on a training pixel
  std::vector<std::string> examples; ///< the first few, "a.csv:3"
};

TrainingOverlap training_overlap(const ScoreSource& source, const Observations& obs) {
  TrainingOverlap t;
  const ModelSpec* model = source.model();
  if (!model) {
    t.why_not = "the prediction raster names no model file that can be read (HABCAST_MODEL metadata)";
    return t;
  }
  if (!model->training_samples) {
    t.why_not = "the model file " + model->path + " names no training table";
    return t;
  }
  t.table = *model->training_samples;
  CsvTable table;
  try {
    table = read_csv_table(t.table);
  } catch (const Error& e) {
    t.why_not = std::string("its training table cannot be read (") + e.what() + ")";
    return t;
  }
  const auto xc = table.column("x");
  const auto yc = table.column("y");
  if (!xc || !yc) {
    t.why_not = "the training table " + t.table + " has no x and y columns (habcast fit writes them; exporters do not)";
    return t;
  }
  const RasterGrid& g = source.grid();
  std::set<std::int64_t> training_pixels;
  for (std::size_t r = 0; r < table.rows.size(); ++r) {
    const double x = table.number_or_nan(r, *xc);
    const double y = table.number_or_nan(r, *yc);
    double column = 0.0, row = 0.0;
    map_to_pixel(g, x, y, column, row);
    if (column >= 0.0 && row >= 0.0 && column < g.width && row < g.height)
      training_pixels.insert(static_cast<std::int64_t>(row) * g.width + static_cast<std::int64_t>(column));
  }
  t.checked = true;
  for (std::size_t i = 0; i < obs.pixel.size(); ++i)
    if (training_pixels.count(obs.pixel[i])) {
      ++t.points;
      if (t.examples.size() < 3) t.examples.push_back(obs.where[i]);
    }
  return t;
}

/// Writes the background points: enough to redo the presence-only metrics anywhere.
std::string background_csv(const BackgroundSample& b, std::uint64_t seed, const std::string& grid_crs) {
  std::ostringstream os;
  os << "# Background points of habcast evaluate --presence-only, seed " << seed
     << ": draw = number of the SplitMix64 draw (draws that hit nodata are missing), row and column of the "
        "pixel, x and y of its centre in the grid's CRS (" << grid_crs << "), prediction there.\n";
  os << "draw,row,column,x,y,prediction\n";
  for (std::size_t k = 0; k < b.scores.size(); ++k)
    os << b.draw[k] << "," << b.row[k] << "," << b.column[k] << "," << significant(b.x[k], 17) << "," << significant(b.y[k], 17)
       << "," << significant(b.scores[k], 17) << "\n";
  return os.str();
}

/// What evaluate reads (the prediction, or the model with its samples and rasters, and the
/// points) against what it writes.
void check_evaluate_files(const EvaluateOptions& o) {
  RunFiles files;
  files.input("--prediction", o.prediction_path);
  files.input("points", o.points.path);
  if (!o.model_path.empty()) {
    const ModelSpec spec = read_model_file(o.model_path);
    files.input("--model", o.model_path);
    if (spec.training_samples) files.input("training samples", *spec.training_samples);
    for (const Covariate& c : spec.covariates)
      if (c.raster) files.input("raster of covariate " + c.name, *c.raster);
  }
  for (const auto& [name, path] : o.covariate_rasters) files.input("raster of covariate " + name, path);
  files.output("--plot", o.svg_path);
  files.output("--write-binary", o.binary_path);
  files.output("--write-background", o.background_path);
  files.check();
}

}  // namespace

BackgroundSample sample_background(ScoreSource& source, int count, std::uint64_t seed) {
  const RasterGrid& g = source.grid();
  const auto pixels = static_cast<std::uint64_t>(g.width) * static_cast<std::uint64_t>(g.height);
  SplitMix64 rng(seed);
  BackgroundSample b;
  const std::int64_t max_draws = 50LL * count;  // gives up on grids that are almost all nodata
  while (static_cast<int>(b.scores.size()) < count && b.draws < max_draws) {
    std::vector<double> x, y;
    std::vector<std::int64_t> rows, cols;
    const int batch = static_cast<int>(std::min<std::int64_t>(count - static_cast<int>(b.scores.size()), max_draws - b.draws));
    for (int k = 0; k < batch; ++k) {
      // Modulo of a 64-bit draw: the bias is below pixels / 2^64, far below anything measurable.
      const std::uint64_t p = rng.next() % pixels;
      cols.push_back(static_cast<std::int64_t>(p % static_cast<std::uint64_t>(g.width)));
      rows.push_back(static_cast<std::int64_t>(p / static_cast<std::uint64_t>(g.width)));
      const double col = static_cast<double>(cols.back()) + 0.5;
      const double row = static_cast<double>(rows.back()) + 0.5;
      const auto& gt = g.geotransform;
      x.push_back(gt[0] + col * gt[1] + row * gt[2]);
      y.push_back(gt[3] + col * gt[4] + row * gt[5]);
    }
    const std::vector<double> s = source.at_points(x, y, std::vector<std::uint8_t>(x.size(), 1), nullptr);
    for (std::size_t k = 0; k < s.size(); ++k)
      if (!std::isnan(s[k])) {
        b.draw.push_back(b.draws + static_cast<std::int64_t>(k) + 1);
        b.row.push_back(rows[k]);
        b.column.push_back(cols[k]);
        b.x.push_back(x[k]);
        b.y.push_back(y[k]);
        b.scores.push_back(s[k]);
      }
    b.draws += batch;
  }
  if (b.scores.empty())
    throw InputError(source.describe() + ": no pixel with a prediction was found in " + std::to_string(b.draws) +
                     " random draws; the grid is nodata everywhere");
  return b;
}

EvaluateSummary run_evaluate(const EvaluateOptions& o, const std::string& tool_version) {
  if (o.prediction_path.empty() == o.model_path.empty())
    throw UsageError("give either --prediction FILE.tif (e.g. predict's suitability.tif) or --model MODEL.toml");
  if (!o.presence_only && o.response.empty())
    throw UsageError("--response COLUMN (observed 0/1) is required, or --presence-only to compare presences with "
                     "background points drawn from the grid");
  if (o.threshold && !(std::isfinite(*o.threshold))) throw UsageError("--threshold must be a number");
  if (o.background < 10 && o.presence_only) throw UsageError("--background needs at least 10 points");
  if (!o.background_path.empty() && !o.presence_only)
    throw UsageError("--write-background needs --presence-only (background points are drawn only for presence-only data)");
  if (!o.svg_path.empty()) figure_format(o.svg_path);  // .svg, .png or .pdf; refused before any work
  ensure_gdal();
  check_evaluate_files(o);
  const OutputFolders folders({o.svg_path, o.binary_path, o.background_path});
  refuse_to_clobber({o.svg_path, o.binary_path, o.background_path}, o.overwrite);

  std::unique_ptr<ScoreSource> source =
      o.model_path.empty() ? ScoreSource::from_raster(o.prediction_path) : ScoreSource::from_model(o.model_path, o.covariate_rasters, o.alignment);
  std::string crs_name;
  Observations obs = observe_points(o, *source, crs_name);
  EvaluateSummary summary;
  nlohmann::ordered_json& r = summary.report;
  r["habcast_version"] = tool_version;
  r["predictions"] = source->describe();
  nlohmann::ordered_json dropped = nlohmann::ordered_json::array();
  for (const Dropped& d : obs.dropped) dropped.push_back({{"where", d.where}, {"reason", d.reason}});
  r["points"] = {{"file", o.points.path}, {"crs", crs_name},        {"read", obs.read},
                 {"used", static_cast<std::int64_t>(obs.scores.size())}, {"outside_grid", obs.outside},
                 {"on_nodata", obs.nodata}, {"not_transformed", obs.not_transformed}, {"no_observation", obs.no_response},
                 {"absences_ignored", obs.absences_ignored},
                 {"sampling", source->sampling() == PointSampling::bilinear
                                  ? "bilinear: continuous covariates interpolated between the 4 nearest pixel centres, as the model was fitted"
                                  : "pixel: the value of the pixel containing each point"},
                 {"dropped", dropped}};
  const TrainingOverlap overlap = training_overlap(*source, obs);
  const auto used_points = static_cast<std::int64_t>(obs.scores.size());
  if (overlap.checked) {
    r["training_overlap"] = {{"training_table", overlap.table},
                             {"rule", "an evaluation point coincides with a training site when both fall in the same pixel of the prediction grid"},
                             {"points", overlap.points},
                             {"share", static_cast<double>(overlap.points) / static_cast<double>(used_points)}};
    if (overlap.points > 0) {
      std::string examples;
      for (const std::string& e : overlap.examples) examples += (examples.empty() ? "" : ", ") + e;
      summary.warnings.push_back(std::to_string(overlap.points) + " of " + std::to_string(used_points) + " evaluation points (" +
                                 significant(100.0 * static_cast<double>(overlap.points) / static_cast<double>(used_points), 3) +
                                 " %; e.g. " + examples + ") fall in the same pixel as a training site of the model (" +
                                 overlap.table + "): there the model is judged on data it was fitted on, and the metrics are "
                                 "optimistic. Evaluate on independent points");
    }
  } else {
    r["training_overlap"] = {{"checked", false}, {"why", overlap.why_not}};
  }

  std::vector<double> presence_scores;
  for (std::size_t i = 0; i < obs.scores.size(); ++i)
    if (obs.observed[i]) presence_scores.push_back(obs.scores[i]);
  std::optional<BackgroundSample> background;
  if (o.presence_only) {
    background = sample_background(*source, o.background, o.seed);
    r["mode"] = "presence-only";
    r["background"] = {{"requested", o.background}, {"drawn", static_cast<std::int64_t>(background->scores.size())},
                       {"draws", background->draws}, {"seed", o.seed},
                       {"method", "draw k: p = (k-th SplitMix64 output from the seed) mod (width x height); pixel row p div "
                                  "width, column p mod width, at its centre; draws without a prediction (nodata) are "
                                  "skipped; until the requested number or 50 x that many draws"}};
    if (!o.background_path.empty()) {
      write_file_atomically(o.background_path, background_csv(*background, o.seed, source->grid().crs_name));
      r["background"]["file"] = o.background_path;
    }
    obs.scores = presence_scores;
    obs.observed.assign(presence_scores.size(), 1);
    obs.scores.insert(obs.scores.end(), background->scores.begin(), background->scores.end());
    obs.observed.insert(obs.observed.end(), background->scores.size(), 0);
    if (static_cast<int>(background->scores.size()) < o.background)
      summary.warnings.push_back("only " + std::to_string(background->scores.size()) + " background points found in " +
                                 std::to_string(background->draws) + " draws; the grid is mostly nodata");
  } else {
    r["mode"] = "presence-absence";
  }

  const Discrimination d = discriminate(obs.scores, obs.observed);
  r["presences"] = d.presences;
  r[o.presence_only ? "background_points" : "absences"] = d.absences;
  r["auc"] = {{"value", d.auc}, {"standard_error", d.auc_se}, {"lower_95", d.auc_lower}, {"upper_95", d.auc_upper},
              {"method", "Mann-Whitney U / (n1 n0); standard error of Hanley & McNeil (1982)"}};
  r["max_tss"] = confusion_json(d.best);
  std::optional<std::vector<CalibrationBin>> calibration;
  const bool probabilities = std::all_of(obs.scores.begin(), obs.scores.end(), [](double s) { return s >= 0.0 && s <= 1.0; });
  if (o.threshold && probabilities && !(*o.threshold > 0.0 && *o.threshold < 1.0))
    throw UsageError("--threshold " + significant(*o.threshold, 10) + ": the predictions are probabilities (all in [0, 1] at "
                     "the points), so a threshold must lie strictly between 0 and 1; at 0 or below every place is "
                     "\"present\", at 1 or above (almost) none is");
  if (o.threshold) r["at_threshold"] = confusion_json(confusion_at(obs.scores, obs.observed, *o.threshold));

  if (!o.presence_only && probabilities) {
    calibration = calibration_table(obs.scores, obs.observed, o.bins);
    nlohmann::ordered_json bins = nlohmann::ordered_json::array();
    for (const CalibrationBin& b : *calibration)
      bins.push_back({{"lower", b.lower}, {"upper", b.upper}, {"count", b.count}, {"presences", b.presences},
                      {"mean_predicted", json_number(b.mean_predicted)}, {"observed_rate", json_number(b.observed_rate)}});
    r["calibration"] = bins;
  } else if (!o.presence_only) {
    summary.warnings.push_back("predictions are not all probabilities in [0, 1]; no calibration table");
  }
  std::optional<BoyceResult> boyce;
  if (o.presence_only) {
    boyce = boyce_index(presence_scores, background->scores, o.boyce_width);
    nlohmann::ordered_json curve = nlohmann::ordered_json::array();
    for (const BoyceWindow& w : boyce->windows)
      curve.push_back({{"lower", w.lower}, {"upper", w.upper}, {"presence_share", w.predicted_share},
                       {"background_share", w.expected_share}, {"ratio", w.ratio}});
    r["boyce"] = {{"index", json_number(boyce->index)}, {"window_width_share", o.boyce_width},
                  {"range", {{"lowest", boyce->range_low}, {"highest", boyce->range_high},
                             {"over", "presence and background predictions together"}}},
                  {"windows_used", static_cast<std::int64_t>(boyce->windows.size())},
                  {"method", "continuous Boyce index, Hirzel et al. (2006)"},
                  {"curve", curve}};
  }

  std::ostringstream t;
  t << "Predictions: " << source->describe() << "\n";
  t << "Points: " << obs.read << " read (CRS " << crs_name << "); " << d.presences << " presences";
  if (o.presence_only) t << " against " << d.absences << " background points (seed " << o.seed << ")";
  else t << ", " << d.absences << " absences";
  if (obs.outside + obs.nodata + obs.not_transformed + obs.no_response > 0)
    t << "; not used: " << obs.outside << " outside the grid, " << obs.nodata << " on nodata, " << obs.not_transformed
      << " not transformable, " << obs.no_response << " without an observation";
  t << ".\n";
  constexpr std::size_t kShown = 5;
  std::size_t shown = 0;
  for (const Dropped& drop : obs.dropped) {
    if (drop.reason.rfind("an absence", 0) == 0) continue;  // expected in presence-only mode, counted above
    if (shown == kShown) {
      t << "; and more (--json lists them all)";
      break;
    }
    t << (shown++ ? "; " : "Not used: ") << drop.where << " (" << drop.reason << ")";
  }
  if (shown) t << ".\n";
  if (source->sampling() == PointSampling::bilinear)
    t << "Covariates read by bilinear interpolation at the points, as the model was fitted.\n";
  t << "\n";
  t << "AUC " << significant(d.auc, 4) << " (SE " << significant(d.auc_se, 2) << ", 95% interval " << significant(d.auc_lower, 4) << " to "
    << significant(d.auc_upper, 4) << ")" << (o.presence_only ? ": presences against background, not absences" : "") << "\n";
  t << "Best threshold by TSS: " << significant(d.best.threshold, 4) << " (TSS " << significant(d.best.tss(), 3) << ", sensitivity "
    << significant(d.best.sensitivity(), 3) << ", specificity " << significant(d.best.specificity(), 3) << ")\n";
  if (o.threshold) {
    const Confusion c = confusion_at(obs.scores, obs.observed, *o.threshold);
    t << "At threshold " << significant(*o.threshold, 4) << ": sensitivity " << significant(c.sensitivity(), 3) << ", specificity "
      << significant(c.specificity(), 3) << ", TSS " << significant(c.tss(), 3) << "\n";
  }
  if (boyce) t << "Continuous Boyce index " << significant(boyce->index, 3) << " (from -1 to 1; above 0 means presences favour high predictions)\n";
  if (calibration) {
    t << "\nCalibration (" << o.bins << " bins):\n  bin            points  mean predicted  observed\n";
    for (const CalibrationBin& b : *calibration) {
      char line[128];
      if (b.count == 0) std::snprintf(line, sizeof line, "  %.2f-%.2f  %8lld               -         -\n", b.lower, b.upper, 0LL);
      else
        std::snprintf(line, sizeof line, "  %.2f-%.2f  %8lld  %14.3f  %8.3f\n", b.lower, b.upper,
                      static_cast<long long>(b.count), b.mean_predicted, b.observed_rate);
      t << line;
    }
  }

  if (!o.svg_path.empty()) {
    const Figure figure = evaluation_figure(d, calibration ? &*calibration : nullptr, boyce ? &*boyce : nullptr,
                                            "habcast evaluate: " + source->describe() + " with " + o.points.path);
    write_file_atomically(o.svg_path, encode_figure(figure, o.svg_path));
    r["svg"] = o.svg_path;
    t << "\nWrote " << o.svg_path << "\n";
  }
  if (!o.binary_path.empty()) {
    const double threshold = o.threshold.value_or(d.best.threshold);
    const std::string rule = o.threshold ? "fixed threshold " + significant(threshold, 17) + " given with --threshold"
                                         : "threshold maximising TSS (sensitivity + specificity - 1) over " +
                                               std::to_string(d.presences) + (d.presences == 1 ? " presence and " : " presences and ") +
                                               std::to_string(d.absences) +
                                               (o.presence_only ? (d.absences == 1 ? " background point" : " background points")
                                                                : (d.absences == 1 ? " absence" : " absences")) +
                                               ": " + significant(threshold, 17);
    const BinaryMapCounts counts = write_binary_map(*source, o.binary_path, threshold, rule, tool_version);
    r["binary_map"] = {{"file", o.binary_path}, {"threshold", threshold}, {"rule", rule},
                       {"present_pixels", counts.present}, {"absent_pixels", counts.absent}, {"nodata_pixels", counts.nodata}};
    t << "Wrote " << o.binary_path << " (1 where prediction >= " << significant(threshold, 4) << ")\n";
  }
  r["warnings"] = summary.warnings;
  summary.text = t.str();
  return summary;
}

}  // namespace habcast
