#include "bash_completion.hpp"

#include <sstream>
#include <vector>

#include "command_tree.hpp"

namespace habcast::docgen {

namespace {

// Words of ours are plain ASCII names (a command path joins them with spaces); anything else
// would need quoting in the script.
std::string checked_word(const std::string& word) {
  for (char c : word) {
    const bool plain = (c >= 'a' && c <= 'z') || (c >= 'A' && c <= 'Z') || (c >= '0' && c <= '9') || c == '-' ||
                       c == '_' || c == '.' || c == '+' || c == ':' || c == '/' || c == ' ';
    if (!plain) throw std::runtime_error("cannot put '" + word + "' in the bash completion");
  }
  return word;
}

std::string joined(const std::vector<std::string>& words, const char* sep) {
  std::string s;
  for (const std::string& w : words) s += (s.empty() ? "" : sep) + checked_word(w);
  return s;
}

bool numeric_value(const CLI::Option& opt) {
  const std::string type = opt.get_type_name();
  for (const char* prefix : {"INT", "UINT", "FLOAT", "NUMBER"})
    if (type.rfind(prefix, 0) == 0) return true;
  return false;
}

struct Command {
  std::string path;  // " predict": the command words after habcast, each with a leading space
  const CLI::App* app;
};

void collect(const CLI::App& app, const std::string& path, std::vector<Command>& out) {
  out.push_back({path, &app});
  for (const CLI::App* sub : visible_commands(app)) collect(*sub, path + " " + sub->get_name(), out);
}

}  // namespace

std::string bash_completion(const CLI::App& top, const std::string& version) {
  std::vector<Command> commands;
  collect(top, "", commands);

  std::ostringstream s;
  s << "# bash completion for habcast " << version << ".\n"
    << "# Generated at build time by habcast_docgen from habcast's own command line (what --help\n"
    << "# lists); do not edit. Installed as share/bash-completion/completions/habcast.\n"
    << "_habcast() {\n"
    << "  local cur=${COMP_WORDS[COMP_CWORD]} prev=\n"
    << "  ((COMP_CWORD > 0)) && prev=${COMP_WORDS[COMP_CWORD - 1]}\n"
    << "  # --option=value: bash splits the word at '=' (COMP_WORDBREAKS).\n"
    << "  if [[ $cur == = ]]; then\n"
    << "    cur=  # just after '=': prev is the option\n"
    << "  elif [[ $prev == = ]] && ((COMP_CWORD > 1)); then\n"
    << "    prev=${COMP_WORDS[COMP_CWORD - 2]}\n"
    << "  fi\n"
    << "  # The command being completed: the longest chain of command words typed so far.\n"
    << "  local path= i\n"
    << "  for ((i = 1; i < COMP_CWORD; i++)); do\n"
    << "    case \"$path ${COMP_WORDS[i]}\" in\n";
  for (const Command& c : commands)
    for (const CLI::App* sub : visible_commands(*c.app))
      s << "      \"" << checked_word(c.path + " " + sub->get_name()) << "\") path+=\" " << sub->get_name() << "\" ;;\n";
  s << "    esac\n"
    << "  done\n"
    << "  # The value of an option: its choices, nothing for a number, else file names (bash's default).\n"
    << "  case \"$path $prev\" in\n";
  for (const Command& c : commands) {
    for (const CLI::Option* opt : visible_options(*c.app, false)) {
      if (opt->get_expected_max() == 0 || opt->get_type_size_max() == 0) continue;  // a flag takes no value
      std::vector<std::string> patterns;
      for (const std::string& w : option_words(*opt)) patterns.push_back("\"" + c.path + " " + w + "\"");
      std::string pattern;
      for (const std::string& p : patterns) pattern += (pattern.empty() ? "" : "|") + p;
      const std::vector<std::string> choices = option_choices(*opt);
      if (!choices.empty())
        s << "    " << pattern << ") COMPREPLY=($(compgen -W \"" << joined(choices, " ") << "\" -- \"$cur\")); return ;;\n";
      else if (numeric_value(*opt))
        s << "    " << pattern << ") compopt +o default 2>/dev/null; COMPREPLY=(); return ;;\n";
      else
        s << "    " << pattern << ") COMPREPLY=(); return ;;\n";
    }
  }
  s << "  esac\n"
    << "  local options= commands=\n"
    << "  case \"$path\" in\n";
  for (const Command& c : commands) {
    std::vector<std::string> options;
    for (const CLI::Option* opt : visible_options(*c.app, false))
      for (const std::string& w : option_words(*opt)) options.push_back(w);
    std::vector<std::string> subs;
    for (const CLI::App* sub : visible_commands(*c.app)) subs.push_back(sub->get_name());
    s << "    \"" << checked_word(c.path) << "\") options=\"" << joined(options, " ") << "\" commands=\""
      << joined(subs, " ") << "\" ;;\n";
  }
  s << "  esac\n"
    << "  if [[ $cur == -* ]]; then\n"
    << "    COMPREPLY=($(compgen -W \"$options\" -- \"$cur\"))\n"
    << "  elif [[ -n $commands ]]; then\n"
    << "    COMPREPLY=($(compgen -W \"$commands\" -- \"$cur\"))\n"
    << "  else\n"
    << "    COMPREPLY=()  # an argument (model file, manifest...): bash's default, file names\n"
    << "  fi\n"
    << "}\n"
    << "complete -o default -F _habcast habcast\n";
  return s.str();
}

}  // namespace habcast::docgen
