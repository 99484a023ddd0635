#pragma once
// Private: golden-section search for the minimum of a unimodal function of one variable
// (Kiefer 1953; Press et al., Numerical Recipes 3rd ed., 10.2), shared by the datum mobility's
// searches (datum_mobility.cpp) and the clocking width of a slot or tab (clocking_width.cpp).

#include <utility>

namespace cylzone::detail {

inline constexpr double golden_fraction = 0.38196601125010515180;  // (3 - sqrt 5) / 2

/// Golden-section search for the minimum of a unimodal f on [a, b]; returns (argmin, min),
/// the best of all evaluated points including both ends.
template <class F>
std::pair<double, double> golden_minimum(F&& f, double a, double b, double tolerance,
                                         int max_iterations) {
  if (b < a) std::swap(a, b);
  double best_x = a, best_f = f(a);
  const auto keep = [&](double x, double fx) {
    if (fx < best_f) {
      best_f = fx;
      best_x = x;
    }
  };
  if (b == a) return {best_x, best_f};
  keep(b, f(b));
  double x1 = a + golden_fraction * (b - a), x2 = b - golden_fraction * (b - a);
  double f1 = f(x1), f2 = f(x2);
  keep(x1, f1);
  keep(x2, f2);
  for (int it = 0; it < max_iterations && b - a > tolerance; ++it) {
    if (f1 <= f2) {
      b = x2;
      x2 = x1;
      f2 = f1;
      x1 = a + golden_fraction * (b - a);
      f1 = f(x1);
      keep(x1, f1);
    } else {
      a = x1;
      x1 = x2;
      f1 = f2;
      x2 = b - golden_fraction * (b - a);
      f2 = f(x2);
      keep(x2, f2);
    }
  }
  return {best_x, best_f};
}

}  // namespace cylzone::detail
