// Results independent of how the part sat on the machine: every reported figure and verdict of a
// part check is unchanged by a rigid motion of all its points (and surface vectors, and the
// plan's directions given in measurement coordinates).
//
// References outside the code under test:
//  * the purpose of the datum reference frame: the part's requirements are stated relative to
//    its datum features, not to the measuring machine (ASME Y14.5-2018 section 4, ISO 5459:2011
//    clause 4; from memory for the clauses), so every figure measured in it is invariant under a
//    rigid motion of the part (common practice: "results do not depend on fixturing");
//  * uniform random rotations from uniform random unit quaternions (K. Shoemake, "Uniform random
//    rotations", Graphics Gems III, 1992, pp. 124-132);
//  * IEEE 754 double precision (unit roundoff 2^-53 = 1.1e-16) for the tolerance derived below.
//
// How: each plan family is checked once as built and after several seeded random rigid motions
// (rotation about any axis, translations of metres), through the whole check (evaluate_part, the
// datum-association sensitivity study, the decide step) and the JSON renderer; the two JSON
// documents are walked leaf by leaf (ReportComparer), so a figure added to the report later is
// covered without touching this file.
//
// Tolerance: 1e-7 mm for lengths and 1e-9 rad for angles. The limit is honest
// for coordinates of metres: a moved coordinate of magnitude L = 5000 mm carries a rounding of a
// few ulps, 3 * 1.1e-16 * 5000 = 1.7e-12 mm; the fits are Lipschitz in the points with constants of
// order one for lengths (least squares averages, a Chebyshev fit moves with its contact points)
// and 1 / (bore length >= 10 mm) for directions, and the frame transform adds a few more ulps of
// L. So rounding alone explains at most ~1e-10 mm, three orders below the limit; the rest of the
// budget is the iterative solvers' own stopping tolerances, which must be tighter than that. A
// difference above 1e-7 mm is therefore a real dependence on placement, never noise (the worst
// difference of each family is printed so the margin stays visible).
//
// Fields that legitimately change with the placement are not skipped but transformed back: the
// frame's origin and axes, datum A's point and normal and datum B's and C's axes are in
// measurement coordinates (docs/report-schema.md), so the moved report must hold R p + t and R d
// of the original's points p and directions d. Unit directions are compared as unit vectors to
// 1e-9 (an angle in radians). Numbers written inside texts (warnings, notes, messages) are
// compared to one unit of their last printed decimal: two values 1e-7 apart may round to
// neighbouring printed digits. The solver's path in a fit's message (iteration and
// linear-programme counts, the winning start) may differ: starts that reach the same optimum
// differ by rounding only (without_solver_path). Integers (counts, point numbers, file lines)
// and verdicts must be identical.
//
// Known defects being fixed elsewhere are listed by path, each with its cause, and checked in
// their own [!mayfail] cases, so that every other leaf of the same reports stays enforced.

#include <catch2/catch.hpp>

#include <Eigen/Geometry>
#include <nlohmann/json.hpp>

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <cstdlib>
#include <fstream>
#include <random>
#include <regex>
#include <sstream>
#include <string>
#include <vector>

#include "cylzone/check/evaluate_part.hpp"
#include "cylzone/check/part_check.hpp"
#include "cylzone/check/part_inputs.hpp"
#include "cylzone/plan/plan.hpp"
#include "cylzone/report/report.hpp"
#include "cylzone/report/report_model.hpp"

using namespace cylzone;
using nlohmann::json;

namespace {

constexpr double pi = 3.14159265358979323846;
constexpr double length_tolerance = 1e-7;  // mm
constexpr double angle_tolerance = 1e-9;   // rad

// --------------------------------------------------------------------------- rigid motions

struct Motion {
  Eigen::Matrix3d rotation = Eigen::Matrix3d::Identity();
  Eigen::Vector3d translation = Eigen::Vector3d::Zero();
  Eigen::Vector3d point(const Eigen::Vector3d& p) const { return rotation * p + translation; }
};

/// A uniformly distributed rotation (Shoemake 1992: a unit quaternion from three uniform numbers)
/// and a translation with each component uniform in [-reach, reach] mm.
Motion random_motion(std::uint64_t seed, double reach) {
  std::mt19937_64 engine(seed);
  std::uniform_real_distribution<double> unit(0.0, 1.0);
  const double u1 = unit(engine), u2 = unit(engine), u3 = unit(engine);
  const Eigen::Quaterniond q(std::sqrt(u1) * std::cos(2.0 * pi * u3),
                             std::sqrt(1.0 - u1) * std::sin(2.0 * pi * u2),
                             std::sqrt(1.0 - u1) * std::cos(2.0 * pi * u2),
                             std::sqrt(u1) * std::sin(2.0 * pi * u3));
  Motion m;
  m.rotation = q.normalized().toRotationMatrix();
  std::uniform_real_distribution<double> shift(-reach, reach);
  for (int k = 0; k < 3; ++k) m.translation(k) = shift(engine);
  return m;
}

/// The plan and its clouds as they would be measured with the part placed by `m`: points move,
/// surface vectors and the plan's directions in measurement coordinates (A's and a plane C's
/// material side) turn with them. Everything stated in the frame stays.
void move_part(const Motion& m, PartPlan& plan, PartInputs& inputs) {
  const auto move = [&](PointCloud& c) {
    c.points = (m.rotation * c.points).colwise() + m.translation;
    if (c.has_vectors()) c.vectors = m.rotation * c.vectors;
  };
  for (PointCloud& c : inputs.datums) move(c);
  for (PointCloud& c : inputs.bores) move(c);
  for (PlanDatum& d : plan.datums)
    if (d.material_side) d.material_side = m.rotation * *d.material_side;
}

// --------------------------------------------------------------------------- the check

/// check_part on inputs held in memory (the sensitivity study and the decide step included),
/// rendered to JSON.
json checked_report(const PartPlan& plan, const PartInputs& inputs) {
  CheckOptions options;
  options.evaluation.threads = 2;
  const PartCheckResult result = check_part(plan, inputs, options);
  return json::parse(format_json(make_report_model(result)));
}

// --------------------------------------------------------------------------- the comparer

/// Report fields in measurement coordinates (docs/report-schema.md), compared after the motion
/// is applied to the original's value. Paths as compare_reports writes them.
const std::regex machine_points(
    R"(frame\.origin|datums\.A\.point|datums\.[BC]\.axis\.point|datums\.[BC]\.axis_on_a|datums\.C\.point)");
const std::regex machine_directions(
    R"(frame\.[xyz]_axis|datums\.A\.normal|datums\.[BC]\.axis\.direction|datums\.C\.(centre_plane_normal|centre_direction|normal))");

/// Keys whose numbers are angles in radians, or unit-vector components.
bool is_angle_key(const std::string& key) {
  return key == "angle_rad" || key == "rotation_rad" || key == "direction" || key == "normal" ||
         key == "x_axis" || key == "y_axis" || key == "z_axis" || key == "centre_plane_normal" ||
         key == "centre_direction";
}

struct Difference {
  std::string path;
  std::string what;
};

struct Comparison {
  std::vector<Difference> differences;
  double worst_length = 0.0;  ///< largest length difference seen, mm
  double worst_angle = 0.0;   ///< largest angle or direction difference seen, rad
  std::size_t leaves = 0;
};

/// Splits a text into its words and the numbers written in it ("0.0123 mm", "-4e-05"); the
/// decimals of each number are kept to know its printed resolution.
struct TextNumbers {
  std::string words;  ///< the text with every number replaced by '#'
  std::vector<double> numbers;
  std::vector<double> resolution;  ///< one unit of each number's last printed digit
};

TextNumbers split_numbers(const std::string& text) {
  static const std::regex number(R"([-+]?\d+(\.\d+)?([eE][-+]?\d+)?)");
  TextNumbers out;
  std::size_t last = 0;
  for (auto it = std::sregex_iterator(text.begin(), text.end(), number);
       it != std::sregex_iterator(); ++it) {
    out.words += text.substr(last, it->position() - last) + "#";
    last = it->position() + it->length();
    out.numbers.push_back(std::stod(it->str()));
    const std::size_t decimals = (*it)[1].matched ? (*it)[1].length() - 1 : 0;
    const double exponent = (*it)[2].matched ? std::stod((*it)[2].str().substr(1)) : 0.0;
    out.resolution.push_back(std::pow(10.0, exponent - static_cast<double>(decimals)));
  }
  out.words += text.substr(last);
  return out;
}

Eigen::Vector3d vector_of(const json& j) {
  return Eigen::Vector3d(j.at(0).get<double>(), j.at(1).get<double>(), j.at(2).get<double>());
}

/// An array element's name in a path: its id (bores, characteristics), its association
/// (sensitivity rows), else its index.
std::string element_name(const json& element, std::size_t index) {
  for (const char* key : {"id", "association"})
    if (element.is_object() && element.contains(key) && element.at(key).is_string())
      return element.at(key).get<std::string>();
  return std::to_string(index);
}

/// The solver's path, not the part: iteration and linear-programme counts, the winning start and
/// the rows of the largest programme in a fit's message. Starts that reach the same optimum
/// differ by rounding only, and so may the path; the fit's figures are compared on their own.
std::string without_solver_path(const std::string& message) {
  static const std::regex path(
      R"(\d+ (iterations?|linear programmes?)|start \d+ of \d+|at most \d+ rows)");
  return std::regex_replace(message, path, "<solver path>");
}

class ReportComparer {
 public:
  /// `known`: paths (regular expressions) of differences that are known defects being fixed
  /// elsewhere; with `only_known` the comparer reports differences on those paths only, else on
  /// every other path.
  ReportComparer(const Motion& motion, std::vector<std::regex> known, bool only_known)
      : motion_(motion), known_(std::move(known)), only_known_(only_known) {}

  Comparison compare(const json& original, const json& moved) {
    result_ = {};
    walk(original, moved, "", "");
    return result_;
  }

 private:
  bool is_known(const std::string& path) const {
    for (const std::regex& r : known_)
      if (std::regex_match(path, r)) return true;
    return false;
  }
  void differ(const std::string& path, const std::string& what) {
    if (is_known(path) != only_known_) return;
    result_.differences.push_back({path, what});
  }
  void length(const std::string& path, double a, double b, double tolerance) {
    ++result_.leaves;
    const double d = std::abs(a - b);
    if (is_known(path) == only_known_) result_.worst_length = std::max(result_.worst_length, d);
    if (!(d <= tolerance)) {
      std::ostringstream s;
      s.precision(17);
      s << a << " vs " << b << " (difference " << d << ", allowed " << tolerance << ")";
      differ(path, s.str());
    }
  }
  void angle(const std::string& path, double a, double b, double tolerance) {
    ++result_.leaves;
    const double d = std::abs(a - b);
    if (is_known(path) == only_known_) result_.worst_angle = std::max(result_.worst_angle, d);
    if (!(d <= tolerance)) {
      std::ostringstream s;
      s.precision(17);
      s << a << " vs " << b << " (difference " << d << ", allowed " << tolerance << ")";
      differ(path, s.str());
    }
  }

  void walk(const json& a, const json& b, const std::string& path, const std::string& key) {
    if (std::regex_match(path, machine_points) || std::regex_match(path, machine_directions)) {
      compare_machine(a, b, path);
      return;
    }
    if (a.type() != b.type() && !(a.is_number() && b.is_number())) {
      ++result_.leaves;
      differ(path, "type " + std::string(a.type_name()) + " vs " + b.type_name() + ": " +
                       a.dump() + " vs " + b.dump());
      return;
    }
    if (a.is_object()) {
      if (a.contains("angle_rad") && a.at("angle_rad").is_number())
        tilt_ = a.at("angle_rad").get<double>();
      for (auto it = a.begin(); it != a.end(); ++it) {
        const std::string child = path.empty() ? it.key() : path + "." + it.key();
        if (!b.contains(it.key())) {
          differ(child, "missing in the moved report");
          continue;
        }
        walk(*it, b.at(it.key()), child, it.key());
      }
      for (auto it = b.begin(); it != b.end(); ++it)
        if (!a.contains(it.key())) differ(path + "." + it.key(), "only in the moved report");
    } else if (a.is_array()) {
      if (a.size() != b.size()) {
        ++result_.leaves;
        differ(path, "array of " + std::to_string(a.size()) + " vs " + std::to_string(b.size()));
        return;
      }
      for (std::size_t k = 0; k < a.size(); ++k)
        walk(a[k], b[k], path + "[" + element_name(a[k], k) + "]", key);
    } else if (a.is_number_integer() && b.is_number_integer()) {
      ++result_.leaves;
      if (a != b) differ(path, a.dump() + " vs " + b.dump());
    } else if (a.is_number()) {
      if (key == "azimuth_deg") {
        compare_azimuth(a.get<double>(), b.get<double>(), path);
      } else if (is_angle_key(key)) {
        angle(path, a.get<double>(), b.get<double>(), angle_tolerance);
      } else {
        length(path, a.get<double>(), b.get<double>(), length_tolerance);
      }
    } else if (a.is_string() && key == "message") {
      compare_text(without_solver_path(a.get<std::string>()),
                   without_solver_path(b.get<std::string>()), path);
    } else if (a.is_string()) {
      compare_text(a.get<std::string>(), b.get<std::string>(), path);
    } else {
      ++result_.leaves;
      if (a != b) differ(path, a.dump() + " vs " + b.dump());
    }
  }

  /// A point or direction in measurement coordinates: the moved report must hold the motion
  /// applied to the original's.
  void compare_machine(const json& a, const json& b, const std::string& path) {
    if (a.is_null() || b.is_null()) {
      ++result_.leaves;
      if (a != b) differ(path, a.dump() + " vs " + b.dump());
      return;
    }
    const bool is_point = std::regex_match(path, machine_points);
    if (a.size() == 2 && b.size() == 2) {  // not expected: points and directions are 3-vectors
      differ(path, "a 2-vector in measurement coordinates");
      return;
    }
    const Eigen::Vector3d expected =
        is_point ? motion_.point(vector_of(a)) : Eigen::Vector3d(motion_.rotation * vector_of(a));
    const Eigen::Vector3d found = vector_of(b);
    for (int k = 0; k < 3; ++k) {
      const std::string child = path + "[" + std::to_string(k) + "] (moved back)";
      if (is_point)
        length(child, expected(k), found(k), length_tolerance);
      else
        angle(child, expected(k), found(k), angle_tolerance);
    }
  }

  /// The azimuth of a tilt is an angle of the tilt's slope vector: a lateral difference e of the
  /// axis' far end over a depth h turns it by e / (h tan(tilt)). It is held to 1e-9 rad where the
  /// tilt makes that meaningful, and otherwise to the lateral 1e-7 mm over 10 mm it stands for
  /// (with the tilt read from the sibling field `angle_rad` of the original).
  void compare_azimuth(double a, double b, const std::string& path) {
    double d = std::abs(a - b);
    d = std::min(d, 360.0 - d) * pi / 180.0;
    const double tolerance =
        std::max(angle_tolerance, length_tolerance / (10.0 * std::tan(std::max(tilt_, 1e-300))));
    angle(path, 0.0, d, tolerance);
  }

  void compare_text(const std::string& a, const std::string& b, const std::string& path) {
    ++result_.leaves;
    if (a == b) return;
    const TextNumbers x = split_numbers(a), y = split_numbers(b);
    if (x.words != y.words || x.numbers.size() != y.numbers.size()) {
      differ(path, "\"" + a + "\" vs \"" + b + "\"");
      return;
    }
    for (std::size_t k = 0; k < x.numbers.size(); ++k) {
      const double allowed = std::max(length_tolerance, std::max(x.resolution[k], y.resolution[k]));
      if (!(std::abs(x.numbers[k] - y.numbers[k]) <= allowed * (1.0 + 1e-9))) {
        differ(path, "\"" + a + "\" vs \"" + b + "\"");
        return;
      }
    }
  }

  Motion motion_;
  std::vector<std::regex> known_;
  bool only_known_;
  Comparison result_;
  double tilt_ = 0.0;  ///< the original's tilt next to the azimuth being compared
};

// --------------------------------------------------------------------------- families

struct Family {
  std::string name;
  PartPlan plan;
  PartInputs inputs;
  /// Paths (regular expressions) of differences caused by defects being fixed elsewhere; each
  /// entry says which.
  std::vector<std::regex> known;
};

/// Runs the family as given and after `motions` random rigid motions, compares every report
/// with the original's. With `only_known` it checks the known-defect paths only.
void check_family(const Family& family, bool only_known, int motions = 3,
                  double reach = 3000.0) {
  const json original = checked_report(family.plan, family.inputs);
  REQUIRE(original.contains("bores"));
  double worst_length = 0.0, worst_angle = 0.0;
  std::size_t leaves = 0;
  for (int k = 0; k < motions; ++k) {
    const std::uint64_t seed = 0x5eed0000u + 7919u * static_cast<std::uint64_t>(k);
    const Motion motion = random_motion(seed, reach);
    PartPlan plan = family.plan;
    PartInputs inputs = family.inputs;
    move_part(motion, plan, inputs);
    const json moved = checked_report(plan, inputs);
    if (const char* dump = std::getenv("CYLZONE_INVARIANCE_DUMP")) {
      // For a look at a failure: both reports, as files named after the family and the seed.
      const std::string stem = std::string(dump) + "/" +
                               std::regex_replace(family.name, std::regex("[^A-Za-z0-9]+"), "_") +
                               "-" + std::to_string(k);
      std::ofstream(stem + "-original.json") << original.dump(1);
      std::ofstream(stem + "-moved.json") << moved.dump(1);
    }
    ReportComparer comparer(motion, family.known, only_known);
    const Comparison c = comparer.compare(original, moved);
    worst_length = std::max(worst_length, c.worst_length);
    worst_angle = std::max(worst_angle, c.worst_angle);
    leaves += c.leaves;
    INFO(family.name << ", motion seed " << seed << ", translation |t| = "
                     << motion.translation.norm() << " mm");
    std::ostringstream list;
    for (std::size_t d = 0; d < c.differences.size() && d < 40; ++d)
      list << "  " << c.differences[d].path << ": " << c.differences[d].what << "\n";
    if (c.differences.size() > 40) list << "  ... " << c.differences.size() - 40 << " more\n";
    INFO("differences:\n" << list.str());
    CHECK(c.differences.empty());
    if (!only_known) CHECK(c.leaves > 100);  // the walk did reach the report's figures
  }
  if (!only_known)
    WARN(family.name << ": " << leaves << " leaves compared; worst length difference "
                     << worst_length << " mm, worst angle difference " << worst_angle << " rad");
}

// --------------------------------------------------------------------------- generated parts
//
// Invented test parts, built in memory in part coordinates (A the plane z = 0 with the material
// below, B's axis through the origin) and then placed on the machine by a fixed rigid motion, so
// that the untransformed run is itself neither axis-aligned nor at the origin. Every feature
// carries form and a seeded noise of +-0.3 um, so that no fit sits on a tie.

struct Shape {
  std::mt19937_64 engine{20261202};
  double noise() { return std::uniform_real_distribution<double>(-3e-4, 3e-4)(engine); }
};

void append(PointCloud& c, const Eigen::Vector3d& p, const Eigen::Vector3d& n) {
  const Eigen::Index k = c.points.cols();
  c.points.conservativeResize(3, k + 1);
  c.vectors.conservativeResize(3, k + 1);
  c.points.col(k) = p;
  c.vectors.col(k) = n.normalized();
}

struct Hole {
  Eigen::Vector2d centre;
  double radius;
};

/// Face A: a grid clear of the holes and the tab, with 1.5 um of waviness.
PointCloud face_a(Shape& shape, const std::vector<Hole>& holes) {
  PointCloud c;
  for (double x = -40.0; x <= 150.0; x += 10.0)
    for (double y = -60.0; y <= 80.0; y += 10.0) {
      bool clear = true;
      for (const Hole& h : holes)
        clear = clear && (Eigen::Vector2d(x, y) - h.centre).norm() > h.radius + 2.5;
      if (!clear) continue;
      const double z = 1.5e-3 * std::sin(x / 23.0) * std::cos(y / 31.0) + shape.noise();
      append(c, Eigen::Vector3d(x, y, z), Eigen::Vector3d::UnitZ());
    }
  return c;
}

/// A bore: axis through (x0, y0, 0) leaning `lean` (x and y per mm of depth), three lobes of
/// `lobes` mm, bent by `bend` mm at mid-depth, rings from 1 mm to `depth` - 1 mm deep. Vectors point out of the material (into
/// the hole).
PointCloud bore(Shape& shape, const Eigen::Vector2d& at, const Eigen::Vector2d& lean,
                double diameter, double depth, int levels, double lobes, double bend = 0.0) {
  PointCloud c;
  const int per_level = 24;
  for (int l = 0; l < levels; ++l) {
    const double z = -1.0 - (depth - 2.0) * l / (levels - 1);
    // A bend in the xz plane: the axis sags by `bend` at mid-depth (a parabola in depth).
    const double t = -z / depth;
    const Eigen::Vector2d centre = at - lean * z + Eigen::Vector2d(4.0 * bend * t * (1.0 - t), 0.0);
    const double start = 0.37 * l, phase = 0.9 * l;
    for (int k = 0; k < per_level; ++k) {
      const double t = start + 2.0 * pi * k / per_level;
      const double r = 0.5 * diameter + lobes * std::cos(3.0 * t + phase) + shape.noise();
      const Eigen::Vector3d radial(std::cos(t), std::sin(t), 0.0);
      append(c, Eigen::Vector3d(centre.x(), centre.y(), z) + r * radial, -radial);
    }
  }
  return c;
}

/// A slot (faces facing each other) or a tab (faces facing away), its centre plane through the
/// origin along +x, its faces at y = +-width/2 over x in [from, from + 12] mm; a slot is cut
/// into A (z from -2 to -8), a tab stands on it (z from 2 to 8).
PointCloud width_feature(Shape& shape, bool slot, double width, double from) {
  PointCloud c;
  for (int side : {-1, 1})
    for (int i = 0; i < 5; ++i)
      for (int j = 0; j < 3; ++j) {
        const double x = from + 3.0 * i, z = slot ? -2.0 - 3.0 * j : 2.0 + 3.0 * j;
        const double y = side * (0.5 * width + 4e-4 * std::sin(x + 2.0 * j)) + shape.noise();
        const Eigen::Vector3d outward(0.0, slot ? -side : side, 0.0);
        append(c, Eigen::Vector3d(x, y, z), outward);
      }
  return c;
}

/// How a family's datums are referenced and what datum C is.
enum class DatumC { none, bore, slot, tab, plane };

struct FamilySpec {
  std::string name;
  DatumC c = DatumC::none;
  bool with_b = true;
  std::string reference;      ///< the position tolerances' datum section, e.g. "A|B(M)|C"
  std::string b_extra;        ///< extra keys of datum B, e.g. "mmb = 19.990"
  /// P2 bent by 4 um in one plane and P3 toleranced on its derived median line; stray points
  /// on face A and in P2 (a chip, a spike) for the screen.
  bool bent = false;
  /// The plan gives no material side for A: it is inferred from the bores' points.
  bool infer_side = false;
  /// Datum B a pin (a boss standing on A) instead of a bore.
  bool b_pin = false;
};

std::string plan_text(const FamilySpec& f) {
  std::ostringstream t;
  t << "format = \"cylzone-plan-1\"\nname = \"invariance family " << f.name
    << " (invented test part)\"\nunits = \"mm\"\n\n"
    << "[datum.A]\nfeature = \"plane\"\npoints = \"a.csv\"\n"
    << (f.infer_side ? "" : "material_side = [0.0, 0.0, -1.0]\n") << "\n";
  if (f.with_b)
    t << "[datum.B]\nfeature = \"" << (f.b_pin ? "pin" : "bore") << "\"\npoints = \"b.csv\"\n"
      << (f.b_pin ? "size = { lower = 19.980, upper = 20.000 }\n"
                  : "size = { lower = 20.000, upper = 20.021 }\n")
      << f.b_extra << "\n\n";
  switch (f.c) {
    case DatumC::none: break;
    case DatumC::bore:
      t << "[datum.C]\nfeature = \"bore\"\npoints = \"c.csv\"\nbasic = [120.0, 0.0]\n"
        << "size = { lower = 8.000, upper = 8.015 }\n\n";
      break;
    case DatumC::slot:
      t << "[datum.C]\nfeature = \"slot\"\npoints = \"c.csv\"\nbasic = [90.0, 0.0]\n"
        << "size = { lower = 6.000, upper = 6.030 }\n\n";
      break;
    case DatumC::plane:
      t << "[datum.C]\nfeature = \"plane\"\npoints = \"c.csv\"\noutward_normal = [1.0, 0.0]\n\n";
      break;
    case DatumC::tab:
      t << "[datum.C]\nfeature = \"tab\"\npoints = \"c.csv\"\nbasic = [90.0, 0.0]\n"
        << "size = { lower = 5.970, upper = 6.000 }\n\n";
      break;
  }
  const std::string& r = f.reference;
  // P1 RFS with a projected zone, P2 MMC with cylindricity, P3 LMC; each with perpendicularity.
  t << "[[bore]]\nid = \"P1\"\npoints = \"p1.csv\"\nbasic = [30.0, 40.0]\n"
    << "depth = { top = 0.0, bottom = -40.0 }\nsize = { lower = 10.000, upper = 10.015 }\n"
    << "position = { tolerance = 0.050, modifier = \"RFS\", datums = \"" << r
    << "\", projected = 15.0 }\nperpendicularity = { tolerance = 0.030 }\n\n"
    << "[[bore]]\nid = \"P2\"\npoints = \"p2.csv\"\nbasic = [70.0, 50.0]\n"
    << "depth = { top = 0.0, bottom = -40.0 }\nsize = { lower = 10.000, upper = 10.015 }\n"
    << "position = { tolerance = 0.040, modifier = \"MMC\", datums = \"" << r << "\" }\n"
    << "perpendicularity = { tolerance = 0.020, modifier = \"MMC\" }\ncylindricity = 0.008\n\n"
    << "[[bore]]\nid = \"P3\"\npoints = \"p3.csv\"\nbasic = [100.0, -30.0]\n"
    << (f.bent ? "axis = \"median-line\"\n" : "")
    << "depth = { top = 0.0, bottom = -36.0 }\nsize = { lower = 12.000, upper = 12.018 }\n"
    << "position = { tolerance = 0.030, modifier = \"LMC\", datums = \"" << r << "\" }\n"
    << "perpendicularity = { tolerance = 0.015 }\n";
  return t.str();
}

/// The family's plan and clouds, placed on the machine; without vectors when `vectors` is false.
Family generated_family(const FamilySpec& spec, bool vectors) {
  Family f;
  f.name = spec.name + (vectors ? " with vectors" : " without vectors");
  f.plan = parse_plan(plan_text(spec), "invariance-" + spec.name + ".toml", false);
  Shape shape;
  std::vector<Hole> holes = {{{0.0, 0.0}, 10.0}, {{30.0, 40.0}, 5.0}, {{70.0, 50.0}, 5.0},
                             {{100.0, -30.0}, 6.0}};
  if (spec.c == DatumC::bore) holes.push_back({{120.0, 0.0}, 4.0});
  if (spec.c == DatumC::slot || spec.c == DatumC::tab)
    for (double x = 84.0; x <= 96.0; x += 3.0) holes.push_back({{x, 0.0}, 3.0});
  f.inputs.datums.push_back(face_a(shape, holes));
  if (spec.with_b && !spec.b_pin)
    f.inputs.datums.push_back(
        bore(shape, {0.0, 0.0}, {0.0002, -0.0001}, 20.012, 25.0, 5, 0.0015));
  if (spec.with_b && spec.b_pin) {
    // A boss 19.992 standing 25 mm on A: a bore's rings mirrored above A, vectors outward.
    PointCloud pin = bore(shape, {0.0, 0.0}, {0.0002, -0.0001}, 19.992, 25.0, 5, 0.0015);
    pin.points.row(2) *= -1.0;
    pin.vectors *= -1.0;
    f.inputs.datums.push_back(pin);
  }
  if (spec.c == DatumC::bore)
    f.inputs.datums.push_back(
        bore(shape, {120.004, 0.003}, {-0.0003, 0.0002}, 8.006, 16.0, 4, 0.001));
  if (spec.c == DatumC::slot)
    f.inputs.datums.push_back(width_feature(shape, true, 6.012, 84.0));
  if (spec.c == DatumC::tab)
    f.inputs.datums.push_back(width_feature(shape, false, 5.985, 84.0));
  if (spec.c == DatumC::plane) {
    // The block's side face x = 150, leaning 0.2 mrad, with 1 um of waviness; outward +x.
    PointCloud side;
    for (double y = -50.0; y <= 70.0; y += 10.0)
      for (double z = -4.0; z >= -28.0; z -= 6.0)
        append(side,
               Eigen::Vector3d(150.0 + 2e-4 * y + 1e-3 * std::sin(y / 17.0 + z) + shape.noise(),
                               y, z),
               Eigen::Vector3d::UnitX());
    f.inputs.datums.push_back(side);
  }
  // P1 on position at the mouth, leaning 0.4 mrad; P2 off by 12 um and leaning the other way;
  // P3 off by 20 um and leaning 0.6 mrad, so that some tolerances are exceeded.
  f.inputs.bores.push_back(bore(shape, {30.003, 39.996}, {0.0004, 0.0001}, 10.006, 40.0, 7, 0.002));
  f.inputs.bores.push_back(bore(shape, {70.012, 50.002}, {-0.0002, 0.0003}, 10.009, 40.0, 7, 0.003,
                                spec.bent ? 0.004 : 0.0));
  f.inputs.bores.push_back(bore(shape, {99.984, -30.012}, {0.0006, -0.0002}, 12.010, 36.0, 6, 0.002));
  if (spec.bent) {
    // Stray points: a chip 25 um proud of face A and two 30 um spikes into P2 (prepare stage).
    PointCloud& a = f.inputs.datums.front();
    a.points(2, 7) += 0.025;
    PointCloud& p2 = f.inputs.bores[1];
    for (Eigen::Index k : {30, 100}) {
      const Eigen::Vector3d radial(p2.points(0, k) - 70.0, p2.points(1, k) - 50.0, 0.0);
      p2.points.col(k) -= 0.030 * radial.normalized();
    }
  }
  if (!vectors) {
    for (PointCloud& c : f.inputs.datums) c.vectors.resize(3, 0);
    for (PointCloud& c : f.inputs.bores) c.vectors.resize(3, 0);
  }
  // The part as it sat for the untransformed run: turned and half a metre away.
  const Motion placed = random_motion(17, 500.0);
  move_part(placed, f.plan, f.inputs);
  return f;
}

}  // namespace

// --------------------------------------------------------------------------- the demo

namespace {

void check_demo(bool only_known) {
  Family demo;
  demo.name = "demo";
  demo.plan = read_plan(std::filesystem::path(CYLZONE_SOURCE_DIR) /
                        "point-clouds/valve-manifold/plan.toml");
  demo.inputs = load_part_inputs(demo.plan);  // read once, then moved in memory
  check_family(demo, only_known);
}

}  // namespace

TEST_CASE("invariance: the demo part under random rigid motions", "[invariance][demo]") {
  check_demo(false);
}

// --------------------------------------------------------------------------- generated families

namespace {

/// The figures that follow the datum mobility's motion (src/evaluate/datum_mobility.cpp): with
/// no datum B the best frame motion has three freedoms, and the golden-section searches, which
/// compare function values, placed it only to about the square root of rounding (the other
/// bores' figures moved by ~2e-7 mm). The Newton polish of the minimax conditions fixed that;
/// the case below checks exactly these figures.
std::vector<std::regex> mobility_argmin_without_b() {
  return {std::regex(R"(bores\[[^\]]+\]\.(position_with_mobility|depth_profile)\..*)"),
          std::regex(R"(bores\[[^\]]+\]\.sensitivity\[[^\]]+\]\.position)"),
          std::regex(R"(characteristics\[[^\]]+/position/mobility\]\.value)")};
}

void check_spec(const FamilySpec& spec, const std::vector<std::regex>& known, bool only_known) {
  for (bool vectors : {true, false}) {
    Family f = generated_family(spec, vectors);
    f.known = known;
    check_family(f, only_known);
  }
}

}  // namespace

TEST_CASE("invariance: position to A", "[invariance][family]") {
  check_spec({"A", DatumC::none, false, "A", ""}, mobility_argmin_without_b(), false);
}

// Formerly a known defect (mobility_argmin_without_b): the golden sections located the motion
// only to the square root of rounding; the Newton polish of the minimax conditions
// (src/evaluate/datum_mobility.cpp) locates it to rounding, so these figures are checked too.
TEST_CASE("invariance: the datum mobility's motion without datum B",
          "[invariance][family]") {
  check_spec({"A", DatumC::none, false, "A", ""}, mobility_argmin_without_b(), true);
}

TEST_CASE("invariance: position to A|B, A's material side inferred", "[invariance][family]") {
  FamilySpec spec{"A|B", DatumC::none, true, "A|B", ""};
  spec.infer_side = true;  // and A's material side inferred
  check_spec(spec, {}, false);
}

TEST_CASE("invariance: position to A|B(M)", "[invariance][family]") {
  check_spec({"A|B(M)", DatumC::none, true, "A|B(M)", "mmb = 19.995"}, {}, false);
}

TEST_CASE("invariance: position to A|B|C, C a bore", "[invariance][family]") {
  check_spec({"A|B|C", DatumC::bore, true, "A|B|C", ""}, {}, false);
}

TEST_CASE("invariance: position to A|B(M)|C, C a slot", "[invariance][family]") {
  check_spec({"A|B(M)|C slot", DatumC::slot, true, "A|B(M)|C", ""}, {}, false);
}

TEST_CASE("invariance: position to A|B(M)|C(M), C a tab", "[invariance][family]") {
  check_spec({"A|B(M)|C(M) tab", DatumC::tab, true, "A|B(M)|C(M)", ""}, {}, false);
}

TEST_CASE("invariance: position to A|B|C, a bent bore and a derived median line",
          "[invariance][family]") {
  FamilySpec spec{"A|B|C bent", DatumC::bore, true, "A|B|C", ""};
  spec.bent = true;
  check_spec(spec, {}, false);
}

TEST_CASE("invariance: position to A|B(M)|C, B a pin", "[invariance][family]") {
  FamilySpec spec{"A|B(M)|C pin", DatumC::bore, true, "A|B(M)|C", ""};
  spec.b_pin = true;
  check_spec(spec, {}, false);
}

TEST_CASE("invariance: position to A|B|C, C a plane", "[invariance][family]") {
  check_spec({"A|B|C plane", DatumC::plane, true, "A|B|C", ""}, {}, false);
}

TEST_CASE("invariance: position to A|B|C(T), C a bore", "[invariance][family]") {
  check_spec({"A|B|C(T)", DatumC::bore, true, "A|B|C(T)", ""}, {}, false);
}

TEST_CASE("invariance: position to A|B(M)|C(T), C a bore", "[invariance][family]") {
  check_spec({"A|B(M)|C(T)", DatumC::bore, true, "A|B(M)|C(T)", ""}, {}, false);
}
