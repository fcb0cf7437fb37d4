// Reading a process worker's answer line (eval/worker_answer.hpp) without a worker: the outcome
// of each kind of line the protocol (docs/process-protocol.md) names.
#include <catch2/catch.hpp>
#include <cmath>
#include <string>

#include "eval/worker_answer.hpp"

namespace {

using namespace tessera;

const double kGenome[2] = {0.5, -0.25};
// The digest of kGenome as problems/examples/arm_worker.py computes it (its genome_digest, the
// FNV-1a 64 formula of eval/genome_digest.hpp written in Python), printed by running the worker
// on {"id": 1, "genome": [0.5, -0.25]}.
const std::string kDigest = "27be67d4e5a3f215";

std::string reason_of(const std::string& text) {
  const WorkerLine line = read_worker_line(text);
  REQUIRE(line.kind == WorkerLine::Kind::answer);
  double fitness = 0.0, descriptor[2] = {0.0, 0.0};
  const auto fault = read_evaluation(line, kGenome, 2, 2, fitness, descriptor);
  return fault ? fault->reason : "valid";
}

}  // namespace

TEST_CASE("blank lines are ignored and lines without an integer id are malformed", "[process]") {
  CHECK(read_worker_line("").kind == WorkerLine::Kind::blank);
  CHECK(read_worker_line(" \t\r").kind == WorkerLine::Kind::blank);
  for (const char* text :
       {"garbage", "[1, 2]", "{\"fitness\": 1}", "{\"id\": \"7\"}", "{\"id\": 1.5}", "{\"id\": 7"})
    CHECK(read_worker_line(text).kind == WorkerLine::Kind::malformed);
  const WorkerLine line = read_worker_line("{\"id\": 7}\r");
  CHECK(line.kind == WorkerLine::Kind::answer);
  CHECK(line.id == 7);
  CHECK(line.text == "{\"id\": 7}");
}

TEST_CASE("an answer's numbers are read exactly and checked against the genome's digest",
          "[process]") {
  // Values and digest as the shipped Python arm worker wrote them for kGenome.
  const std::string answer =
      "{\"id\": 1, \"fitness\": -0.140625, \"descriptor\": [0.9232474918005087, "
      "0.363414748929363], \"digest\": \"" +
      kDigest + "\"}";
  const WorkerLine line = read_worker_line(answer);
  double fitness = 0.0, descriptor[2] = {0.0, 0.0};
  REQUIRE_FALSE(read_evaluation(line, kGenome, 2, 2, fitness, descriptor));
  CHECK(fitness == -0.140625);  // -(variance of 0.5 and -0.25) = -(0.375^2), exact in binary
  CHECK(descriptor[0] == 0.9232474918005087);
  CHECK(descriptor[1] == 0.363414748929363);
  const double other[2] = {0.5, -0.5};
  const auto fault = read_evaluation(line, other, 2, 2, fitness, descriptor);
  REQUIRE(fault);
  CHECK(fault->reason == "wrong genome digest");
}

TEST_CASE("each faulty answer is named by its failure reason", "[process]") {
  CHECK(reason_of("{\"id\": 1, \"fitness\": 1, \"descriptor\": [0, 0]}") == "valid");
  CHECK(reason_of("{\"id\": 1, \"error\": \"no\"}") == "worker error");
  CHECK(reason_of("{\"id\": 1, \"fitness\": 1}") == "malformed answer");
  CHECK(reason_of("{\"id\": 1, \"fitness\": \"1\", \"descriptor\": [0, 0]}") == "malformed answer");
  CHECK(reason_of("{\"id\": 1, \"fitness\": 1, \"descriptor\": [0]}") == "wrong descriptor length");
  // Python's json module writes NaN and Infinity (not JSON): read as not finite, not garbage.
  CHECK(reason_of("{\"id\": 1, \"fitness\": NaN, \"descriptor\": [0, 0]}") == "not finite");
  CHECK(reason_of("{\"id\": 1, \"fitness\": 1, \"descriptor\": [-Infinity, 0]}") == "not finite");
  // A NaN spelled inside a string is text, not a number.
  CHECK(reason_of("{\"id\": 1, \"fitness\": null, \"descriptor\": [0, 0], \"x\": \"NaN\"}") ==
        "malformed answer");
  CHECK(reason_of("{\"id\": 1, \"fitness\": 1, \"descriptor\": [0, 0], \"digest\": 5}") ==
        "wrong genome digest");
}
