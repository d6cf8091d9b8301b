// Fuzzes the training-samples CSV reader against a fixed model, then builds the training domain
// from what it read (ranges and levels seen), as predict does.
#include <cstddef>
#include <cstdint>
#include <string>

#include "core/base/error.hpp"
#include "core/domain/training_domain.hpp"
#include "core/domain/training_samples.hpp"
#include "fuzz_specs.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::string text(reinterpret_cast<const char*>(data), size);
  const habcast::ModelSpec& spec = habcast::fuzz::fixed_spec();
  try {
    const habcast::TrainingSamples samples = habcast::parse_training_samples(text, "/fuzz/training.csv", spec);
    const habcast::TrainingDomain domain(spec, samples);
    (void)domain;
  } catch (const habcast::Error&) {
  }
  return 0;
}
