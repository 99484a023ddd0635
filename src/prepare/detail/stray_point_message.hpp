#pragma once
// Wording of the stray-point warning (bore_evaluation.cpp) and notes (datum_frame.cpp), kept in
// one place so the two read alike; implemented in stray_points.cpp. Not installed.

#include <cstddef>
#include <string>
#include <string_view>
#include <vector>

#include "cylzone/prepare/stray_points.hpp"

namespace cylzone::detail {

/// Flagged points that an associated element rests on (from suspect_contacts()).
struct SuspectContact {
  std::vector<std::size_t> points;  ///< 0-based indices in the cloud
  std::string element;              ///< e.g. "the actual mating envelope"
  std::string consequence;          ///< e.g. "the mating size and axis rest on"; " it" or " them" follows
};

/// "N suspect point(s) (largest local excess X mm at point #i of the file)", then for each
/// non-empty contact "; point #i is a contact of <element>: <consequence> it", then
/// "; <closing>". Point numbers are 1-based, in the file's data order. Empty when the report
/// flags nothing.
std::string stray_point_message(const StrayPointReport& report,
                                const std::vector<SuspectContact>& contacts,
                                std::string_view closing);

}  // namespace cylzone::detail
