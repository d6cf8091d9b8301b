#include "core/domain/samples_writer.hpp"

#include <charconv>
#include <cmath>
#include <sstream>

namespace habcast {

std::string shortest_number(double value) {
  if (std::isnan(value)) return "NA";
  char buf[40];
  const auto [ptr, ec] = std::to_chars(buf, buf + sizeof buf, value);
  (void)ec;
  return std::string(buf, ptr);
}

namespace {

std::string csv_field(const std::string& text) {
  if (text.find_first_of(",\"\n") == std::string::npos) return text;
  std::string out = "\"";
  for (char ch : text) out += ch == '"' ? std::string("\"\"") : std::string(1, ch);
  return out + "\"";
}

}  // namespace

std::string write_samples_csv(const ModelSpec& spec, const Eigen::ArrayXXd& raw, const std::vector<SampleColumn>& leading,
                              const std::vector<std::string>& labels, const std::vector<std::string>& comments) {
  std::ostringstream os;
  for (const std::string& c : comments) os << "# " << c << "\n";
  os << "source";
  for (const SampleColumn& c : leading) os << "," << csv_field(c.name);
  for (const Covariate& c : spec.covariates) os << "," << c.name;
  os << "\n";
  for (Eigen::Index r = 0; r < raw.rows(); ++r) {
    os << csv_field(labels[static_cast<std::size_t>(r)]);
    for (const SampleColumn& c : leading) os << "," << shortest_number(c.values[static_cast<std::size_t>(r)]);
    for (Eigen::Index k = 0; k < raw.cols(); ++k) os << "," << shortest_number(raw(r, k));
    os << "\n";
  }
  return os.str();
}

}  // namespace habcast
