// `habcast batch`: options -> BatchOptions -> run_batch -> summary on stdout.
#include <unistd.h>

#include <iostream>
#include <memory>

#include "batch/batch_run.hpp"
#include "cli/alignment_args.hpp"
#include "cli/commands.hpp"
#include "core/base/error.hpp"
#include "pipeline/stop_signal.hpp"

namespace habcast::cli {

namespace {

constexpr const char* kBatchHelp =
    "Run predict on every tile of a region described by a manifest (docs/batch.md), then build a\n"
    "mosaic of each output layer (OUT/*.vrt) and a region report (OUT/batch-report.json and\n"
    ".csv). Each tile's outputs go to OUT/tiles/<id>/ with a record of what they were made from; a\n"
    "re-run skips tiles whose record still matches and redoes those whose inputs, model or options\n"
    "changed, that were interrupted, or whose outputs no longer verify. A tile that fails is\n"
    "reported and skipped; the others go on.\n\n"
    "A manifest may also name a model set (models = [...], as predict M1 M2) and scenarios\n"
    "([[scenario]] with each tile's rasters by pattern or table, as predict --scenarios): each tile\n"
    "then runs its baseline and every scenario in one pass, and the region gets OUT/baseline/ and\n"
    "OUT/<scenario>/ mosaics (with change and change_class) and per-scenario totals in the report.\n\n"
    "On a cluster, run one process per shard (--shard K/N, e.g. a Slurm job array), then once\n"
    "--mosaic-only; scripts/slurm/ has an example. Shards split the tiles; each task runs every\n"
    "scenario of its tiles.\n\n"
    "Examples:\n"
    "  habcast batch sample-rasters/batch-demo.toml\n"
    "  habcast batch region.toml --shard 3/16 --threads 8\n"
    "  habcast batch region.toml --mosaic-only --cog\n\n"
    "Exit codes: 0 all tiles done, 2 usage, 3 bad manifest or model, 4 read/write failure,\n"
    "            5 all done but the region is more extrapolated than max_extrapolated,\n"
    "            6 some tiles failed or are not done, 130/143 interrupted.";

struct BatchArgs {
  BatchOptions options;
  std::string shard;
  std::string log_format = "text";
  bool quiet = false;
  AlignmentArgs alignment;
};

void print_summary(const BatchSummary& s, const BatchOptions& options, std::ostream& out) {
  const std::size_t n = s.tiles.size();
  out << (options.shard ? "Shard " + std::to_string(options.shard->index) + "/" + std::to_string(options.shard->count) + ": "
                        : std::string("Region: "))
      << n << " tiles; " << s.ran << " run, " << s.up_to_date << " up to date";
  const int other = static_cast<int>(n) - s.ran - s.up_to_date - s.failed;
  if (s.failed > 0) out << ", " << s.failed << " failed";
  if (other > 0) out << ", " << other << " not done";
  out << ".\n";
  for (const TileOutcome& t : s.tiles)
    if (t.status != "done" && t.status != "up_to_date") out << "  " << t.id << ": " << t.status << ": " << t.reason << "\n";
  if (!s.outputs.empty()) {
    out << "Outputs:\n";
    for (const std::string& p : s.outputs) out << "  " << p << "\n";
  }
}

int run_batch_command(BatchArgs& args, std::ostream& out, std::ostream& err) {
  if (!args.shard.empty()) args.options.shard = parse_shard(args.shard);
  ProgressStyle style = ProgressStyle::automatic;
  if (args.log_format == "json") style = ProgressStyle::json;
  else if (args.quiet) style = ProgressStyle::quiet;
  const bool terminal = &err == &std::cerr && isatty(STDERR_FILENO) != 0;
  std::unique_ptr<Progress> progress = make_progress(style, err, terminal);

  StopSignalGuard guard;
  args.options.alignment = alignment_options(args.alignment);
  const BatchSummary summary = run_batch(args.options, *progress, HABCAST_VERSION);
  for (const std::string& w : summary.warnings) progress->message("warning", w);
  if (args.log_format == "json") {
    if (!summary.report.is_null()) out << summary.report.dump() << "\n";
  } else if (!args.quiet) {
    print_summary(summary, args.options, out);
  }
  return summary.exit_code;
}

}  // namespace

void register_batch(CLI::App& app, CommandRegistry& registry) {
  auto args = std::make_shared<BatchArgs>();
  CLI::App* cmd = app.add_subcommand("batch", "Map a model over many tiles: resumable, shardable, with mosaic and report");
  cmd->footer(kBatchHelp);
  cmd->add_option("manifest", args->options.manifest_path, "Batch manifest (TOML; see docs/batch.md)")
      ->required()
      ->check(CLI::ExistingFile);
  cmd->add_option("-o,--output", args->options.output_dir, "Output folder, overriding the manifest's output");
  cmd->add_option("--threads", args->options.threads, "Threads in all (0 = all cores)")->default_val(0)->check(CLI::NonNegativeNumber);
  cmd->add_option("--tile-workers", args->options.tile_workers,
                  "Tiles run at once (0 = as many as threads; each gets threads / tile-workers threads)")
      ->default_val(0)
      ->check(CLI::NonNegativeNumber);
  cmd->add_option("--shard", args->shard, "K/N: run only the K-th of N fixed shares of the tiles (1 <= K <= N)");
  cmd->add_flag("--mosaic-only", args->options.mosaic_only, "Run no tile: build the mosaic and report from the tiles' records");
  cmd->add_flag("--cog", args->options.cog, "Also write each mosaic layer as one Cloud Optimized GeoTIFF");
  cmd->add_flag("--force", args->options.force, "Redo every tile, even those whose record is up to date");
  cmd->add_flag("-q,--quiet", args->quiet, "No progress and no summary; warnings still go to stderr");
  cmd->add_option("--log-format", args->log_format,
                  "text (default) or json: JSON lines of progress on stderr, region report on stdout")
      ->check(CLI::IsMember({"text", "json"}));
  add_alignment_options(*cmd, args->alignment, false);
  registry.add(cmd, [args](std::ostream& out, std::ostream& err) { return run_batch_command(*args, out, err); });
}

}  // namespace habcast::cli
