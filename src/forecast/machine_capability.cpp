// The machine-capability forecast (forecast/machine_capability.hpp; docs/forecast.md).
// Probabilities of a two-dimensional normal deviation falling in a disk are integrated
// numerically: the outer coordinate by adaptive Gauss-Kronrod, the inner one in closed form
// through erfc (or, for the random tilt at the bottom, by a second adaptive integral).
#include "cylzone/forecast/machine_capability.hpp"

#include <algorithm>
#include <array>
#include <cmath>
#include <limits>
#include <optional>
#include <string>
#include <utility>
#include <vector>

#include "cylzone/core/errors.hpp"

namespace cylzone {
namespace {

constexpr double pi = 3.14159265358979323846;
/// The normal law is integrated over +-9 sigma: the mass beyond is 2e-19, below rounding.
constexpr double sigma_window = 9.0;
/// Absolute tolerance of every probability.
constexpr double probability_tolerance = 1e-12;

// ------------------------------------------------------------------------------ quadrature

// Gauss-Kronrod 7-15 nodes and weights (Kronrod 1965; the standard table, e.g. QUADPACK's
// qk15, Piessens et al. 1983). Nodes on [-1, 1], symmetric; index 7 is the centre.
constexpr std::array<double, 8> kronrod_nodes = {
    0.991455371120812639206854697526329, 0.949107912342758524526189684047851,
    0.864864423359769072789712788640926, 0.741531185599394439863864773280788,
    0.586087235467691130294144845693013, 0.405845151377397166906606412076961,
    0.207784955007898467600689403773245, 0.000000000000000000000000000000000};
constexpr std::array<double, 8> kronrod_weights = {
    0.022935322010529224963732008058970, 0.063092092629978553290700663189204,
    0.104790010322250183839876322541518, 0.140653259715525918745189590510238,
    0.169004726639267902826583426598550, 0.190350578064785409913256402421014,
    0.204432940075298892414161999234649, 0.209482141084727828012999174891714};
// Gauss 7-point weights at the Kronrod nodes with odd index (1, 3, 5) and the centre.
constexpr std::array<double, 4> gauss_weights = {
    0.129484966168869693270611432679082, 0.279705391489276667901467771423780,
    0.381830050505118944950369775488975, 0.417959183673469387755102040816327};

/// Gauss-Kronrod 7-15 on [a, b]: the Kronrod value and the error estimate |Kronrod - Gauss|,
/// taken as zero when it is below the rounding level of the sum.
struct Panel {
  double a, b, value, error;
};

template <class F>
Panel kronrod_panel(const F& f, double a, double b) {
  const double centre = 0.5 * (a + b), half = 0.5 * (b - a);
  const double fc = f(centre);
  double kronrod = kronrod_weights[7] * fc, gauss = gauss_weights[3] * fc;
  double magnitude = kronrod_weights[7] * std::abs(fc);
  for (int i = 0; i < 7; ++i) {
    const double dx = half * kronrod_nodes[i];
    const double f1 = f(centre - dx), f2 = f(centre + dx);
    kronrod += kronrod_weights[i] * (f1 + f2);
    magnitude += kronrod_weights[i] * (std::abs(f1) + std::abs(f2));
    if (i % 2 == 1) gauss += gauss_weights[i / 2] * (f1 + f2);
  }
  double error = half * std::abs(kronrod - gauss);
  if (error <= 50.0 * 2.2e-16 * half * magnitude) error = 0.0;
  return {a, b, half * kronrod, error};
}

/// Globally adaptive Gauss-Kronrod 7-15 of f on [a, b] (the strategy of QUADPACK's qag,
/// Piessens et al. 1983): the panel with the largest error estimate is halved until the
/// estimates sum to at most `tolerance` (never asked below 1e-16: these integrals are
/// probabilities) or `max_panels` panels exist. The budget bounds the cost of any integrand,
/// also one whose rounding noise no subdivision can remove.
template <class F>
double integrate(const F& f, double a, double b, double tolerance, std::size_t max_panels = 100) {
  if (!(b > a)) return 0.0;
  tolerance = std::max(tolerance, 1e-16);
  std::vector<Panel> panels{kronrod_panel(f, a, b)};
  for (;;) {
    double error = 0.0;
    std::size_t worst = 0;
    for (std::size_t i = 0; i < panels.size(); ++i) {
      error += panels[i].error;
      if (panels[i].error > panels[worst].error) worst = i;
    }
    const Panel p = panels[worst];
    const double mid = 0.5 * (p.a + p.b);
    if (error <= tolerance || panels.size() >= max_panels || !(mid > p.a && mid < p.b)) break;
    panels[worst] = kronrod_panel(f, p.a, mid);
    panels.push_back(kronrod_panel(f, mid, p.b));
  }
  double total = 0.0;
  for (const Panel& p : panels) total += p.value;
  return total;
}

/// integrate() over [a, b] split at the given break points (kinks of the integrand).
template <class F>
double integrate_pieces(const F& f, double a, double b, std::vector<double> breaks,
                        double tolerance) {
  breaks.push_back(a);
  breaks.push_back(b);
  std::sort(breaks.begin(), breaks.end());
  double total = 0.0;
  for (std::size_t i = 0; i + 1 < breaks.size(); ++i) {
    const double lo = std::max(a, breaks[i]), hi = std::min(b, breaks[i + 1]);
    if (hi > lo) total += integrate(f, lo, hi, tolerance / double(breaks.size() - 1));
  }
  return total;
}

// --------------------------------------------------------------------------- normal law

double normal_density(double z) { return std::exp(-0.5 * z * z) / std::sqrt(2.0 * pi); }

/// P(lo <= mean + sigma Z <= hi), Z standard normal; sigma = 0 is a point mass. Both ends in
/// the same tail are taken through erfc of positive arguments, so that no cancellation loses
/// a small probability.
double interval_probability(double lo, double hi, double mean, double sigma) {
  if (!(hi > lo)) return 0.0;
  if (sigma <= 0.0) return (mean >= lo && mean <= hi) ? 1.0 : 0.0;
  const double a = (lo - mean) / sigma, b = (hi - mean) / sigma;
  const double s = 1.0 / std::sqrt(2.0);
  if (a >= 0.0) return 0.5 * (std::erfc(a * s) - std::erfc(b * s));     // upper tail
  if (b <= 0.0) return 0.5 * (std::erfc(-b * s) - std::erfc(-a * s));   // lower tail
  return 1.0 - 0.5 * (std::erfc(-a * s) + std::erfc(b * s));
}

/// The sub-range [lo, hi] of [-radius, radius] within +-9 sigma of `mean`, as angles alpha with
/// x = radius sin(alpha): the substitution removes the square-root ends of the disk's chords.
bool angle_window(double mean, double sigma, double radius, double& lo, double& hi) {
  const double x_lo = std::max(-radius, mean - sigma_window * sigma);
  const double x_hi = std::min(radius, mean + sigma_window * sigma);
  if (!(x_hi > x_lo)) return false;
  lo = std::asin(std::clamp(x_lo / radius, -1.0, 1.0));
  hi = std::asin(std::clamp(x_hi / radius, -1.0, 1.0));
  return hi > lo;
}

double angle_of(double x, double radius) { return std::asin(std::clamp(x / radius, -1.0, 1.0)); }

/// The angles (x = radius sin(alpha)) where the chords of the disk |e| <= radius meet the
/// circle |e + shift| = other: its leftmost and rightmost x and the crossings of both circles
/// (kinks of the integrands below), appended to `breaks`.
void circle_breaks(double shift_x, double shift_y, double radius, double other,
                   std::vector<double>& breaks) {
  if (!(other > 0.0)) return;
  breaks.push_back(angle_of(-shift_x - other, radius));
  breaks.push_back(angle_of(-shift_x + other, radius));
  const double d = std::hypot(shift_x, shift_y);
  if (d > 0.0 && d < radius + other && d > std::abs(radius - other)) {
    // Crossings of |e| = radius and |e - c| = other, c = -shift: the foot a along c / d and
    // the half chord h across it.
    const double a = (radius * radius - other * other + d * d) / (2.0 * d);
    const double h = std::sqrt(std::max(0.0, radius * radius - a * a));
    const double cx = -shift_x / d, cy = -shift_y / d;
    for (double sign : {-1.0, 1.0}) breaks.push_back(angle_of(a * cx - sign * h * cy, radius));
  }
}

}  // namespace

double disk_probability(double mean_x, double mean_y, double sigma_x, double sigma_y,
                        double radius);

namespace {

/// C(rho) = P(|c + tau w| <= radius) for |c| = rho, w ~ N(0, I): the Rice CDF at `radius`
/// (1 - Marcum Q1(rho / tau, radius / tau)). Exact values from disk_probability at the
/// Chebyshev points of panels two tau wide over radius -+ 12 tau, interpolated by Clenshaw's
/// recurrence (16 points per panel: interpolated shares agree with panels one tau wide to
/// 3e-16, and with the doubly adaptive integral without a table to 1e-15). Beyond the panels C
/// is 1 or 0 to within exp(-72).
class RiceTable {
 public:
  static constexpr double reach = 12.0;  ///< half-width of the panels' band, in tau
  RiceTable(double tau, double radius)
      : lo_(std::max(0.0, radius - reach * tau)), hi_(radius + reach * tau) {
    panels_ = std::max(1, static_cast<int>(std::ceil((hi_ - lo_) / (2.0 * tau))));
    width_ = (hi_ - lo_) / panels_;
    coefficients_.resize(static_cast<std::size_t>(panels_));
    std::array<double, order> values{};
    for (int p = 0; p < panels_; ++p) {
      const double centre = lo_ + (p + 0.5) * width_;
      for (int k = 0; k < order; ++k)
        values[k] = disk_probability(centre + 0.5 * width_ * std::cos(pi * (k + 0.5) / order),
                                     0.0, tau, tau, radius);
      for (int j = 0; j < order; ++j) {  // the discrete Chebyshev transform
        double sum = 0.0;
        for (int k = 0; k < order; ++k) sum += values[k] * std::cos(pi * j * (k + 0.5) / order);
        coefficients_[p][j] = (j == 0 ? 1.0 : 2.0) * sum / order;
      }
    }
  }

  double operator()(double rho) const {
    if (rho <= lo_) return lo_ > 0.0 ? 1.0 : coefficients_.empty() ? 1.0 : at(0, -1.0);
    if (rho >= hi_) return 0.0;
    const int p = std::min(panels_ - 1, static_cast<int>((rho - lo_) / width_));
    return at(p, 2.0 * (rho - (lo_ + (p + 0.5) * width_)) / width_);
  }

 private:
  static constexpr int order = 16;
  double at(int p, double t) const {  // Clenshaw
    const auto& c = coefficients_[static_cast<std::size_t>(p)];
    double b1 = 0.0, b2 = 0.0;
    for (int j = order - 1; j >= 1; --j) {
      const double b0 = 2.0 * t * b1 - b2 + c[j];
      b2 = b1;
      b1 = b0;
    }
    return std::clamp(t * b1 - b2 + c[0], 0.0, 1.0);
  }
  double lo_, hi_, width_ = 0.0;
  int panels_ = 1;
  std::vector<std::array<double, order>> coefficients_;
};

}  // namespace

double disk_probability(double mean_x, double mean_y, double sigma_x, double sigma_y,
                        double radius) {
  if (!(radius > 0.0)) return 0.0;
  if (sigma_x <= 0.0 && sigma_y <= 0.0) return std::hypot(mean_x, mean_y) <= radius ? 1.0 : 0.0;
  if (sigma_x <= 0.0) {  // x is fixed: one chord of the disk
    if (std::abs(mean_x) > radius) return 0.0;
    const double half = std::sqrt(radius * radius - mean_x * mean_x);
    return interval_probability(-half, half, mean_y, sigma_y);
  }
  if (sigma_y <= 0.0) return disk_probability(mean_y, mean_x, sigma_y, sigma_x, radius);
  // The outer coordinate is the one whose mean is nearer the centre: its window then stays
  // away from the disk's ends, where the chords shrink to nothing and a narrow law would need
  // a deep subdivision; the inner one takes the disk's edge in closed form.
  if (std::abs(mean_x) > std::abs(mean_y))
    return disk_probability(mean_y, mean_x, sigma_y, sigma_x, radius);
  double lo = 0.0, hi = 0.0;
  if (!angle_window(mean_x, sigma_x, radius, lo, hi)) return 0.0;
  // x = r sin(a), dx = r cos(a) da; the chord at x is |y| <= r cos(a).
  const auto chord = [&](double a) {
    const double c = radius * std::cos(a);
    return c * normal_density((radius * std::sin(a) - mean_x) / sigma_x) / sigma_x *
           interval_probability(-c, c, mean_y, sigma_y);
  };
  return std::clamp(integrate(chord, lo, hi, probability_tolerance), 0.0, 1.0);
}

double both_ends_probability(double mean_x, double mean_y, double sigma_x, double sigma_y,
                             double shift_x, double shift_y, double tau, double radius) {
  if (!(radius > 0.0)) return 0.0;
  // The two ends share the mouth deviation; given it, the bottom is normal about
  // e_top + shift with the isotropic sigma tau.
  if (sigma_x <= 0.0 || sigma_y <= 0.0) {
    // A degenerate mouth (the options never give one: R > 0) is a point mass in that axis;
    // widen it to a negligible sigma so that one integration path serves every case.
    const double tiny = 1e-12 * std::max(radius, 1.0);
    sigma_x = std::max(sigma_x, tiny);
    sigma_y = std::max(sigma_y, tiny);
  }
  if (std::abs(mean_x) > std::abs(mean_y))  // as in disk_probability: the problem mirrored
    return both_ends_probability(mean_y, mean_x, sigma_y, sigma_x, shift_y, shift_x, tau, radius);
  double lo = 0.0, hi = 0.0;
  if (!angle_window(mean_x, sigma_x, radius, lo, hi)) return 0.0;
  double total = 0.0;
  // A random tilt below 1e-6 of the radius changes the probability by about (tau / sigma)^2
  // times the mass at the edge, below 1e-13, while its steps would be narrower than the
  // rounding of the coordinates: it is taken as none.
  if (tau <= 1e-6 * radius) {
    // The bottom is e_top + shift exactly: the chord at x is the intersection of both disks'
    // chords, in closed form; the integrand has kinks where the second disk's chord ends.
    const auto chord = [&](double a) {
      const double x = radius * std::sin(a), c = radius * std::cos(a);
      const double xb = x + shift_x;
      if (std::abs(xb) >= radius) return 0.0;
      const double cb = std::sqrt(radius * radius - xb * xb);
      const double y_lo = std::max(-c, -shift_y - cb), y_hi = std::min(c, -shift_y + cb);
      return c * normal_density((x - mean_x) / sigma_x) / sigma_x *
             interval_probability(y_lo, y_hi, mean_y, sigma_y);
    };
    std::vector<double> breaks;
    circle_breaks(shift_x, shift_y, radius, radius, breaks);
    total = integrate_pieces(chord, lo, hi, breaks, probability_tolerance);
  } else {
    // Given the mouth e, the bottom is inside with the Rice probability C(|e + shift|),
    // tabulated once (Chebyshev panels) since the double integral asks for it many times.
    const RiceTable bottom_inside(tau, radius);
    const std::array<double, 3> bands = {radius - RiceTable::reach * tau, radius,
                                         radius + RiceTable::reach * tau};
    const auto chord = [&](double a) {
      const double x = radius * std::sin(a), c = radius * std::cos(a);
      const double y_lo = std::max(-c, mean_y - sigma_window * sigma_y);
      const double y_hi = std::min(c, mean_y + sigma_window * sigma_y);
      if (!(y_hi > y_lo)) return 0.0;
      const double xb = x + shift_x;
      const auto inner = [&](double y) {
        return normal_density((y - mean_y) / sigma_y) / sigma_y *
               bottom_inside(std::hypot(xb, y + shift_y));
      };
      // C steps from 1 to 0 across the band radius -+ 12 tau about -shift: its edges and
      // middle split the chord, so that every piece is smooth on its own scale.
      std::vector<double> edges;
      for (double band : bands)
        if (std::abs(xb) < band) {
          const double cb = std::sqrt(band * band - xb * xb);
          edges.push_back(-shift_y - cb);
          edges.push_back(-shift_y + cb);
        }
      return c * normal_density((x - mean_x) / sigma_x) / sigma_x *
             integrate_pieces(inner, y_lo, y_hi, edges, 0.1 * probability_tolerance);
    };
    std::vector<double> breaks;
    for (double band : bands) circle_breaks(shift_x, shift_y, radius, band, breaks);
    total = integrate_pieces(chord, lo, hi, breaks, probability_tolerance);
  }
  return std::clamp(total, 0.0, 1.0);
}

std::string_view radial_law_name(RadialLaw law) noexcept {
  switch (law) {
    case RadialLaw::fixed: return "fixed";
    case RadialLaw::rayleigh: return "rayleigh";
    case RadialLaw::hoyt: return "hoyt";
    case RadialLaw::rice: return "rice";
    case RadialLaw::bivariate_normal: return "bivariate-normal";
    case RadialLaw::larger_end: return "larger-end";
  }
  return "fixed";
}

std::string_view capability_verdict_name(CapabilityVerdict verdict) noexcept {
  switch (verdict) {
    case CapabilityVerdict::can_hold: return "can-hold";
    case CapabilityVerdict::marginal: return "marginal";
    case CapabilityVerdict::cannot_hold: return "cannot-hold";
  }
  return "cannot-hold";
}

void validate_capability_options(const CapabilityOptions& o) {
  const auto fail = [](const std::string& key, const std::string& problem) {
    throw InputError("", 0, problem, key);
  };
  const auto finite = [&](double v, const std::string& key) {
    if (!std::isfinite(v)) fail(key, "must be a finite number");
  };
  const auto positive = [&](double v, const std::string& key) {
    finite(v, key);
    if (!(v > 0.0)) fail(key, "must be greater than zero");
  };
  const auto non_negative = [&](double v, const std::string& key) {
    finite(v, key);
    if (v < 0.0) fail(key, "must not be negative");
  };
  for (const auto& [axis, name] : {std::pair{&o.x, "x"}, std::pair{&o.y, "y"}}) {
    const std::string n(name);
    positive(axis->repeatability, n + ".repeatability");
    positive(axis->accuracy, n + ".accuracy");
    if (axis->accuracy < axis->repeatability)
      fail(n + ".accuracy", "is below the repeatability; ISO 230-2's accuracy band contains the "
                            "repeatability band (A >= R)");
  }
  for (std::size_t i = 0; i < o.tilts.size(); ++i) {
    const std::string key = "tilts[" + std::to_string(i) + "]";
    non_negative(o.tilts[i].systematic, key + ".systematic");
    non_negative(o.tilts[i].random, key + ".random");
  }
  positive(o.depth, "depth");
  positive(o.position_tolerance, "position_tolerance");
  if (o.perpendicularity_tolerance) positive(*o.perpendicularity_tolerance,
                                             "perpendicularity_tolerance");
  finite(o.coverage, "coverage");
  if (!(o.coverage >= 0.5 && o.coverage < 1.0))
    fail("coverage", "must lie in [0.5, 1), i.e. from 50 % to below 100 %");
  finite(o.share_limit_capable, "share_limit_capable");
  finite(o.share_limit_marginal, "share_limit_marginal");
  if (!(o.share_limit_capable > 0.0 && o.share_limit_capable < 1.0))
    fail("share_limit_capable", "must lie in (0, 1)");
  if (!(o.share_limit_marginal >= o.share_limit_capable && o.share_limit_marginal < 1.0))
    fail("share_limit_marginal", "must not be below the capable share limit, and below 1");
}

namespace {

/// The crossing of a non-decreasing f through zero in [lo, hi], given f(lo) <= 0 < f(hi):
/// returns the final bracket (lo, hi) with hi - lo <= 1e-10 hi. Regula falsi with the Illinois
/// modification (Dowell & Jarratt, BIT 11 (1971)), a bisection step every fourth iteration so
/// that steps and kinks of f cost at most linear convergence.
template <class F>
std::pair<double, double> increasing_root(const F& f, double lo, double f_lo, double hi,
                                          double f_hi) {
  int side = 0;
  for (int i = 0; i < 300 && hi - lo > 1e-10 * hi; ++i) {
    double x = (lo * f_hi - hi * f_lo) / (f_hi - f_lo);
    if (i % 4 == 3 || !(x > lo && x < hi)) x = 0.5 * (lo + hi);
    const double fx = f(x);
    if (fx > 0.0) {
      hi = x;
      f_hi = fx;
      if (side == 1) f_lo *= 0.5;
      side = 1;
    } else {
      lo = x;
      f_lo = fx;
      if (side == -1) f_hi *= 0.5;
      side = -1;
    }
  }
  return {lo, hi};
}

/// The `p` quantile of a continuous CDF on [0, inf): hi is widened until cdf(hi) > p.
template <class Cdf>
double quantile(const Cdf& cdf, double p, double hi) {
  hi = std::max(hi, 1e-300);
  double f_hi = cdf(hi) - p;
  for (int i = 0; i < 200 && !(f_hi > 0.0); ++i) f_hi = cdf(hi *= 2.0) - p;
  return increasing_root([&](double x) { return cdf(x) - p; }, 0.0, cdf(0.0) - p, hi, f_hi)
      .second;
}

RadialLaw law_of(double bias, double sigma_x, double sigma_y) {
  if (sigma_x <= 0.0 && sigma_y <= 0.0) return RadialLaw::fixed;
  if (bias == 0.0) return sigma_x == sigma_y ? RadialLaw::rayleigh : RadialLaw::hoyt;
  return sigma_x == sigma_y ? RadialLaw::rice : RadialLaw::bivariate_normal;
}

/// Median and `coverage` quantile of the radius of N(mean, diag(sx^2, sy^2)), times `scale`
/// (2 for a positional diameter, 1 for perpendicularity).
void disk_figures(double mx, double my, double sx, double sy, double coverage, double scale,
                  DiameterFigures& out) {
  out.law = law_of(std::hypot(mx, my), sx, sy);
  if (out.law == RadialLaw::fixed) {
    out.median = out.quantile = scale * std::hypot(mx, my);
    return;
  }
  const auto cdf = [&](double r) { return disk_probability(mx, my, sx, sy, r); };
  const double start = std::hypot(mx, my) + sigma_window * std::max(sx, sy);
  out.median = scale * quantile(cdf, 0.5, start);
  out.quantile = scale * quantile(cdf, coverage, start);
}

CapabilityVerdict decide_tolerance(const ToleranceForecast& t, const CapabilityOptions& o) {
  if (t.systematic_exceeds || t.share_outside > o.share_limit_marginal)
    return CapabilityVerdict::cannot_hold;
  return t.share_outside <= o.share_limit_capable ? CapabilityVerdict::can_hold
                                                  : CapabilityVerdict::marginal;
}

/// The model at one depth: both shares outside.
struct DepthModel {
  double sx, sy, bx, by, ux, uy;  // sigmas, mouth bias, unit direction of the systematic tilt
  double tilt, tilt_sigma;        // |theta_sys|, sigma_t
  double radius;                  // T_pos / 2
  std::optional<double> perpendicularity;

  double position_share(double h) const {
    return 1.0 - both_ends_probability(bx, by, sx, sy, h * tilt * ux, h * tilt * uy,
                                       h * tilt_sigma, radius);
  }
  double perpendicularity_share(double h) const {
    if (!perpendicularity || h <= 0.0) return 0.0;
    return 1.0 - disk_probability(tilt, 0.0, tilt_sigma, tilt_sigma, *perpendicularity / h);
  }
};

}  // namespace

namespace {

/// The unit direction of the systematic tilt: along the bias (the worst direction, header item
/// 4), along +X without one.
std::pair<double, double> tilt_direction(const CapabilityForecast& f) {
  const double bias = std::hypot(f.bias_x, f.bias_y);
  return bias > 0.0 ? std::pair{f.bias_x / bias, f.bias_y / bias} : std::pair{1.0, 0.0};
}

}  // namespace

double full_depth_probability(const CapabilityForecast& f, double depth, double diameter) {
  const auto [ux, uy] = tilt_direction(f);
  return both_ends_probability(f.bias_x, f.bias_y, f.sigma_x, f.sigma_y,
                               depth * f.tilt_systematic * ux, depth * f.tilt_systematic * uy,
                               depth * f.tilt_sigma, 0.5 * diameter);
}

CapabilityForecast forecast_capability(const CapabilityOptions& o) {
  validate_capability_options(o);
  CapabilityForecast f;
  f.coverage = o.coverage;
  f.sigma_x = o.x.repeatability / 4.0;
  f.sigma_y = o.y.repeatability / 4.0;
  if (o.systematic == SystematicPlacement::worst_corner) {
    f.bias_x = 0.5 * (o.x.accuracy - o.x.repeatability);
    f.bias_y = 0.5 * (o.y.accuracy - o.y.repeatability);
  }
  double variance = 0.0;
  for (const TiltSource& t : o.tilts) {
    f.tilt_systematic += t.systematic;
    variance += t.random * t.random;
  }
  f.tilt_sigma = std::sqrt(variance);
  const double h = o.depth;
  const double bias = std::hypot(f.bias_x, f.bias_y);
  const auto [ux, uy] = tilt_direction(f);
  const DepthModel model{f.sigma_x, f.sigma_y, f.bias_x, f.bias_y, ux, uy,
                         f.tilt_systematic, f.tilt_sigma, 0.5 * o.position_tolerance,
                         o.perpendicularity_tolerance};

  // Worst case: systematic + 3 sigma on every component, both axes at once.
  const double mouth_worst = std::hypot(f.bias_x + 3.0 * f.sigma_x, f.bias_y + 3.0 * f.sigma_y);
  const double tilt_worst = f.tilt_systematic + 3.0 * std::sqrt(2.0) * f.tilt_sigma;
  f.top.worst_case = 2.0 * mouth_worst;
  f.bottom.worst_case = f.full_depth.worst_case = 2.0 * (mouth_worst + h * tilt_worst);
  f.perpendicularity.worst_case = h * tilt_worst;

  // Statistical figures.
  disk_figures(f.bias_x, f.bias_y, f.sigma_x, f.sigma_y, o.coverage, 2.0, f.top);
  const double tau = h * f.tilt_sigma;
  const double bottom_x = f.bias_x + h * f.tilt_systematic * ux;
  const double bottom_y = f.bias_y + h * f.tilt_systematic * uy;
  disk_figures(bottom_x, bottom_y, std::hypot(f.sigma_x, tau), std::hypot(f.sigma_y, tau),
               o.coverage, 2.0, f.bottom);
  {
    const auto cdf = [&](double r) { return full_depth_probability(f, h, 2.0 * r); };
    const double scale = 0.5 * f.bottom.quantile + sigma_window * std::max(f.sigma_x, f.sigma_y);
    f.full_depth.median = 2.0 * quantile(cdf, 0.5, scale);
    f.full_depth.quantile = 2.0 * quantile(cdf, o.coverage, scale);
    f.full_depth.law = RadialLaw::larger_end;
  }
  // Perpendicularity h |theta|: the radius of N(h theta_sys, tau^2 I), as a diameter zone.
  disk_figures(h * f.tilt_systematic, 0.0, tau, tau, o.coverage, 1.0, f.perpendicularity);

  // Shares outside and verdicts.
  f.position.tolerance = o.position_tolerance;
  f.position.share_outside = model.position_share(h);
  f.position.systematic = 2.0 * (bias + h * f.tilt_systematic);
  f.position.systematic_exceeds = f.position.systematic > o.position_tolerance;
  f.position.verdict = decide_tolerance(f.position, o);
  f.verdict = f.position.verdict;
  if (o.perpendicularity_tolerance) {
    ToleranceForecast p;
    p.tolerance = *o.perpendicularity_tolerance;
    p.share_outside = model.perpendicularity_share(h);
    p.systematic = h * f.tilt_systematic;
    p.systematic_exceeds = p.systematic > p.tolerance;
    p.verdict = decide_tolerance(p, o);
    f.verdict = std::max(f.verdict, p.verdict);
    f.perpendicularity_forecast = p;
  }

  // The deepest bore: both shares within the capable limit; they grow with depth (header).
  // The excess of the worse share over the limit: non-decreasing in depth.
  const auto excess = [&](double depth) {
    return std::max(model.position_share(depth), model.perpendicularity_share(depth)) -
           o.share_limit_capable;
  };
  constexpr double depth_cap = 1e6;  // mm: beyond any bore
  const double at_mouth = excess(0.0);
  if (at_mouth > 0.0) {
    f.deepest.kind = DeepestBore::Kind::none;
  } else if (f.tilt_systematic == 0.0 && f.tilt_sigma == 0.0) {
    f.deepest.kind = DeepestBore::Kind::any_depth;
  } else {
    // From the given depth, at least 1 mm: a bounded number of doublings to the cap.
    double lo = 0.0, f_lo = at_mouth, hi = std::max(h, 1.0), f_hi = excess(hi);
    while (!(f_hi > 0.0) && hi < depth_cap) {
      lo = hi;
      f_lo = f_hi;
      hi = std::min(depth_cap, 2.0 * hi);
      f_hi = excess(hi);
    }
    if (!(f_hi > 0.0)) {
      f.deepest.kind = DeepestBore::Kind::any_depth;
    } else {
      f.deepest.kind = DeepestBore::Kind::at_depth;
      f.deepest.depth = increasing_root(excess, lo, f_lo, hi, f_hi).first;
    }
  }
  return f;
}

}  // namespace cylzone
