// Archive files (docs/archive-format.md): bit-exact round trips, every bad-file case refused with
// one line naming the file and the fault, and writes that never damage the previous file.
// Damaged files are made with the HDF5 C++ library itself (the reference implementation of the
// format, libhdf5 from Debian).
#include <catch2/catch.hpp>

#include <H5Cpp.h>
#include <signal.h>
#include <stdlib.h>
#include <sys/resource.h>
#include <sys/wait.h>
#include <unistd.h>

#include <chrono>
#include <cmath>
#include <cstdint>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <iterator>
#include <numbers>
#include <random>
#include <set>
#include <string>
#include <thread>
#include <vector>

#include "core/base/errors.hpp"
#include "io/archive_file.hpp"
#include "io/global_heap_check.hpp"
#include "support/sample_snapshot.hpp"

using namespace tessera;
using tessera::testing::sample_snapshot;
using tessera::testing::SampleOptions;
namespace fs = std::filesystem;

namespace {

struct TempDir {
  fs::path path;
  TempDir() {
    char name[] = "/tmp/tessera-archive-XXXXXX";
    REQUIRE(::mkdtemp(name) != nullptr);
    path = name;
  }
  ~TempDir() {
    std::error_code ec;
    fs::permissions(path, fs::perms::owner_all, ec);
    fs::remove_all(path, ec);
  }
  std::string file(const std::string& name) const { return (path / name).string(); }
  std::set<std::string> listing() const {
    std::set<std::string> names;
    for (const auto& e : fs::directory_iterator(path)) names.insert(e.path().filename().string());
    return names;
  }
};

// Bitwise equality: a round trip must not even turn -0.0 into 0.0.
bool same_bits(const std::vector<double>& a, const std::vector<double>& b) {
  return a.size() == b.size() &&
         (a.empty() || std::memcmp(a.data(), b.data(), a.size() * sizeof(double)) == 0);
}

bool same_bits(double a, double b) {
  return std::memcmp(&a, &b, sizeof a) == 0;
}

void require_equal(const ArchiveSnapshot& a, const ArchiveSnapshot& b) {
  CHECK(a.problem == b.problem);
  CHECK(a.config == b.config);
  CHECK(a.seed == b.seed);
  CHECK(a.evaluations == b.evaluations);
  CHECK(a.tool_version == b.tool_version);
  CHECK(a.space_kind == b.space_kind);
  CHECK(same_bits(a.descriptor_bounds.lower, b.descriptor_bounds.lower));
  CHECK(same_bits(a.descriptor_bounds.upper, b.descriptor_bounds.upper));
  CHECK(a.descriptor_names == b.descriptor_names);
  CHECK(a.resolution == b.resolution);
  CHECK(same_bits(a.centroids, b.centroids));
  CHECK(same_bits(a.genome_bounds.lower, b.genome_bounds.lower));
  CHECK(same_bits(a.genome_bounds.upper, b.genome_bounds.upper));
  CHECK(a.cell == b.cell);  // same order: the order is engine state
  CHECK(same_bits(a.genome, b.genome));
  CHECK(same_bits(a.descriptor, b.descriptor));
  CHECK(same_bits(a.fitness, b.fitness));
  CHECK(a.birth == b.birth);
  CHECK(a.extra_names == b.extra_names);
  CHECK(same_bits(a.extras, b.extras));  // NaN, infinities and -0.0 included
  REQUIRE(a.novelty_archive.has_value() == b.novelty_archive.has_value());
  if (a.novelty_archive) {
    CHECK(same_bits(a.novelty_archive->genome, b.novelty_archive->genome));
    CHECK(same_bits(a.novelty_archive->descriptor, b.novelty_archive->descriptor));
    CHECK(same_bits(a.novelty_archive->fitness, b.novelty_archive->fitness));
    CHECK(a.novelty_archive->birth == b.novelty_archive->birth);
  }
  REQUIRE(a.history.size() == b.history.size());
  for (std::size_t t = 0; t < a.history.size(); ++t) {
    CHECK(a.history[t].evaluations == b.history[t].evaluations);
    CHECK(same_bits(a.history[t].coverage, b.history[t].coverage));
    CHECK(same_bits(a.history[t].qd_score, b.history[t].qd_score));
    CHECK(same_bits(a.history[t].max_fitness, b.history[t].max_fitness));
  }
  CHECK(same_bits(a.fitness_floor, b.fitness_floor));
  REQUIRE(a.resume.has_value() == b.resume.has_value());
  if (a.resume) {
    CHECK(a.resume->algorithm == b.resume->algorithm);
    CHECK(a.resume->next_batch == b.resume->next_batch);
    CHECK(a.resume->counters == b.resume->counters);
    REQUIRE(a.resume->arrays.size() == b.resume->arrays.size());
    for (const auto& [name, values] : a.resume->arrays) {
      REQUIRE(b.resume->arrays.count(name) == 1);
      CHECK(same_bits(values, b.resume->arrays.at(name)));
    }
  }
}

// Reading `path` must fail with exactly one line "PATH: ..." that contains `fault`.
void require_refused(const std::string& path, const std::string& fault) {
  try {
    read_archive_file(path);
    FAIL("read_archive_file accepted " << path << " (expected: " << fault << ")");
  } catch (const InputError& e) {
    const std::string message = e.what();
    INFO(message);
    CHECK(message.rfind(path + ": ", 0) == 0);
    CHECK(message.find(fault) != std::string::npos);
    CHECK(message.find('\n') == std::string::npos);
  }
}

std::vector<char> file_bytes(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  return {std::istreambuf_iterator<char>(in), std::istreambuf_iterator<char>()};
}

// Replaces dataset `name` of an archive by `values` reshaped to `dims` (damage on purpose).
template <class T>
void replace_dataset(const std::string& path, const std::string& name, const std::vector<T>& values,
                     std::vector<hsize_t> dims, const H5::PredType& type) {
  H5::H5File file(path, H5F_ACC_RDWR);
  file.unlink(name);
  H5::DataSpace space(static_cast<int>(dims.size()), dims.data());
  H5::DataSet ds = file.createDataSet(name, type, space);
  if (!values.empty()) ds.write(values.data(), type);
}

void replace_doubles(const std::string& path, const std::string& name,
                     const std::vector<double>& values, std::vector<hsize_t> dims) {
  replace_dataset(path, name, values, std::move(dims), H5::PredType::NATIVE_DOUBLE);
}

}  // namespace

TEST_CASE("grid, cvt and unstructured archives round-trip bit for bit", "[archive_file]") {
  H5::Exception::dontPrint();
  TempDir dir;
  for (const char* kind : {"grid", "cvt", "unstructured"}) {
    for (bool resume : {true, false}) {
      SECTION(std::string(kind) + (resume ? " with resume state" : " without resume state")) {
        SampleOptions o;
        o.kind = kind;
        o.resume = resume;
        o.elites = 137;
        o.extras = resume ? 3 : 0;  // with and without extra figures
        o.novelty_archive = resume ? 0 : 23;
        const ArchiveSnapshot original = sample_snapshot(o);
        const std::string path = dir.file(std::string(kind) + ".h5");
        write_archive_file(path, original);
        const ArchiveSnapshot back = read_archive_file(path);
        require_equal(original, back);
        // Only the archive itself remains: the temporary file was renamed away.
        CHECK(dir.listing() == std::set<std::string>{std::string(kind) + ".h5"});
      }
    }
  }
}

TEST_CASE("an archive with no elites and no history is written and read", "[archive_file]") {
  TempDir dir;
  for (const char* kind : {"grid", "cvt", "unstructured"}) {
    SampleOptions o;
    o.kind = kind;
    o.elites = 0;
    o.history = 0;
    const ArchiveSnapshot original = sample_snapshot(o);
    const std::string path = dir.file("empty.h5");
    write_archive_file(path, original);
    const ArchiveSnapshot back = read_archive_file(path);
    CHECK(back.elite_count() == 0);
    CHECK(back.history.empty());
    require_equal(original, back);
  }
}

TEST_CASE("format 2 is written: extras, their names and the fitness floor", "[archive_file]") {
  H5::Exception::dontPrint();
  TempDir dir;
  const std::string path = dir.file("a.h5");
  SampleOptions o;
  o.elites = 40;
  o.extras = 4;
  o.novelty_archive = 9;
  write_archive_file(path, sample_snapshot(o));
  H5::H5File file(path, H5F_ACC_RDONLY);
  std::int64_t version = 0;
  file.openAttribute("format_version").read(H5::PredType::NATIVE_INT64, &version);
  CHECK(version == 2);
  const H5::DataSet extras = file.openDataSet("/elites/extras");
  CHECK(extras.getDataType() == H5::PredType::IEEE_F64LE);
  hsize_t dims[2] = {0, 0};
  REQUIRE(extras.getSpace().getSimpleExtentNdims() == 2);
  extras.getSpace().getSimpleExtentDims(dims);
  CHECK(dims[0] == 40);
  CHECK(dims[1] == 4);
  const H5::StrType names = file.openDataSet("/elites/extra_names").getStrType();
  CHECK(names.isVariableStr());
  CHECK(names.getCset() == H5T_CSET_UTF8);
  const H5::Group history = file.openGroup("/history");
  CHECK(history.attrExists("fitness_floor"));
  CHECK_FALSE(history.attrExists("qd_offset"));
  CHECK(file.openDataSet("/novelty_archive/genome").getDataType() == H5::PredType::IEEE_F64LE);
  CHECK(file.openDataSet("/novelty_archive/birth").getDataType() == H5::PredType::STD_U64LE);
}

TEST_CASE("format 1 files written before format 2 are still read", "[archive_file]") {
  // Fixtures written by the format 1 writer (tests/fixtures/archives/README.md): an arm run on a
  // grid and on a CVT, and a novelty-search run in the open arena.
  const std::string folder = std::string(TESSERA_SOURCE_DIR) + "/tests/fixtures/archives/";
  for (const char* name : {"format1-arm-grid.h5", "format1-arm-cvt.h5"}) {
    const ArchiveSnapshot s = read_archive_file(folder + name);
    CHECK(s.format_version == 1);
    CHECK(s.problem == "arm");
    CHECK(s.extra_names.empty());
    CHECK(s.extras.empty());
    CHECK_FALSE(s.novelty_archive.has_value());
    // The arm's lowest fitness, minus the largest variance of angles in [-pi, pi]: -pi^2,
    // read from the format 1 attribute qd_offset.
    CHECK(s.fitness_floor == -std::numbers::pi * std::numbers::pi);
    CHECK(s.elite_count() > 0);
  }
  const ArchiveSnapshot novelty = read_archive_file(folder + "format1-arena-novelty.h5");
  CHECK(novelty.format_version == 1);
  CHECK(novelty.space_kind == "unstructured");
  CHECK_FALSE(novelty.novelty_archive.has_value());
  REQUIRE(novelty.resume.has_value());
  CHECK(novelty.resume->arrays.count("reference_cell") == 1);
}

TEST_CASE("the datasets have the format 1 types and are chunked, compressed when asked",
          "[archive_file]") {
  H5::Exception::dontPrint();
  TempDir dir;
  const std::string path = dir.file("a.h5");
  write_archive_file(path, sample_snapshot({}));
  H5::H5File file(path, H5F_ACC_RDONLY);
  const auto type_of = [&](const char* name) { return file.openDataSet(name).getDataType(); };
  CHECK(type_of("/elites/cell") == H5::PredType::STD_I64LE);
  CHECK(type_of("/elites/birth") == H5::PredType::STD_U64LE);
  CHECK(type_of("/elites/genome") == H5::PredType::IEEE_F64LE);
  CHECK(type_of("/space/resolution") == H5::PredType::STD_I64LE);
  CHECK(type_of("/history/evaluations") == H5::PredType::STD_U64LE);
  const H5::StrType names = file.openDataSet("/space/names").getStrType();
  CHECK(names.isVariableStr());
  CHECK(names.getCset() == H5T_CSET_UTF8);
  const H5::StrType format = file.openAttribute("format").getStrType();
  CHECK(format.isVariableStr());
  CHECK(format.getCset() == H5T_CSET_UTF8);
  CHECK(file.openAttribute("seed").getDataType() == H5::PredType::STD_U64LE);
  CHECK_FALSE(file.nameExists("/space/centroids"));  // grid only has resolution
  // The filter pipelines of docs/archive-format.md: Fletcher-32 alone by default, shuffle +
  // deflate + Fletcher-32 when compressed; strings always shuffle + deflate.
  const auto filters = [](const H5::DataSet& ds) {
    const H5::DSetCreatPropList props = ds.getCreatePlist();
    CHECK(props.getLayout() == H5D_CHUNKED);
    std::vector<H5Z_filter_t> ids;
    for (int i = 0; i < props.getNfilters(); ++i) {
      unsigned flags = 0, config = 0;
      std::size_t n = 0;
      char name[32];
      ids.push_back(props.getFilter(i, flags, n, nullptr, sizeof name, name, config));
    }
    return ids;
  };
  const std::vector<H5Z_filter_t> stored = {H5Z_FILTER_FLETCHER32};
  const std::vector<H5Z_filter_t> packed = {H5Z_FILTER_SHUFFLE, H5Z_FILTER_DEFLATE,
                                            H5Z_FILTER_FLETCHER32};
  const std::vector<H5Z_filter_t> text = {H5Z_FILTER_SHUFFLE, H5Z_FILTER_DEFLATE};
  for (const char* name : {"/elites/genome", "/elites/cell", "/history/qd_score"})
    CHECK(filters(file.openDataSet(name)) == stored);
  CHECK(filters(file.openDataSet("/space/names")) == text);
  const std::string compressed = dir.file("compressed.h5");
  write_archive_file(compressed, sample_snapshot({}), {.compress = true});
  H5::H5File packed_file(compressed, H5F_ACC_RDONLY);
  for (const char* name : {"/elites/genome", "/elites/cell", "/history/qd_score"})
    CHECK(filters(packed_file.openDataSet(name)) == packed);
  CHECK(filters(packed_file.openDataSet("/space/names")) == text);
}

TEST_CASE("stored and compressed archives read back equal, in tessera and in h5py",
          "[archive_file]") {
  TempDir dir;
  SampleOptions o;
  o.elites = 5001;  // several chunks of /elites/genome (1,251 rows each), the last one partial
  o.genome = 40;
  const ArchiveSnapshot original = sample_snapshot(o);
  const std::string stored = dir.file("stored.h5"), compressed = dir.file("compressed.h5");
  write_archive_file(stored, original);
  write_archive_file(compressed, original, {.compress = true});
  const ArchiveSnapshot from_stored = read_archive_file(stored);
  const ArchiveSnapshot from_compressed = read_archive_file(compressed);
  require_equal(original, from_stored);
  require_equal(original, from_compressed);
  // h5py (Debian python3-h5py on libhdf5) undoes each file's filters itself: every dataset and
  // attribute of the two files must hold the same bytes.
  const std::string cmd = "/usr/bin/python3 " + std::string(TESSERA_SOURCE_DIR) +
                          "/tests/reference/h5py_same_contents.py " + stored + " " + compressed;
  CHECK(std::system(cmd.c_str()) == 0);
}

TEST_CASE("chunks compressed by HDF5's own filters read back the same", "[archive_file]") {
  // The writer compresses chunks itself on many threads; the reader expands them itself. Both
  // must agree with libhdf5's shuffle + deflate filters: rewrite /elites/genome through libhdf5
  // (several chunk shapes and filter orders) and read it back.
  H5::Exception::dontPrint();
  TempDir dir;
  SampleOptions o;
  o.elites = 3000;
  o.genome = 30;
  const ArchiveSnapshot original = sample_snapshot(o);
  const std::string path = dir.file("library.h5");
  for (const hsize_t rows_per_chunk : {hsize_t{1}, hsize_t{7}, hsize_t{1000}, hsize_t{3000}}) {
    for (const bool shuffle : {true, false}) {
      write_archive_file(path, original);
      {
        H5::H5File file(path, H5F_ACC_RDWR);
        file.unlink("/elites/genome");
        const hsize_t dims[2] = {3000, 30}, chunk[2] = {rows_per_chunk, 30};
        H5::DSetCreatPropList props;
        props.setChunk(2, chunk);
        if (shuffle) props.setShuffle();
        props.setDeflate(6);
        file.createDataSet("/elites/genome", H5::PredType::IEEE_F64LE, H5::DataSpace(2, dims),
                           props)
            .write(original.genome.data(), H5::PredType::NATIVE_DOUBLE);
      }
      INFO("rows per chunk " << rows_per_chunk << ", shuffle " << shuffle);
      CHECK(same_bits(read_archive_file(path).genome, original.genome));
    }
  }
  // And the other way: libhdf5 expands the chunks tessera compressed or stored, checking their
  // Fletcher-32 trailers on the way.
  for (const bool compress : {true, false}) {
    INFO("compress " << compress);
    write_archive_file(path, original, {.compress = compress});
    H5::H5File file(path, H5F_ACC_RDONLY);
    std::vector<double> genome(original.genome.size());
    file.openDataSet("/elites/genome").read(genome.data(), H5::PredType::NATIVE_DOUBLE);
    CHECK(same_bits(genome, original.genome));
  }
}

TEST_CASE("100,000 elites with 100-parameter genomes round-trip", "[archive_file][large]") {
  TempDir dir;
  SampleOptions o;
  o.elites = 100000;
  o.genome = 100;
  const ArchiveSnapshot original = sample_snapshot(o);
  const std::string path = dir.file("large.h5");
  write_archive_file(path, original);
  const ArchiveSnapshot back = read_archive_file(path);
  REQUIRE(back.elite_count() == 100000);
  require_equal(original, back);
}

TEST_CASE("bad files are refused with one line naming the file and the fault", "[archive_file]") {
  H5::Exception::dontPrint();
  TempDir dir;
  const ArchiveSnapshot good = sample_snapshot({});
  const std::string valid = dir.file("valid.h5");
  write_archive_file(valid, good);
  const auto copy_of_valid = [&](const std::string& name) {
    const std::string path = dir.file(name);
    fs::copy_file(valid, path, fs::copy_options::overwrite_existing);
    return path;
  };

  SECTION("missing file") {
    require_refused(dir.file("nothing.h5"), "no such file");
  }

  SECTION("a directory") {
    require_refused(dir.path.string(), "is a directory");
  }

  SECTION("a global heap object larger than its collection") {
    // Found by fuzz_archive: libhdf5 1.10 copied the string by the damaged size, far past its
    // buffer (ASan). Layout from the HDF5 file format specification, "Global Heap": "GCOL",
    // version, 3 reserved bytes, 8-byte collection size, then objects of 2-byte index, 2-byte
    // reference count, 4 reserved bytes, 8-byte size and the data padded to 8 bytes.
    const std::string path = copy_of_valid("heap.h5");
    std::string bytes;
    {
      std::ifstream in(path, std::ios::binary);
      bytes.assign(std::istreambuf_iterator<char>(in), std::istreambuf_iterator<char>());
    }
    const std::size_t heap = bytes.find("GCOL\x01");
    REQUIRE(heap != std::string::npos);
    const std::size_t first_size = heap + 16 + 8;
    std::uint64_t first = 0;
    std::memcpy(&first, bytes.data() + first_size, 8);  // little-endian, as on x86-64
    const std::size_t second_size = heap + 16 + 16 + (first + 7) / 8 * 8 + 8;
    const std::uint64_t huge = (std::uint64_t{1} << 47) + 3;
    std::memcpy(bytes.data() + second_size, &huge, 8);
    std::ofstream(path, std::ios::binary | std::ios::trunc) << bytes;
    require_refused(path, "global heap at byte " + std::to_string(heap));
    // The search goes block by block: any block size finds the same fault, the signature
    // straddling two blocks or not (sizes around the offset of the collection and tiny ones).
    const auto fault = tessera::global_heap_fault(path);
    REQUIRE(fault);
    for (const std::size_t block : {std::size_t{1}, std::size_t{2}, std::size_t{3}, std::size_t{5},
                                    heap, heap + 1, heap + 2, heap + 3, heap + 4, bytes.size()})
      CHECK(tessera::global_heap_fault(path, block) == fault);
    CHECK_FALSE(tessera::global_heap_fault(valid, 3));
  }

  SECTION("an archive whose root object header does not decode") {
    // Found by fuzz_archive (tests/fixtures/archives/README.md); HDF5's own leak on this path is
    // suppressed for the sanitized builds, the refusal is ours.
    require_refused(
        std::string(TESSERA_SOURCE_DIR) + "/tests/fixtures/archives/damaged-object-header.h5",
        "truncated or damaged HDF5 file");
  }

  SECTION("a text file") {
    const std::string path = dir.file("notes.h5");
    std::ofstream(path) << "just some text\n";
    require_refused(path, "not an HDF5 file");
  }

  SECTION("an empty file") {
    const std::string path = dir.file("empty.h5");
    std::ofstream{path};
    require_refused(path, "not an HDF5 file");
  }

  SECTION("an HDF5 file of another kind") {
    const std::string path = dir.file("other.h5");
    {
      H5::H5File file(path, H5F_ACC_TRUNC);
      const hsize_t n = 3;
      const double v[3] = {1, 2, 3};
      file.createDataSet("values", H5::PredType::IEEE_F64LE, H5::DataSpace(1, &n))
          .write(v, H5::PredType::NATIVE_DOUBLE);
    }
    require_refused(path, "not a tessera archive");
  }

  SECTION("an HDF5 file whose format attribute names another format") {
    const std::string path = copy_of_valid("renamed.h5");
    {
      H5::H5File file(path, H5F_ACC_RDWR);
      file.removeAttr("format");
      H5::StrType t(H5::PredType::C_S1, H5T_VARIABLE);
      file.createAttribute("format", t, H5::DataSpace(H5S_SCALAR))
          .write(t, std::string("something-else"));
    }
    require_refused(path, "not a tessera archive");
  }

  SECTION("a newer format version") {
    const std::string path = copy_of_valid("newer.h5");
    {
      H5::H5File file(path, H5F_ACC_RDWR);
      const std::int64_t three = 3;
      file.openAttribute("format_version").write(H5::PredType::NATIVE_INT64, &three);
    }
    require_refused(path, "archive format 3 is newer than this tessera reads (formats 1 to 2)");
  }

  SECTION("a truncated file") {
    const std::string path = copy_of_valid("half.h5");
    fs::resize_file(path, fs::file_size(path) / 2);
    require_refused(path, "truncated or damaged HDF5 file");
  }

  SECTION("a file cut just after its first block") {
    const std::string path = copy_of_valid("stub.h5");
    fs::resize_file(path, 600);
    require_refused(path, "truncated or damaged HDF5 file");
  }

  SECTION("rows of /elites disagree") {
    const std::string path = copy_of_valid("rows.h5");
    std::vector<std::uint64_t> birth(good.birth.begin(), good.birth.end() - 1);
    replace_dataset(path, "/elites/birth", birth, {birth.size()}, H5::PredType::NATIVE_UINT64);
    require_refused(path, "/elites/birth has 49 rows but /elites/fitness has 50");
  }

  SECTION("genome columns disagree with /genome/lower") {
    const std::string path = copy_of_valid("columns.h5");
    std::vector<double> genome = good.genome;
    genome.resize(50 * 6);
    replace_doubles(path, "/elites/genome", genome, {50, 6});
    require_refused(path, "/elites/genome has 6 columns but /genome/lower has 7");
  }

  SECTION("descriptor columns disagree with /space/lower") {
    const std::string path = copy_of_valid("dcolumns.h5");
    replace_doubles(path, "/elites/descriptor", std::vector<double>(150, 0.5), {50, 3});
    require_refused(path, "/elites/descriptor has 3 columns but /space/lower has 2");
  }

  SECTION("history columns disagree") {
    const std::string path = copy_of_valid("history.h5");
    replace_doubles(path, "/history/qd_score", {1.0, 2.0}, {2});
    require_refused(path, "/history/qd_score has 2 rows but /history/evaluations has 12");
  }

  SECTION("grid resolution of the wrong length") {
    const std::string path = copy_of_valid("resolution.h5");
    replace_dataset<std::int64_t>(path, "/space/resolution", {10, 10, 10}, {3},
                                  H5::PredType::NATIVE_INT64);
    require_refused(path, "/space/resolution has 3 entries but /space/lower has 2");
  }

  SECTION("cvt centroids with the wrong number of columns") {
    SampleOptions o;
    o.kind = "cvt";
    const std::string path = dir.file("centroids.h5");
    write_archive_file(path, sample_snapshot(o));
    replace_doubles(path, "/space/centroids", std::vector<double>(53 * 3, 0.0), {53, 3});
    require_refused(path, "/space/centroids has 3 columns but /space/lower has 2");
  }

  SECTION("a cell index out of range") {
    const std::string path = copy_of_valid("range.h5");
    std::vector<std::int64_t> cell = good.cell;
    const std::int64_t cells = good.cell_count();
    cell[4] = cells;
    replace_dataset(path, "/elites/cell", cell, {cell.size()}, H5::PredType::NATIVE_INT64);
    require_refused(path, "/elites/cell[4] = " + std::to_string(cells) + " is outside 0.." +
                              std::to_string(cells - 1));
  }

  SECTION("two elites in one cell") {
    const std::string path = copy_of_valid("duplicate.h5");
    std::vector<std::int64_t> cell = good.cell;
    cell[9] = cell[3];
    replace_dataset(path, "/elites/cell", cell, {cell.size()}, H5::PredType::NATIVE_INT64);
    require_refused(path, "/elites/cell[9] = " + std::to_string(cell[3]) + " is a duplicated cell");
  }

  SECTION("NaN in fitness") {
    const std::string path = copy_of_valid("nan.h5");
    std::vector<double> fitness = good.fitness;
    fitness[2] = std::nan("");
    replace_doubles(path, "/elites/fitness", fitness, {fitness.size()});
    require_refused(path, "/elites/fitness[2] is NaN");
  }

  SECTION("infinity in a genome") {
    const std::string path = copy_of_valid("inf.h5");
    std::vector<double> genome = good.genome;
    genome[3 * 7 + 5] = INFINITY;
    replace_doubles(path, "/elites/genome", genome, {50, 7});
    require_refused(path, "/elites/genome[3, 5] is +inf");
  }

  SECTION("NaN in descriptor bounds") {
    const std::string path = copy_of_valid("bounds.h5");
    replace_doubles(path, "/space/upper", {1.0, std::nan("")}, {2});
    require_refused(path, "/space/upper[1] is NaN");
  }

  SECTION("NaN in history") {
    const std::string path = copy_of_valid("hnan.h5");
    std::vector<double> coverage(12, 0.5);
    coverage[11] = std::nan("");
    replace_doubles(path, "/history/coverage", coverage, {12});
    require_refused(path, "/history/coverage[11] is NaN");
  }

  SECTION("a missing dataset") {
    const std::string path = copy_of_valid("missing.h5");
    H5::H5File(path, H5F_ACC_RDWR).unlink("/elites/descriptor");
    require_refused(path, "missing dataset /elites/descriptor");
  }

  SECTION("a dataset claiming far more values than the file stores") {
    // 10^8 rows per history column but only one chunk written: the reader must refuse from the
    // sizes alone, before allocating 800 MB per column.
    const std::string path = copy_of_valid("claims.h5");
    {
      H5::H5File file(path, H5F_ACC_RDWR);
      for (const char* name : {"/history/evaluations", "/history/coverage", "/history/qd_score",
                               "/history/max_fitness"}) {
        const bool ints = std::strcmp(name, "/history/evaluations") == 0;
        file.unlink(name);
        const hsize_t dims = 100000000, chunk = 1024;
        H5::DSetCreatPropList props;
        props.setChunk(1, &chunk);
        H5::DataSet ds =
            file.createDataSet(name, ints ? H5::PredType::STD_U64LE : H5::PredType::IEEE_F64LE,
                               H5::DataSpace(1, &dims), props);
        H5::DataSpace memory(1, &chunk);
        H5::DataSpace selection = ds.getSpace();
        const hsize_t start = 0;
        selection.selectHyperslab(H5S_SELECT_SET, &chunk, &start);
        std::vector<double> zeros(chunk, 0.0);
        ds.write(zeros.data(), H5::PredType::NATIVE_DOUBLE, memory, selection);
      }
    }
    require_refused(path, "/history/evaluations claims 100000000 values but stores only");
  }

  SECTION("a dataset claiming more values than any archive holds") {
    const std::string path = copy_of_valid("absurd.h5");
    {
      H5::H5File file(path, H5F_ACC_RDWR);
      file.unlink("/elites/genome");
      const hsize_t dims[2] = {50, hsize_t{1} << 40}, chunk[2] = {1, 1024};
      H5::DSetCreatPropList props;
      props.setChunk(2, chunk);
      file.createDataSet("/elites/genome", H5::PredType::IEEE_F64LE, H5::DataSpace(2, dims), props);
    }
    require_refused(path,
                    "/elites/genome claims 50 x 1099511627776 values, more than tessera reads");
  }

  SECTION("a damaged compressed chunk") {
    // Overwrite bytes inside one stored chunk of /elites/genome, found through HDF5's own chunk
    // index, so that only the compressed data (not the file's structure) is damaged.
    SampleOptions o;
    o.elites = 4000;
    o.genome = 60;
    const std::string path = dir.file("chunk.h5");
    write_archive_file(path, sample_snapshot(o));
    haddr_t address = 0;
    hsize_t size = 0;
    {
      H5::H5File file(path, H5F_ACC_RDONLY);
      H5::DataSet ds = file.openDataSet("/elites/genome");
      hsize_t offset[2];
      unsigned mask = 0;
      const H5::DataSpace space = ds.getSpace();
      REQUIRE(H5Dget_chunk_info(ds.getId(), space.getId(), 1, offset, &mask, &address, &size) >= 0);
    }
    REQUIRE(size > 100);
    {
      std::fstream f(path, std::ios::in | std::ios::out | std::ios::binary);
      f.seekp(static_cast<std::streamoff>(address + size / 2));
      const std::string junk(32, '\x5a');
      f.write(junk.data(), static_cast<std::streamsize>(junk.size()));
    }
    require_refused(path, "truncated or damaged HDF5 file");
  }

  SECTION("the reader changes nothing on disk") {
    const std::vector<char> before = file_bytes(valid);
    const auto listing = dir.listing();
    read_archive_file(valid);
    CHECK(file_bytes(valid) == before);
    CHECK(dir.listing() == listing);
  }
}

TEST_CASE("a failed write leaves the previous archive intact", "[archive_file]") {
  TempDir dir;
  const std::string path = dir.file("run.h5");
  const ArchiveSnapshot first = sample_snapshot({});
  write_archive_file(path, first);
  const std::vector<char> before = file_bytes(path);

  SECTION("a snapshot that fails validation touches nothing") {
    SampleOptions o;
    o.salt = 1;
    ArchiveSnapshot bad = sample_snapshot(o);
    bad.fitness[0] = std::nan("");
    CHECK_THROWS_WITH(write_archive_file(path, bad),
                      Catch::Contains(path) && Catch::Contains("/elites/fitness[0] is NaN"));
    bad = sample_snapshot(o);
    bad.birth.pop_back();
    CHECK_THROWS_AS(write_archive_file(path, bad), std::invalid_argument);
  }

  SECTION("the temporary file cannot be created") {
    // A folder squatting on the temporary name refuses the file even for root.
    char host[256] = {0};
    ::gethostname(host, sizeof host - 1);
    const fs::path squatter =
        dir.path / (".run.h5.tmp-" + std::string(host) + "-" + std::to_string(::getpid()));
    fs::create_directory(squatter);
    try {
      write_archive_file(path, sample_snapshot({.salt = 2}));
      FAIL("write over a folder named like the temporary file succeeded");
    } catch (const InputError& e) {
      CHECK_THAT(e.what(), Catch::StartsWith(path + ": cannot write archive:") &&
                               Catch::Contains("Is a directory"));
    }
    fs::remove(squatter);
  }

  SECTION("the folder is read-only") {
    if (::geteuid() == 0) {
      WARN("running as root: permissions do not stop root; the other sections cover this path");
      return;
    }
    fs::permissions(dir.path, fs::perms::owner_read | fs::perms::owner_exec);
    try {
      write_archive_file(path, sample_snapshot({.salt = 2}));
      FAIL("write into a read-only folder succeeded");
    } catch (const InputError& e) {
      CHECK_THAT(e.what(), Catch::StartsWith(path + ": cannot write archive:") &&
                               Catch::Contains("Permission denied"));
    }
    fs::permissions(dir.path, fs::perms::owner_all);
  }

  SECTION("the disk fills up half way through the write") {
    // A child process limited to 64 KiB per file (RLIMIT_FSIZE; SIGXFSZ ignored so that write()
    // fails with EFBIG instead of killing it) writes a 2 MB archive over the old one.
    const pid_t child = ::fork();
    REQUIRE(child >= 0);
    if (child == 0) {
      ::signal(SIGXFSZ, SIG_IGN);
      const rlimit limit{65536, 65536};
      ::setrlimit(RLIMIT_FSIZE, &limit);
      SampleOptions o;
      o.elites = 5000;
      o.genome = 50;
      o.salt = 3;
      try {
        write_archive_file(path, sample_snapshot(o));
      } catch (const InputError& e) {
        const std::string m = e.what();
        const bool one_line = m.find('\n') == std::string::npos;
        ::_exit(m.rfind(path + ": cannot write archive: ", 0) == 0 && one_line ? 10 : 11);
      } catch (...) {
        ::_exit(12);
      }
      ::_exit(13);  // the write should not have succeeded
    }
    int status = 0;
    REQUIRE(::waitpid(child, &status, 0) == child);
    REQUIRE(WIFEXITED(status));
    CHECK(WEXITSTATUS(status) == 10);
  }

  SECTION("the target is a folder") {
    const std::string folder = dir.file("folder.h5");
    fs::create_directory(folder);
    CHECK_THROWS_AS(write_archive_file(folder, first), InputError);
    CHECK(fs::is_directory(folder));
    fs::remove(folder);
  }

  CHECK(file_bytes(path) == before);
  require_equal(first, read_archive_file(path));
  CHECK(dir.listing() == std::set<std::string>{"run.h5"});  // no temporary file left behind
}

TEST_CASE("kill -9 during a write leaves the previous or the new archive", "[archive_file]") {
  // A child writes two different snapshots over the same path in a loop; the parent kills it
  // with SIGKILL at random moments. Afterwards the path must read back as one of the two whole.
  TempDir dir;
  const std::string path = dir.file("checkpoint.h5");
  SampleOptions a;
  a.elites = 20000;
  a.genome = 40;
  SampleOptions b = a;
  b.salt = 1;
  const ArchiveSnapshot snap_a = sample_snapshot(a);
  const ArchiveSnapshot snap_b = sample_snapshot(b);
  write_archive_file(path, snap_a);
  std::mt19937 gen(12345);
  std::uniform_int_distribution<int> delay_ms(5, 400);
  for (int round = 0; round < 6; ++round) {
    const pid_t child = ::fork();
    REQUIRE(child >= 0);
    if (child == 0) {
      for (std::uint64_t i = 0;; ++i) write_archive_file(path, i % 2 ? snap_a : snap_b);
    }
    std::this_thread::sleep_for(std::chrono::milliseconds(delay_ms(gen)));
    ::kill(child, SIGKILL);
    int status = 0;
    REQUIRE(::waitpid(child, &status, 0) == child);
    REQUIRE(WIFSIGNALED(status));
    const ArchiveSnapshot back = read_archive_file(path);
    const bool is_a = back.evaluations == snap_a.evaluations;
    require_equal(is_a ? snap_a : snap_b, back);
    // The killed writer may leave its temporary file; it never replaces the archive.
    for (const auto& name : dir.listing())
      if (name != "checkpoint.h5") CHECK(name.rfind(".checkpoint.h5.tmp-", 0) == 0);
  }
  // The next write clears the temporary files of the killed writers.
  write_archive_file(path, snap_b);
  CHECK(dir.listing() == std::set<std::string>{"checkpoint.h5"});
}

TEST_CASE("the next write clears the temporary file of a killed writer not yet collected",
          "[archive_file]") {
  // A run killed mid-write whose parent is gone too is an orphan; a container's init may never
  // collect it, and it stays a zombie (proc(5): state Z) whose process id still answers kill(0).
  // It writes nothing any more: its temporary file is stale like a dead writer's.
  TempDir dir;
  const std::string path = dir.file("checkpoint.h5");
  const pid_t zombie = ::fork();
  REQUIRE(zombie >= 0);
  if (zombie == 0) std::_Exit(0);
  for (int i = 0; i < 5000; ++i) {  // exited, not yet collected
    siginfo_t info{};
    if (::waitid(P_PID, static_cast<id_t>(zombie), &info, WEXITED | WNOHANG | WNOWAIT) == 0 &&
        info.si_pid == zombie)
      break;
    std::this_thread::sleep_for(std::chrono::milliseconds(1));
  }
  char host[256] = {0};
  ::gethostname(host, sizeof host - 1);
  std::ofstream(dir.file(".checkpoint.h5.tmp-" + std::string(host) + "-" + std::to_string(zombie)))
      << "half an archive";
  write_archive_file(path, sample_snapshot({}));
  ::waitpid(zombie, nullptr, 0);
  CHECK(dir.listing() == std::set<std::string>{"checkpoint.h5"});
}
