// libFuzzer target: the audit's summary reader (audit/summary.hpp) on arbitrary bytes, once with
// the default mapping and once with a mapping of other header names and inch units. Beyond the
// library's contract: every row returned has an id and one or two centres, every number is
// finite with a rounding of at least 0, a position is not negative.
#include <cmath>
#include <cstddef>
#include <cstdint>
#include <string_view>

#include "cylzone/audit/summary.hpp"
#include "fuzz_contract.hpp"

namespace {

void check_number(const cylzone::SummaryNumber& n) {
  if (!std::isfinite(n.value) || !std::isfinite(n.rounding) || n.rounding < 0.0)
    cylzone::fuzz::breach("a summary number is not finite or its rounding is negative");
}

void check_table(const cylzone::SummaryTable& table) {
  if (table.rows.empty()) cylzone::fuzz::breach("a summary without rows was returned");
  for (const cylzone::SummaryRow& row : table.rows) {
    if (row.id.empty()) cylzone::fuzz::breach("a row without an id was returned");
    if (row.centres.empty() || row.centres.size() > 2)
      cylzone::fuzz::breach("a row with no or more than two centres was returned");
    for (const cylzone::SummaryCentre& c : row.centres) {
      check_number(c.u);
      check_number(c.v);
      if (c.z) check_number(*c.z);
    }
    if (row.position) {
      check_number(*row.position);
      if (row.position->value < 0.0) cylzone::fuzz::breach("a negative position was returned");
    }
  }
}

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::string_view text(reinterpret_cast<const char*>(data), size);
  cylzone::SummaryReadOptions plain;
  cylzone::fuzz::expect_contract(
      [&] { check_table(cylzone::parse_summary(text, "fuzz.csv", plain)); });
  cylzone::SummaryReadOptions mapped;
  mapped.mapping.columns[static_cast<std::size_t>(cylzone::SummaryField::id)] = "Feature";
  mapped.mapping.columns[static_cast<std::size_t>(cylzone::SummaryField::x)] = "X";
  mapped.mapping.columns[static_cast<std::size_t>(cylzone::SummaryField::y)] = "Y";
  mapped.mapping.units = cylzone::LengthUnit::inch;
  cylzone::fuzz::expect_contract(
      [&] { check_table(cylzone::parse_summary(text, "fuzz.csv", mapped)); });
  return 0;
}
