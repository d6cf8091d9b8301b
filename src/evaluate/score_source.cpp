#include "evaluate/score_source.hpp"

#include <gdal_priv.h>

#include <cmath>
#include <limits>
#include <optional>

#include "core/base/error.hpp"
#include "core/base/number_text.hpp"
#include "core/model/evaluator.hpp"
#include "core/model/model_file.hpp"
#include "core/model/term_plan.hpp"
#include "core/prediction/block_predictor.hpp"
#include "raster/covariate_reader.hpp"
#include "raster/gdal_handles.hpp"

namespace habcast {

namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

class RasterScores final : public ScoreSource {
 public:
  explicit RasterScores(const std::string& path) : path_(path), grid_(read_grid(path, 1)), reader_(path, 1) {
    // predict records its model file; if it is still there, its training table can be checked.
    const DatasetPtr ds = open_input_raster(path);
    const char* model = ds->GetMetadataItem("HABCAST_MODEL");
    if (model && *model) {
      try {
        model_ = read_model_file(model);
      } catch (const Error&) {
        model_.reset();  // moved or changed since predict: the check is skipped, and the report says so
      }
    }
  }
  const ModelSpec* model() const override { return model_ ? &*model_ : nullptr; }
  PointSampling sampling() const override { return PointSampling::pixel; }
  const RasterGrid& grid() const override { return grid_; }
  std::string describe() const override { return path_; }
  std::vector<double> at_points(const std::vector<double>& x, const std::vector<double>& y,
                                const std::vector<std::uint8_t>& transformed, SampledPoints* status) override {
    SampledPoints s = sample_points(grid_, {{"prediction", path_, 1, false}}, x, y, transformed, false);
    std::vector<double> out(x.size());
    for (std::size_t i = 0; i < x.size(); ++i) out[i] = s.raw(static_cast<Eigen::Index>(i), 0);
    if (status) *status = std::move(s);
    return out;
  }
  void read(const Window& w, std::vector<double>& scores) override {
    scores.assign(static_cast<std::size_t>(w.pixels()), 0.0);
    std::vector<std::uint8_t> valid(scores.size(), 1);
    reader_.read(w, scores.data(), valid.data());
    for (std::size_t i = 0; i < scores.size(); ++i)
      if (!valid[i]) scores[i] = kNaN;
  }

 private:
  std::string path_;
  RasterGrid grid_;
  CovariateReader reader_;
  std::optional<ModelSpec> model_;
};

class ModelScores final : public ScoreSource {
 public:
  ModelScores(const std::string& model_path, const std::map<std::string, std::string>& overrides,
              const AlignmentOptions& alignment)
      : spec_(read_model_file(model_path)), plan_(spec_), evaluator_(spec_, 0.95), predictor_(spec_, plan_, evaluator_, nullptr) {
    for (const auto& [name, path] : overrides) {
      (void)path;
      if (spec_.covariate_index(name) < 0) throw UsageError("-c " + name + "=...: the model has no covariate \"" + name + "\"");
    }
    for (const Covariate& c : spec_.covariates) {
      std::string path;
      if (auto it = overrides.find(c.name); it != overrides.end()) path = it->second;
      else if (c.raster) path = *c.raster;
      else throw UsageError("covariate \"" + c.name + "\" has no raster: pass -c " + c.name + "=FILE.tif");
      inputs_.push_back({c.name, path, c.band, c.categorical});
    }
    std::vector<AlignmentInput> aligned;
    for (std::size_t i = 0; i < inputs_.size(); ++i)
      aligned.push_back({inputs_[i].name, inputs_[i].path, inputs_[i].band, inputs_[i].categorical, spec_.covariates[i].resampling});
    alignment_ = plan_alignment(aligned, alignment);
    grid_ = alignment_.target;
    for (std::size_t i = 0; i < inputs_.size(); ++i) readers_.push_back(open_covariate_source(alignment_, i));
  }
  const RasterGrid& grid() const override { return grid_; }
  std::string describe() const override {
    std::size_t warped = 0;
    for (const AlignedCovariate& c : alignment_.covariates) warped += c.warped ? 1 : 0;
    return spec_.path + " applied to " + count_of(static_cast<std::int64_t>(inputs_.size()), "covariate raster") +
           (warped > 0 ? " (" + std::to_string(warped) + " aligned by GDAL's warper onto " + alignment_.target_rule + ")" : "");
  }
  const ModelSpec* model() const override { return &spec_; }
  PointSampling sampling() const override { return spec_.sampling; }
  std::vector<double> at_points(const std::vector<double>& x, const std::vector<double>& y,
                                const std::vector<std::uint8_t>& transformed, SampledPoints* status) override {
    // The model's own sampling rule, so evaluate reads covariates at points exactly as fit did.
    SampledPoints s = sample_points(grid_, inputs_, readers_, x, y, transformed, spec_.sampling == PointSampling::bilinear);
    std::vector<std::uint8_t> valid(x.size());
    for (std::size_t i = 0; i < x.size(); ++i) valid[i] = s.status[i] == PointStatus::ok;
    std::vector<double> out = predict(s.raw, valid);
    if (status) *status = std::move(s);
    return out;
  }
  void read(const Window& w, std::vector<double>& scores) override {
    const auto n = static_cast<Eigen::Index>(w.pixels());
    Eigen::ArrayXXd raw(n, static_cast<Eigen::Index>(inputs_.size()));
    std::vector<std::uint8_t> valid(static_cast<std::size_t>(n), 1);
    for (std::size_t k = 0; k < readers_.size(); ++k) readers_[k]->read(w, raw.col(static_cast<Eigen::Index>(k)).data(), valid.data());
    scores = predict(raw, valid);
  }

 private:
  std::vector<double> predict(const Eigen::ArrayXXd& raw, const std::vector<std::uint8_t>& valid) {
    BlockOutputs out;
    PredictionTally tally(spec_.covariates.size());
    predictor_.run(raw, valid, raw.rows(), out, tally);
    std::vector<double> scores(static_cast<std::size_t>(raw.rows()));
    for (std::size_t i = 0; i < scores.size(); ++i)
      scores[i] = out.suitability[i] == kFloatNodata ? kNaN : static_cast<double>(out.suitability[i]);
    return scores;
  }

  ModelSpec spec_;
  TermPlan plan_;
  Evaluator evaluator_;
  BlockPredictor predictor_;
  std::vector<SamplingInput> inputs_;
  AlignmentPlan alignment_;
  std::vector<std::unique_ptr<CovariateSource>> readers_;
  RasterGrid grid_;
};

}  // namespace

std::unique_ptr<ScoreSource> ScoreSource::from_raster(const std::string& path) { return std::make_unique<RasterScores>(path); }

std::unique_ptr<ScoreSource> ScoreSource::from_model(const std::string& model_path,
                                                     const std::map<std::string, std::string>& overrides,
                                                     const AlignmentOptions& alignment) {
  return std::make_unique<ModelScores>(model_path, overrides, alignment);
}

}  // namespace habcast
