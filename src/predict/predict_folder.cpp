#include "predict/predict_folder.hpp"

#include <filesystem>
#include <fstream>
#include <map>

#include "core/base/error.hpp"
#include "pipeline/output_guard.hpp"
#include "pipeline/output_set.hpp"
#include "pipeline/run_files.hpp"
#include "raster/output_raster.hpp"

namespace habcast {

namespace {

namespace fs = std::filesystem;

void write_file_or_throw(const std::string& path, const std::string& text, const std::string& final_path) {
  std::ofstream out(path, std::ios::binary | std::ios::trunc);
  out << text;
  out.flush();
  if (!out) throw IoError(final_path + ": writing failed (disk full?); the earlier outputs are unchanged");
}

bool same_folder(const std::string& a, const std::string& b) { return real_path(a) == real_path(b); }

std::string parent_of(const std::string& path) {
  const fs::path parent = fs::path(path).parent_path();
  return parent.empty() ? std::string(".") : parent.string();
}

}  // namespace

const std::vector<std::string>& predict_owned_names() {
  static const std::vector<std::string> names = [] {
    std::vector<std::string> v;
    for (const char* raster : {"suitability.tif", "uncertainty.tif", "extrapolation.tif", "novelty.tif", "least_similar.tif"}) {
      v.emplace_back(raster);
      v.push_back(sidecar_of(raster));
    }
    for (const char* unit_file : {"units.gpkg", "units.csv", "units.json"}) v.emplace_back(unit_file);
    v.emplace_back("report.json");
    return v;
  }();
  return names;
}

void check_predict_files(const PredictOptions& options, const ModelSpec& spec, const std::vector<CovariateInput>& inputs) {
  RunFiles files;
  files.input("model file", spec.path);
  if (spec.training_samples) files.input("training samples", *spec.training_samples);
  for (const CovariateInput& in : inputs) files.input("raster of covariate " + in.name, in.path);
  for (const std::string& name : predict_owned_names())
    files.output("output " + name, (fs::path(options.output_dir) / name).string());
  files.output("--quicklook", options.quicklook_path);
  if (options.units.active()) {
    files.input("--units", options.units.layer.path);
    if (!options.units.threshold_text.empty() && fs::exists(options.units.threshold_text))
      files.input("--units-threshold", options.units.threshold_text);
  }
  files.output("--units-map", options.units.map_path);
  files.check();
}

PredictFolder::PredictFolder(const PredictOptions& options) {
  const std::string& dir = options.output_dir;
  std::error_code ec;
  fs::create_directories(dir, ec);
  if (ec || !fs::is_directory(dir))
    throw IoError(dir + ": cannot create the output folder: " + (ec ? ec.message() : "not a folder"));
  lock_ = std::make_unique<FolderLock>(dir);
  if (lock_->held()) {
    // Only under the lock is a leftover surely a dead run's: finish its set, drop its temporaries.
    recover_output_sets(dir);
    remove_stale_partials(dir, predict_owned_names());
  }
  std::vector<std::string> existing;
  for (const std::string& name : predict_owned_names()) existing.push_back((fs::path(dir) / name).string());
  refuse_to_clobber(existing, options.overwrite,
                    " (the old outputs stay until the new ones are complete, then are replaced as a set), or choose "
                    "another output folder with -o");
  if (!options.quicklook_path.empty())
    refuse_to_clobber({options.quicklook_path}, options.overwrite, ", or choose another --quicklook path");
  if (!options.units.map_path.empty())
    refuse_to_clobber({options.units.map_path}, options.overwrite, ", or choose another --units-map path");
}

struct PredictCommit::Impl {
  std::string folder;
  std::string quicklook_path;
  OutputSet set;
  std::map<std::string, std::string> finished;  ///< final path -> temporary path
  std::string outside_quicklook;                ///< temporary quicklook outside the folder
  explicit Impl(const PredictOptions& o)
      : folder(o.output_dir), quicklook_path(o.quicklook_path), set(o.output_dir, "predict", predict_owned_names()) {}
  ~Impl() {
    if (!outside_quicklook.empty() && !crash_simulated()) {
      std::error_code ignored;
      fs::remove(outside_quicklook, ignored);
    }
  }
};

PredictCommit::PredictCommit(const PredictOptions& options) : impl_(std::make_unique<Impl>(options)) {}
PredictCommit::~PredictCommit() = default;

void PredictCommit::take_rasters(const std::vector<OutputRaster*>& rasters) {
  for (OutputRaster* r : rasters) {
    const std::string temporary = r->hand_over();
    const std::string name = fs::path(r->final_path()).filename().string();
    impl_->set.add(temporary, name);
    impl_->finished[r->final_path()] = temporary;
    std::error_code ec;
    if (fs::exists(sidecar_of(temporary), ec)) impl_->set.add(sidecar_of(temporary), sidecar_of(name));
  }
}

std::string PredictCommit::finished(const std::string& final_path) const {
  const auto it = impl_->finished.find(final_path);
  return it == impl_->finished.end() ? std::string() : it->second;
}

std::string PredictCommit::add_quicklook(const std::function<void(const std::string& png_path)>& draw) {
  const std::string& path = impl_->quicklook_path;
  if (path.empty()) return "";
  const std::string temporary = temporary_path_for(path);
  const bool inside = same_folder(parent_of(path), impl_->folder);
  if (!inside) impl_->outside_quicklook = temporary;
  try {
    draw(temporary);
  } catch (const Error& e) {
    std::error_code ignored;
    fs::remove(temporary, ignored);
    impl_->outside_quicklook.clear();
    return std::string("no quicklook was written: ") + e.what();
  }
  if (inside) impl_->set.add(temporary, fs::path(path).filename().string());
  return "";
}

void PredictCommit::add_written(const std::string& final_path, const std::function<void(const std::string&)>& write) {
  const std::string temporary = temporary_path_for(final_path);
  impl_->set.add(temporary, fs::path(final_path).filename().string());
  write(temporary);
}

void PredictCommit::add_report(const std::string& report_path, const std::string& text) {
  const std::string temporary = temporary_path_for(report_path);
  impl_->set.add(temporary, fs::path(report_path).filename().string());
  write_file_or_throw(temporary, text, report_path);
}

void PredictCommit::commit() {
  impl_->set.commit();
  if (!impl_->outside_quicklook.empty()) {
    std::error_code ec;
    fs::rename(impl_->outside_quicklook, impl_->quicklook_path, ec);
    if (ec)
      throw IoError(impl_->quicklook_path + ": cannot rename the finished quicklook into place (" + ec.message() +
                    "); the rasters and report are complete");
    impl_->outside_quicklook.clear();
  }
}

}  // namespace habcast
