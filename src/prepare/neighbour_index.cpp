// Nearest neighbours through nanoflann's KD-tree; the only file that includes nanoflann.
#include "cylzone/prepare/neighbour_index.hpp"

#include <nanoflann.hpp>

#include <limits>
#include <stdexcept>
#include <string>

namespace cylzone {
namespace {

/// Leaf size of the KD-tree: the screen's time is flat (within 5%) from 12 to 32 (measured).
constexpr std::size_t leaf_points = 16;

/// nanoflann dataset adaptor over the caller's 3 x n matrix: reads the columns in place, so the
/// tree holds only its index permutation, never a copy of the points.
class ColumnPoints {
 public:
  explicit ColumnPoints(const Eigen::Matrix3Xd& points) : data_(points.data()), n_(points.cols()) {}
  std::size_t kdtree_get_point_count() const { return static_cast<std::size_t>(n_); }
  double kdtree_get_pt(std::uint32_t i, std::size_t dim) const {
    return data_[3 * static_cast<std::size_t>(i) + dim];
  }
  // No precomputed bounding box: nanoflann computes it while building.
  template <class Box>
  bool kdtree_get_bbox(Box&) const {
    return false;
  }
  const double* column(std::size_t i) const { return data_ + 3 * i; }

 private:
  const double* data_;
  Eigen::Index n_;
};

using Metric = nanoflann::L2_Simple_Adaptor<double, ColumnPoints, double, std::uint32_t>;
using KdTree = nanoflann::KDTreeSingleIndexAdaptor<Metric, ColumnPoints, 3, std::uint32_t>;

/// The `capacity` nearest points in the strict order (squared distance, index), so that ties in
/// distance go to the lower index whatever order the tree visits them in. nanoflann admits a
/// candidate only when its distance is below worstDist() and skips a subtree farther than
/// worstDist(); once full, worstDist() is therefore just above the current k-th distance, so
/// candidates at exactly that distance are still seen and decided by index.
class OrderedNearest {
 public:
  using DistanceType = double;
  using IndexType = std::uint32_t;
  using CountType = std::size_t;

  explicit OrderedNearest(std::size_t capacity)
      : capacity_(capacity), distance_(capacity), index_(capacity) {}

  void clear() {
    count_ = 0;
    worst_ = std::numeric_limits<double>::infinity();
  }
  std::size_t size() const { return count_; }
  bool full() const { return count_ == capacity_; }
  double worstDist() const { return worst_; }
  std::uint32_t index(std::size_t k) const { return index_[k]; }

  bool addPoint(double distance, std::uint32_t index) {
    if (full() && !before(distance, index, distance_[capacity_ - 1], index_[capacity_ - 1]))
      return true;
    std::size_t k = full() ? capacity_ - 1 : count_++;
    for (; k > 0 && before(distance, index, distance_[k - 1], index_[k - 1]); --k) {
      distance_[k] = distance_[k - 1];
      index_[k] = index_[k - 1];
    }
    distance_[k] = distance;
    index_[k] = index;
    if (full()) {
      // At least the next double above the k-th distance (0 included), without a libm call.
      const double d = distance_[capacity_ - 1];
      worst_ = d + d * std::numeric_limits<double>::epsilon() +
               std::numeric_limits<double>::denorm_min();
    }
    return true;  // keep searching: the search itself stops at worstDist()
  }

 private:
  static bool before(double d1, std::uint32_t i1, double d2, std::uint32_t i2) {
    return d1 < d2 || (d1 == d2 && i1 < i2);
  }

  std::size_t capacity_;
  std::size_t count_ = 0;
  double worst_ = std::numeric_limits<double>::infinity();
  std::vector<double> distance_;
  std::vector<std::uint32_t> index_;
};

}  // namespace

struct NeighbourIndex::Tree {
  explicit Tree(const Eigen::Matrix3Xd& points)
      : dataset(points), tree(3, dataset, nanoflann::KDTreeSingleIndexAdaptorParams(leaf_points)) {}
  ColumnPoints dataset;
  KdTree tree;
};

struct NeighbourIndex::Query::Buffers {
  explicit Buffers(std::size_t k) : k(k), nearest(k + 1) { found.reserve(k); }
  std::size_t k;
  OrderedNearest nearest;  // k + 1: each query returns the point itself too (distance 0)
  std::vector<std::uint32_t> found;
};

NeighbourIndex::NeighbourIndex(const Eigen::Matrix3Xd& points) {
  if (static_cast<std::uint64_t>(points.cols()) > std::numeric_limits<std::uint32_t>::max())
    throw std::invalid_argument("NeighbourIndex: more than 2^32 - 1 points");
  tree_ = std::make_unique<Tree>(points);
}
NeighbourIndex::~NeighbourIndex() = default;
NeighbourIndex::NeighbourIndex(NeighbourIndex&&) noexcept = default;

std::size_t NeighbourIndex::size() const noexcept { return tree_->dataset.kdtree_get_point_count(); }

const std::vector<std::uint32_t>& NeighbourIndex::locality_order() const noexcept {
  return tree_->tree.vAcc;
}

NeighbourIndex::Query::Query(std::size_t k) {
  if (k == 0) throw std::invalid_argument("NeighbourIndex::Query: k must be at least 1");
  buffers_ = std::make_unique<Buffers>(k);
}
NeighbourIndex::Query::~Query() = default;
NeighbourIndex::Query::Query(Query&&) noexcept = default;

const std::vector<std::uint32_t>& NeighbourIndex::Query::of_point(const NeighbourIndex& index,
                                                                  std::size_t i) {
  Buffers& b = *buffers_;
  b.nearest.clear();
  b.found.clear();
  index.tree_->tree.findNeighbors(b.nearest, index.tree_->dataset.column(i),
                                  nanoflann::SearchParams());
  // The point itself is normally first; with k + 1 or more coincident points of lower index
  // it is absent, and then the first k are all at distance 0 from it anyway.
  for (std::size_t j = 0; j < b.nearest.size() && b.found.size() < b.k; ++j) {
    const std::uint32_t other = b.nearest.index(j);
    if (other == i) continue;
    b.found.push_back(other);
  }
  return b.found;
}

}  // namespace cylzone
