// The one parallel loop of the library (src/detail/parallel.hpp).
//
// Reference: the plain serial loop over the same chunks (the helper's contract is to be
// indistinguishable from it in every result and in the exception it throws).

#include <catch2/catch.hpp>

#include <atomic>
#include <cmath>
#include <stdexcept>
#include <string>
#include <vector>

#include "detail/parallel.hpp"

using cylzone::detail::parallel_for;
using cylzone::detail::worker_count;

TEST_CASE("parallel_for visits every chunk once, on at most `threads` workers", "[parallel]") {
  for (const std::size_t chunks : {0u, 1u, 2u, 5u, 64u, 1000u})
    for (const std::size_t threads : {1u, 2u, 3u, 8u}) {
      INFO(chunks << " chunks, " << threads << " threads");
      std::vector<std::atomic<int>> visits(chunks);
      std::atomic<std::size_t> largest_worker{0};
      parallel_for(chunks, threads, [&](std::size_t c, std::size_t w) {
        ++visits[c];
        std::size_t seen = largest_worker.load();
        while (w > seen && !largest_worker.compare_exchange_weak(seen, w)) {
        }
      });
      for (std::size_t c = 0; c < chunks; ++c) REQUIRE(visits[c] == 1);
      CHECK(largest_worker < worker_count(chunks, threads));
      CHECK(worker_count(chunks, threads) <= std::max<std::size_t>(1, threads));
    }
}

TEST_CASE("chunk results reduced in chunk order are the serial loop's bits", "[parallel]") {
  // Terms of very different size: the sum depends on the order of the additions.
  const std::size_t n = 100000, per = 1000, chunks = n / per;
  std::vector<double> terms(n);
  for (std::size_t i = 0; i < n; ++i) terms[i] = std::pow(-1.3, static_cast<double>(i % 37)) / (1.0 + i);
  const auto sum_with = [&](std::size_t threads) {
    std::vector<double> partial(chunks, 0.0);
    parallel_for(chunks, threads, [&](std::size_t c, std::size_t) {
      for (std::size_t i = c * per; i < (c + 1) * per; ++i) partial[c] += terms[i];
    });
    double total = 0.0;
    for (double p : partial) total += p;
    return total;
  };
  const double serial = sum_with(1);
  for (const std::size_t threads : {2u, 3u, 7u}) CHECK(sum_with(threads) == serial);
}

TEST_CASE("parallel_for rethrows the lowest failing chunk's exception, as the serial loop",
          "[parallel]") {
  for (const std::size_t threads : {1u, 2u, 4u}) {
    INFO(threads << " threads");
    try {
      parallel_for(12, threads, [](std::size_t c, std::size_t) {
        if (c == 7 || c == 3 || c == 10) throw std::runtime_error(std::to_string(c));
      });
      FAIL("no exception");
    } catch (const std::runtime_error& e) {
      CHECK(std::string(e.what()) == "3");
    }
  }
}

using cylzone::detail::parallel_for_taken_in_order;

TEST_CASE("parallel_for_taken_in_order visits every chunk once; its slots are the serial bits",
          "[parallel]") {
  // Reference: the serial loop over the same chunks, each chunk's result in its own slot.
  for (const std::size_t chunks : {0u, 1u, 2u, 9u, 200u})
    for (const std::size_t threads : {1u, 2u, 3u, 8u}) {
      INFO(chunks << " chunks, " << threads << " threads");
      std::vector<std::atomic<int>> visits(chunks);
      std::vector<double> slot(chunks, 0.0), serial(chunks, 0.0);
      const auto work = [](std::size_t c) {
        double s = 0.0;
        for (std::size_t i = 0; i < 50 * (c % 7 + 1); ++i) s += std::sin(static_cast<double>(c + i));
        return s;
      };
      std::atomic<std::size_t> largest_worker{0};
      parallel_for_taken_in_order(chunks, threads, [&](std::size_t c, std::size_t w) {
        ++visits[c];
        slot[c] = work(c);
        std::size_t seen = largest_worker.load();
        while (w > seen && !largest_worker.compare_exchange_weak(seen, w)) {
        }
      });
      for (std::size_t c = 0; c < chunks; ++c) serial[c] = work(c);
      for (std::size_t c = 0; c < chunks; ++c) {
        REQUIRE(visits[c] == 1);
        CHECK(slot[c] == serial[c]);
      }
      CHECK(largest_worker < worker_count(chunks, threads));
    }
}

TEST_CASE("parallel_for_taken_in_order rethrows the lowest failing chunk's exception",
          "[parallel]") {
  // Reference: the serial loop throws at chunk 3 first. With threads, chunk 10 may fail before
  // the slow chunk 3 does; 3 is still the one rethrown.
  for (const std::size_t threads : {1u, 2u, 4u}) {
    INFO(threads << " threads");
    try {
      parallel_for_taken_in_order(12, threads, [](std::size_t c, std::size_t) {
        if (c == 3) {
          volatile double s = 0.0;
          for (int i = 0; i < 2000000; ++i) s = s + 1.0;
        }
        if (c == 7 || c == 3 || c == 10) throw std::runtime_error(std::to_string(c));
      });
      FAIL("no exception");
    } catch (const std::runtime_error& e) {
      CHECK(std::string(e.what()) == "3");
    }
  }
}
