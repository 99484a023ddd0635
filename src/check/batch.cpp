// Many parts against one plan (check/batch.hpp, docs/batch.md): finding each part's files,
// running check_part per part on the one `threads` option, and the batch summary. Orchestration
// and statistics only: every figure of a part comes from check_part.
#include "cylzone/check/batch.hpp"

#include <algorithm>
#include <cmath>
#include <fstream>
#include <map>
#include <mutex>
#include <sstream>

#include <Eigen/Dense>

#include "cylzone/core/errors.hpp"
#include "detail/parallel.hpp"

namespace cylzone {
namespace {

namespace fs = std::filesystem;

bool printable_line(const std::string& text) {
  for (char c : text)
    if (static_cast<unsigned char>(c) < 0x20 || c == 0x7f) return false;
  return true;
}

/// `path` (as the parser resolved it: the plan's folder joined with what the plan wrote) taken
/// relative to the plan's folder and re-rooted at `folder`.
fs::path rebased(const fs::path& path, const fs::path& plan_folder, const fs::path& folder,
                 const PartPlan& plan, const PlanLocation& where) {
  const fs::path relative = path.lexically_relative(plan_folder);
  if (relative.empty() || relative.is_absolute()) {
    const PlanLocation key = where.at("points");
    throw InputError(plan.file.string(), key.line,
                     "point file " + quoted_for_message(path.string()) +
                         " is not relative to the plan's folder: a batch looks every point "
                         "file up in each part's folder (docs/batch.md)",
                     key.key);
  }
  return (folder / relative).lexically_normal();
}

}  // namespace

std::vector<BatchPart> batch_parts(const std::vector<fs::path>& folders) {
  std::vector<BatchPart> parts;
  std::map<std::string, fs::path> seen;
  for (const fs::path& folder : folders) {
    std::error_code ec;
    const fs::file_status status = fs::status(folder, ec);
    if (!fs::exists(status))
      throw InputError(folder.string(), 0, "part folder does not exist");
    if (!fs::is_directory(status))
      throw InputError(folder.string(), 0, "is not a folder: a part is a folder of point files");
    // The folder's own name, also for "." or "parts/S17/" (lexically: a symbolic link keeps
    // its own name, the one the user sees).
    fs::path named = fs::absolute(folder, ec).lexically_normal();
    if (named.filename().empty()) named = named.parent_path();
    const std::string serial = named.filename().string();
    if (serial.empty() || serial == "." || serial == "..")
      throw InputError(folder.string(), 0, "a part folder must have a name: it is the serial");
    if (!printable_line(serial) || serial.size() > 200)
      throw InputError(quoted_for_message(folder.string()), 0,
                       "the folder's name (the part's serial) must be one printable line of at "
                       "most 200 bytes");
    const auto [it, fresh] = seen.emplace(serial, folder);
    if (!fresh)
      throw InputError(folder.string(), 0,
                       "serial " + quoted_for_message(serial) + " is already the part in " +
                           quoted_for_message(it->second.string()) +
                           ": reports are named by the serial");
    parts.push_back({folder, serial});
  }
  return parts;
}

std::vector<fs::path> read_parts_list(const fs::path& file) {
  std::error_code ec;
  if (!fs::is_regular_file(fs::status(file, ec)))
    throw InputError(file.string(), 0, "parts list is not a readable file");
  std::ifstream in(file, std::ios::binary);
  if (!in) throw InputError(file.string(), 0, "cannot open the parts list for reading");
  std::vector<fs::path> folders;
  std::string line;
  std::size_t number = 0;
  while (std::getline(in, line)) {
    ++number;
    if (!line.empty() && line.back() == '\r') line.pop_back();  // CRLF lists
    const std::size_t first = line.find_first_not_of(" \t");
    if (first == std::string::npos || line[first] == '#') continue;
    const std::size_t last = line.find_last_not_of(" \t");
    const std::string text = line.substr(first, last - first + 1);
    if (!printable_line(text) || text.size() > 4096)
      throw InputError(file.string(), number,
                       "a part folder must be one printable line of at most 4096 bytes");
    const fs::path folder(text);
    folders.push_back(folder.is_absolute() ? folder : file.parent_path() / folder);
  }
  if (in.bad()) throw InputError(file.string(), number, "error while reading the parts list");
  if (folders.empty()) throw InputError(file.string(), 0, "the parts list names no folder");
  return folders;
}

PartPlan plan_for_part(const PartPlan& plan, const fs::path& folder) {
  PartPlan part = plan;
  // The parser joined the plan's folder with each relative path; an empty folder is ".".
  fs::path plan_folder = plan.file.parent_path();
  if (plan_folder.empty()) plan_folder = ".";
  plan_folder = plan_folder.lexically_normal();
  if (part.scan) part.scan->points = rebased(part.scan->points, plan_folder, folder, plan, part.scan->where);
  for (PlanDatum& d : part.datums)
    if (!d.from_scan()) d.points = rebased(d.points, plan_folder, folder, plan, d.where);
  for (PlanBore& b : part.bores)
    if (!b.from_scan()) b.points = rebased(b.points, plan_folder, folder, plan, b.where);
  return part;
}

BatchPartRecord batch_record(const BatchPart& part, const PartCheckResult& result) {
  BatchPartRecord record;
  record.part = part;
  record.verdict = result.verdict;
  record.characteristics = result.characteristics;
  record.inputs = result.inputs;
  for (InputRecord& input : record.inputs) input.point_lines.clear();  // not needed, can be large
  for (const BoreResult& bore : result.bores) {
    if (!bore.evaluated() || !bore.position) continue;
    const PositionResult& p = *bore.position;
    record.positions.push_back(
        {bore.id, p.top.height, p.bottom.height, p.top.offset, p.bottom.offset});
  }
  return record;
}

std::vector<BatchPartRecord> check_batch(const PartPlan& plan, const std::vector<BatchPart>& parts,
                                         const BatchOptions& options,
                                         const BatchPartCallback& on_part,
                                         const BatchProgressCallback& on_progress) {
  std::vector<BatchPartRecord> records(parts.size());
  const std::size_t threads = std::max<std::size_t>(1, options.threads);
  const std::size_t workers = detail::worker_count(parts.size(), threads);
  CheckOptions check = options.check;
  // The threads left over by the parts go to each part's own loops: never more than `threads`.
  check.evaluation.threads = std::max<std::size_t>(1, threads / workers);
  std::mutex progress_mutex;
  std::size_t done = 0;
  // One chunk per part: the chunks are fixed by the data, so is every result.
  detail::parallel_for(parts.size(), workers, [&](std::size_t k, std::size_t) {
    BatchPartRecord& record = records[k];
    try {
      const PartCheckResult result = check_part(plan_for_part(plan, parts[k].folder), check);
      record = batch_record(parts[k], result);
      if (on_part) on_part(k, result);
    } catch (const InputError& e) {
      record = BatchPartRecord{};
      record.part = parts[k];
      record.error = e.what();
    } catch (const FitError& e) {
      record = BatchPartRecord{};
      record.part = parts[k];
      record.error = e.what();
    }
    if (record.error.size() > 1000) record.error = record.error.substr(0, 997) + "...";
    if (on_progress) {
      const std::lock_guard<std::mutex> lock(progress_mutex);
      on_progress(++done, parts.size());
    }
  });
  return records;
}

DeviationSpread deviation_spread(const std::vector<Eigen::Vector2d>& deviations,
                                 double significance) {
  DeviationSpread s;
  const std::size_t n = deviations.size();
  s.count = n;
  if (n == 0) {
    s.note = "no part evaluated";
    return s;
  }
  for (const Eigen::Vector2d& d : deviations) {
    s.mean += d;
    s.mean_radial += d.norm();
  }
  s.mean /= static_cast<double>(n);
  s.mean_radial /= static_cast<double>(n);
  Eigen::Matrix2d covariance = Eigen::Matrix2d::Zero();
  for (const Eigen::Vector2d& d : deviations) covariance += (d - s.mean) * (d - s.mean).transpose();
  if (n > 1) covariance /= static_cast<double>(n - 1);
  s.standard_deviation = covariance.diagonal().cwiseSqrt();
  if (n < 3) {
    s.note = "too few parts for a test of the mean (at least 3)";
    return s;
  }
  // A singular covariance: the scatter lies on a line or vanishes (identical parts). Relative
  // test on the eigenvalues, so the unit does not matter.
  const Eigen::SelfAdjointEigenSolver<Eigen::Matrix2d> eigen(covariance);
  const double largest = eigen.eigenvalues().maxCoeff();
  const double smallest = eigen.eigenvalues().minCoeff();
  const double scale = std::max(s.mean.squaredNorm(), largest);
  if (!(smallest > 1e-12 * scale) || scale == 0.0) {
    s.systematic = s.mean.norm() > 0.0 && !(largest > 1e-12 * scale);
    s.note = s.systematic ? "every part has the same non-zero deviation: systematic offset"
                          : "the scatter lies on one line or vanishes: no T² test";
    return s;
  }
  // Hotelling (1931): T² = n m^T S^-1 m; for p = 2, T² (n-2) / (2 (n-1)) ~ F(2, n-2) when the
  // true mean is zero, and the F(2, m) upper tail is (1 + 2x/m)^(-m/2).
  const double t2 = static_cast<double>(n) * s.mean.dot(covariance.ldlt().solve(s.mean));
  s.t_squared = t2;
  s.p_value = std::pow(1.0 + t2 / static_cast<double>(n - 1), -static_cast<double>(n - 2) / 2.0);
  s.systematic = *s.p_value < significance;
  std::ostringstream note;
  note << (s.systematic ? "systematic offset: the mean deviation is significantly non-zero"
                        : "consistent with random scatter about the true position")
       << " (Hotelling T² " << std::fixed;
  note.precision(2);
  note << t2 << ", p ";
  note.precision(4);
  note << *s.p_value << ", significance ";
  note.precision(2);
  note << significance << ")";
  s.note = note.str();
  return s;
}

BatchSummary summarize_batch(const std::vector<BatchPartRecord>& records, double significance) {
  BatchSummary summary;
  summary.parts = records.size();
  summary.significance = significance;
  std::map<std::string, std::size_t> tally_of;
  std::map<std::string, std::size_t> spread_of;
  std::vector<std::vector<Eigen::Vector2d>> tops, bottoms;
  for (std::size_t k = 0; k < records.size(); ++k) {
    const BatchPartRecord& r = records[k];
    if (!r.evaluated()) {
      summary.failed.push_back(k);
      continue;
    }
    ++summary.evaluated;
    switch (r.verdict) {
      case Verdict::conforms: ++summary.conforming; break;
      case Verdict::does_not_conform: ++summary.not_conforming; break;
      case Verdict::not_proven: ++summary.not_proven; break;
    }
    for (const Characteristic& c : r.characteristics) {
      auto [it, fresh] = tally_of.emplace(c.id, summary.characteristics.size());
      if (fresh) {
        CharacteristicTally tally;
        tally.id = c.id;
        tally.feature = c.feature;
        tally.name = c.name;
        summary.characteristics.push_back(std::move(tally));
      }
      CharacteristicTally& t = summary.characteristics[it->second];
      switch (c.verdict) {
        case Verdict::conforms: ++t.conforming; break;
        case Verdict::does_not_conform: ++t.not_conforming; break;
        case Verdict::not_proven: ++t.not_proven; break;
      }
      if (!c.not_evaluated.empty()) continue;
      const double margin =
          c.comparison == Comparison::at_most ? c.allowed - c.value : c.value - c.allowed;
      if (!t.worst_part || margin < t.worst_margin) {
        t.worst_part = k;
        t.worst_value = c.value;
        t.worst_allowed = c.allowed;
        t.worst_margin = margin;
      }
    }
    for (const PositionDeviation& p : r.positions) {
      auto [it, fresh] = spread_of.emplace(p.bore, summary.positions.size());
      if (fresh) {
        summary.positions.push_back({p.bore, p.top_height, p.bottom_height, {}, {}});
        tops.emplace_back();
        bottoms.emplace_back();
      }
      tops[it->second].push_back(p.top);
      bottoms[it->second].push_back(p.bottom);
    }
  }
  for (std::size_t k = 0; k < summary.positions.size(); ++k) {
    summary.positions[k].top = deviation_spread(tops[k], significance);
    summary.positions[k].bottom = deviation_spread(bottoms[k], significance);
  }
  return summary;
}

}  // namespace cylzone
