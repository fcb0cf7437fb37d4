// Sizes asked for by the command line or a run file, checked before anything is allocated or
// started: absurd thread counts, CVT builds larger than the memory this process may use, and
// output folders that could not take the archive. Each refusal is one line with the size it
// would need and what to change.
#pragma once

#include <cstddef>
#include <cstdint>
#include <string>

#include "core/archive/cvt.hpp"

namespace tessera::cli {

// Most worker threads a run may ask for; far above any machine's cores.
inline constexpr std::size_t kMaxThreads = 1024;
// Most uniform samples a CVT build may draw: 10^8 (1.6 GB in two dimensions) already takes a
// long time; beyond it a build is a mistake rather than a plan.
inline constexpr std::int64_t kMaxCvtSamples = 100000000;

// Bytes this process may still allocate: the smallest of physical memory, the address-space
// limit (ulimit -v) less what is mapped already, and the control group's memory.max.
std::uint64_t available_memory_bytes();

// Refuses a --threads value above kMaxThreads, then starts and joins that many threads so that
// a limit on threads or memory is met here, in one line, rather than deep inside the run.
void check_threads(std::size_t threads);

// Refuses a CVT build whose samples and centroids would not fit in the available memory; says
// on stderr when a build will be long (large and not in the cache). `source` names the run file.
void check_cvt_build(const CvtSettings& settings, std::size_t dimensions, bool cached,
                     const std::string& source);

// Bytes a CVT build holds at its peak: samples, their assignments, centroids and sums.
std::uint64_t cvt_build_bytes(const CvtSettings& settings, std::size_t dimensions);

// Refuses an output folder the archive could not be written to: not writable, or `archive`
// itself a folder (unless `archive` is empty). Checked before a search starts so no work is lost at
// the end.
void check_output_writable(const std::string& folder, const std::string& archive);

// Human-readable byte count ("1.6 GB").
std::string byte_size(double bytes);

}  // namespace tessera::cli
