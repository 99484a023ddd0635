#pragma once
// The pieces of the HTML reports that every page shares (not installed): the page frame with its
// style sheet and caution, escaping, the verdict marks, the inputs table and the side view of an
// axis against its zone. Defined in html_renderer.cpp (the check's report); the audit's page
// (audit_html.cpp) is built from the same pieces, so both read and print alike
// (docs/html-report.md).
#include <optional>
#include <ostream>
#include <string>
#include <string_view>
#include <vector>

#include "cylzone/check/part_inputs.hpp"
#include "cylzone/decide/characteristic.hpp"
#include "cylzone/report/report_model.hpp"

namespace cylzone::html {

/// `text` safe in HTML element content and double-quoted attribute values.
std::string esc(std::string_view text);
/// A height in the report's unit for figure labels.
std::string height_text(const ReportUnits& u, double mm);
/// "✔ conforms", "✘ does not conform", "? not proven" in their framed span: never colour alone.
std::string verdict_span(Verdict v);

/// `<!DOCTYPE html>` to `<body>`: the title and the one inline style sheet.
void page_open(std::ostream& out, std::string_view title);
/// The caution again and the sign-off line, then `</body></html>`.
void page_close(std::ostream& out);
/// The inputs with their SHA-256 digests.
void inputs_section(std::ostream& out, const std::vector<InputRecord>& inputs);

/// The zone diameters a bore's figures draw: stated tolerance and allowed (with bonus).
struct ZoneSizes {
  double stated = 0.0;
  double allowed = 0.0;
};

/// A point to mark on the side views: another system's centre at its plane (an open diamond in
/// the dx, dy and radial panels, a dashed level line labelled `label`).
struct SideViewMark {
  AxisDeviation deviation;  ///< height and (dx, dy) from the true position, mm
  std::string label;
};

/// The side views of an axis along the depth against its zone (dx, dy and radial panels), with
/// the probed band, where the axis leaves the zone and `marks`.
void side_views(std::ostream& out, const ReportUnits& u, const ZoneSizes& z, double probed_top,
                double probed_bottom, const DepthProfile& d,
                const std::vector<SideViewMark>& marks);

}  // namespace cylzone::html
