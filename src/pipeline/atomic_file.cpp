#include "pipeline/atomic_file.hpp"

#include <filesystem>
#include <fstream>
#include <system_error>

#include "core/base/error.hpp"
#include "raster/output_raster.hpp"

namespace habcast {

void write_file_atomically(const std::string& path, const std::string& content) {
  const std::string temporary = temporary_path_for(path);
  {
    std::ofstream out(temporary, std::ios::binary | std::ios::trunc);
    if (!out) throw IoError(path + ": cannot create " + temporary + "; check that the folder exists and is writable");
    out << content;
    out.flush();
    if (!out) {
      std::error_code ignored;
      std::filesystem::remove(temporary, ignored);
      throw IoError(path + ": writing failed (disk full?)");
    }
  }
  std::error_code ec;
  std::filesystem::rename(temporary, path, ec);
  if (ec) {
    std::error_code ignored;
    std::filesystem::remove(temporary, ignored);
    throw IoError(path + ": cannot rename the finished file into place: " + ec.message());
  }
}

void write_whole_file(const std::string& path, const std::string& content, const std::string& final_path) {
  const std::string& shown = final_path.empty() ? path : final_path;
  std::ofstream out(path, std::ios::binary | std::ios::trunc);
  if (!out) throw IoError(shown + ": cannot create " + path + "; check that the folder exists and is writable");
  out << content;
  out.flush();
  if (!out) throw IoError(shown + ": writing failed (disk full?); the earlier outputs are unchanged");
}

}  // namespace habcast
