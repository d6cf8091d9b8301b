#pragma once
// The one rule every command follows before it starts work: an existing result is never replaced
// unless the user asked for it.
#include <string>
#include <vector>

namespace habcast {

/// Throws UsageError naming the first of `paths` that exists, unless `overwrite`. Empty paths are
/// outputs not asked for and are skipped. `other_way` ends the message with what else the user
/// can do (e.g. ", or choose another -o"); it may be empty.
void refuse_to_clobber(const std::vector<std::string>& paths, bool overwrite, const std::string& other_way = "");

}  // namespace habcast
