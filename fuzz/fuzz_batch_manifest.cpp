// Fuzzes the batch manifest reader: any text must give a BatchManifest or a habcast::Error (an
// InputError with file and line); anything else escaping, or a sanitizer report, is a bug.
#include <cstddef>
#include <cstdint>
#include <string>

#include "batch/manifest.hpp"
#include "core/base/error.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::string text(reinterpret_cast<const char*>(data), size);
  try {
    const habcast::BatchManifest manifest = habcast::parse_batch_manifest(text, "/fuzz/batch.toml");
    (void)manifest;
  } catch (const habcast::Error&) {
    // Rejected with a message: the expected outcome for most inputs.
  }
  return 0;
}
