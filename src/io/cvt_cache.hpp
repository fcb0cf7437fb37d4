// On-disk cache of CVT centroids, keyed by everything that determines them, so a second run with
// the same descriptor box and settings skips the Lloyd iterations.
#pragma once

#include <filesystem>
#include <string>
#include <vector>

#include "core/archive/cvt.hpp"

namespace tessera {

// The cache folder: $TESSERA_CACHE_DIR, else $XDG_CACHE_HOME/tessera, else $HOME/.cache/tessera;
// empty when none of them is set.
std::filesystem::path cvt_cache_dir();

// The file that holds (or would hold) the centroids for these parameters; empty when there is no
// cache folder.
std::filesystem::path cvt_cache_path(const Bounds& bounds, const CvtSettings& settings);

// Centroids (row-major [K * D]) from the cache when a valid file is there, otherwise computed and
// stored (written to a temporary file, then renamed, so readers never see half a file). A missing,
// foreign or corrupt file is recomputed and replaced; an unwritable folder just means no caching.
// Cache trouble never throws; malformed bounds or settings throw std::invalid_argument.
// `note`, when given, receives one line saying what happened ("loaded ...", "computed ...").
std::vector<double> load_or_compute_cvt(const Bounds& bounds, const CvtSettings& settings,
                                        std::string* note = nullptr);

}  // namespace tessera
