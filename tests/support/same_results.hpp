#pragma once
// Exact comparisons of evaluation results, for tests that require two runs to give the same
// bits (thread counts, concurrent callers, a bore added that cannot be evaluated).

#include <catch2/catch.hpp>

#include <optional>
#include <vector>

#include "cylzone/decide/bore_characteristics.hpp"
#include "cylzone/evaluate/bore_evaluation.hpp"

namespace cylzone::testing {

inline void same_position(const std::optional<PositionResult>& a,
                          const std::optional<PositionResult>& b) {
  REQUIRE(a.has_value() == b.has_value());
  if (!a) return;
  CHECK(a->value == b->value);
  CHECK(a->bonus == b->bonus);
  CHECK(a->allowed == b->allowed);
  CHECK(a->range_top == b->range_top);
  CHECK(a->range_bottom == b->range_bottom);
  CHECK(a->top.offset == b->top.offset);
  CHECK(a->bottom.offset == b->bottom.offset);
  CHECK(a->worst.height == b->worst.height);
  CHECK(a->leaves_zone_at == b->leaves_zone_at);
}

/// The same decisions for two evaluated bores: every characteristic's id, value and verdict.
inline void same_characteristics(const BoreResult& x, const BoreResult& y) {
  const std::vector<Characteristic> cx = bore_characteristics(x), cy = bore_characteristics(y);
  REQUIRE(cx.size() == cy.size());
  for (std::size_t k = 0; k < cx.size(); ++k) {
    CHECK(cx[k].id == cy[k].id);
    CHECK(cx[k].value == cy[k].value);
    CHECK(cx[k].verdict == cy[k].verdict);
  }
}

}  // namespace cylzone::testing
