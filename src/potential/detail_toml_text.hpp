#pragma once
// Checks on TOML text before it reaches the TOML library, and the choice between the two
// potential-file formats. Not part of the promised API (namespace detail); used by the
// valence-force-field and Taylor-expansion loaders and by make_potential.
//
// Why a check before parsing: toml++ 3.3 (as packaged in Debian 12) reaches undefined
// behaviour on some inputs that are not TOML anyway: an assertion ("unreachable") on a NUL
// byte, and out-of-range table look-ups for the characters U+FBC6–U+FEFE outside strings
// (its bare-key classification). TOML 1.0 allows neither: no control character other than
// tab (and the CR of a CR LF line end) anywhere, not even inside strings or comments, and
// outside strings and comments only ASCII (bare keys are A–Z a–z 0–9 _ -). So the check
// rejects, with the line and column:
//   - a byte sequence that is not UTF-8 (TOML files are UTF-8);
//   - a control character U+0000–U+0008, U+000A–U+001F other than LF and CR, or U+007F;
//   - any non-ASCII character outside strings and comments.
// Strings are tracked as TOML writes them: "basic" with backslash escapes, 'literal',
// and the multi-line """ and ''' forms (whose closing delimiter may carry one or two
// extra quotes of content); comments run from # outside a string to the end of the line.
#include <string>

namespace overtone::detail {

// Throws Error "<context> line L, column C: <what is wrong>" for the first offending
// character; columns count characters (code points) from 1. `context` names the file,
// e.g. "valence force field 'water.toml'".
void check_toml_text(const std::string& text, const std::string& context);

enum class PotentialFileKind { valence_force_field, taylor_expansion };

// A Taylor-expansion file says format = "overtone-taylor-expansion" at the top level.
// This looks for that line in the text itself (before the first table header), so the
// kind is known even when the rest of the file is malformed and its error message can
// name the right format; anything else is read as a valence force field.
PotentialFileKind potential_file_kind(const std::string& text);

}  // namespace overtone::detail
