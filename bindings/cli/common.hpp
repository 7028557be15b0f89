// Shared pieces of the nmrpred command-line program: exit codes, table
// loading and the registration shape every subcommand file follows.
#ifndef NMRPRED_CLI_COMMON_HPP
#define NMRPRED_CLI_COMMON_HPP

#include <functional>
#include <memory>
#include <string>
#include <vector>

#include <CLI/CLI.hpp>

#include <nmrpred/tables.hpp>

namespace nmrpred_cli {

constexpr int kExitOk = 0;
constexpr int kExitRecordFailed = 1;
constexpr int kExitUsage = 2;

/// Where the tables come from; shared by every subcommand that uses them.
struct TablesArgs {
  std::string dir;                      ///< empty: the built-in tables
  std::vector<std::string> references;  ///< files of user reference records
};

/// The command cannot be carried out (exit 2): unusable tables, unreadable file.
struct SetupError {
  std::string message;
};

/// Whole file as text; SetupError when it cannot be read.
std::string read_file(const std::string &path);

/// Built-in tables or those of --tables, plus every --reference file in
/// command-line order (later files may not reuse earlier ids).
std::shared_ptr<const nmrpred::Tables> load_tables(const TablesArgs &args);

/// Adds --tables and --reference to `cmd`.
void add_tables_options(CLI::App *cmd, TablesArgs &args);

/// A registered subcommand: `run` is called when `app` was parsed. `run` may
/// throw SetupError, nmrpred::ArgumentError (exit 2) or nmrpred::Error (exit 1).
struct Command {
  CLI::App *app = nullptr;
  std::function<int()> run;
};

/// Subcommands kept in their own files (cmd_<name>.cpp). Each owns its
/// argument storage (captured by `run`).
Command add_simulate_command(CLI::App &app);
Command add_match_command(CLI::App &app);
Command add_spectrum_command(CLI::App &app);

}  // namespace nmrpred_cli

#endif
