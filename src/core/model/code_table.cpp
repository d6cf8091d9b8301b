#include "core/model/code_table.hpp"

#include <algorithm>
#include <limits>

namespace habcast {

CodeTable::CodeTable(const std::vector<std::pair<std::int64_t, std::int32_t>>& entries, std::int32_t other)
    : other_(static_cast<double>(other)) {
  if (entries.empty()) return;
  const auto [lo, hi] = std::minmax_element(entries.begin(), entries.end());
  const std::int64_t low = lo->first, high = hi->first;
  // The span must fit, and so must every integer a lookup forms (codes up to high + 1, whose
  // difference from low indexes the table).
  constexpr std::int64_t kLimit = std::numeric_limits<std::int32_t>::max() - kMaxSpan;
  if (low < -kLimit || high > kLimit || high - low + 1 > kMaxSpan) return;
  first_ = static_cast<std::int32_t>(low);
  low_ = static_cast<double>(low);
  end_ = static_cast<double>(high + 1);
  table_.assign(static_cast<std::size_t>(high - low + 1), other);
  // Backwards, so that a code listed twice keeps its first entry (as a search from the front finds).
  for (auto e = entries.rbegin(); e != entries.rend(); ++e)
    table_[static_cast<std::size_t>(e->first - low)] = e->second;
}

}  // namespace habcast
