#include "core/domain/training_samples.hpp"

#include <algorithm>
#include <charconv>
#include <cmath>
#include <fstream>
#include <limits>
#include <sstream>
#include <vector>

#include "core/base/bounded_input.hpp"
#include "core/base/csv_table.hpp"
#include "core/base/number_text.hpp"
#include "core/base/error.hpp"

namespace habcast {

namespace {

// "NaN" is not "not recorded": a computed NaN in a training table is a mistake to report, not skip.
bool is_missing(const std::string& v) { return v.empty() || v == "NA"; }

bool parse_double(const std::string& text, double& out) {
  const char* first = text.data();
  const char* last = text.data() + text.size();
  if (first != last && *first == '+') ++first;
  const auto [ptr, ec] = std::from_chars(first, last, out);
  return ec == std::errc() && ptr == last && std::isfinite(out);
}

/// Which reading of a categorical column's cells has been seen first, so that a column mixing level
/// names and level codes is refused (docs/model-format.md, "Naming a level").
struct LevelConvention {
  long name_line = 0;  ///< first line with a cell that is only a level's name
  std::string name_value;
  long code_line = 0;  ///< first line with a cell that is only a level's code
  std::string code_value;
};

double categorical_code(const Covariate& c, const std::string& value, const std::string& path, long line,
                        LevelConvention& convention) {
  const LevelLookup found = c.find_level(value);
  if (found.ambiguous())
    throw InputError(located(path, line, "the value " + found.ambiguity(c, value) + "; the training table's cells are "
                                                                                   "read by the same rule as terms"));
  if (!found.found()) {
    double number = 0.0;
    if (parse_double(value, number) && number == std::floor(number))
      throw InputError(located(path, line, "level code " + value + " of \"" + c.name +
                                               "\" is not declared in the model file; add it to the covariate's levels "
                                               "(declared: " + c.level_list() + ")"));
    throw InputError(located(path, line, "\"" + value + "\" is not a level of \"" + c.name +
                                             "\" (give a declared level name or integer code; declared: " + c.level_list() + ")"));
  }
  const Level& level = c.levels[static_cast<std::size_t>(found.index)];
  // A cell that both readings agree on (an integer name equal to its own code) fits either convention.
  if (found.by_code < 0 && convention.name_line == 0) {
    convention.name_line = line;
    convention.name_value = value;
  } else if (found.by_name < 0 && convention.code_line == 0) {
    convention.code_line = line;
    convention.code_value = value;
  }
  if (convention.name_line && convention.code_line)
    throw InputError(located(path, line, "column \"" + c.name + "\" mixes level names and level codes: line " +
                                             std::to_string(convention.name_line) + " holds the name \"" +
                                             convention.name_value + "\", line " + std::to_string(convention.code_line) +
                                             " the code " + convention.code_value +
                                             "; write the whole column one way (codes, as in the raster, or names)"));
  return static_cast<double>(level.code);
}

/// Values that are almost surely not measurements: the nodata markers rasters commonly carry
/// (-9999, -99999, -32768) and magnitudes of 1e30 and more (the Float32 and Float64 extremes used
/// as markers, e.g. -3.4028235e38), and gross outliers: farther than 10 interquartile ranges
/// beyond the quartiles (R's type 7 quantiles), checked when 10 or more values are left. The
/// thresholds are common practice, no source. One such value would stretch the range, and
/// dominate the covariance that the hull, NT2 and MESS work in, until the joint checks flag
/// almost nothing; it is left out of the training domain instead, and the warning names it.
std::vector<std::string> leave_out_suspect_values(TrainingSamples& samples, const ModelSpec& spec,
                                                  const std::vector<long>& lines) {
  std::vector<std::string> warnings;
  const Eigen::Index n = samples.raw.rows();
  for (std::size_t c = 0; c < spec.covariates.size(); ++c) {
    const Covariate& cov = spec.covariates[c];
    if (cov.categorical) continue;
    auto column = samples.raw.col(static_cast<Eigen::Index>(c));
    std::vector<Eigen::Index> suspect;
    std::vector<double> kept;
    for (Eigen::Index r = 0; r < n; ++r) {
      const double x = column(r);
      if (std::isnan(x)) continue;
      if (x == -9999.0 || x == -99999.0 || x == -32768.0 || std::fabs(x) >= 1e30) suspect.push_back(r);
      else kept.push_back(x);
    }
    if (kept.size() >= 10) {
      std::sort(kept.begin(), kept.end());
      const auto quantile = [&](double p) {
        const double h = (static_cast<double>(kept.size()) - 1.0) * p;
        const auto lo = static_cast<std::size_t>(std::floor(h));
        const std::size_t hi = std::min(lo + 1, kept.size() - 1);
        return kept[lo] + (h - static_cast<double>(lo)) * (kept[hi] - kept[lo]);
      };
      const double q1 = quantile(0.25), q3 = quantile(0.75), iqr = q3 - q1;
      if (iqr > 0.0)
        for (Eigen::Index r = 0; r < n; ++r) {
          const double x = column(r);
          if (!std::isnan(x) && std::fabs(x) < 1e30 && x != -9999.0 && x != -99999.0 && x != -32768.0 &&
              (x < q1 - 10.0 * iqr || x > q3 + 10.0 * iqr))
            suspect.push_back(r);
        }
    }
    if (suspect.empty()) continue;
    std::sort(suspect.begin(), suspect.end());
    std::string where;
    for (std::size_t i = 0; i < suspect.size() && i < 5; ++i)
      where += (i ? ", line " : "line ") + std::to_string(lines[static_cast<std::size_t>(suspect[i])]) + " (" +
               significant(column(suspect[i]), 8) + ")";
    if (suspect.size() > 5) where += " and " + std::to_string(suspect.size() - 5) + " more";
    for (const Eigen::Index r : suspect) column(r) = std::numeric_limits<double>::quiet_NaN();
    warnings.push_back(samples.path + ": " + std::to_string(suspect.size()) + " value(s) of \"" + cov.name +
                       "\" look like nodata markers or gross outliers and were left out of the training domain: " +
                       where + ". Rule: -9999, -99999, -32768, magnitudes of 1e30 or more, or farther than 10 "
                       "interquartile ranges beyond the quartiles (common practice, no source). If they are real "
                       "measurements, check them; write NA for values not recorded.");
  }
  return warnings;
}

}  // namespace

TrainingSamples parse_training_samples(std::istream& in, const std::string& path, const ModelSpec& spec) {
  LineReader reader(in, path, kMaxTrainingLineBytes);
  std::string line;
  std::vector<std::string> header;
  while (reader.next(line)) {
    if (line.empty() || line[0] == '#') continue;  // comment lines carry provenance
    header = split_csv_record(line);
    break;
  }
  if (header.empty()) throw InputError(located(path, 0, "the training table is empty; it needs a header row naming the covariates"));
  if (!header.empty() && header[0].size() >= 3 && header[0].compare(0, 3, "\xEF\xBB\xBF") == 0) header[0].erase(0, 3);
  const long header_line = reader.line_number();
  for (std::size_t h = 0; h < header.size(); ++h)
    for (std::size_t g = 0; g < h; ++g)
      if (!header[h].empty() && header[h] == header[g])
        throw InputError(located(path, header_line, "columns " + std::to_string(g + 1) + " and " + std::to_string(h + 1) +
                                                        " are both named \"" + header[h] +
                                                        "\"; which one holds the samples is ambiguous. Rename or remove one"));

  const std::size_t k = spec.covariates.size();
  std::vector<std::size_t> column(k);
  for (std::size_t c = 0; c < k; ++c) {
    std::size_t found = header.size();
    for (std::size_t h = 0; h < header.size(); ++h)
      if (header[h] == spec.covariates[c].name) found = h;
    if (found == header.size())
      throw InputError(located(path, header_line, "no column named \"" + spec.covariates[c].name +
                                                      "\"; the training table needs one column per covariate of the model"));
    column[c] = found;
  }

  std::vector<LevelConvention> conventions(k);
  std::vector<double> values;  // row-major while reading
  std::vector<long> lines;     // the file line of each sample, for messages
  std::size_t rows = 0;
  while (reader.next(line)) {
    const long line_number = reader.line_number();
    if (line.empty() || line == "\r" || line[0] == '#') continue;
    if (rows == kMaxTrainingSamples)
      throw InputError(located(path, line_number, "more than " + std::to_string(kMaxTrainingSamples) +
                                                      " training samples, the most habcast reads (docs/limits.md); "
                                                      "thin the table (the training domain needs no more)"));
    if (!line.empty() && line.back() == '\r') line.pop_back();
    const std::vector<std::string> fields = split_csv_record(line);
    if (fields.size() != header.size())
      throw InputError(located(path, line_number, "has " + std::to_string(fields.size()) + " fields but the header has " +
                                                      std::to_string(header.size())));
    for (std::size_t c = 0; c < k; ++c) {
      const std::string& v = fields[column[c]];
      const Covariate& cov = spec.covariates[c];
      double x = std::numeric_limits<double>::quiet_NaN();
      if (!is_missing(v)) {
        if (cov.categorical) {
          x = categorical_code(cov, v, path, line_number, conventions[c]);
        } else if (!parse_double(v, x)) {
          throw InputError(located(path, line_number, "value \"" + v + "\" of \"" + cov.name +
                                                          "\" is not a finite number (leave the cell empty or NA if not recorded)"));
        }
      }
      values.push_back(x);
    }
    lines.push_back(line_number);
    ++rows;
  }
  if (rows == 0) throw InputError(located(path, reader.line_number(), "the training table has a header but no samples"));

  TrainingSamples samples;
  samples.path = path;
  samples.raw.resize(static_cast<Eigen::Index>(rows), static_cast<Eigen::Index>(k));
  for (std::size_t r = 0; r < rows; ++r)
    for (std::size_t c = 0; c < k; ++c)
      samples.raw(static_cast<Eigen::Index>(r), static_cast<Eigen::Index>(c)) = values[r * k + c];
  samples.warnings = leave_out_suspect_values(samples, spec, lines);
  return samples;
}

TrainingSamples parse_training_samples(const std::string& text, const std::string& path, const ModelSpec& spec) {
  std::istringstream in(text);
  return parse_training_samples(in, path, spec);
}

TrainingSamples read_training_samples(const ModelSpec& spec) {
  if (!spec.training_samples)
    throw InputError(located(spec.path, 0, "the model file names no training samples ([training] samples = \"FILE.csv\")"));
  std::ifstream in(*spec.training_samples, std::ios::binary);
  if (!in)
    throw InputError(located(spec.path, spec.training_line,
                             "cannot open the training samples \"" + *spec.training_samples +
                                 "\"; the path is relative to the model file's folder"));
  TrainingSamples samples = parse_training_samples(in, *spec.training_samples, spec);
  if (in.bad())
    throw InputError(located(spec.path, spec.training_line, "cannot read the training samples \"" + *spec.training_samples + "\""));
  return samples;
}

}  // namespace habcast
