// libFuzzer target: the arena plugin's layout-file parser.
#include <cstddef>
#include <cstdint>
#include <stdexcept>
#include <string>

#include "arena/arena_layout.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::string text(reinterpret_cast<const char*>(data), size);
  try {
    tessera::arena::parse_layout(text, "fuzz.layout");
  } catch (const tessera::arena::LayoutError&) {
  }
  return 0;
}
