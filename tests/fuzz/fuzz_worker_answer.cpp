// libFuzzer target: one line of a process worker's stdout, read as an answer and then as the
// evaluation of a fixed genome (two genes, two descriptor values). Any input must end in
// "blank", "malformed" or an answer that is either valid or a named fault; a crash, hang, leak
// or sanitizer report is a finding.
#include <cmath>
#include <cstddef>
#include <cstdint>
#include <cstdlib>
#include <string_view>

#include "eval/worker_answer.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::string_view text(reinterpret_cast<const char*>(data), size);
  const tessera::WorkerLine line = tessera::read_worker_line(text);
  if (line.kind != tessera::WorkerLine::Kind::answer) return 0;
  const double genome[2] = {0.5, -0.25};
  double fitness = 0.0;
  double descriptor[2] = {0.0, 0.0};
  const auto fault = tessera::read_evaluation(line, genome, 2, 2, fitness, descriptor);
  // A valid evaluation has only finite numbers; anything else would reach the archive.
  if (!fault &&
      !(std::isfinite(fitness) && std::isfinite(descriptor[0]) && std::isfinite(descriptor[1])))
    std::abort();
  if (fault && fault->reason.empty()) std::abort();
  return 0;
}
