#include "core/base/toml_table_reader.hpp"

#include <cmath>
#include <utility>

#include "core/base/error.hpp"

namespace habcast {

long toml_line(const toml::node& node) { return static_cast<long>(node.source().begin.line); }

TomlTableReader::TomlTableReader(const toml::table& table, std::string key_prefix, std::string place,
                                 const std::string& file)
    : table_(table), key_prefix_(std::move(key_prefix)), place_(std::move(place)), file_(file) {}

void TomlTableReader::fail(const toml::node& node, const std::string& why) const {
  throw InputError(located(file_, toml_line(node), why));
}

void TomlTableReader::fail_here(const std::string& why) const {
  throw InputError(located(file_, toml_line(table_), why));
}

const toml::node* TomlTableReader::get(const std::string& key) {
  seen_.insert(key);
  return table_.get(key);
}

std::optional<std::string> TomlTableReader::string(const std::string& key) {
  const toml::node* n = get(key);
  if (!n) return std::nullopt;
  if (!n->is_string()) fail(*n, where(key) + " must be a quoted string");
  // Names, units, descriptions and paths are short; one of megabytes would be copied into every
  // output's metadata and the report (docs/limits.md).
  if (n->as_string()->get().size() > kMaxTextFieldBytes)
    fail(*n, where(key) + " is longer than " + std::to_string(kMaxTextFieldBytes) + " characters, the most a text "
                          "field may hold (docs/limits.md)");
  return n->value<std::string>();
}

std::optional<double> TomlTableReader::number(const std::string& key) {
  const toml::node* n = get(key);
  if (!n) return std::nullopt;
  return finite_number(*n, where(key));
}

double TomlTableReader::finite_number(const toml::node& n, const std::string& what) const {
  if (!n.is_number()) fail(n, what + " must be a number");
  const double v = *n.value<double>();
  if (!std::isfinite(v)) fail(n, what + " is " + std::to_string(v) + "; it must be a finite number");
  return v;
}

std::optional<std::int64_t> TomlTableReader::integer(const std::string& key) {
  const toml::node* n = get(key);
  if (!n) return std::nullopt;
  if (!n->is_integer()) fail(*n, where(key) + " must be a whole number");
  return n->value<std::int64_t>();
}

std::optional<bool> TomlTableReader::boolean(const std::string& key) {
  const toml::node* n = get(key);
  if (!n) return std::nullopt;
  if (!n->is_boolean()) fail(*n, where(key) + " must be true or false");
  return n->value<bool>();
}

const toml::array* TomlTableReader::array(const std::string& key) {
  const toml::node* n = get(key);
  if (!n) return nullptr;
  if (!n->is_array()) fail(*n, where(key) + " must be an array [ ... ]");
  return n->as_array();
}

void TomlTableReader::reject_unknown(const std::string& allowed) const {
  for (auto&& [key, node] : table_) {
    (void)node;
    if (!seen_.count(std::string(key.str())))
      throw InputError(located(file_, static_cast<long>(key.source().begin.line),
                               "unknown key \"" + std::string(key.str()) + "\" " + place_ + "; allowed keys are " +
                                   allowed));
  }
}

}  // namespace habcast
