#pragma once
/// \file neighbour_index.hpp
/// Nearest spatial neighbours of the points of one cloud, through a KD-tree (Bentley, Commun.
/// ACM 18 (1975) 509-517) built once and queried many times: the stray-point screen uses it, and
/// any later preparation step that needs neighbourhoods (outlier rejection, segmentation) takes
/// the same index. nanoflann implements the tree and stays behind this header.
///
/// Neighbours come in a strict order, (Euclidean distance, index), so that ties in distance go
/// to the lower index whatever order the tree visits them in: results depend on the data only.

#include <Eigen/Core>
#include <cstddef>
#include <cstdint>
#include <functional>
#include <memory>
#include <vector>

namespace cylzone {

class NeighbourIndex {
 public:
  /// Indexes the columns of `points` (3 x n, finite, n < 2^32): the trees keep a copy of the
  /// coordinates in their own order (a leaf's points adjacent in memory, whatever the input
  /// order; 24 bytes per point), and queries read their point from `points`, which must stay
  /// alive and unchanged while the index is used. O(n log n). A large cloud
  /// is cut into slabs along its longest extent, one tree each, built on up to `threads`
  /// threads (src/detail/parallel.hpp); the slabs depend on the data alone and the neighbours
  /// found do not depend on them at all.
  explicit NeighbourIndex(const Eigen::Matrix3Xd& points, std::size_t threads = 1);
  ~NeighbourIndex();
  NeighbourIndex(NeighbourIndex&&) noexcept;
  NeighbourIndex(const NeighbourIndex&) = delete;
  NeighbourIndex& operator=(const NeighbourIndex&) = delete;
  NeighbourIndex& operator=(NeighbourIndex&&) = delete;

  std::size_t size() const noexcept;

  /// The points in the tree's own order, leaf by leaf: visiting them in this order keeps
  /// consecutive queries on the same nodes (much faster than file order for shuffled clouds).
  const std::vector<std::uint32_t>& locality_order() const noexcept;

  /// The k nearest neighbours of the points at positions [first, last) of locality_order(),
  /// exactly those Query::of_point gives (the point itself excluded, (distance, index) order),
  /// written row by row to `neighbours` (resized to (last - first) x k input indices). The
  /// tree's own search over a whole cloud (the stray-point screen takes all_nearest, below,
  /// which is faster on dense clouds; bench_stray_points times the two against each other):
  /// consecutive positions are neighbours in the tree, so each search
  /// starts bounded by the previous point's k + 1 nearest (k + 1 distinct points: the farthest
  /// of them bounds the (k+1)-th distance from above), which prunes it from the first node on
  /// and changes no neighbour. No allocation per point; safe to call from several threads at
  /// once. Throws std::invalid_argument when k is 0, the index holds k points or fewer, or the
  /// positions are outside it.
  void nearest_in_order(std::size_t k, std::size_t first, std::size_t last,
                        std::vector<std::uint32_t>& neighbours) const;

  /// Reusable buffers for the queries of one thread (an index may serve several threads, each
  /// with its own Query).
  class Query {
   public:
    /// Queries for the `k` nearest neighbours (k >= 1).
    explicit Query(std::size_t k);
    ~Query();
    Query(Query&&) noexcept;
    Query(const Query&) = delete;
    Query& operator=(const Query&) = delete;
    Query& operator=(Query&&) = delete;

    /// The k nearest points to point `i` of `index`, the point itself excluded, in (distance,
    /// index) order; fewer when the index holds k points or less. The reference stays valid
    /// until the next call.
    const std::vector<std::uint32_t>& of_point(const NeighbourIndex& index, std::size_t i);

   private:
    struct Buffers;
    std::unique_ptr<Buffers> buffers_;
  };

 private:
  struct Tree;
  std::unique_ptr<Tree> tree_;
};

/// What all_nearest did: how many points the grid answered alone (certified in the 3x3x3
/// block of cells around their own, or in the 5x5x5 or 7x7x7 block) and how many needed the
/// KD-tree; the cell size chosen. For benchmarks and tests: the neighbours do not depend on it.
struct AllNearestSummary {
  std::size_t certified = 0;  ///< answered by the 3x3x3 block
  std::size_t widened = 0;    ///< answered by a 5x5x5 or 7x7x7 block
  std::size_t tree = 0;       ///< answered by the KD-tree (NeighbourIndex, built only then)
  double cell = 0.0;          ///< edge of the cubic cells, mm
};

/// Receives the neighbours of `count` points: input indices `points[0..count)`, their k
/// nearest row by row in `rows` (count x k, (distance, index) order, the point excluded).
/// `worker` (< max(1, threads)) lets a receiver keep per-worker scratch; calls from different
/// workers may run at once, and in any order.
using NearestReceiver = std::function<void(std::size_t worker, std::size_t count,
                                           const std::uint32_t* points, const std::uint32_t* rows)>;

/// The k nearest neighbours of every column of `points` (3 x n, finite, k < n < 2^32), exactly
/// those of NeighbourIndex::Query::of_point (the point itself excluded, (Euclidean distance,
/// index) order), each point handed once to `receive`, on up to `threads` threads. Method: a
/// uniform grid of cubic cells (cell-based fixed-radius search, Bentley, Stanat & Williams, Inf.
/// Process. Lett. 6 (1977) 209-212), the cell size set from the points per occupied cell, so
/// that a scanned surface (points on a 2-D manifold) and a volume both get a few points per
/// cell. A point's k nearest among the points of the 3x3x3 cells around its own are certified
/// exact when the k-th distance is below the squared distance from the point to the outside
/// of that block (a floating-point lower bound of the distance of every point outside it); a
/// point not certified is searched again in the 5x5x5 and 7x7x7 blocks, then with the KD-tree
/// (NeighbourIndex), built only when some point needs it. The cells and their order depend on
/// the data alone and the neighbours not even on them. Throws std::invalid_argument when k is 0
/// or n <= k.
AllNearestSummary all_nearest(const Eigen::Matrix3Xd& points, std::size_t k, std::size_t threads,
                              const NearestReceiver& receive);

}  // namespace cylzone
