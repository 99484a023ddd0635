// libFuzzer target: the JSON report reader (report_reader.hpp) on arbitrary bytes. A report it
// accepts must hold what the reader promises: lengths converted back to mm and finite, every
// characteristic with an id of its feature, verdicts that combine as the decide stage says.
#include <cmath>
#include <cstddef>
#include <cstdint>
#include <string>
#include <string_view>

#include "cylzone/report/report_reader.hpp"
#include "fuzz_contract.hpp"

namespace {

using cylzone::fuzz::breach;

void check_model(const cylzone::ReportModel& m) {
  for (const cylzone::Characteristic& c : m.characteristics) {
    const std::string where = "characteristic " + c.id.substr(0, 80);
    for (double v : {c.value, c.tolerance, c.bonus, c.allowed})
      if (!std::isfinite(v)) breach(where + ": a length that is not finite was accepted");
    if (c.feature.empty() || c.id.compare(0, c.feature.size() + 1, c.feature + "/") != 0)
      breach(where + ": its id does not begin with its feature '" + c.feature.substr(0, 80) + "/'");
  }
  for (const cylzone::BoreSummary& b : m.bores) {
    for (double v : {b.probed_top, b.probed_bottom, b.tilt_rad})
      if (!std::isfinite(v)) breach("bore " + b.id.substr(0, 80) + ": a figure that is not finite");
    if (b.depth)
      for (const cylzone::AxisDeviation& d : b.depth->samples)
        if (!std::isfinite(d.height) || !d.offset.allFinite())
          breach("bore " + b.id.substr(0, 80) + ": a depth sample that is not finite");
  }
}

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::string_view bytes(reinterpret_cast<const char*>(data), size);
  cylzone::fuzz::expect_contract(
      [&] { check_model(cylzone::read_report_json(bytes, "fuzz-report.json")); });
  return 0;
}
