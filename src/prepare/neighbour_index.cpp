// Nearest neighbours through nanoflann's KD-tree; the only file that includes nanoflann.
#include "cylzone/prepare/neighbour_index.hpp"

#include <nanoflann.hpp>

#include "detail/parallel.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <stdexcept>
#include <string>

namespace cylzone {
namespace {

/// Leaf size of the KD-tree: the screen's time is flat (within 5%) from 12 to 32 (measured).
constexpr std::size_t leaf_points = 16;

/// nanoflann dataset adaptor over the points of one slab (see Tree): the slab's own copy of
/// its coordinates, 3 per point; a tree refers to them by their position in that copy.
class SlabPoints {
 public:
  SlabPoints(const double* coords, std::size_t count) : coords_(coords), count_(count) {}
  std::size_t kdtree_get_point_count() const { return count_; }
  double kdtree_get_pt(std::uint32_t local, std::size_t dim) const {
    return coords_[3 * static_cast<std::size_t>(local) + dim];
  }
  const double* point(std::uint32_t local) const { return coords_ + 3 * static_cast<std::size_t>(local); }
  // No precomputed bounding box: nanoflann computes it while building.
  template <class Box>
  bool kdtree_get_bbox(Box&) const {
    return false;
  }

 private:
  const double* coords_;
  std::size_t count_;
};

/// Squared Euclidean distance in 3D: nanoflann's L2_Simple_Adaptor with its loop over the
/// dimensions written out (the loop was a third of the query time), summed in the same order,
/// so the same bits.
struct Metric {
  using ElementType = double;
  using DistanceType = double;
  explicit Metric(const SlabPoints& points) : points(points) {}
  double evalMetric(const double* a, std::uint32_t b, std::size_t /*dim = 3*/) const {
    const double* p = points.point(b);
    const double d0 = a[0] - p[0], d1 = a[1] - p[1], d2 = a[2] - p[2];
    double sum = d0 * d0;
    sum += d1 * d1;
    sum += d2 * d2;
    return sum;
  }
  template <class U, class V>
  double accum_dist(const U a, const V b, std::size_t) const {
    return (a - b) * (a - b);
  }
  const SlabPoints& points;
};
using KdTree = nanoflann::KDTreeSingleIndexAdaptor<Metric, SlabPoints, 3, std::uint32_t>;

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

/// A slab's tree reports its own (local) indices; the shared result set orders by the global
/// index, so the neighbours found are the same however the points are split into slabs.
class SlabResult {
 public:
  using DistanceType = double;
  using IndexType = std::uint32_t;
  using CountType = std::size_t;
  SlabResult(OrderedNearest& nearest, const std::uint32_t* global)
      : nearest_(nearest), global_(global) {}
  std::size_t size() const { return nearest_.size(); }
  bool full() const { return nearest_.full(); }
  double worstDist() const { return nearest_.worstDist(); }
  bool addPoint(double distance, std::uint32_t local) {
    return nearest_.addPoint(distance, global_[local]);
  }

 private:
  OrderedNearest& nearest_;
  const std::uint32_t* global_;
};

/// Points per slab (see Tree): a slab's tree is built by one thread, and a few slabs per thread
/// keep the threads evenly loaded. Fixed, so the slabs depend on the data alone.
constexpr std::size_t slab_points = 1u << 17;
constexpr std::size_t most_slabs = 64;

}  // namespace

/// The points are cut into slabs of equal width across the direction of their largest extent
/// (the number of slabs fixed by the point count, never by the thread count), and each slab gets
/// its own KD-tree: the trees are built in parallel, and a query searches its own slab's tree
/// first, then the slabs on either side, outwards, while a slab's gap along the cut direction is
/// within the current k-th distance (a lower bound on the distance of every point in it, in
/// floating point too: the squared gap is one term of the rounded sum of squares). The
/// neighbours are those of the whole cloud in (distance, index) order, so the split changes no
/// result. Small clouds are one slab.
struct NeighbourIndex::Tree {
  Tree(const Eigen::Matrix3Xd& points, std::size_t threads);
  /// The slab a point falls in.
  std::size_t slab_of(const double* q) const {
    if (slabs.size() == 1) return 0;
    const double t = (q[axis] - low) * per_width;
    return t <= 0.0 ? 0 : std::min(slabs.size() - 1, static_cast<std::size_t>(t));
  }
  struct Slab {
    std::vector<std::uint32_t> global;  ///< the slab's points (global indices), in tree order
    std::vector<double> coords;         ///< their coordinates, 3 per point, in the same order
    double low = 0.0, high = 0.0;       ///< extent of its points along the cut direction
    std::unique_ptr<SlabPoints> dataset;
    std::unique_ptr<KdTree> tree;       ///< null for an empty slab
  };
  const double* data;
  std::size_t size;
  std::size_t axis = 0;
  double low = 0.0, per_width = 0.0;  ///< slab of coordinate c: floor((c - low) * per_width)
  std::vector<Slab> slabs;            ///< in order along the axis
  std::vector<std::uint32_t> order;   ///< locality order: slab by slab, each in tree order
};

NeighbourIndex::Tree::Tree(const Eigen::Matrix3Xd& points, std::size_t threads)
    : data(points.data()), size(static_cast<std::size_t>(points.cols())) {
  std::size_t count = std::min(most_slabs, std::max<std::size_t>(1, size / slab_points));
  if (size > 0 && count > 1) {
    const Eigen::Vector3d extent = points.rowwise().maxCoeff() - points.rowwise().minCoeff();
    Eigen::Index longest = 0;
    extent.maxCoeff(&longest);
    axis = static_cast<std::size_t>(longest);
    low = points.row(longest).minCoeff();
    if (extent(longest) > 0.0 && std::isfinite(extent(longest)))
      per_width = static_cast<double>(count) / extent(longest);
    if (!(per_width > 0.0) || !std::isfinite(per_width)) count = 1;
  }
  slabs.resize(count);
  if (count == 1) {
    slabs[0].global.resize(size);
    for (std::size_t i = 0; i < size; ++i) slabs[0].global[i] = static_cast<std::uint32_t>(i);
  } else {
    std::vector<std::uint32_t> slab_index(size), tally(count, 0);
    for (std::size_t i = 0; i < size; ++i) {
      slab_index[i] = static_cast<std::uint32_t>(slab_of(data + 3 * i));
      ++tally[slab_index[i]];
    }
    for (std::size_t s = 0; s < count; ++s) slabs[s].global.reserve(tally[s]);
    for (std::size_t i = 0; i < size; ++i)
      slabs[slab_index[i]].global.push_back(static_cast<std::uint32_t>(i));
  }
  detail::parallel_for(count, threads, [&](std::size_t s, std::size_t) {
    Slab& slab = slabs[s];
    if (slab.global.empty()) return;
    slab.low = std::numeric_limits<double>::infinity();
    slab.high = -slab.low;
    for (const std::uint32_t g : slab.global) {
      const double c = data[3 * static_cast<std::size_t>(g) + axis];
      slab.low = std::min(slab.low, c);
      slab.high = std::max(slab.high, c);
    }
    const std::size_t m = slab.global.size();
    std::vector<double> coords(3 * m);
    for (std::size_t j = 0; j < m; ++j)
      std::copy_n(data + 3 * static_cast<std::size_t>(slab.global[j]), 3, coords.data() + 3 * j);
    slab.dataset = std::make_unique<SlabPoints>(coords.data(), m);
    slab.tree = std::make_unique<KdTree>(3, *slab.dataset,
                                         nanoflann::KDTreeSingleIndexAdaptorParams(leaf_points));
    // Renumber the slab's points in the tree's order (a node covers a range of that order, so
    // the tree stays valid with the identity permutation): a leaf's points are then adjacent
    // in memory and a query reads them without an index in between, whatever the input order.
    std::vector<std::uint32_t> global(m);
    slab.coords.resize(3 * m);
    for (std::size_t j = 0; j < m; ++j) {
      const std::uint32_t local = slab.tree->vAcc[j];
      global[j] = slab.global[local];
      std::copy_n(coords.data() + 3 * static_cast<std::size_t>(local), 3, slab.coords.data() + 3 * j);
      slab.tree->vAcc[j] = static_cast<std::uint32_t>(j);
    }
    slab.global = std::move(global);
    *slab.dataset = SlabPoints(slab.coords.data(), m);
  });
  order.reserve(size);
  for (const Slab& slab : slabs)
    order.insert(order.end(), slab.global.begin(), slab.global.end());
}

struct NeighbourIndex::Query::Buffers {
  explicit Buffers(std::size_t k) : k(k), nearest(k + 1) { found.reserve(k); }
  std::size_t k;
  OrderedNearest nearest;  // k + 1: each query returns the point itself too (distance 0)
  std::vector<std::uint32_t> found;
};

NeighbourIndex::NeighbourIndex(const Eigen::Matrix3Xd& points, std::size_t threads) {
  if (static_cast<std::uint64_t>(points.cols()) > std::numeric_limits<std::uint32_t>::max())
    throw std::invalid_argument("NeighbourIndex: more than 2^32 - 1 points");
  tree_ = std::make_unique<Tree>(points, threads);
}
NeighbourIndex::~NeighbourIndex() = default;
NeighbourIndex::NeighbourIndex(NeighbourIndex&&) noexcept = default;

std::size_t NeighbourIndex::size() const noexcept { return tree_->size; }

const std::vector<std::uint32_t>& NeighbourIndex::locality_order() const noexcept {
  return tree_->order;
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
  const Tree& tree = *index.tree_;
  b.nearest.clear();
  b.found.clear();
  const double* q = tree.data + 3 * i;
  const auto search = [&](const Tree::Slab& slab) {
    SlabResult result(b.nearest, slab.global.data());
    slab.tree->findNeighbors(result, q, nanoflann::SearchParams());
  };
  const std::size_t own = tree.slab_of(q);
  search(tree.slabs[own]);
  // Outwards on each side while a slab can still hold a point within the k-th distance.
  for (std::size_t s = own; s-- > 0;) {
    const Tree::Slab& slab = tree.slabs[s];
    if (!slab.tree) continue;
    const double gap = q[tree.axis] - slab.high;
    if (b.nearest.full() && gap * gap > b.nearest.worstDist()) break;
    search(slab);
  }
  for (std::size_t s = own + 1; s < tree.slabs.size(); ++s) {
    const Tree::Slab& slab = tree.slabs[s];
    if (!slab.tree) continue;
    const double gap = slab.low - q[tree.axis];
    if (b.nearest.full() && gap * gap > b.nearest.worstDist()) break;
    search(slab);
  }
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
