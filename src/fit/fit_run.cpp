#include "fit/fit_run.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <ctime>
#include <set>
#include <filesystem>
#include <limits>
#include <sstream>

#include "core/base/error.hpp"
#include "core/base/number_text.hpp"
#include "core/base/utc_time.hpp"
#include "core/domain/samples_writer.hpp"
#include "core/model/design_matrix.hpp"
#include "core/model/formula.hpp"
#include "core/model/model_file.hpp"
#include "core/model/model_values.hpp"
#include "core/model/model_writer.hpp"
#include "pipeline/atomic_file.hpp"
#include "pipeline/folder_lock.hpp"
#include "pipeline/output_guard.hpp"
#include "pipeline/run_files.hpp"
#include "raster/band_profile.hpp"
#include "raster/gdal_session.hpp"
#include "raster/alignment_plan.hpp"
#include "raster/point_sampler.hpp"
#include "raster/point_source.hpp"
#include "raster/point_transform.hpp"
#include "raster/raster_grid.hpp"

namespace habcast {

namespace {

namespace fs = std::filesystem;

constexpr const char* kDefaultCrs = "EPSG:4326";

/// The offset option: "COLUMN" or "log(COLUMN)".
struct OffsetSpec {
  std::string column;
  bool log = false;
};

OffsetSpec parse_offset(const std::string& text) {
  OffsetSpec o;
  if (text.rfind("log(", 0) == 0 && text.back() == ')') {
    o.column = text.substr(4, text.size() - 5);
    o.log = true;
  } else {
    o.column = text;
  }
  if (o.column.empty()) throw UsageError("--offset expects COLUMN or log(COLUMN), got \"" + text + "\"");
  return o;
}

std::string samples_path_for(const FitOptions& o) {
  if (!o.samples_path.empty()) return o.samples_path;
  const fs::path model(o.model_path);
  return (model.parent_path() / (model.stem().string() + "-training.csv")).string();
}

/// Covariates the formula uses, each with its raster. Rasters given but unused are dropped (warned).
std::vector<SamplingInput> select_inputs(const FitOptions& o, std::vector<std::string>& warnings) {
  std::vector<SamplingInput> inputs;
  const std::vector<std::string> used = formula_covariates(o.formula);
  for (const std::string& name : used) {
    const auto it = o.covariate_rasters.find(name);
    if (it == o.covariate_rasters.end()) {
      std::string given;
      for (const auto& [n, p] : o.covariate_rasters) given += (given.empty() ? "" : ", ") + n;
      throw UsageError("the formula uses \"" + name + "\", but no raster is given for it; pass -c " + name +
                       "=FILE.tif (covariates given: " + (given.empty() ? "none" : given) + ")");
    }
    inputs.push_back({name, it->second, 1, o.categorical.count(name) > 0});
  }
  for (const auto& [name, path] : o.covariate_rasters)
    if (std::find(used.begin(), used.end(), name) == used.end())
      warnings.push_back("covariate \"" + name + "\" (" + path + ") is not in the formula and is left out of the model");
  for (const std::string& name : o.categorical)
    if (!o.covariate_rasters.count(name)) throw UsageError("--categorical " + name + ": no -c " + name + "=FILE is given");
  for (const std::string& name : o.continuous) {
    if (!o.covariate_rasters.count(name)) throw UsageError("--continuous " + name + ": no -c " + name + "=FILE is given");
    if (o.categorical.count(name))
      throw UsageError("\"" + name + "\" is declared both --categorical and --continuous; give one of them");
  }
  return inputs;
}

/// Class codes are not measurements: a raster that names its classes (a category table or a
/// raster attribute table) is refused as a continuous covariate unless --continuous says so.
void refuse_undeclared_classes(const FitOptions& o, const std::vector<SamplingInput>& inputs) {
  for (const SamplingInput& in : inputs) {
    if (in.categorical || o.continuous.count(in.name)) continue;
    const BandProfile profile = profile_band(in.path, in.band);
    if (!profile.declares_classes()) continue;
    std::string what;
    if (!profile.category_names.empty()) {
      what = "a category table (";
      int shown = 0;
      for (const auto& [code, name] : profile.category_names) {
        if (shown++ == 4) {
          what += ", ...";
          break;
        }
        what += (shown > 1 ? ", " : "") + std::to_string(code) + " = " + name;
      }
      what += ")";
    } else {
      what = "a raster attribute table";
    }
    throw InputError(in.path + ": covariate \"" + in.name + "\" has " + what + ", so its values look like class codes, but it "
                     "is not declared categorical; fitted as a number it would get one slope across arbitrary codes. Add "
                     "--categorical " + in.name + " (one indicator term per class), or --continuous " + in.name +
                     " if its values really are measurements");
  }
}

/// An integer raster with few distinct values at the points is probably class codes; it is fitted
/// as continuous (nothing declares it otherwise), with a warning. Ten or fewer distinct values:
/// common practice, no source.
void warn_integer_codes(const FitOptions& o, const std::vector<SamplingInput>& inputs, const Eigen::ArrayXXd& raw,
                        const std::vector<std::uint8_t>& use, std::vector<std::string>& warnings) {
  constexpr std::size_t kFewValues = 10;
  for (std::size_t k = 0; k < inputs.size(); ++k) {
    const SamplingInput& in = inputs[k];
    if (in.categorical || o.continuous.count(in.name)) continue;
    const BandProfile profile = profile_band(in.path, in.band);
    if (!profile.integer_type) continue;
    std::set<double> values;
    for (Eigen::Index i = 0; i < raw.rows() && values.size() <= kFewValues; ++i)
      if (use[static_cast<std::size_t>(i)]) values.insert(raw(i, static_cast<Eigen::Index>(k)));
    if (values.size() < 2 || values.size() > kFewValues) continue;
    std::string list;
    for (double v : values) list += (list.empty() ? "" : ", ") + significant(v, 10);
    warnings.push_back("covariate \"" + in.name + "\" (" + in.path + ", " + profile.data_type + ") takes only " +
                       std::to_string(values.size()) + " distinct whole values at the points (" + list +
                       ") and is fitted as a number with one slope; if these are class codes, refit with --categorical " +
                       in.name + " (give --continuous " + in.name + " to confirm it is a measurement and silence this)");
  }
}

/// Classes of categorical rasters that no training point falls in: named in the raster's
/// category table, or present in its pixels (counted block by block).
std::vector<UntrainedClass> untrained_classes(const std::vector<SamplingInput>& inputs, const ModelSpec& spec) {
  std::vector<UntrainedClass> out;
  for (const SamplingInput& in : inputs) {
    if (!in.categorical) continue;
    const Covariate& cov = spec.covariates[static_cast<std::size_t>(spec.covariate_index(in.name))];
    std::set<std::int64_t> trained;
    for (const Level& l : cov.levels) trained.insert(l.code);
    const BandProfile profile = profile_band(in.path, in.band);
    const ClassCensus census = count_classes(in.path, in.band);
    std::set<std::int64_t> codes;
    for (const auto& [code, name] : profile.category_names) codes.insert(code);
    for (const auto& [code, n] : census.pixels) codes.insert(code);
    for (std::int64_t code : codes) {
      if (trained.count(code)) continue;
      UntrainedClass u;
      u.covariate = in.name;
      u.code = code;
      const auto name = profile.category_names.find(code);
      u.name = name != profile.category_names.end() ? name->second : std::to_string(code);
      const auto count = census.pixels.find(code);
      u.pixels = count != census.pixels.end() ? count->second : 0;
      u.share = census.valid_pixels > 0 ? static_cast<double>(u.pixels) / static_cast<double>(census.valid_pixels) : 0.0;
      out.push_back(u);
    }
  }
  return out;
}

std::string untrained_warning(const std::vector<UntrainedClass>& classes, const std::vector<SamplingInput>& inputs) {
  std::string text;
  for (const SamplingInput& in : inputs) {
    std::string list;
    double share = 0.0;
    int count = 0;
    for (const UntrainedClass& u : classes) {
      if (u.covariate != in.name) continue;
      list += (list.empty() ? "" : ", ") + (u.name == std::to_string(u.code) ? "code " + u.name : u.name + " (code " + std::to_string(u.code) + ")") +
              " " + significant(100.0 * u.share, 3) + " %";
      share += u.share;
      ++count;
    }
    if (list.empty()) continue;
    text += (text.empty() ? "" : "; ") + ("covariate \"" + in.name + "\" (" + in.path + ") has classes without a training point: " +
                                          list + " of the raster's valid pixels" +
                                          (count > 1 ? " (" + significant(100.0 * share, 3) + " % in all)" : std::string()));
  }
  return text + ". The model has no coefficient for them: predict gives their pixels no prediction (nodata) and flags "
                "them as an unseen category in extrapolation.tif. Add training points in those classes, or mask them out";
}

/// The grid the points are sampled on and how each covariate reaches it, as in predict.
AlignmentPlan plan_sampling(const std::vector<SamplingInput>& inputs, const AlignmentOptions& alignment) {
  std::vector<AlignmentInput> aligned;
  for (const SamplingInput& in : inputs) aligned.push_back({in.name, in.path, in.band, in.categorical, std::nullopt});
  return plan_alignment(aligned, alignment);
}

/// Explains why no point could be used; the most common cause (a wrong CRS) gets its own hint.
[[noreturn]] void no_valid_points(const FitOptions& o, const PointCounts& c, const RasterGrid& grid, const std::vector<double>& x,
                                  const std::vector<double>& y, const std::vector<std::uint8_t>& transformed,
                                  const std::string& crs_name) {
  std::ostringstream os;
  os << o.points.path << ": none of the " << c.total << " points can be used: " << c.outside << " outside the raster grid, "
     << c.nodata << " on nodata, " << c.not_transformed << " not transformable, " << c.missing_response
     << " without a response (or weight/offset), " << c.unusable << " with a value no term can take.";
  if (c.outside + c.not_transformed == c.total && c.outside > 0) {
    // The extent of the points PROJ could place (the others have no coordinates in the grid's CRS).
    double xmin = std::numeric_limits<double>::infinity(), xmax = -xmin, ymin = xmin, ymax = -xmin;
    for (std::size_t i = 0; i < x.size(); ++i) {
      if (!transformed[i]) continue;
      xmin = std::min(xmin, x[i]);
      xmax = std::max(xmax, x[i]);
      ymin = std::min(ymin, y[i]);
      ymax = std::max(ymax, y[i]);
    }
    const auto& gt = grid.geotransform;
    const double gx0 = gt[0], gx1 = gt[0] + gt[1] * grid.width;
    const double gy0 = gt[3] + gt[5] * grid.height, gy1 = gt[3];
    os << " Read as " << crs_name << ", the points fall in x " << significant(xmin, 10) << " to " << significant(xmax, 10) << ", y "
       << significant(ymin, 10) << " to " << significant(ymax, 10) << " of the rasters' CRS (" << grid.crs_name << "), but the grid covers x "
       << significant(std::min(gx0, gx1), 10) << " to " << significant(std::max(gx0, gx1), 10) << ", y " << significant(std::min(gy0, gy1), 10)
       << " to " << significant(std::max(gy0, gy1), 10) << ". Check the points' CRS (--crs; the default is " << kDefaultCrs
       << ", longitude in x and latitude in y), and that --x and --y name the right columns (not swapped).";
  }
  throw InputError(os.str());
}

/// Levels of a categorical covariate: the codes seen at the usable points, named from the raster's
/// category names where it has them.
Covariate categorical_covariate(const SamplingInput& in, const Eigen::ArrayXXd& raw, Eigen::Index column,
                                const std::vector<std::uint8_t>& use, const FitOptions& o) {
  Covariate c;
  c.name = in.name;
  c.categorical = true;
  c.raster = in.path;
  std::set<std::int64_t> codes;
  for (Eigen::Index i = 0; i < raw.rows(); ++i) {
    if (!use[static_cast<std::size_t>(i)]) continue;
    const double v = raw(i, column);
    if (v != std::floor(v))
      throw InputError(in.path + ": categorical covariate \"" + in.name + "\" has the non-integer value " + significant(v, 6) +
                       " at a point; class codes must be whole numbers (is this raster really categorical?)");
    codes.insert(static_cast<std::int64_t>(v));
  }
  const std::map<std::int64_t, std::string> names = category_names(in.path, in.band);
  for (std::int64_t code : codes) {
    const auto it = names.find(code);
    c.levels.push_back({code, it != names.end() ? it->second : std::to_string(code)});
  }
  if (c.levels.empty()) return c;
  // A category name that is another level's code would make every later mention of it (a term of
  // the written model, a training-table cell) mean two levels; refuse it here, naming both.
  for (const Level& l : c.levels)
    if (const LevelLookup found = c.find_level(l.name); found.ambiguous())
      throw InputError(in.path + ": the raster's category names make level names ambiguous: " + found.ambiguity(c, l.name) +
                       ". Rename the categories (for example in the raster's .aux.xml) or remove the names so that the "
                       "codes serve as names");
  c.reference_level = c.levels.front().name;
  if (const auto it = o.reference_levels.find(in.name); it != o.reference_levels.end()) {
    const LevelLookup found = c.find_level(it->second);
    if (found.ambiguous()) throw UsageError("--reference " + in.name + "=" + it->second + ": " + found.ambiguity(c, it->second));
    if (!found.found())
      throw UsageError("--reference " + in.name + "=" + it->second + ": no such level among the points (by name or by code); "
                       "levels seen: " + c.level_list());
    c.reference_level = c.levels[static_cast<std::size_t>(found.index)].name;
  }
  return c;
}

ModelSpec build_spec(const FitOptions& o, const std::vector<SamplingInput>& inputs, const Eigen::ArrayXXd& raw,
                     const std::vector<std::uint8_t>& use) {
  ModelSpec spec;
  spec.path = o.model_path;
  spec.family = o.family;
  spec.name = o.name;
  for (std::size_t k = 0; k < inputs.size(); ++k) {
    if (inputs[k].categorical) {
      spec.covariates.push_back(categorical_covariate(inputs[k], raw, static_cast<Eigen::Index>(k), use, o));
      continue;
    }
    Covariate c;
    c.name = inputs[k].name;
    c.raster = inputs[k].path;
    if (const auto it = o.transforms.find(c.name); it != o.transforms.end()) c.transform = it->second;
    spec.covariates.push_back(c);
  }
  for (const auto& [name, t] : o.transforms) {
    (void)t;
    if (spec.covariate_index(name) < 0) throw UsageError("--transform " + name + "=...: \"" + name + "\" is not in the formula");
    if (spec.covariates[static_cast<std::size_t>(spec.covariate_index(name))].categorical)
      throw UsageError("--transform " + name + "=...: \"" + name + "\" is categorical");
  }
  return spec;
}

Link default_link(Family f) {
  switch (f) {
    case Family::binomial: return Link::logit;
    case Family::poisson: return Link::log;
    case Family::gaussian: return Link::identity;
  }
  return Link::identity;
}

void count_shared_pixels(const std::vector<std::int64_t>& pixel, const std::vector<std::uint8_t>& use,
                         const std::vector<std::string>& where, const RasterGrid& grid, PointCounts& c) {
  std::map<std::int64_t, std::vector<std::size_t>> by_pixel;
  for (std::size_t i = 0; i < pixel.size(); ++i)
    if (use[i]) by_pixel[pixel[i]].push_back(i);
  for (const auto& [px, members] : by_pixel) {
    if (members.size() < 2) continue;
    ++c.shared_pixels;
    c.points_in_shared += static_cast<std::int64_t>(members.size());
    if (c.shared_examples.size() < 3)
      c.shared_examples.push_back(where[members[0]] + " and " + where[members[1]] +
                                  (members.size() > 2 ? " (+" + std::to_string(members.size() - 2) + " more)" : "") +
                                  " share pixel (row " + std::to_string(px / grid.width) + ", column " +
                                  std::to_string(px % grid.width) + ")");
  }
}


/// Item by item what fit reads and writes: the points, the rasters, the model and its samples.
void check_fit_files(const FitOptions& options, const FitSummary& summary) {
  RunFiles files;
  files.input("points", options.points.path);
  for (const auto& [name, path] : options.covariate_rasters) files.input("raster of covariate " + name, path);
  files.output("model file (-o)", summary.model_path);
  files.output("samples table", summary.samples_path);
  files.check();
}

}  // namespace

FitSummary run_fit(const FitOptions& options, const std::string& tool_version) {
  if (options.formula.empty()) throw UsageError("--formula is required, e.g. --formula \"tmin + tmin^2 + precip + soil\"");
  if (options.model_path.empty()) throw UsageError("-o MODEL.toml is required");
  ensure_gdal();
  FitSummary summary;
  summary.model_path = options.model_path;
  summary.samples_path = samples_path_for(options);
  check_fit_files(options, summary);
  const OutputFolders folders({summary.model_path, summary.samples_path});
  refuse_to_clobber({summary.model_path, summary.samples_path}, options.overwrite, ", or choose another -o");

  const std::vector<SamplingInput> inputs = select_inputs(options, summary.warnings);
  if (inputs.empty()) throw UsageError("--formula names no covariate; a model needs at least one");
  const AlignmentPlan alignment = plan_sampling(inputs, options.alignment);
  const RasterGrid& grid = alignment.target;
  std::vector<std::unique_ptr<CovariateSource>> sources;
  for (std::size_t k = 0; k < inputs.size(); ++k) sources.push_back(open_covariate_source(alignment, k));
  refuse_undeclared_classes(options, inputs);

  // Response: the option, or the formula's left-hand side.
  std::string response = options.response;
  const auto tilde = options.formula.find('~');
  if (tilde != std::string::npos) {
    std::string lhs = options.formula.substr(0, tilde);
    lhs.erase(0, lhs.find_first_not_of(" \t"));
    lhs.erase(lhs.find_last_not_of(" \t") + 1);
    if (!lhs.empty() && !response.empty() && lhs != response)
      throw UsageError("--response " + response + " and the formula's \"" + lhs + " ~\" disagree; give one of them");
    if (!lhs.empty()) response = lhs;
  }
  if (response.empty())
    throw UsageError("which column holds the response? pass --response COLUMN or write the formula as \"COLUMN ~ terms\"");

  if (is_csv_path(options.points.path) && (response == options.points.x_column || response == options.points.y_column))
    throw UsageError("the response column \"" + response + "\" is also the " +
                     (response == options.points.x_column ? "x" : "y") +
                     " coordinate column; name the coordinate columns with --x and --y");
  PointSourceOptions po = options.points;
  po.columns = {response};
  if (!options.weights_column.empty()) po.columns.push_back(options.weights_column);
  std::optional<OffsetSpec> offset;
  if (!options.offset.empty()) {
    offset = parse_offset(options.offset);
    po.columns.push_back(offset->column);
  }
  Points points = read_points(po);
  PointCounts& c = summary.counts;
  c.total = static_cast<std::int64_t>(points.size());

  const std::string source_crs = !options.points_crs.empty() ? options.points_crs
                                 : !points.crs_wkt.empty()   ? points.crs_wkt
                                                             : std::string(kDefaultCrs);
  const PointTransformer transformer(source_crs, grid.crs_wkt, options.points.path);
  summary.points_crs_name = transformer.source_name();
  transformer.refuse_impossible_lonlat(points.x, points.y, points.where, options.points.path,
                                       !options.points_crs.empty() ? "given with --crs"
                                       : !points.crs_wkt.empty()   ? "declared by the points file"
                                                                   : std::string("the default for a CSV without --crs"));
  std::vector<std::uint8_t> transformed;
  transformer.transform(points.x, points.y, transformed);

  const SampledPoints sampled = sample_points(grid, inputs, sources, points.x, points.y, transformed, options.bilinear);
  c.bilinear_fallbacks = sampled.bilinear_fallbacks;
  const std::size_t n = points.size();
  std::vector<std::uint8_t> use(n, 0);
  Eigen::VectorXd y(static_cast<Eigen::Index>(n)), w = Eigen::VectorXd::Ones(static_cast<Eigen::Index>(n)),
      off = Eigen::VectorXd::Zero(static_cast<Eigen::Index>(n));
  for (std::size_t i = 0; i < n; ++i) {
    switch (sampled.status[i]) {
      case PointStatus::not_transformed:
        ++c.not_transformed;
        c.dropped.push_back({points.where[i], "PROJ cannot transform it into the rasters' CRS"});
        continue;
      case PointStatus::outside:
        ++c.outside;
        c.dropped.push_back({points.where[i], "outside the raster grid"});
        continue;
      case PointStatus::nodata: {
        const std::string& name = inputs[static_cast<std::size_t>(sampled.nodata_input[i])].name;
        ++c.nodata;
        ++c.nodata_by_covariate[name];
        c.dropped.push_back({points.where[i], "nodata in covariate \"" + name + "\""});
        continue;
      }
      case PointStatus::ok: break;
    }
    const auto r = static_cast<Eigen::Index>(i);
    y[r] = points.values[0][i];
    std::size_t col = 1;
    if (!options.weights_column.empty()) w[r] = points.values[col++][i];
    if (offset) {
      const double v = points.values[col][i];
      off[r] = offset->log ? (v > 0.0 ? std::log(v) : std::numeric_limits<double>::quiet_NaN()) : v;
      if (offset->log && v <= 0.0)
        throw InputError(points.where[i] + ": offset column \"" + offset->column + "\" is " + significant(v, 6) +
                         "; log(" + offset->column + ") needs positive values");
    }
    if (std::isnan(y[r]) || std::isnan(w[r]) || std::isnan(off[r])) {
      ++c.missing_response;
      c.dropped.push_back({points.where[i], std::isnan(y[r]) ? "no value in the response column \"" + response + "\""
                                            : std::isnan(w[r]) ? "no value in the weights column \"" + options.weights_column + "\""
                                                               : "no value in the offset column \"" + offset->column + "\""});
      continue;
    }
    use[i] = 1;
  }

  ModelSpec spec = build_spec(options, inputs, sampled.raw, use);
  // predict then resamples as the fit did (without it, predict would apply its default rule).
  for (Covariate& cov : spec.covariates)
    if (const auto it = options.alignment.resampling.find(cov.name); it != options.alignment.resampling.end())
      cov.resampling = it->second;
  spec.link = options.link.value_or(default_link(options.family));
  spec.response = response;
  if (std::count(use.begin(), use.end(), 1) > 1 && options.standardise) {
    try {
      standardise_covariates(spec, sampled.raw, use);
    } catch (const InputError& e) {
      throw InputError(options.points.path + ": " + e.what());
    }
  }
  if (std::count(use.begin(), use.end(), 1) > 0) {
    // Spline factors (ns(x, df = 4), ...) get their knots from the model values of the rows in use.
    declare_formula_splines(options.formula, spec, [&](int column) {
      std::vector<double> values;
      const Covariate& cov = spec.covariates[static_cast<std::size_t>(column)];
      for (std::size_t i = 0; i < n; ++i)
        if (use[i]) values.push_back(model_value(cov, sampled.raw(static_cast<Eigen::Index>(i), column)));
      return values;
    });
    spec.terms = parse_formula(options.formula, spec).terms;
  }

  Design design;
  if (!spec.terms.empty()) {
    design = build_design(spec, sampled.raw);
    for (std::size_t i = 0; i < n; ++i)
      if (use[i] && !design.usable[i]) {
        use[i] = 0;
        ++c.unusable;
        c.dropped.push_back({points.where[i], "a term or transform is undefined at its covariate values"});
      }
    // Reasons were recorded in two passes; list them in file order.
    std::map<std::string, std::size_t> order;
    for (std::size_t i = 0; i < n; ++i) order.emplace(points.where[i], i);
    std::stable_sort(c.dropped.begin(), c.dropped.end(),
                     [&](const DroppedPoint& a, const DroppedPoint& b) { return order[a.where] < order[b.where]; });
  }
  c.used = std::count(use.begin(), use.end(), 1);
  if (c.used == 0) no_valid_points(options, c, grid, points.x, points.y, transformed, summary.points_crs_name);
  warn_integer_codes(options, inputs, sampled.raw, use, summary.warnings);
  summary.untrained_classes = untrained_classes(inputs, spec);
  count_shared_pixels(sampled.pixel, use, points.where, grid, c);

  // The fitting problem over the used points only.
  std::vector<Eigen::Index> rows;
  for (std::size_t i = 0; i < n; ++i)
    if (use[i]) rows.push_back(static_cast<Eigen::Index>(i));
  const auto m = static_cast<Eigen::Index>(rows.size());
  GlmProblem p;
  p.X = design.X(rows, Eigen::all);
  p.y = y(rows);
  if (!options.weights_column.empty()) p.weights = w(rows);
  if (offset) p.offset = off(rows);
  p.term_names = spec.terms;
  p.intercept_column = spec.terms.front() == "(Intercept)" ? 0 : -1;
  p.family = spec.family;
  p.link = spec.link;
  for (Eigen::Index r : rows) p.observation_labels.push_back(points.where[static_cast<std::size_t>(r)]);
  try {
    summary.fit = fit_glm(p, options.irls);
  } catch (const InputError& e) {
    const std::string msg = e.what();
    // The fit names observations by their labels ("points.csv:17: ..."); a message about one
    // point's response also names the column.
    for (Eigen::Index r : rows)
      if (const std::string& label = points.where[static_cast<std::size_t>(r)]; msg.rfind(label + ":", 0) == 0)
        throw InputError(msg + " (column \"" + response + "\")");
    throw InputError(options.points.path + ": " + msg);
  }

  const GlmFit& fit = summary.fit;
  spec.estimates.assign(fit.coefficients.data(), fit.coefficients.data() + fit.coefficients.size());
  spec.covariance = fit.covariance;
  spec.deviance = fit.deviance;
  spec.null_deviance = fit.null_deviance;
  spec.aic = fit.aic;
  spec.observations = m;
  spec.training_samples = summary.samples_path;
  spec.sampling = options.bilinear ? PointSampling::bilinear : PointSampling::pixel;
  if (options.prediction_offset) spec.offset_constant = *options.prediction_offset;
  spec.description = "Fitted by habcast fit " + tool_version + " on " + utc_now() + " from " + options.points.path + ": " +
                     options.formula + " (" + std::to_string(fit.iterations) + " IRLS iterations, " +
                     (fit.covariance_weights == CovarianceWeights::last_iteration ? "R's default glm() stopping rule"
                                                                                   : "tight fit (--tight)") +
                     (offset ? "; fitted with offset " + options.offset +
                                   (options.prediction_offset ? ", predictions use offset " + significant(*options.prediction_offset, 6)
                                                              : ", predictions use offset 0")
                             : "") +
                     ")";
  summary.table = coefficient_table(fit, spec.terms);

  // Outputs: the samples table first, then the model that names it, each complete or absent.
  std::vector<SampleColumn> leading{{"x", {}}, {"y", {}}, {response, {}}};
  if (!options.weights_column.empty()) leading.push_back({options.weights_column, {}});
  std::vector<std::string> labels;
  for (Eigen::Index r : rows) {
    const auto i = static_cast<std::size_t>(r);
    leading[0].values.push_back(points.x[i]);
    leading[1].values.push_back(points.y[i]);
    leading[2].values.push_back(y[r]);
    if (!options.weights_column.empty()) leading[3].values.push_back(w[r]);
    labels.push_back(points.where[i]);
  }
  const Eigen::ArrayXXd used_raw = sampled.raw(rows, Eigen::all);
  const std::vector<std::string> provenance{
      "Written by habcast fit " + tool_version + " on " + utc_now() + ".",
      "Points: " + options.points.path + " (CRS " + summary.points_crs_name + "); x, y in the rasters' CRS (" +
          grid.crs_name + ").",
      std::string("Covariate values taken ") +
          (options.bilinear ? "by bilinear interpolation between the 4 nearest pixel centres" : "from the pixel containing each point") +
          ", in raster units; categorical columns hold class codes."};
  fs::create_directories(fs::absolute(fs::path(summary.model_path)).parent_path());
  write_file_atomically(summary.samples_path, write_samples_csv(spec, used_raw, leading, labels, provenance));
  const std::string text = write_model_text(spec, summary.model_path, {"Written by habcast fit " + tool_version + "."});
  parse_model_text(text, summary.model_path);  // never write a file that predict would refuse
  write_file_atomically(summary.model_path, text);
  summary.spec = std::move(spec);

  if (!summary.untrained_classes.empty()) summary.warnings.push_back(untrained_warning(summary.untrained_classes, inputs));
  if (c.shared_pixels > 0)
    summary.warnings.push_back(count_of(c.points_in_shared, "point") + " share " +
                               (c.shared_pixels == 1 ? std::string("one pixel") : count_of(c.shared_pixels, "pixel")) +
                               " (e.g. " + c.shared_examples.front() +
                               "); they carry identical covariate values, so the fit counts that place several times");
  if (c.used < c.total)
    summary.warnings.push_back(std::to_string(c.total - c.used) + " of " + count_of(c.total, "point") +
                               (c.total - c.used == 1 ? " was" : " were") +
                               " not used (see the counts above; --json lists each with its reason)");
  if (c.bilinear_fallbacks > 0)
    summary.warnings.push_back(count_of(c.bilinear_fallbacks, "point") +
                               " next to nodata or the grid's edge took the containing pixel's value instead "
                               "of a bilinear interpolation");
  return summary;
}

std::string format_fit_summary(const FitSummary& s) {
  const PointCounts& c = s.counts;
  std::ostringstream os;
  os << "Points: " << c.total << " read (CRS " << s.points_crs_name << "), " << c.used << " used";
  if (c.outside) os << ", " << c.outside << " outside the grid";
  if (c.nodata) {
    os << ", " << c.nodata << " on nodata (";
    bool first = true;
    for (const auto& [name, count] : c.nodata_by_covariate) {
      os << (first ? "" : ", ") << name << " " << count;
      first = false;
    }
    os << ")";
  }
  if (c.not_transformed) os << ", " << c.not_transformed << " not transformable";
  if (c.missing_response) os << ", " << c.missing_response << " without response";
  if (c.unusable) os << ", " << c.unusable << " with values no term can take";
  os << ".\n";
  constexpr std::size_t kShown = 5;
  if (!c.dropped.empty()) {
    os << "Not used: ";
    for (std::size_t k = 0; k < std::min(kShown, c.dropped.size()); ++k)
      os << (k ? "; " : "") << c.dropped[k].where << " (" << c.dropped[k].reason << ")";
    if (c.dropped.size() > kShown) os << "; and " << c.dropped.size() - kShown << " more (--json lists them all)";
    os << ".\n";
  }
  const GlmFit& f = s.fit;
  os << "Model: " << to_string(s.spec.family) << " GLM, " << to_string(s.spec.link) << " link, " << s.spec.terms.size()
     << " terms; " << f.iterations << " IRLS iterations, "
     << (f.covariance_weights == CovarianceWeights::last_iteration
             ? "stopped and standard errors as R's glm() by default"
             : "tight fit: stopped at a relative deviance change below " + significant(f.tolerance, 3) +
                   ", standard errors at the estimate")
     << ".\n";
  os << "Deviance " << significant(f.deviance, 8) << " on " << f.df_residual << " df (null " << significant(f.null_deviance, 8) << " on "
     << f.df_null << " df); AIC " << significant(f.aic, 8);
  if (f.dispersion_estimated) os << "; dispersion " << significant(f.dispersion, 6);
  os << ".\n\n";
  os << format_coefficient_table(s.table, f.dispersion_estimated);
  bool standardised = false;
  for (const Covariate& cov : s.spec.covariates) standardised = standardised || (!cov.categorical && cov.scale != 1.0);
  if (standardised)
    os << "\nEstimates are per standard deviation of each covariate (centre and scale are in the model file).\n";
  os << "\nWrote " << s.model_path << " and " << s.samples_path << ".\n";
  return os.str();
}

nlohmann::ordered_json fit_report_json(const FitSummary& s) {
  const PointCounts& c = s.counts;
  const GlmFit& f = s.fit;
  nlohmann::ordered_json j;
  nlohmann::ordered_json dropped = nlohmann::ordered_json::array();
  for (const DroppedPoint& d : c.dropped) dropped.push_back({{"where", d.where}, {"reason", d.reason}});
  nlohmann::ordered_json nodata = nlohmann::ordered_json::object();
  for (const auto& [name, count] : c.nodata_by_covariate) nodata[name] = count;
  j["points"] = {{"crs", s.points_crs_name},       {"read", c.total},
                 {"used", c.used},                 {"outside_grid", c.outside},
                 {"on_nodata", c.nodata},          {"on_nodata_by_covariate", nodata},
                 {"not_transformed", c.not_transformed}, {"missing_response", c.missing_response},
                 {"unusable", c.unusable},         {"shared_pixels", c.shared_pixels},
                 {"points_in_shared_pixels", c.points_in_shared}, {"bilinear_fallbacks", c.bilinear_fallbacks},
                 {"sampling", to_string(s.spec.sampling)}, {"dropped", dropped}};
  j["model"] = {{"family", to_string(s.spec.family)},
                {"link", to_string(s.spec.link)},
                {"iterations", f.iterations},
                {"stopping_rule", "|dev - dev_old| / (|dev| + 0.1) < " + significant(f.tolerance, 3)},
                {"covariance", f.covariance_weights == CovarianceWeights::last_iteration
                                   ? "dispersion x (X'WX)^-1 with the working weights of the last iteration, as R's vcov()"
                                   : "dispersion x (X'WX)^-1 with the working weights at the estimate"},
                {"deviance", f.deviance},
                {"df_residual", f.df_residual},
                {"null_deviance", f.null_deviance},
                {"df_null", f.df_null},
                {"aic", f.aic},
                {"dispersion", f.dispersion},
                {"dispersion_estimated", f.dispersion_estimated}};
  nlohmann::ordered_json table = nlohmann::ordered_json::array();
  for (const CoefficientRow& r : s.table)
    table.push_back({{"term", r.term}, {"estimate", r.estimate}, {"std_error", r.std_error},
                     {f.dispersion_estimated ? "t_value" : "z_value", r.statistic}, {"p_value", r.p_value}});
  j["coefficients"] = table;
  nlohmann::ordered_json untrained = nlohmann::ordered_json::array();
  for (const UntrainedClass& u : s.untrained_classes)
    untrained.push_back({{"covariate", u.covariate}, {"code", u.code}, {"name", u.name}, {"pixels", u.pixels}, {"share", u.share}});
  j["untrained_classes"] = untrained;
  j["model_file"] = s.model_path;
  j["samples_file"] = s.samples_path;
  j["warnings"] = s.warnings;
  return j;
}

}  // namespace habcast
