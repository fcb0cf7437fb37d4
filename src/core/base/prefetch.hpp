// Cache hints for the serial insertion. A prefetch for writing asks for a line in exclusive
// state, so that a later store to a line another core has read does not wait for that core's
// copy to be invalidated (with two threads, most elites an insertion overwrites were just read
// as parents on the other core). x86-64's baseline instruction set has no such hint, and there
// GCC turns __builtin_prefetch(p, 1) into a read prefetch; PREFETCHW (CPUID 80000001h, ECX bit
// 8) is then issued directly where the CPU reports it. Hints never change a result.
#pragma once

#if defined(__x86_64__)
#include <cpuid.h>
#endif

namespace tessera {

#if defined(__x86_64__)
inline bool cpu_has_prefetchw() {
  unsigned a = 0, b = 0, c = 0, d = 0;
  return __get_cpuid(0x80000001u, &a, &b, &c, &d) != 0 && (c & (1u << 8)) != 0;
}
inline const bool kCpuHasPrefetchW = cpu_has_prefetchw();
#endif

inline void prefetch_for_write(const void* p) {
#if defined(__x86_64__)
  if (kCpuHasPrefetchW) {
    asm volatile("prefetchw %0" : : "m"(*static_cast<const char*>(p)));
    return;
  }
#endif
  __builtin_prefetch(p, 1);
}

}  // namespace tessera
