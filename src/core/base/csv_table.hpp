#pragma once
// A small CSV table reader for points and reference tables: a header row, then records; lines
// starting with '#' are comments (provenance headers) and blank lines are skipped. Each record
// remembers its line so that messages can say "points.csv:17: ...".
#include <optional>
#include <string>
#include <vector>

namespace habcast {

struct CsvTable {
  std::string path;
  std::vector<std::string> header;
  long header_line = 0;
  std::vector<std::vector<std::string>> rows;
  std::vector<long> lines;  ///< line number of each row

  /// Index of the column named `name`, or nullopt.
  [[nodiscard]] std::optional<std::size_t> column(const std::string& name) const;
  /// Index of the column named `name`; throws InputError naming the file and listing the columns.
  [[nodiscard]] std::size_t require_column(const std::string& name, const std::string& purpose) const;
  /// Cell (row, col) as a double; throws InputError "path:line: ..." when it is not a finite number.
  [[nodiscard]] double number(std::size_t row, std::size_t col) const;
  /// Same, but missing cells (empty, NA) give NaN instead of an error.
  [[nodiscard]] double number_or_nan(std::size_t row, std::size_t col) const;
};

/// Parses CSV text (RFC 4180 quoting, no newlines inside fields; ',' separator, or ';' / tab when
/// the header holds no comma). Throws InputError for an empty table or a row whose field count
/// differs from the header's.
CsvTable parse_csv_table(const std::string& text, const std::string& path);

/// Reads and parses the file; throws InputError naming it when it cannot be read.
CsvTable read_csv_table(const std::string& path);

/// Splits one CSV record (RFC 4180 quoting, no newline inside a field) at `separator`, trimming
/// spaces, tabs and a carriage return around each field. Shared by every CSV reader, so all of
/// them read the same file the same way.
std::vector<std::string> split_csv_record(const std::string& line, char separator = ',');

/// True for an empty cell or one of NA, NaN, nan.
bool is_missing_cell(const std::string& cell);

}  // namespace habcast
