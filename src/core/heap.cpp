// One malloc arena for every thread (cylzone/core/heap.hpp).
#include "cylzone/core/heap.hpp"

#if defined(__GLIBC__)
#include <malloc.h>
#endif

namespace cylzone {

bool share_one_heap_arena() noexcept {
#if defined(__GLIBC__)
  return mallopt(M_ARENA_MAX, 1) == 1;  // mallopt returns 1 on success
#else
  return false;
#endif
}

}  // namespace cylzone
