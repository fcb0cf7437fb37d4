// `tessera trace ARCHIVE.h5 (--cell N | --nearest V1,V2,... | --best) --out FILE.csv|json`:
// what one elite does, as its problem traces it (plugin ABI version 2 tsr_trace, or the process
// protocol's trace message): paths and time series in the problem's units, with the cautions
// that go with them. The problem is opened again from the archive's stored run file.
#include <unistd.h>

#include <filesystem>
#include <fstream>
#include <iostream>
#include <memory>
#include <string>
#include <vector>

#include "cli/archive_problem.hpp"
#include "cli/commands.hpp"
#include "cli/hardware_caution.hpp"
#include "cli/selection_args.hpp"
#include "core/base/errors.hpp"
#include "core/select/query.hpp"
#include "io/archive_file.hpp"
#include "io/table_output.hpp"
#include "io/trace_output.hpp"

namespace tessera::cli {
namespace {

namespace fs = std::filesystem;

struct TraceOptions {
  std::string archive;
  std::int64_t cell = -1;
  std::string nearest;
  bool best = false;
  std::string out;
  bool force = false;
};

// Row of the elite the user asked for.
std::size_t choose_elite(const TraceOptions& o, const ArchiveSnapshot& s) {
  if (s.elite_count() == 0) throw InputError(o.archive + ": the archive holds no elites");
  if (o.cell >= 0) {
    for (std::size_t i = 0; i < s.elite_count(); ++i)
      if (s.cell[i] == o.cell) return i;
    throw InputError(o.archive + ": cell " + std::to_string(o.cell) + " holds no elite (" +
                     std::to_string(s.elite_count()) + " of " + std::to_string(s.cell_count()) +
                     " cells are filled)");
  }
  if (o.best) {
    std::size_t best = 0;  // the first of equally fit elites
    for (std::size_t i = 1; i < s.elite_count(); ++i)
      if (s.fitness[i] > s.fitness[best]) best = i;
    return best;
  }
  const auto target = parse_number_list(o.nearest, "--nearest");
  if (target.size() != s.descriptor_size())
    throw InputError("--nearest: expected " + std::to_string(s.descriptor_size()) +
                     " numbers (one per descriptor), got '" + o.nearest + "'");
  // As `query` measures it: descriptors scaled to [0, 1] by the space bounds.
  const NearestElites index(s, EliteFilter{});
  return index.nearest(target, 1).front().elite;
}

// Whole file under a temporary name, then renamed: a reader never sees half a file.
void write_whole(const std::string& path, const std::string& text) {
  const fs::path target(path);
  const fs::path temp = target.parent_path() /
                        ("." + target.filename().string() + ".tmp-" + std::to_string(::getpid()));
  std::error_code ec;
  {
    std::ofstream file(temp, std::ios::binary | std::ios::trunc);
    file << text;
    file.flush();
    if (!file) {
      fs::remove(temp, ec);
      throw InputError(path + ": cannot write the trace");
    }
  }
  fs::rename(temp, target, ec);
  if (ec) {
    fs::remove(temp, ec);
    throw InputError(path + ": cannot write the trace: " + ec.message());
  }
}

int run_trace(const TraceOptions& o) {
  if ((o.cell >= 0) + !o.nearest.empty() + o.best != 1)
    throw InputError("trace: give exactly one of --cell N, --nearest V1,V2,... and --best");
  const std::string extension = fs::path(o.out).extension().string();
  if (extension != ".csv" && extension != ".json")
    throw InputError(o.out + ": the trace is written as .csv or .json; name the file so");
  std::error_code ec;
  if (fs::exists(o.out, ec) && !o.force)
    throw InputError(o.out + ": already exists; pass --force to overwrite it");
  const fs::path parent = fs::path(o.out).parent_path();
  if (!parent.empty() && !fs::is_directory(parent, ec))
    throw InputError(o.out + ": folder " + parent.string() + " does not exist");

  const ArchiveSnapshot s = read_archive_file(o.archive);
  const std::size_t row = choose_elite(o, s);
  const auto problem = open_archive_problem(s, o.archive);
  const std::size_t g = s.genome_size(), d = s.descriptor_size();
  TracedElite elite;
  elite.archive = o.archive;
  elite.problem = s.problem;
  elite.cell = s.cell[row];
  elite.fitness = s.fitness[row];
  elite.descriptor_names = s.descriptor_names;
  elite.descriptor.assign(s.descriptor.begin() + row * d, s.descriptor.begin() + (row + 1) * d);
  elite.genome.assign(s.genome.begin() + row * g, s.genome.begin() + (row + 1) * g);
  std::optional<Figure> trace;
  try {
    trace = problem->trace(elite.genome);
  } catch (const std::runtime_error& e) {
    throw InputError(o.archive + ": cannot trace the elite in cell " + std::to_string(elite.cell) +
                     ": " + e.what());
  }
  if (!trace)
    throw InputError(o.archive + ": problem '" + s.problem + "' gives no traces (" +
                     problem->info().origin + " answers no trace request)");
  elite.cautions = trace->notes("caution");
  for (auto& caution : elite.cautions) caution = "caution: " + caution;
  if (may_drive_hardware(s.problem, problem->info().origin))
    elite.cautions.push_back(kHardwareCaution);
  write_whole(o.out, extension == ".csv" ? trace_csv(elite, *trace) : trace_json(elite, *trace));

  std::size_t data_items = 0, rows = 0;
  for (const auto& item : trace->items)
    if (item.kind != FigureKind::note) ++data_items, rows += item.rows();
  std::cout << "trace: " << s.problem << ", cell " << elite.cell << ", fitness "
            << exact_number(elite.fitness) << "\n";
  std::cout << "  wrote " << o.out << ": " << data_items << " items, " << rows << " rows";
  if (const std::string units = trace->note("units"); !units.empty())
    std::cout << " (units: " << units << ")";
  std::cout << "\n";
  for (const auto& caution : elite.cautions) std::cout << caution << "\n";
  return 0;
}

}  // namespace

void register_trace(CLI::App& app) {
  auto o = std::make_shared<TraceOptions>();
  auto* cmd = app.add_subcommand(
      "trace",
      "Write what one elite does, as its problem traces it (paths and time series in the\n"
      "problem's units: a linkage's joints over the crank cycle, a robot's path, an arm's\n"
      "joints), as CSV or JSON by the extension of FILE. The problem is opened again from the\n"
      "archive's stored run file; problems that give no traces are named in one line.");
  cmd->add_option("ARCHIVE", o->archive, "archive file (.h5) written by tessera")->required();
  auto* cell = cmd->add_option("--cell", o->cell, "archive cell of the elite")
                   ->check(CLI::NonNegativeNumber);
  auto* nearest = cmd->add_option(
      "--nearest", o->nearest,
      "V1,V2,...: the elite whose descriptor is nearest (scaled by the space bounds, as query)");
  auto* best = cmd->add_flag("--best", o->best, "the fittest elite");
  cell->excludes(nearest)->excludes(best);
  nearest->excludes(best);
  cmd->add_option("--out,-o", o->out, "FILE.csv or FILE.json to write")->required();
  cmd->add_flag("--force", o->force, "overwrite an existing FILE");
  cmd->callback([o] { throw CLI::RuntimeError(run_trace(*o)); });
}

}  // namespace tessera::cli
