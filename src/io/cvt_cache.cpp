#include "io/cvt_cache.hpp"

#include <unistd.h>

#include <atomic>
#include <bit>
#include <cmath>
#include <cstdint>
#include <cstdlib>
#include <cstring>
#include <fstream>
#include <system_error>

namespace tessera {
namespace {

// Layout of a cache file (native byte order; caching is off on big-endian machines):
//   header: magic[8], u32 file format, u32 algorithm version, u64 dims, u64 cells, u64 samples,
//           i64 iterations, u64 seed, f64 lower[dims], f64 upper[dims]
//   body:   f64 centroids[cells * dims]
//   tail:   u64 FNV-1a hash of header and body
// The header doubles as the key: a file is used only when its header equals the expected one
// byte for byte, so a hash collision in the file name cannot return the wrong centroids.
constexpr char kMagic[8] = {'t', 's', 'r', '-', 'c', 'v', 't', '\0'};
constexpr std::uint32_t kFileFormat = 1;

template <class T>
void put(std::string& out, T value) {
  char bytes[sizeof(T)];
  std::memcpy(bytes, &value, sizeof(T));
  out.append(bytes, sizeof(T));
}

std::string make_header(const Bounds& bounds, const CvtSettings& settings) {
  std::string h(kMagic, sizeof(kMagic));
  put(h, kFileFormat);
  put(h, kCvtAlgorithmVersion);
  put(h, static_cast<std::uint64_t>(bounds.size()));
  put(h, static_cast<std::uint64_t>(settings.cells));
  put(h, static_cast<std::uint64_t>(settings.effective_samples()));
  put(h, static_cast<std::int64_t>(settings.iterations));
  put(h, settings.seed);
  for (double v : bounds.lower) put(h, v);
  for (double v : bounds.upper) put(h, v);
  return h;
}

// FNV-1a, 64 bit (Fowler, Noll & Vo; IETF draft-eastlake-fnv): a checksum against torn or
// altered files, not a defence against tampering.
std::uint64_t fnv1a(const char* data, std::size_t size,
                    std::uint64_t hash = 0xcbf29ce484222325ull) {
  for (std::size_t i = 0; i < size; ++i) {
    hash ^= static_cast<unsigned char>(data[i]);
    hash *= 0x100000001b3ull;
  }
  return hash;
}

std::string hex(std::uint64_t v) {
  static const char digits[] = "0123456789abcdef";
  std::string s(16, '0');
  for (int i = 15; i >= 0; --i, v >>= 4) s[static_cast<std::size_t>(i)] = digits[v & 15];
  return s;
}

std::filesystem::path env_path(const char* name) {
  const char* value = std::getenv(name);
  if (value == nullptr || *value == '\0') return {};
  return value;
}

// Reads a cached file; returns an empty vector and a reason when it cannot be used.
std::vector<double> read_cache(const std::filesystem::path& path, const std::string& header,
                               std::size_t values, std::string& reason) {
  const std::size_t body = values * sizeof(double);
  const std::size_t expected = header.size() + body + sizeof(std::uint64_t);
  std::error_code ec;
  const auto size = std::filesystem::file_size(path, ec);
  if (ec) {
    reason = "absent";
    return {};
  }
  if (size != expected) {  // checked before reading, so a huge stray file costs nothing
    reason = "wrong size";
    return {};
  }
  std::ifstream in(path, std::ios::binary);
  std::string content(expected, '\0');
  in.read(content.data(), static_cast<std::streamsize>(expected));
  if (!in || in.gcount() != static_cast<std::streamsize>(expected)) {
    reason = "unreadable";
    return {};
  }
  if (content.compare(0, header.size(), header) != 0) {
    reason = "header does not match the settings";
    return {};
  }
  std::uint64_t stored = 0;
  std::memcpy(&stored, content.data() + header.size() + body, sizeof(stored));
  if (stored != fnv1a(content.data(), header.size() + body)) {
    reason = "checksum mismatch";
    return {};
  }
  std::vector<double> centroids(values);
  std::memcpy(centroids.data(), content.data() + header.size(), body);
  for (double v : centroids) {
    if (!std::isfinite(v)) {
      reason = "non-finite centroid";
      return {};
    }
  }
  return centroids;
}

// Writes the file under a unique temporary name in the same folder, then renames it into place.
bool write_cache(const std::filesystem::path& path, const std::string& header,
                 const std::vector<double>& centroids, std::string& reason) {
  std::error_code ec;
  std::filesystem::create_directories(path.parent_path(), ec);
  if (ec) {
    reason = "cannot create " + path.parent_path().string() + ": " + ec.message();
    return false;
  }
  std::string content = header;
  content.append(reinterpret_cast<const char*>(centroids.data()),
                 centroids.size() * sizeof(double));
  put(content, fnv1a(content.data(), content.size()));

  // Unique among processes (pid) and among threads of this one (counter).
  static std::atomic<unsigned> counter{0};
  std::filesystem::path temp = path;
  temp += ".tmp-" + std::to_string(::getpid()) + "-" + std::to_string(counter++);
  {
    std::ofstream out(temp, std::ios::binary | std::ios::trunc);
    if (out) out.write(content.data(), static_cast<std::streamsize>(content.size()));
    out.close();
    if (!out) {
      std::filesystem::remove(temp, ec);
      reason = "cannot write " + temp.string();
      return false;
    }
  }
  std::filesystem::rename(temp, path, ec);
  if (ec) {
    reason = "cannot rename into " + path.string() + ": " + ec.message();
    std::filesystem::remove(temp, ec);
    return false;
  }
  return true;
}

}  // namespace

std::filesystem::path cvt_cache_dir() {
  if (auto dir = env_path("TESSERA_CACHE_DIR"); !dir.empty()) return dir;
  if (auto dir = env_path("XDG_CACHE_HOME"); !dir.empty()) return dir / "tessera";
  if (auto dir = env_path("HOME"); !dir.empty()) return dir / ".cache" / "tessera";
  return {};
}

std::filesystem::path cvt_cache_path(const Bounds& bounds, const CvtSettings& settings) {
  const std::filesystem::path dir = cvt_cache_dir();
  if (dir.empty()) return {};
  const std::string header = make_header(bounds, settings);
  return dir / ("cvt-" + hex(fnv1a(header.data(), header.size())) + ".bin");
}

std::vector<double> load_or_compute_cvt(const Bounds& bounds, const CvtSettings& settings,
                                        std::string* note) {
  check_bounds(bounds, "cvt");
  if (settings.cells < 1 || settings.cells > kMaxCells)
    throw std::invalid_argument("cvt: cells must be between 1 and 2^28");
  const auto say = [&](const std::string& line) {
    if (note != nullptr) *note = line;
  };
  const std::string what = std::to_string(settings.cells) + " CVT centroids";

  std::filesystem::path path;
  if constexpr (std::endian::native == std::endian::little) path = cvt_cache_path(bounds, settings);
  if (path.empty()) {
    auto centroids = tessellate_descriptor_box(bounds, settings);
    say("computed " + what + " (no cache folder)");
    return centroids;
  }

  const std::string header = make_header(bounds, settings);
  const std::size_t values = static_cast<std::size_t>(settings.cells) * bounds.size();
  std::string why;
  std::vector<double> centroids;
  try {
    centroids = read_cache(path, header, values, why);
  } catch (const std::exception& e) {  // e.g. out of memory on a huge bogus file: recompute
    centroids.clear();
    why = e.what();
  }
  if (!centroids.empty()) {
    say("loaded " + what + " from " + path.string());
    return centroids;
  }

  centroids = tessellate_descriptor_box(bounds, settings);
  std::string write_fault;
  bool written = false;
  try {
    written = write_cache(path, header, centroids, write_fault);
  } catch (const std::exception& e) {
    write_fault = e.what();
  }
  const std::string previous = why == "absent" ? "" : " (cached file " + why + ")";
  if (written)
    say("computed " + what + previous + ", saved to " + path.string());
  else
    say("computed " + what + previous + ", not cached: " + write_fault);
  return centroids;
}

}  // namespace tessera
