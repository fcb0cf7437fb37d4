// The cividis colour map (Nuñez, Anderton & Renslow, "Optimizing colormaps with consideration for
// color vision deficiency to enable accurate interpretation of scientific data", PLOS ONE 13(7):
// e0199239, 2018): perceptually uniform (lightness rises linearly), readable with red-green colour
// vision deficiency, dark blue to yellow.
#pragma once

#include <array>
#include <cstdint>
#include <span>
#include <string>

namespace tessera {

struct Rgb {
  std::uint8_t r = 0, g = 0, b = 0;
};

// Anchor colours at t = i / 9, i = 0..9: the ten-step cividis table as published with the
// colour map (values from memory). Between anchors the map interpolates linearly in sRGB, which
// is also how an SVG gradient through the same stops is drawn.
std::span<const Rgb> cividis_anchors();

// Colour at t in [0, 1] (clamped).
Rgb cividis(double t);

// "#rrggbb".
std::string hex_colour(Rgb c);

}  // namespace tessera
