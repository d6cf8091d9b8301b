#include "render/png_writer.hpp"

#include <gdal_priv.h>

#include <cstdio>
#include <filesystem>
#include <memory>

#include "core/base/error.hpp"
#include "raster/gdal_handles.hpp"
#include "raster/gdal_session.hpp"

namespace habcast {

namespace {

/// Removes the temporary file unless released: an error leaves no half-written PNG behind.
class TemporaryFile {
 public:
  explicit TemporaryFile(std::string path) : path_(std::move(path)) {}
  ~TemporaryFile() {
    if (!path_.empty()) {
      std::error_code ignored;
      std::filesystem::remove(path_, ignored);
      std::filesystem::remove(path_ + ".aux.xml", ignored);
    }
  }
  TemporaryFile(const TemporaryFile&) = delete;
  TemporaryFile& operator=(const TemporaryFile&) = delete;
  void release() { path_.clear(); }

 private:
  std::string path_;
};

}  // namespace

void write_png(const Canvas& canvas, const std::string& path, const std::vector<std::pair<std::string, std::string>>& metadata) {
  ensure_gdal();
  GDALDriver* mem = GetGDALDriverManager()->GetDriverByName("MEM");
  GDALDriver* png = GetGDALDriverManager()->GetDriverByName("PNG");
  if (!mem || !png) throw IoError(path + ": GDAL was built without its MEM or PNG driver; cannot write PNG images");

  DatasetPtr image(mem->Create("", canvas.width(), canvas.height(), 3, GDT_Byte, nullptr));
  if (!image) throw IoError(path + ": cannot create an in-memory image: " + gdal_reason());
  int bands[3] = {1, 2, 3};
  // RasterIO does not write through the pointer, but its signature takes void*.
  void* data = const_cast<std::uint8_t*>(canvas.pixels().data());
  if (image->RasterIO(GF_Write, 0, 0, canvas.width(), canvas.height(), data, canvas.width(), canvas.height(), GDT_Byte,
                      3, bands, 0, 0, 0, nullptr) != CE_None)
    throw IoError(path + ": cannot fill the in-memory image: " + gdal_reason());
  for (const auto& [key, value] : metadata) image->SetMetadataItem(key.c_str(), value.c_str());

  const std::filesystem::path final_path(path);
  const std::string temporary = (final_path.parent_path() / ("." + final_path.filename().string() + ".partial.png")).string();
  TemporaryFile guard(temporary);
  take_gdal_error();
  CPLErrorReset();
  GDALDataset* copy = png->CreateCopy(temporary.c_str(), image.get(), FALSE, nullptr, nullptr, nullptr);
  if (!copy) throw IoError(path + ": cannot write the PNG (" + gdal_reason() + "); check that the folder exists and is writable");
  // GDALClose returns nothing in GDAL 3.6; a failed flush shows only as the thread's last error.
  GDALClose(GDALDataset::ToHandle(copy));
  const CPLErr last = CPLGetLastErrorType();
  if (last == CE_Failure || last == CE_Fatal) throw IoError(path + ": writing the PNG failed (" + gdal_reason() + ")");
  std::error_code ec;
  std::filesystem::remove(temporary + ".aux.xml", ec);
  std::filesystem::rename(temporary, final_path, ec);
  if (ec) throw IoError(path + ": cannot move the finished PNG into place: " + ec.message());
  guard.release();
}

}  // namespace habcast
