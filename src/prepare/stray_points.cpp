// Stray-point screen: local excess over the median of the k nearest neighbours, judged against
// the normal-consistent MAD of all excesses. stray_points.hpp states the criterion and its
// sources; the neighbours come from NeighbourIndex (neighbour_index.hpp).

#include "cylzone/prepare/stray_points.hpp"

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <limits>
#include <stdexcept>
#include <string>
#include <vector>

#include "cylzone/core/errors.hpp"
#include "cylzone/prepare/neighbour_index.hpp"
#include "detail/fit_support.hpp"
#include "detail/parallel.hpp"
#include "prepare/detail/robust_scale.hpp"
#include "prepare/detail/stray_point_message.hpp"

namespace cylzone {
namespace {

void check_options(const StrayPointOptions& options) {
  if (options.neighbours == 0)
    throw std::invalid_argument("find_stray_points: neighbours must be at least 1");
  if (!(options.threshold >= 0.0) || !std::isfinite(options.threshold))
    throw std::invalid_argument("find_stray_points: the threshold must be finite and >= 0, got " +
                                std::to_string(options.threshold));
  if (!(options.floor >= 0.0) || !std::isfinite(options.floor))
    throw std::invalid_argument("find_stray_points: the floor must be finite and >= 0, got " +
                                std::to_string(options.floor));
}

}  // namespace

StrayPointReport find_stray_points(const Eigen::Matrix3Xd& points, const Eigen::VectorXd& residuals,
                                   const StrayPointOptions& options) {
  check_options(options);
  const Eigen::Index n = points.cols();
  if (residuals.size() != n)
    throw std::invalid_argument("find_stray_points: " + std::to_string(residuals.size()) +
                                " residuals for " + std::to_string(n) + " points");
  if (static_cast<std::uint64_t>(n) > std::numeric_limits<std::uint32_t>::max())
    throw std::invalid_argument("find_stray_points: more than 2^32 - 1 points");
  // The checks and the flagging below run in chunks of points fixed by the data on the
  // `threads` option (detail/parallel.hpp): the lowest failing chunk's error is the one
  // rethrown, so the first bad point is named, as by a serial scan.
  constexpr Eigen::Index chunk = Eigen::Index{1} << 16;
  const std::size_t chunks = static_cast<std::size_t>((n + chunk - 1) / chunk);
  detail::parallel_for(chunks, options.threads, [&](std::size_t c, std::size_t) {
    const Eigen::Index first = static_cast<Eigen::Index>(c) * chunk;
    for (Eigen::Index i = first, end = std::min(n, first + chunk); i < end; ++i) {
      if (!points.col(i).allFinite())
        throw FitError("point #" + std::to_string(i + 1) + " has a non-finite coordinate");
      if (!std::isfinite(residuals(i)))
        throw FitError("point #" + std::to_string(i + 1) + " has a non-finite residual");
    }
  });
  StrayPointReport report;
  const std::size_t k = options.neighbours;
  if (static_cast<std::size_t>(n) <= k) return report;  // fewer than k + 1 points

  std::vector<double> excess(static_cast<std::size_t>(n));
  // Every point's k nearest from the grid (the KD-tree only for the points it cannot certify),
  // handed over in chunks on the `threads` option; each excess depends only on the data, so
  // neither the chunks nor the threads change a result.
  std::vector<std::vector<double>> local(std::max<std::size_t>(1, options.threads));
  all_nearest(points, k, options.threads,
              [&](std::size_t w, std::size_t count, const std::uint32_t* at,
                  const std::uint32_t* rows) {
                for (std::size_t j = 0; j < count; ++j, rows += k)
                  excess[at[j]] = detail::excess_over(residuals, at[j], rows, k, local[w]);
              });

  report.robust_scale = detail::robust_spread(excess, options.threads).scale;
  report.screened = static_cast<std::size_t>(n);

  const double limit = std::max(options.threshold * report.robust_scale, options.floor);
  std::vector<std::vector<StrayPoint>> flagged(chunks);  // per chunk, joined in chunk order
  detail::parallel_for(chunks, options.threads, [&](std::size_t c, std::size_t) {
    const Eigen::Index first = static_cast<Eigen::Index>(c) * chunk;
    for (Eigen::Index i = first, end = std::min(n, first + chunk); i < end; ++i) {
      const double e = excess[static_cast<std::size_t>(i)];
      if (std::abs(e) > limit)
        flagged[c].push_back(StrayPoint{static_cast<std::size_t>(i), residuals(i), e});
    }
  });
  for (const std::vector<StrayPoint>& f : flagged)
    report.points.insert(report.points.end(), f.begin(), f.end());
  std::sort(report.points.begin(), report.points.end(),
            [](const StrayPoint& a, const StrayPoint& b) {
              const double ea = std::abs(a.excess), eb = std::abs(b.excess);
              return ea > eb || (ea == eb && a.index < b.index);
            });
  return report;
}

std::vector<std::size_t> suspect_contacts(const StrayPointReport& report,
                                          const Eigen::VectorXd& element_residuals,
                                          ContactSide side, double within) {
  if (!(within >= 0.0) || !std::isfinite(within))
    throw std::invalid_argument("suspect_contacts: `within` must be finite and >= 0");
  std::vector<std::size_t> contacts;
  if (report.points.empty()) return contacts;
  for (const StrayPoint& p : report.points)
    if (p.index >= static_cast<std::size_t>(element_residuals.size()))
      throw std::invalid_argument("suspect_contacts: point index " + std::to_string(p.index) +
                                  " outside " + std::to_string(element_residuals.size()) +
                                  " residuals");
  const double extreme = side == ContactSide::lowest ? element_residuals.minCoeff()
                                                     : element_residuals.maxCoeff();
  for (const StrayPoint& p : report.points) {
    const double r = element_residuals(static_cast<Eigen::Index>(p.index));
    const double gap = side == ContactSide::lowest ? r - extreme : extreme - r;
    if (gap <= within) contacts.push_back(p.index);
  }
  return contacts;
}

namespace detail {

std::string stray_point_message(const StrayPointReport& report,
                                const std::vector<SuspectContact>& contacts,
                                std::string_view closing) {
  if (report.points.empty()) return {};
  const auto number = [](std::size_t index) { return "#" + std::to_string(index + 1); };
  const StrayPoint& largest = report.points.front();
  std::string text = std::to_string(report.points.size()) +
                     " suspect point(s) (largest local excess " +
                     format_number(largest.excess, 4) + " mm at point " + number(largest.index) +
                     " of the file)";
  for (const SuspectContact& contact : contacts) {
    if (contact.points.empty()) continue;
    const bool one = contact.points.size() == 1;
    text += one ? "; point " : "; points ";
    for (std::size_t k = 0; k < contact.points.size(); ++k)
      text += (k ? ", " : "") + number(contact.points[k]);
    text += (one ? " is a contact of " : " are contacts of ") + contact.element + ": " +
            contact.consequence + (one ? " it" : " them");
  }
  text += "; ";
  text += closing;
  return text;
}

}  // namespace detail
}  // namespace cylzone
