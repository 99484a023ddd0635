#pragma once
/// \file machine_capability.hpp
/// The machine-capability forecast: can a machine tool, given its positioning accuracy and
/// repeatability and the tilt of its feed axis, hold a bore's position and perpendicularity
/// tolerances over the bore's full depth, and how deep may the bore be? docs/forecast.md states
/// the model with a worked example; this header states every assumption.
///
/// Inputs (ISO 230-2:2014 and ISO 230-1; the definitions below are from memory, not quoted):
///  * per axis X and Y the positioning accuracy A (the range of the mean bidirectional
///    positional deviations widened by +-2 s at every target, a full band, not +-A) and the
///    bidirectional repeatability R (at a target the largest of 4 s up, 4 s down and
///    2 s up + 2 s down + |reversal|, maximum over the targets). ISO 230-2 requires A >= R.
///  * tilt sources in slope (mm per mm, 1 µm/m = 1e-6): the squareness of the feed axis to the
///    table (ISO 230-1) and any other (spindle or tool deflection, drill walk), each with a
///    systematic magnitude and a random standard deviation per direction.
///  * the bore depth h and the position (diameter zone) and perpendicularity tolerances.
///
/// Model (every assumption; docs/forecast.md, "Model"):
///  1. Random part per axis: s = R / 4 (R = 4 s, ISO 230-2, from memory). Using the
///     bidirectional R counts a reversal error as scatter: conservative.
///  2. Systematic part per axis: the band of mean deviations, A - R wide (A = band + 4 s when s
///     is the same at every target). Its centre is where the machine was set (the datum bore is
///     cut on the same machine), so the systematic deviation of a bore lies in +-(A - R) / 2.
///     `SystematicPlacement::worst_corner` puts the bore at (+(A_x - R_x)/2, +(A_y - R_y)/2),
///     the worst corner; `centred` at zero (errors compensated, or datum and bore share them).
///  3. The mouth deviation e_top = b + n, n ~ N(0, diag(s_x^2, s_y^2)), X and Y independent. Its
///     radius |e_top| is Rayleigh distributed for b = 0 and s_x = s_y, Hoyt (Nakagami-q) for
///     b = 0 and s_x != s_y, Rice for b != 0 and s_x = s_y, else the radius of a general
///     bivariate normal (Simon & Alouini, Digital Communication over Fading Channels, 2nd ed.,
///     2005, ch. 2, from memory for the chapter).
///  4. The tilt theta = theta_sys + theta_rand: the systematic magnitudes add (all sources
///     aligned) and point along b (along +X when b = 0): the worst direction, since it carries
///     the bottom further from true position. Random tilts are isotropic normal,
///     N(0, sigma_t^2 I) with sigma_t^2 the sum of the sources' variances, independent of n.
///  5. The axis is a straight line: e_bot = e_top + h theta. Its deviation is convex in depth,
///     so position over the full depth is decided at the ends: the full-depth positional
///     diameter is 2 max(|e_top|, |e_bot|) (ASME Y14.5-2018 / ISO 1101:2017: the zone applies
///     over the feature's full length; from memory for the clauses).
///  6. Perpendicularity (diameter zone perpendicular to A, free to shift): a straight axis tilted
///     by theta over depth h fits in a cylinder of diameter h tan|theta|, taken as h |theta|
///     (small angles: tan t - t = t^3 / 3 is below 4e-10 h at 1 mm/m). Position of the mouth
///     does not enter. |theta| is Rice (Rayleigh when theta_sys = 0) distributed.
///  7. No material-condition bonus: the forecast is for the stated (RFS) zone, conservative at
///     MMC. No measurement uncertainty and no thermal drift are modelled.
///
/// Figures (all diameters in mm):
///  * worst case: every component at its systematic part + 3 sigma, both axes at once:
///    mouth radius hypot(|b_x| + 3 s_x, |b_y| + 3 s_y), tilt |theta_sys| + 3 sqrt(2) sigma_t,
///    bottom radius = mouth radius + h * worst tilt, full depth = the larger;
///  * statistical: the median and the `coverage` quantile (default 99.73 %) of the distribution,
///    computed by numerical integration of the normal density over a disk (globally adaptive
///    Gauss-Kronrod 7-15 with the inner direction in closed form through erfc, to 1e-12;
///    docs/forecast.md, "Numerical method");
///  * share outside: P(2 max(|e_top|, |e_bot|) > T_pos) and P(h |theta| > T_perp), exact up to
///    the quadrature's 1e-12 (no Monte Carlo: the tests check it against one).
///
/// Verdict (docs/forecast.md, "Verdict"): for each tolerance
///  * cannot hold: the systematic part alone leaves the zone (2 (|b| + h |theta_sys|) > T_pos,
///    h |theta_sys| > T_perp), or the share outside exceeds `share_limit_marginal` (default
///    4.55 %, the two-sided 2-sigma share of a normal characteristic: Cp = 0.67, common practice);
///  * can hold: the share outside is at most `share_limit_capable` (default 0.27 %, the 3-sigma
///    share: Cp = 1, common practice);
///  * marginal: in between. The forecast's verdict is the worse of position and perpendicularity.
/// The deepest bore is the largest depth at which both shares stay within
/// `share_limit_capable`: both shares grow monotonically with depth (item 5: for h' > h,
/// |e_top + h theta| <= max(|e_top|, |e_top + h' theta|) by convexity), so a bracketing
/// root finder (regula falsi, Illinois) finds it.
///
/// The function is pure: no IO, no state, no threads. Invalid options throw InputError whose
/// key names the option (e.g. "x.repeatability") and whose file is empty.

#include <optional>
#include <string>
#include <string_view>
#include <vector>

namespace cylzone {

/// One machine axis in the sense of ISO 230-2 (lengths in mm).
struct AxisPositioning {
  double accuracy = 0.0;       ///< A, the full band (not +-A); A >= R
  double repeatability = 0.0;  ///< R, bidirectional, > 0
};

/// One source of axis tilt, as a slope (mm per mm; 1 µm/m = 1e-6).
struct TiltSource {
  std::string name;         ///< e.g. "squareness of Z to the table"
  double systematic = 0.0;  ///< magnitude of the systematic tilt, >= 0
  double random = 0.0;      ///< standard deviation per direction of the random tilt, >= 0
};

enum class SystematicPlacement {
  worst_corner,  ///< the bore at (+(A_x - R_x)/2, +(A_y - R_y)/2) from true position
  centred        ///< the systematic positioning error is compensated: b = 0
};

struct CapabilityOptions {
  AxisPositioning x;
  AxisPositioning y;
  std::vector<TiltSource> tilts;
  double depth = 0.0;               ///< bore depth h in mm, > 0
  double position_tolerance = 0.0;  ///< diameter zone, mm, > 0
  std::optional<double> perpendicularity_tolerance;  ///< diameter zone, mm, > 0 when given
  SystematicPlacement systematic = SystematicPlacement::worst_corner;
  double coverage = 0.9973;               ///< probability of the statistical quantile, [0.5, 1)
  double share_limit_capable = 0.0027;    ///< can hold at or below this share outside
  double share_limit_marginal = 0.0455;   ///< cannot hold above this share outside
};

/// Which law the radius of a two-dimensional normal deviation follows (header item 3).
enum class RadialLaw {
  fixed,             ///< no random part: one value
  rayleigh,          ///< b = 0, s_x = s_y
  hoyt,              ///< b = 0, s_x != s_y (Nakagami-q)
  rice,              ///< b != 0, s_x = s_y
  bivariate_normal,  ///< b != 0, s_x != s_y
  larger_end         ///< max(|e_top|, |e_bot|) of the jointly normal ends (full depth)
};
std::string_view radial_law_name(RadialLaw law) noexcept;

/// Diameters (mm) of one forecast figure.
struct DiameterFigures {
  double worst_case = 0.0;  ///< systematic + 3 sigma on every component
  double median = 0.0;      ///< half of the bores are better
  double quantile = 0.0;    ///< the `coverage` quantile
  RadialLaw law = RadialLaw::fixed;  ///< the law of the radius (full depth: the joint maximum)
};

enum class CapabilityVerdict { can_hold, marginal, cannot_hold };
std::string_view capability_verdict_name(CapabilityVerdict verdict) noexcept;

/// One tolerance's forecast.
struct ToleranceForecast {
  double tolerance = 0.0;      ///< mm
  double share_outside = 0.0;  ///< expected share of bores outside the zone
  double systematic = 0.0;     ///< mm, the figure of the systematic part alone
  bool systematic_exceeds = false;  ///< systematic > tolerance
  CapabilityVerdict verdict = CapabilityVerdict::can_hold;
};

/// The deepest bore that still holds both tolerances (share outside <= share_limit_capable).
struct DeepestBore {
  enum class Kind {
    at_depth,   ///< `depth` is the limit
    any_depth,  ///< no tilt source: depth does not change the shares
    none        ///< even a bore of zero depth exceeds the limit (the mouth alone)
  };
  Kind kind = Kind::at_depth;
  double depth = 0.0;  ///< mm, for at_depth
};

struct CapabilityForecast {
  // The model's parameters, derived from the options (mm and slopes).
  double sigma_x = 0.0, sigma_y = 0.0;         ///< R / 4 per axis
  double bias_x = 0.0, bias_y = 0.0;           ///< systematic mouth deviation b
  double tilt_systematic = 0.0;                ///< |theta_sys|, along b
  double tilt_sigma = 0.0;                     ///< sigma_t per direction
  double coverage = 0.0;                       ///< probability of the quantiles
  DiameterFigures top;         ///< positional diameter at the mouth
  DiameterFigures bottom;      ///< positional diameter at the bottom
  DiameterFigures full_depth;  ///< the positional diameter over the full depth
  DiameterFigures perpendicularity;  ///< perpendicularity (diameter zone) over the depth
  ToleranceForecast position;
  std::optional<ToleranceForecast> perpendicularity_forecast;  ///< when a tolerance is given
  CapabilityVerdict verdict = CapabilityVerdict::can_hold;     ///< the worse of the two
  DeepestBore deepest;
};

/// Checks the options (finite, in range, A >= R, limits ordered); throws InputError naming the
/// option as its key.
void validate_capability_options(const CapabilityOptions& options);

/// The forecast of header items 1-7. Validates first. Pure and deterministic.
CapabilityForecast forecast_capability(const CapabilityOptions& options);

// Building blocks, public so that they can be checked against independent references.

/// P(|N(mean, diag(sx^2, sy^2))| <= radius): the normal law integrated over a disk centred on
/// the origin (sx, sy >= 0; a zero sigma is a point mass in that direction). For mean = 0 this is
/// the Rayleigh (sx = sy) or Hoyt CDF, for sx = sy the Rice CDF.
double disk_probability(double mean_x, double mean_y, double sigma_x, double sigma_y,
                        double radius);

/// P(|e_top| <= radius and |e_top + shift + tau w| <= radius) with e_top ~ N(mean, diag(sx^2,
/// sy^2)) and w ~ N(0, I) independent: the probability that a straight axis stays in the zone
/// at both ends (header item 5), with shift = h theta_sys and tau = h sigma_t.
double both_ends_probability(double mean_x, double mean_y, double sigma_x, double sigma_y,
                             double shift_x, double shift_y, double tau, double radius);

/// P(2 max(|e_top|, |e_bot|) <= diameter): the CDF of the full-depth positional diameter of a
/// bore `depth` deep under the model's parameters in `forecast` (header items 3-5), the law
/// behind full_depth's median and quantile.
double full_depth_probability(const CapabilityForecast& forecast, double depth, double diameter);

}  // namespace cylzone
