// Small text helpers shared by the scenario reader and writer (internal).
#pragma once

#include <string>
#include <string_view>
#include <vector>

namespace swashtune::detail {

// The shortest text that reads back as exactly the same double, independent
// of the C locale.
std::string format_number(double v);

// "; did you mean \"line.volume\"?" when a candidate is close to key, else "".
std::string did_you_mean(std::string_view key, const std::vector<std::string>& candidates);

// A double-quoted string with the escapes that both TOML and JSON accept.
std::string string_literal(std::string_view text);

}  // namespace swashtune::detail
