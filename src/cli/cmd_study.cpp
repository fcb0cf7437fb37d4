// `tessera study STUDYFILE --out DIR [--jobs N] [--only INDEX]`: runs every (treatment,
// replicate) of a study into DIR/runs/LABEL/seed-S/archive.h5, whole runs side by side, then
// takes the measures into DIR/measures.csv. Resumable: the same command skips finished runs and
// continues interrupted ones from their checkpoints. Under mpirun the runs spread over the ranks.
#include <unistd.h>

#include <algorithm>
#include <chrono>
#include <csignal>
#include <filesystem>
#include <fstream>
#include <iostream>
#include <memory>
#include <sstream>
#include <thread>

#include "cli/commands.hpp"
#include "cli/compare_output.hpp"
#include "cli/study_measures.hpp"
#include "cli/study_plan.hpp"
#include "cli/study_runner.hpp"
#include "core/base/errors.hpp"
#include "eval/cluster.hpp"
#include "io/measures_csv.hpp"

namespace tessera::cli {
namespace {

namespace fs = std::filesystem;

struct StudyOptions {
  std::string study_file;
  std::string out_dir;
  std::size_t jobs = 0;
  std::size_t threads = 0;
  std::int64_t only = -1;
  bool list = false;
  bool quiet = false;
};

volatile std::sig_atomic_t g_wait_stop = 0;
void on_wait_stop(int signal) {
  g_wait_stop = signal;
}

// The lines of a plan in a fixed order: the same runs listed in another order are the same plan.
std::vector<std::string> sorted_lines(const std::string& text) {
  std::vector<std::string> lines;
  std::istringstream in(text);
  for (std::string line; std::getline(in, line);) lines.push_back(line);
  std::sort(lines.begin(), lines.end());
  return lines;
}

// The folder keeps the plan it was made with; another study's plan is refused, so no run of one
// study is ever continued as a run of another.
void check_fingerprint(const fs::path& out, const StudyPlan& plan, const std::string& source) {
  const fs::path file = out / "study-plan.txt";
  std::error_code ec;
  if (fs::exists(file, ec)) {
    std::ifstream in(file);
    std::ostringstream text;
    text << in.rdbuf();
    if (sorted_lines(text.str()) != sorted_lines(plan.fingerprint))
      throw InputError(source + ": " + out.string() + " holds runs of a different study (its " +
                       "study-plan.txt differs); choose another --out");
    return;
  }
  fs::create_directories(out, ec);
  if (ec) throw InputError(out.string() + ": cannot create the output folder: " + ec.message());
  // Job-array tasks may start together: each writes its own temporary file, then renames it.
  const fs::path temp = out / ("study-plan.txt." + std::to_string(::getpid()));
  {
    std::ofstream o(temp, std::ios::trunc);
    o << plan.fingerprint;
    if (!o) throw InputError(out.string() + ": cannot write study-plan.txt");
  }
  fs::rename(temp, file);
}

void print_list(const StudyPlan& plan) {
  std::cout << "index  run\n";
  for (std::size_t i = 0; i < plan.main_runs; ++i)
    std::cout << i << "  " << plan.jobs[i].name << (plan.jobs[i].needs.empty() ? "" : "  (after ")
              << (plan.jobs[i].needs.empty() ? "" : plan.jobs[plan.jobs[i].needs[0]].name + ")")
              << "\n";
}

// MPI rank 0: the other ranks' runs end with a done or a failed marker.
bool wait_for_all(const StudyPlan& plan) {
  std::signal(SIGINT, on_wait_stop);
  std::signal(SIGTERM, on_wait_stop);
  while (g_wait_stop == 0) {
    bool all = true;
    std::error_code ec;
    for (const auto& job : plan.jobs)
      all = all && (job.done() || fs::exists(job.failed_marker(), ec));
    if (all) return true;
    std::this_thread::sleep_for(std::chrono::seconds(1));
  }
  return false;
}

int run_study(const StudyOptions& o) {
  const StudySpec spec = load_study_file(o.study_file);
  check_probes(spec);
  const fs::path out = fs::absolute(fs::path(o.out_dir)).lexically_normal();
  const StudyPlan plan = make_plan(spec, out);
  if (o.list) {
    print_list(plan);
    return 0;
  }
  if (o.only >= 0 && static_cast<std::size_t>(o.only) >= plan.main_runs)
    throw InputError("--only " + std::to_string(o.only) + ": the study has runs 0 to " +
                     std::to_string(plan.main_runs - 1) + " (see --list)");
  const bool spread = cluster::active();
  if (!spread || cluster::rank() == 0) check_fingerprint(out, plan, spec.source);

  std::vector<std::size_t> selected;
  for (std::size_t j = 0; j < plan.jobs.size(); ++j) {
    const StudyJob& job = plan.jobs[j];
    if (o.only >= 0) {
      const auto index = static_cast<std::size_t>(o.only);
      if (j != index && !(job.readapt && job.needs[0] == index)) continue;
    } else if (spread && j % static_cast<std::size_t>(cluster::size()) !=
                             static_cast<std::size_t>(cluster::rank())) {
      continue;
    }
    selected.push_back(j);
  }
  if (spread && cluster::rank() != 0) {
    // Give rank 0 time to write the plan before this rank's runs write into the folder.
    for (int i = 0; i < 100 && !fs::exists(out / "study-plan.txt"); ++i)
      std::this_thread::sleep_for(std::chrono::milliseconds(100));
  }

  const std::size_t cores = std::max(1u, std::thread::hardware_concurrency());
  RunnerOptions runner;
  runner.jobs = o.jobs > 0 ? o.jobs : cores;
  runner.threads = o.threads > 0 ? o.threads : std::max<std::size_t>(1, cores / runner.jobs);
  runner.quiet = o.quiet || spread;
  runner.wait_for_others = spread;
  const RunnerResult result = run_jobs(plan, selected, runner);
  if (result.stop_signal != 0) {
    std::cerr << "tessera: study interrupted; finished runs are kept and the others have "
                 "checkpoints\n  continue with the same command: tessera study "
              << o.study_file << " --out " << o.out_dir << "\n";
    return result.stop_signal == SIGINT ? 130 : 143;
  }
  if (o.only >= 0 || (spread && cluster::rank() != 0)) {
    for (const auto& f : result.failures) std::cerr << "tessera: failed: " << f << "\n";
    return result.failures.empty() ? 0 : 1;
  }
  if (spread && !wait_for_all(plan)) return g_wait_stop == SIGINT ? 130 : 143;

  std::vector<std::string> notes;
  const ObservationTable table = collect_measures(spec, plan, runner.threads * runner.jobs, notes);
  const fs::path csv = out / "measures.csv";
  write_measures_csv(csv.string(), table.finals);
  std::size_t missing = 0;
  for (const auto& row : table.finals) missing += row.value ? 0 : 1;
  std::size_t failed = 0;
  for (const auto& job : plan.jobs) failed += fs::exists(job.failed_marker()) ? 1 : 0;
  std::cout << "study '" << spec.name << "': " << plan.main_runs << " runs ("
            << spec.treatments.size() << " treatments x " << spec.seeds.size() << " replicates)";
  if (plan.jobs.size() > plan.main_runs)
    std::cout << " and " << plan.jobs.size() - plan.main_runs << " re-adaptation runs";
  std::cout << "; " << result.finished << " run now, " << result.skipped << " done before\n"
            << "measures: " << csv.string() << " (" << table.finals.size() << " values, " << missing
            << " missing)\n";
  for (const auto& n : notes) std::cerr << "tessera: measure missing: " << n << "\n";
  // The statistics and the report, as `tessera compare --measures DIR/measures.csv` gives them.
  CompareOutputOptions compare;
  compare.report_dir = (out / "report").string();
  compare.reference = spec.reference;
  for (const auto& t : spec.treatments) compare.groups.push_back(t.label);
  compare.title = "Study " + spec.name;
  std::cout << "\n";
  write_comparison(std::cout, table, compare);
  std::cout << "report: " << compare.report_dir << "/index.html\n";
  if (failed > 0) {
    std::cerr << "tessera: " << failed << " run(s) failed; their measures are missing:";
    for (const auto& job : plan.jobs)
      if (fs::exists(job.failed_marker()))
        std::cerr << "\n  " << job.name << " (" << job.failed_marker().string() << ")";
    std::cerr << "\n";
    return 1;
  }
  return 0;
}

}  // namespace

void register_study(CLI::App& app) {
  auto o = std::make_shared<StudyOptions>();
  auto* cmd = app.add_subcommand(
      "study",
      "Run a study: every treatment of a study file (a run file with overrides) for every\n"
      "replicate seed, into DIR/runs/LABEL/seed-S/archive.h5, whole runs side by side; then\n"
      "the measures into DIR/measures.csv. Ctrl-C checkpoints the runs in flight; the same\n"
      "command continues them and skips finished ones. Under mpirun the runs spread over the\n"
      "ranks; --only runs one (treatment, replicate) for a scheduler's job array.");
  // No existence check here: the study file loader refuses a missing file in Tessera's one line.
  cmd->add_option("STUDYFILE", o->study_file,
                  "study file (TOML), e.g. problems/studies/arm-operators.toml")
      ->required();
  cmd->add_option("--out,-o", o->out_dir, "output folder (created if missing)")->required();
  cmd->add_option("--jobs,-J", o->jobs, "runs at a time (default: one per core)");
  cmd->add_option("--threads,-j", o->threads,
                  "threads per run (default: cores / jobs); results do not depend on it");
  cmd->add_option("--only", o->only,
                  "run only the (treatment, replicate) of this index (see --list), and its "
                  "re-adaptations; no measures")
      ->check(CLI::NonNegativeNumber);
  cmd->add_flag("--list", o->list, "print the index of every (treatment, replicate) and stop");
  cmd->add_flag("--quiet,-q", o->quiet, "no progress line");
  cmd->footer(
      "The study file (keys: README, section Studies):\n"
      "  [study]        replicates = 10 (seeds 1..10, or a list of seeds), reference = LABEL\n"
      "  [[treatment]]  label, run = RUNFILE, set = { search.algorithm = \"objective\" },\n"
      "                 or matched = LABEL for the matched random control of that treatment\n"
      "  [[measure]]    kind = final | success (threshold) | probe (run, figures, places)\n"
      "                 | readapt (places, threshold, budget)\n"
      "\nExamples:\n"
      "  tessera study problems/studies/arm-operators.toml --out runs/arm-operators\n"
      "  tessera study problems/studies/arena-novelty.toml --out runs/arena --jobs 2\n"
      "  tessera compare --measures runs/arena/measures.csv --format json   (the statistics "
      "again)\n"
      "\nIt prints, per measure, each treatment's n, median and quartiles and every pair of\n"
      "treatments: p (two-sided Mann-Whitney U; Fisher's exact test for success), p_holm\n"
      "(Holm-corrected over the pairs of that measure; stars on p_holm) and A12 (chance that a\n"
      "run of a beats a run of b: 0.5 none, from 0.56/0.44 small, 0.64/0.36 medium, 0.71/0.29\n"
      "large). Re-adaptation counts evaluations until the goal; runs that never got there are\n"
      "'censored' at the budget. Missing runs are counted, never taken as zero. The plots are\n"
      "in DIR/report/index.html.");
  cmd->callback([o] { throw CLI::RuntimeError(run_study(*o)); });
}

}  // namespace tessera::cli
