// Shared pieces of the nmrpred command-line program (common.hpp).
#include "common.hpp"

#include <fstream>
#include <sstream>

#include <nmrpred/error.hpp>

namespace nmrpred_cli {

std::string read_file(const std::string &path) {
  std::ifstream in(path, std::ios::binary);
  if (!in) throw SetupError{"cannot open '" + path + "' for reading"};
  std::ostringstream ss;
  ss << in.rdbuf();
  if (in.bad()) throw SetupError{"error while reading '" + path + "'"};
  return ss.str();
}

std::shared_ptr<const nmrpred::Tables> load_tables(const TablesArgs &args) {
  try {
    auto tables = args.dir.empty() ? nmrpred::Tables::builtin() : nmrpred::Tables::load(args.dir);
    for (const auto &path : args.references) tables = tables->with_user_reference(read_file(path), path);
    return tables;
  } catch (const nmrpred::TablesError &e) {
    throw SetupError{e.what()};
  } catch (const nmrpred::InputError &e) {
    throw SetupError{e.what()};
  }
}

void add_tables_options(CLI::App *cmd, TablesArgs &args) {
  cmd->add_option("--tables", args.dir, "Folder of tables laid out like the project's tables/ (default: built in)")
      ->check(CLI::ExistingDirectory);
  cmd->add_option("--reference", args.references,
                  "File of the user's reference records (tables/FORMAT.md); repeatable, used before built-in records")
      ->allow_extra_args(false);
}

}  // namespace nmrpred_cli
