#include "core/model/resampling.hpp"

namespace habcast {

const char* to_string(Resampling method) {
  switch (method) {
    case Resampling::nearest: return "nearest";
    case Resampling::bilinear: return "bilinear";
    case Resampling::cubic: return "cubic";
    case Resampling::average: return "average";
    case Resampling::mode: return "mode";
  }
  return "nearest";
}

std::optional<Resampling> parse_resampling(const std::string& text) {
  for (Resampling m : {Resampling::nearest, Resampling::bilinear, Resampling::cubic, Resampling::average, Resampling::mode})
    if (text == to_string(m)) return m;
  return std::nullopt;
}

const char* resampling_names() { return "nearest, bilinear, cubic, average, mode"; }

bool mixes_values(Resampling method) {
  return method == Resampling::bilinear || method == Resampling::cubic || method == Resampling::average;
}

}  // namespace habcast
