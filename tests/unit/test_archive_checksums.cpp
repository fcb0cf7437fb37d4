// Archives carry checksums so that damage is refused rather than read: Fletcher-32 on every
// dataset chunk (HDF5's filter, computed by tessera for the chunks it writes itself) and the
// 1.10 file format's metadata checksums (superblock version 2 or later).
#include <hdf5.h>
#include <catch2/catch.hpp>

#include <cstdint>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <numeric>
#include <random>
#include <string>
#include <vector>

#include "io/archive_file.hpp"
#include "io/fletcher32.hpp"
#include "support/sample_snapshot.hpp"

using namespace tessera;
using tessera::testing::sample_snapshot;

namespace {

std::string temp_file(const std::string& name) {
  const auto dir =
      std::filesystem::temp_directory_path() / ("tessera-checksums-" + std::to_string(::getpid()));
  std::filesystem::create_directories(dir);
  return (dir / name).string();
}

}  // namespace

TEST_CASE("Fletcher-32 equals libhdf5's filter", "[archive]") {
  // Trailers written by libhdf5 1.10.8's Fletcher-32 filter, read with h5py 3.7
  // (Dataset.id.read_direct_chunk) for uint8 datasets of one chunk.
  const std::vector<unsigned char> seven = {0, 1, 2, 3, 4, 5, 6};  // odd length
  CHECK(fletcher32(seven.data(), seven.size()) == 0x14170c09u);
  std::vector<unsigned char> long_run(1001);  // more than one 360-word block
  for (std::size_t i = 0; i < long_run.size(); ++i)
    long_run[i] = static_cast<unsigned char>(i * 37 % 256);
  CHECK(fletcher32(long_run.data(), long_run.size()) == 0x9f100dc9u);
}

// libhdf5's own checksum function (exported by libhdf5 1.10, declared in its private headers).
extern "C" std::uint32_t H5_checksum_fletcher32(const void* data, std::size_t len);

TEST_CASE("Fletcher-32 equals libhdf5's checksum function on any length and content", "[archive]") {
  // Reference: H5_checksum_fletcher32 of the linked libhdf5. All-0xff data drives the block
  // sums to their largest values (where a 32-bit sum may wrap); random bytes and every length
  // up to three blocks and a half cover the block folds and the odd last byte.
  std::mt19937_64 random(20261202);
  std::vector<unsigned char> data(4000);
  for (auto& b : data) b = static_cast<unsigned char>(random());
  const std::vector<unsigned char> ones(100000, 0xff);
  for (std::size_t n = 0; n <= 2600; ++n) {
    INFO("length " << n);
    REQUIRE(fletcher32(data.data(), n) == H5_checksum_fletcher32(data.data(), n));
    REQUIRE(fletcher32(ones.data(), n) == H5_checksum_fletcher32(ones.data(), n));
  }
  CHECK(fletcher32(ones.data(), ones.size()) == H5_checksum_fletcher32(ones.data(), ones.size()));
}

TEST_CASE("archives carry dataset and metadata checksums", "[archive]") {
  const std::string path = temp_file("sums.h5");
  write_archive_file(path, sample_snapshot({.elites = 3000, .genome = 30}));
  const hid_t file = H5Fopen(path.c_str(), H5F_ACC_RDONLY, H5P_DEFAULT);
  REQUIRE(file >= 0);
  H5F_info2_t info;
  REQUIRE(H5Fget_info2(file, &info) >= 0);
  CHECK(info.super.version >= 2);  // versions 2 and 3 checksum the superblock and what follows
  for (const char* name : {"/elites/genome", "/elites/fitness", "/history/evaluations"}) {
    INFO(name);
    const hid_t ds = H5Dopen2(file, name, H5P_DEFAULT);
    const hid_t props = H5Dget_create_plist(ds);
    bool fletcher = false;
    for (int i = 0; i < H5Pget_nfilters(props); ++i) {
      unsigned flags = 0, config = 0, values[8];
      std::size_t count = 8;
      fletcher = fletcher || H5Pget_filter2(props, static_cast<unsigned>(i), &flags, &count, values,
                                            0, nullptr, &config) == H5Z_FILTER_FLETCHER32;
    }
    CHECK(fletcher);
    H5Pclose(props);
    H5Dclose(ds);
  }
  H5Fclose(file);
  std::filesystem::remove(path);
}

TEST_CASE("a damaged chunk is refused by its checksum", "[archive]") {
  const std::string path = temp_file("flip.h5");
  write_archive_file(path, sample_snapshot({.elites = 3000, .genome = 30}));
  haddr_t address = 0;
  hsize_t size = 0;
  {
    const hid_t file = H5Fopen(path.c_str(), H5F_ACC_RDONLY, H5P_DEFAULT);
    const hid_t ds = H5Dopen2(file, "/elites/genome", H5P_DEFAULT);
    const hsize_t origin[2] = {0, 0};
    unsigned mask = 0;
    REQUIRE(H5Dget_chunk_info_by_coord(ds, origin, &mask, &address, &size) >= 0);
    H5Dclose(ds);
    H5Fclose(file);
  }
  REQUIRE(size > 16);
  {
    // Flip one bit inside the stored data, away from the chunk's Fletcher-32 trailer.
    std::fstream f(path, std::ios::in | std::ios::out | std::ios::binary);
    f.seekg(static_cast<std::streamoff>(address + size / 2));
    char byte = 0;
    f.read(&byte, 1);
    byte = static_cast<char>(byte ^ 0x10);
    f.seekp(static_cast<std::streamoff>(address + size / 2));
    f.write(&byte, 1);
  }
  try {
    read_archive_file(path);
    FAIL("the damaged archive was read");
  } catch (const std::exception& e) {
    CHECK_THAT(std::string(e.what()), Catch::Contains("Fletcher-32"));
  }
  std::filesystem::remove(path);
}
