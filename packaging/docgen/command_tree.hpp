#pragma once
// What --help shows of a CLI11 command line, walked the way CLI11's own help formatter walks it,
// so the manual pages and the completion list exactly what `habcast ... --help` lists.
#include <CLI/CLI.hpp>
#include <memory>
#include <string>
#include <vector>

namespace habcast::docgen {

/// CLI11's formatter of `app` (habcast keeps the default one; its pieces build the pages).
inline std::shared_ptr<CLI::Formatter> formatter_of(const CLI::App& app) {
  auto formatter = std::dynamic_pointer_cast<CLI::Formatter>(app.get_formatter());
  if (!formatter) throw std::runtime_error("the command line uses a custom help formatter");
  return formatter;
}

/// Subcommands --help lists (a subcommand without a group is hidden, as in CLI11's help).
inline std::vector<const CLI::App*> visible_commands(const CLI::App& app) {
  return app.get_subcommands([](const CLI::App* sub) { return !sub->get_group().empty() && !sub->get_disabled(); });
}

/// Options --help lists: positionals or not, hidden ones (empty group) left out.
inline std::vector<const CLI::Option*> visible_options(const CLI::App& app, bool positional) {
  return app.get_options([positional](const CLI::Option* opt) {
    return !opt->get_group().empty() && (positional ? opt->get_positional() : opt->nonpositional());
  });
}

/// The option's words on the command line: -c, --covariate.
inline std::vector<std::string> option_words(const CLI::Option& opt) {
  std::vector<std::string> words;
  for (const std::string& s : opt.get_snames()) words.push_back("-" + s);
  for (const std::string& l : opt.get_lnames()) words.push_back("--" + l);
  return words;
}

/// The choices of an option restricted to a set, read from its type name as --help prints it
/// ("TEXT:{text,json}=text" gives text and json); empty for a free value.
inline std::vector<std::string> option_choices(const CLI::Option& opt) {
  const std::string type = opt.get_type_name();
  const auto open = type.find('{');
  const auto close = type.find('}', open == std::string::npos ? 0 : open);
  std::vector<std::string> choices;
  if (open == std::string::npos || close == std::string::npos) return choices;
  std::string item;
  for (char c : type.substr(open + 1, close - open - 1)) {
    if (c == ',') {
      choices.push_back(item);
      item.clear();
    } else {
      item += c;
    }
  }
  choices.push_back(item);
  return choices;
}

}  // namespace habcast::docgen
