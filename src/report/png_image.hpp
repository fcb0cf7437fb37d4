// RGB images and their PNG encoding (PNG specification, W3C / ISO/IEC 15948): 8-bit truecolour,
// no interlace, filter 0 on every row, one zlib-compressed IDAT chunk.
#pragma once

#include <cstddef>
#include <cstdint>
#include <vector>

#include "report/colormap.hpp"

namespace tessera {

struct RgbImage {
  std::size_t width = 0;
  std::size_t height = 0;
  std::vector<std::uint8_t> pixels;  // [height * width * 3], top row first

  RgbImage() = default;
  RgbImage(std::size_t w, std::size_t h, Rgb fill);
  void set(std::size_t x, std::size_t y, Rgb c);
  Rgb at(std::size_t x, std::size_t y) const;
};

// The bytes of a PNG file holding the image.
std::vector<std::uint8_t> encode_png(const RgbImage& image);

}  // namespace tessera
