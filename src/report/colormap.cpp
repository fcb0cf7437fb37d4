#include "report/colormap.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>

namespace tessera {
namespace {

// Cividis at ten evenly spaced points (Nuñez, Anderton & Renslow, PLOS ONE 2018; from memory).
// Their CIE L* values rise by 8.4-9.4 per step, the linear lightness the map was designed for.
constexpr std::array<Rgb, 10> kCividis = {{{0x00, 0x20, 0x4D},
                                           {0x00, 0x33, 0x6F},
                                           {0x39, 0x48, 0x6B},
                                           {0x57, 0x5C, 0x6D},
                                           {0x70, 0x71, 0x73},
                                           {0x8A, 0x87, 0x79},
                                           {0xA6, 0x9D, 0x75},
                                           {0xC4, 0xB5, 0x6C},
                                           {0xE4, 0xCF, 0x5B},
                                           {0xFF, 0xEA, 0x46}}};

}  // namespace

std::span<const Rgb> cividis_anchors() {
  return kCividis;
}

Rgb cividis(double t) {
  if (!(t > 0.0)) t = 0.0;  // also maps NaN to the start
  if (t > 1.0) t = 1.0;
  const double x = t * static_cast<double>(kCividis.size() - 1);
  const std::size_t i = std::min<std::size_t>(static_cast<std::size_t>(x), kCividis.size() - 2);
  const double f = x - static_cast<double>(i);
  const auto mix = [f](std::uint8_t a, std::uint8_t b) {
    return static_cast<std::uint8_t>(std::lround(a + (b - a) * f));
  };
  const Rgb& a = kCividis[i];
  const Rgb& b = kCividis[i + 1];
  return {mix(a.r, b.r), mix(a.g, b.g), mix(a.b, b.b)};
}

std::string hex_colour(Rgb c) {
  char buf[8];
  std::snprintf(buf, sizeof buf, "#%02x%02x%02x", c.r, c.g, c.b);
  return buf;
}

}  // namespace tessera
