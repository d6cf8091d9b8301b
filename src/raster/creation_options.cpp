#include "raster/creation_options.hpp"

#include <cpl_minixml.h>
#include <gdal.h>

#include <algorithm>
#include <cctype>
#include <cstdlib>
#include <map>

#include "core/base/error.hpp"
#include "raster/gdal_session.hpp"

namespace habcast {
namespace {

std::string upper(std::string text) {
  std::transform(text.begin(), text.end(), text.begin(),
                 [](unsigned char c) { return static_cast<char>(std::toupper(c)); });
  return text;
}

bool is_key_character(unsigned char c) { return std::isalnum(c) != 0 || c == '_'; }

CreationOption parse_option(const std::string& text, const std::string& output_path) {
  const auto equals = text.find('=');
  const bool well_formed = equals != std::string::npos && equals > 0 && equals + 1 < text.size() &&
                           std::all_of(text.begin(), text.begin() + static_cast<std::ptrdiff_t>(equals),
                                       [](char c) { return is_key_character(static_cast<unsigned char>(c)); });
  if (!well_formed) {
    throw UsageError(located(output_path, 0,
                             "the creation option \"" + text +
                                 "\" is not of the form KEY=VALUE. Write it like COMPRESS=ZSTD or BLOCKXSIZE=512."));
  }
  return {upper(text.substr(0, equals)), text.substr(equals + 1)};
}

// Compressions for which libtiff applies a predictor; with any other (NONE, JPEG, LERC, ...) our
// default PREDICTOR would be rejected or ignored, so a user choosing one should not have to also
// remove our predictor by hand.
bool takes_predictor(const std::string& compress) {
  const std::string method = upper(compress);
  return method == "DEFLATE" || method == "LZW" || method == "ZSTD" || method == "LZMA";
}

/// The GeoTIFF driver's own list of creation options: name -> (type, allowed values).
struct DriverOption {
  std::string type;
  std::vector<std::string> values;  ///< for string-select; upper case
};

std::map<std::string, DriverOption> gtiff_option_list() {
  ensure_gdal();
  std::map<std::string, DriverOption> options;
  GDALDriverH driver = GDALGetDriverByName("GTiff");
  const char* xml = driver ? GDALGetMetadataItem(driver, GDAL_DMD_CREATIONOPTIONLIST, nullptr) : nullptr;
  if (xml == nullptr) return options;
  CPLXMLNode* root = CPLParseXMLString(xml);
  if (root == nullptr) return options;
  for (const CPLXMLNode* node = root->psChild; node != nullptr; node = node->psNext) {
    if (node->eType != CXT_Element || std::string(node->pszValue) != "Option") continue;
    DriverOption option;
    option.type = CPLGetXMLValue(node, "type", "");
    for (const CPLXMLNode* value = node->psChild; value != nullptr; value = value->psNext)
      if (value->eType == CXT_Element && std::string(value->pszValue) == "Value")
        option.values.push_back(upper(CPLGetXMLValue(value, "", "")));
    options[upper(CPLGetXMLValue(node, "name", ""))] = std::move(option);
  }
  CPLDestroyXMLNode(root);
  return options;
}

}  // namespace

void check_creation_options(const std::vector<std::string>& user_options) {
  if (user_options.empty()) return;
  const std::map<std::string, DriverOption> known = gtiff_option_list();
  for (const std::string& text : user_options) {
    const auto [key, value] = parse_option(text, "--co " + text);
    const auto it = known.find(key);
    if (!known.empty() && it == known.end())
      throw UsageError("--co " + text + ": GDAL's GeoTIFF driver has no creation option " + key +
                       " (the driver's list: gdalinfo --format GTiff)");
    const std::string v = upper(value);
    if (it != known.end() && it->second.type == "string-select" && !it->second.values.empty() &&
        std::find(it->second.values.begin(), it->second.values.end(), v) == it->second.values.end()) {
      std::string allowed;
      for (const std::string& a : it->second.values) allowed += (allowed.empty() ? "" : ", ") + a;
      throw UsageError("--co " + text + ": " + key + " takes one of " + allowed);
    }
    if (it != known.end() && it->second.type == "int") {
      char* end = nullptr;
      const long number = std::strtol(value.c_str(), &end, 10);
      if (end == value.c_str() || *end != '\0' || number < 0)
        throw UsageError("--co " + text + ": " + key + " takes a whole number");
      // libtiff's rule for tiles (habcast's outputs are tiled): edges are multiples of 16.
      if ((key == "BLOCKXSIZE" || key == "BLOCKYSIZE") && (number < 16 || number % 16 != 0))
        throw UsageError("--co " + text + ": tile edges must be multiples of 16 (16, 256, 512 ...)");
    }
    // JPEG and WEBP hold 8-bit (JPEG also 12-bit) values only: habcast's Float32 outputs
    // (suitability, uncertainty, novelty) cannot be stored with them.
    if (key == "COMPRESS" && (v == "JPEG" || v == "WEBP" || v == "JXL"))
      throw UsageError("--co " + text + ": " + v + " cannot store the Float32 outputs (suitability, uncertainty); "
                       "choose DEFLATE, ZSTD, LZW or LERC_ZSTD, or --max-error for smaller lossy files");
  }
}

std::string option_value(const std::vector<CreationOption>& options, const std::string& key) {
  const auto found =
      std::find_if(options.begin(), options.end(), [&](const auto& option) { return option.first == key; });
  return found == options.end() ? std::string() : found->second;
}

std::vector<CreationOption> merged_creation_options(OutputType type, const std::vector<std::string>& user_options,
                                                    const std::string& output_path) {
  // Horizontal differencing (2) suits integer classes; floating-point prediction (3) suits
  // smooth float surfaces such as probabilities.
  std::vector<CreationOption> options = {{"TILED", "YES"},
                                         {"BLOCKXSIZE", "256"},
                                         {"BLOCKYSIZE", "256"},
                                         {"COMPRESS", "DEFLATE"},
                                         {"PREDICTOR", type == OutputType::float32 ? "3" : "2"},
                                         {"BIGTIFF", "IF_SAFER"},
                                         {"NUM_THREADS", "ALL_CPUS"}};
  bool user_predictor = false;
  for (const auto& text : user_options) {
    CreationOption option = parse_option(text, output_path);
    user_predictor = user_predictor || option.first == "PREDICTOR";
    const auto same_key = std::find_if(options.begin(), options.end(),
                                       [&](const auto& existing) { return existing.first == option.first; });
    if (same_key != options.end()) {
      same_key->second = std::move(option.second);
    } else {
      options.push_back(std::move(option));
    }
  }
  if (!user_predictor && !takes_predictor(option_value(options, "COMPRESS"))) {
    std::erase_if(options, [](const auto& option) { return option.first == "PREDICTOR"; });
  }
  return options;
}

}  // namespace habcast
