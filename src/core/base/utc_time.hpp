#pragma once
// The wall-clock stamp written into reports and records.
#include <string>

namespace habcast {

/// Now, in UTC, as ISO 8601 to the second ("2026-12-02T12:30:00Z").
std::string utc_now();

}  // namespace habcast
