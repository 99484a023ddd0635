// Nearest neighbours through nanoflann's KD-tree; the only file that includes nanoflann.
#include "cylzone/prepare/neighbour_index.hpp"

#include <nanoflann.hpp>

#include "detail/parallel.hpp"
#include "prepare/detail/compact_within.hpp"

#include <algorithm>
#include <cmath>
#include <cstring>
#include <limits>
#include <stdexcept>
#include <string>
#include <type_traits>

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

using detail::squared_distance;  // dx^2 + dy^2 + dz^2 in that order (compact_within.hpp)

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

// ---------------------------------------------------------------------------------------------
// all_nearest: a uniform grid first, the KD-tree only for the points the grid cannot certify.

namespace cylzone {
namespace {

/// Largest block radius the grid searches (7x7x7 cells). Cell coordinates start at it, so every
/// block's cells have non-negative coordinates and the packed keys of a row of cells are
/// consecutive integers.
constexpr std::int64_t widest = 3;

/// Most candidates a block may hold before its points go to the KD-tree (a pile of coincident
/// points would otherwise cost its count squared).
std::size_t candidate_cap(std::size_t k) { return std::max<std::size_t>(512, 64 * (k + 1)); }

/// all_nearest's first bound of a point's k-th squared distance is the previous point's times
/// 1 + guess_margin (see there): large enough that it usually holds k candidates, small enough
/// that few more pass it. Speed only: the neighbours do not depend on it.
constexpr double guess_margin = 0.25;

/// Points per chunk of the grid's set-up (keys, sort, cell table, coordinates): fixed, so the
/// chunks depend on the data alone (src/detail/parallel.hpp).
constexpr std::size_t setup_chunk = std::size_t{1} << 16;

std::size_t setup_chunks(std::size_t n) { return (n + setup_chunk - 1) / setup_chunk; }

/// Stable LSD radix sort of `keys` by their bits [low, low + bits) (the bits above are zero),
/// by digits of at most 11 bits, `payload` carried along unless empty (common practice), on
/// up to `threads` threads: each pass counts the digits of every chunk, gives each (digit,
/// chunk) its range of the output in that order, and scatters the chunks in parallel, so the
/// output is that of the serial sort for any thread count.
void radix_sort(std::vector<std::uint64_t>& keys, std::vector<std::uint32_t>& payload, int low,
                int bits, std::size_t threads) {
  const std::size_t n = keys.size();
  if (bits <= 0 || n < 2) return;
  const bool carry = !payload.empty();
  const int passes = (bits + 10) / 11;
  const int width = (bits + passes - 1) / passes;
  const std::size_t digits = std::size_t{1} << width;
  const std::uint64_t mask = digits - 1;
  const std::size_t chunks = setup_chunks(n);
  std::vector<std::uint64_t> keys_to(n);
  std::vector<std::uint32_t> payload_to(carry ? n : 0);
  std::vector<std::size_t> start(chunks * digits);  // chunk c's counts, then starts, of digit d
  for (int pass = 0; pass < passes; ++pass) {
    const int shift = low + pass * width;
    // Local copies in the loops: a store through a pointer of the same type family could
    // otherwise alias the captured shift and force a reload per element.
    detail::parallel_for(chunks, threads, [&, shift](std::size_t c, std::size_t) {
      std::size_t* const count = start.data() + c * digits;
      const std::uint64_t* const from = keys.data();
      std::fill(count, count + digits, std::size_t{0});
      for (std::size_t i = c * setup_chunk, end = std::min(n, i + setup_chunk); i < end; ++i)
        ++count[(from[i] >> shift) & mask];
    });
    const std::size_t first_digit = (keys[0] >> shift) & mask;
    std::size_t same = 0;
    for (std::size_t c = 0; c < chunks; ++c) same += start[c * digits + first_digit];
    if (same == n) continue;  // one digit value: already in order
    std::size_t sum = 0;
    for (std::size_t d = 0; d < digits; ++d)
      for (std::size_t c = 0; c < chunks; ++c) {
        const std::size_t count = start[c * digits + d];
        start[c * digits + d] = sum;
        sum += count;
      }
    detail::parallel_for(chunks, threads, [&, shift](std::size_t c, std::size_t) {
      std::size_t* const next = start.data() + c * digits;
      const std::uint64_t* const from = keys.data();
      const std::uint32_t* const carried = payload.data();
      std::uint64_t* const to = keys_to.data();
      std::uint32_t* const carried_to = payload_to.data();
      for (std::size_t i = c * setup_chunk, end = std::min(n, i + setup_chunk); i < end; ++i) {
        const std::uint64_t key = from[i];
        const std::size_t at = next[(key >> shift) & mask]++;
        to[at] = key;
        if (carry) carried_to[at] = carried[i];
      }
    });
    keys.swap(keys_to);
    payload.swap(payload_to);
  }
}

/// The points bucketed into cubic cells of edge `cell`, ordered by cell (z, then y, then x,
/// each cell's points in input order), the coordinates copied in that order, one array per
/// axis. A cell's coordinate along an axis is floor((c - origin) / cell) + widest, computed as
/// floor((c - origin) * inverse): non-decreasing in c, which is all the certification needs.
class Grid {
 public:
  /// The grid of `points` for k nearest neighbours, set up on up to `threads` threads (the
  /// same grid for any thread count).
  Grid(const Eigen::Matrix3Xd& points, std::size_t k, std::size_t threads);

  std::int64_t coord(double v, int a) const {
    return floor_of((v - origin_[a]) * inverse_) + widest;
  }
  /// floor(t) as an integer, |t| < 2^63 (here |t| <= 2^20 + widest + 1: the cell edge is at
  /// least 2^-20 of the extent): truncation, one less when that rounded up (t negative, not an
  /// integer). The same value as std::floor, without its library call (x86-64 without SSE4.1
  /// has no rounding instruction), which cost about a tenth of the grid's set-up.
  static std::int64_t floor_of(double t) {
    const auto i = static_cast<std::int64_t>(t);
    return i - (static_cast<double>(i) > t ? 1 : 0);
  }
  std::uint64_t key(std::int64_t x, std::int64_t y, std::int64_t z) const {
    return static_cast<std::uint64_t>((z * dims_[1] + y) * dims_[0] + x);
  }
  /// The first occupied cell whose key is at least `key`.
  std::size_t cell_from(std::uint64_t key) const {
    return static_cast<std::size_t>(
        std::lower_bound(cell_key_.begin(), cell_key_.end(), key) - cell_key_.begin());
  }
  /// The same cell as cell_from(key), given `hint` with every occupied cell before it keyed
  /// below `key`: an exponential search forward from the hint (Bentley & Yao, Inf. Process.
  /// Lett. 5 (1976) 82-87, from memory), then the binary search within the last step. A
  /// block's rows are visited in increasing key order, so each row starts its search where the
  /// previous row ended, a few cells away, instead of over all occupied cells.
  std::size_t cell_from(std::uint64_t key, std::size_t hint) const {
    const std::size_t cells = cell_key_.size();
    std::size_t low = hint, high = hint, step = 1;
    while (high < cells && cell_key_[high] < key) {  // every cell up to `high` is keyed below
      low = high + 1;
      high += step;
      step *= 2;
    }
    const auto first = cell_key_.begin();
    return static_cast<std::size_t>(
        std::lower_bound(first + static_cast<std::ptrdiff_t>(low),
                         first + static_cast<std::ptrdiff_t>(std::min(high, cells)), key) -
        first);
  }
  /// Planes bounding the block of cells [c - r, c + r] along axis a from outside: every point
  /// whose cell coordinate is below c - r lies below `low`, every point above c + r above
  /// `high` (checked through coord itself, so the rounding of the cell edges cannot break it).
  void block_faces(std::int64_t c, std::int64_t r, int a, double& low, double& high) const {
    low = origin_[a] + static_cast<double>(c - r - widest) * cell_;
    high = origin_[a] + static_cast<double>(c + r + 1 - widest) * cell_;
    // The edges as computed may round into the neighbouring cell: moved inwards by steps of
    // at least one unit in the last place of (edge - origin) until they do not (the block is
    // then unusable if that fails).
    constexpr double inf = std::numeric_limits<double>::infinity();
    const double unit = (std::abs(origin_[a]) + std::abs(low) + std::abs(high) + cell_) *
                        std::numeric_limits<double>::epsilon();
    int step = 0;
    for (; step < 64 && coord(low, a) < c - r; ++step) low += unit;
    if (step == 64) low = inf;
    for (step = 0; step < 64 && coord(high, a) > c + r; ++step) high -= unit;
    if (step == 64) high = -inf;
  }
  /// Squared distance from q to the outside of the block [c - r, c + r]^3 around cell c, as a
  /// lower bound of the computed squared distance (squared_distance) of every point outside:
  /// along the axis where such a point is beyond a face, its offset from q is at least q's
  /// offset from the face, in floating point too (rounding is monotone), and the other terms
  /// of its sum are >= 0.
  double outside_bound(const double* q, const std::int64_t* c, std::int64_t r) const {
    double low[3], high[3];
    for (int a = 0; a < 3; ++a) block_faces(c[a], r, a, low[a], high[a]);
    return outside_of(q, low, high);
  }
  /// outside_bound for a block with faces `low` and `high` (block_faces).
  static double outside_of(const double* q, const double* low, const double* high) {
    double bound = std::numeric_limits<double>::infinity();
    for (int a = 0; a < 3; ++a) {
      const double gap = std::min(q[a] - low[a], high[a] - q[a]);
      if (!(gap > 0.0)) return 0.0;
      bound = std::min(bound, gap * gap);
    }
    return bound;
  }

  double cell_ = 0.0, inverse_ = 0.0;
  double origin_[3] = {0.0, 0.0, 0.0};
  std::int64_t dims_[3] = {1, 1, 1};
  std::vector<std::uint64_t> cell_key_;      ///< occupied cells, ascending
  std::vector<std::uint32_t> cell_begin_;    ///< their first positions, and the end
  std::vector<std::uint32_t> order_;         ///< position -> input index
  std::vector<double> axes_[3];              ///< coordinates at each position

 private:
  /// Sets the cell edge (enlarged when an axis would need more than 2^20 cells) and sorts the
  /// points by cell; returns the number of occupied cells.
  std::size_t bucket(const Eigen::Matrix3Xd& points, double cell, std::size_t threads);
  std::vector<std::uint64_t> sorted_keys_;
  double extent_[3] = {0.0, 0.0, 0.0};
  double top_[3] = {0.0, 0.0, 0.0};  ///< largest coordinate along each axis
};

Grid::Grid(const Eigen::Matrix3Xd& points, std::size_t k, std::size_t threads) {
  const std::size_t n = static_cast<std::size_t>(points.cols());
  const std::size_t chunks = setup_chunks(n);
  {
    // The bounding box, chunk by chunk (a minimum and a maximum do not depend on the order).
    std::vector<double> box(6 * chunks);
    detail::parallel_for(chunks, threads, [&](std::size_t c, std::size_t) {
      const Eigen::Index first = static_cast<Eigen::Index>(c * setup_chunk);
      const Eigen::Index count = static_cast<Eigen::Index>(std::min(n, (c + 1) * setup_chunk)) - first;
      for (int a = 0; a < 3; ++a) {
        box[6 * c + 2 * a] = points.row(a).segment(first, count).minCoeff();
        box[6 * c + 2 * a + 1] = points.row(a).segment(first, count).maxCoeff();
      }
    });
    for (int a = 0; a < 3; ++a) {
      origin_[a] = box[2 * a];
      top_[a] = box[2 * a + 1];
      for (std::size_t c = 1; c < chunks; ++c) {
        origin_[a] = std::min(origin_[a], box[6 * c + 2 * a]);
        top_[a] = std::max(top_[a], box[6 * c + 2 * a + 1]);
      }
      extent_[a] = top_[a] - origin_[a];
    }
  }
  // Points per occupied cell aimed at: then a point's k nearest lie within about one cell
  // edge, in a volume (k + 1 in a ball of radius 0.9 cell) as on a surface (in a disc of 1.0),
  // so the 3x3x3 block, at least one cell beyond the point's own, certifies nearly all. (k+1)/3
  // rather than (k+1)/2: fewer candidates per block; measured on 10^6 points, k = 8, 10 %
  // less time on the scanned bore (99.97 % certified by the 3x3x3 block, the rest by the
  // 5x5x5), 20 % less in a uniform cube (98.2 %); 0.7 (k+1) costs more on both.
  const double target = static_cast<double>(k + 1) / 3.0;
  const double largest = std::max({extent_[0], extent_[1], extent_[2]});
  double volume = 1.0;
  for (const double e : extent_) volume *= std::max(e, 1e-3 * largest);
  double cell = std::cbrt(volume * target / static_cast<double>(n));
  if (!(cell > 0.0) || !std::isfinite(cell)) cell = 1.0;
  // The points per occupied cell grow as cell^D, D the dimension of what the points sample
  // (2 for a scanned surface, 3 for a volume): corrected once assuming D = 2, then with D
  // measured from the two trials; the occupied cells, not the bounding box, set the density.
  double cells = static_cast<double>(bucket(points, cell, threads));
  double per = static_cast<double>(n) / cells;
  double last_cell = 0.0, last_per = 0.0;
  for (int trial = 0; trial < 2 && (per > 1.6 * target || per < target / 1.6); ++trial) {
    double dimension = 2.0;
    if (trial > 0 && per != last_per && cell != last_cell)
      dimension = std::clamp(std::log(per / last_per) / std::log(cell / last_cell), 1.0, 3.0);
    last_cell = cell;
    last_per = per;
    cell *= std::clamp(std::pow(target / per, 1.0 / dimension), 0.125, 8.0);
    cells = static_cast<double>(bucket(points, cell, threads));
    per = static_cast<double>(n) / cells;
  }
  // The occupied cells and where their points start: chunk c's first cells are numbered
  // after the cells that start in the chunks before it.
  std::vector<std::size_t> first_cell(chunks + 1, 0);
  detail::parallel_for(chunks, threads, [&](std::size_t c, std::size_t) {
    std::size_t starts = 0;
    for (std::size_t p = c * setup_chunk, end = std::min(n, p + setup_chunk); p < end; ++p)
      starts += p == 0 || sorted_keys_[p] != sorted_keys_[p - 1] ? 1 : 0;
    first_cell[c + 1] = starts;
  });
  for (std::size_t c = 0; c < chunks; ++c) first_cell[c + 1] += first_cell[c];
  cell_key_.resize(first_cell[chunks]);
  cell_begin_.resize(first_cell[chunks] + 1);
  detail::parallel_for(chunks, threads, [&](std::size_t c, std::size_t) {
    std::size_t at = first_cell[c];
    for (std::size_t p = c * setup_chunk, end = std::min(n, p + setup_chunk); p < end; ++p)
      if (p == 0 || sorted_keys_[p] != sorted_keys_[p - 1]) {
        cell_key_[at] = sorted_keys_[p];
        cell_begin_[at++] = static_cast<std::uint32_t>(p);
      }
  });
  cell_begin_.back() = static_cast<std::uint32_t>(n);
  sorted_keys_ = {};
  for (std::vector<double>& a : axes_) a.resize(n);
  detail::parallel_for(chunks, threads, [&](std::size_t c, std::size_t) {
    for (std::size_t p = c * setup_chunk, end = std::min(n, p + setup_chunk); p < end; ++p) {
      const double* const from = points.data() + 3 * static_cast<std::size_t>(order_[p]);
      for (int a = 0; a < 3; ++a) axes_[a][p] = from[a];
    }
  });
}

std::size_t Grid::bucket(const Eigen::Matrix3Xd& points, double cell, std::size_t threads) {
  constexpr double most = static_cast<double>(std::int64_t{1} << 20);
  for (const double e : extent_) cell = std::max(cell, e / most);
  cell_ = cell;
  inverse_ = 1.0 / cell;
  for (int a = 0; a < 3; ++a) dims_[a] = coord(top_[a], a) + widest + 1;
  const std::size_t n = static_cast<std::size_t>(points.cols());
  const std::size_t chunks = setup_chunks(n);
  const std::uint64_t top = key(dims_[0] - 1, dims_[1] - 1, dims_[2] - 1);
  int bits = 0;
  while (bits < 64 && (top >> bits) != 0) ++bits;
  // Keys of 32 bits or fewer are sorted with the input index in the low 32 bits of the same
  // word (n < 2^32): one array scattered per pass instead of two, a third less memory moved,
  // the same stable order.
  const bool packed = bits <= 32;
  sorted_keys_.resize(n);
  order_.resize(packed ? 0 : n);
  detail::parallel_for(chunks, threads, [&](std::size_t c, std::size_t) {
    for (std::size_t i = c * setup_chunk, end = std::min(n, i + setup_chunk); i < end; ++i) {
      const double* p = points.data() + 3 * i;
      const std::uint64_t at = key(coord(p[0], 0), coord(p[1], 1), coord(p[2], 2));
      if (packed) {
        sorted_keys_[i] = at << 32 | i;
      } else {
        sorted_keys_[i] = at;
        order_[i] = static_cast<std::uint32_t>(i);
      }
    }
  });
  radix_sort(sorted_keys_, order_, packed ? 32 : 0, bits, threads);
  if (packed) {
    order_.resize(n);
    detail::parallel_for(chunks, threads, [&](std::size_t c, std::size_t) {
      for (std::size_t p = c * setup_chunk, end = std::min(n, p + setup_chunk); p < end; ++p) {
        order_[p] = static_cast<std::uint32_t>(sorted_keys_[p]);
        sorted_keys_[p] >>= 32;
      }
    });
  }
  std::vector<std::size_t> occupied(chunks, 0);
  detail::parallel_for(chunks, threads, [&](std::size_t c, std::size_t) {
    for (std::size_t p = std::max<std::size_t>(1, c * setup_chunk),
                     end = std::min(n, (c + 1) * setup_chunk);
         p < end; ++p)
      occupied[c] += sorted_keys_[p] != sorted_keys_[p - 1] ? 1 : 0;
  });
  std::size_t total = n > 0 ? 1 : 0;
  for (const std::size_t o : occupied) total += o;
  return total;
}

/// One worker's buffers: a block's candidates (per-axis coordinates and input indices), the
/// distances of one query to them, and the output of a chunk. Aligned to a cache line of 64
/// bytes (common practice) so that the workers' buffers, adjacent in one vector, never share a
/// line: each worker writes its own (self, the output's size) for every point.
struct alignas(64) GridScratch {
  std::vector<double> x, y, z, distance;
  std::vector<std::uint32_t> id, passing;
  std::vector<std::uint32_t> top;  ///< candidate slots of the k nearest, in order
  std::vector<std::uint32_t> points, rows, uncertain;
  std::size_t self = 0;    ///< slot of the query's own point among the candidates
  std::size_t m = 0;       ///< candidates gathered (gather_block); `distance` holds the cap
  std::size_t passed = 0;  ///< candidates kept in `passing` (keep_within)
  std::size_t kept = 0;    ///< points of the chunk's output written so far (keep_found)
};

/// Gathers the points of the block of cells [c - r, c + r]^3 around cell coordinate `c` into
/// `s` and notes the slot of the point at `position`; false when more than `cap` candidates.
/// `starts`, when given, holds for each row of the block (z, then y) its first occupied cell
/// at or after the row's start (as Grid::cell_from would find it).
bool gather_block(const Grid& g, const std::int64_t* c, std::int64_t r, std::size_t position,
                  std::size_t cap, GridScratch& s, const std::size_t* starts = nullptr) {
  std::size_t m = 0;
  s.self = std::numeric_limits<std::size_t>::max();
  const std::size_t cells = g.cell_key_.size();
  // Without `starts`: the first row's cell by a binary search over all cells, each later one
  // from where the previous row ended (a row's keys are below the next row's: a row spans
  // 2r + 1 < dims_[0] keys).
  bool searched = false;
  std::size_t after = 0;  // every occupied cell before it is keyed below the next row
  for (std::int64_t dz = -r; dz <= r; ++dz)
    for (std::int64_t dy = -r; dy <= r; ++dy) {
      const std::uint64_t low = g.key(c[0] - r, c[1] + dy, c[2] + dz);
      std::size_t a = starts ? *starts++ : searched ? g.cell_from(low, after) : g.cell_from(low);
      searched = true;
      std::size_t b = a;
      while (b < cells && g.cell_key_[b] <= low + static_cast<std::uint64_t>(2 * r)) ++b;
      after = b;
      const std::size_t begin = g.cell_begin_[a], end = g.cell_begin_[b];
      if (m + (end - begin) > cap) return false;
      if (position >= begin && position < end) s.self = m + (position - begin);
      for (std::size_t p = begin; p < end; ++p, ++m) {
        s.x[m] = g.axes_[0][p];
        s.y[m] = g.axes_[1][p];
        s.z[m] = g.axes_[2][p];
        s.id[m] = g.order_[p];
      }
    }
  s.m = m;  // a count, not a resize: growing the vector zero-filled it block after block
  return true;
}

/// Starts a chunk's output for up to `count` points: the buffers only grow, so that
/// keep_found writes in place (a push_back per neighbour cost about 6 % of the search).
void start_output(GridScratch& s, std::size_t count, std::size_t k) {
  s.kept = 0;
  if (s.points.size() < count) s.points.resize(count);
  if (s.rows.size() < count * k) s.rows.resize(count * k);
}

/// Appends the point with input index `index` and its k nearest (s.top) to the chunk's output
/// (start_output sized it).
void keep_found(GridScratch& s, std::uint32_t index, std::size_t k) {
  s.points[s.kept] = index;
  std::uint32_t* const row = s.rows.data() + s.kept * k;
  const std::uint32_t* const id = s.id.data();
  const std::uint32_t* const top = s.top.data();
  if (k == 8) {  // the screen's k: a loop of fixed length, unrolled
    for (std::size_t j = 0; j < 8; ++j) row[j] = id[top[j]];
  } else {
    for (std::size_t j = 0; j < k; ++j) row[j] = id[top[j]];
  }
  ++s.kept;
}

/// Squared distances from q to every gathered candidate into s.distance, and the slots of
/// those within squared distance `bound` into s.passing, in one pass (detail::distances_within:
/// four candidates a step in AVX2 where the processor has it, else the SSE2 loops; the same
/// arithmetic as squared_distance one at a time, so the same bits). The query's own slot
/// (s.self) has its x coordinate replaced by a NaN for the pass, so its distance is a NaN,
/// which no bound admits: the point is excluded without a test per candidate. Returns how many
/// passed; when at least k, `bound` bounds the k-th distance from above (see keep_within).
std::size_t distances_within(const double* q, double bound, GridScratch& s) {
  const std::size_t m = s.m;
  const bool own = s.self < m;
  const double x = own ? s.x[s.self] : 0.0;
  if (own) s.x[s.self] = std::numeric_limits<double>::quiet_NaN();
  s.passed = detail::distances_within(q, s.x.data(), s.y.data(), s.z.data(), m, bound,
                                      s.distance.data(), s.passing.data());
  if (own) s.x[s.self] = x;
  return s.passed;
}

/// The slots of the candidates within squared distance `bound` (distances_within first)
/// into s.passing, without a branch per candidate (whether one passes is unpredictable);
/// returns how many, the query's own point never among them (its distance is a NaN). When at
/// least k, `bound` bounds the k-th distance from above: the k nearest in (distance, index)
/// order all passed, whatever their indices.
/// Four candidates a step (detail/compact_within.hpp: SSE2 comparisons and a packing table),
/// the same slots in the same order as one at a time.
std::size_t keep_within(double bound, GridScratch& s) {
  s.passed = detail::compact_within(s.distance.data(), s.m, bound, s.passing.data());
  return s.passed;
}

/// When fewer than k candidates lie within `guess` (distances_within), widens it up to twice in
/// proportion to the shortfall (on a surface the count grows about as the squared distance)
/// and keeps the candidates within the first widened bound holding k (keep_within), so that
/// few more than k reach select_kept; `fallback` (infinity, or a distance with at least k
/// candidates other than the point within it) when neither does or it is the tighter. Any
/// bound holding k candidates bounds the k-th distance from above: the neighbours do not
/// depend on which is taken.
void widen_guess(double guess, double fallback, std::size_t k, GridScratch& s) {
  for (int step = 0; step < 2; ++step) {
    const std::size_t held = std::max<std::size_t>(1, s.passed);
    guess *= std::min(4.0, static_cast<double>(k + 1) / static_cast<double>(held));
    if (!(guess < fallback)) break;
    if (keep_within(guess, s) >= k) return;
  }
  keep_within(fallback, s);
}

/// Four floats, four 32-bit integers: one SSE register each on x86-64 (a compiler vector
/// extension of g++ and clang; a comparison gives -1 where true, 0 where false).
using Floats = float __attribute__((vector_size(16)));
using Ints = std::int32_t __attribute__((vector_size(16)));

/// Most kept candidates select_kept ranks by counting; more go to ordered insertion. Sixteen
/// covers a scanned surface's kept candidates (about k + 1 at k = 8, bench_stray_points).
constexpr std::size_t rank_most = 16;

/// The k nearest of the candidates kept by keep_within in (distance, index) order into s.top
/// (k + 1 slots, the last scratch); returns how many were found (k unless fewer were kept).
/// Up to rank_most kept candidates are first ranked without a branch per comparison: each
/// distance rounded to float (rounding is monotone: a float below another comes from a double
/// below the other), candidate j's rank is the number of kept floats below its own, counted
/// for all j at once in loops of fixed length the compiler vectorises (four floats an
/// instruction). The ranks sum to kept (kept - 1) / 2 exactly when the floats are distinct (a
/// group of g equal floats at rank r adds g r instead of g r + g (g - 1) / 2); then the doubles
/// are in the same strict order, the ranks are the (distance, index) order itself, and
/// candidate j goes to slot min(rank, k). Otherwise (a tie in float, in double or not, or more
/// candidates) the kept ones go through ordered insertion, which compares indices on ties.
/// Either way the same slots.
std::size_t select_kept(std::size_t k, GridScratch& s) {
  const double* const d = s.distance.data();
  const std::uint32_t* const passing = s.passing.data();
  std::uint32_t* const top = s.top.data();
  const std::size_t kept = s.passed;
  if (kept <= rank_most) {
    float value[rank_most] = {};  // padding: the ranks of slots >= kept are not used
    for (std::size_t c = 0; c < kept; ++c) value[c] = static_cast<float>(d[passing[c]]);
    Floats near[rank_most / 4];
    std::memcpy(near, value, sizeof near);
    Ints below[rank_most / 4] = {};
    // Two vectors suffice for up to 8 candidates (a scanned surface at k = 8), four for more.
    const auto count_below = [&](auto vectors) {
      for (std::size_t i = 0; i < kept; ++i) {
        const Floats v = {value[i], value[i], value[i], value[i]};
        for (std::size_t b = 0; b < decltype(vectors)::value; ++b) below[b] -= v < near[b];  // true: -1
      }
    };
    if (kept <= 8)
      count_below(std::integral_constant<std::size_t, 2>{});
    else
      count_below(std::integral_constant<std::size_t, rank_most / 4>{});
    std::int32_t rank[rank_most];
    std::memcpy(rank, below, sizeof rank);
    std::size_t sum = 0;
    for (std::size_t j = 0; j < kept; ++j) {
      const auto r = static_cast<std::size_t>(rank[j]);
      sum += r;
      top[std::min(r, k)] = passing[j];
    }
    if (2 * sum == kept * (kept - (kept > 0 ? 1 : 0))) return std::min(kept, k);
  }
  std::size_t found = 0;
  const std::uint32_t* const id = s.id.data();
  const auto before = [&](std::uint32_t a, std::uint32_t b) {
    return d[a] < d[b] || (d[a] == d[b] && id[a] < id[b]);
  };
  for (std::size_t c = 0; c < kept; ++c) {
    const std::uint32_t j = passing[c];
    if (found == k && !before(j, top[k - 1])) continue;
    std::size_t at = found == k ? k - 1 : found++;
    for (; at > 0 && before(j, top[at - 1]); --at) top[at] = top[at - 1];
    top[at] = j;
  }
  return found;
}

}  // namespace

AllNearestSummary all_nearest(const Eigen::Matrix3Xd& points, std::size_t k, std::size_t threads,
                              const NearestReceiver& receive) {
  const std::size_t n = static_cast<std::size_t>(points.cols());
  if (k == 0) throw std::invalid_argument("all_nearest: k must be at least 1");
  if (n <= k)
    throw std::invalid_argument("all_nearest: " + std::to_string(n) + " points for " +
                                std::to_string(k) + " neighbours");
  if (static_cast<std::uint64_t>(n) > std::numeric_limits<std::uint32_t>::max())
    throw std::invalid_argument("all_nearest: more than 2^32 - 1 points");
  const Grid g(points, k, threads);
  AllNearestSummary summary;
  summary.cell = g.cell_;
  const std::size_t cap = candidate_cap(k);
  const std::size_t cells = g.cell_key_.size();

  // Chunks of whole cells, at least 4096 points each: fixed by the data alone.
  std::vector<std::size_t> chunk_cell{0};
  for (std::size_t c = 0; c < cells; ++c)
    if (g.cell_begin_[c + 1] - g.cell_begin_[chunk_cell.back()] >= 4096 || c + 1 == cells)
      chunk_cell.push_back(c + 1);
  const std::size_t chunks = chunk_cell.size() - 1;
  const std::size_t workers = std::max<std::size_t>(1, threads);
  std::vector<GridScratch> scratch(workers);
  for (GridScratch& s : scratch) {
    s.distance.resize(cap);
    s.x.resize(cap);
    s.y.resize(cap);
    s.z.resize(cap);
    s.id.resize(cap);
    s.passing.resize(cap + detail::compact_slack);
    s.top.resize(k + 1);
  }
  // The points the 3x3x3 block does not certify, per chunk: each with the k-th squared distance
  // found in that block (infinity when none was), an upper bound of its k-th distance in any
  // wider block (which holds the same k points at the same computed distances).
  struct Unsure {
    std::uint32_t position;
    double bound;
  };
  std::vector<std::vector<Unsure>> uncertain(chunks);

  // The 3x3x3 block of each occupied cell, gathered once for all its points. A point's
  // distances to all the block's candidates are computed in one loop; the k nearest are then
  // selected among those within a bound of the k-th distance, so that few reach the selection
  // (select_kept). The bound tried first is the previous point's k-th squared distance plus a
  // margin (neighbouring points have similar neighbourhoods); it is used only when at least k
  // candidates other than the point lie within it (keep_within), so it is a true upper bound
  // whatever it is. Otherwise the bound is the previous point of the cell
  // with its k nearest (k + 1 distinct points of the same block, at least k of them not the
  // query: the farthest bounds the k-th distance), or none for a cell's first point. The
  // bounds only prune: the neighbours are the same whichever is used.
  // The first key of each of the block's 9 rows of 3 cells, relative to the centre cell's key:
  // it grows with the centre's key, so as the cells are visited in key order each row's first
  // occupied cell is found by moving a cursor forward, not by a search.
  std::int64_t row_offset[9];
  for (std::int64_t dz = -1, o = 0; dz <= 1; ++dz)
    for (std::int64_t dy = -1; dy <= 1; ++dy, ++o)
      row_offset[o] = (dz * g.dims_[1] + dy) * g.dims_[0] - 1;
  detail::parallel_for(chunks, threads, [&](std::size_t chunk, std::size_t w) {
    GridScratch& s = scratch[w];
    start_output(s, g.cell_begin_[chunk_cell[chunk + 1]] - g.cell_begin_[chunk_cell[chunk]], k);
    std::vector<Unsure>& unsure = uncertain[chunk];
    // First guess of the k-th squared distance: the cell edge was chosen to hold about the
    // k nearest (Grid::Grid).
    double guess = g.cell_ * g.cell_;
    std::size_t cursor[9];
    for (int o = 0; o < 9; ++o)
      cursor[o] = g.cell_from(static_cast<std::uint64_t>(
          static_cast<std::int64_t>(g.cell_key_[chunk_cell[chunk]]) + row_offset[o]));
    for (std::size_t c = chunk_cell[chunk]; c < chunk_cell[chunk + 1]; ++c) {
      const std::uint32_t first = g.cell_begin_[c], last = g.cell_begin_[c + 1];
      const double q0[3] = {g.axes_[0][first], g.axes_[1][first], g.axes_[2][first]};
      const std::int64_t at[3] = {g.coord(q0[0], 0), g.coord(q0[1], 1), g.coord(q0[2], 2)};
      for (int o = 0; o < 9; ++o) {
        const std::uint64_t low =
            static_cast<std::uint64_t>(static_cast<std::int64_t>(g.cell_key_[c]) + row_offset[o]);
        while (cursor[o] < cells && g.cell_key_[cursor[o]] < low) ++cursor[o];
      }
      if (!gather_block(g, at, 1, first, cap, s, cursor) || s.m < k + 1) {
        for (std::uint32_t p = first; p < last; ++p)
          unsure.push_back({p, std::numeric_limits<double>::infinity()});
        continue;
      }
      const std::size_t first_self = s.self;
      double low[3], high[3];
      for (int a = 0; a < 3; ++a) g.block_faces(at[a], 1, a, low[a], high[a]);
      std::size_t previous = s.m;  // slot of the previous point; none yet
      for (std::uint32_t p = first; p < last; ++p) {
        s.self = first_self + (p - first);
        const double q[3] = {g.axes_[0][p], g.axes_[1][p], g.axes_[2][p]};
        if (distances_within(q, guess, s) < k) {
          double bound = std::numeric_limits<double>::infinity();
          if (previous < s.m) {
            bound = s.distance[previous];
            for (std::size_t j = 0; j < k; ++j) bound = std::max(bound, s.distance[s.top[j]]);
          }
          widen_guess(guess, bound, k, s);
        }
        select_kept(k, s);
        previous = s.self;
        const double kth = s.distance[s.top[k - 1]];
        guess = kth + guess_margin * kth;
        if (kth < Grid::outside_of(q, low, high))
          keep_found(s, g.order_[p], k);
        else
          unsure.push_back({p, kth});
      }
    }
    if (s.kept > 0) receive(w, s.kept, s.points.data(), s.rows.data());
  });

  // The points not certified: the 5x5x5 and 7x7x7 blocks, one point at a time.
  std::vector<Unsure> unsure;
  for (const auto& u : uncertain) unsure.insert(unsure.end(), u.begin(), u.end());
  summary.certified = n - unsure.size();
  constexpr std::size_t per_chunk = 256;
  const std::size_t wide_chunks = (unsure.size() + per_chunk - 1) / per_chunk;
  std::vector<std::vector<std::uint32_t>> left(wide_chunks);  // input indices, per chunk
  detail::parallel_for(wide_chunks, threads, [&](std::size_t chunk, std::size_t w) {
    GridScratch& s = scratch[w];
    const std::size_t end = std::min(unsure.size(), (chunk + 1) * per_chunk);
    start_output(s, end - chunk * per_chunk, k);
    for (std::size_t u = chunk * per_chunk; u < end; ++u) {
      const std::uint32_t p = unsure[u].position;
      const double q[3] = {g.axes_[0][p], g.axes_[1][p], g.axes_[2][p]};
      const std::int64_t at[3] = {g.coord(q[0], 0), g.coord(q[1], 1), g.coord(q[2], 2)};
      // Only the candidates within the narrower block's k-th distance can be among the k
      // nearest (at least k of them pass: that block's k nearest), so few reach the selection.
      double bound = unsure[u].bound;
      bool done = false;
      for (std::int64_t r = 2; r <= widest && !done; ++r) {
        if (!gather_block(g, at, r, p, cap, s)) break;
        distances_within(q, bound, s);
        if (select_kept(k, s) < k) continue;
        bound = s.distance[s.top[k - 1]];
        done = bound < g.outside_bound(q, at, r);
      }
      if (done)
        keep_found(s, g.order_[p], k);
      else
        left[chunk].push_back(g.order_[p]);
    }
    if (s.kept > 0) receive(w, s.kept, s.points.data(), s.rows.data());
  });

  // The rest: the KD-tree over all points, built only now.
  std::vector<std::uint32_t> rest;
  for (const auto& l : left) rest.insert(rest.end(), l.begin(), l.end());
  summary.tree = rest.size();
  summary.widened = unsure.size() - rest.size();
  if (rest.empty()) return summary;
  const NeighbourIndex index(points, threads);
  const std::size_t tree_chunks = (rest.size() + per_chunk - 1) / per_chunk;
  std::vector<std::vector<std::uint32_t>> rows(workers);
  detail::parallel_for(tree_chunks, threads, [&](std::size_t chunk, std::size_t w) {
    NeighbourIndex::Query query(k);
    rows[w].clear();
    const std::size_t first = chunk * per_chunk, end = std::min(rest.size(), first + per_chunk);
    for (std::size_t u = first; u < end; ++u) {
      const std::vector<std::uint32_t>& found = query.of_point(index, rest[u]);
      rows[w].insert(rows[w].end(), found.begin(), found.end());
    }
    receive(w, end - first, rest.data() + first, rows[w].data());
  });
  return summary;
}

}  // namespace cylzone
