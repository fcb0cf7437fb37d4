#include "io/archive_file.hpp"

#include <H5Cpp.h>
#include <fcntl.h>
#include <unistd.h>

#include <algorithm>
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

#include "core/errors.hpp"
#include "core/space.hpp"
#include "io/snapshot_check.hpp"

namespace tessera {
namespace {

// The Debian HDF5 library is built without thread safety: every call into it is serialised.
std::mutex& hdf5_mutex() {
  static std::mutex m;
  return m;
}

// Chunks of about 512 KiB fit the default 1 MiB chunk cache; shuffle + deflate level 1 squeezes
// doubles well enough while keeping the writer close to disk speed (see bench_archive_io).
constexpr std::uint64_t kChunkBytes = 512 * 1024;
constexpr unsigned kDeflateLevel = 1;

// Deflate cannot expand data by more than 1032:1 (zlib technical details, zlib.net, from memory),
// so a dataset stored in S bytes with the filters we accept holds at most about 1032 * S bytes.
constexpr std::uint64_t kMaxInflation = 1100;

template <class T>
struct Hdf5Types;
template <>
struct Hdf5Types<double> {
  static const H5::PredType& file() { return H5::PredType::IEEE_F64LE; }
  static const H5::PredType& memory() { return H5::PredType::NATIVE_DOUBLE; }
  static constexpr H5T_class_t kClass = H5T_FLOAT;
};
template <>
struct Hdf5Types<std::int64_t> {
  static const H5::PredType& file() { return H5::PredType::STD_I64LE; }
  static const H5::PredType& memory() { return H5::PredType::NATIVE_INT64; }
  static constexpr H5T_class_t kClass = H5T_INTEGER;
};
template <>
struct Hdf5Types<std::uint64_t> {
  static const H5::PredType& file() { return H5::PredType::STD_U64LE; }
  static const H5::PredType& memory() { return H5::PredType::NATIVE_UINT64; }
  static constexpr H5T_class_t kClass = H5T_INTEGER;
};

H5::StrType utf8_string_type() {
  H5::StrType t(H5::PredType::C_S1, H5T_VARIABLE);
  t.setCset(H5T_CSET_UTF8);
  return t;
}

H5::FileAccPropList access_properties() {
  H5::FileAccPropList fapl;
  // Close the file for real when the handle goes, and do not depend on the file system
  // supporting locks: archives are replaced by rename, never written in place.
  fapl.setFcloseDegree(H5F_CLOSE_STRONG);
  H5Pset_file_locking(fapl.getId(), false, true);
  return fapl;
}

// The deepest message on HDF5's error stack (the actual cause), on one line.
std::string hdf5_reason(const H5::Exception& e) {
  std::string deepest;
  H5Ewalk2(
      H5E_DEFAULT, H5E_WALK_DOWNWARD,
      [](unsigned, const H5E_error2_t* err, void* out) -> herr_t {
        if (err->desc && *err->desc) *static_cast<std::string*>(out) = err->desc;
        return 0;
      },
      &deepest);
  if (deepest.empty()) deepest = e.getDetailMsg();
  std::replace(deepest.begin(), deepest.end(), '\n', ' ');
  return deepest;
}

// ---------------------------------------------------------------------------------- writing

void write_string_attr(H5::H5Object& obj, const char* name, const std::string& value) {
  const H5::StrType t = utf8_string_type();
  H5::Attribute a = obj.createAttribute(name, t, H5::DataSpace(H5S_SCALAR));
  a.write(t, value);
}

template <class T>
void write_scalar_attr(H5::H5Object& obj, const char* name, T value) {
  H5::Attribute a = obj.createAttribute(name, Hdf5Types<T>::file(), H5::DataSpace(H5S_SCALAR));
  a.write(Hdf5Types<T>::memory(), &value);
}

// A chunked, compressed dataset of `rows` rows (x `cols` columns when cols > 0). The first
// dimension is unlimited so that zero rows is a valid, readable dataset.
H5::DataSet create_dataset(H5::Group& parent, const std::string& name, const H5::DataType& type,
                           std::size_t element_bytes, std::uint64_t rows, std::uint64_t cols) {
  const int rank = cols == 0 ? 1 : 2;
  const hsize_t dims[2] = {rows, cols};
  const hsize_t max_dims[2] = {H5S_UNLIMITED, cols};
  const std::uint64_t row_bytes = element_bytes * std::max<std::uint64_t>(cols, 1);
  const std::uint64_t chunk_rows =
      std::clamp<std::uint64_t>(kChunkBytes / row_bytes, 1, std::max<std::uint64_t>(rows, 1));
  const hsize_t chunk[2] = {chunk_rows, cols};
  H5::DSetCreatPropList props;
  props.setChunk(rank, chunk);
  props.setShuffle();
  props.setDeflate(kDeflateLevel);
  return parent.createDataSet(name, type, H5::DataSpace(rank, dims, max_dims), props);
}

template <class T>
void write_dataset(H5::Group& parent, const std::string& name, const std::vector<T>& data,
                   std::uint64_t cols = 0) {
  const std::uint64_t rows = cols == 0 ? data.size() : data.size() / cols;
  H5::DataSet ds = create_dataset(parent, name, Hdf5Types<T>::file(), sizeof(T), rows, cols);
  if (rows > 0) ds.write(data.data(), Hdf5Types<T>::memory());
}

void write_strings(H5::Group& parent, const std::string& name,
                   const std::vector<std::string>& values) {
  const H5::StrType t = utf8_string_type();
  H5::DataSet ds = create_dataset(parent, name, t, sizeof(char*), values.size(), 0);
  std::vector<const char*> pointers;
  for (const auto& v : values) pointers.push_back(v.c_str());
  if (!pointers.empty()) ds.write(pointers.data(), t);
}

void write_contents(H5::H5File& file, const ArchiveSnapshot& s) {
  write_string_attr(file, "format", "tessera-archive");
  write_scalar_attr<std::int64_t>(file, "format_version", kArchiveFormatVersion);
  write_string_attr(file, "problem", s.problem);
  write_string_attr(file, "config", s.config);
  write_scalar_attr<std::uint64_t>(file, "seed", s.seed);
  write_scalar_attr<std::uint64_t>(file, "evaluations", s.evaluations);
  write_string_attr(file, "tool_version", s.tool_version);

  const std::uint64_t d = s.descriptor_size();
  H5::Group space = file.createGroup("/space");
  write_string_attr(space, "kind", s.space_kind);
  write_dataset(space, "lower", s.descriptor_bounds.lower);
  write_dataset(space, "upper", s.descriptor_bounds.upper);
  if (s.space_kind == "grid") write_dataset(space, "resolution", s.resolution);
  if (s.space_kind == "cvt") write_dataset(space, "centroids", s.centroids, d);
  write_strings(space, "names", s.descriptor_names);

  H5::Group genome = file.createGroup("/genome");
  write_dataset(genome, "lower", s.genome_bounds.lower);
  write_dataset(genome, "upper", s.genome_bounds.upper);

  H5::Group elites = file.createGroup("/elites");
  write_dataset(elites, "cell", s.cell);
  write_dataset(elites, "genome", s.genome, s.genome_size());
  write_dataset(elites, "descriptor", s.descriptor, d);
  write_dataset(elites, "fitness", s.fitness);
  write_dataset(elites, "birth", s.birth);

  H5::Group history = file.createGroup("/history");
  write_scalar_attr<double>(history, "qd_offset", s.qd_offset);
  std::vector<std::uint64_t> evaluations;
  std::vector<double> coverage, qd_score, max_fitness;
  for (const HistoryRow& row : s.history) {
    evaluations.push_back(row.evaluations);
    coverage.push_back(row.coverage);
    qd_score.push_back(row.qd_score);
    max_fitness.push_back(row.max_fitness);
  }
  write_dataset(history, "evaluations", evaluations);
  write_dataset(history, "coverage", coverage);
  write_dataset(history, "qd_score", qd_score);
  write_dataset(history, "max_fitness", max_fitness);

  if (s.resume) {
    H5::Group resume = file.createGroup("/resume");
    write_string_attr(resume, "algorithm", s.resume->algorithm);
    write_scalar_attr<std::uint64_t>(resume, "next_batch", s.resume->next_batch);
    H5::Group counters = resume.createGroup("counters");
    for (const auto& [name, value] : s.resume->counters)
      write_scalar_attr<std::uint64_t>(counters, name.c_str(), value);
    H5::Group arrays = resume.createGroup("arrays");
    for (const auto& [name, values] : s.resume->arrays) write_dataset(arrays, name, values);
  }
}

std::system_error errno_error(const std::string& what) {
  return std::system_error(errno, std::generic_category(), what);
}

void sync_path(const std::filesystem::path& p, bool directory) {
  const int fd = ::open(p.c_str(), (directory ? O_DIRECTORY : 0) | O_RDONLY | O_CLOEXEC);
  if (fd < 0) throw errno_error("open " + p.string());
  const int rc = ::fsync(fd);
  const int saved = errno;
  ::close(fd);
  // Some file systems cannot sync a directory; the rename has happened all the same.
  if (rc != 0 && !(directory && (saved == EINVAL || saved == ENOTSUP)))
    throw std::system_error(saved, std::generic_category(), "fsync " + p.string());
}

// ---------------------------------------------------------------------------------- reading

struct Dataset {
  std::string name;
  H5::DataSet handle;
  hsize_t dims[2] = {0, 0};
  std::uint64_t elements = 0;
};

class Reader {
 public:
  explicit Reader(std::string path) : path_(std::move(path)) {}

  [[noreturn]] void fail(const std::string& fault) const { throw InputError(path_ + ": " + fault); }
  const std::string& context() const { return context_; }

  ArchiveSnapshot read();

 private:
  void check_file_on_disk();
  void open();
  void read_root(ArchiveSnapshot& s);
  void read_space(ArchiveSnapshot& s);
  void read_genome(ArchiveSnapshot& s);
  void read_elites(ArchiveSnapshot& s);
  void read_history(ArchiveSnapshot& s);
  void read_resume(ArchiveSnapshot& s);

  bool exists(const std::string& name);
  H5::Group group(const std::string& name);
  Dataset dataset(const std::string& name, H5T_class_t type_class, int rank);
  template <class T>
  std::vector<T> values(Dataset& ds);
  template <class T>
  std::vector<T> read_vector(const std::string& name) {
    Dataset ds = dataset(name, Hdf5Types<T>::kClass, 1);
    return values<T>(ds);
  }
  std::vector<std::string> strings(const std::string& name, std::uint64_t expected);

  H5::Attribute attribute(H5::H5Object& obj, const std::string& where, const char* name);
  std::string string_attr(H5::H5Object& obj, const std::string& where, const char* name);
  std::int64_t int_attr(H5::H5Object& obj, const std::string& where, const char* name);
  std::uint64_t uint_attr(H5::H5Object& obj, const std::string& where, const char* name);
  double float_attr(H5::H5Object& obj, const std::string& where, const char* name);

  std::string path_;
  std::uint64_t file_size_ = 0;
  H5::H5File file_;
  std::string context_ = "opening the file";
};

void Reader::check_file_on_disk() {
  namespace fs = std::filesystem;
  std::error_code ec;
  const fs::file_status st = fs::status(path_, ec);
  if (!fs::exists(st)) fail("no such file");
  if (fs::is_directory(st)) fail("is a directory, not an archive file");
  std::FILE* f = std::fopen(path_.c_str(), "rb");
  if (!f) fail(std::string("cannot be read: ") + std::strerror(errno));
  std::fclose(f);
  file_size_ = fs::file_size(path_, ec);
  if (ec) fail("cannot be read: " + ec.message());
  if (H5Fis_hdf5(path_.c_str()) <= 0) fail("not an HDF5 file");
}

void Reader::open() {
  try {
    file_ = H5::H5File(path_, H5F_ACC_RDONLY, H5::FileCreatPropList::DEFAULT, access_properties());
  } catch (const H5::Exception&) {
    fail("truncated or damaged HDF5 file (it cannot be opened)");
  }
}

bool Reader::exists(const std::string& name) {
  // H5Lexists fails rather than answering "no" when a parent group is missing: test each step.
  std::string prefix;
  std::size_t start = 1;
  while (start <= name.size()) {
    const std::size_t end = std::min(name.find('/', start), name.size());
    prefix = name.substr(0, end);
    const htri_t found = H5Lexists(file_.getId(), prefix.c_str(), H5P_DEFAULT);
    if (found < 0) throw H5::Exception("H5Lexists", "link lookup failed");
    if (found == 0) return false;
    start = end + 1;
  }
  return true;
}

H5::Group Reader::group(const std::string& name) {
  context_ = name;
  if (!exists(name)) fail("missing group " + name);
  if (file_.childObjType(name) != H5O_TYPE_GROUP) fail(name + " is not a group");
  return file_.openGroup(name);
}

Dataset Reader::dataset(const std::string& name, H5T_class_t type_class, int rank) {
  context_ = name;
  if (!exists(name)) fail("missing dataset " + name);
  if (file_.childObjType(name) != H5O_TYPE_DATASET) fail(name + " is not a dataset");
  Dataset ds;
  ds.name = name;
  ds.handle = file_.openDataSet(name);
  if (ds.handle.getTypeClass() != type_class) {
    const char* wanted = type_class == H5T_FLOAT     ? "floating-point numbers"
                         : type_class == H5T_INTEGER ? "integers"
                                                     : "strings";
    fail(name + " does not hold " + wanted);
  }
  const H5::DataSpace space = ds.handle.getSpace();
  if (!space.isSimple() || space.getSimpleExtentNdims() != rank)
    fail(name + " is not a " + std::to_string(rank) + "-dimensional dataset");
  space.getSimpleExtentDims(ds.dims);
  ds.elements = ds.dims[0];
  if (rank == 2) {
    // Checked product: dims come straight from the file.
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
  // Only filters whose expansion is bounded: the stored size then bounds what we allocate.
  const H5::DSetCreatPropList props = ds.handle.getCreatePlist();
  for (int i = 0; i < props.getNfilters(); ++i) {
    unsigned flags = 0;
    std::size_t nelements = 0;
    unsigned config = 0;
    char filter_name[64];
    const H5Z_filter_t id = props.getFilter(i, flags, nelements, nullptr, sizeof filter_name,
                                            filter_name, config);
    if (id != H5Z_FILTER_DEFLATE && id != H5Z_FILTER_SHUFFLE && id != H5Z_FILTER_FLETCHER32)
      fail(ds.name + " uses HDF5 filter " + std::to_string(id) + ", which tessera does not read");
  }
  const std::uint64_t stored = ds.handle.getStorageSize();
  const std::uint64_t logical = ds.elements * sizeof(T);
  if (stored == 0) fail(ds.name + " has no stored data");
  if (stored > file_size_ || logical / kMaxInflation > stored)
    fail(ds.name + " claims " + std::to_string(ds.elements) + " values but stores only " +
         std::to_string(stored) + " bytes");
  std::vector<T> out(ds.elements);
  ds.handle.read(out.data(), Hdf5Types<T>::memory());
  return out;
}

std::vector<std::string> Reader::strings(const std::string& name, std::uint64_t expected) {
  Dataset ds = dataset(name, H5T_STRING, 1);
  if (ds.elements != expected)
    fail(name + " has " + std::to_string(ds.elements) + " entries but /space/lower has " +
         std::to_string(expected));
  std::vector<std::string> out;
  if (expected == 0) return out;
  const H5::StrType type = ds.handle.getStrType();
  if (type.isVariableStr()) {
    std::vector<char*> pointers(expected, nullptr);
    ds.handle.read(pointers.data(), type);
    for (char* p : pointers) out.emplace_back(p ? p : "");
    H5Dvlen_reclaim(type.getId(), ds.handle.getSpace().getId(), H5P_DEFAULT, pointers.data());
  } else {
    const std::size_t width = type.getSize();
    if (width > 65536) fail(name + " has strings longer than 65536 bytes");
    std::vector<char> buffer(expected * width);
    ds.handle.read(buffer.data(), type);
    for (std::size_t i = 0; i < expected; ++i) {
      std::string v(buffer.data() + i * width, width);
      v.erase(std::find(v.begin(), v.end(), '\0'), v.end());
      if (type.getStrpad() == H5T_STR_SPACEPAD) v.erase(v.find_last_not_of(' ') + 1);
      out.push_back(std::move(v));
    }
  }
  return out;
}

H5::Attribute Reader::attribute(H5::H5Object& obj, const std::string& where, const char* name) {
  context_ = where + " attribute " + name;
  if (!obj.attrExists(name)) fail("missing attribute " + std::string(name) + " on " + where);
  H5::Attribute a = obj.openAttribute(name);
  if (a.getSpace().getSimpleExtentNpoints() != 1)
    fail("attribute " + std::string(name) + " on " + where + " is not a single value");
  return a;
}

std::string Reader::string_attr(H5::H5Object& obj, const std::string& where, const char* name) {
  H5::Attribute a = attribute(obj, where, name);
  if (a.getTypeClass() != H5T_STRING)
    fail("attribute " + std::string(name) + " on " + where + " is not a string");
  std::string value;
  a.read(a.getStrType(), value);
  // Fixed-length strings come back with their padding.
  value.erase(std::find(value.begin(), value.end(), '\0'), value.end());
  return value;
}

std::int64_t Reader::int_attr(H5::H5Object& obj, const std::string& where, const char* name) {
  H5::Attribute a = attribute(obj, where, name);
  if (a.getTypeClass() != H5T_INTEGER)
    fail("attribute " + std::string(name) + " on " + where + " is not an integer");
  const H5::IntType type = a.getIntType();
  if (type.getSign() == H5T_SGN_NONE) {
    std::uint64_t v = 0;
    a.read(H5::PredType::NATIVE_UINT64, &v);
    if (v > static_cast<std::uint64_t>(INT64_MAX))
      fail("attribute " + std::string(name) + " on " + where + " is out of range");
    return static_cast<std::int64_t>(v);
  }
  std::int64_t v = 0;
  a.read(H5::PredType::NATIVE_INT64, &v);
  return v;
}

std::uint64_t Reader::uint_attr(H5::H5Object& obj, const std::string& where, const char* name) {
  H5::Attribute a = attribute(obj, where, name);
  if (a.getTypeClass() != H5T_INTEGER)
    fail("attribute " + std::string(name) + " on " + where + " is not an integer");
  if (a.getIntType().getSign() != H5T_SGN_NONE) {
    std::int64_t v = 0;
    a.read(H5::PredType::NATIVE_INT64, &v);
    if (v < 0) fail("attribute " + std::string(name) + " on " + where + " is negative");
    return static_cast<std::uint64_t>(v);
  }
  std::uint64_t v = 0;
  a.read(H5::PredType::NATIVE_UINT64, &v);
  return v;
}

double Reader::float_attr(H5::H5Object& obj, const std::string& where, const char* name) {
  H5::Attribute a = attribute(obj, where, name);
  if (a.getTypeClass() != H5T_FLOAT)
    fail("attribute " + std::string(name) + " on " + where + " is not a floating-point number");
  double v = 0;
  a.read(H5::PredType::NATIVE_DOUBLE, &v);
  return v;
}

void Reader::read_root(ArchiveSnapshot& s) {
  context_ = "the root attributes";
  const char* other_kind = "an HDF5 file, but not a tessera archive (no format=\"tessera-archive\")";
  if (!file_.attrExists("format")) fail(other_kind);
  {
    H5::Attribute a = file_.openAttribute("format");
    if (a.getTypeClass() != H5T_STRING) fail(other_kind);
  }
  if (string_attr(file_, "/", "format") != "tessera-archive") fail(other_kind);
  const std::int64_t version = int_attr(file_, "/", "format_version");
  if (version > kArchiveFormatVersion)
    fail("written by a newer tessera (format " + std::to_string(version) + "); this one reads format " +
         std::to_string(kArchiveFormatVersion));
  if (version < 1) fail("unknown archive format version " + std::to_string(version));
  s.problem = string_attr(file_, "/", "problem");
  s.config = string_attr(file_, "/", "config");
  s.seed = uint_attr(file_, "/", "seed");
  s.evaluations = uint_attr(file_, "/", "evaluations");
  s.tool_version = string_attr(file_, "/", "tool_version");
}

void Reader::read_space(ArchiveSnapshot& s) {
  H5::Group space = group("/space");
  s.space_kind = string_attr(space, "/space", "kind");
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
  s.descriptor_names = strings("/space/names", d);
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
  // Resolution and centroids bound the number of elites read below.
  if (auto f = space_fault(s)) fail(*f);
}

void Reader::read_genome(ArchiveSnapshot& s) {
  group("/genome");
  Dataset lower = dataset("/genome/lower", H5T_FLOAT, 1);
  Dataset upper = dataset("/genome/upper", H5T_FLOAT, 1);
  if (lower.elements == 0) fail("/genome/lower is empty");
  if (lower.elements > kMaxGenomeSize)
    fail("/genome/lower has " + std::to_string(lower.elements) + " entries, more than tessera reads");
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
  const auto rows = [&](const Dataset& ds) {
    if (ds.dims[0] != n)
      fail(ds.name + " has " + std::to_string(ds.dims[0]) + " rows but /elites/fitness has " +
           std::to_string(n));
  };
  rows(cell);
  rows(birth);
  rows(genome);
  rows(descriptor);
  if (genome.dims[1] != g)
    fail("/elites/genome has " + std::to_string(genome.dims[1]) + " columns but /genome/lower has " +
         std::to_string(g));
  if (descriptor.dims[1] != d)
    fail("/elites/descriptor has " + std::to_string(descriptor.dims[1]) +
         " columns but /space/lower has " + std::to_string(d));
  // Before allocating: no more elites than cells (unstructured archives number them 0..N-1).
  const std::uint64_t cells = s.space_kind == "grid"  ? static_cast<std::uint64_t>(s.cell_count())
                              : s.space_kind == "cvt" ? s.centroids.size() / d
                                                      : static_cast<std::uint64_t>(kMaxCells);
  if (n > cells) fail(std::to_string(n) + " elites for " + std::to_string(cells) + " cells");
  s.fitness = values<double>(fitness);
  s.cell = values<std::int64_t>(cell);
  s.birth = values<std::uint64_t>(birth);
  s.genome = values<double>(genome);
  s.descriptor = values<double>(descriptor);
}

void Reader::read_history(ArchiveSnapshot& s) {
  H5::Group history = group("/history");
  s.qd_offset = float_attr(history, "/history", "qd_offset");
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

void Reader::read_resume(ArchiveSnapshot& s) {
  if (!exists("/resume")) return;
  H5::Group resume = group("/resume");
  ResumeState state;
  state.algorithm = string_attr(resume, "/resume", "algorithm");
  state.next_batch = uint_attr(resume, "/resume", "next_batch");
  H5::Group counters = group("/resume/counters");
  const int attrs = counters.getNumAttrs();
  if (attrs < 0 || static_cast<std::uint64_t>(attrs) > kMaxResumeEntries)
    fail("/resume/counters has more than " + std::to_string(kMaxResumeEntries) + " entries");
  for (int i = 0; i < attrs; ++i) {
    const std::string name = counters.openAttribute(static_cast<unsigned>(i)).getName();
    state.counters[name] = uint_attr(counters, "/resume/counters", name.c_str());
  }
  H5::Group arrays = group("/resume/arrays");
  const hsize_t links = arrays.getNumObjs();
  if (links > kMaxResumeEntries)
    fail("/resume/arrays has more than " + std::to_string(kMaxResumeEntries) + " entries");
  for (hsize_t i = 0; i < links; ++i) {
    const std::string name = arrays.getObjnameByIdx(i);
    state.arrays[name] = read_vector<double>("/resume/arrays/" + name);
  }
  s.resume = std::move(state);
}

ArchiveSnapshot Reader::read() {
  check_file_on_disk();
  open();
  ArchiveSnapshot s;
  try {
    read_root(s);
    read_space(s);
    read_genome(s);
    read_elites(s);
    read_history(s);
    read_resume(s);
    file_.close();
  } catch (const H5::Exception&) {
    fail("truncated or damaged HDF5 file (reading " + context_ + ")");
  }
  if (auto fault = snapshot_fault(s)) fail(*fault);
  return s;
}

}  // namespace

void write_archive_file(const std::string& path, const ArchiveSnapshot& snapshot) {
  namespace fs = std::filesystem;
  if (auto fault = snapshot_fault(snapshot))
    throw std::invalid_argument(path + ": cannot write archive: " + *fault);
  const fs::path target(path);
  if (target.filename().empty()) throw InputError(path + ": cannot write archive: not a file name");
  const fs::path folder = target.has_parent_path() ? target.parent_path() : fs::path(".");
  const fs::path temp =
      folder / ("." + target.filename().string() + ".tmp-" + std::to_string(::getpid()));

  std::lock_guard<std::mutex> lock(hdf5_mutex());
  H5::Exception::dontPrint();
  try {
    // Create the file ourselves first: the system's reason ("Permission denied") is clearer
    // than HDF5's, and a stale temporary file of this process is truncated.
    const int fd = ::open(temp.c_str(), O_WRONLY | O_CREAT | O_TRUNC | O_CLOEXEC, 0666);
    if (fd < 0) throw errno_error("cannot create " + temp.string());
    ::close(fd);
    try {
      H5::H5File file(temp.string(), H5F_ACC_TRUNC, H5::FileCreatPropList::DEFAULT,
                      access_properties());
      write_contents(file, snapshot);
      file.flush(H5F_SCOPE_GLOBAL);
      file.close();  // explicit: a failure to write the last metadata must throw, not vanish
    } catch (const H5::Exception& e) {
      throw std::runtime_error(hdf5_reason(e));
    }
    sync_path(temp, false);
    if (std::rename(temp.c_str(), target.c_str()) != 0)
      throw errno_error("cannot rename " + temp.string() + " to " + path);
    sync_path(folder, true);
  } catch (const std::exception& e) {
    std::error_code ignored;
    if (fs::exists(temp, ignored)) fs::remove(temp, ignored);
    throw InputError(path + ": cannot write archive: " + e.what());
  }
}

ArchiveSnapshot read_archive_file(const std::string& path) {
  std::lock_guard<std::mutex> lock(hdf5_mutex());
  H5::Exception::dontPrint();
  Reader reader(path);
  return reader.read();
}

}  // namespace tessera
