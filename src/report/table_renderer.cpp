// The terminal table: the report model for people. Values in the plan's unit through the
// model's ReportUnits; verdicts as words, never colour alone (docs/report-schema.md).
#include <algorithm>
#include <cmath>
#include <sstream>
#include <utility>
#include <vector>

#include "cylzone/report/audit_report.hpp"
#include "cylzone/report/probing_report.hpp"
#include "cylzone/report/report.hpp"
#include "cylzone/version.hpp"

namespace cylzone {
namespace {

/// Columns a UTF-8 text takes on a terminal: one per code point (no wide characters are
/// printed by the table; continuation bytes 10xxxxxx take none).
std::size_t columns(std::string_view text) {
  std::size_t n = 0;
  for (char c : text) n += (static_cast<unsigned char>(c) & 0xC0) != 0x80;
  return n;
}

std::string pad(std::string text, std::size_t width) {
  const std::size_t used = columns(text);
  if (used < width) text.append(width - used, ' ');
  return text;
}

std::string pad_left(std::string text, std::size_t width) {
  const std::size_t used = columns(text);
  if (used < width) text.insert(0, width - used, ' ');
  return text;
}

/// The symbols of one table, UTF-8 or ASCII.
struct Symbols {
  std::string degree, microradian, none, cut;
  explicit Symbols(bool unicode)
      : degree(unicode ? "\u00b0" : " deg"),
        microradian(unicode ? "\u00b5rad" : "urad"),
        none(unicode ? "\u2014" : "-"),
        cut(unicode ? "\u2026" : "~") {}
};

/// Texts longer than a column's cap are cut with a marker and listed in full below the table.
class Shortener {
 public:
  explicit Shortener(const Symbols& s) : cut_(s.cut) {}
  /// `text`, or when it is longer than `cap` columns its start and the marker; two texts that
  /// would shorten alike are told apart by a number after the marker.
  std::string operator()(const std::string& text, std::size_t cap) {
    if (columns(text) <= cap) return text;
    for (const auto& [shortened, full] : full_)
      if (full == text) return shortened;
    std::string suffix;
    for (std::size_t n = 1;; ++n) {
      const std::string candidate = prefix(text, cap - 1 - columns(suffix)) + cut_ + suffix;
      bool taken = false;
      for (const auto& [shortened, full] : full_) taken = taken || shortened == candidate;
      if (!taken) {
        full_.emplace_back(candidate, text);
        return candidate;
      }
      suffix = std::to_string(n + 1);
    }
  }
  void list(std::ostream& out) const {
    for (const auto& [s, full] : full_) out << "  " << s << " = " << full << '\n';
  }
  bool empty() const noexcept { return full_.empty(); }

 private:
  /// The first `count` code points of `text`.
  static std::string prefix(const std::string& text, std::size_t count) {
    std::string out;
    std::size_t used = 0;
    for (char c : text) {
      if ((static_cast<unsigned char>(c) & 0xC0) != 0x80 && ++used > count) break;
      out += c;
    }
    return out;
  }
  std::string cut_;
  std::vector<std::pair<std::string, std::string>> full_;
};

/// `text` after `opening`, wrapped at blanks so no line exceeds `width` columns (a word longer
/// than a line stays whole); continuation lines are indented by `indent` blanks.
std::string wrapped(const std::string& opening, const std::string& text, std::size_t width,
                    std::size_t indent) {
  std::string out = opening, line_start_pad(indent, ' ');
  std::size_t used = columns(opening);
  std::istringstream words(text);
  std::string word;
  bool first = true;
  while (words >> word) {
    const std::size_t need = columns(word) + (first ? 0 : 1);
    if (!first && used + need > width) {
      out += "\n" + line_start_pad + word;
      used = indent + columns(word);
    } else {
      out += (first ? "" : " ") + word;
      used += need;
    }
    first = false;
  }
  return out + "\n";
}

constexpr std::size_t feature_cap = 16;    ///< bore ids longer than this are shortened
constexpr std::size_t reference_cap = 24;  ///< datum references and projected-zone labels

/// What the prepare stage did to the points (compensation, outliers removed with their file
/// lines), one note per feature it changed or examined.
void preparation_lines(std::ostream& out, const ReportModel& m, std::size_t width) {
  const ReportUnits& u = m.units;
  out << "\nPreparation of the points\n";
  for (const FeaturePreparation& p : m.preparation) {
    const PrepareRecord& r = p.record;
    std::string text;
    if (r.probe_tip.mode != CompensationMode::none) {
      text = "ball centres compensated by a tip of " + u.text(r.probe_tip.tip_diameter) + " " +
             std::string(u.name()) + " " + std::string(compensation_mode_name(r.probe_tip.mode));
      if (r.probe_tip.vectors_reversed) text += " (vectors reversed)";
    }
    for (const auto& [name, stage] : {std::pair{"neighbour filter", &r.outliers.neighbour_filter},
                                      std::pair{"residual rejection", &r.outliers.residual_rejection}}) {
      if (!stage->enabled) continue;
      if (!text.empty()) text += "; ";
      text += std::string(name) + ": ";
      if (!stage->skipped.empty()) {
        text += "not run (" + stage->skipped + ")";
        continue;
      }
      text += std::to_string(stage->removed.size()) + " of " + std::to_string(stage->examined) +
              " removed";
      std::string lines;
      std::size_t shown = 0;
      for (const RemovedPoint& q : stage->removed) {
        if (++shown > 10) {
          lines += ", ...";
          break;
        }
        lines += (lines.empty() ? "" : ", ") +
                 (q.line ? "line " + std::to_string(q.line) : "#" + std::to_string(q.index + 1));
      }
      if (!lines.empty()) text += " (" + lines + ")";
    }
    if (!text.empty()) out << wrapped("  " + p.role + ": ", text, width, 4);
  }
}

/// The whole-part scan: the cloud, the band, and what each feature took from it (points,
/// angular coverage about the nominal axis, probed against nominal depth).
void segmentation_lines(std::ostream& out, const ReportModel& m, const Symbols& sym,
                        std::size_t width) {
  const ReportUnits& u = m.units;
  const ScanSegmentation& s = *m.scan;
  out << wrapped("Scan segmentation: ",
                 s.path.filename().string() + ", " + std::to_string(s.points) + " points, band " +
                     u.text(s.options.band) + " " + std::string(u.name()) +
                     (s.used_vectors ? ", normals within " +
                                           ReportUnits::fixed(s.options.normal_agreement_deg, 1) +
                                           sym.degree
                                     : std::string(", no normals")) +
                     "; " + std::to_string(s.unassigned) + " points within no feature's band",
                 width, 4);
  if (const std::optional<PlacementSearchSummary>& f = s.search)
    out << wrapped("  placement found from the cloud and the nominal datum features: ",
                   std::to_string(f->hypotheses) +
                       (f->hypotheses == 1 ? " placement" : " placements") +
                       " tried, the best with " +
                       std::to_string(f->inliers) + " sample points within the band" +
                       (f->runner_up_distance > 0.0
                            ? "; the best elsewhere (" + u.text(f->runner_up_distance) + " " +
                                  std::string(u.name()) + " away) " +
                                  std::to_string(f->runner_up_inliers)
                            : std::string()),
                   width, 4);
  if (const std::optional<RegistrationResult>& r = s.registration)
    out << wrapped(s.search ? "  found placement refined: " : "  placement registered to the datum features: ",
                   std::to_string(r->iterations) + " iterations" +
                       (r->converged ? "" : " (not converged)") + ", " +
                       std::to_string(r->points) + " points, rms " + u.text(r->rms) + " " +
                       std::string(u.name()) +
                       (r->free_directions > 0
                            ? ", " + std::to_string(r->free_directions) +
                                  " direction(s) not fixed by the datums kept as placed"
                            : std::string()),
                   width, 4);
  std::size_t role_w = 8;
  for (const FeatureSegmentation& f : s.features) role_w = std::max(role_w, columns(f.role) + 2);
  out << "  " << pad("feature", role_w) << pad_left("points", 9) << pad_left("angular", 12)
      << pad_left("probed depth", 16) << pad_left("nominal", 12) << '\n';
  for (const FeatureSegmentation& f : s.features) {
    out << "  " << pad(f.role, role_w) << pad_left(std::to_string(f.points), 9);
    if (f.is_cylinder())
      out << pad_left(ReportUnits::fixed(*f.angular_coverage_deg, 1) + sym.degree, 12)
          << pad_left(u.text(f.probed_span), 16) << pad_left(u.text(f.nominal_span), 12);
    else
      out << pad_left(sym.none, 12) << pad_left(sym.none, 16) << pad_left(sym.none, 12);
    out << '\n';
  }
  out << '\n';
}

void datum_lines(std::ostream& out, const ReportModel& m, std::size_t width) {
  const ReportUnits& u = m.units;
  out << "Datum reference frame\n";
  for (const DatumSummary& d : m.datums) {
    out << "  " << d.label << "  " << d.feature;
    if (d.flatness) {
      out << ", " << d.association << ", flatness " << u.text(*d.flatness)
          << (d.material_side_inferred ? ", material side inferred" : "") << '\n';
    } else if (d.mating_size && d.boundary) {
      // A datum feature of size: its related mating size (a diameter, or a width), the boundary
      // it is used at and, at MMB, the boundary size and the shift it allows.
      out << ", related mating " << (d.mating_is_width ? "width" : "size") << " "
          << u.text(*d.mating_size) << ", " << boundary_name(*d.boundary);
      // The datum mobility applies MMB only; LMB is left fixed, which is conservative.
      if (*d.boundary == MaterialBoundary::mmb && d.mmb_size)
        out << " " << u.text(*d.mmb_size) << ", shift allowance " << u.text(d.shift_allowance);
      if (*d.boundary == MaterialBoundary::lmb) out << " (shift not applied: conservative)";
      out << '\n';
    } else {
      out << ", tangent least squares perpendicular to A\n";
    }
  }
  for (const std::string& note : m.frame_notes) out << wrapped("  note: ", note, width, 8);
  out << '\n';
}

/// "id X, serial Y, time T, KEY=VALUE; ..." of the parts given; empty when none is.
std::string identity_line(const PartIdentity& p) {
  std::string line;
  const auto add = [&](const char* label, const std::string& value) {
    if (!value.empty()) line += (line.empty() ? "" : ", ") + std::string(label) + value;
  };
  add("id ", p.id);
  add("serial ", p.serial);
  add("time ", p.timestamp);
  add("", p.notes_text());
  return line;
}

/// The texts joined by ", " (lists of bore ids in notes).
std::string joined(const std::vector<std::string>& texts) {
  std::string out;
  for (const std::string& t : texts) out += (out.empty() ? "" : ", ") + t;
  return out;
}

/// One line per evaluated bore: the probed span against the evaluated range, the extrapolation
/// at each end, the factor a tilt error grows by over the range, the sections, points per
/// section and the angular coverage (evaluate/sampling_coverage.hpp). Under 120 columns.
void sampling_lines(std::ostream& out, const ReportModel& m, std::size_t bore_w,
                    const Symbols& sym, Shortener& shorten) {
  if (std::none_of(m.bores.begin(), m.bores.end(),
                   [](const BoreSummary& b) { return b.sampling.has_value(); }))
    return;
  const ReportUnits& u = m.units;
  const auto length = [&](double mm) { return ReportUnits::fixed(u.length(mm), u.decimals() - 2); };
  // A median of an even number of sections may end in .5; whole numbers print without decimals.
  const auto count = [](double c) { return ReportUnits::fixed(c, c == std::floor(c) ? 0 : 1); };
  out << "\nSampling (probed span against the evaluated range; x tilt: how many times the range "
         "magnifies\nan error in the fitted tilt; coverage: largest arc about the axis, all "
         "points / worst section)\n";
  out << pad("bore", bore_w) << pad_left("probed", 8) << pad_left("evaluated", 11)
      << pad_left("beyond top/bottom", 19) << pad_left("x tilt", 8) << pad_left("sections", 10)
      << pad_left("points min/median", 19) << pad_left("coverage", 22) << '\n';
  for (const BoreSummary& b : m.bores) {
    if (!b.sampling) continue;
    const SamplingCoverage& s = *b.sampling;
    out << pad(shorten(b.id, feature_cap), bore_w)
        << pad_left(length(s.span()), 8) << pad_left(length(s.range_top - s.range_bottom), 11)
        << pad_left(length(s.extrapolation_top) + " / " + length(s.extrapolation_bottom), 19)
        << pad_left(s.magnification ? ReportUnits::fixed(*s.magnification, 2) : sym.none, 8)
        << pad_left(std::to_string(s.sections.size()), 10)
        << pad_left(std::to_string(s.section_points_min) + " / " + count(s.section_points_median),
                    19)
        << pad_left(ReportUnits::fixed(s.coverage_deg, 1) + sym.degree + " / " +
                        ReportUnits::fixed(s.worst_section_coverage_deg, 1) + sym.degree,
                    22)
        << '\n';
  }
}

/// One sensitivity column: an association (or two giving identical figures) and its cells.
struct SensitivityColumn {
  std::string header;
  std::vector<std::string> cells;  ///< one per bore
};

/// The legend of the decision rule's columns: the rules in force, where U came from and what
/// a fallback to simple acceptance means (docs/evaluation.md, "Decision rules").
std::string decision_legend(const ReportModel& m) {
  std::vector<std::string> rules, sources;
  bool fallback = false;
  const auto add = [](std::vector<std::string>& list, std::string text) {
    if (std::find(list.begin(), list.end(), text) == list.end()) list.push_back(std::move(text));
  };
  for (const Characteristic& c : m.characteristics) {
    add(rules, std::string(decision_rule_name(c.rule)));
    if (c.uncertainty)
      add(sources,
          c.uncertainty->source + ", k = " + ReportUnits::fixed(c.uncertainty->coverage_factor, 2));
    fallback = fallback || !c.rule_note.empty();
  }
  std::string text = "Decision rule: ";
  for (std::size_t k = 0; k < rules.size(); ++k) text += (k ? ", " : "") + rules[k];
  text += ". 'allowed' is the effective tolerance (after bonus). ISO 14253-1 (ISO 14253-1:2017 "
          "default rule): conformance is proven up to 'accept', the allowed limit reduced by U, "
          "non-conformance beyond the allowed limit enlarged by U, in between not proven; a "
          "guard band g moves both by g instead. U: expanded uncertainty";
  if (sources.empty()) text += " (none known)";
  else {
    text += " (";
    for (std::size_t k = 0; k < sources.size(); ++k) text += (k ? "; " : "") + sources[k];
    text += ")";
  }
  text += ".";
  if (fallback)
    text += " A row marked 'U not evaluated' or 'no guard band' was decided by simple "
            "acceptance: no guarded decision was made for it.";
  return text + "\n";
}

}  // namespace

namespace {

/// The Monte Carlo study's section (uncertainty/monte_carlo.hpp): per characteristic the
/// standard uncertainty u, the reported 95 % interval and the axis' ambiguity; the notes
/// below it say where the interval was widened and where the spread measures tie-breaking.
void uncertainty_lines(std::ostream& out, const ReportModel& m, std::size_t width) {
  const MonteCarloSummary& s = *m.uncertainty;
  const ReportUnits& u = m.units;
  const int w = 10;
  std::string model = s.probing == ProbingModel::sigma
                          ? "isotropic probing sigma " +
                                u.text(s.feature_sigma.empty() ? 0.0 : s.feature_sigma.front())
                          : std::string("probing sigma estimated per feature from its "
                                        "least-squares residuals");
  if (s.length_error)
    model += ", length error E = A + L/K (A " + u.text(s.length_error->a) + ", K " +
             ReportUnits::fixed(s.length_error->k, 1) + ", L " + u.text(s.length) + ")";
  out << "\nMeasurement uncertainty (Monte Carlo, JCGM 101:2008; "
      << ReportUnits::fixed(100.0 * s.coverage, 0) << " % shortest interval)\n";
  out << wrapped("  ", model + "; " + s.message + "; status " +
                           std::string(monte_carlo_status_name(s.status)),
                 width, 4);
  out << wrapped("  ", std::to_string(s.chebyshev_fits) +
                           " Chebyshev fits in the trials on the dense solver; " +
                           std::to_string(s.lp_fallbacks) +
                           " of their linear programmes fell back to Clp; " + warm_start_text(s),
                 width, 4);
  out << pad("id", 28) << pad_left("value", w) << pad_left("u", w) << pad_left("low", w)
      << pad_left("high", w) << pad_left("ambiguity", w + 1) << '\n';
  for (const CharacteristicUncertainty& c : s.characteristics) {
    // Fewer than two trials evaluated it: no figure (its note says why).
    const bool has = c.statistics.trials >= 2;
    const auto figure = [&](double mm) { return has ? u.text(mm) : std::string("-"); };
    out << pad(c.id, 28) << pad_left(u.text(c.value), w)
        << pad_left(figure(c.statistics.standard_uncertainty), w)
        << pad_left(figure(c.interval.low), w) << pad_left(figure(c.interval.high), w)
        << pad_left(c.ambiguity > 0.0 ? u.text(c.ambiguity) : std::string("-"), w + 1)
        << (c.tie_breaking ? "  !" : "") << '\n';
  }
  for (const CharacteristicUncertainty& c : s.characteristics)
    if (!c.note.empty()) out << wrapped("  " + c.id + ": ", in_report_unit(c.note, u), width, 6);
  for (const std::string& warning : s.warnings)
    out << wrapped("warning: uncertainty: ", warning, width, 4);
}

}  // namespace

std::string format_table(const ReportModel& m, const TableOptions& options) {
  const ReportUnits& u = m.units;
  const Symbols sym(options.unicode);
  Shortener shorten(sym);
  const int w = u.decimals() + 5;
  std::ostringstream out;
  out << "cylzone " << m.tool_version << " check: " << m.plan_name << "  ("
      << m.plan_file.filename().string() << ", values in " << u.name() << ")\n";
  const std::string identity = identity_line(m.part);
  if (!identity.empty()) out << wrapped("part: ", identity, options.width, 6);
  out << '\n';
  if (m.scan) segmentation_lines(out, m, sym, options.width);
  datum_lines(out, m, options.width);

  // One row per bore and characteristic; the text columns as wide as their content.
  std::size_t feature_w = 4, name_w = 14, reference_w = 9;
  for (const Characteristic& c : m.characteristics) {
    feature_w = std::max(feature_w, std::min(columns(c.feature), feature_cap));
    name_w = std::max(name_w, columns(c.name));
    reference_w = std::max(reference_w, std::min(columns(c.reference), reference_cap));
  }
  feature_w += 2;
  name_w += 2;
  reference_w += 2;
  out << pad("bore", feature_w) << pad("characteristic", name_w) << pad("reference", reference_w)
      << pad_left("value", w) << "    " << pad_left("limit", w) << pad_left("bonus", w)
      << pad_left("allowed", w) << "   verdict";
  // The decision rule's columns, only when a rule other than simple acceptance was asked for or
  // a U is known (a plan without [decision] keeps the table as it was).
  const bool rule_shown = decision_details_shown(m.characteristics);
  constexpr std::size_t verdict_w = 19;
  if (rule_shown)
    out << std::string(verdict_w - 7, ' ') << pad_left("U", w) << pad_left("accept", w)
        << "  rule";
  out << '\n';
  // U, the acceptance limit (the rejection limit mirrors it about `allowed`: legend) and the
  // rule in force, with the reason when simple acceptance stood in for the rule asked for.
  const auto rule_columns = [&](const Characteristic& c, std::size_t verdict_columns) {
    if (!rule_shown) return std::string();
    std::string text = std::string(verdict_w - std::min(verdict_w - 1, verdict_columns), ' ');
    text += pad_left(c.uncertainty ? u.text(c.uncertainty->expanded) : std::string(sym.none), w);
    text += pad_left(u.text(c.acceptance_limit), w);
    text += "  " + std::string(decision_rule_name(c.rule));
    if (!c.rule_note.empty()) text += " (" + c.rule_note.substr(0, c.rule_note.find(':')) + ")";
    return text;
  };
  std::string previous;
  bool footnote = false;
  // A bore's rows not evaluated show no value; their reasons follow the bore's rows, once each.
  std::vector<std::string> reasons;
  const auto flush_reasons = [&] {
    for (const std::string& reason : reasons)
      out << wrapped("  " + previous + " not evaluated: ", reason, options.width, 4);
    reasons.clear();
  };
  for (const Characteristic& c : m.characteristics) {
    if (!previous.empty() && c.feature != previous) {
      flush_reasons();
      out << '\n';
    }
    previous = c.feature;
    std::string verdict(verdict_name(c.verdict));
    if (!c.not_evaluated.empty()) {
      if (std::find(reasons.begin(), reasons.end(), c.not_evaluated) == reasons.end())
        reasons.push_back(c.not_evaluated);
      out << pad(shorten(c.feature, feature_cap), feature_w) << pad(c.name, name_w)
          << pad(shorten(c.reference, reference_cap), reference_w) << pad_left(sym.none, w)
          << ' ' << comparison_symbol(c.comparison) << ' ' << pad_left(u.text(c.tolerance), w)
          << pad_left(u.text(c.bonus), w) << pad_left(u.text(c.allowed), w) << "   "
          << (c.decisive ? "not evaluated" : "(not evaluated)*")
          << rule_columns(c, c.decisive ? 13 : 16) << '\n';
      footnote = footnote || !c.decisive;
      continue;
    }
    if (!c.decisive) {
      verdict = "(" + verdict + ")*";
      footnote = true;
    } else if (c.verdict == Verdict::does_not_conform) {
      verdict = "DOES NOT CONFORM";
    }
    out << pad(shorten(c.feature, feature_cap), feature_w) << pad(c.name, name_w)
        << pad(shorten(c.reference, reference_cap), reference_w) << pad_left(u.text(c.value), w)
        << ' ' << comparison_symbol(c.comparison) << ' ' << pad_left(u.text(c.tolerance), w)
        << pad_left(u.text(c.bonus), w) << pad_left(u.text(c.allowed), w) << "   " << verdict
        << rule_columns(c, columns(verdict)) << '\n';
  }
  flush_reasons();
  if (footnote)
    out << "\n* shown for comparison: the datum reference lets the frame move, and the "
           "'datum mobility' row decides.\n";
  if (rule_shown) out << '\n' << wrapped("", decision_legend(m), options.width, 2);

  // Along the depth: what single-plane summaries hide.
  const std::size_t bore_w = std::max<std::size_t>(8, std::min(feature_w, feature_cap + 2));
  out << "\nAlong the depth (z from datum A; dx, dy from true position; 2D = single-plane "
         "position)\n";
  out << pad("bore", bore_w) << pad_left("top z", w) << pad_left("dx", w) << pad_left("dy", w)
      << pad_left("2D", w) << pad_left("bottom z", w + 1) << pad_left("dx", w)
      << pad_left("dy", w) << pad_left("2D", w) << "  leaves zone at\n";
  for (const BoreSummary& b : m.bores) {
    if (!b.depth || b.depth->samples.empty()) continue;
    const AxisDeviation& top = b.depth->samples.front();
    const AxisDeviation& bottom = b.depth->samples.back();
    out << pad(shorten(b.id, feature_cap), bore_w) << pad_left(u.text(top.height), w)
        << pad_left(u.text(top.offset.x()), w) << pad_left(u.text(top.offset.y()), w)
        << pad_left(u.text(top.diameter()), w) << pad_left(u.text(bottom.height), w + 1)
        << pad_left(u.text(bottom.offset.x()), w) << pad_left(u.text(bottom.offset.y()), w)
        << pad_left(u.text(bottom.diameter()), w) << "  "
        << (b.depth->leaves_zone_at ? "z = " + u.text(*b.depth->leaves_zone_at)
                                    : std::string("stays inside"))
        << '\n';
  }

  // The axis and where its evaluated range comes from: a range from the probed extent is not
  // the bore's full depth, and the table says so.
  out << "\nAxis and evaluated range (range from: where the z range above comes from)\n";
  std::size_t source_w = 10;
  for (const BoreSummary& b : m.bores)
    source_w = std::max(source_w, columns(range_source_name(
                                      b.depth ? b.depth->range_source : b.depth_source)));
  source_w += 2;
  out << pad("bore", bore_w) << pad("range from", source_w) << pad_left("probed z", 17)
      << pad_left("tilt " + sym.microradian, 12) << pad_left("toward", 10) << '\n';
  std::vector<std::string> unknown_depth;
  std::vector<std::string> held;
  for (const BoreSummary& b : m.bores) {
    if (!b.evaluated()) {
      out << pad(shorten(b.id, feature_cap), bore_w) << "not evaluated\n";
      continue;
    }
    if (b.axis_direction == "nominal") held.push_back(b.id);
    const RangeSource source = b.depth ? b.depth->range_source : b.depth_source;
    if (b.depth_source != RangeSource::plan_depth) unknown_depth.push_back(b.id);
    out << pad(shorten(b.id, feature_cap), bore_w) << pad(range_source_name(source), source_w)
        << pad_left(ReportUnits::fixed(u.length(b.probed_top), u.decimals() - 2) + " .. " +
                        ReportUnits::fixed(u.length(b.probed_bottom), u.decimals() - 2),
                    17)
        << pad_left(ReportUnits::fixed(b.tilt_rad * 1e6, 1), 12)
        << pad_left(ReportUnits::fixed(b.tilt_azimuth_deg, 0) + sym.degree, 10) << '\n';
  }
  if (!unknown_depth.empty()) {
    out << wrapped("note: ",
                   "no full depth in the plan for " + joined(unknown_depth) +
                       ": the zone was checked over the probed extent only, and the bore's full "
                       "depth is unknown to cylzone. Give `depth` in the plan to check the full "
                       "depth.",
                   options.width, 6);
  }
  if (!held.empty()) {
    out << wrapped("note: ",
                   "axis direction held at the nominal direction for " + joined(held) +
                       " (axis_direction = \"nominal\"): position is evaluated on that axis, "
                       "its tilt is zero by construction and perpendicularity is not evaluated.",
                   options.width, 6);
  }

  // Sampling adequacy: what the axis rests on against the range it is judged over.
  sampling_lines(out, m, bore_w, sym, shorten);
  out << format_probing_predictions(m, options.unicode);  // check --predict-probing only

  // The study's columns come from the first bore it has rows for (a bore not evaluated has none).
  const auto studied = std::find_if(m.sensitivity.begin(), m.sensitivity.end(),
                                    [](const BoreSensitivity& s) { return !s.rows.empty(); });
  if (studied != m.sensitivity.end()) {
    // Columns of cells; an association whose cells equal an earlier column's for every bore
    // (tangent minimax and minimum zone of A give the same orientation) joins that column.
    std::vector<SensitivityColumn> table;
    bool any_change = false;
    const std::size_t associations = studied->rows.size();
    for (std::size_t k = 0; k < associations; ++k) {
      SensitivityColumn column;
      column.header = association_name(studied->rows[k].association);
      for (const BoreSensitivity& s : m.sensitivity) {
        if (k >= s.rows.size()) {
          column.cells.push_back(sym.none);
          continue;
        }
        const AssociationSensitivity& planned = s.rows.front();
        const AssociationSensitivity& row = s.rows[k];
        const bool has_position = m.find(s.bore_id + "/position") != nullptr;
        const bool has_perpendicularity = m.find(s.bore_id + "/perpendicularity") != nullptr;
        const bool p_changed = has_position && row.position_verdict != planned.position_verdict;
        const bool q_changed = has_perpendicularity &&
                               row.perpendicularity_verdict != planned.perpendicularity_verdict;
        any_change = any_change || p_changed || q_changed;
        column.cells.push_back(
            (has_position ? u.text(row.position) : sym.none) + (p_changed ? "!" : " ") + "/ " +
            (has_perpendicularity ? u.text(row.perpendicularity) : sym.none) +
            (q_changed ? "!" : " "));
      }
      bool merged = false;
      for (SensitivityColumn& earlier : table)
        if (earlier.cells == column.cells) {
          earlier.header += " = " + column.header;
          merged = true;
          break;
        }
      if (!merged) table.push_back(std::move(column));
    }
    SensitivityColumn spread{"spread", {}};
    std::vector<std::string> skipped;
    for (const BoreSensitivity& s : m.sensitivity) {
      if (s.rows.empty()) {
        spread.cells.push_back(sym.none + " ");
        if (!s.skipped.empty()) skipped.push_back(s.bore_id + " (" + s.skipped + ")");
        continue;
      }
      const bool has_perpendicularity = m.find(s.bore_id + "/perpendicularity") != nullptr;
      spread.cells.push_back(u.text(s.position_spread) + " / " +
                             (has_perpendicularity ? u.text(s.perpendicularity_spread) : sym.none) +
                             " ");
    }
    table.push_back(std::move(spread));
    out << "\nSensitivity to the association of datum A (position / perpendicularity; ! = the "
           "verdict differs\nfrom the plan's association; a = b: both give the same figures for "
           "every bore)\n";
    std::vector<std::size_t> widths;
    out << pad("bore", bore_w);
    for (const SensitivityColumn& c : table) {
      std::size_t cw = columns(c.header);
      for (const std::string& cell : c.cells) cw = std::max(cw, columns(cell));
      widths.push_back(cw + 2);
      out << pad_left(c.header, widths.back());
    }
    out << '\n';
    for (std::size_t row = 0; row < m.sensitivity.size(); ++row) {
      out << pad(shorten(m.sensitivity[row].bore_id, feature_cap), bore_w);
      for (std::size_t k = 0; k < table.size(); ++k)
        out << pad_left(table[k].cells[row], widths[k]);
      out << '\n';
    }
    if (!skipped.empty()) out << wrapped("Skipped: ", joined(skipped), options.width, 9);
    if (any_change)
      out << "A verdict that changes with the association of A is decided by the datum method, "
             "not the part:\nagree the method with the customer before comparing results.\n";
  }

  if (!shorten.empty()) {
    out << "\nShortened above:\n";
    shorten.list(out);
  }

  if (m.uncertainty) uncertainty_lines(out, m, options.width);

  if (m.points_prepared()) preparation_lines(out, m, options.width);

  for (const BoreSummary& b : m.bores) {
    if (!b.mobility.empty()) out << "datum mobility, bore " << b.id << ": " << b.mobility << '\n';
    if (!b.boundary.empty())
      out << wrapped("virtual condition, bore " + b.id + ": ", b.boundary, options.width, 4);
  }
  for (const BoreSummary& b : m.bores)
    for (const std::string& warning : b.warnings)
      out << wrapped("warning: bore " + b.id + ": ", warning, options.width, 4);
  for (const std::string& warning : m.warnings)
    out << wrapped("warning: ", warning, options.width, 4);

  std::size_t failing = 0;
  for (const BoreSummary& b : m.bores) failing += b.verdict == Verdict::does_not_conform;
  std::string verdict = "CONFORMS";
  if (m.verdict == Verdict::does_not_conform)
    verdict = "DOES NOT CONFORM (" + std::to_string(failing) + " of " +
              std::to_string(m.bores.size()) + " bores)";
  std::size_t unevaluated = 0;
  for (const Characteristic& c : m.characteristics)
    unevaluated += c.decisive && !c.not_evaluated.empty();
  if (m.verdict == Verdict::not_proven && unevaluated > 0)
    verdict = "NOT PROVEN (" + std::to_string(unevaluated) + " of " +
              std::to_string(m.characteristics.size()) +
              " characteristics could not be evaluated; see the reasons above)";
  else if (m.verdict == Verdict::not_proven)
    verdict = "NOT PROVEN (conformance not proven within the measurement uncertainty)";
  out << "\nPart verdict: " << verdict << "\n\n"
      << wrapped("", std::string(safety_caution), std::min<std::size_t>(options.width, 100), 0);
  return out.str();
}

std::string format_table(const PartCheckResult& result) {
  return format_table(make_report_model(result));
}

// ------------------------------------------------------------------ the audit's table

std::string format_audit_table(const AuditReport& r, const TableOptions& options) {
  const ReportUnits& u = r.units;
  const Symbols sym(options.unicode);
  Shortener shorten(sym);
  const AuditResult& a = r.audit;
  const int w = u.decimals() + 5;
  const auto len = [&](double mm) { return pad_left(u.text(mm), static_cast<std::size_t>(w)); };
  std::ostringstream out;
  out << "cylzone " << r.tool_version << " audit: " << r.plan_name << "  (values in " << u.name()
      << ")\n";
  out << wrapped("summary: ",
                 r.summary_file + " (" +
                     (r.summary_deviations ? "deviations dx, dy" : "coordinates x, y") + " in " +
                     r.summary_unit + "); same-plane tolerance " +
                     u.text(a.same_plane_tolerance) + " (as a diameter)",
                 options.width, 4);
  const std::string identity = identity_line(r.part);
  if (!identity.empty()) out << wrapped("part: ", identity, options.width, 6);

  std::size_t id_w = 4;
  for (const BoreAudit& b : a.bores) id_w = std::max(id_w, std::min(columns(b.id), feature_cap));
  // 1. The summary's centre beside cylzone's at the same plane.
  out << "\nAt the summary's plane (dx, dy from true position; 2D = 2 sqrt(dx^2 + dy^2); * = the "
         "plane compared)\n"
      << pad("bore", id_w) << "  " << pad("plane", 16) << pad_left("z", w) << "  "
      << pad_left("summ. dx", w) << pad_left("dy", w) << pad_left("2D", w) << "  "
      << pad_left("cylz. dx", w) << pad_left("dy", w) << pad_left("2D", w) << "  "
      << pad_left("apart", w) << pad_left("allowed", w) << '\n';
  for (const BoreAudit& b : a.bores) {
    if (b.centres.empty()) {
      out << pad(shorten(b.id, id_w), id_w) << "  not evaluated by cylzone\n";
      continue;
    }
    for (const ReportedCentre& c : b.centres) {
      for (std::size_t i = 0; i < c.cylzone.size(); ++i) {
        const PlaneFigures& p = c.cylzone[i];
        const bool first = i == 0;
        out << pad(first ? shorten(b.id, id_w) : std::string(), id_w) << "  "
            << pad(std::string(plane_label_name(p.label)) + (i == c.compared ? " *" : ""), 16)
            << len(p.height) << "  ";
        if (first)
          out << len(c.offset.x()) << len(c.offset.y()) << len(c.position);
        else
          out << std::string(static_cast<std::size_t>(3 * w), ' ');
        out << "  " << len(p.offset.x()) << len(p.offset.y()) << len(p.position);
        if (i == c.compared)
          out << "  " << len(2.0 * (c.offset - p.offset).norm()) << len(c.discrepancy_allowed);
        out << '\n';
      }
    }
  }

  // 2. The summary's verdict against the full depth, and the finding.
  out << "\nOver the full depth (summary: its own figures; cylzone: the position that decides)\n"
      << pad("bore", id_w) << "  " << pad_left("summ. pos", w + 1) << "  " << pad("verdict", 10)
      << pad_left("position", w) << pad_left("allowed", w) << "  " << pad("verdict", 17)
      << pad_left("perp.", w) << pad_left("allowed", w) << "  finding\n";
  for (const BoreAudit& b : a.bores) {
    out << pad(shorten(b.id, id_w), id_w) << "  "
        << pad_left(b.reported_position ? u.text(*b.reported_position) : sym.none, w + 1) << "  "
        << pad(b.reported_conforms ? std::string(*b.reported_conforms ? "pass" : "fail") +
                                         (b.verdict_implied ? " (i)" : "")
                                   : sym.none,
               10);
    if (b.position_id.empty())
      out << pad_left(sym.none, w) << pad_left(sym.none, w) << "  " << pad(sym.none, 17);
    else
      out << len(b.position) << len(b.allowed) << "  "
          << pad(b.position_verdict == Verdict::does_not_conform
                     ? std::string("DOES NOT CONFORM")
                     : std::string(verdict_name(b.position_verdict)),
                 17);
    if (b.perpendicularity)
      out << len(*b.perpendicularity) << len(*b.perpendicularity_allowed);
    else
      out << pad_left(sym.none, w) << pad_left(sym.none, w);
    out << "  " << (b.overturned ? "OVERTURNED: " : "") << summary_finding_name(b.finding) << '\n';
  }
  if (std::any_of(a.bores.begin(), a.bores.end(),
                  [](const BoreAudit& b) { return b.verdict_implied; }))
    out << "(i) the summary prints no verdict: its position compared with the zone cylzone "
           "allows\n";
  // 3. Sizes, when the summary prints them: beside cylzone's unrelated mating envelope (the
  // size a bore's MMC bonus comes from) and least-squares diameter, for comparison only.
  if (std::any_of(a.bores.begin(), a.bores.end(),
                  [](const BoreAudit& b) { return b.reported_diameter.has_value(); })) {
    out << "\nDiameters (for comparison, not judged)\n"
        << pad("bore", id_w) << "  " << pad_left("summary", w + 1) << pad_left("mating", w + 1)
        << pad_left("l. sq.", w + 1) << pad_left("diff.", w + 1) << '\n';
    for (const BoreAudit& b : a.bores) {
      if (!b.reported_diameter || b.position_id.empty()) continue;
      out << pad(shorten(b.id, id_w), id_w) << "  " << ' ' << len(*b.reported_diameter) << ' '
          << len(b.mating_envelope) << ' ' << len(b.least_squares_diameter) << ' '
          << len(*b.reported_diameter - b.mating_envelope) << '\n';
    }
  }
  if (!shorten.empty()) {
    out << "Shortened:\n";
    shorten.list(out);
  }
  out << '\n';
  for (const BoreAudit& b : a.bores)
    out << wrapped("  " + b.id + ", " + std::string(summary_finding_name(b.finding)) + ": ",
                   b.reason, options.width, 6);
  for (const BoreAudit& b : a.bores)
    if (b.two_depth_position)
      out << wrapped("  " + b.id + ": ",
                     "the line through the summary's two depths gives " +
                         u.text(*b.two_depth_position) + " over " + u.text(b.range_top) + " .. " +
                         u.text(b.range_bottom),
                     options.width, 6);
  out << wrapped("Same-plane differences: ", a.explanation_text, options.width, 4);
  std::string rows, bores;
  for (const UnmatchedRow& row : a.unmatched_rows)
    rows += (rows.empty() ? "" : ", ") + shorten(row.id, 24) + " (line " +
            std::to_string(row.line) + ")";
  for (const std::string& id : a.unmatched_bores) bores += (bores.empty() ? "" : ", ") + id;
  if (!rows.empty())
    out << wrapped("Summary rows naming no bore of the plan: ", rows, options.width, 4);
  if (!bores.empty()) out << wrapped("Bores the summary does not give: ", bores, options.width, 4);
  for (const std::string& warning : r.warnings)
    out << wrapped("warning: ", warning, options.width, 4);
  std::size_t overturned = 0;
  for (const BoreAudit& b : a.bores) overturned += b.overturned;
  std::string verdict = "EVERY SUMMARY VERDICT STANDS";
  if (overturned > 0)
    verdict = "OVERTURNED (" + std::to_string(overturned) + " of " +
              std::to_string(a.bores.size()) + " bores)";
  else if (a.any_not_decided())
    verdict = "NOT DECIDED (a bore cylzone could not evaluate or decide)";
  out << "\nSummary verdict: " << verdict << "\n\n"
      << wrapped("", std::string(safety_caution), std::min<std::size_t>(options.width, 100), 0);
  return out.str();
}

}  // namespace cylzone
