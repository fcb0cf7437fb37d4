// Written against HDF5's C interface (from the same libhdf5-dev as the C++ one) with handles of
// our own: the C++ classes print to std::cerr from their destructors when a close fails during
// unwinding, which would break the one-line error rule.
#include "io/archive_file.hpp"

#include <fcntl.h>
#include <hdf5.h>
#include <unistd.h>

#include <tbb/parallel_for.h>
#include <tbb/task_arena.h>

#include <algorithm>
#include <atomic>
#include <bit>
#include <cerrno>
#include <cstdint>
#include <cstdio>
#include <cstring>
#include <filesystem>
#include <mutex>
#include <stdexcept>
#include <string>
#include <system_error>
#include <vector>

#include "core/archive/space.hpp"
#include "core/base/errors.hpp"
#include "io/chunk_codec.hpp"
#include "io/fletcher32.hpp"
#include "io/global_heap_check.hpp"
#include "io/snapshot_check.hpp"
#include "io/temporary_files.hpp"

namespace tessera {
namespace {

// The Debian HDF5 library is built without thread safety: every call into it is serialised.
std::mutex& hdf5_mutex() {
  static std::mutex m;
  return m;
}

// Chunks of about 512 KiB fit the default 1 MiB chunk cache. With compression on, shuffle +
// deflate level 1 squeezes doubles as well as deflate can while keeping the writer fast; off
// (the default), chunks are stored as they are, which bench_archive_io measured at several times
// the speed for random doubles that deflate shrinks only to about 87%.
constexpr std::uint64_t kChunkBytes = 512 * 1024;
constexpr unsigned kDeflateLevel = 1;
// Chunks prepared together on all threads before HDF5 moves them (32 MiB) when deflating. Stored
// chunks only need a copy and a checksum: two per thread at a time keep their buffers in cache
// and spare the page faults of 32 MiB of fresh buffers on every write (on the test VM a fault
// costs microseconds: a stored write of 200,000 x 100 parameters went from 0.48 to 0.35 s).
constexpr std::uint64_t kChunkBatch = 64;
constexpr std::uint64_t kStoredChunksPerThread = 2;
// Largest chunk the reader expands itself; others (never written by tessera) go through HDF5.
constexpr std::uint64_t kMaxDirectChunkBytes = std::uint64_t{1} << 28;

// Deflate cannot expand data by more than 1032:1 (zlib technical details, zlib.net, from memory),
// so a dataset stored in S bytes with the filters we accept holds at most about 1032 * S bytes.
constexpr std::uint64_t kMaxInflation = 1100;

// A failed HDF5 call; the message is the deepest entry of HDF5's error stack (the cause).
class Hdf5Failure : public std::runtime_error {
 public:
  explicit Hdf5Failure(const char* call) : std::runtime_error(reason(call)) {}

 private:
  static std::string reason(const char* call) {
    std::string deepest;
    H5Ewalk2(
        H5E_DEFAULT, H5E_WALK_DOWNWARD,
        [](unsigned, const H5E_error2_t* err, void* out) -> herr_t {
          if (err->desc && *err->desc) *static_cast<std::string*>(out) = err->desc;
          return 0;
        },
        &deepest);
    std::string message = std::string(call) + " failed";
    if (!deepest.empty()) message += ": " + deepest;
    std::replace(message.begin(), message.end(), '\n', ' ');
    return message;
  }
};

template <class T>
T ok(T result, const char* call) {
  if (result < 0) throw Hdf5Failure(call);
  return result;
}

// Owns one HDF5 identifier and closes it, silently, when it goes out of scope.
class Handle {
 public:
  using Closer = herr_t (*)(hid_t);
  Handle() = default;
  Handle(hid_t id, Closer closer, const char* call) : id_(ok(id, call)), closer_(closer) {}
  Handle(Handle&& other) noexcept : id_(other.id_), closer_(other.closer_) { other.id_ = -1; }
  Handle& operator=(Handle&& other) noexcept {
    std::swap(id_, other.id_);
    std::swap(closer_, other.closer_);
    return *this;
  }
  Handle(const Handle&) = delete;
  Handle& operator=(const Handle&) = delete;
  ~Handle() {
    if (id_ >= 0) closer_(id_);
  }
  hid_t get() const { return id_; }
  // Closes now and reports failure (the last metadata is written when a file closes).
  void close(const char* call) {
    const hid_t id = id_;
    id_ = -1;
    ok(closer_(id), call);
  }

 private:
  hid_t id_ = -1;
  Closer closer_ = nullptr;
};

Handle group_handle(hid_t id, const char* call) {
  return Handle(id, H5Gclose, call);
}
Handle dataset_handle(hid_t id, const char* call) {
  return Handle(id, H5Dclose, call);
}
Handle space_handle(hid_t id, const char* call) {
  return Handle(id, H5Sclose, call);
}
Handle type_handle(hid_t id, const char* call) {
  return Handle(id, H5Tclose, call);
}
Handle attr_handle(hid_t id, const char* call) {
  return Handle(id, H5Aclose, call);
}
Handle plist_handle(hid_t id, const char* call) {
  return Handle(id, H5Pclose, call);
}

template <class T>
struct Hdf5Types;
template <>
struct Hdf5Types<double> {
  static hid_t file() { return H5T_IEEE_F64LE; }
  static hid_t memory() { return H5T_NATIVE_DOUBLE; }
};
template <>
struct Hdf5Types<std::int64_t> {
  static hid_t file() { return H5T_STD_I64LE; }
  static hid_t memory() { return H5T_NATIVE_INT64; }
};
template <>
struct Hdf5Types<std::uint64_t> {
  static hid_t file() { return H5T_STD_U64LE; }
  static hid_t memory() { return H5T_NATIVE_UINT64; }
};

Handle utf8_string_type() {
  Handle t = type_handle(H5Tcopy(H5T_C_S1), "H5Tcopy");
  ok(H5Tset_size(t.get(), H5T_VARIABLE), "H5Tset_size");
  ok(H5Tset_cset(t.get(), H5T_CSET_UTF8), "H5Tset_cset");
  return t;
}

Handle access_properties() {
  Handle fapl = plist_handle(H5Pcreate(H5P_FILE_ACCESS), "H5Pcreate");
  // Close the file for real when its handle goes, and do not depend on the file system
  // supporting locks: archives are replaced by rename, never written in place.
  ok(H5Pset_fclose_degree(fapl.get(), H5F_CLOSE_STRONG), "H5Pset_fclose_degree");
  ok(H5Pset_file_locking(fapl.get(), false, true), "H5Pset_file_locking");
  // The 1.10 file format checksums its metadata (superblock, object headers, B-trees, heaps), so
  // a damaged attribute table or chunk index is refused instead of read. h5py and HDF5 >= 1.10
  // read it.
  ok(H5Pset_libver_bounds(fapl.get(), H5F_LIBVER_V110, H5F_LIBVER_LATEST), "H5Pset_libver_bounds");
  return fapl;
}

// ---------------------------------------------------------------------------------- writing

void write_string_attr(hid_t obj, const char* name, const std::string& value) {
  const Handle type = utf8_string_type();
  const Handle space = space_handle(H5Screate(H5S_SCALAR), "H5Screate");
  const Handle attr = attr_handle(
      H5Acreate2(obj, name, type.get(), space.get(), H5P_DEFAULT, H5P_DEFAULT), "H5Acreate2");
  const char* text = value.c_str();
  ok(H5Awrite(attr.get(), type.get(), &text), "H5Awrite");
}

template <class T>
void write_scalar_attr(hid_t obj, const char* name, T value) {
  const Handle space = space_handle(H5Screate(H5S_SCALAR), "H5Screate");
  const Handle attr = attr_handle(
      H5Acreate2(obj, name, Hdf5Types<T>::file(), space.get(), H5P_DEFAULT, H5P_DEFAULT),
      "H5Acreate2");
  ok(H5Awrite(attr.get(), Hdf5Types<T>::memory(), &value), "H5Awrite");
}

Handle create_group(hid_t parent, const char* name) {
  return group_handle(H5Gcreate2(parent, name, H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT),
                      "H5Gcreate2");
}

// Rows per chunk: at most about kChunkBytes of whole rows, the dataset's rows spread evenly over
// as few chunks as that allows, so that the zero-filled tail of the last chunk stays under one
// row per chunk (a fixed 512 KiB chunk left a small archive's file half padding).
std::uint64_t chunk_rows_for(std::uint64_t rows, std::uint64_t row_bytes) {
  const std::uint64_t n = std::max<std::uint64_t>(rows, 1);
  const std::uint64_t most = std::clamp<std::uint64_t>(kChunkBytes / row_bytes, 1, n);
  const std::uint64_t chunks = (n + most - 1) / most;
  return (n + chunks - 1) / chunks;
}

// A chunked dataset of `rows` rows (x `cols` columns when cols > 0), through shuffle + deflate
// when `compress`. The first dimension is unlimited so that zero rows is a valid, readable
// dataset.
Handle create_dataset(hid_t parent, const std::string& name, hid_t type, std::size_t element_bytes,
                      std::uint64_t rows, std::uint64_t cols, bool compress) {
  const int rank = cols == 0 ? 1 : 2;
  const hsize_t dims[2] = {rows, cols};
  const hsize_t max_dims[2] = {H5S_UNLIMITED, cols};
  const std::uint64_t row_bytes = element_bytes * std::max<std::uint64_t>(cols, 1);
  const hsize_t chunk[2] = {chunk_rows_for(rows, row_bytes), cols};
  const Handle props = plist_handle(H5Pcreate(H5P_DATASET_CREATE), "H5Pcreate");
  ok(H5Pset_chunk(props.get(), rank, chunk), "H5Pset_chunk");
  if (compress) {
    ok(H5Pset_shuffle(props.get()), "H5Pset_shuffle");
    ok(H5Pset_deflate(props.get(), kDeflateLevel), "H5Pset_deflate");
  }
  // Damaged data is refused, not read (variable-length strings cannot carry the checksum).
  if (ok(H5Tis_variable_str(type), "H5Tis_variable_str") == 0)
    ok(H5Pset_fletcher32(props.get()), "H5Pset_fletcher32");
  const Handle space = space_handle(H5Screate_simple(rank, dims, max_dims), "H5Screate_simple");
  return dataset_handle(
      H5Dcreate2(parent, name.c_str(), type, space.get(), H5P_DEFAULT, props.get(), H5P_DEFAULT),
      "H5Dcreate2");
}

// The Fletcher-32 filter's trailer: the checksum of the chunk's first `bytes` bytes, little-endian,
// written at chunk[bytes..bytes+4).
void put_fletcher32(unsigned char* chunk, std::size_t bytes) {
  const std::uint32_t sum = fletcher32(chunk, bytes);
  for (int i = 0; i < 4; ++i) chunk[bytes + i] = static_cast<unsigned char>(sum >> (8 * i));
}

// Prepares the chunks of `rows` rows on all threads, a batch at a time into buffers reused from
// batch to batch (bounded memory, no allocation per chunk), and hands the finished chunks to
// HDF5. The bytes are the same as HDF5's own filters would write.
void write_chunks(hid_t ds, const unsigned char* data, std::uint64_t rows, std::uint64_t row_bytes,
                  std::size_t element_size, bool compress) {
  const std::uint64_t chunk_rows = chunk_rows_for(rows, row_bytes);
  const std::uint64_t chunk_bytes = chunk_rows * row_bytes;
  const std::uint64_t chunks = (rows + chunk_rows - 1) / chunk_rows;
  const std::uint64_t batch =
      compress
          ? kChunkBatch
          : kStoredChunksPerThread *
                static_cast<std::uint64_t>(std::max(1, tbb::this_task_arena::max_concurrency()));
  std::vector<std::vector<unsigned char>> encoded(std::min(batch, chunks));
  std::vector<unsigned char> padded;  // the last, partial chunk
  for (std::uint64_t first = 0; first < chunks; first += batch) {
    const std::uint64_t count = std::min(batch, chunks - first);
    tbb::parallel_for(std::uint64_t{0}, count, [&](std::uint64_t k) {
      const std::uint64_t row = (first + k) * chunk_rows;
      const std::uint64_t have = std::min(chunk_rows, rows - row) * row_bytes;
      const unsigned char* src = data + row * row_bytes;
      if (have != chunk_bytes) {
        // The last chunk is stored whole; HDF5 ignores the part past the end of the data.
        padded.assign(chunk_bytes, 0);
        std::memcpy(padded.data(), src, have);
        src = padded.data();
      }
      std::vector<unsigned char>& out = encoded[k];
      if (compress) {
        encode_chunk(src, chunk_bytes, element_size, kDeflateLevel, out);
      } else {
        out.resize(chunk_bytes);
        std::memcpy(out.data(), src, chunk_bytes);
      }
      const std::size_t stored = out.size();
      out.resize(stored + 4);
      put_fletcher32(out.data(), stored);
    });
    for (std::uint64_t k = 0; k < count; ++k) {
      const hsize_t offset[2] = {(first + k) * chunk_rows, 0};
      ok(H5Dwrite_chunk(ds, H5P_DEFAULT, 0, offset, encoded[k].size(), encoded[k].data()),
         "H5Dwrite_chunk");
    }
  }
}

template <class T>
void write_dataset(const ArchiveWriteOptions& options, hid_t parent, const std::string& name,
                   const std::vector<T>& data, std::uint64_t cols = 0) {
  const std::uint64_t rows = cols == 0 ? data.size() : data.size() / cols;
  const std::uint64_t row_bytes = sizeof(T) * std::max<std::uint64_t>(cols, 1);
  const Handle ds =
      create_dataset(parent, name, Hdf5Types<T>::file(), sizeof(T), rows, cols, options.compress);
  if (rows == 0) return;
  // Little-endian memory is the file's byte order, so memory bytes can go into chunks as is.
  if (std::endian::native == std::endian::little && rows > chunk_rows_for(rows, row_bytes)) {
    write_chunks(ds.get(), reinterpret_cast<const unsigned char*>(data.data()), rows, row_bytes,
                 sizeof(T), options.compress);
  } else {
    ok(H5Dwrite(ds.get(), Hdf5Types<T>::memory(), H5S_ALL, H5S_ALL, H5P_DEFAULT, data.data()),
       "H5Dwrite");
  }
}

void write_strings(hid_t parent, const std::string& name, const std::vector<std::string>& values) {
  const Handle type = utf8_string_type();
  const Handle ds = create_dataset(parent, name, type.get(), sizeof(char*), values.size(), 0, true);
  std::vector<const char*> pointers;
  for (const auto& v : values) pointers.push_back(v.c_str());
  if (pointers.empty()) return;
  // Strings pass through a type conversion whose buffers HDF5 allocates zeroed at the default
  // 1 MiB each, per write; a few names need a few bytes (64 per string is ample room).
  const Handle transfer = plist_handle(H5Pcreate(H5P_DATASET_XFER), "H5Pcreate");
  ok(H5Pset_buffer(transfer.get(), 64 * pointers.size(), nullptr, nullptr), "H5Pset_buffer");
  ok(H5Dwrite(ds.get(), type.get(), H5S_ALL, H5S_ALL, transfer.get(), pointers.data()), "H5Dwrite");
}

// /elites/extras is [N, E] even when the problem gives no extra figures; HDF5 chunks cannot have
// a zero dimension, so that case is stored contiguous.
void write_extras(const ArchiveWriteOptions& options, hid_t elites,
                  const std::vector<double>& extras, std::uint64_t rows, std::uint64_t cols) {
  if (cols > 0) {
    write_dataset(options, elites, "extras", extras, cols);
    return;
  }
  const hsize_t dims[2] = {rows, 0};
  const Handle space = space_handle(H5Screate_simple(2, dims, nullptr), "H5Screate_simple");
  dataset_handle(H5Dcreate2(elites, "extras", Hdf5Types<double>::file(), space.get(), H5P_DEFAULT,
                            H5P_DEFAULT, H5P_DEFAULT),
                 "H5Dcreate2");
}

void write_contents(hid_t file, const ArchiveSnapshot& s, const ArchiveWriteOptions& options) {
  write_string_attr(file, "format", "tessera-archive");
  write_scalar_attr<std::int64_t>(file, "format_version", kArchiveFormatVersion);
  write_string_attr(file, "problem", s.problem);
  write_string_attr(file, "config", s.config);
  write_scalar_attr<std::uint64_t>(file, "seed", s.seed);
  write_scalar_attr<std::uint64_t>(file, "evaluations", s.evaluations);
  write_string_attr(file, "tool_version", s.tool_version);
  write_scalar_attr<std::int64_t>(file, "random_streams", s.random_streams);

  const std::uint64_t d = s.descriptor_size();
  {
    const Handle space = create_group(file, "space");
    write_string_attr(space.get(), "kind", s.space_kind);
    write_dataset(options, space.get(), "lower", s.descriptor_bounds.lower);
    write_dataset(options, space.get(), "upper", s.descriptor_bounds.upper);
    if (s.space_kind == "grid") write_dataset(options, space.get(), "resolution", s.resolution);
    if (s.space_kind == "cvt") write_dataset(options, space.get(), "centroids", s.centroids, d);
    write_strings(space.get(), "names", s.descriptor_names);
  }
  {
    const Handle genome = create_group(file, "genome");
    write_dataset(options, genome.get(), "lower", s.genome_bounds.lower);
    write_dataset(options, genome.get(), "upper", s.genome_bounds.upper);
  }
  {
    const Handle elites = create_group(file, "elites");
    write_dataset(options, elites.get(), "cell", s.cell);
    write_dataset(options, elites.get(), "genome", s.genome, s.genome_size());
    write_dataset(options, elites.get(), "descriptor", s.descriptor, d);
    write_dataset(options, elites.get(), "fitness", s.fitness);
    write_dataset(options, elites.get(), "birth", s.birth);
    write_strings(elites.get(), "extra_names", s.extra_names);
    write_extras(options, elites.get(), s.extras, s.elite_count(), s.extra_size());
  }
  if (s.novelty_archive) {
    const Handle behaviours = create_group(file, "novelty_archive");
    write_dataset(options, behaviours.get(), "genome", s.novelty_archive->genome, s.genome_size());
    write_dataset(options, behaviours.get(), "descriptor", s.novelty_archive->descriptor, d);
    write_dataset(options, behaviours.get(), "fitness", s.novelty_archive->fitness);
    write_dataset(options, behaviours.get(), "birth", s.novelty_archive->birth);
  }
  {
    const Handle history = create_group(file, "history");
    write_scalar_attr<double>(history.get(), "fitness_floor", s.fitness_floor);
    std::vector<std::uint64_t> evaluations;
    std::vector<double> coverage, qd_score, max_fitness;
    for (const HistoryRow& row : s.history) {
      evaluations.push_back(row.evaluations);
      coverage.push_back(row.coverage);
      qd_score.push_back(row.qd_score);
      max_fitness.push_back(row.max_fitness);
    }
    write_dataset(options, history.get(), "evaluations", evaluations);
    write_dataset(options, history.get(), "coverage", coverage);
    write_dataset(options, history.get(), "qd_score", qd_score);
    write_dataset(options, history.get(), "max_fitness", max_fitness);
  }
  if (s.resume) {
    const Handle resume = create_group(file, "resume");
    write_string_attr(resume.get(), "algorithm", s.resume->algorithm);
    write_scalar_attr<std::uint64_t>(resume.get(), "next_batch", s.resume->next_batch);
    // The counters' names, so that a reader opens each attribute by name and never has to walk
    // the attribute table (which a damaged file can make unsafe to walk).
    std::string names;
    for (const auto& [name, value] : s.resume->counters) names.append(name).append("\n");
    write_string_attr(resume.get(), "counter_names", names);
    const Handle counters = create_group(resume.get(), "counters");
    for (const auto& [name, value] : s.resume->counters)
      write_scalar_attr<std::uint64_t>(counters.get(), name.c_str(), value);
    const Handle arrays = create_group(resume.get(), "arrays");
    for (const auto& [name, values] : s.resume->arrays)
      write_dataset(options, arrays.get(), name, values);
  }
}

std::system_error errno_error(const std::string& what) {
  return std::system_error(errno, std::generic_category(), what);
}

void sync_file(const std::filesystem::path& p) {
  const int fd = ::open(p.c_str(), O_RDONLY | O_CLOEXEC);
  if (fd < 0) throw errno_error("cannot open " + p.string());
  const int rc = ::fsync(fd);
  const int saved = errno;
  ::close(fd);
  if (rc != 0) throw std::system_error(saved, std::generic_category(), "fsync " + p.string());
}

// Makes the rename itself durable. Best effort: some file systems cannot sync a folder, and the
// new archive is already in place either way.
void sync_folder(const std::filesystem::path& p) {
  const int fd = ::open(p.c_str(), O_DIRECTORY | O_RDONLY | O_CLOEXEC);
  if (fd < 0) return;
  (void)::fsync(fd);
  ::close(fd);
}

// ---------------------------------------------------------------------------------- reading

struct Dataset {
  std::string name;
  Handle handle;
  hsize_t dims[2] = {0, 0};
  std::uint64_t elements = 0;
};

std::string describe_class(H5T_class_t c) {
  return c == H5T_FLOAT ? "floating-point numbers" : c == H5T_INTEGER ? "integers" : "strings";
}

class Reader {
 public:
  explicit Reader(std::string path) : path_(std::move(path)) {}

  [[noreturn]] void fail(const std::string& fault) const { throw InputError(path_ + ": " + fault); }

  ArchiveSnapshot read();

 private:
  void check_file_on_disk();
  void read_root(ArchiveSnapshot& s);
  void read_space(ArchiveSnapshot& s);
  void read_genome(ArchiveSnapshot& s);
  void read_elites(ArchiveSnapshot& s);
  void read_extras(ArchiveSnapshot& s);
  void read_novelty_archive(ArchiveSnapshot& s);
  void read_history(ArchiveSnapshot& s);
  void read_resume(ArchiveSnapshot& s);

  bool exists(const std::string& name);
  Handle group(const std::string& name);
  Dataset dataset(const std::string& name, H5T_class_t type_class, int rank);
  template <class T>
  std::vector<T> values(Dataset& ds);
  // Reads a dataset written by tessera's parallel writer on all threads; false when the dataset
  // is laid out otherwise (the caller then uses H5Dread).
  bool read_chunks(const Dataset& ds, hid_t props, unsigned char* out, std::size_t element_size,
                   hid_t memory_type);
  // `expected` entries, as many as `counted_by` has (named in the message otherwise).
  std::vector<std::string> strings(const std::string& name, std::uint64_t expected,
                                   const std::string& counted_by);

  Handle attribute(hid_t obj, const std::string& where, const char* name, H5T_class_t type_class);
  std::string string_attr(hid_t obj, const std::string& where, const char* name);
  std::int64_t int_attr(hid_t obj, const std::string& where, const char* name);
  std::uint64_t uint_attr(hid_t obj, const std::string& where, const char* name);
  double float_attr(hid_t obj, const std::string& where, const char* name);

  std::string path_;
  std::uint64_t file_size_ = 0;
  Handle file_;
  std::string context_ = "opening the file";
};

void Reader::check_file_on_disk() {
  namespace fs = std::filesystem;
  std::error_code ec;
  const fs::file_status st = fs::status(path_, ec);
  if (!fs::exists(st)) fail("no such file");
  if (fs::is_directory(st)) fail("is a directory, not an archive file");
  // Opening a named pipe blocks until a writer appears; devices and sockets are no archives.
  if (!fs::is_regular_file(st)) fail("is not a regular file (a named pipe, device or socket)");
  std::FILE* f = std::fopen(path_.c_str(), "rb");
  if (!f) fail(std::string("cannot be read: ") + std::strerror(errno));
  std::fclose(f);
  file_size_ = fs::file_size(path_, ec);
  if (ec) fail("cannot be read: " + ec.message());
  if (H5Fis_hdf5(path_.c_str()) <= 0) fail("not an HDF5 file");
}

bool Reader::exists(const std::string& name) {
  // H5Lexists fails rather than answering "no" when a parent group is missing: test each step.
  std::size_t start = 1;
  while (start <= name.size()) {
    const std::size_t end = std::min(name.find('/', start), name.size());
    const std::string prefix = name.substr(0, end);
    if (ok(H5Lexists(file_.get(), prefix.c_str(), H5P_DEFAULT), "H5Lexists") == 0) return false;
    start = end + 1;
  }
  return true;
}

Handle Reader::group(const std::string& name) {
  context_ = name;
  if (!exists(name)) fail("missing group " + name);
  Handle object(H5Oopen(file_.get(), name.c_str(), H5P_DEFAULT), H5Oclose, "H5Oopen");
  if (H5Iget_type(object.get()) != H5I_GROUP) fail(name + " is not a group");
  return object;
}

Dataset Reader::dataset(const std::string& name, H5T_class_t type_class, int rank) {
  context_ = name;
  if (!exists(name)) fail("missing dataset " + name);
  Dataset ds;
  ds.name = name;
  ds.handle = Handle(H5Oopen(file_.get(), name.c_str(), H5P_DEFAULT), H5Oclose, "H5Oopen");
  if (H5Iget_type(ds.handle.get()) != H5I_DATASET) fail(name + " is not a dataset");
  const Handle type = type_handle(H5Dget_type(ds.handle.get()), "H5Dget_type");
  if (H5Tget_class(type.get()) != type_class)
    fail(name + " does not hold " + describe_class(type_class));
  const Handle space = space_handle(H5Dget_space(ds.handle.get()), "H5Dget_space");
  if (H5Sget_simple_extent_type(space.get()) != H5S_SIMPLE ||
      H5Sget_simple_extent_ndims(space.get()) != rank)
    fail(name + " is not a " + std::to_string(rank) + "-dimensional dataset");
  ok(H5Sget_simple_extent_dims(space.get(), ds.dims, nullptr), "H5Sget_simple_extent_dims");
  ds.elements = ds.dims[0];
  if (rank == 2) {
    // Checked product: the dimensions come straight from the file.
    if (ds.dims[1] != 0 && ds.dims[0] > kMaxArrayElements / ds.dims[1])
      fail(name + " claims " + std::to_string(ds.dims[0]) + " x " + std::to_string(ds.dims[1]) +
           " values, more than tessera reads");
    ds.elements = ds.dims[0] * ds.dims[1];
  }
  if (ds.elements > kMaxArrayElements)
    fail(name + " claims " + std::to_string(ds.elements) + " values, more than tessera reads");
  return ds;
}

template <class T>
std::vector<T> Reader::values(Dataset& ds) {
  context_ = ds.name;
  if (ds.elements == 0) return {};
  // Only filters whose expansion is bounded: then the stored size bounds what we allocate.
  const Handle props = plist_handle(H5Dget_create_plist(ds.handle.get()), "H5Dget_create_plist");
  const int filters = ok(H5Pget_nfilters(props.get()), "H5Pget_nfilters");
  for (int i = 0; i < filters; ++i) {
    unsigned flags = 0, config = 0, values[8];
    std::size_t count = 8;  // in: room in `values`; out: how many the filter has
    char filter_name[64];
    const H5Z_filter_t id = H5Pget_filter2(props.get(), static_cast<unsigned>(i), &flags, &count,
                                           values, sizeof filter_name, filter_name, &config);
    if (id != H5Z_FILTER_DEFLATE && id != H5Z_FILTER_SHUFFLE && id != H5Z_FILTER_FLETCHER32)
      fail(ds.name + " uses HDF5 filter " + std::to_string(id) + ", which tessera does not read");
  }
  const std::uint64_t stored = H5Dget_storage_size(ds.handle.get());
  const std::uint64_t logical = ds.elements * sizeof(T);
  if (stored == 0) fail(ds.name + " has no stored data");
  if (stored > file_size_ || logical / kMaxInflation > stored)
    fail(ds.name + " claims " + std::to_string(ds.elements) + " values but stores only " +
         std::to_string(stored) + " bytes");
  std::vector<T> out(ds.elements);
  if (!read_chunks(ds, props.get(), reinterpret_cast<unsigned char*>(out.data()), sizeof(T),
                   Hdf5Types<T>::memory()))
    ok(H5Dread(ds.handle.get(), Hdf5Types<T>::memory(), H5S_ALL, H5S_ALL, H5P_DEFAULT, out.data()),
       "H5Dread");
  return out;
}

bool Reader::read_chunks(const Dataset& ds, hid_t props, unsigned char* out,
                         std::size_t element_size, hid_t memory_type) {
  // Only the layouts tessera writes: whole-row chunks through shuffle then deflate (with or
  // without Fletcher-32), or through Fletcher-32 alone, in the memory's own byte order. Anything
  // else goes through HDF5's ordinary read.
  if (std::endian::native != std::endian::little) return false;
  const int filters = H5Pget_nfilters(props);
  if (H5Pget_layout(props) != H5D_CHUNKED) return false;
  const auto filter = [&](unsigned index) {
    unsigned flags = 0, config = 0, values[8];
    std::size_t count = 8;  // in: room in `values`; out: how many the filter has
    return H5Pget_filter2(props, index, &flags, &count, values, 0, nullptr, &config);
  };
  bool deflated = false, checksum = false;
  if (filters == 1 && filter(0) == H5Z_FILTER_FLETCHER32) {
    checksum = true;
  } else if ((filters == 2 || filters == 3) && filter(0) == H5Z_FILTER_SHUFFLE &&
             filter(1) == H5Z_FILTER_DEFLATE) {
    deflated = true;
    checksum = filters == 3;
    if (checksum && filter(2) != H5Z_FILTER_FLETCHER32) return false;
  } else {
    return false;
  }
  const Handle type = type_handle(H5Dget_type(ds.handle.get()), "H5Dget_type");
  if (ok(H5Tequal(type.get(), memory_type), "H5Tequal") <= 0) return false;
  const Handle space = space_handle(H5Dget_space(ds.handle.get()), "H5Dget_space");
  const int rank = H5Sget_simple_extent_ndims(space.get());
  hsize_t chunk[2] = {0, 0};
  if (H5Pget_chunk(props, 2, chunk) != rank) return false;
  if (rank == 2 && chunk[1] != ds.dims[1]) return false;
  const std::uint64_t rows = ds.dims[0];
  const std::uint64_t row_bytes = element_size * (rank == 2 ? ds.dims[1] : 1);
  const std::uint64_t chunk_rows = chunk[0];
  if (chunk_rows == 0 || row_bytes == 0 || chunk_rows > kMaxDirectChunkBytes / row_bytes)
    return false;
  const std::uint64_t chunk_bytes = chunk_rows * row_bytes;
  const std::uint64_t chunks = (rows + chunk_rows - 1) / chunk_rows;
  const std::uint64_t total_bytes = rows * row_bytes;
  const std::uint64_t trailer = checksum ? 4 : 0;
  // A deflate stream never exceeds zlib's worst case (stored blocks); a stored chunk is exactly
  // its bytes and the checksum. A larger claim is not a chunk this reader knows how to expand,
  // and must not size its buffers.
  const std::uint64_t largest =
      (deflated ? max_deflated_bytes(chunk_bytes) : chunk_bytes) + trailer;

  // Stored chunks are read straight into `out` when their bytes and trailer fit there (the
  // trailer lands on the next chunk's first bytes, which that chunk's read then overwrites), so
  // only deflated chunks and the last ones pass through a buffer, kept from batch to batch.
  std::vector<std::vector<unsigned char>> stored(std::min(kChunkBatch, chunks));
  std::vector<std::uint32_t> sums(stored.size());
  std::vector<char> direct(stored.size());
  for (std::uint64_t first = 0; first < chunks; first += kChunkBatch) {
    const std::uint64_t n = std::min(kChunkBatch, chunks - first);
    for (std::uint64_t k = 0; k < n; ++k) {
      const hsize_t offset[2] = {(first + k) * chunk_rows, 0};
      hsize_t size = 0;
      // A chunk never written (fill values) or stored unusually: let HDF5 read the dataset.
      if (H5Dget_chunk_storage_size(ds.handle.get(), offset, &size) < 0 || size == 0) return false;
      if (size > file_size_) fail(ds.name + " has a chunk larger than the file");
      if (size > largest || (!deflated && size != largest) || size < trailer) return false;
      const std::uint64_t at = offset[0] * row_bytes;
      direct[k] = !deflated && at + size <= total_bytes;
      unsigned char* into = out + at;
      if (!direct[k]) {
        stored[k].resize(size);
        into = stored[k].data();
      }
      std::uint32_t mask = 0;
      ok(H5Dread_chunk(ds.handle.get(), H5P_DEFAULT, offset, &mask, into), "H5Dread_chunk");
      if (mask != 0) return false;  // a filter was skipped for this chunk
      if (checksum) {
        const unsigned char* tail = into + size - 4;
        sums[k] = static_cast<std::uint32_t>(tail[0]) | static_cast<std::uint32_t>(tail[1]) << 8 |
                  static_cast<std::uint32_t>(tail[2]) << 16 |
                  static_cast<std::uint32_t>(tail[3]) << 24;
      }
    }
    std::atomic<bool> damaged{false}, bad_sum{false};
    tbb::parallel_for(std::uint64_t{0}, n, [&](std::uint64_t k) {
      const std::uint64_t row = (first + k) * chunk_rows;
      const std::uint64_t have = std::min(chunk_rows, rows - row) * row_bytes;
      unsigned char* dst = out + row * row_bytes;
      const unsigned char* src = direct[k] ? dst : stored[k].data();
      const std::size_t size = direct[k] ? chunk_bytes : stored[k].size() - trailer;
      if (checksum && fletcher32(src, size) != sums[k]) {
        bad_sum = true;
        return;
      }
      if (direct[k]) return;
      if (!deflated) {
        std::memcpy(dst, src, have);
      } else if (have == chunk_bytes) {
        if (!decode_chunk(src, size, dst, chunk_bytes, element_size)) damaged = true;
      } else {
        // The last chunk is stored whole: expand it beside, keep the rows the dataset has.
        std::vector<unsigned char> whole(chunk_bytes);
        if (decode_chunk(src, size, whole.data(), chunk_bytes, element_size))
          std::memcpy(dst, whole.data(), have);
        else
          damaged = true;
      }
    });
    if (bad_sum)
      fail("truncated or damaged HDF5 file (a chunk of " + ds.name +
           " fails its Fletcher-32 checksum)");
    if (damaged)
      fail("truncated or damaged HDF5 file (a chunk of " + ds.name + " does not inflate)");
  }
  return true;
}

std::vector<std::string> Reader::strings(const std::string& name, std::uint64_t expected,
                                         const std::string& counted_by) {
  Dataset ds = dataset(name, H5T_STRING, 1);
  if (ds.elements != expected)
    fail(name + " has " + std::to_string(ds.elements) + " entries but " + counted_by + " has " +
         std::to_string(expected));
  std::vector<std::string> out;
  if (expected == 0) return out;
  // Read with the file's own string type (variable or fixed length, its character set).
  const Handle type = type_handle(H5Dget_type(ds.handle.get()), "H5Dget_type");
  if (ok(H5Tis_variable_str(type.get()), "H5Tis_variable_str") > 0) {
    std::vector<char*> pointers(expected, nullptr);
    ok(H5Dread(ds.handle.get(), type.get(), H5S_ALL, H5S_ALL, H5P_DEFAULT, pointers.data()),
       "H5Dread");
    for (char* p : pointers) out.emplace_back(p ? p : "");
    const Handle space = space_handle(H5Dget_space(ds.handle.get()), "H5Dget_space");
    H5Dvlen_reclaim(type.get(), space.get(), H5P_DEFAULT, pointers.data());
  } else {
    const std::size_t width = H5Tget_size(type.get());
    if (width == 0 || width > 65536) fail(name + " has strings longer than 65536 bytes");
    std::vector<char> buffer(expected * width);
    ok(H5Dread(ds.handle.get(), type.get(), H5S_ALL, H5S_ALL, H5P_DEFAULT, buffer.data()),
       "H5Dread");
    const bool space_padded = H5Tget_strpad(type.get()) == H5T_STR_SPACEPAD;
    for (std::size_t i = 0; i < expected; ++i) {
      std::string v(buffer.data() + i * width, width);
      v.erase(std::find(v.begin(), v.end(), '\0'), v.end());
      if (space_padded) v.erase(v.find_last_not_of(' ') + 1);
      out.push_back(std::move(v));
    }
  }
  return out;
}

Handle Reader::attribute(hid_t obj, const std::string& where, const char* name,
                         H5T_class_t type_class) {
  context_ = where + " attribute " + name;
  if (ok(H5Aexists(obj, name), "H5Aexists") == 0)
    fail("missing attribute " + std::string(name) + " on " + where);
  Handle attr = attr_handle(H5Aopen(obj, name, H5P_DEFAULT), "H5Aopen");
  const Handle space = space_handle(H5Aget_space(attr.get()), "H5Aget_space");
  if (H5Sget_simple_extent_npoints(space.get()) != 1)
    fail("attribute " + std::string(name) + " on " + where + " is not a single value");
  const Handle type = type_handle(H5Aget_type(attr.get()), "H5Aget_type");
  if (H5Tget_class(type.get()) != type_class)
    fail("attribute " + std::string(name) + " on " + where + " does not hold " +
         describe_class(type_class));
  return attr;
}

std::string Reader::string_attr(hid_t obj, const std::string& where, const char* name) {
  const Handle attr = attribute(obj, where, name, H5T_STRING);
  const Handle type = type_handle(H5Aget_type(attr.get()), "H5Aget_type");
  if (ok(H5Tis_variable_str(type.get()), "H5Tis_variable_str") > 0) {
    char* text = nullptr;
    ok(H5Aread(attr.get(), type.get(), &text), "H5Aread");
    std::string value = text ? text : "";
    H5free_memory(text);
    return value;
  }
  const std::size_t width = H5Tget_size(type.get());
  if (width == 0 || width > (std::size_t{1} << 24))
    fail("attribute " + std::string(name) + " on " + where + " is too long");
  std::vector<char> buffer(width);
  ok(H5Aread(attr.get(), type.get(), buffer.data()), "H5Aread");
  std::string value(buffer.begin(), std::find(buffer.begin(), buffer.end(), '\0'));
  if (H5Tget_strpad(type.get()) == H5T_STR_SPACEPAD) value.erase(value.find_last_not_of(' ') + 1);
  return value;
}

std::int64_t Reader::int_attr(hid_t obj, const std::string& where, const char* name) {
  const Handle attr = attribute(obj, where, name, H5T_INTEGER);
  const Handle type = type_handle(H5Aget_type(attr.get()), "H5Aget_type");
  if (H5Tget_sign(type.get()) == H5T_SGN_NONE) {
    std::uint64_t v = 0;
    ok(H5Aread(attr.get(), H5T_NATIVE_UINT64, &v), "H5Aread");
    if (v > static_cast<std::uint64_t>(INT64_MAX))
      fail("attribute " + std::string(name) + " on " + where + " is out of range");
    return static_cast<std::int64_t>(v);
  }
  std::int64_t v = 0;
  ok(H5Aread(attr.get(), H5T_NATIVE_INT64, &v), "H5Aread");
  return v;
}

std::uint64_t Reader::uint_attr(hid_t obj, const std::string& where, const char* name) {
  const Handle attr = attribute(obj, where, name, H5T_INTEGER);
  const Handle type = type_handle(H5Aget_type(attr.get()), "H5Aget_type");
  if (H5Tget_sign(type.get()) != H5T_SGN_NONE) {
    std::int64_t v = 0;
    ok(H5Aread(attr.get(), H5T_NATIVE_INT64, &v), "H5Aread");
    if (v < 0) fail("attribute " + std::string(name) + " on " + where + " is negative");
    return static_cast<std::uint64_t>(v);
  }
  std::uint64_t v = 0;
  ok(H5Aread(attr.get(), H5T_NATIVE_UINT64, &v), "H5Aread");
  return v;
}

double Reader::float_attr(hid_t obj, const std::string& where, const char* name) {
  const Handle attr = attribute(obj, where, name, H5T_FLOAT);
  double v = 0;
  ok(H5Aread(attr.get(), H5T_NATIVE_DOUBLE, &v), "H5Aread");
  return v;
}

void Reader::read_root(ArchiveSnapshot& s) {
  context_ = "the root attributes";
  const char* other_kind =
      "an HDF5 file, but not a tessera archive (no format=\"tessera-archive\")";
  const hid_t root = file_.get();
  if (ok(H5Aexists(root, "format"), "H5Aexists") == 0) fail(other_kind);
  {
    const Handle attr = attr_handle(H5Aopen(root, "format", H5P_DEFAULT), "H5Aopen");
    const Handle type = type_handle(H5Aget_type(attr.get()), "H5Aget_type");
    if (H5Tget_class(type.get()) != H5T_STRING) fail(other_kind);
  }
  if (string_attr(root, "/", "format") != "tessera-archive") fail(other_kind);
  const std::int64_t version = int_attr(root, "/", "format_version");
  if (version > kArchiveFormatVersion)
    fail("archive format " + std::to_string(version) +
         " is newer than this tessera reads (formats " +
         std::to_string(kOldestArchiveFormatVersion) + " to " +
         std::to_string(kArchiveFormatVersion) + "); use a newer tessera");
  if (version < kOldestArchiveFormatVersion)
    fail("unknown archive format version " + std::to_string(version));
  s.format_version = version;
  s.problem = string_attr(root, "/", "problem");
  s.config = string_attr(root, "/", "config");
  s.seed = uint_attr(root, "/", "seed");
  s.evaluations = uint_attr(root, "/", "evaluations");
  s.tool_version = string_attr(root, "/", "tool_version");
  // Files written before the streams were versioned drew with version 1; a version this
  // tessera does not know is kept as read and refused only by a resume (stream_version).
  s.random_streams = ok(H5Aexists(root, "random_streams"), "H5Aexists") > 0
                         ? int_attr(root, "/", "random_streams")
                         : kOldestStreamVersionNumber;
}

void Reader::read_space(ArchiveSnapshot& s) {
  const Handle space = group("/space");
  s.space_kind = string_attr(space.get(), "/space", "kind");
  if (s.space_kind != "grid" && s.space_kind != "cvt" && s.space_kind != "unstructured")
    fail("/space kind \"" + s.space_kind + "\" is not grid, cvt or unstructured");
  Dataset lower = dataset("/space/lower", H5T_FLOAT, 1);
  Dataset upper = dataset("/space/upper", H5T_FLOAT, 1);
  const std::uint64_t d = lower.elements;
  if (d == 0) fail("/space/lower is empty");
  if (d > kMaxDescriptorSize)
    fail("/space/lower has " + std::to_string(d) + " dimensions, more than tessera reads");
  if (upper.elements != d)
    fail("/space/upper has " + std::to_string(upper.elements) + " entries but /space/lower has " +
         std::to_string(d));
  s.descriptor_bounds.lower = values<double>(lower);
  s.descriptor_bounds.upper = values<double>(upper);
  s.descriptor_names = strings("/space/names", d, "/space/lower");
  if (s.space_kind == "grid") {
    Dataset res = dataset("/space/resolution", H5T_INTEGER, 1);
    if (res.elements != d)
      fail("/space/resolution has " + std::to_string(res.elements) +
           " entries but /space/lower has " + std::to_string(d));
    s.resolution = values<std::int64_t>(res);
  } else if (s.space_kind == "cvt") {
    Dataset centroids = dataset("/space/centroids", H5T_FLOAT, 2);
    if (centroids.dims[1] != d)
      fail("/space/centroids has " + std::to_string(centroids.dims[1]) +
           " columns but /space/lower has " + std::to_string(d));
    if (centroids.dims[0] == 0) fail("/space/centroids is empty");
    if (centroids.dims[0] > static_cast<std::uint64_t>(kMaxCells))
      fail("/space/centroids has more than 2^28 rows");
    s.centroids = values<double>(centroids);
  }
  // The number of cells bounds the number of elites read next.
  if (auto fault = space_fault(s)) fail(*fault);
}

void Reader::read_genome(ArchiveSnapshot& s) {
  group("/genome");
  Dataset lower = dataset("/genome/lower", H5T_FLOAT, 1);
  Dataset upper = dataset("/genome/upper", H5T_FLOAT, 1);
  if (lower.elements == 0) fail("/genome/lower is empty");
  if (lower.elements > kMaxGenomeSize)
    fail("/genome/lower has " + std::to_string(lower.elements) +
         " entries, more than tessera reads");
  if (upper.elements != lower.elements)
    fail("/genome/upper has " + std::to_string(upper.elements) + " entries but /genome/lower has " +
         std::to_string(lower.elements));
  s.genome_bounds.lower = values<double>(lower);
  s.genome_bounds.upper = values<double>(upper);
}

void Reader::read_elites(ArchiveSnapshot& s) {
  group("/elites");
  const std::uint64_t g = s.genome_size();
  const std::uint64_t d = s.descriptor_size();
  Dataset fitness = dataset("/elites/fitness", H5T_FLOAT, 1);
  Dataset cell = dataset("/elites/cell", H5T_INTEGER, 1);
  Dataset birth = dataset("/elites/birth", H5T_INTEGER, 1);
  Dataset genome = dataset("/elites/genome", H5T_FLOAT, 2);
  Dataset descriptor = dataset("/elites/descriptor", H5T_FLOAT, 2);
  const std::uint64_t n = fitness.elements;
  for (const Dataset* ds : {&cell, &birth, &genome, &descriptor})
    if (ds->dims[0] != n)
      fail(ds->name + " has " + std::to_string(ds->dims[0]) + " rows but /elites/fitness has " +
           std::to_string(n));
  if (genome.dims[1] != g)
    fail("/elites/genome has " + std::to_string(genome.dims[1]) +
         " columns but /genome/lower has " + std::to_string(g));
  if (descriptor.dims[1] != d)
    fail("/elites/descriptor has " + std::to_string(descriptor.dims[1]) +
         " columns but /space/lower has " + std::to_string(d));
  // Before allocating: no more elites than cells (unstructured archives number them 0..N-1).
  const std::uint64_t cells = s.space_kind == "unstructured"
                                  ? static_cast<std::uint64_t>(kMaxCells)
                                  : static_cast<std::uint64_t>(s.cell_count());
  if (n > cells) fail(std::to_string(n) + " elites for " + std::to_string(cells) + " cells");
  s.fitness = values<double>(fitness);
  s.cell = values<std::int64_t>(cell);
  s.birth = values<std::uint64_t>(birth);
  s.genome = values<double>(genome);
  s.descriptor = values<double>(descriptor);
}

// Format 2: the extra figures of every elite, [N, E], with their names [E].
void Reader::read_extras(ArchiveSnapshot& s) {
  Dataset extras = dataset("/elites/extras", H5T_FLOAT, 2);
  const std::uint64_t n = s.elite_count();
  if (extras.dims[0] != n)
    fail("/elites/extras has " + std::to_string(extras.dims[0]) + " rows but /elites/fitness has " +
         std::to_string(n));
  const std::uint64_t e = extras.dims[1];
  if (e > kMaxExtraSize)
    fail("/elites/extras has " + std::to_string(e) + " columns, more than tessera reads");
  s.extra_names = strings("/elites/extra_names", e, "/elites/extras (columns)");
  s.extras = values<double>(extras);
}

// Format 2, population searches: their novelty archive, M rows without cells.
void Reader::read_novelty_archive(ArchiveSnapshot& s) {
  context_ = "/novelty_archive";
  if (!exists("/novelty_archive")) return;
  group("/novelty_archive");
  Dataset fitness = dataset("/novelty_archive/fitness", H5T_FLOAT, 1);
  Dataset birth = dataset("/novelty_archive/birth", H5T_INTEGER, 1);
  Dataset genome = dataset("/novelty_archive/genome", H5T_FLOAT, 2);
  Dataset descriptor = dataset("/novelty_archive/descriptor", H5T_FLOAT, 2);
  const std::uint64_t m = fitness.elements;
  for (const Dataset* ds : {&birth, &genome, &descriptor})
    if (ds->dims[0] != m)
      fail(ds->name + " has " + std::to_string(ds->dims[0]) +
           " rows but /novelty_archive/fitness has " + std::to_string(m));
  if (genome.dims[1] != s.genome_size())
    fail("/novelty_archive/genome has " + std::to_string(genome.dims[1]) +
         " columns but /genome/lower has " + std::to_string(s.genome_size()));
  if (descriptor.dims[1] != s.descriptor_size())
    fail("/novelty_archive/descriptor has " + std::to_string(descriptor.dims[1]) +
         " columns but /space/lower has " + std::to_string(s.descriptor_size()));
  BehaviourRows b;
  b.fitness = values<double>(fitness);
  b.birth = values<std::uint64_t>(birth);
  b.genome = values<double>(genome);
  b.descriptor = values<double>(descriptor);
  s.novelty_archive = std::move(b);
}

void Reader::read_history(ArchiveSnapshot& s) {
  const Handle history = group("/history");
  // Format 1 called the problem's lowest fitness the QD-score offset.
  s.fitness_floor =
      float_attr(history.get(), "/history", s.format_version >= 2 ? "fitness_floor" : "qd_offset");
  Dataset evaluations = dataset("/history/evaluations", H5T_INTEGER, 1);
  Dataset coverage = dataset("/history/coverage", H5T_FLOAT, 1);
  Dataset qd_score = dataset("/history/qd_score", H5T_FLOAT, 1);
  Dataset max_fitness = dataset("/history/max_fitness", H5T_FLOAT, 1);
  const std::uint64_t t = evaluations.elements;
  if (t > kMaxHistoryRows)
    fail("/history/evaluations has " + std::to_string(t) + " rows, more than tessera reads");
  for (const Dataset* ds : {&coverage, &qd_score, &max_fitness})
    if (ds->elements != t)
      fail(ds->name + " has " + std::to_string(ds->elements) +
           " rows but /history/evaluations has " + std::to_string(t));
  const auto e = values<std::uint64_t>(evaluations);
  const auto c = values<double>(coverage);
  const auto q = values<double>(qd_score);
  const auto m = values<double>(max_fitness);
  s.history.resize(t);
  for (std::size_t i = 0; i < t; ++i) s.history[i] = HistoryRow{e[i], c[i], q[i], m[i]};
}

// Counters an archive without a /resume counter_names attribute may hold: those tessera wrote
// before the attribute existed.
const char* const kEarlyCounterNames[] = {"invalid",
                                          "out_of_bounds",
                                          "new_cells",
                                          "improvements",
                                          "failed:crash",
                                          "failed:timeout",
                                          "failed:malformed answer",
                                          "failed:unknown id",
                                          "failed:not finite",
                                          "failed:wrong descriptor length",
                                          "failed:worker error",
                                          "failed:wrong genome digest"};

std::vector<std::string> link_names(hid_t group, std::size_t limit) {
  H5G_info_t info;
  ok(H5Gget_info(group, &info), "H5Gget_info");
  std::vector<std::string> names;
  for (hsize_t i = 0; i < info.nlinks && names.size() <= limit; ++i) {
    const ssize_t length =
        ok(H5Lget_name_by_idx(group, ".", H5_INDEX_NAME, H5_ITER_INC, i, nullptr, 0, H5P_DEFAULT),
           "H5Lget_name_by_idx");
    std::string name(static_cast<std::size_t>(std::min<ssize_t>(length, 4096)) + 1, '\0');
    ok(H5Lget_name_by_idx(group, ".", H5_INDEX_NAME, H5_ITER_INC, i, name.data(), name.size(),
                          H5P_DEFAULT),
       "H5Lget_name_by_idx");
    name.resize(std::strlen(name.c_str()));
    names.push_back(std::move(name));
  }
  return names;
}

void Reader::read_resume(ArchiveSnapshot& s) {
  context_ = "/resume";
  if (!exists("/resume")) return;
  const Handle resume = group("/resume");
  ResumeState state;
  state.algorithm = string_attr(resume.get(), "/resume", "algorithm");
  state.next_batch = uint_attr(resume.get(), "/resume", "next_batch");
  const Handle counters = group("/resume/counters");
  std::vector<std::string> counter_names;
  if (ok(H5Aexists(resume.get(), "counter_names"), "H5Aexists") > 0) {
    const std::string names = string_attr(resume.get(), "/resume", "counter_names");
    for (std::size_t start = 0, end; (end = names.find('\n', start)) != std::string::npos;
         start = end + 1) {
      counter_names.push_back(names.substr(start, end - start));
      if (counter_names.size() > kMaxResumeEntries)
        fail("/resume/counters has more than " + std::to_string(kMaxResumeEntries) + " entries");
      if (!valid_resume_name(counter_names.back()))
        fail("/resume counter_names holds an unusable name");
    }
    for (const auto& name : counter_names)
      state.counters[name] = uint_attr(counters.get(), "/resume/counters", name.c_str());
  } else {
    for (const char* name : kEarlyCounterNames)
      if (ok(H5Aexists(counters.get(), name), "H5Aexists") > 0)
        state.counters[name] = uint_attr(counters.get(), "/resume/counters", name);
  }
  const Handle arrays = group("/resume/arrays");
  const auto array_names = link_names(arrays.get(), kMaxResumeEntries);
  if (array_names.size() > kMaxResumeEntries)
    fail("/resume/arrays has more than " + std::to_string(kMaxResumeEntries) + " entries");
  for (const auto& name : array_names) {
    Dataset ds = dataset("/resume/arrays/" + name, H5T_FLOAT, 1);
    state.arrays[name] = values<double>(ds);
  }
  s.resume = std::move(state);
}

ArchiveSnapshot Reader::read() {
  check_file_on_disk();
  ArchiveSnapshot s;
  try {
    const Handle fapl = access_properties();
    try {
      file_ = Handle(H5Fopen(path_.c_str(), H5F_ACC_RDONLY, fapl.get()), H5Fclose, "H5Fopen");
    } catch (const Hdf5Failure&) {
      fail("truncated or damaged HDF5 file (it cannot be opened)");
    }
    // libhdf5 trusts the sizes in the global heap, which carries no checksum.
    if (auto fault = global_heap_fault(path_)) fail("damaged HDF5 file (" + *fault + ")");
    read_root(s);
    read_space(s);
    read_genome(s);
    read_elites(s);
    if (s.format_version >= 2) {
      read_extras(s);
      read_novelty_archive(s);
    }
    read_history(s);
    read_resume(s);
    file_.close("H5Fclose");
  } catch (const Hdf5Failure&) {
    fail("truncated or damaged HDF5 file (reading " + context_ + ")");
  }
  if (auto fault = snapshot_fault(s)) fail(*fault);
  return s;
}

}  // namespace

void write_archive_file(const std::string& path, const ArchiveSnapshot& snapshot,
                        const ArchiveWriteOptions& options) {
  namespace fs = std::filesystem;
  if (auto fault = snapshot_fault(snapshot))
    throw std::invalid_argument(path + ": cannot write archive: " + *fault);
  const fs::path target(path);
  if (target.filename().empty()) throw InputError(path + ": cannot write archive: not a file name");
  const fs::path folder = target.has_parent_path() ? target.parent_path() : fs::path(".");
  const fs::path temp = temporary_path(target);
  remove_stale_temporaries(target);

  std::lock_guard<std::mutex> lock(hdf5_mutex());
  H5Eset_auto2(H5E_DEFAULT, nullptr, nullptr);  // errors come back as one line, never printed
  try {
    // Create the file ourselves first: the system's reason ("Permission denied") is clearer
    // than HDF5's, and a stale temporary file of this process is truncated.
    const int fd = ::open(temp.c_str(), O_WRONLY | O_CREAT | O_TRUNC | O_CLOEXEC, 0666);
    if (fd < 0) throw errno_error("cannot create " + temp.string());
    ::close(fd);
    {
      const Handle fapl = access_properties();
      Handle file(H5Fcreate(temp.c_str(), H5F_ACC_TRUNC, H5P_DEFAULT, fapl.get()), H5Fclose,
                  "H5Fcreate");
      write_contents(file.get(), snapshot, options);
      ok(H5Fflush(file.get(), H5F_SCOPE_GLOBAL), "H5Fflush");
      file.close("H5Fclose");  // explicit: failing to write the last metadata must throw
    }
    sync_file(temp);
    if (std::rename(temp.c_str(), target.c_str()) != 0)
      throw errno_error("cannot rename " + temp.string() + " to " + path);
    sync_folder(folder);
  } catch (const std::exception& e) {
    std::error_code ignored;
    fs::remove(temp, ignored);
    throw InputError(path + ": cannot write archive: " + e.what());
  }
}

ArchiveSnapshot read_archive_file(const std::string& path) {
  std::lock_guard<std::mutex> lock(hdf5_mutex());
  H5Eset_auto2(H5E_DEFAULT, nullptr, nullptr);  // errors come back as one line, never printed
  Reader reader(path);
  return reader.read();
}

}  // namespace tessera
