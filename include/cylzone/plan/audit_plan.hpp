#pragma once
/// \file audit_plan.hpp
/// The plan's optional `[audit]` table (docs/plan.md, "[audit]"): how `cylzone audit` reads
/// another system's single-plane summary of the part. Which header names hold which figure, the
/// summary's unit and the tolerance of the same-plane comparison. The command line's
/// `--map KEY=COLUMN`, `--units` and `--same-plane-tolerance` override it key by key.

#include <array>
#include <cstddef>
#include <filesystem>
#include <optional>
#include <string>
#include <string_view>

#include "cylzone/core/units.hpp"

namespace cylzone {

/// The figures a summary row can hold, one column each. Deviations (`dx`, `dy`) are from the
/// true position in the datum frame (zone u, v for an inclined bore); coordinates (`x`, `y`)
/// are of the axis in the datum frame. `z` is the height of the evaluation plane from A
/// (negative inside the material). The `2` set holds a second depth on the same row.
enum class SummaryField {
  id, dx, dy, x, y, z, position, diameter, verdict, dx2, dy2, x2, y2, z2
};
inline constexpr std::size_t summary_field_count = 14;

/// The key of a field in `[audit] columns` and `--map`: "id", "dx", ..., "z2".
std::string_view summary_field_key(SummaryField field) noexcept;
std::optional<SummaryField> parse_summary_field(std::string_view key) noexcept;

/// The default same-plane tolerance, mm: twice the distance between the summary's centre and
/// cylzone's at the same plane (a diameter, like a position) above which they disagree. About
/// eight times a 0.5 um probing noise, far below a 0.025 zone (docs/evaluation.md, "Auditing
/// another system's summary").
inline constexpr double default_same_plane_tolerance = 0.004;

struct PlanAudit {
  /// Header name of each field's column; empty: the field's own key as header name, matched
  /// without regard to case ("dx" finds "DX"). Indexed by SummaryField.
  std::array<std::string, summary_field_count> columns{};
  /// The summary's unit; empty: the plan's.
  std::optional<LengthUnit> units;
  /// mm; empty: default_same_plane_tolerance.
  std::optional<double> same_plane_tolerance;
  /// The summary file, relative to the plan's folder (`summary = "..."`); empty: on the command
  /// line only.
  std::filesystem::path summary;
  /// The `[audit]` table's line in the plan (0: built in code or given on the command line).
  std::size_t line = 0;

  const std::string& column(SummaryField f) const noexcept {
    return columns[static_cast<std::size_t>(f)];
  }
};

}  // namespace cylzone
