// `tessera inspect ARCHIVE.h5 [--format text|json]`: what an archive holds, for people (text)
// or for tools (JSON, stable: see io/archive_summary.hpp).
#include <charconv>
#include <iostream>
#include <memory>
#include <sstream>
#include <string>
#include <vector>

#include "cli/commands.hpp"
#include "cli/format.hpp"
#include "core/base/errors.hpp"
#include "io/archive_file.hpp"
#include "io/archive_summary.hpp"
#include "io/trial_log.hpp"

namespace tessera::cli {
namespace {

struct InspectOptions {
  std::string archive;
  std::string format = "text";
};

// Shortest text that reads back as the same double, so nothing printed is rounded away.
std::string exact(double v) {
  char buf[32];
  const auto r = std::to_chars(buf, buf + sizeof buf, v);
  return std::string(buf, r.ptr);
}

std::string list(const std::vector<double>& values, std::size_t shown) {
  std::string out = "(";
  for (std::size_t i = 0; i < values.size() && i < shown; ++i)
    out += (i ? ", " : "") + exact(values[i]);
  if (values.size() > shown)
    out += ", ... " + std::to_string(values.size() - shown) + " more; see --format json";
  return out + ")";
}

void print_text(std::ostream& out, const ArchiveSummary& s) {
  const auto row = [&](const std::string& key, const std::string& value) {
    // Pad by characters, not bytes: descriptor names may be UTF-8.
    std::size_t width = 0;
    for (unsigned char c : key) width += (c & 0xC0) != 0x80;
    out << "  " << key << std::string(width < 14 ? 14 - width : 1, ' ') << value << "\n";
  };
  out << s.file << "\n";
  row("format", "tessera archive, format " + std::to_string(s.archive_format));
  row("problem", s.problem);
  row("written by", "tessera " + s.tool_version);
  row("seed", std::to_string(s.seed));
  row("streams", "random streams version " + std::to_string(s.random_streams) +
                     (s.random_streams == 1 ? " (polar-method normals)" : " (ziggurat normals)"));
  std::string space =
      s.space_kind + ", " + with_thousands(static_cast<std::uint64_t>(s.cells)) + " cells";
  if (!s.resolution.empty()) {
    std::string res;
    for (std::size_t i = 0; i < s.resolution.size(); ++i)
      res += (i ? " x " : "") + std::to_string(s.resolution[i]);
    space += " (" + res + ")";
  }
  row("space", space);
  for (std::size_t i = 0; i < s.descriptor_names.size(); ++i)
    row("  " + s.descriptor_names[i], "[" + exact(s.descriptor_bounds.lower[i]) + ", " +
                                          exact(s.descriptor_bounds.upper[i]) + "]");
  row("genome", std::to_string(s.genome_size) + " parameters");
  if (!s.extra_names.empty()) {
    std::string names;
    for (std::size_t i = 0; i < s.extra_names.size() && i < 8; ++i)
      names += (i ? ", " : "") + s.extra_names[i];
    if (s.extra_names.size() > 8)
      names += ", ... " + std::to_string(s.extra_names.size() - 8) + " more";
    row("extra figures", std::to_string(s.extra_names.size()) + " per elite (" + names + ")");
  } else if (s.archive_format < 2) {
    row("extra figures", "- (not kept by format " + std::to_string(s.archive_format) + ")");
  }
  row("evaluations", with_thousands(s.evaluations));
  row("elites", with_thousands(s.elites));
  row("coverage", percent(s.coverage));
  row("QD-score", exact(s.qd_score) + " (fitness floor " + exact(s.fitness_floor) + ")");
  row("max fitness", s.max_fitness ? exact(*s.max_fitness) : "- (no elites)");
  if (s.best) {
    row("best elite", "cell " + std::to_string(s.best->cell) + ", fitness " +
                          exact(s.best->fitness) + ", found at evaluation " +
                          std::to_string(s.best->birth));
    row("  descriptor", list(s.best->descriptor, 16));
    row("  genome", list(s.best->genome, 16));
    if (!s.best->extras.empty()) row("  extras", list(s.best->extras, 16));
  }
  if (s.novelty_archive)
    row("novelty archive", with_thousands(*s.novelty_archive) + " behaviours (/novelty_archive)");
  row("invalid", s.invalid ? with_thousands(*s.invalid) : "- (not recorded)");
  row("out of bounds", s.out_of_bounds ? with_thousands(*s.out_of_bounds) : "- (not recorded)");
  if (!s.failures.empty()) {
    std::string failures;
    for (const auto& [reason, count] : s.failures)
      failures += (failures.empty() ? "" : ", ") + reason + " " + with_thousands(count);
    row("failures", failures);
  }
  row("history", with_thousands(s.history_rows) + " rows");
  row("resumable", s.algorithm ? "yes (" + *s.algorithm + ", next batch " +
                                     std::to_string(s.next_batch.value_or(0)) + ")"
                               : "no");
}

// A trial log of `tessera adapt --log` is no archive: say what it holds.
void print_trial_log(std::ostream& out, const std::string& path, const TrialLogSummary& s) {
  const auto row = [&](const std::string& key, const std::string& value) {
    out << "  " << key << std::string(key.size() < 14 ? 14 - key.size() : 1, ' ') << value << "\n";
  };
  out << path << ": trial log of `tessera adapt --log` (format " << s.format_version
      << "), not an archive\n";
  row("written by", "tessera " + s.tool_version);
  row("map", s.archive);
  if (!s.run_file.empty()) row("run file", s.run_file);
  row("trials from", s.source);
  row("prior", s.prior);
  row("trials", std::to_string(s.measured.size()) + " of at most " + std::to_string(s.max_trials));
  for (std::size_t t = 0; t < s.measured.size(); ++t)
    row("  " + std::to_string(t + 1),
        "cell " + std::to_string(s.cell[t]) + ", measured " + exact(s.measured[t]));
  row("stopped", s.stop_reason);
  row("choice", s.chosen >= 0 ? "trial " + std::to_string(s.chosen + 1) + ", cell " +
                                    std::to_string(s.cell[static_cast<std::size_t>(s.chosen)])
                              : "- (no trial completed)");
}

int run_inspect(const InspectOptions& o) {
  if (const auto log = read_trial_log_summary(o.archive)) {
    if (o.format == "json")
      throw InputError(o.archive +
                       ": a trial log of `tessera adapt --log`, not an archive; "
                       "`inspect --format json` describes archives only (read the log with h5py, "
                       "or `tessera inspect` it as text)");
    print_trial_log(std::cout, o.archive, *log);
    return 0;
  }
  const ArchiveSummary summary = summarize_archive(read_archive_file(o.archive), o.archive);
  if (o.format == "json") {
    std::cout << nlohmann::ordered_json(summary).dump(2) << "\n";
  } else {
    print_text(std::cout, summary);
  }
  return 0;
}

}  // namespace

void register_inspect(CLI::App& app) {
  auto o = std::make_shared<InspectOptions>();
  auto* cmd = app.add_subcommand(
      "inspect",
      "Show what an archive holds: problem, space, evaluations, coverage, QD-score, the best\n"
      "elite and the failure counts. Reads the archive only; never writes.");
  cmd->add_option("ARCHIVE", o->archive, "archive file (.h5) written by tessera")->required();
  cmd->add_option("--format", o->format, "text (default) or json (stable, for tools)")
      ->check(CLI::IsMember({"text", "json"}));
  cmd->callback([o] { throw CLI::RuntimeError(run_inspect(*o)); });
}

}  // namespace tessera::cli
