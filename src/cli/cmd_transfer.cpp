// `tessera transfer ARCHIVE.h5 --to RUNFILE [--sample N] [--format text|json|csv]`: re-evaluates
// the elites of an archive in the problem of another run file (another arena, or any problem
// with the same genome size) and reports every elite's new fitness, descriptor and extra figures
// beside the figures the archive stored for it (the "before": never re-evaluated), then a
// summary: median and quartiles of each figure, and for each figure named "*_time" (the first
// time a place was reached, -1 for never) how many elites reached it and when.
#include <tbb/global_control.h>
#include <tbb/info.h>

#include <cmath>
#include <iostream>
#include <limits>
#include <memory>
#include <nlohmann/json.hpp>
#include <optional>
#include <string>
#include <vector>

#include "cli/commands.hpp"
#include "core/base/errors.hpp"
#include "core/base/rng.hpp"
#include "core/stats/quartiles.hpp"
#include "eval/problem_factory.hpp"
#include "eval/thread_evaluator.hpp"
#include "io/archive_file.hpp"
#include "io/run_file.hpp"
#include "io/table_output.hpp"

namespace tessera::cli {
namespace {

struct TransferOptions {
  std::string archive;
  std::string run_file;
  std::size_t sample = 0;  // 0 = every elite
  std::uint64_t seed = 1;
  std::string format = "text";
  bool summary_only = false;
  std::size_t threads = 0;
  std::vector<std::string> overrides;
};

bool ends_with(const std::string& s, const std::string& tail) {
  return s.size() >= tail.size() && s.compare(s.size() - tail.size(), tail.size(), tail) == 0;
}

// Trace positions are for drawings; they make no sense as summary figures.
bool is_trace(const std::string& name) {
  return name.rfind("trace_", 0) == 0;
}

// `count` distinct rows of `n`, uniformly at random (partial Fisher-Yates), in ascending order.
std::vector<std::size_t> sample_rows(std::size_t n, std::size_t count, std::uint64_t seed) {
  std::vector<std::size_t> rows(n);
  for (std::size_t i = 0; i < n; ++i) rows[i] = i;
  if (count == 0 || count >= n) return rows;
  Rng rng(seed, 0, 0, static_cast<std::uint64_t>(StreamPurpose::selection));
  for (std::size_t i = 0; i < count; ++i) std::swap(rows[i], rows[i + rng.below(n - i)]);
  rows.resize(count);
  std::sort(rows.begin(), rows.end());
  return rows;
}

struct FigureSummary {
  std::string name;
  std::size_t evaluated = 0;  // valid evaluations
  bool timed = false;         // a "*_time" figure: quartiles over the elites that got there
  std::size_t reached = 0;
  Quartiles q;
  // The same figure as the archive stored it for the same elites, when it has it.
  std::optional<std::size_t> source_reached;  // timed figures
  std::optional<double> source_median;
};

// Median and count of the stored figure over `rows` (NaN: not recorded, left out).
void add_source(FigureSummary& f, const std::vector<std::size_t>& rows, auto stored_of) {
  std::vector<double> values;
  for (std::size_t row : rows) {
    const double v = stored_of(row);
    if (std::isnan(v) || (f.timed && !(v >= 0.0))) continue;
    values.push_back(v);
  }
  if (f.timed) f.source_reached = values.size();
  if (!values.empty()) f.source_median = quartiles(values).median;
}

std::vector<FigureSummary> summarise(const Batch& batch, const std::vector<std::string>& names,
                                     const ArchiveSnapshot& s,
                                     const std::vector<std::size_t>& rows) {
  std::vector<FigureSummary> out;
  auto add = [&](const std::string& name, auto value_of) {
    FigureSummary f;
    f.name = name;
    f.timed = ends_with(name, "_time");
    std::vector<double> values;
    for (std::size_t k = 0; k < batch.count; ++k) {
      if (!batch.valid[k]) continue;
      ++f.evaluated;
      const double v = value_of(k);
      if (f.timed && !(v >= 0.0)) continue;
      if (f.timed) ++f.reached;
      values.push_back(v);
    }
    f.q = quartiles(values);
    if (name == "fitness") {
      add_source(f, rows, [&](std::size_t row) { return s.fitness[row]; });
    } else if (const auto column = s.extra_index(name)) {
      add_source(f, rows, [&](std::size_t row) { return s.extra(row, *column); });
    }
    out.push_back(std::move(f));
  };
  add("fitness", [&](std::size_t k) { return batch.fitness[k]; });
  for (std::size_t e = 0; e < names.size(); ++e)
    if (!is_trace(names[e]))
      add(names[e], [&, e](std::size_t k) { return batch.extras[k * batch.extra_size + e]; });
  return out;
}

Table elite_table(const ArchiveSnapshot& s, const std::vector<std::size_t>& rows,
                  const Batch& batch, const ProblemInfo& info) {
  Table t;
  t.list_key = "elites";
  t.columns = {{"elite", {}},
               {"source_fitness", {}},
               {"valid", {}},
               {"fitness", {}},
               {"descriptor", info.descriptor_names, 4}};
  std::vector<std::size_t> shown;
  for (std::size_t e = 0; e < info.extra_names.size(); ++e) {
    if (is_trace(info.extra_names[e])) continue;
    shown.push_back(e);
    t.columns.push_back({info.extra_names[e], {}});
  }
  // The stored figures of the same names: the elite's figures before the transfer.
  std::vector<std::size_t> before;
  for (std::size_t e : shown)
    if (const auto column = s.extra_index(info.extra_names[e])) {
      before.push_back(*column);
      t.columns.push_back({"source_" + info.extra_names[e], {}});
    }
  const std::size_t d = batch.descriptor_size;
  for (std::size_t k = 0; k < rows.size(); ++k) {
    // Built value by value: GCC 12 reports a false -Wmaybe-uninitialized on a braced list of
    // variants holding a vector.
    std::vector<TableValue> row;
    row.reserve(5 + shown.size());
    row.emplace_back(static_cast<std::int64_t>(rows[k]));
    row.emplace_back(s.fitness[rows[k]]);
    row.emplace_back(static_cast<std::int64_t>(batch.valid[k] ? 1 : 0));
    row.emplace_back(batch.fitness[k]);
    row.emplace_back(std::vector<double>(batch.descriptors.begin() + k * d,
                                         batch.descriptors.begin() + (k + 1) * d));
    for (std::size_t e : shown) row.emplace_back(batch.extras[k * batch.extra_size + e]);
    for (std::size_t column : before) row.emplace_back(s.extra(rows[k], column));
    t.rows.push_back(std::move(row));
  }
  return t;
}

Table summary_table(const std::vector<FigureSummary>& figures) {
  Table t;
  t.list_key = "summary";
  t.columns = {{"figure", {}}, {"evaluated", {}}, {"reached", {}},        {"q1", {}},
               {"median", {}}, {"q3", {}},        {"source_reached", {}}, {"source_median", {}}};
  for (const auto& f : figures) {
    std::vector<TableValue> row;
    row.reserve(6);
    row.emplace_back(f.name);
    row.emplace_back(static_cast<std::int64_t>(f.evaluated));
    if (f.timed) {
      row.emplace_back(static_cast<std::int64_t>(f.reached));
    } else {
      row.emplace_back(std::string("-"));
    }
    for (double v : {f.q.q1, f.q.median, f.q.q3}) row.emplace_back(v);
    if (f.source_reached) {
      row.emplace_back(static_cast<std::int64_t>(*f.source_reached));
    } else {
      row.emplace_back(std::string("-"));
    }
    if (f.source_median) {
      row.emplace_back(*f.source_median);
    } else {
      row.emplace_back(std::string("-"));
    }
    t.rows.push_back(std::move(row));
  }
  return t;
}

nlohmann::ordered_json summary_json(const std::vector<FigureSummary>& figures) {
  auto number = [](double v) {
    return std::isfinite(v) ? nlohmann::ordered_json(v) : nlohmann::ordered_json(nullptr);
  };
  nlohmann::ordered_json list = nlohmann::ordered_json::array();
  for (const auto& f : figures) {
    nlohmann::ordered_json item = {{"figure", f.name}, {"evaluated", f.evaluated}};
    if (f.timed) item["reached"] = f.reached;
    item["q1"] = number(f.q.q1);
    item["median"] = number(f.q.median);
    item["q3"] = number(f.q.q3);
    if (f.timed) {
      item["source_reached"] = f.source_reached ? nlohmann::ordered_json(*f.source_reached)
                                                : nlohmann::ordered_json(nullptr);
    }
    item["source_median"] =
        f.source_median ? number(*f.source_median) : nlohmann::ordered_json(nullptr);
    list.push_back(std::move(item));
  }
  return list;
}

int run_transfer(const TransferOptions& o) {
  const ArchiveSnapshot s = read_archive_file(o.archive);
  if (s.elite_count() == 0) throw InputError(o.archive + ": holds no elites to transfer");
  RunConfig config = load_run_file(o.run_file, o.overrides);
  const std::shared_ptr<const Problem> problem = open_problem(config.problem);
  const ProblemInfo& info = problem->info();
  if (info.genome_size() != s.genome_size())
    throw InputError(o.archive + ": its elites have " + std::to_string(s.genome_size()) +
                     " parameters, but problem '" + info.name + "' of " + o.run_file + " takes " +
                     std::to_string(info.genome_size()) +
                     " (the controller options must match the archive's)");

  const std::vector<std::size_t> rows = sample_rows(s.elite_count(), o.sample, o.seed);
  const std::size_t g = s.genome_size();
  Batch batch;
  batch.resize(rows.size(), g, info.descriptor_size(), info.extra_names.size());
  for (std::size_t k = 0; k < rows.size(); ++k)
    std::copy_n(s.genome.begin() + rows[k] * g, g, batch.genome(k).begin());
  {
    tbb::global_control threads(tbb::global_control::max_allowed_parallelism,
                                o.threads == 0 ? tbb::info::default_concurrency() : o.threads);
    ThreadEvaluator evaluator(problem, o.threads);
    try {
      evaluator.evaluate(batch);
    } catch (const std::runtime_error& e) {
      throw InputError(o.run_file + ": evaluating the elites failed: " + e.what());
    }
  }

  const auto figures = summarise(batch, info.extra_names, s, rows);
  Table elites = elite_table(s, rows, batch, info);
  if (o.format == "json") {
    elites.header = {{"archive", o.archive},
                     {"run_file", o.run_file},
                     {"problem", info.name},
                     {"source_problem", s.problem},
                     {"elites_in_archive", s.elite_count()},
                     {"evaluated", rows.size()},
                     {"summary", summary_json(figures)}};
    if (o.summary_only) elites.rows.clear();
    write_table_json(std::cout, elites);
    return 0;
  }
  const Table summary = summary_table(figures);
  if (o.summary_only) {
    write_table(std::cout, summary, o.format);
  } else if (o.format == "csv") {
    write_table_csv(std::cout, elites);
  } else {
    std::cout << rows.size() << " of " << s.elite_count() << " elites of " << o.archive << " ("
              << s.problem << ") re-evaluated in '" << info.name << "' of " << o.run_file << "\n\n";
    write_table_text(std::cout, elites);
    std::cout << "\nsummary (valid evaluations; *_time figures: over the elites that reached the "
                 "place, -1 = never; source_*: as the archive stored them)\n";
    write_table_text(std::cout, summary);
  }
  return 0;
}

}  // namespace

void register_transfer(CLI::App& app) {
  auto o = std::make_shared<TransferOptions>();
  auto* cmd = app.add_subcommand(
      "transfer",
      "Re-evaluate the elites of an archive in another problem: another arena, or any problem\n"
      "whose genome has the same size (the run file's [problem] is used; its search settings\n"
      "are not). Prints each elite's new fitness, descriptor and extra figures beside the\n"
      "figures the archive stored for it (source_*), then their median and quartiles; for\n"
      "figures named *_time (first time a place was reached, -1 for never) how many elites got\n"
      "there and when. CSV holds the per-elite rows (or, with --summary, the summary); JSON\n"
      "holds both.");
  cmd->add_option("ARCHIVE", o->archive, "archive file (.h5) written by tessera")->required();
  cmd->add_option("--to", o->run_file, "run file (TOML) naming the problem to evaluate in")
      ->required()
      ->check(CLI::ExistingFile);
  cmd->add_option("--sample", o->sample,
                  "re-evaluate N elites drawn at random (default: all of them)");
  cmd->add_option("--seed", o->seed, "seed of the --sample draw (default 1)");
  cmd->add_option("--format", o->format, "text (default), json or csv")
      ->check(CLI::IsMember({"text", "json", "csv"}));
  cmd->add_flag("--summary", o->summary_only, "print the summary only");
  cmd->add_option("--threads,-j", o->threads, "worker threads (default: all cores)");
  cmd->add_option("--set", o->overrides,
                  "override a key of the run file, SECTION.KEY=VALUE (repeatable), e.g. "
                  "--set problem.options.duration=80");
  cmd->callback([o] { throw CLI::RuntimeError(run_transfer(*o)); });
}

}  // namespace tessera::cli
