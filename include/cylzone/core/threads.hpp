#pragma once
/// \file threads.hpp
/// The default of every `threads` option. Work is split into chunks fixed by the data, never by
/// the thread count, and chunk results are combined in chunk order, so any thread count gives
/// bit-identical results; `threads` only sets how many run at once.

#include <algorithm>
#include <cstddef>
#include <thread>

namespace cylzone {

/// The machine's hardware threads (std::thread::hardware_concurrency()), at least 1. Read once
/// per process: glibc answers hardware_concurrency() by opening and reading sysfs files, and
/// every default-constructed options struct asks (a Monte Carlo trial builds dozens of them).
inline std::size_t hardware_threads() noexcept {
  static const std::size_t count = std::max<std::size_t>(1, std::thread::hardware_concurrency());
  return count;
}

}  // namespace cylzone
