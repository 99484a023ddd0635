#pragma once
/// \file batch.hpp
/// Many parts of one part number checked against one plan (docs/batch.md): each part's point
/// files are found in a folder of its own, every part goes through check_part (part_check.hpp)
/// exactly as `cylzone check` runs it alone, and the batch's results are summarised per
/// characteristic, with the spread of every position's deviation vector over the batch and a
/// test telling a systematic offset from random scatter (Hotelling's one-sample T²).

#include <cstddef>
#include <filesystem>
#include <functional>
#include <optional>
#include <string>
#include <vector>

#include <Eigen/Core>

#include "cylzone/check/part_check.hpp"
#include "cylzone/core/threads.hpp"
#include "cylzone/decide/characteristic.hpp"
#include "cylzone/plan/plan.hpp"

namespace cylzone {

/// One part of a batch.
struct BatchPart {
  std::filesystem::path folder;  ///< the plan's relative point paths are resolved against it
  std::string serial;            ///< the folder's own name
};

/// The parts in the given folders, in the order given. A part's serial is the last name of its
/// folder, taken lexically from its absolute path ("." is the working folder's name; a symbolic
/// link keeps its own name). Throws InputError naming the folder for one
/// that does not exist or is not a folder, whose name is not one printable line of at most 200
/// bytes, or whose serial another folder of the batch already has (reports are named by it).
std::vector<BatchPart> batch_parts(const std::vector<std::filesystem::path>& folders);

/// The folders listed in a text file, one per line: blank lines and lines starting with '#'
/// (after leading blanks) are skipped, surrounding blanks are trimmed, and a relative folder is
/// relative to the list file's folder. Throws InputError (file, line) for an unreadable file, a
/// line with a control character, or a list without any folder.
std::vector<std::filesystem::path> read_parts_list(const std::filesystem::path& file);

/// `plan` for the part in `folder`: every point path (datums, bores, [scan]), relative to the
/// plan's folder as the plan names it, is looked up in `folder` instead ("points/P1.csv" becomes
/// "<folder>/points/P1.csv"; "../x.csv" becomes "<folder>/../x.csv"). The plan's own file,
/// digest and every other entry are unchanged. Throws InputError naming the plan's key when a
/// point path does not lie relative to the plan's folder (an absolute path would name the same
/// file for every part). No file is read.
PartPlan plan_for_part(const PartPlan& plan, const std::filesystem::path& folder);

/// One part's deviation of the toleranced axis from its true position, for the batch's spread:
/// the offset (du, dv) in the zone's frame (dx, dy of the datum frame for a bore perpendicular
/// to A) at the top and the bottom of the position's evaluated range, in the frame as built
/// (PositionResult::top, ::bottom). Lengths in mm.
struct PositionDeviation {
  std::string bore;
  double top_height = 0.0;
  double bottom_height = 0.0;
  Eigen::Vector2d top = Eigen::Vector2d::Zero();
  Eigen::Vector2d bottom = Eigen::Vector2d::Zero();
};

/// What a batch keeps of one part: enough for the combined CSV and the summary.
struct BatchPartRecord {
  BatchPart part;
  /// Empty when the part was evaluated; else why not (the InputError's or FitError's message).
  std::string error;
  Verdict verdict = Verdict::not_proven;  ///< the part's decision (not_proven when it failed)
  std::vector<Characteristic> characteristics;  ///< decided, plan order (none when it failed)
  std::vector<PositionDeviation> positions;     ///< every evaluated bore with a position
  std::vector<InputRecord> inputs;              ///< plan first, then each file read
  bool evaluated() const noexcept { return error.empty(); }
};

/// The record of a part checked: verdict, characteristics, inputs and position deviations.
BatchPartRecord batch_record(const BatchPart& part, const PartCheckResult& result);

struct BatchOptions {
  /// Each part's check. `check.evaluation.threads` is replaced: the batch divides `threads`
  /// between the parts running at once and each part's own loops (results never depend on it).
  CheckOptions check;
  /// At most this many threads in all (src/detail/parallel.hpp's one `threads` option).
  std::size_t threads = hardware_threads();
};

/// Called once for each part that was checked, on the thread that checked it, with the part's
/// index; different parts may be handed over at the same time (a callee that shares state
/// must guard it). A callee may render reports (pure functions); it must not throw.
using BatchPartCallback = std::function<void(std::size_t index, const PartCheckResult& result)>;
/// Called after each part (checked or failed) with the count done and the total; calls never
/// overlap (they are serialised).
using BatchProgressCallback = std::function<void(std::size_t done, std::size_t total)>;

/// Checks every part: plan_for_part, then check_part, on up to options.threads threads (parts
/// concurrently, in fixed order: each part's result is the one check_part gives it alone). An
/// InputError or FitError of one part (a missing or unreadable file, a datum that cannot be
/// evaluated) fails that part only: its record carries the message and the others still run.
/// Records are in the order of `parts`.
std::vector<BatchPartRecord> check_batch(const PartPlan& plan, const std::vector<BatchPart>& parts,
                                         const BatchOptions& options = {},
                                         const BatchPartCallback& on_part = {},
                                         const BatchProgressCallback& on_progress = {});

// ---- The batch summary

/// One characteristic id over the batch's evaluated parts.
struct CharacteristicTally {
  std::string id;       ///< e.g. "P2/position"
  std::string feature;  ///< e.g. "P2"
  std::string name;     ///< e.g. "position"
  std::size_t conforming = 0;
  std::size_t not_conforming = 0;
  std::size_t not_proven = 0;  ///< not evaluated counts here too
  /// The worst part: the smallest margin (allowed - value for "at most", value - allowed for
  /// "at least") among the parts where the value was evaluated; empty when none was.
  std::optional<std::size_t> worst_part;  ///< index into the records
  double worst_value = 0.0;               ///< mm
  double worst_allowed = 0.0;             ///< mm
  double worst_margin = 0.0;              ///< mm, negative: beyond the limit
};

/// The spread of n two-dimensional deviations (one per part) and whether their mean is
/// significantly away from zero. Lengths in mm.
struct DeviationSpread {
  std::size_t count = 0;
  Eigen::Vector2d mean = Eigen::Vector2d::Zero();
  /// Sample standard deviation per axis (n - 1 in the denominator); zero for one part.
  Eigen::Vector2d standard_deviation = Eigen::Vector2d::Zero();
  double mean_radial = 0.0;  ///< mean of |deviation|
  /// Hotelling's one-sample T² = n m^T S^-1 m (S: sample covariance); empty for fewer than
  /// three parts or a singular S.
  std::optional<double> t_squared;
  /// P(T² >= observed | true mean zero) = (1 + T²/(n-1))^(-(n-2)/2), the F(2, n-2) tail;
  /// empty with t_squared.
  std::optional<double> p_value;
  /// The mean is significantly non-zero: p_value below the significance level; without a
  /// test (singular S) when every part deviates by the same non-zero vector.
  bool systematic = false;
  std::string note;  ///< for people: the finding and its basis
};

/// The mean, spread and Hotelling T² test of `deviations` at `significance` (e.g. 0.05).
/// Hotelling (1931), The generalization of Student's ratio, Ann. Math. Statist. 2(3):360-378;
/// Montgomery, Introduction to Statistical Quality Control, ch. 11 (multivariate control
/// charts; from memory). For p = 2 variables, T² (n-2) / (2 (n-1)) follows F(2, n-2) under a
/// zero mean, whose upper tail is (1 + 2F/(n-2))^(-(n-2)/2) in closed form.
DeviationSpread deviation_spread(const std::vector<Eigen::Vector2d>& deviations,
                                 double significance = 0.05);

/// One position characteristic's deviation over the batch, at the two ends of its range.
struct PositionSpread {
  std::string bore;
  double top_height = 0.0;     ///< of the first part evaluated (the plan fixes it)
  double bottom_height = 0.0;
  DeviationSpread top;
  DeviationSpread bottom;
};

struct BatchSummary {
  std::size_t parts = 0;
  std::size_t evaluated = 0;
  std::size_t conforming = 0;      ///< parts whose decision conforms
  std::size_t not_conforming = 0;
  std::size_t not_proven = 0;      ///< evaluated parts not proven
  std::vector<std::size_t> failed;  ///< indices of the parts that could not be evaluated
  std::vector<CharacteristicTally> characteristics;  ///< first-seen order
  std::vector<PositionSpread> positions;             ///< first-seen order
  double significance = 0.05;
};

/// Tallies the records (failed parts are counted in `failed` only).
BatchSummary summarize_batch(const std::vector<BatchPartRecord>& records,
                             double significance = 0.05);

}  // namespace cylzone
