// A guard in front of toml++ (internal). Debian's toml++ 3.3.0 reaches
// undefined behaviour on some malformed input (a non-ASCII character outside a
// string hits an "unreachable" point; "[.]" and "t=[}" fire assertions that a
// release build turns into optimiser assumptions). The guard checks the text's
// encoding and its structure (headers, keys, strings, brackets, values) with a
// small recursive-descent scanner of TOML 1.0's grammar, so that only text of
// well-formed shape reaches the library, which still parses it for real.
#pragma once

#include <string>
#include <string_view>

namespace swashtune::detail {

// Throws ScenarioError "source:line:column: malformed TOML: line L, column C: what",
// naming the character found (columns count characters, from 1).
void check_toml_text(std::string_view text, const std::string& source);

}  // namespace swashtune::detail
