#include "core/base/csv_table.hpp"

#include <charconv>
#include <cmath>
#include <fstream>
#include <limits>
#include <sstream>

#include "core/base/error.hpp"

namespace habcast {

namespace {

char detect_separator(const std::string& header_line) {
  if (header_line.find(',') != std::string::npos) return ',';
  if (header_line.find(';') != std::string::npos) return ';';
  if (header_line.find('\t') != std::string::npos) return '\t';
  return ',';
}

bool skippable(const std::string& line) {
  return line.empty() || line == "\r" || line[0] == '#';
}

}  // namespace

std::vector<std::string> split_csv_record(const std::string& line, char separator) {
  std::vector<std::string> fields;
  std::string field;
  bool quoted = false;
  for (std::size_t i = 0; i < line.size(); ++i) {
    const char ch = line[i];
    if (quoted) {
      if (ch == '"' && i + 1 < line.size() && line[i + 1] == '"') {
        field += '"';
        ++i;
      } else if (ch == '"') {
        quoted = false;
      } else {
        field += ch;
      }
    } else if (ch == '"') {
      quoted = true;
    } else if (ch == separator) {
      fields.push_back(field);
      field.clear();
    } else {
      field += ch;
    }
  }
  fields.push_back(field);
  for (std::string& f : fields) {
    const auto b = f.find_first_not_of(" \t\r");
    const auto e = f.find_last_not_of(" \t\r");
    f = b == std::string::npos ? std::string() : f.substr(b, e - b + 1);
  }
  return fields;
}

bool is_missing_cell(const std::string& cell) { return cell.empty() || cell == "NA" || cell == "NaN" || cell == "nan"; }

std::optional<std::size_t> CsvTable::column(const std::string& name) const {
  for (std::size_t i = 0; i < header.size(); ++i)
    if (header[i] == name) return i;
  return std::nullopt;
}

std::size_t CsvTable::require_column(const std::string& name, const std::string& purpose) const {
  if (auto c = column(name)) return *c;
  std::string names;
  for (const std::string& h : header) names += (names.empty() ? "" : ", ") + h;
  throw InputError(located(path, header_line, "no column named \"" + name + "\" (" + purpose + "); the columns are " + names));
}

double CsvTable::number_or_nan(std::size_t row, std::size_t col) const {
  const std::string& cell = rows[row][col];
  if (is_missing_cell(cell)) return std::numeric_limits<double>::quiet_NaN();
  return number(row, col);
}

double CsvTable::number(std::size_t row, std::size_t col) const {
  const std::string& cell = rows[row][col];
  const char* first = cell.data();
  const char* last = cell.data() + cell.size();
  if (first != last && *first == '+') ++first;
  double v = 0.0;
  const auto [ptr, ec] = std::from_chars(first, last, v);
  if (cell.empty() || ec != std::errc() || ptr != last || !std::isfinite(v))
    throw InputError(located(path, lines[row], "value \"" + cell + "\" in column \"" + header[col] +
                                                  "\" is not a finite number"));
  return v;
}

CsvTable parse_csv_table(const std::string& text, const std::string& path) {
  CsvTable t;
  t.path = path;
  std::istringstream in(text);
  std::string line;
  long number = 0;
  char separator = ',';
  while (std::getline(in, line)) {
    ++number;
    if (skippable(line)) continue;
    if (line.size() >= 3 && line.compare(0, 3, "\xEF\xBB\xBF") == 0) line.erase(0, 3);  // UTF-8 BOM
    separator = detect_separator(line);
    t.header = split_csv_record(line, separator);
    t.header_line = number;
    break;
  }
  if (t.header.empty()) throw InputError(located(path, 0, "the table is empty; it needs a header row naming its columns"));
  while (std::getline(in, line)) {
    ++number;
    if (skippable(line)) continue;
    std::vector<std::string> fields = split_csv_record(line, separator);
    if (fields.size() != t.header.size())
      throw InputError(located(path, number, "has " + std::to_string(fields.size()) + " fields but the header has " +
                                                 std::to_string(t.header.size())));
    t.rows.push_back(std::move(fields));
    t.lines.push_back(number);
  }
  return t;
}

CsvTable read_csv_table(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  if (!in) throw InputError(path + ": cannot open the table; check the path and that it is readable");
  std::ostringstream buffer;
  buffer << in.rdbuf();
  if (in.bad()) throw InputError(path + ": cannot read the table");
  return parse_csv_table(buffer.str(), path);
}

}  // namespace habcast
