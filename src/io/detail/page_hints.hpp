#pragma once
// Private hint for large freshly allocated buffers (the bytes of a point file, the coordinate
// matrices of a large cloud). Not installed.

#include <cstddef>
#include <cstdint>

#if defined(__linux__)
#include <sys/mman.h>
#endif

namespace cylzone::detail {

/// Asks the kernel to back the untouched buffer [data, data + bytes) with transparent huge pages
/// (Linux madvise MADV_HUGEPAGE) where the system allows it. Filling a 40 MB buffer then takes
/// ~20 page faults instead of ~10,000; measured in bench/bench_read_points.cpp, the faults
/// otherwise cost as much as parsing the file. Only whole 2 MiB blocks inside the buffer are
/// advised; a no-op for small buffers, elsewhere than Linux, or when the kernel refuses.
inline void prefer_huge_pages(void* data, std::size_t bytes) noexcept {
#if defined(__linux__) && defined(MADV_HUGEPAGE)
  constexpr std::uintptr_t block = std::uintptr_t(1) << 21;
  const auto begin = reinterpret_cast<std::uintptr_t>(data);
  const std::uintptr_t first = (begin + block - 1) & ~(block - 1);
  const std::uintptr_t last = (begin + bytes) & ~(block - 1);
  if (last > first) ::madvise(reinterpret_cast<void*>(first), last - first, MADV_HUGEPAGE);
#else
  (void)data;
  (void)bytes;
#endif
}

}  // namespace cylzone::detail
