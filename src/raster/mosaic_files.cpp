#include "raster/mosaic_files.hpp"

#include <cpl_error.h>
#include <cpl_minixml.h>
#include <gdal_priv.h>
#include <gdal_rat.h>
#include <gdal_utils.h>

#include <algorithm>
#include <filesystem>
#include <memory>

#include "core/base/error.hpp"
#include "raster/gdal_handles.hpp"
#include "raster/gdal_session.hpp"
#include "raster/output_raster.hpp"

namespace habcast {

namespace {

struct BuildVrtOptionsFree {
  void operator()(GDALBuildVRTOptions* o) const noexcept { GDALBuildVRTOptionsFree(o); }
};
struct TranslateOptionsFree {
  void operator()(GDALTranslateOptions* o) const noexcept { GDALTranslateOptionsFree(o); }
};

/// Closes a dataset GDAL created and reports whether the close (where writes are flushed) worked.
bool close_checked(GDALDatasetH dataset) {
  if (!dataset) return false;
  // GDAL 3.6's GDALClose returns nothing; a failed flush shows up only as the last error.
  take_gdal_error();
  CPLErrorReset();
  GDALClose(dataset);
  const CPLErr last = CPLGetLastErrorType();
  return last != CE_Failure && last != CE_Fatal;
}

/// Gives each band of the mosaic what GDALBuildVRT leaves out: the first tile's band description,
/// unit, category names and attribute table (flag names live in the tiles' .aux.xml sidecars,
/// which a VRT does not read), and its colour table where the VRT has none.
void copy_band_labels(GDALDatasetH vrt, const std::string& first_tile) {
  DatasetPtr tile = open_input_raster(first_tile);
  // GDAL 3.6's GeoTIFF driver reads the .aux.xml sidecar lazily, on the first georeferencing or
  // metadata request; category names alone do not trigger it, so ask first.
  double transform[6];
  tile->GetGeoTransform(transform);
  auto* mosaic = GDALDataset::FromHandle(vrt);
  const int bands = std::min(mosaic->GetRasterCount(), tile->GetRasterCount());
  for (int b = 1; b <= bands; ++b) {
    GDALRasterBand* from = tile->GetRasterBand(b);
    GDALRasterBand* to = mosaic->GetRasterBand(b);
    to->SetDescription(from->GetDescription());
    to->SetUnitType(from->GetUnitType());
    if (char** names = from->GetCategoryNames()) to->SetCategoryNames(names);
    if (to->GetColorTable() == nullptr && from->GetColorTable() != nullptr) to->SetColorTable(from->GetColorTable());
    if (const GDALRasterAttributeTable* table = from->GetDefaultRAT()) to->SetDefaultRAT(table);
  }
}

struct XmlFree {
  void operator()(CPLXMLNode* n) const noexcept { CPLDestroyXMLNode(n); }
};

/// `path` relative to `from_folder` when it lies within `root` (both as written: absolute,
/// normalised paths); empty otherwise.
std::string relative_within(const std::string& path, const std::string& from_folder, const std::string& root) {
  const std::filesystem::path p = std::filesystem::path(path).lexically_normal();
  const std::filesystem::path r = std::filesystem::path(root).lexically_normal();
  if (!p.is_absolute() || !r.is_absolute()) return "";
  const std::filesystem::path inside = p.lexically_relative(r);
  if (inside.empty() || *inside.begin() == "..") return "";
  return p.lexically_relative(std::filesystem::path(from_folder).lexically_normal()).generic_string();
}

/// Rewrites the VRT so that every absolute source path within `root` is stored relative to the
/// VRT's folder (GDAL 3.6 does so only for sources below that folder).
void relativise_sources(const std::string& vrt_path, const std::string& root) {
  std::unique_ptr<CPLXMLNode, XmlFree> tree(CPLParseXMLFile(vrt_path.c_str()));
  if (!tree) throw IoError(vrt_path + ": cannot read back the mosaic just written (" + gdal_reason() + ")");
  const std::string folder = std::filesystem::path(vrt_path).parent_path().string();
  bool changed = false;
  // Depth-first over the element tree; SourceFilename elements carry the path as their text.
  std::vector<CPLXMLNode*> stack;
  for (CPLXMLNode* top = tree.get(); top != nullptr; top = top->psNext)
    if (top->eType == CXT_Element) stack.push_back(top);
  while (!stack.empty()) {
    CPLXMLNode* node = stack.back();
    stack.pop_back();
    for (CPLXMLNode* child = node->psChild; child != nullptr; child = child->psNext)
      if (child->eType == CXT_Element) stack.push_back(child);
    if (node->eType != CXT_Element || !EQUAL(node->pszValue, "SourceFilename")) continue;
    if (!EQUAL(CPLGetXMLValue(node, "relativeToVRT", "0"), "0")) continue;
    for (CPLXMLNode* child = node->psChild; child != nullptr; child = child->psNext) {
      if (child->eType != CXT_Text) continue;
      const std::string relative = relative_within(child->pszValue, folder, root);
      if (relative.empty()) break;
      CPLFree(child->pszValue);
      child->pszValue = CPLStrdup(relative.c_str());
      CPLSetXMLValue(node, "#relativeToVRT", "1");
      changed = true;
      break;
    }
  }
  if (!changed) return;
  if (!CPLSerializeXMLTreeToFile(tree.get(), vrt_path.c_str()))
    throw IoError(vrt_path + ": writing the mosaic's relative source paths failed (" + gdal_reason() + ")");
}

int CPL_STDCALL ask_keep_going(double, const char*, void* data) {
  return (*static_cast<const std::function<bool()>*>(data))() ? TRUE : FALSE;
}

}  // namespace

void build_vrt(const std::string& vrt_path, const std::vector<std::string>& sources, const std::string& relative_root) {
  ensure_gdal();
  if (sources.empty()) throw IoError(vrt_path + ": no finished tile to build the mosaic from");
  std::vector<const char*> names;
  for (const std::string& s : sources) names.push_back(s.c_str());
  // Nearest neighbour: tiles share the grid, so nothing is resampled; this only guards against a
  // tile whose resolution differs slightly, which must not blur the mosaic.
  const char* argv[] = {"-r", "nearest", nullptr};
  std::unique_ptr<GDALBuildVRTOptions, BuildVrtOptionsFree> options(
      GDALBuildVRTOptionsNew(const_cast<char**>(argv), nullptr));
  int usage_error = 0;
  take_gdal_error();
  GDALDatasetH vrt = GDALBuildVRT(vrt_path.c_str(), static_cast<int>(names.size()), nullptr, names.data(),
                                  options.get(), &usage_error);
  if (!vrt) throw IoError(vrt_path + ": building the mosaic failed (" + gdal_reason() + ")");
  try {
    copy_band_labels(vrt, sources.front());
  } catch (...) {
    GDALClose(vrt);
    throw;
  }
  if (!close_checked(vrt)) throw IoError(vrt_path + ": writing the mosaic failed (" + gdal_reason() + ")");
  if (!relative_root.empty()) relativise_sources(vrt_path, relative_root);
}

void write_cog(const std::string& source, const std::string& cog_path, const std::string& overview_resampling,
               const std::function<bool()>& keep_going) {
  ensure_gdal();
  DatasetPtr input = open_input_raster(source);
  const std::string resampling = "OVERVIEW_RESAMPLING=" + overview_resampling;
  const char* argv[] = {"-of", "COG", "-co", "COMPRESS=DEFLATE", "-co", "BIGTIFF=IF_SAFER", "-co", "NUM_THREADS=ALL_CPUS",
                        "-co", resampling.c_str(), nullptr};
  std::unique_ptr<GDALTranslateOptions, TranslateOptionsFree> options(
      GDALTranslateOptionsNew(const_cast<char**>(argv), nullptr));
  GDALTranslateOptionsSetProgress(options.get(), ask_keep_going, const_cast<std::function<bool()>*>(&keep_going));
  int usage_error = 0;
  take_gdal_error();
  GDALDatasetH cog = GDALTranslate(cog_path.c_str(), GDALDataset::ToHandle(input.get()), options.get(), &usage_error);
  if (!cog) throw IoError(cog_path + ": writing the Cloud Optimized GeoTIFF failed (" + gdal_reason() + ")");
  if (!close_checked(cog)) throw IoError(cog_path + ": writing the Cloud Optimized GeoTIFF failed (" + gdal_reason() + ")");
}

}  // namespace habcast
