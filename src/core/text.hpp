#pragma once
// Text that came from input files (titles, names, free-text sources) made safe before it
// is written anywhere: as JSON (which must be valid UTF-8), as a quoted TOML string
// (which must escape control characters, quotes and backslashes), or on a terminal
// (where a control character could move the cursor or end a line early).
//
// Invalid UTF-8 (a Latin-1 byte, a truncated or overlong sequence, a surrogate, a code
// point above U+10FFFF) is replaced by U+FFFD, one per byte that does not belong to a
// well-formed sequence (well-formed as in The Unicode Standard, ch. 3, Table 3-7); valid
// text passes through unchanged.
#include <string>
#include <string_view>

namespace overtone {

// The text with every invalid UTF-8 byte replaced by U+FFFD.
std::string valid_utf8(std::string_view text);

// valid_utf8 of the text with every control character (U+0000–U+001F, U+007F) written
// as a visible escape: \n, \r, \t, or \xHH. For one-line text on a terminal or in a
// table cell.
std::string printable_text(std::string_view text);

// The text as a TOML basic string, quotes included: valid_utf8, then ", \ and control
// characters escaped (\b \t \n \f \r, else \uXXXX), so that any title reads back as the
// same (valid UTF-8) string (TOML 1.0, "String").
std::string toml_quoted(std::string_view text);

}  // namespace overtone
