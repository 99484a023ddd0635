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

/// Leaf size of the KD-tree. With the leaves' distances computed together (Tree::search), 24
/// costs the screen about 5% less than 16, 32 the same as 24, 8 and 48 more (measured,
/// bench/bench_stray_points.cpp, 10^6 points).
constexpr std::size_t leaf_points = 24;

/// nanoflann dataset adaptor over the points of one slab (see Tree): the slab's own copy of
/// its coordinates, one array per axis; a tree refers to them by their position in that copy.
class SlabPoints {
 public:
  SlabPoints(const double* const* axes, std::size_t count)
      : axes_{axes[0], axes[1], axes[2]}, count_(count) {}
  std::size_t kdtree_get_point_count() const { return count_; }
  double kdtree_get_pt(std::uint32_t local, std::size_t dim) const { return axes_[dim][local]; }
  // No precomputed bounding box: nanoflann computes it while building.
  template <class Box>
  bool kdtree_get_bbox(Box&) const {
    return false;
  }

 private:
  const double* axes_[3];
  std::size_t count_;
};

/// Squared Euclidean distance in 3D from query `a` to point (x, y, z), summed in a fixed order.
inline double squared_distance(const double* a, double x, double y, double z) {
  const double d0 = a[0] - x, d1 = a[1] - y, d2 = a[2] - z;
  double sum = d0 * d0;
  sum += d1 * d1;
  sum += d2 * d2;
  return sum;
}

/// nanoflann's distance type: the tree is only built by nanoflann (its searches are not used,
/// see Tree::search), so only the construction's needs are met.
struct Metric {
  using ElementType = double;
  using DistanceType = double;
  explicit Metric(const SlabPoints&) {}
  template <class U, class V>
  double accum_dist(const U a, const V b, std::size_t) const {
    return (a - b) * (a - b);
  }
};
using KdTree = nanoflann::KDTreeSingleIndexAdaptor<Metric, SlabPoints, 3, std::uint32_t>;

/// At least the next double above `d` >= 0 (0 included), without a libm call: d * epsilon is at
/// least one unit in the last place of d, and rounding is monotone.
inline double just_above(double d) {
  return d + d * std::numeric_limits<double>::epsilon() + std::numeric_limits<double>::denorm_min();
}

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

  /// Empties the list. With a `bound`, only candidates nearer than it are admitted from the
  /// start: an upper bound on the capacity-th distance (just_above of it, see below) prunes the
  /// search at once and loses none of the nearest.
  void clear(double bound = std::numeric_limits<double>::infinity()) {
    count_ = 0;
    worst_ = bound;
  }
  std::size_t size() const { return count_; }
  bool full() const { return count_ == capacity_; }
  double worstDist() const { return worst_; }
  std::uint32_t index(std::size_t k) const { return index_[k]; }
  double distance(std::size_t k) const { return distance_[k]; }

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
    if (full()) worst_ = just_above(distance_[capacity_ - 1]);
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

/// Points per slab (see Tree): a slab's tree is built by one thread, and a few slabs per thread
/// keep the threads evenly loaded (2^16 rather than 2^17: smaller trees build and search about
/// 5% faster, measured on 10^6 points). Fixed, so the slabs depend on the data alone.
constexpr std::size_t slab_points = 1u << 16;
constexpr std::size_t most_slabs = 64;

/// Offers `nearest` the points at positions [begin, end) of the per-axis arrays x, y, z (their
/// indices in `global`) that are nearer to q than its current worst distance. The distances are
/// computed together (the compiler vectorises them) before any is offered, in the same
/// arithmetic as one at a time, so the same bits; those that pass are gathered without a branch
/// per point (whether a point passes is unpredictable), then offered in order.
inline void offer_range(const double* q, const double* x, const double* y, const double* z,
                        const std::uint32_t* global, std::size_t begin, std::size_t end,
                        OrderedNearest& nearest) {
  for (; begin < end; begin += leaf_points) {
    const std::size_t count = std::min(end - begin, leaf_points);
    double distance[leaf_points];
    for (std::size_t j = 0; j < count; ++j)
      distance[j] = squared_distance(q, x[begin + j], y[begin + j], z[begin + j]);
    std::uint32_t passing[leaf_points];
    std::size_t passed = 0;
    const double worst = nearest.worstDist();
    for (std::size_t j = 0; j < count; ++j) {
      passing[passed] = static_cast<std::uint32_t>(j);
      passed += distance[j] < worst ? 1 : 0;
    }
    for (std::size_t c = 0; c < passed; ++c) {
      const std::size_t j = passing[c];
      if (distance[j] < nearest.worstDist()) nearest.addPoint(distance[j], global[begin + j]);
    }
  }
}

}  // namespace

/// The points are cut into slabs of equal width across the direction of their largest extent
/// (the number of slabs fixed by the point count, never by the thread count), and each slab gets
/// its own KD-tree: the trees are built in parallel, and a query searches its own slab's tree
/// first, then the slabs on either side, outwards, while a slab's gap along the cut direction is
/// within the current k-th distance (a lower bound on the distance of every point in it, in
/// floating point too: the squared gap is one term of the rounded sum of squares). The
/// neighbours are those of the whole cloud in (distance, index) order, so the split changes no
/// result. Small clouds are one slab.
///
/// The coordinates are kept once, in the locality order (slab by slab, each slab in its tree's
/// order, so a leaf is a range of positions), one array per axis; `order` maps a position to the
/// point's index in the input.
struct NeighbourIndex::Tree {
  Tree(const Eigen::Matrix3Xd& points, std::size_t threads);
  /// The slab a point falls in.
  std::size_t slab_of(const double* q) const {
    if (slabs.size() == 1) return 0;
    const double t = (q[axis] - low) * per_width;
    return t <= 0.0 ? 0 : std::min(slabs.size() - 1, static_cast<std::size_t>(t));
  }
  struct Slab {
    std::size_t begin = 0, end = 0;  ///< its positions in the locality order
    double low = 0.0, high = 0.0;    ///< extent of its points along the cut direction
    std::unique_ptr<SlabPoints> dataset;
    std::unique_ptr<KdTree> tree;  ///< null for an empty slab
  };
  /// Offers `nearest` the points of `slab` that can be among the nearest to `q` (see search).
  void search(const Slab& slab, const double* q, OrderedNearest& nearest) const;
  /// Searches slab `own` (q's), then the slabs on either side, outwards, while a slab's gap
  /// along the cut direction is within the current worst distance.
  void search_slabs(std::size_t own, const double* q, OrderedNearest& nearest) const {
    search(slabs[own], q, nearest);
    for (std::size_t s = own; s-- > 0;) {
      const Slab& slab = slabs[s];
      if (!slab.tree) continue;
      const double gap = q[axis] - slab.high;
      if (nearest.full() && gap * gap > nearest.worstDist()) break;
      search(slab, q, nearest);
    }
    for (std::size_t s = own + 1; s < slabs.size(); ++s) {
      const Slab& slab = slabs[s];
      if (!slab.tree) continue;
      const double gap = slab.low - q[axis];
      if (nearest.full() && gap * gap > nearest.worstDist()) break;
      search(slab, q, nearest);
    }
  }
  const double* data;
  std::size_t size;
  std::size_t axis = 0;
  double low = 0.0, per_width = 0.0;  ///< slab of coordinate c: floor((c - low) * per_width)
  std::vector<Slab> slabs;            ///< in order along the axis
  std::vector<std::uint32_t> order;   ///< locality order: the input index at each position
  std::vector<double> axes[3];        ///< x, y and z at each position
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
  order.resize(size);
  for (std::vector<double>& a : axes) a.resize(size);
  if (count == 1) {
    slabs[0].end = size;
    for (std::size_t i = 0; i < size; ++i) order[i] = static_cast<std::uint32_t>(i);
  } else {
    // A counting sort by slab, stable: each slab's points in input order.
    std::vector<std::uint32_t> slab_index(size);
    std::vector<std::size_t> tally(count, 0);
    for (std::size_t i = 0; i < size; ++i) {
      slab_index[i] = static_cast<std::uint32_t>(slab_of(data + 3 * i));
      ++tally[slab_index[i]];
    }
    std::size_t at = 0;
    for (std::size_t s = 0; s < count; ++s) {
      slabs[s].begin = at;
      at += tally[s];
      slabs[s].end = at;
    }
    std::vector<std::size_t> next(count);
    for (std::size_t s = 0; s < count; ++s) next[s] = slabs[s].begin;
    for (std::size_t i = 0; i < size; ++i) order[next[slab_index[i]]++] = static_cast<std::uint32_t>(i);
  }
  detail::parallel_for(count, threads, [&](std::size_t s, std::size_t) {
    Slab& slab = slabs[s];
    const std::size_t m = slab.end - slab.begin;
    if (m == 0) return;
    slab.low = std::numeric_limits<double>::infinity();
    slab.high = -slab.low;
    const std::vector<std::uint32_t> members(order.begin() + static_cast<std::ptrdiff_t>(slab.begin),
                                             order.begin() + static_cast<std::ptrdiff_t>(slab.end));
    std::vector<double> built_axes[3];
    for (std::vector<double>& a : built_axes) a.resize(m);
    for (std::size_t j = 0; j < m; ++j) {
      for (std::size_t d = 0; d < 3; ++d)
        built_axes[d][j] = data[3 * static_cast<std::size_t>(members[j]) + d];
      slab.low = std::min(slab.low, built_axes[axis][j]);
      slab.high = std::max(slab.high, built_axes[axis][j]);
    }
    const double* built[3] = {built_axes[0].data(), built_axes[1].data(), built_axes[2].data()};
    slab.dataset = std::make_unique<SlabPoints>(built, m);
    slab.tree = std::make_unique<KdTree>(3, *slab.dataset,
                                         nanoflann::KDTreeSingleIndexAdaptorParams(leaf_points));
    // Renumber the slab's points in the tree's order (a node covers a range of that order, so
    // the tree stays valid with the identity permutation): a leaf's points are then adjacent
    // in memory and a query reads them without an index in between, whatever the input order.
    for (std::size_t j = 0; j < m; ++j) {
      const std::uint32_t local = slab.tree->vAcc[j];
      order[slab.begin + j] = members[local];
      for (std::size_t d = 0; d < 3; ++d) axes[d][slab.begin + j] = built_axes[d][local];
      slab.tree->vAcc[j] = static_cast<std::uint32_t>(j);
    }
    const double* kept[3] = {axes[0].data() + slab.begin, axes[1].data() + slab.begin,
                             axes[2].data() + slab.begin};
    *slab.dataset = SlabPoints(kept, m);
  });
}

/// The k-nearest search of one slab's tree. nanoflann builds the tree; the search is written
/// here over its nodes because a query's time goes into the leaves (offer_range). A subtree is
/// skipped only when the squared distance from q to its box, summed like a point's, exceeds the
/// current worst distance: each term is at most the corresponding term of any point inside
/// (rounding is monotone), so no point that could enter the result is skipped, and the
/// neighbours found are exactly the (distance, index) nearest.
void NeighbourIndex::Tree::search(const Slab& slab, const double* q,
                                  OrderedNearest& nearest) const {
  using Node = KdTree::Node;
  const double* const x = axes[0].data() + slab.begin;
  const double* const y = axes[1].data() + slab.begin;
  const double* const z = axes[2].data() + slab.begin;
  const std::uint32_t* const global = order.data() + slab.begin;
  // gap[d]: q's offset from the current node's box along axis d (0 inside), as q - bound.
  double gap[3];
  for (int d = 0; d < 3; ++d) {
    const auto& box = slab.tree->root_bbox[static_cast<std::size_t>(d)];
    gap[d] = q[d] < box.low ? q[d] - box.low : q[d] > box.high ? q[d] - box.high : 0.0;
  }
  const auto descend = [&](const auto& self, const Node* node) -> void {
    if (node->child1 == nullptr && node->child2 == nullptr) {
      offer_range(q, x, y, z, global, node->node_type.lr.left, node->node_type.lr.right, nearest);
      return;
    }
    // child1 holds the points with coordinate <= divlow along divfeat, child2 those >= divhigh.
    const int axis = node->node_type.sub.divfeat;
    const double value = q[axis];
    const double low = node->node_type.sub.divlow, high = node->node_type.sub.divhigh;
    const bool first_low = (value - low) + (value - high) < 0.0;
    self(self, first_low ? node->child1 : node->child2);
    const Node* other = first_low ? node->child2 : node->child1;
    const double kept = gap[axis];
    if (first_low) {
      if (value < high) gap[axis] = value - high;
    } else {
      if (value > low) gap[axis] = value - low;
    }
    double bound = gap[0] * gap[0];
    bound += gap[1] * gap[1];
    bound += gap[2] * gap[2];
    if (bound <= nearest.worstDist()) self(self, other);
    gap[axis] = kept;
  };
  descend(descend, slab.tree->root_node);
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

namespace {
/// The k nearest of a (k + 1)-list that holds the query itself (input index `self`) normally
/// first: with k + 1 or more coincident points of lower index it is absent, and then the first
/// k are all at distance 0 from it anyway.
template <class Out>
void without_self(const OrderedNearest& nearest, std::uint32_t self, std::size_t k, Out out) {
  std::size_t written = 0;
  for (std::size_t j = 0; j < nearest.size() && written < k; ++j) {
    const std::uint32_t other = nearest.index(j);
    if (other == self) continue;
    out(other);
    ++written;
  }
}

}  // namespace

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
  tree.search_slabs(tree.slab_of(q), q, b.nearest);
  without_self(b.nearest, static_cast<std::uint32_t>(i), b.k,
               [&](std::uint32_t other) { b.found.push_back(other); });
  return b.found;
}

void NeighbourIndex::nearest_in_order(std::size_t k, std::size_t first, std::size_t last,
                                      std::vector<std::uint32_t>& neighbours) const {
  const Tree& tree = *tree_;
  if (k == 0) throw std::invalid_argument("NeighbourIndex::nearest_in_order: k must be at least 1");
  if (tree.size <= k)
    throw std::invalid_argument("NeighbourIndex::nearest_in_order: " + std::to_string(tree.size) +
                                " points for " + std::to_string(k) + " neighbours");
  if (first > last || last > tree.size)
    throw std::invalid_argument("NeighbourIndex::nearest_in_order: positions outside the index");
  neighbours.resize((last - first) * k);
  OrderedNearest nearest(k + 1);  // each list holds the point itself too (distance 0)
  std::uint32_t* out = neighbours.data();
  std::size_t slab = 0;
  for (std::size_t p = first; p < last; ++p) {
    const double q[3] = {tree.axes[0][p], tree.axes[1][p], tree.axes[2][p]};
    // The previous point's k + 1 nearest are k + 1 distinct points near this one (consecutive
    // positions are neighbours in the tree): the farthest of them bounds this point's (k+1)-th
    // distance from above, so the search starts pruned, with fewer insertions, and finds the
    // same points (OrderedNearest::clear).
    double bound = std::numeric_limits<double>::infinity();
    if (p > first) {
      bound = 0.0;
      for (std::size_t j = 0; j < nearest.size(); ++j) {
        const double* o = tree.data + 3 * static_cast<std::size_t>(nearest.index(j));
        bound = std::max(bound, squared_distance(q, o[0], o[1], o[2]));
      }
      bound = just_above(bound);
    }
    nearest.clear(bound);
    while (tree.slabs[slab].end <= p) ++slab;
    tree.search_slabs(slab, q, nearest);
    without_self(nearest, tree.order[p], k, [&](std::uint32_t other) { *out++ = other; });
  }
}

}  // namespace cylzone
