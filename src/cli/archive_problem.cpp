#include "cli/archive_problem.hpp"

#include <filesystem>

#include "core/base/errors.hpp"
#include "eval/problem_factory.hpp"
#include "io/run_file.hpp"

namespace tessera::cli {

std::shared_ptr<const Problem> open_archive_problem(const ArchiveSnapshot& snapshot,
                                                    const std::string& archive) {
  const std::string base = std::filesystem::absolute(archive).parent_path().string();
  RunConfig config = parse_run_text(snapshot.config, archive + " [stored run file]", base);
  config.problem.log_path.clear();  // a worker's stderr goes nowhere: nothing is being run
  std::shared_ptr<const Problem> problem = open_problem(config.problem);
  if (problem->info().genome_size() != snapshot.genome_size())
    throw InputError(archive + ": problem '" + problem->info().name + "' now has " +
                     std::to_string(problem->info().genome_size()) +
                     " genome values, the archive's elites have " +
                     std::to_string(snapshot.genome_size()));
  return problem;
}

}  // namespace tessera::cli
