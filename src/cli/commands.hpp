// Each tessera subcommand lives in its own file and registers itself here. A command's
// callback throws CLI::RuntimeError(code) to set the exit code; InputError -> one line, exit 2.
#pragma once

#include <CLI/CLI.hpp>

namespace tessera::cli {

void register_illuminate(CLI::App& app);
void register_resume(CLI::App& app);
void register_inspect(CLI::App& app);
void register_problems(CLI::App& app);
void register_query(CLI::App& app);
void register_front(CLI::App& app);
void register_report(CLI::App& app);
void register_adapt(CLI::App& app);
void register_trace(CLI::App& app);
void register_transfer(CLI::App& app);
void register_compare(CLI::App& app);

}  // namespace tessera::cli
