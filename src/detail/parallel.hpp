#pragma once
// The library's one way to run work in parallel. Not installed.
//
// Work is cut into a fixed number of chunks chosen by the caller from the data alone (never
// from the thread count); chunk c always covers the same items and its result goes to slot c,
// so the caller reduces the chunk results in chunk order and gets the same bits for any thread
// count. Threads take contiguous blocks of chunks; the calling thread takes the first block.
// No thread outlives the call and no state is kept between calls.

#include <algorithm>
#include <atomic>
#include <cstddef>
#include <exception>
#include <thread>
#include <vector>

namespace cylzone::detail {

/// Workers parallel_for uses for `chunks` chunks with a `threads` option: between 1 and both.
inline std::size_t worker_count(std::size_t chunks, std::size_t threads) {
  return std::max<std::size_t>(1, std::min(chunks, threads));
}

/// Runs run(w) for w in [0, workers) on as many threads (the caller's is worker 0), then
/// rethrows the first exception in `failure` (the caller's slots, in chunk order).
template <class Run>
void run_workers(std::size_t workers, const Run& run,
                 const std::vector<std::exception_ptr>& failure) {
  std::vector<std::thread> pool;
  pool.reserve(workers - 1);
  for (std::size_t w = 1; w < workers; ++w) pool.emplace_back(run, w);
  run(0);
  for (std::thread& t : pool) t.join();
  for (const std::exception_ptr& e : failure)
    if (e) std::rethrow_exception(e);
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
  run_workers(workers, run, failure);
}

/// As parallel_for, for a few chunks of unequal cost (the bores of a part and a datum's screen):
/// each worker takes the lowest chunk not yet taken instead of a fixed block, so a worker that
/// finishes early is not left idle while the other still has a block to run. Each chunk still
/// writes only its own slot, so the results are the same bits for any thread count. The
/// exception rethrown is again the lowest failing chunk's, the one a serial run throws: chunks
/// are taken in increasing order and a taken chunk runs to its end, so every chunk below a
/// failing one has run; after a failure no further chunk is taken.
template <class Body>
void parallel_for_taken_in_order(std::size_t chunks, std::size_t threads, Body&& body) {
  const std::size_t workers = worker_count(chunks, threads);
  if (workers <= 1) {
    for (std::size_t c = 0; c < chunks; ++c) body(c, std::size_t{0});
    return;
  }
  std::atomic<std::size_t> next{0};
  std::atomic<bool> failed{false};
  std::vector<std::exception_ptr> failure(chunks);
  const auto run = [&](std::size_t w) {
    while (!failed.load()) {
      const std::size_t c = next.fetch_add(1);
      if (c >= chunks) return;
      try {
        body(c, w);
      } catch (...) {
        failure[c] = std::current_exception();
        failed.store(true);
      }
    }
  };
  run_workers(workers, run, failure);
}

}  // namespace cylzone::detail
