// Command-line forms shared by query, front and report: intervals (--within NAME=LO:HI),
// objectives (--objective NAME:min|max), number lists (--target 0.1,0.2) and axis pairs (--axes
// NAME1,NAME2). Axes resolve against the archive's descriptor names; intervals and objectives
// against its descriptor names, then the extra figures its elites keep (format 2). Faults are
// tessera::InputError naming the archive or the option.
#pragma once

#include <string>
#include <vector>

#include "core/archive/snapshot.hpp"
#include "core/select/front.hpp"
#include "core/select/query.hpp"

namespace tessera::cli {

// "0.5,-1,2e-3" -> numbers; `option` names the option in messages.
std::vector<double> parse_number_list(const std::string& text, const std::string& option);

// Index of the descriptor called `name`; InputError "ARCHIVE: no descriptor named ..." otherwise.
std::size_t descriptor_index(const ArchiveSnapshot& snapshot, const std::string& archive,
                             const std::string& name, const std::string& option);

// A descriptor or, failing that, a stored extra figure called `name`.
struct FigureRef {
  std::size_t index = 0;
  bool extra = false;
};
FigureRef figure_index(const ArchiveSnapshot& snapshot, const std::string& archive,
                       const std::string& name, const std::string& option);

std::vector<DescriptorInterval> parse_within(const std::vector<std::string>& specs,
                                             const ArchiveSnapshot& snapshot,
                                             const std::string& archive);

struct NamedObjective {
  Objective objective;
  std::string name;  // "fitness", a descriptor or an extra figure name
};

// "fitness:max", "NAME:min"; the name "fitness" means the elite's fitness.
std::vector<NamedObjective> parse_objectives(const std::vector<std::string>& specs,
                                             const ArchiveSnapshot& snapshot,
                                             const std::string& archive);

// "NAME1,NAME2" -> two distinct descriptor indices.
std::vector<std::size_t> parse_axes(const std::string& spec, const ArchiveSnapshot& snapshot,
                                    const std::string& archive);

// Human description of a filter for messages, e.g. "--min-fitness -0.5, --within x=0:0.2".
std::string describe_filter(const EliteFilter& filter, const ArchiveSnapshot& snapshot);

}  // namespace tessera::cli
