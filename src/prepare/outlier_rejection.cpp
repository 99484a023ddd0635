// Outlier rejection: the neighbour filter (the stray-point screen's flags, removed) and the
// residual rejection (Hampel's identifier on least-squares residuals, refitted until stable).
// outlier_rejection.hpp states the criteria, their constants and sources.
#include "cylzone/prepare/outlier_rejection.hpp"

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <limits>
#include <stdexcept>
#include <string>

#include "cylzone/prepare/neighbour_index.hpp"
#include "detail/fit_support.hpp"
#include "prepare/detail/robust_scale.hpp"

namespace cylzone {
namespace {

void check_options(const OutlierOptions& o) {
  if (!(o.residual_threshold > 0.0) || !std::isfinite(o.residual_threshold))
    throw std::invalid_argument("reject_outliers: residual_threshold must be positive and finite");
  if (!(o.residual_floor >= 0.0) || !std::isfinite(o.residual_floor))
    throw std::invalid_argument("reject_outliers: residual_floor must be finite and >= 0");
  if (o.max_iterations < 1)
    throw std::invalid_argument("reject_outliers: max_iterations must be at least 1");
  if (!(o.warn_share >= 0.0 && o.warn_share <= 1.0))
    throw std::invalid_argument("reject_outliers: warn_share must be in [0, 1]");
}

/// The columns `keep` of `cloud` (points, vectors when present, lines when present).
PointCloud subset(const PointCloud& cloud, const std::vector<std::size_t>& keep) {
  PointCloud out;
  out.source = cloud.source;
  out.file_unit = cloud.file_unit;
  const auto n = static_cast<Eigen::Index>(keep.size());
  out.points.resize(3, n);
  if (cloud.has_vectors()) out.vectors.resize(3, n);
  for (Eigen::Index j = 0; j < n; ++j) {
    const auto i = static_cast<Eigen::Index>(keep[static_cast<std::size_t>(j)]);
    out.points.col(j) = cloud.points.col(i);
    if (cloud.has_vectors()) out.vectors.col(j) = cloud.vectors.col(i);
  }
  if (cloud.lines.size() == cloud.size())
    for (std::size_t i : keep) out.lines.push_back(cloud.lines[i]);
  return out;
}

/// The state both stages update: the given cloud, the kept columns and their cloud.
struct Kept {
  const PointCloud& original;
  std::vector<std::size_t> columns;
  PointCloud cloud;

  /// Removes the kept points at positions `drop` (ascending, positions in `cloud`), recording
  /// each with its residual in `r` and whether it lay beyond the other points on `side`.
  void remove(const std::vector<std::size_t>& drop, const Eigen::VectorXd& r, ContactSide side,
              OutlierStageRecord& stage) {
    if (drop.empty()) return;
    // The extreme of the points that stay, on the envelope's side.
    double extreme = side == ContactSide::lowest ? std::numeric_limits<double>::infinity()
                                                 : -std::numeric_limits<double>::infinity();
    std::vector<bool> dropped(columns.size(), false);
    for (std::size_t k : drop) dropped[k] = true;
    for (std::size_t k = 0; k < columns.size(); ++k)
      if (!dropped[k])
        extreme = side == ContactSide::lowest ? std::min(extreme, r(static_cast<Eigen::Index>(k)))
                                              : std::max(extreme, r(static_cast<Eigen::Index>(k)));
    for (std::size_t k : drop) {
      RemovedPoint p;
      p.index = columns[k];
      p.line = p.index < original.lines.size() ? original.lines[p.index] : 0;
      p.residual = r(static_cast<Eigen::Index>(k));
      p.contact = side == ContactSide::lowest ? p.residual < extreme : p.residual > extreme;
      stage.removed.push_back(p);
    }
    std::vector<std::size_t> next;
    for (std::size_t k = 0; k < columns.size(); ++k)
      if (!dropped[k]) next.push_back(columns[k]);
    columns = std::move(next);
    cloud = subset(original, columns);
  }
};

std::string share_text(std::size_t part, std::size_t whole) {
  return detail::format_number(100.0 * static_cast<double>(part) / static_cast<double>(whole), 1) +
         " %";
}

}  // namespace

OutlierResult reject_outliers(const PointCloud& cloud, const ElementResiduals& residuals,
                              ContactSide contact_side, const OutlierOptions& options) {
  check_options(options);
  OutlierResult result;
  OutlierRecord& record = result.record;
  record.neighbour_filter.enabled = options.neighbour_filter;
  record.residual_rejection.enabled = options.residual_rejection;
  std::vector<std::size_t> all(cloud.size());
  for (std::size_t i = 0; i < all.size(); ++i) all[i] = i;
  if (!options.neighbour_filter && !options.residual_rejection) {
    result.cloud = cloud;
    result.kept = std::move(all);
    return result;
  }
  Kept kept{cloud, all, cloud};

  // ---- Stage 1: the stray-point screen's flags, removed (one pass).
  if (options.neighbour_filter) {
    OutlierStageRecord& stage = record.neighbour_filter;
    if (kept.cloud.size() <= options.neighbours.neighbours) {
      stage.skipped = "too few points for " + std::to_string(options.neighbours.neighbours) +
                      " neighbours";
    } else {
      const Eigen::VectorXd r = residuals(kept.cloud.points);
      const StrayPointReport flagged = find_stray_points(kept.cloud.points, r, options.neighbours);
      stage.examined = kept.cloud.size();
      stage.iterations = 1;
      stage.robust_scale = flagged.robust_scale;
      std::vector<std::size_t> drop;
      for (const StrayPoint& p : flagged.points) drop.push_back(p.index);
      std::sort(drop.begin(), drop.end());
      if (2 * drop.size() > kept.cloud.size()) {
        record.warnings.push_back("neighbour filter: " + std::to_string(drop.size()) + " of " +
                                  std::to_string(kept.cloud.size()) +
                                  " points flagged, more than half: none removed");
      } else {
        kept.remove(drop, r, contact_side, stage);
      }
    }
  }

  // ---- Stage 2: Hampel's identifier on the least-squares residuals, refitted until stable.
  if (options.residual_rejection) {
    OutlierStageRecord& stage = record.residual_rejection;
    stage.examined = kept.cloud.size();
    for (int pass = 0; pass < options.max_iterations; ++pass) {
      const Eigen::VectorXd r = residuals(kept.cloud.points);
      const detail::RobustSpread spread =
          detail::robust_spread(std::vector<double>(r.data(), r.data() + r.size()));
      ++stage.iterations;
      stage.robust_scale = spread.scale;
      const double limit =
          std::max(options.residual_threshold * spread.scale, options.residual_floor);
      // Candidates: beyond the limit.
      std::vector<std::size_t> beyond;
      for (Eigen::Index k = 0; k < r.size(); ++k)
        if (std::abs(r(k) - spread.centre) > limit) beyond.push_back(static_cast<std::size_t>(k));
      if (beyond.empty()) break;
      // Form guard: a candidate must also stand out from its nearest neighbours (its local
      // excess, as the stray-point screen defines it) by half the limit; one its neighbours
      // follow is an excursion of the surface (a bell-mouth, a groove), not an outlier: kept.
      std::vector<std::size_t> drop;
      std::size_t form = 0;
      if (kept.cloud.size() < 2) {
        drop = beyond;
      } else {
        const NeighbourIndex index(kept.cloud.points);
        NeighbourIndex::Query query(options.neighbours.neighbours);
        std::vector<double> local;
        for (std::size_t k : beyond) {
          if (std::abs(detail::local_excess(index, query, r, k, local)) > 0.5 * limit)
            drop.push_back(k);
          else
            ++form;
        }
      }
      stage.kept_as_form = form;
      if (drop.empty()) break;
      if (2 * (stage.removed.size() + drop.size()) > stage.examined) {
        record.warnings.push_back("residual rejection stopped: removing " +
                                  std::to_string(drop.size()) +
                                  " more points would remove more than half of " +
                                  std::to_string(stage.examined));
        break;
      }
      kept.remove(drop, r, contact_side, stage);
      if (pass + 1 == options.max_iterations)
        record.warnings.push_back("residual rejection still removing points after " +
                                  std::to_string(options.max_iterations) + " passes");
    }
  }

  // ---- Nothing dropped silently: the share, and removed points the envelope would touch.
  const std::size_t removed = record.removed_count();
  const double share = cloud.size() == 0 ? 0.0
                                     : static_cast<double>(removed) /
                                           static_cast<double>(cloud.size());
  if (share > options.warn_share)
    record.warnings.push_back(std::to_string(removed) + " of " + std::to_string(cloud.size()) +
                              " points removed as outliers (" + share_text(removed, cloud.size()) +
                              ", above " + detail::format_number(100.0 * options.warn_share, 1) +
                              " %): review the data");
  std::vector<std::string> contacts;
  for (const OutlierStageRecord* stage : {&record.neighbour_filter, &record.residual_rejection})
    for (const RemovedPoint& p : stage->removed)
      if (p.contact)
        contacts.push_back(p.line ? "line " + std::to_string(p.line)
                                  : "point #" + std::to_string(p.index + 1));
  if (!contacts.empty()) {
    std::string text = "removed outlier(s) ";
    for (std::size_t k = 0; k < contacts.size() && k < 5; ++k) text += (k ? ", " : "") + contacts[k];
    if (contacts.size() > 5) text += " and " + std::to_string(contacts.size() - 5) + " more";
    text += " lay beyond every kept point on the mating envelope's contact side: the envelope would "
            "have touched such a point, so sizes, axes and verdicts rest on the removal; review "
            "the data";
    record.warnings.push_back(text);
  }
  result.cloud = std::move(kept.cloud);
  result.kept = std::move(kept.columns);
  return result;
}

}  // namespace cylzone
