// The batch summary as a terminal table (batch_report.hpp). Figures in the plan's unit.
#include <algorithm>
#include <sstream>

#include "cylzone/report/batch_report.hpp"

namespace cylzone {
namespace {

std::string padded(std::string text, std::size_t width) {
  if (text.size() < width) text.append(width - text.size(), ' ');
  return text;
}

std::string right(std::string text, std::size_t width) {
  if (text.size() < width) text.insert(0, width - text.size(), ' ');
  return text;
}

/// `text` wrapped at blanks to lines of at most `width` columns, each after `indent`.
std::string wrapped(const std::string& text, std::size_t width, const std::string& indent) {
  std::ostringstream out;
  std::istringstream words(text);
  std::string word, line;
  while (words >> word) {
    if (!line.empty() && indent.size() + line.size() + 1 + word.size() > width) {
      out << indent << line << '\n';
      line.clear();
    }
    line += (line.empty() ? "" : " ") + word;
  }
  if (!line.empty()) out << indent << line << '\n';
  return out.str();
}

}  // namespace

std::string format_batch_table(const BatchIdentity& identity,
                               const std::vector<BatchPartRecord>& records,
                               const BatchSummary& s, const TableOptions& options) {
  const ReportUnits u(identity.unit);
  const std::string dash = options.unicode ? "\u2014" : "-";
  std::ostringstream out;
  out << "cylzone batch: " << identity.plan_name << "  (" << identity.plan_file.filename().string()
      << ", values in " << u.name() << ")\n";
  out << "parts: " << s.parts << ", evaluated " << s.evaluated << " (conform " << s.conforming
      << ", do not conform " << s.not_conforming << ", not proven " << s.not_proven
      << "), failed " << s.failed.size() << "\n";
  for (std::size_t k : s.failed)
    out << wrapped("FAILED " + records[k].part.serial + ": " + records[k].error, options.width,
                   "  ");
  out << '\n';

  std::size_t id_width = 14;
  for (const CharacteristicTally& t : s.characteristics) id_width = std::max(id_width, t.id.size());
  out << padded("characteristic", id_width) << "  conform  not  unproven       worst    allowed"
      << "  worst part\n";
  for (const CharacteristicTally& t : s.characteristics) {
    out << padded(t.id, id_width) << "  " << right(std::to_string(t.conforming), 7) << "  "
        << right(std::to_string(t.not_conforming), 3) << "  "
        << right(std::to_string(t.not_proven), 8) << "  ";
    if (t.worst_part)
      out << right(u.text(t.worst_value), 10) << " " << right(u.text(t.worst_allowed), 10) << "  "
          << records[*t.worst_part].part.serial;
    else
      out << right(dash, 10) << " " << right(dash, 10);
    out << '\n';
  }

  if (!s.positions.empty()) {
    out << "\nPosition: deviation of the axis from true position over the batch (mean vector, "
           "standard deviation per axis, mean radial)\n";
    out << padded("bore", id_width) << "  end       height   n     mean dx     mean dy      sd dx"
        << "      sd dy  mean radial\n";
    for (const PositionSpread& p : s.positions) {
      const auto row = [&](const char* end, double height, const DeviationSpread& d) {
        out << padded(p.bore, id_width) << "  " << padded(end, 6) << right(u.text(height), 10)
            << right(std::to_string(d.count), 4) << right(u.text(d.mean.x()), 12)
            << right(u.text(d.mean.y()), 12) << right(u.text(d.standard_deviation.x()), 11)
            << right(u.text(d.standard_deviation.y()), 11) << right(u.text(d.mean_radial), 13)
            << '\n';
        out << wrapped(d.note, options.width, std::string(id_width + 4, ' '));
      };
      row("top", p.top_height, p.top);
      row("bottom", p.bottom_height, p.bottom);
    }
  }
  out << '\n' << wrapped(std::string(safety_caution), options.width, "");
  return out.str();
}

}  // namespace cylzone
