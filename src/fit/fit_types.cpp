#include "cylzone/fit/fit_types.hpp"

namespace cylzone {

std::string_view method_name(FitMethod method) noexcept {
  switch (method) {
    case FitMethod::least_squares: return "least-squares";
    case FitMethod::minimum_zone: return "minimum-zone";
    case FitMethod::maximum_inscribed: return "max-inscribed";
    case FitMethod::minimum_circumscribed: return "min-circumscribed";
  }
  return "least-squares";
}

std::optional<FitMethod> parse_method(std::string_view text) noexcept {
  for (FitMethod m : {FitMethod::least_squares, FitMethod::minimum_zone,
                      FitMethod::maximum_inscribed, FitMethod::minimum_circumscribed})
    if (text == method_name(m)) return m;
  return std::nullopt;
}

}  // namespace cylzone
