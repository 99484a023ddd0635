#pragma once
// The library's one way to run work in parallel. Not installed.
//
// Work is cut into a fixed number of chunks chosen by the caller from the data alone (never
// from the thread count); chunk c always covers the same items and its result goes to slot c,
// so the caller reduces the chunk results in chunk order and gets the same bits for any thread
// count. Threads take contiguous blocks of chunks; the calling thread takes the first block.
// No thread outlives the call and no state is kept between calls.

#include <algorithm>
#include <cstddef>
#include <exception>
#include <thread>
#include <vector>

namespace cylzone::detail {

/// Workers parallel_for uses for `chunks` chunks with a `threads` option: between 1 and both.
inline std::size_t worker_count(std::size_t chunks, std::size_t threads) {
  return std::max<std::size_t>(1, std::min(chunks, threads));
}

/// Runs body(chunk, worker) for every chunk in [0, chunks), on worker_count(chunks, threads)
/// threads (the caller's included). `worker` (0-based) lets a body keep per-worker scratch or
/// an order-independent accumulation (e.g. a min/max). When bodies throw, the exception of the
/// lowest failing chunk is rethrown after every thread has stopped: the same one a serial run
/// would throw, because each worker stops at its first failure and blocks are in chunk order.
template <class Body>
void parallel_for(std::size_t chunks, std::size_t threads, Body&& body) {
  const std::size_t workers = worker_count(chunks, threads);
  if (workers <= 1) {
    for (std::size_t c = 0; c < chunks; ++c) body(c, std::size_t{0});
    return;
  }
  const std::size_t per = (chunks + workers - 1) / workers;
  std::vector<std::exception_ptr> failure(workers);
  const auto run = [&](std::size_t w) {
    try {
      const std::size_t last = std::min(chunks, (w + 1) * per);
      for (std::size_t c = std::min(chunks, w * per); c < last; ++c) body(c, w);
    } catch (...) {
      failure[w] = std::current_exception();
    }
  };
  std::vector<std::thread> pool;
  pool.reserve(workers - 1);
  for (std::size_t w = 1; w < workers; ++w) pool.emplace_back(run, w);
  run(0);
  for (std::thread& t : pool) t.join();
  for (const std::exception_ptr& e : failure)
    if (e) std::rethrow_exception(e);
}

}  // namespace cylzone::detail
