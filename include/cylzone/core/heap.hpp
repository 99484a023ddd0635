#pragma once
/// \file heap.hpp
/// The allocator setting a program that evaluates dense scans should make once, at the start
/// of main(): the library itself changes no process-wide state.

namespace cylzone {

/// Lets every thread allocate from one malloc arena (glibc mallopt M_ARENA_MAX = 1). glibc
/// gives each thread that allocates an arena of its own by default, and an array freed in one
/// arena is not reused by a thread allocating in another; the evaluation's threads allocate
/// and free arrays of one value per point (a dense bore's in-frame copy, its fits' distances),
/// so each arena grows to its own peak. With one arena they reuse each other's freed arrays:
/// a 5,000,000-point scan checked in the full profile on two threads peaked at 351 MB resident
/// with the default and 296 MB with one arena (bench_scan; docs/methods.md, "Cost and memory of a large scan"). The evaluation
/// allocates a few large arrays, not many small ones, so the shared arena's lock costs
/// nothing measurable. Call before any thread is started. Returns false, changing nothing,
/// where the C library is not glibc.
bool share_one_heap_arena() noexcept;

}  // namespace cylzone
