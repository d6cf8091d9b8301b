#pragma once
// Reads one table of a habcast TOML file (model file, batch manifest) key by key, with messages
// that name the file and line, and remembers which keys were taken so that anything left over (a
// typo such as "centre") is reported instead of silently ignored.
#include <toml++/toml.h>

#include <cstdint>
#include <optional>
#include <set>
#include <cstddef>
#include <string>

namespace habcast {

/// Longest text a string value of a model file or manifest may hold (docs/limits.md).
constexpr std::size_t kMaxTextFieldBytes = 4096;


/// The line of `node` in its file (1-based).
long toml_line(const toml::node& node);

class TomlTableReader {
 public:
  /// `key_prefix` is put before a key in messages ("[model] " -> "[model] family must be ...",
  /// "predict." -> "predict.level must be ..."); `place` says where the table is in the message
  /// about an unknown key ("in [model]", "at the top level"). `file` must outlive the reader.
  TomlTableReader(const toml::table& table, std::string key_prefix, std::string place, const std::string& file);

  /// Throws InputError "file:line: why" at `node`'s line, or at the table's own line.
  [[noreturn]] void fail(const toml::node& node, const std::string& why) const;
  [[noreturn]] void fail_here(const std::string& why) const;

  /// The node under `key`, or nullptr; either way the key counts as known.
  const toml::node* get(const std::string& key);
  std::optional<std::string> string(const std::string& key);
  std::optional<double> number(const std::string& key);  ///< any finite number
  std::optional<std::int64_t> integer(const std::string& key);
  std::optional<bool> boolean(const std::string& key);
  const toml::array* array(const std::string& key);  ///< nullptr when absent

  /// `n` as a finite number, else fails naming it `what`.
  double finite_number(const toml::node& n, const std::string& what) const;

  /// Throws InputError at the first key no reader asked for, listing the `allowed` ones.
  void reject_unknown(const std::string& allowed) const;

  [[nodiscard]] std::string where(const std::string& key) const { return key_prefix_ + key; }
  [[nodiscard]] const toml::table& table() const { return table_; }

 private:
  const toml::table& table_;
  std::string key_prefix_;
  std::string place_;
  const std::string& file_;
  std::set<std::string> seen_;
};

}  // namespace habcast
