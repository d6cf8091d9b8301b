#include "manual_page.hpp"

#include <sstream>

#include "command_tree.hpp"

namespace habcast::docgen {

namespace {

// Where an installation puts what --help refers to by its place in the source tree.
constexpr const char* kFiles =
    ".TP\n"
    "\\fIPREFIX\\fR/share/doc/habcast/\n"
    "The documents this page names as docs/*.md (model file format, exit codes, report, batch\n"
    "manifest, limits), and README.md. \\fIPREFIX\\fR is /usr for the Debian package and\n"
    "/usr/local, or the \\-\\-prefix given, for cmake \\-\\-install.\n"
    ".TP\n"
    "\\fIPREFIX\\fR/share/habcast/sample\\-rasters/\n"
    "Invented demo data (no real place or species): try\n"
    "\\fBhabcast predict\\fR \\fIPREFIX\\fR/share/habcast/sample\\-rasters/demo\\-model.toml \\-o out/\n"
    ".TP\n"
    "\\fIPREFIX\\fR/share/habcast/exporters/\n"
    "export_habcast_model.R and export_habcast_model.py: write a GLM fitted in R or Python\n"
    "(statsmodels) as a habcast model file.\n";

std::string page_name(const std::string& path) {
  std::string name = path;
  for (char& c : name)
    if (c == ' ') c = '-';
  return name;
}

std::string upper(std::string s) {
  for (char& c : s)
    if (c >= 'a' && c <= 'z') c = static_cast<char>(c - 'a' + 'A');
  return s;
}

std::string quoted(const std::string& s) { return "\"" + s + "\""; }

// A whatis entry reads as a phrase: "map a fitted model ...", but "AUC ..." keeps its capitals.
std::string whatis(const std::string& description) {
  std::string s = description.substr(0, description.find('\n'));
  if (s.size() > 1 && s[0] >= 'A' && s[0] <= 'Z' && s[1] >= 'a' && s[1] <= 'z') s[0] = static_cast<char>(s[0] - 'A' + 'a');
  return s;
}

// Filled text: roff joins its lines; a blank line becomes vertical space.
void filled(std::ostringstream& out, const std::string& text) {
  std::istringstream lines(text);
  std::string line;
  while (std::getline(lines, line)) out << (line.empty() ? ".sp" : roff_escape(line)) << "\n";
}

// Text laid out by hand in --help (aligned tables, examples): kept line for line.
void preformatted(std::ostringstream& out, const std::string& text) {
  std::string trimmed = text;
  while (!trimmed.empty() && (trimmed.back() == '\n' || trimmed.back() == ' ')) trimmed.pop_back();
  while (!trimmed.empty() && trimmed.front() == '\n') trimmed.erase(0, 1);
  if (trimmed.empty()) return;
  out << ".nf\n";
  filled(out, trimmed);
  out << ".fi\n";
}

// One option as --help shows it: "-c,--covariate TEXT ..." in bold/italic, then its description.
void option_entry(std::ostringstream& out, const CLI::Formatter& f, const CLI::Option& opt, bool positional) {
  out << ".TP\n\\fB" << roff_escape(f.make_option_name(&opt, positional)) << "\\fR";
  const std::string opts = f.make_option_opts(&opt);
  if (!opts.empty()) out << "\\fI" << roff_escape(opts) << "\\fR";
  out << "\n";
  const std::string desc = f.make_option_desc(&opt);
  filled(out, desc.empty() ? std::string("(no description)") : desc);
}

void options_section(std::ostringstream& out, const CLI::Formatter& f, const CLI::App& app) {
  const auto positionals = visible_options(app, true);
  if (!positionals.empty()) {
    out << ".SH ARGUMENTS\n";
    for (const CLI::Option* opt : positionals) option_entry(out, f, *opt, true);
  }
  bool heading = false;
  for (const std::string& group : app.get_groups()) {
    std::vector<const CLI::Option*> in_group;
    for (const CLI::Option* opt : visible_options(app, false))
      if (opt->get_group() == group) in_group.push_back(opt);
    if (in_group.empty()) continue;
    if (!heading) out << ".SH OPTIONS\n";
    heading = true;
    if (group != "Options") out << ".SS " << quoted(roff_escape(group)) << "\n";
    for (const CLI::Option* opt : in_group) option_entry(out, f, *opt, false);
  }
}

void commands_section(std::ostringstream& out, const CLI::App& app, const std::string& path) {
  const auto commands = visible_commands(app);
  if (commands.empty()) return;
  out << ".SH COMMANDS\n";
  for (const CLI::App* sub : commands) {
    out << ".TP\n\\fB" << roff_escape(sub->get_name()) << "\\fR\n";
    filled(out, sub->get_description());
    out << ".br\nSee \\fB" << roff_escape(page_name(path + " " + sub->get_name())) << "\\fR(1).\n";
  }
}

void add_pages(const CLI::App& app, const std::string& path, const std::string& parent, const ManualInfo& info,
               std::vector<std::pair<std::string, std::string>>& pages) {
  const auto f = formatter_of(app);
  const std::string name = page_name(path);
  const bool top = parent.empty();
  std::ostringstream out;
  out << ".\\\" Generated at build time by habcast_docgen from habcast's own command line (the text of\n"
      << ".\\\" --help). Do not edit: change the help text in src/cli instead.\n";
  out << ".TH " << quoted(roff_escape(upper(name))) << " 1 " << quoted(info.date) << " "
      << quoted("habcast " + info.version) << " " << quoted("habcast manual") << "\n";
  out << ".nh\n";  // no hyphenation: option and file names must read (and paste) whole
  out << ".SH NAME\n"
      << roff_escape(name) << " \\- " << roff_escape(top ? info.summary : whatis(app.get_description())) << "\n";

  std::string usage = f->make_usage(&app, path);
  const std::string label = "Usage: " + path;
  if (usage.rfind(label, 0) == 0) usage = usage.substr(label.size());
  while (!usage.empty() && (usage.back() == '\n' || usage.back() == ' ')) usage.pop_back();
  while (!usage.empty() && usage.front() == ' ') usage.erase(0, 1);
  out << ".SH SYNOPSIS\n.B " << roff_escape(path) << "\n" << roff_escape(usage) << "\n";

  out << ".SH DESCRIPTION\n";
  if (top) {
    preformatted(out, app.get_description());
  } else {
    filled(out, app.get_description());
    const std::string footer = app.get_footer();
    if (!footer.empty()) {
      out << ".PP\n";
      preformatted(out, footer);
    }
  }
  options_section(out, *f, app);
  commands_section(out, app, path);
  out << ".SH FILES\n" << kFiles;
  out << ".SH SEE ALSO\n";
  std::vector<std::string> see;
  if (!top) see.push_back(page_name(parent));
  for (const CLI::App* sub : visible_commands(app)) see.push_back(page_name(path + " " + sub->get_name()));
  if (top && see.empty()) see.push_back("habcast");
  for (std::size_t i = 0; i < see.size(); ++i)
    out << ".BR " << roff_escape(see[i]) << " (1)" << (i + 1 < see.size() ? "," : "") << "\n";
  pages.emplace_back(name + ".1", out.str());

  for (const CLI::App* sub : visible_commands(app)) add_pages(*sub, path + " " + sub->get_name(), path, info, pages);
}

}  // namespace

std::string roff_escape(const std::string& text) {
  std::string out;
  out.reserve(text.size() + text.size() / 8);
  bool line_start = true;
  for (char c : text) {
    if (line_start && (c == '.' || c == '\'')) out += "\\&";
    if (c == '\\')
      out += "\\e";
    else if (c == '-')
      out += "\\-";
    else
      out += c;
    line_start = c == '\n';
  }
  return out;
}

std::vector<std::pair<std::string, std::string>> manual_pages(const CLI::App& top, const ManualInfo& info) {
  std::vector<std::pair<std::string, std::string>> pages;
  add_pages(top, top.get_name(), "", info, pages);
  return pages;
}

}  // namespace habcast::docgen
