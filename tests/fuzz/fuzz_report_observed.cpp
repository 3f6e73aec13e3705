// Fuzz target: the measured-spectrum CSV of `overtone report --observed`
// (parse_observed_csv) on arbitrary text, then the page built with the bands read.
#include <cstddef>
#include <cstdint>
#include <string>

#include "core/error.hpp"
#include "report/html_report.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::string text(reinterpret_cast<const char*>(data), size);
  try {
    overtone::HtmlReportOptions options;
    options.observed = overtone::parse_observed_csv(text, "fuzz input");
    // A one-atom document is enough to carry the bands into the page.
    const nlohmann::json document = {
        {"atoms", {{{"element", "H"}, {"mass_da", 1.0}, {"position_angstrom", {0.0, 0.0, 0.0}}}}},
        {"modes", {{{"number", 1}, {"frequency_cm1", 1000.0}}}}};
    volatile std::size_t sink = overtone::html_report(document, options).size();
    (void)sink;
  } catch (const overtone::Error&) {
    // Bad input reported the documented way.
  }
  return 0;
}
