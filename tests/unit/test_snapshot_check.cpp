// The invariants an archive must satisfy beyond its shapes, each broken in one way as a damaged or
// crafted file would: the check must name the broken part. The valid sample is the reference
// (tests/support/sample_snapshot.hpp builds it from the rules of docs/archive-format.md).
#include <catch2/catch.hpp>

#include <algorithm>
#include <cstdint>
#include <limits>
#include <string>

#include "io/snapshot_check.hpp"
#include "support/sample_snapshot.hpp"

using tessera::ArchiveSnapshot;
using tessera::snapshot_fault;
using tessera::testing::sample_snapshot;

namespace {

std::string fault_of(const ArchiveSnapshot& s) {
  auto f = snapshot_fault(s);
  return f ? *f : std::string("(no fault)");
}

}  // namespace

TEST_CASE("the valid samples pass every check", "[archive]") {
  for (const char* kind : {"grid", "cvt", "unstructured"}) {
    INFO(kind);
    CHECK(fault_of(sample_snapshot({.kind = kind})) == "(no fault)");
  }
}

TEST_CASE("a descriptor moved out of its cell is refused", "[archive]") {
  for (const char* kind : {"grid", "cvt"}) {
    INFO(kind);
    ArchiveSnapshot s = sample_snapshot({.kind = kind});
    // A bit flip in chunk-index metadata once read every descriptor as 0.0.
    std::fill(s.descriptor.begin(), s.descriptor.end(), 0.0);
    CHECK_THAT(fault_of(s), Catch::Contains("not in its cell"));
  }
  ArchiveSnapshot s = sample_snapshot({});
  s.descriptor[1] = 1e6;  // outside the bounds: stored descriptors are clamped
  CHECK_THAT(fault_of(s), Catch::Contains("/elites/descriptor[0, 1] lies outside /space bounds"));
}

TEST_CASE("CVT centroids reversed, duplicated or outside the box are refused", "[archive]") {
  ArchiveSnapshot reversed = sample_snapshot({.kind = "cvt"});
  const std::size_t d = reversed.descriptor_size();
  const std::size_t k = reversed.centroids.size() / d;
  for (std::size_t i = 0; i < k / 2; ++i)
    std::swap_ranges(reversed.centroids.begin() + i * d, reversed.centroids.begin() + i * d + d,
                     reversed.centroids.begin() + (k - 1 - i) * d);
  CHECK_THAT(fault_of(reversed), Catch::Contains("not in its cell"));

  ArchiveSnapshot duplicated = sample_snapshot({.kind = "cvt"});
  std::copy_n(duplicated.centroids.begin(), d, duplicated.centroids.begin() + 5 * d);
  CHECK_THAT(fault_of(duplicated),
             Catch::Contains("/space/centroids rows 0 and 5 are the same point"));

  ArchiveSnapshot outside = sample_snapshot({.kind = "cvt"});
  outside.centroids[3] = 99.0;
  CHECK_THAT(fault_of(outside), Catch::Contains("/space/centroids[1, 1] lies outside"));
}

TEST_CASE("a genome value outside its bounds is refused", "[archive]") {
  ArchiveSnapshot s = sample_snapshot({});
  s.genome[2 * s.genome_size() + 4] = 1e9;
  CHECK_THAT(fault_of(s), Catch::Contains("/elites/genome[2, 4] lies outside /genome bounds"));
}

TEST_CASE("the first non-finite or out-of-bounds genome value is named, wherever it lies",
          "[archive]") {
  // The checks scan whole blocks of values first (4096 at a time) and only then look for the
  // culprit: a value in the middle of a later block, or two in one block, must still be named
  // by its own index, the first one first.
  ArchiveSnapshot s = sample_snapshot({.elites = 900, .genome = 30});
  const std::size_t g = s.genome_size();
  ArchiveSnapshot late = s;
  late.genome[700 * g + 13] = std::numeric_limits<double>::quiet_NaN();
  late.genome[800 * g + 2] = -std::numeric_limits<double>::infinity();
  CHECK_THAT(fault_of(late), Catch::Contains("/elites/genome[700, 13] is NaN"));
  ArchiveSnapshot outside = s;
  outside.genome[611 * g + 29] = 7.0;
  outside.genome[612 * g] = -7.0;
  CHECK_THAT(fault_of(outside),
             Catch::Contains("/elites/genome[611, 29] lies outside /genome bounds"));
}

TEST_CASE("resume counters and history that disagree are refused", "[archive]") {
  ArchiveSnapshot absurd_batch = sample_snapshot({});
  absurd_batch.resume->next_batch = std::uint64_t{1} << 63;
  CHECK_THAT(fault_of(absurd_batch), Catch::Contains("/resume next_batch = 9223372036854775808"));

  ArchiveSnapshot counter = sample_snapshot({});
  counter.resume->counters["invalid"] = 549755813888;  // a flipped bit seen in a probe
  CHECK_THAT(fault_of(counter), Catch::Contains("invalid = 549755813888 exceeds"));

  ArchiveSnapshot total = sample_snapshot({});
  total.evaluations += 1;
  CHECK_THAT(fault_of(total), Catch::Contains("/history ends at"));

  ArchiveSnapshot order = sample_snapshot({});
  std::swap(order.history[2].evaluations, order.history[3].evaluations);
  CHECK_THAT(fault_of(order), Catch::Contains("/history/evaluations[3] does not exceed"));
}

TEST_CASE("a stored run file whose space differs from /space is refused", "[archive]") {
  ArchiveSnapshot grid = sample_snapshot({});
  grid.config = "[space]\nkind = \"grid\"\nresolution = [7, 9]\n";
  CHECK_THAT(fault_of(grid), Catch::Contains("space.resolution differs from /space/resolution"));
  grid.config = "[space]\nkind = \"grid\"\nresolution = [" + std::to_string(grid.resolution[0]) +
                ", " + std::to_string(grid.resolution[1]) + "]\n";
  CHECK(fault_of(grid) == "(no fault)");
  grid.config = "[space]\nkind = \"cvt\"\ncells = 10\n";
  CHECK_THAT(fault_of(grid), Catch::Contains("space.kind \"cvt\" but /space is a grid"));

  ArchiveSnapshot cvt = sample_snapshot({.kind = "cvt"});
  cvt.config = "[space]\nkind = \"cvt\"\ncells = 1000\n";
  CHECK_THAT(fault_of(cvt), Catch::Contains("space.cells = 1000"));
}
