#pragma once
// The one rule for warnings that reach the user: each stage returns its warnings in its
// Result's `warnings`; where the pipeline or the command line gathers them, a warning that
// occurs several times is said once, with the number of times.
#include <string>
#include <vector>

namespace overtone {

// The distinct warnings in the order of their first appearance; one that occurs N > 1
// times gets " (N times)" appended. Warnings that occur once pass unchanged. Gather every
// warning first and merge once: a merged list carries its counts in the text.
std::vector<std::string> merge_repeated_warnings(const std::vector<std::string>& warnings);

}  // namespace overtone
