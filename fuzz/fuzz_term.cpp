// Fuzzes the term notation parser against a fixed model: any label must give a Term or an
// InputError naming the file and line. Parsed terms are then evaluated on a small block of values
// so that factor indices the parser produced are exercised too.
#include <cstddef>
#include <cstdint>
#include <string>

#include "core/base/error.hpp"
#include "core/model/term_syntax.hpp"
#include "fuzz_specs.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::string label(reinterpret_cast<const char*>(data), size);
  const habcast::ModelSpec& spec = habcast::fuzz::fixed_spec();
  try {
    const habcast::Term term = habcast::parse_term(label, spec, spec.path, 20);
    for (const habcast::TermFactor& f : term.factors) {
      // The parser's contract with the plan: indices in range, powers 1..18.
      const auto& covariate = spec.covariates.at(static_cast<std::size_t>(f.covariate));
      if (f.level >= 0) (void)covariate.levels.at(static_cast<std::size_t>(f.level));
      if (f.power < 1 || f.power > 18) __builtin_trap();
    }
    // Parsing the canonical label again must give the same term (labels are compared by it).
    const habcast::Term again = habcast::parse_term(term.canonical, spec, spec.path, 20);
    if (again.canonical != term.canonical) __builtin_trap();
  } catch (const habcast::Error&) {
  }
  return 0;
}
