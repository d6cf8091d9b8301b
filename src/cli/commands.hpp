#pragma once
// Each command lives in its own file and registers itself here: its options on the CLI11 app and a
// function that runs it once parsing succeeded.
#include <CLI/CLI.hpp>
#include <functional>
#include <iosfwd>
#include <memory>
#include <vector>

namespace habcast::cli {

using CommandFn = std::function<int(std::ostream& out, std::ostream& err)>;

class CommandRegistry {
 public:
  void add(CLI::App* subcommand, CommandFn fn) { entries_.push_back({subcommand, std::move(fn)}); }
  /// Runs the command the user selected; returns its exit code.
  int run_selected(const CLI::App& app, std::ostream& out, std::ostream& err) const;

 private:
  struct Entry {
    CLI::App* subcommand;
    CommandFn fn;
  };
  std::vector<Entry> entries_;
};

/// Adds every command to `app`. Commands keep their option storage alive through the registry's
/// closures, so `app` and `registry` must outlive parsing and running.
void register_commands(CLI::App& app, CommandRegistry& registry);

// One per command file.
void register_predict(CLI::App& app, CommandRegistry& registry);
void register_fit(CLI::App& app, CommandRegistry& registry);
void register_evaluate(CLI::App& app, CommandRegistry& registry);
void register_describe(CLI::App& app, CommandRegistry& registry);

}  // namespace habcast::cli
