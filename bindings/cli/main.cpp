// nmrpred: command-line front end of libnmrpred. Prints JSON Lines to stdout:
// `predict` one object per input record (the serializer in
// nmrpred/predict.hpp, with couplings and multiplets unless --no-couplings),
// `reference` one object per reference compound of the tables, `solvents` one
// object per solvent; `simulate`, `match` and `spectrum` live in cmd_*.cpp.
// Diagnostics go to stderr. The library itself never prints.
//
// Exit status: 0 every record succeeded, 1 at least one record failed (or the
// input held none), 2 the command line could not be carried out (usage error,
// unreadable file, unknown solvent, tables or user reference records that
// cannot be used).

#include <fstream>
#include <iostream>
#include <memory>
#include <new>
#include <sstream>
#include <string>
#include <vector>

#include <CLI/CLI.hpp>

#include <nmrpred/predict.hpp>

#include "common.hpp"

namespace {

using namespace nmrpred_cli;

struct PredictArgs {
  std::vector<std::string> smiles;
  std::string file;
  std::string format = "auto";
  int spheres = nmrpred::kDefaultHoseSpheres;
  bool blind = false;
  bool no_shifts = false;
  bool no_h1 = false;
  bool no_couplings = false;
  double mhz = 400;
  double line_width_hz = 1.0;
  std::string solvent = "CDCl3";
  TablesArgs tables;
};

/// Prints one record and tells whether it succeeded.
bool emit(const nmrpred::RecordPrediction &r) {
  std::cout << nmrpred::to_json(r) << '\n';
  return r.ok();
}

int run_predict(const PredictArgs &args) {
  nmrpred::PredictOptions options;
  options.hose_spheres = args.spheres;
  options.blind = args.blind;
  options.predict_shifts = !args.no_shifts;
  options.predict_h1 = !args.no_h1;
  options.predict_couplings = !args.no_couplings;
  options.field_mhz = args.mhz;
  options.line_width_hz = args.line_width_hz;
  options.solvent = args.solvent;
  nmrpred::validate(options);
  const nmrpred::Format format = nmrpred::parse_format(args.format);
  const auto tables = load_tables(args.tables);
  // Before any input is read: an unknown solvent stops the command (exit 2)
  // with the known names, instead of failing every record.
  try {
    nmrpred::validate(options, *tables);
  } catch (const nmrpred::TablesError &e) {
    throw SetupError{e.what()};
  }

  std::size_t records = 0;
  std::size_t failed = 0;
  // Streaming keeps memory flat on large SDF files and shows results as they come.
  auto run = [&](std::istream &in, nmrpred::Format f) {
    nmrpred::MoleculeReader reader(in, f);
    nmrpred::ReadRecord r;
    while (reader.next(r)) {
      ++records;
      if (!emit(nmrpred::predict_record(std::move(r), *tables, options))) ++failed;
      r = nmrpred::ReadRecord{};
    }
  };

  if (!args.smiles.empty()) {
    if (format != nmrpred::Format::Auto && format != nmrpred::Format::Smiles) {
      std::cerr << "nmrpred: --smiles cannot be combined with --format " << args.format << '\n';
      return kExitUsage;
    }
    // One SMILES per line in command-line order, so that record numbers (and
    // the line numbers in the reader's messages) match the --smiles order.
    std::string text;
    for (std::size_t k = 0; k < args.smiles.size(); ++k) {
      const std::string &s = args.smiles[k];
      if (s.find_first_not_of(" \t") == std::string::npos || s.find_first_of("\r\n") != std::string::npos) {
        std::cerr << "nmrpred: --smiles value " << k + 1 << " is empty or spans several lines\n";
        return kExitUsage;
      }
      text += s;
      text += '\n';
    }
    std::istringstream in(text);
    run(in, nmrpred::Format::Smiles);
  } else {
    std::ifstream file;
    std::istream *in = &std::cin;
    if (args.file != "-") {
      file.open(args.file, std::ios::binary);
      if (!file) {
        std::cerr << "nmrpred: cannot open '" << args.file << "' for reading\n";
        return kExitUsage;
      }
      in = &file;
    }
    run(*in, format);
    if (in->bad()) {
      std::cerr << "nmrpred: error while reading '" << args.file << "'\n";
      return kExitRecordFailed;
    }
  }
  std::cout.flush();
  if (records == 0) {
    std::cerr << "nmrpred: the input holds no structure\n";
    return kExitRecordFailed;
  }
  if (failed > 0) {
    std::cerr << "nmrpred: " << failed << " of " << records << " record(s) failed\n";
    return kExitRecordFailed;
  }
  return kExitOk;
}

int run_solvents(const TablesArgs &args) {
  const auto tables = load_tables(args);
  std::vector<nmrpred::Solvent> list;
  try {
    list = nmrpred::solvents(*tables);
  } catch (const nmrpred::TablesError &e) {
    throw SetupError{e.what()};
  }
  for (const auto &s : list) std::cout << nmrpred::to_json(s) << '\n';
  std::cout.flush();
  return kExitOk;
}

int run_reference(const TablesArgs &args) {
  const auto tables = load_tables(args);
  for (const auto &c : tables->reference()) std::cout << nmrpred::to_json(c) << '\n';
  std::cout.flush();
  return kExitOk;
}

}  // namespace

int main(int argc, char **argv) {
  std::ios::sync_with_stdio(false);
  CLI::App app{"nmrpred: equivalent atoms, HOSE codes and 1H/13C shifts for chemical structures "
               "(JSON Lines output)"};
  app.set_version_flag("--version", std::string("nmrpred ") + nmrpred::version_string());
  app.require_subcommand(1, 1);

  PredictArgs args;
  CLI::App *predict = app.add_subcommand("predict", "Read structures and print one JSON object per record");
  auto *smiles_opt = predict->add_option("--smiles", args.smiles, "A SMILES string (repeatable); each is one record");
  auto *file_opt = predict->add_option("file", args.file, "Structure file to read, '-' for standard input");
  smiles_opt->allow_extra_args(false);  // one value per --smiles; the next word is FILE
  smiles_opt->excludes(file_opt);
  predict->add_option("--format", args.format, "Input format of FILE")
      ->check(CLI::IsMember({"auto", "smiles", "mol", "sdf", "inchi"}))
      ->capture_default_str();
  predict->add_option("--spheres", args.spheres, "Spheres of the HOSE codes")
      ->check(CLI::Range(1, nmrpred::kMaxHoseSpheres))
      ->capture_default_str();
  predict->add_flag("--blind", args.blind,
                    "Predict shifts as if the tables did not hold the compound itself (honest test on known compounds)");
  predict->add_flag("--no-shifts", args.no_shifts, "Classes and HOSE codes only (faster)");
  predict->add_flag("--no-h1", args.no_h1, "Predict 13C shifts only");
  predict->add_flag("--no-couplings", args.no_couplings,
                    "Leave out couplings, multiplets and simulated lines (faster)");
  predict->add_option("--mhz", args.mhz, "Spectrometer field as the 1H frequency, MHz (40..1200), for the multiplets")
      ->capture_default_str();
  predict->add_option("--line-width", args.line_width_hz,
                      "Line width (full width at half height), Hz; smaller splittings are not resolved")
      ->capture_default_str();
  predict->add_option("--solvent", args.solvent,
                      "Solvent of the sample, a name or alias listed by `nmrpred solvents` (D2O and CD3OD "
                      "exchange OH/NH/SH protons)")
      ->capture_default_str();
  add_tables_options(predict, args.tables);

  TablesArgs reference_args;
  CLI::App *reference = app.add_subcommand(
      "reference", "Print the reference compounds of the tables, one JSON object per compound");
  add_tables_options(reference, reference_args);

  TablesArgs solvents_args;
  CLI::App *solvents = app.add_subcommand(
      "solvents", "Print the solvents of the tables (residual and water signals), one JSON object per solvent");
  add_tables_options(solvents, solvents_args);

  const std::vector<Command> commands = {add_simulate_command(app), add_match_command(app),
                                         add_spectrum_command(app)};

  try {
    app.parse(argc, argv);
  } catch (const CLI::ParseError &e) {
    const int code = app.exit(e);
    return code == 0 ? kExitOk : kExitUsage;
  }

  try {
    if (reference->parsed()) return run_reference(reference_args);
    if (solvents->parsed()) return run_solvents(solvents_args);
    for (const auto &c : commands)
      if (c.app->parsed()) return c.run();
    if (args.smiles.empty() && args.file.empty()) {
      std::cerr << "nmrpred predict: give --smiles SMILES or a FILE ('-' for standard input)\n"
                << "Run with --help for more information.\n";
      return kExitUsage;
    }
    return run_predict(args);
  } catch (const SetupError &e) {
    std::cerr << "nmrpred: " << e.message << '\n';
    return kExitUsage;
  } catch (const nmrpred::ArgumentError &e) {
    std::cerr << "nmrpred: " << e.what() << '\n';
    return kExitUsage;
  } catch (const nmrpred::Error &e) {
    std::cerr << "nmrpred: " << e.what() << '\n';
    return kExitRecordFailed;
  } catch (const std::bad_alloc &) {
    std::cerr << "nmrpred: out of memory\n";
    return kExitRecordFailed;
  } catch (const std::exception &e) {
    std::cerr << "nmrpred: internal error (please report): " << e.what() << '\n';
    return kExitRecordFailed;
  }
}
