// Text from input files made safe: valid UTF-8 (The Unicode Standard, ch. 3, Table 3-7
// "Well-Formed UTF-8 Byte Sequences"), visible control characters, TOML basic strings
// (TOML 1.0, "String": escapes \b \t \n \f \r \" \\ and \uXXXX).
#include <gtest/gtest.h>

#include <string>

#include "core/text.hpp"

namespace overtone {
namespace {

const std::string replacement = "\xEF\xBF\xBD";  // U+FFFD

TEST(Text, ValidUtf8PassesThroughUnchanged) {
  for (const std::string text :
       {"water", "C₂v Σg⁺ ν2 cm⁻¹", "\xF0\x9F\x98\x80", "\xED\x9F\xBF", "\xF4\x8F\xBF\xBF"})
    EXPECT_EQ(valid_utf8(text), text);
}

TEST(Text, EveryInvalidByteBecomesOneReplacementCharacter) {
  EXPECT_EQ(valid_utf8("caf\xE9"), "caf" + replacement);                           // Latin-1 é
  EXPECT_EQ(valid_utf8("\xC0\xAF"), replacement + replacement);                    // overlong '/'
  EXPECT_EQ(valid_utf8("\xED\xA0\x80"), replacement + replacement + replacement);  // surrogate D800
  EXPECT_EQ(valid_utf8("\xF4\x90\x80\x80"),
            replacement + replacement + replacement + replacement);       // above U+10FFFF
  EXPECT_EQ(valid_utf8("a\xE2\x82"), "a" + replacement + replacement);    // truncated "€"
  EXPECT_EQ(valid_utf8(std::string("a\0b", 3)), std::string("a\0b", 3));  // NUL is valid UTF-8
}

TEST(Text, PrintableTextShowsControlCharacters) {
  EXPECT_EQ(printable_text("two\nlines\tand\x1B[31mred"), "two\\nlines\\tand\\x1B[31mred");
  EXPECT_EQ(printable_text("caf\xE9\r"), "caf" + replacement + "\\r");
}

TEST(Text, TomlQuotedEscapesQuotesBackslashesAndControls) {
  EXPECT_EQ(toml_quoted("plain"), "\"plain\"");
  EXPECT_EQ(toml_quoted("a \"b\" \\c"), "\"a \\\"b\\\" \\\\c\"");
  EXPECT_EQ(toml_quoted("x\ny\tz\b\f\r"), "\"x\\ny\\tz\\b\\f\\r\"");
  EXPECT_EQ(toml_quoted(std::string("\x01\x7F\0", 3)), "\"\\u0001\\u007F\\u0000\"");
  EXPECT_EQ(toml_quoted("\xE9t\xE9"), "\"" + replacement + "t" + replacement + "\"");
}

}  // namespace
}  // namespace overtone
