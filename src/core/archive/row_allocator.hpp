// Allocator for the archive's row storage: large blocks are asked to be backed by transparent
// huge pages (Linux madvise; a hint that the kernel may ignore), because parent selection and
// insertion read rows at random across the whole archive, and with 4 KiB pages nearly every such
// read of a large archive also misses the TLB. Small blocks come from the ordinary allocator.
#pragma once

#include <sys/mman.h>

#include <cstddef>
#include <cstdlib>
#include <new>

namespace tessera {

template <class T>
struct RowAllocator {
  using value_type = T;

  RowAllocator() = default;
  template <class U>
  RowAllocator(const RowAllocator<U>&) {}

  // Blocks from this size on are aligned to and advised as huge pages (2 MiB on x86-64).
  static constexpr std::size_t kHugePage = std::size_t{2} << 20;

  T* allocate(std::size_t n) {
    const std::size_t bytes = n * sizeof(T);
    if (bytes < kHugePage) return std::allocator<T>().allocate(n);
    const std::size_t rounded = (bytes + kHugePage - 1) / kHugePage * kHugePage;
    void* p = std::aligned_alloc(kHugePage, rounded);
    if (p == nullptr) throw std::bad_alloc();
    ::madvise(p, rounded, MADV_HUGEPAGE);
    return static_cast<T*>(p);
  }
  void deallocate(T* p, std::size_t n) {
    if (n * sizeof(T) < kHugePage)
      std::allocator<T>().deallocate(p, n);
    else
      std::free(p);
  }
  template <class U>
  bool operator==(const RowAllocator<U>&) const {
    return true;
  }
};

}  // namespace tessera
