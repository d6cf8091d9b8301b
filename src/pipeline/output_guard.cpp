#include "pipeline/output_guard.hpp"

#include <filesystem>

#include "core/base/error.hpp"

namespace habcast {

void refuse_to_clobber(const std::vector<std::string>& paths, bool overwrite, const std::string& other_way) {
  if (overwrite) return;
  for (const std::string& path : paths)
    if (!path.empty() && std::filesystem::exists(path))
      throw UsageError(path + " already exists; pass --overwrite to replace it" + other_way);
}

}  // namespace habcast
