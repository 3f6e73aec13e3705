// The check of TOML text before parsing: TOML 1.0 (toml.io/en/v1.0.0) allows no control
// character other than tab, LF and CR anywhere, and only ASCII outside strings and
// comments; files are UTF-8 (RFC 3629). Every rejection names line and column.
#include <gtest/gtest.h>

#include <string>

#include "core/error.hpp"
#include "potential/detail_toml_text.hpp"
#include "potential/taylor_expansion_potential.hpp"
#include "potential/valence_force_field.hpp"

namespace overtone {
namespace {

std::string check_message(const std::string& text) {
  try {
    detail::check_toml_text(text, "test text");
  } catch (const Error& error) {
    return error.what();
  }
  return "";
}

TEST(TomlText, ValidTomlWithUnicodeInStringsAndCommentsPasses) {
  const std::string text =
      "# ω₁ and ν̃ in a comment, and U+FBC6 \xEF\xAF\x86 too\n"
      "title = \"CO₂ \\\" quoted \xEF\xAF\x86\"\n"
      "path = 'C:\\temp ω'\n"
      "notes = \"\"\"\nmulti-line \"quoted\" ω\n\"\"\"\n"
      "raw = '''\nit's ω'''\n"
      "ends = \"\"\"two quotes of content\"\"\"\"\"\n"
      "[units]\t# tab before a comment\r\n"
      "energy = \"aJ\"\n";
  EXPECT_EQ(check_message(text), "");
}

TEST(TomlText, NulByteIsRejectedWithLineAndColumn) {
  // "[" followed by NUL: the two bytes that drive toml++ 3.3 into an assertion.
  const std::string message = check_message(std::string("[\0", 2));
  EXPECT_NE(message.find("test text line 1, column 2"), std::string::npos) << message;
  EXPECT_NE(message.find("U+0000"), std::string::npos) << message;
}

TEST(TomlText, ControlCharactersAreRejectedEvenInsideStringsAndComments) {
  EXPECT_NE(check_message("a = \"x\x01y\"\n").find("line 1, column 7"), std::string::npos);
  EXPECT_NE(check_message("# bell \x07\n").find("U+0007"), std::string::npos);
  EXPECT_NE(check_message("a = 1\nb = 2\x7F\n").find("line 2, column 6"), std::string::npos);
}

TEST(TomlText, NonAsciiOutsideStringsIsRejected) {
  // U+FBC6 (EF AF 86) as a bare key: TOML 1.0 bare keys are ASCII only.
  const std::string key = check_message("a = 1\n\xEF\xAF\x86 = 2\n");
  EXPECT_NE(key.find("line 2, column 1"), std::string::npos) << key;
  EXPECT_NE(key.find("U+FBC6"), std::string::npos) << key;
  // U+FEFE after a value, and after a string closed on the same line.
  EXPECT_NE(check_message("a = 1\xEF\xBB\xBE\n").find("U+FEFE"), std::string::npos);
  const std::string after_string = check_message("a = \"ω\" ω\n");
  EXPECT_NE(after_string.find("line 1, column 9"), std::string::npos) << after_string;
}

TEST(TomlText, InvalidUtf8IsRejected) {
  // A lone continuation byte, a truncated sequence, an overlong form and a surrogate.
  for (const std::string& text : {std::string("a = \"\x80\"\n"), std::string("a = \"\xE2\x82\"\n"),
                                  std::string("a = \"\xC0\xAF\"\n"), std::string("a = \"\xED\xA0\x80\"\n")}) {
    const std::string message = check_message(text);
    EXPECT_NE(message.find("line 1, column 6"), std::string::npos) << message;
    EXPECT_NE(message.find("UTF-8"), std::string::npos) << message;
  }
}

TEST(TomlText, BothLoadersCheckTheirTextAndNameTheirFormat) {
  const std::string bad = std::string("format_version = 1\n[") + '\0';
  try {
    parse_valence_force_field_source(bad, "field.toml");
    FAIL() << "a NUL byte must be rejected";
  } catch (const Error& error) {
    EXPECT_NE(std::string(error.what()).find("valence force field 'field.toml' line 2, column 2"),
              std::string::npos)
        << error.what();
  }
  try {
    parse_taylor_expansion("format = \"overtone-taylor-expansion\"\n\xEF\xAF\x86 = 1\n", "expansion.toml");
    FAIL() << "U+FBC6 outside a string must be rejected";
  } catch (const Error& error) {
    EXPECT_NE(std::string(error.what()).find("taylor-expansion file 'expansion.toml' line 2, column 1"),
              std::string::npos)
        << error.what();
  }
}

TEST(TomlText, FileKindComesFromTheFormatLineEvenWhenTheRestIsMalformed) {
  using detail::PotentialFileKind;
  EXPECT_EQ(detail::potential_file_kind("# comment\nformat = \"overtone-taylor-expansion\"\nversion = [\n"),
            PotentialFileKind::taylor_expansion);
  EXPECT_EQ(detail::potential_file_kind("format='overtone-taylor-expansion'\n"),
            PotentialFileKind::taylor_expansion);
  EXPECT_EQ(detail::potential_file_kind("format_version = 1\ntitle = \"x\"\n"),
            PotentialFileKind::valence_force_field);
  // Only the top level counts: a key of that name inside a table is something else.
  EXPECT_EQ(detail::potential_file_kind("[source]\nformat = \"overtone-taylor-expansion\"\n"),
            PotentialFileKind::valence_force_field);
}

}  // namespace
}  // namespace overtone
