// The page-populating helper of the readers (io/detail/populate_pages.hpp). Its contract is
// checked against the kernel's own account of the pages: madvise(2) and mincore(2) of the Linux
// man-pages project (MADV_POPULATE_WRITE, Linux 5.14: "populate (prefault) page tables
// writable ... avoid the actual memory access"; mincore reports which pages are resident).
#include <catch2/catch.hpp>

#include <sys/mman.h>
#include <unistd.h>

#include <cstddef>
#include <cstdint>
#include <cstring>
#include <memory>
#include <vector>

#include "io/detail/populate_pages.hpp"

using cylzone::detail::populate_for_write;
using cylzone::detail::populate_threshold_bytes;

namespace {

std::size_t page_size() { return static_cast<std::size_t>(::sysconf(_SC_PAGESIZE)); }

/// An anonymous private mapping, unmapped on scope exit: fresh pages nobody has touched.
struct FreshMapping {
  explicit FreshMapping(std::size_t bytes) : size(bytes) {
    void* p = ::mmap(nullptr, bytes, PROT_READ | PROT_WRITE, MAP_PRIVATE | MAP_ANONYMOUS, -1, 0);
    data = p == MAP_FAILED ? nullptr : static_cast<unsigned char*>(p);
  }
  ~FreshMapping() {
    if (data) ::munmap(data, size);
  }
  FreshMapping(const FreshMapping&) = delete;
  FreshMapping& operator=(const FreshMapping&) = delete;
  unsigned char* data = nullptr;
  std::size_t size = 0;
};

/// Residency of each page of a page-aligned range, as mincore(2) reports it.
std::vector<bool> resident_pages(const void* begin, std::size_t bytes) {
  const std::size_t pages = (bytes + page_size() - 1) / page_size();
  std::vector<unsigned char> state(pages);
  REQUIRE(::mincore(const_cast<void*>(begin), bytes, state.data()) == 0);
  std::vector<bool> resident(pages);
  for (std::size_t i = 0; i < pages; ++i) resident[i] = (state[i] & 1) != 0;
  return resident;
}

/// Whether this kernel knows MADV_POPULATE_WRITE (Linux 5.14 and later).
bool kernel_populates() {
#ifdef MADV_POPULATE_WRITE
  FreshMapping probe(page_size());
  return probe.data && ::madvise(probe.data, page_size(), MADV_POPULATE_WRITE) == 0;
#else
  return false;
#endif
}

}  // namespace

TEST_CASE("populate_for_write never throws and accepts any pointer and size", "[read][populate]") {
  static_assert(noexcept(populate_for_write(nullptr, 0)), "the contract says it never throws");
  populate_for_write(nullptr, 0);
  populate_for_write(nullptr, std::size_t{1} << 30);  // a null range is ignored, not touched
  unsigned char one = 42;
  populate_for_write(&one, 0);
  populate_for_write(&one, 1);
  CHECK(one == 42);
}

TEST_CASE("populate_for_write changes no byte, at any size and alignment", "[read][populate]") {
  // A heap buffer holding a pattern: every byte, inside the range and around it, must read
  // back unchanged after the call, and then read back what is written over it.
  const std::size_t total = 3 * populate_threshold_bytes + 3 * page_size() + 17;
  std::unique_ptr<unsigned char[]> buffer(new unsigned char[total]);
  const auto pattern = [](std::size_t i) { return static_cast<unsigned char>(i * 131 + 7); };
  for (std::size_t i = 0; i < total; ++i) buffer[i] = pattern(i);
  const std::size_t sizes[] = {0,
                               1,
                               page_size() - 1,
                               page_size(),
                               page_size() + 1,
                               populate_threshold_bytes - 1,
                               populate_threshold_bytes,
                               populate_threshold_bytes + 1,
                               2 * populate_threshold_bytes + page_size() + 5};
  for (const std::size_t offset : {std::size_t{0}, std::size_t{1}, std::size_t{8},
                                   page_size() - 1, page_size(), page_size() + 3})
    for (const std::size_t size : sizes) {
      INFO("offset " << offset << ", size " << size);
      REQUIRE(offset + size <= total);
      populate_for_write(buffer.get() + offset, size);
      std::size_t changed = 0;
      for (std::size_t i = 0; i < total; ++i) changed += buffer[i] != pattern(i);
      CHECK(changed == 0);
    }
  // Written after the call, the bytes read back.
  populate_for_write(buffer.get() + 5, total - 5);
  for (std::size_t i = 5; i < total; ++i) buffer[i] = static_cast<unsigned char>(i ^ 0x5a);
  std::size_t wrong = 0;
  for (std::size_t i = 5; i < total; ++i) wrong += buffer[i] != static_cast<unsigned char>(i ^ 0x5a);
  CHECK(wrong == 0);
  for (std::size_t i = 0; i < 5; ++i) CHECK(buffer[i] == pattern(i));
}

TEST_CASE("populate_for_write makes exactly the whole pages inside the range resident", "[read][populate]") {
  if (!kernel_populates()) {
    WARN("this kernel has no MADV_POPULATE_WRITE: the helper is a no-op here, residency not checked");
    return;
  }
  const std::size_t page = page_size();
  const std::size_t pages = populate_threshold_bytes / page + 8;
  FreshMapping fresh(pages * page);
  REQUIRE(fresh.data != nullptr);
  // The two pages at each end are made read-only: separate mappings, so the kernel's choice of
  // folio size cannot make them resident through a fault in the middle, and a write-populate
  // that named any of them would fail as a whole (madvise(2): EFAULT/ENOMEM), leaving the middle
  // unpopulated too.
  REQUIRE(::mprotect(fresh.data, 2 * page, PROT_READ) == 0);
  REQUIRE(::mprotect(fresh.data + (pages - 2) * page, 2 * page, PROT_READ) == 0);
  // Nothing touched yet.
  for (const bool r : resident_pages(fresh.data, fresh.size)) REQUIRE_FALSE(r);
  // A range that starts 100 bytes into page 1 and ends 100 bytes into page pages-2: pages 2 to
  // pages-3 lie wholly inside, pages 0, 1, pages-2 and pages-1 do not and must stay untouched.
  const std::size_t begin = page + 100;
  const std::size_t end = (pages - 2) * page + 100;
  populate_for_write(fresh.data + begin, end - begin);
  const std::vector<bool> resident = resident_pages(fresh.data, fresh.size);
  for (std::size_t i = 0; i < pages; ++i) {
    INFO("page " << i << " of " << pages);
    CHECK(resident[i] == (i >= 2 && i + 2 < pages));
  }
  // The populated pages read as zero (fresh anonymous memory), as they would without the call.
  std::size_t nonzero = 0;
  for (std::size_t i = 0; i < fresh.size; ++i) nonzero += fresh.data[i] != 0;
  CHECK(nonzero == 0);
  // Below the threshold nothing is asked for.
  FreshMapping small(populate_threshold_bytes);
  REQUIRE(small.data != nullptr);
  populate_for_write(small.data, populate_threshold_bytes - 1);
  for (const bool r : resident_pages(small.data, small.size)) CHECK_FALSE(r);
}
