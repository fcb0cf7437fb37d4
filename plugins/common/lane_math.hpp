// Sine and cosine of two lanes at once, for the batch kernels of the shipped plugins and for the
// in-process models that must match them bit for bit. There is one fixed path per architecture,
// whatever the CPU's vector width, so a genome's result never depends on the machine's features:
// on x86-64, glibc's libmvec two-lane SSE variants (_ZGVbN2v_sin, _ZGVbN2v_cos; glibc runs its
// SSE4.1 code, on every x86-64 CPU made since about 2010, and its scalar sin/cos per lane on
// older ones); elsewhere std::sin / std::cos lane by lane. Every lane takes the same instructions,
// so a value gives the same result in either lane. libmvec comes with glibc's libm
// (Debian's libm.so names it), so no extra link flag is needed.
#pragma once

#include <cmath>

namespace tessera::lanes {

using Double2 = double __attribute__((vector_size(16)));

#if defined(__x86_64__) && defined(__GLIBC__)
extern "C" Double2 _ZGVbN2v_sin(Double2);
extern "C" Double2 _ZGVbN2v_cos(Double2);
inline Double2 sin2(Double2 x) {
  return _ZGVbN2v_sin(x);
}
inline Double2 cos2(Double2 x) {
  return _ZGVbN2v_cos(x);
}
inline constexpr const char* kPath = "x86-64 glibc libmvec, 2 lanes (SSE)";
#else
inline Double2 sin2(Double2 x) {
  return Double2{std::sin(x[0]), std::sin(x[1])};
}
inline Double2 cos2(Double2 x) {
  return Double2{std::cos(x[0]), std::cos(x[1])};
}
inline constexpr const char* kPath = "scalar std::sin/std::cos per lane";
#endif

// Two lanes from one value each.
inline Double2 pair(double a, double b) {
  return Double2{a, b};
}

}  // namespace tessera::lanes
