#include "core/warnings.hpp"

#include <fmt/format.h>

#include <cstddef>
#include <unordered_map>

namespace overtone {

std::vector<std::string> merge_repeated_warnings(const std::vector<std::string>& warnings) {
  std::vector<std::string> distinct;
  std::vector<std::size_t> counts;
  std::unordered_map<std::string, std::size_t> position;
  for (const std::string& warning : warnings) {
    const auto [at, inserted] = position.emplace(warning, distinct.size());
    if (inserted) {
      distinct.push_back(warning);
      counts.push_back(1);
    } else {
      ++counts[at->second];
    }
  }
  for (std::size_t k = 0; k < distinct.size(); ++k)
    if (counts[k] > 1) distinct[k] += fmt::format(" ({} times)", counts[k]);
  return distinct;
}

}  // namespace overtone
