#pragma once
// The library's contract on hostile input, asserted by every fuzz target: only InputError and
// FitError escape, each message is one printable line of at most 1000 bytes, and whatever is
// returned is sound (finite points, unit vectors). A breach aborts, which libFuzzer reports as a
// finding with the input that caused it.

#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <exception>
#include <string>

#include "cylzone/core/errors.hpp"
#include "cylzone/io/point_cloud.hpp"

namespace cylzone::fuzz {

[[noreturn]] inline void breach(const std::string& what) {
  std::fprintf(stderr, "contract breach: %s\n", what.c_str());
  std::abort();
}

/// One line, printable, bounded: what `cylzone: error:` prints must not scroll, beep or forge
/// a second line.
inline void check_message(const char* kind, const char* text) {
  const std::string message(text);
  if (message.empty()) breach(std::string(kind) + " with an empty message");
  if (message.size() > 1000)
    breach(std::string(kind) + " message of " + std::to_string(message.size()) + " bytes: " +
           message.substr(0, 200) + "...");
  for (const char c : message) {
    const auto byte = static_cast<unsigned char>(c);
    if (byte < 0x20 || byte == 0x7f)
      breach(std::string(kind) + " message holds control byte " + std::to_string(byte) + ": " +
             message.substr(0, 200));
  }
}

/// Runs `action`; only the library's own exception types may leave it.
template <class Action>
void expect_contract(Action&& action) {
  try {
    action();
  } catch (const InputError& e) {
    check_message("InputError", e.what());
  } catch (const FitError& e) {
    check_message("FitError", e.what());
  } catch (const std::exception& e) {
    breach(std::string("foreign exception escaped: ") + e.what());
  } catch (...) {
    breach("non-standard exception escaped");
  }
}

/// A cloud handed back must be usable as it stands: finite coordinates, and vectors (when there
/// are any) one per point and of unit length.
inline void check_cloud(const PointCloud& cloud) {
  if (cloud.points.cols() == 0) breach("an empty cloud was returned instead of an InputError");
  if (!cloud.points.allFinite()) breach("a returned point is NaN or infinite");
  if (cloud.vectors.cols() != 0) {
    if (cloud.vectors.cols() != cloud.points.cols())
      breach("vectors and points differ in number");
    for (Eigen::Index i = 0; i < cloud.vectors.cols(); ++i) {
      const double length = cloud.vectors.col(i).norm();
      if (!(std::abs(length - 1.0) <= 1e-9))
        breach("vector " + std::to_string(i + 1) + " has length " + std::to_string(length));
    }
  }
}

}  // namespace cylzone::fuzz
