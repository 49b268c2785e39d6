#include "toml_guard.hpp"

#include <cstdio>
#include <vector>

#include "swashtune/scenario.hpp"

namespace swashtune::detail {

namespace {

constexpr int kMaxDepth = 64;  // arrays and inline tables within each other

const char* const kUnitsHint = "write units inside quotes, e.g. \"1800 rpm\"";

bool is_bare_key_char(unsigned char c) {
  return (c >= 'A' && c <= 'Z') || (c >= 'a' && c <= 'z') || (c >= '0' && c <= '9') || c == '_' || c == '-';
}

bool is_scalar_char(unsigned char c) { return is_bare_key_char(c) || c == '+' || c == '.' || c == ':'; }

// "1979-05-27", "07:32:00", "2-3": a digit, '-', a digit (not an exponent's
// sign as in 1e-3), or any ':'.
bool looks_like_date_or_time(std::string_view token) {
  if (token.find(':') != std::string_view::npos) return true;
  for (std::size_t k = 1; k + 1 < token.size(); ++k)
    if (token[k] == '-' && token[k - 1] >= '0' && token[k - 1] <= '9' && token[k + 1] >= '0' && token[k + 1] <= '9')
      return true;
  return false;
}

bool is_hex(unsigned char c) { return (c >= '0' && c <= '9') || (c >= 'a' && c <= 'f') || (c >= 'A' && c <= 'F'); }

// Length of the UTF-8 sequence starting at text[i]; 0 when it is not valid
// UTF-8 (RFC 3629: no overlong forms, no surrogates, nothing past U+10FFFF).
std::size_t utf8_length(std::string_view text, std::size_t i) {
  const auto byte = [&](std::size_t k) -> unsigned { return i + k < text.size() ? (unsigned char)text[i + k] : 0u; };
  const unsigned b0 = byte(0);
  const auto cont = [&](std::size_t k, unsigned lo = 0x80, unsigned hi = 0xBF) {
    return byte(k) >= lo && byte(k) <= hi;
  };
  if (b0 < 0x80) return 1;
  if (b0 >= 0xC2 && b0 <= 0xDF) return cont(1) ? 2 : 0;
  if (b0 == 0xE0) return cont(1, 0xA0) && cont(2) ? 3 : 0;
  if ((b0 >= 0xE1 && b0 <= 0xEC) || b0 == 0xEE || b0 == 0xEF) return cont(1) && cont(2) ? 3 : 0;
  if (b0 == 0xED) return cont(1, 0x80, 0x9F) && cont(2) ? 3 : 0;
  if (b0 == 0xF0) return cont(1, 0x90) && cont(2) && cont(3) ? 4 : 0;
  if (b0 >= 0xF1 && b0 <= 0xF3) return cont(1) && cont(2) && cont(3) ? 4 : 0;
  if (b0 == 0xF4) return cont(1, 0x80, 0x8F) && cont(2) && cont(3) ? 4 : 0;
  return 0;
}

unsigned code_point(std::string_view text, std::size_t i, std::size_t length) {
  const auto b = [&](std::size_t k) { return static_cast<unsigned>(static_cast<unsigned char>(text[i + k])); };
  switch (length) {
    case 2:
      return ((b(0) & 0x1Fu) << 6) | (b(1) & 0x3Fu);
    case 3:
      return ((b(0) & 0x0Fu) << 12) | ((b(1) & 0x3Fu) << 6) | (b(2) & 0x3Fu);
    case 4:
      return ((b(0) & 0x07u) << 18) | ((b(1) & 0x3Fu) << 12) | ((b(2) & 0x3Fu) << 6) | (b(3) & 0x3Fu);
    default:
      return b(0);
  }
}

class Scanner {
 public:
  Scanner(std::string_view text, const std::string& source) : text_(text), source_(source) {}

  void check() {
    check_encoding();
    i_ = 0;
    line_ = column_ = 1;
    if (text_.substr(0, 3) == "\xEF\xBB\xBF") i_ = 3;  // a byte-order mark
    document();
  }

 private:
  struct Position {
    std::size_t index;
    int line, column;
  };

  bool at_end() const { return i_ >= text_.size(); }
  unsigned char peek(std::size_t k = 0) const {
    return i_ + k < text_.size() ? static_cast<unsigned char>(text_[i_ + k]) : 0;
  }
  bool at_newline() const { return peek() == '\n' || (peek() == '\r' && peek(1) == '\n'); }
  Position here() const { return {i_, line_, column_}; }

  // One character (the text is valid UTF-8 once check_encoding() has passed).
  void advance() {
    if (at_end()) return;
    if (peek() == '\r' && peek(1) == '\n') ++i_;
    if (peek() == '\n') {
      ++i_;
      ++line_;
      column_ = 1;
      return;
    }
    const std::size_t length = utf8_length(text_, i_);
    i_ += length ? length : 1;
    ++column_;
  }

  // "'°' (U+00B0)", "'x'", "a tab", "the end of the line", "the end of the file".
  std::string describe(std::size_t index) const {
    if (index >= text_.size()) return "the end of the file";
    const unsigned char c = static_cast<unsigned char>(text_[index]);
    if (c == '\n' || c == '\r') return "the end of the line";
    if (c == '\t') return "a tab";
    const std::size_t length = utf8_length(text_, index);
    if (length <= 1) return c < 0x20 || c == 0x7F ? unicode_name(c) : "'" + std::string(1, static_cast<char>(c)) + "'";
    return "'" + std::string(text_.substr(index, length)) + "' (" + unicode_name(code_point(text_, index, length)) +
           ")";
  }

  static std::string unicode_name(unsigned cp) {
    char buffer[16];
    std::snprintf(buffer, sizeof buffer, "U+%04X", cp);
    return buffer;
  }

  [[noreturn]] void fail_at(const Position& at, const std::string& what) const {
    const std::string line = std::to_string(at.line), column = std::to_string(at.column);
    throw ScenarioError(source_ + ":" + line + ":" + column + ": malformed TOML: line " + line + ", column " + column +
                        ": " + what);
  }
  [[noreturn]] void fail(const std::string& what) const { fail_at(here(), what); }

  // What a non-ASCII character outside a string probably is, and what to write.
  std::string non_ascii_advice(bool in_name) const {
    const std::size_t length = utf8_length(text_, i_);
    const unsigned cp = code_point(text_, i_, length ? length : 1);
    const std::string found = describe(i_);
    if (cp == 0xA0 || cp == 0x2007 || cp == 0x2009 || cp == 0x202F || cp == 0x3000 || (cp >= 0x2000 && cp <= 0x200B))
      return found + " is a no-break or thin space; type a plain space";
    if (cp == 0x201C || cp == 0x201D || cp == 0x201E || cp == 0x00AB || cp == 0x00BB)
      return found + " is a typographic quote; strings need plain \" quotes";
    if (cp == 0x2018 || cp == 0x2019) return found + " is a typographic apostrophe; strings need plain \" quotes";
    if (cp == 0x2212 || cp == 0x2013 || cp == 0x2014) return found + " is a dash, not a minus sign; type a plain -";
    if (cp == 0xFEFF) return found + " is a byte-order mark inside the file; remove it";
    if (in_name) return found + " in a name; keys and section names are plain ASCII (letters, digits, _ and -)";
    return found + " outside a string; " + kUnitsHint;
  }

  void check_encoding() {
    for (i_ = 0, line_ = 1, column_ = 1; i_ < text_.size();) {
      const unsigned char c = peek();
      if (c == '\r' && peek(1) != '\n')
        fail("a carriage return without a line feed (U+000D); save the file with LF or CR LF line ends");
      if ((c < 0x20 && c != '\t' && c != '\n' && c != '\r') || c == 0x7F)
        fail("control character " + unicode_name(c) + ", which TOML does not allow; is this a text file?");
      if (c >= 0x80 && utf8_length(text_, i_) == 0) {
        char byte[8];
        std::snprintf(byte, sizeof byte, "0x%02X", c);
        fail(std::string("byte ") + byte +
             " is not UTF-8 (a file saved as Latin-1 or Windows-1252?); save it as UTF-8, and write units inside "
             "quotes, e.g. \"1800 rpm\"");
      }
      advance();
    }
  }

  void skip_spaces() {
    while (peek() == ' ' || peek() == '\t') advance();
  }
  void skip_comment() {
    if (peek() != '#') return;
    while (!at_end() && !at_newline()) advance();
  }
  // Spaces, comments and line ends, as allowed between an array's values.
  void skip_blank() {
    for (;;) {
      skip_spaces();
      skip_comment();
      if (!at_newline()) return;
      advance();
    }
  }

  void document() {
    while (!at_end()) {
      skip_spaces();
      if (peek() == '[') {
        header();
      } else if (!at_end() && !at_newline() && peek() != '#') {
        key_value();
        end_of_line(" after the value");
      } else {
        end_of_line("");
      }
    }
  }

  void end_of_line(const char* after) {
    skip_spaces();
    skip_comment();
    if (at_end()) return;
    if (at_newline()) {
      advance();
      return;
    }
    const unsigned char c = peek();
    if (c >= 0x80) fail(non_ascii_advice(false));
    std::string what = "expected the end of the line" + std::string(after) + ", found " + describe(i_);
    if (*after && ((c >= 'A' && c <= 'Z') || (c >= 'a' && c <= 'z') || c == '%'))
      what += std::string("; ") + kUnitsHint;
    fail(what);
  }

  void header() {
    const Position open = here();
    advance();
    const bool array = peek() == '[';
    if (array) advance();
    skip_spaces();
    dotted_key("section name");
    skip_spaces();
    for (int closing = 0; closing < (array ? 2 : 1); ++closing) {
      if (peek() != ']')
        fail("expected '" + std::string(array ? "]]" : "]") + "' to close the section header opened at column " +
             std::to_string(open.column) + ", found " + describe(i_));
      advance();
    }
    end_of_line(" after the section header");
  }

  void dotted_key(const char* what) {
    simple_key(what);
    skip_spaces();
    while (peek() == '.') {
      advance();
      skip_spaces();
      simple_key(what);
      skip_spaces();
    }
  }

  void simple_key(const char* what) {
    if (peek() == '"' && !(peek(1) == '"' && peek(2) == '"')) return basic_string();
    if (peek() == '\'' && !(peek(1) == '\'' && peek(2) == '\'')) return literal_string();
    const std::size_t start = i_;
    while (is_bare_key_char(peek())) advance();
    if (i_ > start) return;
    if (peek() >= 0x80) fail(non_ascii_advice(true));
    fail("expected a " + std::string(what) + " (letters, digits, _ or -, or a quoted name), found " + describe(i_));
  }

  void key_value() {
    dotted_key("key");
    skip_spaces();
    if (peek() != '=') {
      if (peek() >= 0x80) fail(non_ascii_advice(true));
      fail("expected '=' after the key, found " + describe(i_));
    }
    advance();
    skip_spaces();
    value(0);
  }

  void value(int depth) {
    if (depth > kMaxDepth) fail("values nested more than " + std::to_string(kMaxDepth) + " deep");
    const unsigned char c = peek();
    if (c == '"') return peek(1) == '"' && peek(2) == '"' ? multiline_string('"') : basic_string();
    if (c == '\'') return peek(1) == '\'' && peek(2) == '\'' ? multiline_string('\'') : literal_string();
    if (c == '[') return array(depth + 1);
    if (c == '{') return inline_table(depth + 1);
    scalar();
  }

  // Numbers and true/false: their characters only; toml++ checks the form.
  // Dates and times are refused here: no scenario key takes one, and
  // toml++'s date parser asserts on malformed ones (1979-05-27T:007).
  void scalar() {
    const Position start = here();
    while (is_scalar_char(peek())) advance();
    if (i_ > start.index) {
      const std::string_view token = text_.substr(start.index, i_ - start.index);
      if (looks_like_date_or_time(token))
        fail_at(start, "'" + std::string(token) +
                           "' has the form of a date or time, which no scenario key takes; durations are written "
                           "as \"0.1 s\"");
      return;
    }
    const unsigned char c = peek();
    if (c >= 0x80) fail(non_ascii_advice(false));
    if ((c == ']' || c == '}') && !open_.empty()) {
      const Position& open = open_.back();
      const char opened = text_[open.index];
      if ((c == ']') != (opened == '['))
        fail("'" + std::string(1, static_cast<char>(c)) + "' does not close the '" + std::string(1, opened) +
             "' opened at line " + std::to_string(open.line) + ", column " + std::to_string(open.column));
    }
    fail("expected a value (a number, a string in quotes, true or false), found " + describe(i_));
  }

  void escape() {
    const Position at = here();
    advance();  // the backslash
    const unsigned char c = peek();
    if (c == 'b' || c == 't' || c == 'n' || c == 'f' || c == 'r' || c == '"' || c == '\\') return advance();
    if (c == 'u' || c == 'U') {
      advance();
      unsigned cp = 0;
      for (int k = 0; k < (c == 'u' ? 4 : 8); ++k) {
        if (!is_hex(peek()))
          fail_at(at, std::string("\\") + static_cast<char>(c) + " needs " + (c == 'u' ? "4" : "8") +
                          " hexadecimal digits, found " + describe(i_));
        const unsigned char h = peek();
        cp = cp * 16 + static_cast<unsigned>(h <= '9' ? h - '0' : (h | 0x20) - 'a' + 10);
        advance();
      }
      if (cp > 0x10FFFF || (cp >= 0xD800 && cp <= 0xDFFF))
        fail_at(at, "\\" + std::string(1, static_cast<char>(c)) + " escape of " + unicode_name(cp) +
                        ", which is not a Unicode character");
      return;
    }
    fail_at(at, "unknown escape '\\" + (at_end() || at_newline() ? std::string() : describe(i_).substr(1, 1)) +
                    "' in a string; write \\\\ for a backslash, or use 'single quotes' for text with backslashes");
  }

  void basic_string() {
    const Position open = here();
    advance();
    for (;;) {
      if (at_end() || at_newline()) fail_at(open, "the string opened here is not closed on its line (a missing \"?)");
      if (peek() == '"') return advance();
      if (peek() == '\\') {
        escape();
        continue;
      }
      advance();
    }
  }

  void literal_string() {
    const Position open = here();
    advance();
    for (;;) {
      if (at_end() || at_newline()) fail_at(open, "the string opened here is not closed on its line (a missing '?)");
      if (peek() == '\'') return advance();
      advance();
    }
  }

  void multiline_string(char quote) {
    const Position open = here();
    for (int k = 0; k < 3; ++k) advance();
    for (;;) {
      if (at_end()) fail_at(open, std::string("the ") + quote + quote + quote + " string opened here is never closed");
      if (peek() == static_cast<unsigned char>(quote) && peek(1) == static_cast<unsigned char>(quote) &&
          peek(2) == static_cast<unsigned char>(quote)) {
        for (int k = 0; k < 3; ++k) advance();
        // up to two more quotes belong to the string: """a"""""
        for (int k = 0; k < 2 && peek() == static_cast<unsigned char>(quote); ++k) advance();
        return;
      }
      if (quote == '"' && peek() == '\\') {
        // a backslash at a line's end joins the lines
        std::size_t k = 1;
        while (peek(k) == ' ' || peek(k) == '\t') ++k;
        if (peek(k) == '\n' || (peek(k) == '\r' && peek(k + 1) == '\n')) {
          advance();
          continue;
        }
        escape();
        continue;
      }
      advance();
    }
  }

  void array(int depth) {
    open_.push_back(here());
    advance();
    for (;;) {
      skip_blank();
      if (peek() == ']') break;
      if (at_end()) unclosed();
      value(depth);
      skip_blank();
      if (peek() == ',') {
        advance();
        continue;
      }
      if (peek() == ']') break;
      if (at_end()) unclosed();
      if (peek() == '}') scalar();  // reports the mismatch
      fail("expected ',' or ']' in the array opened at line " + std::to_string(open_.back().line) + ", column " +
           std::to_string(open_.back().column) + ", found " + describe(i_));
    }
    advance();
    open_.pop_back();
  }

  void inline_table(int depth) {
    open_.push_back(here());
    advance();
    skip_spaces();
    if (peek() != '}') {
      for (;;) {
        dotted_key("key");
        skip_spaces();
        if (peek() != '=') fail("expected '=' after the key, found " + describe(i_));
        advance();
        skip_spaces();
        value(depth);
        skip_spaces();
        if (peek() == ',') {
          advance();
          skip_spaces();
          continue;
        }
        if (peek() == '}') break;
        if (at_end()) unclosed();
        if (at_newline())
          fail("the inline table { ... } opened at line " + std::to_string(open_.back().line) + ", column " +
               std::to_string(open_.back().column) + " must close on its line; found the end of the line");
        if (peek() == ']') scalar();  // reports the mismatch
        fail("expected ',' or '}' in the inline table opened at line " + std::to_string(open_.back().line) +
             ", column " + std::to_string(open_.back().column) + ", found " + describe(i_));
      }
    }
    advance();
    open_.pop_back();
  }

  [[noreturn]] void unclosed() const {
    const Position& open = open_.back();
    fail_at(open, "the '" + std::string(1, text_[open.index]) + "' opened here is never closed");
  }

  std::string_view text_;
  const std::string& source_;
  std::size_t i_ = 0;
  int line_ = 1, column_ = 1;
  std::vector<Position> open_;  // unclosed '[' and '{' of the value being read
};

}  // namespace

void check_toml_text(std::string_view text, const std::string& source) { Scanner(text, source).check(); }

}  // namespace swashtune::detail
