// `tessera adapt ARCHIVE.h5 --on RUNFILE`: recovery after damage by trial and error over the
// archive's elites (core/adaptation.hpp, after Cully et al., Nature 2015). Trials run on the
// problem of RUNFILE (a damaged robot in simulation), on an external process speaking the
// evaluator line protocol (--trial-process: a real robot's harness), or are typed in by the
// operator (--ask). Prints each trial and the final choice; --log keeps the trials in HDF5.
#include <toml++/toml.h>

#include <algorithm>
#include <charconv>
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <iostream>
#include <limits>
#include <memory>
#include <nlohmann/json.hpp>
#include <optional>
#include <string>
#include <vector>

#include "cli/commands.hpp"
#include "cli/hardware_caution.hpp"
#include "cli/format.hpp"
#include "cli/stop_signal.hpp"
#include "core/models/adaptation.hpp"
#include "core/base/errors.hpp"
#include "eval/problem_factory.hpp"
#include "eval/process_problem.hpp"
#include "io/archive_file.hpp"
#include "io/run_file.hpp"
#include "io/trial_log.hpp"

namespace tessera::cli {
namespace {

namespace fs = std::filesystem;

struct AdaptOptions {
  std::string archive;
  std::string run_file;
  std::int64_t max_trials = static_cast<std::int64_t>(AdaptSettings{}.max_trials);
  double stop_gap = AdaptSettings{}.stop_gap;
  std::optional<double> good_enough;
  bool brute_force = false;
  double kappa = AdaptSettings{}.kappa;
  double length_scale = GpSettings{}.length_scale;
  double noise = GpSettings{}.noise;
  std::string format = "text";
  std::string log;
  std::string trial_process;
  double trial_timeout = 3600.0;
  bool ask = false;
  std::vector<std::string> overrides;
};

std::string exact(double v) {
  char buf[32];
  const auto r = std::to_chars(buf, buf + sizeof buf, v);
  return std::string(buf, r.ptr);
}

std::string brief(double v) {
  char buf[32];
  std::snprintf(buf, sizeof buf, "%.6g", v);
  return buf;
}

std::string vector_text(const std::vector<double>& values) {
  std::string out = "[";
  for (std::size_t i = 0; i < values.size(); ++i) out += (i ? ", " : "") + exact(values[i]);
  return out + "]";
}

// Where the measurements come from.
class TrialSource {
 public:
  virtual ~TrialSource() = default;
  virtual std::string name() const = 0;
  virtual bool drives_hardware() const = 0;
  // Measured performance and descriptor (NaN when unknown), or nothing when the trials end.
  struct Measurement {
    double performance = 0.0;
    bool valid = true;
    std::vector<double> descriptor;
    std::string fault;
  };
  virtual std::optional<Measurement> measure(std::size_t trial, std::int64_t cell,
                                             const std::vector<double>& genome) = 0;
  // Why measure() returned nothing.
  virtual std::string end_reason() const = 0;
};

// A problem (the damaged robot in simulation, or an external process) evaluating one genome.
class ProblemSource final : public TrialSource {
 public:
  ProblemSource(std::shared_ptr<Problem> problem, std::string name, bool hardware, double lowest)
      : problem_(std::move(problem)),
        instance_(problem_->make_instance()),
        name_(std::move(name)),
        hardware_(hardware),
        lowest_(lowest) {}
  std::string name() const override { return name_; }
  bool drives_hardware() const override { return hardware_; }
  std::optional<Measurement> measure(std::size_t, std::int64_t,
                                     const std::vector<double>& genome) override {
    const ProblemInfo& info = problem_->info();
    Batch batch;
    batch.resize(1, info.genome_size(), info.descriptor_size(), info.extra_names.size());
    std::copy(genome.begin(), genome.end(), batch.genomes.begin());
    Measurement m;
    try {
      instance_->evaluate(batch, 0, 1);
      m.valid = batch.valid[0] != 0 && std::isfinite(batch.fitness[0]);
    } catch (const std::exception& e) {
      m.valid = false;
      m.fault = e.what();
    }
    // A trial process that fails (crash, timeout, garbage) gives no measurement: the trials end
    // there rather than send more genomes to a harness in trouble.
    if (!m.valid && hardware_) return std::nullopt;
    // A failed simulation (unstable) counts as the lowest possible performance.
    m.performance = m.valid ? batch.fitness[0] : lowest_;
    m.descriptor.assign(batch.descriptors.begin(), batch.descriptors.end());
    if (!m.valid) m.descriptor.assign(info.descriptor_size(), std::nan(""));
    return m;
  }
  std::string end_reason() const override {
    return "the trial process gave no measurement (its messages are above)";
  }
  // Every genome of `genomes` (row-major, `count` rows), for the brute-force reference; a failed
  // evaluation counts as the lowest possible fitness, as in a trial.
  std::vector<double> evaluate_all(const std::vector<double>& genomes, std::size_t count) {
    const ProblemInfo& info = problem_->info();
    const std::size_t g = info.genome_size();
    constexpr std::size_t kChunk = 256;
    std::vector<double> out(count, lowest_);
    for (std::size_t first = 0; first < count; first += kChunk) {
      const std::size_t rows = std::min(kChunk, count - first);
      Batch batch;
      batch.resize(rows, g, info.descriptor_size(), info.extra_names.size());
      std::copy(genomes.begin() + static_cast<long>(first * g),
                genomes.begin() + static_cast<long>((first + rows) * g), batch.genomes.begin());
      try {
        instance_->evaluate(batch, 0, rows);
      } catch (const std::exception&) {
        continue;  // the whole chunk counts as failed
      }
      for (std::size_t i = 0; i < rows; ++i)
        if (batch.valid[i] != 0 && std::isfinite(batch.fitness[i]))
          out[first + i] = batch.fitness[i];
    }
    return out;
  }

 private:
  std::shared_ptr<Problem> problem_;
  std::unique_ptr<ProblemInstance> instance_;
  std::string name_;
  bool hardware_;
  double lowest_;
};

// The operator runs the trial and types the measured performance.
class OperatorSource final : public TrialSource {
 public:
  explicit OperatorSource(std::size_t descriptor_size) : descriptor_size_(descriptor_size) {}
  std::string name() const override { return "operator"; }
  std::string end_reason() const override { return "the operator ended the trials"; }
  bool drives_hardware() const override { return true; }
  std::optional<Measurement> measure(std::size_t trial, std::int64_t cell,
                                     const std::vector<double>& genome) override {
    std::cerr << "trial " << trial << ": run the genome of cell " << cell << " (" << genome.size()
              << " values):\n"
              << vector_text(genome) << "\n";
    for (;;) {
      std::cerr << "measured performance (a number; 'stop' or end of input ends the trials): "
                << std::flush;
      std::string line;
      if (!std::getline(std::cin, line)) return std::nullopt;
      const auto first = line.find_first_not_of(" \t\r");
      if (first == std::string::npos) continue;
      line = line.substr(first, line.find_last_not_of(" \t\r") - first + 1);
      if (line == "stop" || line == "q" || line == "quit") return std::nullopt;
      double value = 0.0;
      const auto r = std::from_chars(line.data(), line.data() + line.size(), value);
      if (r.ec == std::errc() && r.ptr == line.data() + line.size() && std::isfinite(value)) {
        Measurement m;
        m.performance = value;
        m.descriptor.assign(descriptor_size_, std::nan(""));
        return m;
      }
      std::cerr << "'" << line << "' is not a number\n";
    }
  }

 private:
  std::size_t descriptor_size_;
};

// Splits a command line on blanks; quotes group words ("a b" or 'a b').
std::vector<std::string> split_command(const std::string& text) {
  std::vector<std::string> words;
  std::string word;
  bool in_word = false;
  char quote = 0;
  for (char c : text) {
    if (quote) {
      if (c == quote)
        quote = 0;
      else
        word += c;
    } else if (c == '"' || c == '\'') {
      quote = c;
      in_word = true;
    } else if (c == ' ' || c == '\t') {
      if (in_word) words.push_back(word), word.clear(), in_word = false;
    } else {
      word += c;
      in_word = true;
    }
  }
  if (quote) throw InputError("--trial-process: unbalanced quote in '" + text + "'");
  if (in_word) words.push_back(word);
  if (words.empty()) throw InputError("--trial-process: the command is empty");
  return words;
}

// The task's target when the run file's problem options name one: the prior for the elite is
// then minus the distance from its descriptor to the target, which is what the intact robot
// would score on a reaching task (the descriptor is where it ends up).
std::optional<std::vector<double>> target_of(const RunConfig& config, std::size_t dims) {
  if (config.problem.options_toml.empty()) return std::nullopt;
  const toml::table options = toml::parse(config.problem.options_toml);
  const toml::array* array = options["target"].as_array();
  if (array == nullptr) return std::nullopt;
  std::vector<double> target;
  for (const auto& e : *array)
    if (auto v = e.value<double>()) target.push_back(*v);
  if (target.size() != dims || target.size() != array->size())
    throw InputError(config.source + ": [problem.options] target must hold " +
                     std::to_string(dims) + " numbers, one per descriptor dimension");
  return target;
}

int run_adapt(const AdaptOptions& o) {
  if (!o.trial_process.empty() && o.ask)
    throw InputError("--trial-process and --ask both give the measurements: choose one");
  if (o.run_file.empty() && o.trial_process.empty() && !o.ask)
    throw InputError(
        "say where the trials run: --on RUNFILE (simulation), --trial-process CMD "
        "or --ask");
  // Command-line values are checked here, so that the message names the option.
  const auto bad = [](const std::string& option, double value, const std::string& rule) {
    return InputError(option + " " + brief(value) + ": " + rule);
  };
  if (o.max_trials < 1)
    throw InputError("--max-trials " + std::to_string(o.max_trials) + ": must be at least 1");
  if (!(o.trial_timeout > 0.0) || !std::isfinite(o.trial_timeout))
    throw bad("--trial-timeout", o.trial_timeout, "must be a number of seconds > 0");
  if (!(o.stop_gap >= 0.0 && o.stop_gap <= 1.0))
    throw bad("--stop-gap", o.stop_gap, "must be in [0, 1] (a share of the map's span)");
  if (o.good_enough && !std::isfinite(*o.good_enough))
    throw bad("--good-enough", *o.good_enough, "must be a finite number");
  if (!(o.kappa >= 0.0) || !std::isfinite(o.kappa))
    throw bad("--kappa", o.kappa, "must be a finite number >= 0");
  if (!(o.length_scale > 0.0) || !std::isfinite(o.length_scale))
    throw bad("--length-scale", o.length_scale, "must be a finite number > 0");
  if (!(o.noise >= 0.0) || !std::isfinite(o.noise))
    throw bad("--noise", o.noise, "must be a finite number >= 0");
  AdaptSettings settings;
  settings.max_trials = static_cast<std::size_t>(o.max_trials);
  settings.stop_gap = o.stop_gap;
  settings.good_enough = o.good_enough;
  settings.kappa = o.kappa;
  settings.gp.length_scale = o.length_scale;
  settings.gp.noise = o.noise;
  try {
    check_adapt_settings(settings);
  } catch (const std::invalid_argument& e) {
    throw InputError(std::string("bad setting: ") + e.what());
  }
  if (o.brute_force && (o.ask || !o.trial_process.empty() || o.run_file.empty()))
    throw InputError(
        "--brute-force: only with trials in simulation (--on RUNFILE alone): it "
        "evaluates every elite of the map under the damage");
  if (!o.log.empty()) {
    const fs::path log(o.log);
    const fs::path folder = log.has_parent_path() ? log.parent_path() : fs::path(".");
    std::error_code ec;
    if (!fs::is_directory(folder, ec))
      throw InputError(o.log + ": cannot write the trial log: folder " + folder.string() +
                       " does not exist");
    if (fs::is_directory(log, ec)) throw InputError(o.log + ": is a folder, not a file name");
  }

  const ArchiveSnapshot map = read_archive_file(o.archive);
  const std::size_t n = map.elite_count();
  const std::size_t g = map.genome_size();
  const std::size_t d = map.descriptor_size();
  if (n == 0) throw InputError(o.archive + ": holds no elites to try");

  std::optional<RunConfig> config;
  if (!o.run_file.empty()) {
    config = load_run_file(o.run_file, o.overrides);
    if (config->problem.name != map.problem)
      throw InputError(o.run_file + ": problem '" + config->problem.name +
                       "' differs from the archive's problem '" + map.problem + "'");
  } else if (!o.overrides.empty()) {
    throw InputError("--set needs a run file (--on RUNFILE)");
  }

  // Prior: the map's fitness, or minus the distance to the task's target.
  const std::optional<std::vector<double>> target =
      config ? target_of(*config, d) : std::optional<std::vector<double>>();
  std::vector<double> prior(n);
  for (std::size_t i = 0; i < n; ++i) {
    if (!target) {
      prior[i] = map.fitness[i];
      continue;
    }
    double sum = 0.0;
    for (std::size_t k = 0; k < d; ++k) {
      const double diff = map.descriptor[i * d + k] - (*target)[k];
      sum += diff * diff;
    }
    prior[i] = -std::sqrt(sum);
  }
  const std::string prior_text =
      target ? "minus the distance of the elite's descriptor to the target " + vector_text(*target)
             : std::string("the map's fitness");

  // The trial source; the lowest possible fitness stands in for a failed trial.
  std::unique_ptr<TrialSource> source;
  ProblemSource* simulation = nullptr;
  if (o.ask) {
    source = std::make_unique<OperatorSource>(d);
  } else if (!o.trial_process.empty()) {
    ProblemSpec spec;
    spec.kind = "process";
    spec.name = map.problem;
    spec.source = "--trial-process";
    spec.command = split_command(o.trial_process);
    spec.workers = 1;
    spec.timeout_seconds = o.trial_timeout;
    spec.log_path = "/dev/stderr";  // the harness's messages belong in front of the operator
    spec.declared.name = map.problem;
    spec.declared.summary = "trial process";
    spec.declared.genome = map.genome_bounds;
    spec.declared.descriptor = map.descriptor_bounds;
    spec.declared.descriptor_names = map.descriptor_names;
    spec.declared.fitness_lower = map.fitness_floor;
    spec.declared.fitness_upper = std::numeric_limits<double>::infinity();
    source = std::make_unique<ProblemSource>(open_process_problem(spec),
                                             "process: " + o.trial_process, true, map.fitness_floor);
  } else {
    std::shared_ptr<Problem> problem = open_problem(config->problem);
    const ProblemInfo& info = problem->info();
    if (info.genome_size() != g || info.descriptor_size() != d)
      throw InputError(o.run_file + ": the problem has " + std::to_string(info.genome_size()) +
                       " genome values and " + std::to_string(info.descriptor_size()) +
                       " descriptor values, the archive " + std::to_string(g) + " and " +
                       std::to_string(d));
    auto problem_source =
        std::make_unique<ProblemSource>(problem, "simulation", false, info.fitness_lower);
    simulation = problem_source.get();
    source = std::move(problem_source);
  }

  const std::vector<double> points = normalise_descriptors(
      map.descriptor, map.descriptor_bounds.lower, map.descriptor_bounds.upper);
  TrialAndError loop(points, d, prior, settings);

  TrialLog log;
  log.archive = o.archive;
  log.run_file = o.run_file;
  log.source = source->name();
  log.prior = prior_text;
  log.kappa = settings.kappa;
  log.stop_gap = settings.stop_gap;
  log.good_enough = settings.good_enough.value_or(std::nan(""));
  log.expected_best = loop.expected_best();
  log.expected_span = loop.expected_span();
  log.brute_force_best = std::nan("");
  log.length_scale = settings.gp.length_scale;
  log.signal_variance = settings.gp.signal_variance;
  log.noise = settings.gp.noise;
  log.max_trials = settings.max_trials;
  log.genome_size = g;
  log.descriptor_size = d;

  const bool text = o.format == "text";
  if (source->drives_hardware()) std::cerr << "tessera: " << kHardwareCaution << "\n";
  if (text) {
    std::cout << "adapting with " << with_thousands(n) << " elites of " << o.archive
              << "; trials: " << source->name()
              << (o.run_file.empty() ? "" : " (" + o.run_file + ")") << "\n"
              << "prior: " << prior_text << "; kappa " << brief(settings.kappa) << "\n"
              << "stop: once a trial measures at least " << brief(loop.stop_level())
              << " (the map's best expectation " << brief(loop.expected_best())
              << " less the stop gap " << brief(settings.stop_gap) << " x its span "
              << brief(loop.expected_span()) << ")"
              << (settings.good_enough ? " or the good-enough level " + brief(*settings.good_enough)
                                       : std::string())
              << "; at most " << settings.max_trials << " trials\n"
              << "trial      cell     prior   predicted   +/- sigma    measured\n";
  }

  while (const auto next = loop.next()) {
    if (stop_signal() != 0) {  // Ctrl-C: stop between trials, the log keeps every trial run
      loop.abort("interrupted");
      break;
    }
    const std::size_t elite = *next;
    const std::vector<double> genome(map.genome.begin() + static_cast<long>(elite * g),
                                     map.genome.begin() + static_cast<long>((elite + 1) * g));
    const auto measurement = source->measure(loop.trials().size() + 1, map.cell[elite], genome);
    if (!measurement) {
      loop.abort(source->end_reason());
      break;
    }
    loop.record(elite, measurement->performance, measurement->valid);
    const AdaptTrial& t = loop.trials().back();
    TrialRecord record;
    record.cell = map.cell[elite];
    record.elite = elite;
    record.prior = t.prior;
    record.predicted = t.predicted;
    record.sigma = t.sigma;
    record.measured = t.measured;
    record.valid = t.valid;
    record.genome = genome;
    record.descriptor.assign(map.descriptor.begin() + static_cast<long>(elite * d),
                             map.descriptor.begin() + static_cast<long>((elite + 1) * d));
    record.measured_descriptor = measurement->descriptor;
    log.trials.push_back(std::move(record));
    if (text) {
      char line[160];
      std::snprintf(line, sizeof line, "%5zu  %8lld  %8.4g  %10.4g  %10.4g  %10.4g%s\n",
                    loop.trials().size(), static_cast<long long>(map.cell[elite]), t.prior,
                    t.predicted, t.sigma, t.measured, t.valid ? "" : "  (failed)");
      std::cout << line << std::flush;
    }
    if (!measurement->valid)
      std::cerr << "tessera: trial " << loop.trials().size() << " failed"
                << (measurement->fault.empty() ? "" : ": " + measurement->fault)
                << "; counted as the lowest fitness " << brief(t.measured) << "\n";
    // Rewritten after every trial, so that a crash loses no robot trial already run.
    if (!o.log.empty()) {
      log.stop_reason = loop.stop_reason();
      log.chosen = static_cast<std::int64_t>(loop.best_trial().value_or(0));
      const CheckpointWriteGuard writing;
      write_trial_log(o.log, log);
    }
  }

  // The reference a simulation allows: every elite of the map evaluated under the damage.
  struct BruteForce {
    double best = 0.0;
    std::size_t elite = 0;
  };
  std::optional<BruteForce> brute;
  if (o.brute_force && simulation != nullptr) {
    const std::vector<double> all = simulation->evaluate_all(map.genome, n);
    BruteForce b;
    b.elite = static_cast<std::size_t>(std::max_element(all.begin(), all.end()) - all.begin());
    b.best = all[b.elite];
    brute = b;
    log.brute_force_best = b.best;
  }

  const auto best = loop.best_trial();
  log.stop_reason = loop.stop_reason();
  log.chosen = best ? static_cast<std::int64_t>(*best) : -1;
  if (!o.log.empty()) {
    const CheckpointWriteGuard writing;
    write_trial_log(o.log, log);
  }
  if (stop_signal() != 0) {
    std::cerr << "tessera: interrupted after " << loop.trials().size() << " trials"
              << (o.log.empty() ? "" : "; the trial log " + o.log + " holds them") << "\n";
    return stop_exit_code(stop_signal());
  }

  if (o.format == "json") {
    nlohmann::json out;
    out["archive"] = o.archive;
    out["run_file"] = o.run_file;
    out["source"] = source->name();
    out["prior"] = target ? "target" : "map fitness";
    out["settings"] = {{"kappa", settings.kappa},
                       {"stop_gap", settings.stop_gap},
                       {"good_enough", settings.good_enough ? nlohmann::json(*settings.good_enough)
                                                            : nlohmann::json(nullptr)},
                       {"max_trials", settings.max_trials},
                       {"length_scale", settings.gp.length_scale},
                       {"signal_variance", settings.gp.signal_variance},
                       {"noise", settings.gp.noise}};
    out["trials"] = nlohmann::json::array();
    for (std::size_t i = 0; i < log.trials.size(); ++i) {
      const TrialRecord& r = log.trials[i];
      out["trials"].push_back({{"trial", i + 1},
                               {"cell", r.cell},
                               {"elite", r.elite},
                               {"prior", r.prior},
                               {"predicted", r.predicted},
                               {"sigma", r.sigma},
                               {"measured", r.measured},
                               {"valid", r.valid}});
    }
    out["stop_reason"] = log.stop_reason;
    out["criterion_met"] = loop.criterion_met();
    out["max_predicted"] = loop.max_posterior_mean();
    out["trials_used"] = loop.trials().size();
    out["expected_best"] = loop.expected_best();
    out["expected_span"] = loop.expected_span();
    out["stop_level"] = loop.stop_level();
    // Gaps are in fitness units, >= 0 when the choice falls short.
    out["gap_to_expected"] =
        best ? nlohmann::json(loop.expected_best() - log.trials[*best].measured) : nullptr;
    if (brute) {
      out["brute_force"] = {
          {"best", brute->best},
          {"elite", brute->elite},
          {"cell", map.cell[brute->elite]},
          {"gap", best ? nlohmann::json(brute->best - log.trials[*best].measured) : nullptr}};
    } else {
      out["brute_force"] = nullptr;
    }
    if (best) {
      const TrialRecord& r = log.trials[*best];
      out["choice"] = {{"trial", *best + 1},        {"cell", r.cell},   {"elite", r.elite},
                       {"measured", r.measured},    {"prior", r.prior}, {"genome", r.genome},
                       {"descriptor", r.descriptor}};
    } else {
      out["choice"] = nullptr;
    }
    out["caution"] = kHardwareCaution;
    std::cout << out.dump(2) << "\n";
  } else {
    std::cout << "stopped: " << log.stop_reason << "\n";
    std::cout << "trials used: " << loop.trials().size() << " of " << settings.max_trials << "\n";
    if (best) {
      const TrialRecord& r = log.trials[*best];
      std::cout << "gap: the choice measured " << brief(r.measured) << ", "
                << brief(loop.expected_best() - r.measured) << " below the map's best expectation "
                << brief(loop.expected_best()) << "\n";
      if (brute)
        std::cout << "brute force: the best elite of the map under this damage (cell "
                  << map.cell[brute->elite] << ") measures " << brief(brute->best)
                  << "; the choice is " << brief(brute->best - r.measured) << " below it ("
                  << with_thousands(n) << " evaluations, against " << loop.trials().size()
                  << " trials)\n";
      std::cout << "choice: trial " << *best + 1 << ", cell " << r.cell << ", measured "
                << brief(r.measured) << " (the map predicted " << brief(r.prior) << ")\n"
                << "  genome " << vector_text(r.genome) << "\n"
                << kHardwareCaution << "\n";
    }
  }
  if (!o.log.empty() && text) std::cout << "trial log: " << o.log << "\n";
  if (!best) {
    std::cerr << "tessera: no trial was completed, so there is no choice\n";
    return 1;
  }
  return 0;
}

}  // namespace

void register_adapt(CLI::App& app) {
  auto o = std::make_shared<AdaptOptions>();
  auto* cmd = app.add_subcommand(
      "adapt",
      "Recover after damage by trial and error over an archive's elites (after Cully, Clune,\n"
      "Tarapore & Mouret, Nature 2015): a Gaussian process over the descriptor space, with the\n"
      "map's fitness as prior mean, picks the next elite to try by mean + kappa * sigma and\n"
      "stops once the best trial comes within a gap of what the map expected of its best elite\n"
      "(or reaches --good-enough, or the trial budget is spent). Trials run on the\n"
      "damaged problem of a run file (simulation), on a process speaking the evaluator line\n"
      "protocol (--trial-process, e.g. a robot's harness), or are typed in (--ask).\n"
      "Before a genome drives real hardware: validate it in simulation first, start at low\n"
      "power with an emergency stop within reach, and follow your lab's safety rules.");
  cmd->add_option("ARCHIVE", o->archive, "archive (.h5) of the intact robot")->required();
  cmd->add_option("--on", o->run_file,
                  "run file of the damaged problem (simulation); with --trial-process or --ask "
                  "it only supplies the task (e.g. a target)")
      ->check(CLI::ExistingFile);
  cmd->add_option("--max-trials", o->max_trials, "trial budget (default 20)");
  cmd->add_option("--stop-gap", o->stop_gap,
                  "stop once the best trial is within this share of the map's span of expected "
                  "fitness (highest minus lowest prior) of the map's best expectation (default "
                  "0.01; 0 = only the map's best itself)");
  cmd->add_option("--good-enough", o->good_enough,
                  "also stop once a trial measures at least this fitness (absolute, in the "
                  "problem's units, e.g. -0.02 for 2 cm from an arm's target)");
  cmd->add_flag("--brute-force", o->brute_force,
                "simulation only: afterwards evaluate every elite of the map under the damage "
                "and report the best of them and the choice's gap to it (one evaluation per "
                "elite)");
  cmd->add_option("--kappa", o->kappa,
                  "exploration weight of sigma in the choice (default 0.05, published, from "
                  "memory)");
  cmd->add_option("--length-scale", o->length_scale,
                  "Matérn 5/2 length scale on descriptors scaled to [0, 1] (default 0.4, "
                  "published, from memory)");
  cmd->add_option("--noise", o->noise,
                  "observation noise variance (default 0.001, published, from memory)");
  cmd->add_option("--format", o->format, "text (default) or json")
      ->check(CLI::IsMember({"text", "json"}));
  cmd->add_option("--log", o->log, "write the trials to this HDF5 file (replaced atomically)");
  cmd->add_option("--trial-process", o->trial_process,
                  "command of a process that runs each trial: one line {\"id\":N,\"genome\":[...]} "
                  "in, one line {\"id\":N,\"fitness\":F,\"descriptor\":[...]} out");
  cmd->add_option("--trial-timeout", o->trial_timeout,
                  "seconds one --trial-process trial may take (default 3600)");
  cmd->add_flag("--ask", o->ask, "print each genome and read the measured performance from stdin");
  cmd->add_option("--set", o->overrides,
                  "override a key of the run file, SECTION.KEY=VALUE (repeatable), e.g. "
                  "--set problem.options.stuck_joint=3");
  cmd->callback([o] { throw CLI::RuntimeError(run_adapt(*o)); });
}

}  // namespace tessera::cli
