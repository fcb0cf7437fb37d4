// CVT centroid cache: a second request is served from disk, unchanged; damaged or foreign files
// are recomputed and replaced; an unusable folder only turns caching off.
#include <stdlib.h>
#include <unistd.h>

#include <catch2/catch.hpp>
#include <filesystem>
#include <fstream>
#include <iterator>
#include <optional>
#include <string>
#include <vector>

#include "core/archive/cvt.hpp"
#include "io/cvt_cache.hpp"

namespace {

namespace fs = std::filesystem;
using tessera::Bounds;
using tessera::CvtSettings;

// A fresh folder, removed at scope exit.
struct TempDir {
  fs::path path;
  TempDir() {
    std::string pattern = (fs::temp_directory_path() / "tessera-cvt-cache-XXXXXX").string();
    REQUIRE(::mkdtemp(pattern.data()) != nullptr);
    path = pattern;
  }
  ~TempDir() {
    std::error_code ec;
    fs::remove_all(path, ec);
  }
};

// Sets an environment variable for the scope, restoring the previous value.
struct EnvVar {
  std::string name;
  std::optional<std::string> saved;
  EnvVar(std::string n, const char* value) : name(std::move(n)) {
    if (const char* old = std::getenv(name.c_str())) saved = old;
    if (value)
      ::setenv(name.c_str(), value, 1);
    else
      ::unsetenv(name.c_str());
  }
  ~EnvVar() {
    if (saved)
      ::setenv(name.c_str(), saved->c_str(), 1);
    else
      ::unsetenv(name.c_str());
  }
};

std::string slurp(const fs::path& p) {
  std::ifstream in(p, std::ios::binary);
  return {std::istreambuf_iterator<char>(in), std::istreambuf_iterator<char>()};
}

void spit(const fs::path& p, const std::string& bytes) {
  std::ofstream out(p, std::ios::binary | std::ios::trunc);
  out.write(bytes.data(), static_cast<std::streamsize>(bytes.size()));
}

bool starts_with(const std::string& s, const std::string& prefix) {
  return s.rfind(prefix, 0) == 0;
}

const Bounds kBox{{0.0, -1.0}, {1.0, 2.0}};

CvtSettings small_settings() {
  CvtSettings s;
  s.cells = 50;
  s.samples = 5000;
  s.iterations = 20;
  s.seed = 42;
  return s;
}

}  // namespace

TEST_CASE("cache folder follows TESSERA_CACHE_DIR, XDG_CACHE_HOME, HOME in turn", "[cvt-cache]") {
  EnvVar a("TESSERA_CACHE_DIR", "/tmp/t-cache"), b("XDG_CACHE_HOME", "/tmp/xdg"),
      c("HOME", "/tmp/home");
  CHECK(tessera::cvt_cache_dir() == fs::path("/tmp/t-cache"));
  {
    EnvVar off("TESSERA_CACHE_DIR", nullptr);
    CHECK(tessera::cvt_cache_dir() == fs::path("/tmp/xdg/tessera"));
    EnvVar off2("XDG_CACHE_HOME", "");
    CHECK(tessera::cvt_cache_dir() == fs::path("/tmp/home/.cache/tessera"));
    EnvVar off3("HOME", nullptr);
    CHECK(tessera::cvt_cache_dir().empty());
  }
}

TEST_CASE("a second request is served from the cache, bit for bit", "[cvt-cache]") {
  TempDir dir;
  EnvVar env("TESSERA_CACHE_DIR", dir.path.c_str());
  const CvtSettings s = small_settings();
  const std::vector<double> direct = tessera::tessellate_descriptor_box(kBox, s);

  std::string note;
  const auto first = tessera::load_or_compute_cvt(kBox, s, &note);
  INFO(note);
  CHECK(starts_with(note, "computed"));
  const fs::path file = tessera::cvt_cache_path(kBox, s);
  CHECK(file.parent_path() == dir.path);
  REQUIRE(fs::exists(file));
  CHECK(first == direct);

  const auto second = tessera::load_or_compute_cvt(kBox, s, &note);
  CHECK(starts_with(note, "loaded"));
  CHECK(second == direct);
  // Only the finished file is left behind (no temporaries).
  CHECK(std::distance(fs::directory_iterator(dir.path), fs::directory_iterator()) == 1);

  // Any parameter change is a different key: a different file, computed afresh.
  for (int change = 0; change < 5; ++change) {
    CvtSettings t = s;
    Bounds other = kBox;
    if (change == 0) t.cells = 51;
    if (change == 1) t.samples = 5001;
    if (change == 2) t.iterations = 21;
    if (change == 3) t.seed = 43;
    if (change == 4) other.upper[1] = 2.5;
    CHECK(tessera::cvt_cache_path(other, t) != file);
    const auto changed = tessera::load_or_compute_cvt(other, t, &note);
    CHECK(starts_with(note, "computed"));
    CHECK(changed == tessera::tessellate_descriptor_box(other, t));
  }
}

TEST_CASE("damaged or foreign cache files are recomputed and replaced", "[cvt-cache]") {
  TempDir dir;
  EnvVar env("TESSERA_CACHE_DIR", dir.path.c_str());
  const CvtSettings s = small_settings();
  std::string note;
  const auto good = tessera::load_or_compute_cvt(kBox, s, &note);
  const fs::path file = tessera::cvt_cache_path(kBox, s);
  const std::string intact = slurp(file);
  REQUIRE(intact.size() > 100);

  struct Damage {
    const char* what;
    std::string bytes;
    const char* reason;
  };
  std::string flipped = intact;
  flipped[intact.size() / 2] = static_cast<char>(flipped[intact.size() / 2] ^ 0x10);
  std::string header_changed = intact;
  header_changed[12] = static_cast<char>(header_changed[12] ^ 0x01);  // algorithm version
  // A valid file for other settings moved under this name: right size, wrong header.
  CvtSettings other = s;
  other.seed = 7;
  tessera::load_or_compute_cvt(kBox, other, &note);
  const std::string foreign = slurp(tessera::cvt_cache_path(kBox, other));

  for (const Damage& d :
       {Damage{"flipped body bit", flipped, "checksum"},
        Damage{"truncated", intact.substr(0, intact.size() - 9), "wrong size"},
        Damage{"empty", "", "wrong size"}, Damage{"changed header", header_changed, "header"},
        Damage{"foreign settings", foreign, "header"}}) {
    spit(file, d.bytes);
    const auto again = tessera::load_or_compute_cvt(kBox, s, &note);
    INFO(d.what << ": " << note);
    CHECK(starts_with(note, "computed"));
    CHECK(note.find(d.reason) != std::string::npos);
    CHECK(again == good);
    CHECK(slurp(file) == intact);  // replaced by a valid file
    tessera::load_or_compute_cvt(kBox, s, &note);
    CHECK(starts_with(note, "loaded"));
  }
}

TEST_CASE("an unusable cache folder only turns caching off", "[cvt-cache]") {
  TempDir dir;
  // A regular file where the folder should be: it cannot be created (even by root).
  const fs::path blocker = dir.path / "plain-file";
  spit(blocker, "x");
  EnvVar env("TESSERA_CACHE_DIR", (blocker / "cache").c_str());
  const CvtSettings s = small_settings();
  std::string note;
  const auto c = tessera::load_or_compute_cvt(kBox, s, &note);
  INFO(note);
  CHECK(starts_with(note, "computed"));
  CHECK(note.find("not cached") != std::string::npos);
  CHECK(c == tessera::tessellate_descriptor_box(kBox, s));

  EnvVar none("TESSERA_CACHE_DIR", nullptr), x("XDG_CACHE_HOME", nullptr), h("HOME", nullptr);
  CHECK(tessera::load_or_compute_cvt(kBox, s, &note) == c);
  CHECK(note.find("no cache folder") != std::string::npos);
}

TEST_CASE("bad settings still throw through the cache", "[cvt-cache]") {
  TempDir dir;
  EnvVar env("TESSERA_CACHE_DIR", dir.path.c_str());
  CvtSettings s = small_settings();
  s.cells = 0;
  CHECK_THROWS_AS(tessera::load_or_compute_cvt(kBox, s), std::invalid_argument);
  s.cells = 10;
  s.samples = 5;
  CHECK_THROWS_AS(tessera::load_or_compute_cvt(kBox, s), std::invalid_argument);
  CHECK(fs::is_empty(dir.path));
}
