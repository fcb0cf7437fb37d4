#include "report/png_image.hpp"

#include <zlib.h>

#include <stdexcept>
#include <string>

namespace tessera {

RgbImage::RgbImage(std::size_t w, std::size_t h, Rgb fill) : width(w), height(h) {
  pixels.resize(w * h * 3);
  for (std::size_t i = 0; i < w * h; ++i) {
    pixels[3 * i] = fill.r;
    pixels[3 * i + 1] = fill.g;
    pixels[3 * i + 2] = fill.b;
  }
}

void RgbImage::set(std::size_t x, std::size_t y, Rgb c) {
  std::uint8_t* p = &pixels[(y * width + x) * 3];
  p[0] = c.r;
  p[1] = c.g;
  p[2] = c.b;
}

Rgb RgbImage::at(std::size_t x, std::size_t y) const {
  const std::uint8_t* p = &pixels[(y * width + x) * 3];
  return {p[0], p[1], p[2]};
}

namespace {

void put_u32(std::vector<std::uint8_t>& out, std::uint32_t v) {
  for (int shift = 24; shift >= 0; shift -= 8) out.push_back(static_cast<std::uint8_t>(v >> shift));
}

// Length, type, data, and the CRC-32 of type and data (PNG spec, section 5.3).
void put_chunk(std::vector<std::uint8_t>& out, const char* type,
               const std::vector<std::uint8_t>& data) {
  put_u32(out, static_cast<std::uint32_t>(data.size()));
  const std::size_t start = out.size();
  out.insert(out.end(), type, type + 4);
  out.insert(out.end(), data.begin(), data.end());
  const uLong crc = crc32(0L, out.data() + start, static_cast<uInt>(out.size() - start));
  put_u32(out, static_cast<std::uint32_t>(crc));
}

}  // namespace

std::vector<std::uint8_t> encode_png(const RgbImage& image) {
  if (image.width == 0 || image.height == 0 || image.width > 0x7fffffff ||
      image.height > 0x7fffffff || image.pixels.size() != image.width * image.height * 3)
    throw std::invalid_argument("png: bad image size");
  // Each scanline: filter type 0 (None), then the row's bytes.
  const std::size_t row = image.width * 3;
  std::vector<std::uint8_t> raw;
  raw.reserve((row + 1) * image.height);
  for (std::size_t y = 0; y < image.height; ++y) {
    raw.push_back(0);
    raw.insert(raw.end(), image.pixels.begin() + y * row, image.pixels.begin() + (y + 1) * row);
  }
  uLongf packed_size = compressBound(static_cast<uLong>(raw.size()));
  std::vector<std::uint8_t> packed(packed_size);
  if (compress2(packed.data(), &packed_size, raw.data(), static_cast<uLong>(raw.size()), 9) != Z_OK)
    throw std::runtime_error("png: zlib compression failed");
  packed.resize(packed_size);

  std::vector<std::uint8_t> out = {0x89, 'P', 'N', 'G', '\r', '\n', 0x1a, '\n'};
  std::vector<std::uint8_t> header;
  put_u32(header, static_cast<std::uint32_t>(image.width));
  put_u32(header, static_cast<std::uint32_t>(image.height));
  header.insert(header.end(),
                {8, 2, 0, 0, 0});  // depth 8, truecolour, deflate, filter 0, no interlace
  put_chunk(out, "IHDR", header);
  put_chunk(out, "IDAT", packed);
  put_chunk(out, "IEND", {});
  return out;
}

}  // namespace tessera
