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
#include "core/model/model_writer.hpp"
#include "pipeline/atomic_file.hpp"
#include "pipeline/folder_lock.hpp"
#include "pipeline/output_guard.hpp"
#include "pipeline/run_files.hpp"
#include "raster/gdal_session.hpp"
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
  return inputs;
}

RasterGrid check_grids(const std::vector<SamplingInput>& inputs) {
  const RasterGrid reference = read_grid(inputs.front().path, inputs.front().band);
  for (std::size_t i = 1; i < inputs.size(); ++i)
    check_same_grid(inputs.front().path, reference, inputs[i].path, read_grid(inputs[i].path, inputs[i].band));
  return reference;
}

/// Explains why no point could be used; the most common cause (a wrong CRS) gets its own hint.
[[noreturn]] void no_valid_points(const FitOptions& o, const PointCounts& c, const RasterGrid& grid,
                                  const std::vector<double>& x, const std::vector<double>& y, const std::string& crs_name) {
  std::ostringstream os;
  os << o.points.path << ": none of the " << c.total << " points can be used: " << c.outside << " outside the raster grid, "
     << c.nodata << " on nodata, " << c.not_transformed << " not transformable, " << c.missing_response
     << " without a response (or weight/offset), " << c.unusable << " with a value no term can take.";
  if (c.outside + c.not_transformed == c.total) {
    double xmin = std::numeric_limits<double>::infinity(), xmax = -xmin, ymin = xmin, ymax = -xmin;
    for (std::size_t i = 0; i < x.size(); ++i) {
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
  c.reference_level = c.levels.front().name;
  if (const auto it = o.reference_levels.find(in.name); it != o.reference_levels.end()) {
    const auto match = std::find_if(c.levels.begin(), c.levels.end(), [&](const Level& l) {
      return l.name == it->second || std::to_string(l.code) == it->second;
    });
    if (match == c.levels.end())
      throw UsageError("--reference " + in.name + "=" + it->second + ": no such level among the points; levels seen: " +
                       [&] {
                         std::string s;
                         for (const Level& l : c.levels) s += (s.empty() ? "" : ", ") + l.name;
                         return s;
                       }());
    c.reference_level = match->name;
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
  const RasterGrid grid = check_grids(inputs);

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
  std::vector<std::uint8_t> transformed;
  transformer.transform(points.x, points.y, transformed);

  const SampledPoints sampled = sample_points(grid, inputs, points.x, points.y, transformed, options.bilinear);
  c.bilinear_fallbacks = sampled.bilinear_fallbacks;
  const std::size_t n = points.size();
  std::vector<std::uint8_t> use(n, 0);
  Eigen::VectorXd y(static_cast<Eigen::Index>(n)), w = Eigen::VectorXd::Ones(static_cast<Eigen::Index>(n)),
      off = Eigen::VectorXd::Zero(static_cast<Eigen::Index>(n));
  for (std::size_t i = 0; i < n; ++i) {
    switch (sampled.status[i]) {
      case PointStatus::not_transformed: ++c.not_transformed; continue;
      case PointStatus::outside: ++c.outside; continue;
      case PointStatus::nodata:
        ++c.nodata;
        ++c.nodata_by_covariate[inputs[static_cast<std::size_t>(sampled.nodata_input[i])].name];
        continue;
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
      continue;
    }
    use[i] = 1;
  }

  ModelSpec spec = build_spec(options, inputs, sampled.raw, use);
  spec.link = options.link.value_or(default_link(options.family));
  spec.response = response;
  if (std::count(use.begin(), use.end(), 1) > 1 && options.standardise) {
    try {
      standardise_covariates(spec, sampled.raw, use);
    } catch (const InputError& e) {
      throw InputError(options.points.path + ": " + e.what());
    }
  }
  if (std::count(use.begin(), use.end(), 1) > 0) spec.terms = parse_formula(options.formula, spec).terms;

  Design design;
  if (!spec.terms.empty()) {
    design = build_design(spec, sampled.raw);
    for (std::size_t i = 0; i < n; ++i)
      if (use[i] && !design.usable[i]) {
        use[i] = 0;
        ++c.unusable;
      }
  }
  c.used = std::count(use.begin(), use.end(), 1);
  if (c.used == 0) no_valid_points(options, c, grid, points.x, points.y, summary.points_crs_name);
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
  try {
    summary.fit = fit_glm(p, options.irls);
  } catch (const InputError& e) {
    std::string msg = e.what();
    // Observation numbers inside the fit are positions among the used points; name the source.
    const std::string key = "observation ";
    if (msg.rfind(key, 0) == 0) {
      const std::size_t colon = msg.find(':');
      const long k = std::stol(msg.substr(key.size(), colon - key.size()));
      msg = points.where[static_cast<std::size_t>(rows[static_cast<std::size_t>(k - 1)])] + ":" + msg.substr(colon + 1);
      throw InputError(msg + " (column \"" + response + "\")");
    }
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
  if (options.prediction_offset) spec.offset_constant = *options.prediction_offset;
  spec.description = "Fitted by habcast fit " + tool_version + " on " + utc_now() + " from " + options.points.path + ": " +
                     options.formula + " (" + std::to_string(fit.iterations) + " IRLS iterations" +
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
      std::string("Covariate values sampled at ") + (options.bilinear ? "bilinear interpolation" : "the containing pixel") +
          ", in raster units; categorical columns hold class codes."};
  fs::create_directories(fs::absolute(fs::path(summary.model_path)).parent_path());
  write_file_atomically(summary.samples_path, write_samples_csv(spec, used_raw, leading, labels, provenance));
  const std::string text = write_model_text(spec, summary.model_path, {"Written by habcast fit " + tool_version + "."});
  parse_model_text(text, summary.model_path);  // never write a file that predict would refuse
  write_file_atomically(summary.model_path, text);
  summary.spec = std::move(spec);

  if (c.shared_pixels > 0)
    summary.warnings.push_back(std::to_string(c.points_in_shared) + " points share " + std::to_string(c.shared_pixels) +
                               " pixels (e.g. " + c.shared_examples.front() +
                               "); they carry identical covariate values, so the fit counts that place several times");
  if (c.used < c.total)
    summary.warnings.push_back(std::to_string(c.total - c.used) + " of " + std::to_string(c.total) +
                               " points were not used (see the counts above)");
  if (c.bilinear_fallbacks > 0)
    summary.warnings.push_back(std::to_string(c.bilinear_fallbacks) +
                               " points next to nodata or the grid's edge took the containing pixel's value instead "
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
  const GlmFit& f = s.fit;
  os << "Model: " << to_string(s.spec.family) << " GLM, " << to_string(s.spec.link) << " link, " << s.spec.terms.size()
     << " terms; " << f.iterations << " IRLS iterations.\n";
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

}  // namespace habcast
