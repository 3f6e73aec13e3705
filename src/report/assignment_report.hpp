#pragma once
// Writers of `overtone assign` (docs/assignment.md): text, JSON and CSV.
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "assign/assignment.hpp"

namespace overtone {

struct AssignmentReportInput {
  const std::vector<ObservedBand>* bands = nullptr;
  const std::vector<IsotopologueLevels>* levels = nullptr;
  const AssignResult* result = nullptr;
  const AssignOptions* options = nullptr;
};

std::string assignment_text(const AssignmentReportInput& input);
nlohmann::json assignment_json(const AssignmentReportInput& input);
// One row per observed band (columns in docs/assignment.md).
std::string assignment_csv(const AssignmentReportInput& input);

}  // namespace overtone
