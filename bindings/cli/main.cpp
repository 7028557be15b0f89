// nmrpred: command-line front end of libnmrpred. Prints JSON Lines, one object
// per input record (the serializer in nmrpred/predict.hpp), to stdout;
// diagnostics go to stderr. The library itself never prints.
//
// Exit status: 0 every record succeeded, 1 at least one record failed (or the
// input held none), 2 the command line could not be carried out (usage error,
// unreadable file).

#include <fstream>
#include <iostream>
#include <new>
#include <sstream>
#include <string>
#include <vector>

#include <CLI/CLI.hpp>

#include <nmrpred/predict.hpp>

namespace {

constexpr int kExitOk = 0;
constexpr int kExitRecordFailed = 1;
constexpr int kExitUsage = 2;

struct PredictArgs {
  std::vector<std::string> smiles;
  std::string file;
  std::string format = "auto";
  int spheres = nmrpred::kDefaultHoseSpheres;
};

/// Prints one record and tells whether it succeeded.
bool emit(const nmrpred::RecordPrediction &r) {
  std::cout << nmrpred::to_json(r) << '\n';
  return r.ok();
}

int run_predict(const PredictArgs &args) {
  nmrpred::PredictOptions options;
  options.hose_spheres = args.spheres;
  const nmrpred::Format format = nmrpred::parse_format(args.format);

  std::size_t records = 0;
  std::size_t failed = 0;
  // Streaming keeps memory flat on large SDF files and shows results as they come.
  auto run = [&](std::istream &in, nmrpred::Format f) {
    nmrpred::MoleculeReader reader(in, f);
    nmrpred::ReadRecord r;
    while (reader.next(r)) {
      ++records;
      if (!emit(nmrpred::predict_record(std::move(r), options))) ++failed;
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

}  // namespace

int main(int argc, char **argv) {
  std::ios::sync_with_stdio(false);
  CLI::App app{"nmrpred: equivalent atoms and HOSE codes for chemical structures (JSON Lines output)"};
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

  try {
    app.parse(argc, argv);
  } catch (const CLI::ParseError &e) {
    const int code = app.exit(e);
    return code == 0 ? kExitOk : kExitUsage;
  }

  try {
    if (args.smiles.empty() && args.file.empty()) {
      std::cerr << "nmrpred predict: give --smiles SMILES or a FILE ('-' for standard input)\n"
                << "Run with --help for more information.\n";
      return kExitUsage;
    }
    return run_predict(args);
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
