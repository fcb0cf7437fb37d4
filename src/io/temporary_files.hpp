// Temporary files of writers that write a whole file beside its target and rename it into place.
// Their names say whose they are (machine and process), so that the next writer of the same
// target can remove those of a writer killed mid-write (kill -9, power cut).
#pragma once

#include <filesystem>
#include <string>

namespace tessera {

// ".NAME.tmp-HOST-" for the target NAME: the start of every writer's temporary name.
std::string temporary_prefix(const std::filesystem::path& target);

// The temporary name of `target` for this process: folder / (prefix + process id).
std::filesystem::path temporary_path(const std::filesystem::path& target);

// Removes the temporaries of `target` left by processes of this machine that are gone.
void remove_stale_temporaries(const std::filesystem::path& target);

}  // namespace tessera
