#pragma once
/// \file report_reader.hpp
/// Reading a JSON report (`cylzone-report-1`) back, so a later command can consume an earlier
/// result: an audit of another system's summary, a comparison of two runs, a batch summary.

#include <string>
#include <string_view>

#include "cylzone/report/report_model.hpp"

namespace cylzone {

/// Parses `bytes`, the text of a JSON report, into a model holding this subset: tool version,
/// plan name, file and units, inputs with their SHA-256, datum summaries, every characteristic,
/// the bores' summaries (verdict, axis method, probed range, tilt, depth profile, warnings), the
/// part verdict and warnings. Lengths are converted back to mm through the model's units.
/// `evaluation` is null and `sensitivity` empty. Throws InputError naming `source` and the JSON
/// path of the offending key (e.g. "characteristics[3].value") for malformed JSON, another
/// schema, a missing key, a wrong type or an unknown verdict or comparison.
ReportModel read_report_json(std::string_view bytes, const std::string& source);

}  // namespace cylzone
