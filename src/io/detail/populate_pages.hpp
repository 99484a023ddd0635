#pragma once
// Populating a large buffer's pages in one call before it is written. Not installed.
//
// Why: a fresh large allocation (glibc serves it by a new anonymous mapping above its mmap
// threshold, or from heap the allocator just gave back) has no pages yet; the kernel then takes
// one fault per 4 KiB page on first write, inside the fread() of a file's bytes or the copy and
// parse into a point matrix. madvise(MADV_POPULATE_WRITE) (Linux 5.14 and later; madvise(2))
// maps the same zero-filled pages in one call, without the per-fault entry and exit. Measured on
// the project's 2-core VM (a standalone program, alternating runs; load noted in
// docs/methods.md, "Reading"): allocating and writing 120 MiB took 53-55 ms of CPU by 4 KiB
// faults, 41-43 ms populated first (MAP_POPULATE on a fresh mapping: 39-45 ms); 24 MiB took
// 10.7-10.9 ms against 8.4-9.0 ms.
//
// It changes no byte: the call only makes the pages present and writable, as the first write
// would (the bytes the caller then writes are the bytes it reads back; an unwritten page reads
// as zero either way). Ownership and allocation stay ordinary (new[] or Eigen's allocator), so
// AddressSanitizer still sees every bound. Only whole pages inside [data, data + size) are
// named, never a byte of a neighbouring allocation's page. Huge pages are not asked for (a fresh
// process's huge-page faults are slow and erratic on these machines; docs/methods.md).

#include <cstddef>

namespace cylzone::detail {

/// Below this size the call's own cost is not repaid (a few pages): nothing is done.
inline constexpr std::size_t populate_threshold_bytes = std::size_t{1} << 20;

/// Asks the kernel to back the whole pages inside [data, data + size) with writable memory now.
/// Call it on a buffer the caller is about to write in full. Never fails and never throws: on a
/// kernel without MADV_POPULATE_WRITE (EINVAL), or any other refusal, it does nothing and the
/// pages fault in on first write as before. A null pointer, zero size or a range smaller than
/// populate_threshold_bytes does nothing.
void populate_for_write(void* data, std::size_t size) noexcept;

}  // namespace cylzone::detail
