// Fuzzes the model-file reader: any text must give a ModelSpec or a habcast::Error (an InputError
// with file and line); anything else escaping, or a sanitizer report, is a bug.
#include <cstddef>
#include <cstdint>
#include <string>

#include "core/base/error.hpp"
#include "core/model/model_file.hpp"
#include "core/model/term_plan.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::string text(reinterpret_cast<const char*>(data), size);
  try {
    const habcast::ModelSpec spec = habcast::parse_model_text(text, "/fuzz/model.toml");
    // A file that parses must also compile into a term plan: predict does that next.
    const habcast::TermPlan plan(spec);
    (void)plan;
  } catch (const habcast::Error&) {
    // Rejected with a message: the expected outcome for most inputs.
  }
  return 0;
}
