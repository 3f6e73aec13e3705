#include "potential/detail_toml_text.hpp"

#include <fmt/format.h>

#include <cstdint>
#include <sstream>

#include "core/error.hpp"

namespace overtone::detail {

namespace {

// The code point at text[at] and its length in bytes; length 0 when the bytes there are
// not a well-formed UTF-8 sequence (overlong forms, surrogates and values above U+10FFFF
// included, as the Unicode standard's table 3-7 defines).
struct Decoded {
  std::uint32_t code_point = 0;
  std::size_t length = 0;
};

Decoded decode(const std::string& text, std::size_t at) {
  const auto byte = [&](std::size_t k) { return static_cast<unsigned char>(text[at + k]); };
  const std::size_t available = text.size() - at;
  const unsigned char lead = byte(0);
  if (lead < 0x80) return {lead, 1};
  std::size_t length = 0;
  std::uint32_t code_point = 0;
  unsigned char low = 0x80, high = 0xBF;  // allowed range of the second byte
  if (lead >= 0xC2 && lead <= 0xDF) {
    length = 2;
    code_point = lead & 0x1F;
  } else if (lead >= 0xE0 && lead <= 0xEF) {
    length = 3;
    code_point = lead & 0x0F;
    if (lead == 0xE0) low = 0xA0;
    if (lead == 0xED) high = 0x9F;
  } else if (lead >= 0xF0 && lead <= 0xF4) {
    length = 4;
    code_point = lead & 0x07;
    if (lead == 0xF0) low = 0x90;
    if (lead == 0xF4) high = 0x8F;
  } else {
    return {};
  }
  if (available < length) return {};
  for (std::size_t k = 1; k < length; ++k) {
    const unsigned char continuation = byte(k);
    const unsigned char min = k == 1 ? low : 0x80;
    const unsigned char max = k == 1 ? high : 0xBF;
    if (continuation < min || continuation > max) return {};
    code_point = (code_point << 6) | (continuation & 0x3F);
  }
  return {code_point, length};
}

enum class Context { outside, comment, basic, literal, multiline_basic, multiline_literal };

std::size_t run_of(const std::string& text, std::size_t at, char quote) {
  std::size_t run = 0;
  while (at + run < text.size() && text[at + run] == quote) ++run;
  return run;
}

}  // namespace

void check_toml_text(const std::string& text, const std::string& context) {
  std::size_t line = 1, column = 1;
  auto fail = [&](const std::string& what) {
    throw Error(fmt::format("{} line {}, column {}: {}", context, line, column, what));
  };
  Context state = Context::outside;
  bool escaped = false;  // the previous character was a backslash inside a basic string
  std::size_t at = 0;
  while (at < text.size()) {
    const Decoded d = decode(text, at);
    if (d.length == 0)
      fail(fmt::format("byte 0x{:02X} is not part of a valid UTF-8 character (TOML files are UTF-8)",
                       static_cast<unsigned char>(text[at])));
    const std::uint32_t c = d.code_point;
    if ((c < 0x20 && c != '\t' && c != '\n' && c != '\r') || c == 0x7F)
      fail(
          fmt::format("control character U+{:04X} is not allowed in TOML, not even in strings or comments "
                      "(write it as an escape inside a string)",
                      c));
    std::size_t advance = d.length;
    if (escaped) {
      escaped = false;
    } else {
      switch (state) {
        case Context::outside:
          if (c >= 0x80)
            fail(fmt::format("character U+{:04X} is only allowed inside strings and comments", c));
          if (c == '#') {
            state = Context::comment;
          } else if (c == '"' || c == '\'') {
            const bool multiline = run_of(text, at, static_cast<char>(c)) >= 3;
            if (multiline) advance = 3;
            state = c == '"' ? (multiline ? Context::multiline_basic : Context::basic)
                             : (multiline ? Context::multiline_literal : Context::literal);
          }
          break;
        case Context::comment:
          if (c == '\n') state = Context::outside;
          break;
        case Context::basic:
        case Context::literal: {
          const char quote = state == Context::basic ? '"' : '\'';
          if (state == Context::basic && c == '\\')
            escaped = true;
          else if (c == static_cast<std::uint32_t>(quote) || c == '\n')  // closed, or left for the parser
            state = Context::outside;
          break;
        }
        case Context::multiline_basic:
        case Context::multiline_literal: {
          const char quote = state == Context::multiline_basic ? '"' : '\'';
          if (state == Context::multiline_basic && c == '\\') {
            escaped = true;
          } else if (c == static_cast<std::uint32_t>(quote)) {
            // Up to two quotes of content may precede the closing three.
            const std::size_t run = run_of(text, at, quote);
            advance = run;
            if (run >= 3) state = Context::outside;
          }
          break;
        }
      }
    }
    for (std::size_t k = 0; k < advance;) {
      const std::size_t length = k == 0 ? d.length : 1;  // runs after the first are ASCII quotes
      if (text[at + k] == '\n') {
        ++line;
        column = 1;
      } else {
        ++column;
      }
      k += length;
    }
    at += advance;
  }
}

PotentialFileKind potential_file_kind(const std::string& text) {
  std::istringstream lines(text);
  std::string line;
  auto skip_blanks = [](const std::string& s, std::size_t at) {
    while (at < s.size() && (s[at] == ' ' || s[at] == '\t')) ++at;
    return at;
  };
  while (std::getline(lines, line)) {
    std::size_t at = skip_blanks(line, 0);
    if (at < line.size() && line[at] == '[') break;  // the top level ends at the first table
    if (line.compare(at, 6, "format") != 0) continue;
    at = skip_blanks(line, at + 6);
    if (at >= line.size() || line[at] != '=') continue;
    at = skip_blanks(line, at + 1);
    for (const char* value : {"\"overtone-taylor-expansion\"", "'overtone-taylor-expansion'"})
      if (line.compare(at, std::char_traits<char>::length(value), value) == 0)
        return PotentialFileKind::taylor_expansion;
  }
  return PotentialFileKind::valence_force_field;
}

}  // namespace overtone::detail
