// `nmrpred simulate FILE`: the line list and multiplets of a spin system given
// as JSON, read by nmrpred::parse_spin_system_json() (nmrpred/spin.hpp):
//   {"mhz": 400, "spins": [{"shift": 2.1, "nucleus": "1H"}, ...],
//    "couplings": [[i, j, J_Hz], ...]}
// with optional "observe" (default "1H") and SimulationOptions keys; options
// left out keep SimulationOptions' defaults ("mhz" is required). Output: one
// JSON object, written by nmrpred::to_json(const Simulation &):
//   {"observe", "mhz", "observe_mhz",
//    "lines": [{"ppm", "hz", "intensity"}, ...],
//    "multiplets": [{"ppm", "ppm_low", "ppm_high", "label", "j_hz", "integral",
//                    "atoms" (here: spin indices), "lines"}, ...],
//    "warnings": [...]}
// Input that is not such JSON, or a spin system the library rejects
// (ArgumentError), exits 2 with a message naming the problem.
#include <iostream>
#include <iterator>
#include <string>

#include <nmrpred/predict.hpp>
#include <nmrpred/spin.hpp>

#include "common.hpp"

namespace nmrpred_cli {

namespace {

struct SimulateArgs {
  std::string file;
  int indent = -1;
};

int run_simulate(const SimulateArgs &args) {
  std::string text;
  if (args.file == "-") {
    text.assign(std::istreambuf_iterator<char>(std::cin), std::istreambuf_iterator<char>());
  } else {
    text = read_file(args.file);
  }
  const nmrpred::SpinSystemInput in = nmrpred::parse_spin_system_json(text);
  const nmrpred::Simulation sim = nmrpred::simulate(in.system, in.observe, in.options);
  nmrpred::JsonOptions json_options;
  json_options.indent = args.indent;
  std::cout << nmrpred::to_json(sim, json_options) << '\n';
  return kExitOk;
}

}  // namespace

Command add_simulate_command(CLI::App &app) {
  auto args = std::make_shared<SimulateArgs>();
  CLI::App *cmd = app.add_subcommand(
      "simulate", "Simulate the line list and multiplets of a spin system given as JSON (one JSON object out)");
  cmd->add_option("file", args->file, "JSON spin system ({\"mhz\", \"spins\", \"couplings\"}), '-' for standard input")
      ->required();
  cmd->add_option("--indent", args->indent, "Indent the JSON output by this many spaces (default: one line)");
  return {cmd, [args] { return run_simulate(*args); }};
}

}  // namespace nmrpred_cli
