// Linkage archives (problem `linkage`): the problem options stored in the archive's run file and
// the elites' dimensions, for `tessera export-linkage` and the report's coupler-path drawings.
// The kinematics come from the plugin's own header-only model, so that exported and drawn
// geometry is exactly what the search evaluated (the plugin ABI carries no geometry).
#pragma once

#include <cstddef>
#include <string>

#include "../../plugins/linkage/linkage_model.hpp"
#include "../../plugins/linkage/linkage_options.hpp"
#include "core/archive/snapshot.hpp"

namespace tessera {

inline constexpr const char* kLinkageProblem = "linkage";

// The kinematic checks are kinematic only; printed by every output that hands geometry on.
inline constexpr const char* kLinkageCaution =
    "caution: the transmission-angle and Grashof checks are kinematic only; loads, stresses, "
    "tolerances and the machine-safety standards that apply where the mechanism is used are the "
    "designer's to check";

bool is_linkage_archive(const ArchiveSnapshot& snapshot);

// The [problem.options] of the archive's stored run file, read as the plugin reads them.
// Throws InputError "LABEL: ..." when the archive is not a linkage archive, or when its genome
// size or stored options do not fit the linkage problem.
linkage::Options stored_linkage_options(const ArchiveSnapshot& snapshot, const std::string& label);

// The dimensions of elite `row` (0-based row of /elites).
linkage::Dimensions elite_dimensions(const ArchiveSnapshot& snapshot, std::size_t row);

}  // namespace tessera
