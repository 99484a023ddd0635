// madvise(MADV_POPULATE_WRITE) on a buffer's interior pages; io/detail/populate_pages.hpp says
// why and what it measured.
#include "io/detail/populate_pages.hpp"

#include <sys/mman.h>
#include <unistd.h>

#include <cstdint>

namespace cylzone::detail {

void populate_for_write(void* data, std::size_t size) noexcept {
#ifdef MADV_POPULATE_WRITE
  if (data == nullptr || size < populate_threshold_bytes) return;
  const long page_size = ::sysconf(_SC_PAGESIZE);
  if (page_size <= 0) return;
  const auto page = static_cast<std::uintptr_t>(page_size);
  const auto begin = reinterpret_cast<std::uintptr_t>(data);
  if (begin > UINTPTR_MAX - size) return;
  // Round inwards: the first page boundary at or after the start, the last at or before the end.
  const std::uintptr_t first = (begin + page - 1) / page * page;
  const std::uintptr_t last = (begin + size) / page * page;
  if (first < begin || last <= first) return;
  // The result is ignored on purpose: populating is an optimisation, its failure leaves the
  // pages to be faulted in by the writes, exactly as without the call.
  (void)::madvise(reinterpret_cast<void*>(first), last - first, MADV_POPULATE_WRITE);
#else
  (void)data;
  (void)size;
#endif
}

}  // namespace cylzone::detail
