#include "raster/creation_options.hpp"

#include <algorithm>
#include <cctype>

#include "core/base/error.hpp"

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

}  // namespace

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
