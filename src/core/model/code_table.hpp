#pragma once
// Level codes as raster values, looked up without a branch or a search: a table with one entry for
// every whole number from the smallest code to the largest, so that a loop over pixels finds a
// value's entry by converting it to an integer and loading (a gather, once the loop vectorises).
#include <cstdint>
#include <utility>
#include <vector>

namespace habcast {

class CodeTable {
 public:
  /// Codes spanning more whole numbers than this (or lying beyond 32-bit integers) get no table;
  /// their callers search instead. 4,096 entries of 4 bytes stay in the first-level cache.
  static constexpr std::int64_t kMaxSpan = 4096;

  CodeTable() = default;
  /// `entries`: (code, entry) pairs (a code listed twice keeps its first entry); every other value,
  /// whole or not, finite or not, gets `other`.
  CodeTable(const std::vector<std::pair<std::int64_t, std::int32_t>>& entries, std::int32_t other);

  /// Whether the codes fit a table (see kMaxSpan); without one, view() must not be used.
  [[nodiscard]] bool usable() const { return !table_.empty(); }

  /// The table's numbers as plain values, for a loop over pixels to keep in registers (a loop that
  /// reads them through `this` reloads them after every store, and does not vectorise).
  /// View::entry(v): the entry of code c when raster value v is the whole number c, else `other`,
  /// inline and without branches.
  struct View {
    double low;     ///< the smallest code
    double end;     ///< one past the largest code
    const std::int32_t* at_low;  ///< the table's first entry, for code `low`
    std::int32_t first;          ///< `low` as an integer
    double other;

    /// As a double (every entry is a small integer, exact in one): a select between doubles, which
    /// GCC 12 vectorises where the same select between int32s leaves the loop scalar.
    [[nodiscard]] double entry(double v) const {
      // Clamped into [low, end) by two selects (NaN fails both comparisons and becomes `low`), the
      // value converts to an int32 without overflow; it is a code exactly when converting back gives
      // the value itself (2.5 truncates to 2, a value outside became `low`, NaN equals nothing).
      // Written so for GCC 12: the same test as a conjunction of two comparisons ("inside & whole")
      // is compiled as branches and the loop around it stays scalar.
      const double at_least_low = v >= low ? v : low;
      const double clamped = at_least_low < end ? at_least_low : low;
      const auto k = static_cast<std::int32_t>(clamped);
      const double e = at_low[k - first];
      return static_cast<double>(k) == v ? e : other;
    }
  };
  [[nodiscard]] View view() const { return {low_, end_, table_.data(), first_, other_}; }

 private:
  std::vector<std::int32_t> table_;  ///< entry of code first_ + i at i
  std::int32_t first_ = 0;
  // The bounds as doubles are kept, not converted from first_ in view(): where GCC 12 sees that
  // `low` is first_ converted, it folds the conversion back to an int32 on one side of entry()'s
  // selects, and the loop around it, now mixing types, stays scalar.
  double low_ = 0.0;
  double end_ = 0.0;
  double other_ = 0.0;
};

}  // namespace habcast
