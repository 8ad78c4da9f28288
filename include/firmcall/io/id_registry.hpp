// Ids seen so far in a streamed book, for the duplicate-id rule (the later of two rows with the
// same id is invalid) in memory that does not hold the ids themselves.
#pragma once

#include <sys/mman.h>

#include <algorithm>
#include <cstddef>
#include <cstdint>
#include <cstdlib>
#include <new>
#include <string_view>

namespace firmcall {

// Ids seen so far, as 64-bit hashes with the line of first appearance (open addressing, linear
// probing, at most 80% full). A hash collision between two different ids (probability ~ n^2 / 2^65)
// would be reported as a duplicate.
class IdRegistry {
 public:
  IdRegistry() = default;
  ~IdRegistry() { release(slots_, size_); }
  IdRegistry(const IdRegistry&) = delete;
  IdRegistry& operator=(const IdRegistry&) = delete;

  /// 64-bit hash of an id (FNV-1a with a final mix).
  static std::uint64_t hash(std::string_view s) noexcept {
    std::uint64_t h = 1469598103934665603ULL;
    for (char c : s) {
      h ^= static_cast<unsigned char>(c);
      h *= 1099511628211ULL;
    }
    h ^= h >> 33;
    h *= 0xff51afd7ed558ccdULL;
    h ^= h >> 33;
    return h;
  }

  /// Makes room for `more` ids without growing in between (so prefetching stays valid).
  void reserve(std::size_t more) {
    if ((count_ + more) * 5 > size_ * 4) rehash(std::max<std::size_t>(1024, (count_ + more) * 5 / 4 + 1));
  }
  /// Hints the cache that the slot of hash h will be probed soon.
  void prefetch(std::uint64_t h) const noexcept {
    if (size_ != 0) __builtin_prefetch(&slots_[home(h)]);
  }

  /// Returns 0 if the id with hash h is new, else the line where it was first seen.
  std::size_t insert(std::uint64_t h, std::size_t line) {
    if ((count_ + 1) * 5 > size_ * 4) rehash(std::max<std::size_t>(1024, size_ * 2));
    std::size_t i = home(h);
    while (slots_[i].line != 0) {
      if (slots_[i].hash == h) return slots_[i].line;
      if (++i == size_) i = 0;
    }
    slots_[i] = {h, line};
    ++count_;
    return 0;
  }

 private:
  struct Slot {
    std::uint64_t hash;
    std::size_t line;  // 0: empty
  };
  static constexpr std::size_t kMapBytes = std::size_t{4} << 20;  // larger tables are mapped directly

  // The slot a hash starts from: the high bits of h * size (no power-of-two size needed).
  std::size_t home(std::uint64_t h) const noexcept {
    __extension__ typedef unsigned __int128 u128;
    return static_cast<std::size_t>((static_cast<u128>(h) * size_) >> 64);
  }
  // All-zero slots are empty. A large table is mapped from the system (zero pages, touched as ids
  // arrive) and asks for huge pages: first touches of fresh memory are what it costs.
  static Slot* allocate(std::size_t n) {
    const std::size_t bytes = n * sizeof(Slot);
    if (bytes < kMapBytes) {
      void* p = std::calloc(n, sizeof(Slot));
      if (p == nullptr) throw std::bad_alloc();
      return static_cast<Slot*>(p);
    }
    void* p = ::mmap(nullptr, bytes, PROT_READ | PROT_WRITE, MAP_PRIVATE | MAP_ANONYMOUS, -1, 0);
    if (p == MAP_FAILED) throw std::bad_alloc();
#ifdef MADV_HUGEPAGE
    ::madvise(p, bytes, MADV_HUGEPAGE);  // a hint; without it the table still works
#endif
    return static_cast<Slot*>(p);
  }
  static void release(Slot* p, std::size_t n) noexcept {
    if (p == nullptr) return;
    if (n * sizeof(Slot) < kMapBytes) {
      std::free(p);
    } else {
      ::munmap(p, n * sizeof(Slot));
    }
  }
  void rehash(std::size_t size) {
    Slot* const old = slots_;
    const std::size_t old_size = size_;
    slots_ = allocate(size);
    size_ = size;
    for (std::size_t k = 0; k < old_size; ++k) {
      const Slot& s = old[k];
      if (s.line == 0) continue;
      std::size_t i = home(s.hash);
      while (slots_[i].line != 0) {
        if (++i == size_) i = 0;
      }
      slots_[i] = s;
    }
    release(old, old_size);
  }
  Slot* slots_ = nullptr;
  std::size_t size_ = 0;
  std::size_t count_ = 0;
};

}  // namespace firmcall
