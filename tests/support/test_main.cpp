// Test runner. Replaces the global allocation functions with counting versions so that tests can
// assert that the numerical hot path allocates nothing (as Ceres' tiny_solver_test does with
// EIGEN_RUNTIME_NO_MALLOC).
// GCC flags free() on memory from the replaced operator new below; they are a matched pair here.
#pragma GCC diagnostic ignored "-Wmismatched-new-delete"
#define DOCTEST_CONFIG_IMPLEMENT_WITH_MAIN
#include <doctest/doctest.h>

#include <atomic>
#include <cstdlib>
#include <new>

#include "test_util.hpp"

namespace firmcall::testing {
std::atomic<long> g_allocations{0};
}

void* operator new(std::size_t n) {
  firmcall::testing::g_allocations.fetch_add(1, std::memory_order_relaxed);
  if (void* p = std::malloc(n == 0 ? 1 : n)) return p;
  throw std::bad_alloc();
}
void operator delete(void* p) noexcept {
  std::free(p);
}
void operator delete(void* p, std::size_t) noexcept {
  std::free(p);
}
// The nothrow form (used by std::stable_sort's temporary buffer) must come from the same heap.
void* operator new(std::size_t n, const std::nothrow_t&) noexcept {
  firmcall::testing::g_allocations.fetch_add(1, std::memory_order_relaxed);
  return std::malloc(n == 0 ? 1 : n);
}
void operator delete(void* p, const std::nothrow_t&) noexcept {
  std::free(p);
}
