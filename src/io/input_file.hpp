// Reading a user's input file (run file, study file) whole, refused in one line before opening
// when it is missing, a folder (reads as empty text) or not a regular file (a named pipe blocks).
#pragma once

#include <string>

namespace tessera {

// The text of `path`; `kind` names the file in messages ("run file", "study file").
// Throws InputError naming the path and the fault.
std::string read_input_file(const std::string& path, const std::string& kind);

}  // namespace tessera
