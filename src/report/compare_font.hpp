// A 5x7 bitmap font for the text of the comparison charts' PNG files (the SVG files use the
// reader's fonts). Characters outside printable ASCII show as '?'.
#pragma once

#include <array>
#include <cstdint>

namespace tessera {

// Row 0 is the top; bit 4 of a row is its leftmost pixel.
std::array<std::uint8_t, 7> font_glyph(char c);

}  // namespace tessera
