// `nmrpred simulate FILE`: the line list and multiplets of a spin system given
// as JSON (nmrpred/spin.hpp). Input:
//   {"mhz": 400, "spins": [{"shift": 2.1, "nucleus": "1H"}, ...],
//    "couplings": [[i, j, J_Hz], ...]}
// with optional "observe" (default "1H"), "line_width_hz",
// "weak_coupling_ratio", "max_block_size", "merge_tolerance_hz" and
// "equivalent_shift_tolerance_ppm" (SimulationOptions), and per spin optional
// "class" (equivalence class, integer) and "exchangeable" (boolean). A spin
// may also be given as a bare number: a 1H shift. Output: one JSON object
//   {"observe", "mhz", "observe_mhz",
//    "lines": [{"ppm", "hz", "intensity"}, ...],
//    "multiplets": [{"ppm", "ppm_low", "ppm_high", "label", "j_hz", "integral",
//                    "spins", "lines"}, ...],
//    "warnings": [...]}
// Input that is not such JSON, or a spin system the library rejects, exits 2
// with a message naming the problem.
#include <iostream>
#include <iterator>
#include <set>
#include <string>

#include <nlohmann/json.hpp>

#include <nmrpred/error.hpp>
#include <nmrpred/spin.hpp>

#include "common.hpp"

namespace nmrpred_cli {

namespace {

using json = nlohmann::ordered_json;

struct SimulateArgs {
  std::string file;
  int indent = -1;
};

double number(const json &v, const std::string &what) {
  if (!v.is_number()) throw SetupError{"simulate: " + what + " must be a number"};
  return v.get<double>();
}

std::size_t index(const json &v, const std::string &what) {
  if (v.is_number_unsigned()) return v.get<std::size_t>();
  if (v.is_number_integer()) throw SetupError{"simulate: " + what + " must not be negative"};
  throw SetupError{"simulate: " + what + " must be a non-negative integer"};
}

struct Input {
  nmrpred::SpinSystem system;
  nmrpred::SpinNucleus observe = nmrpred::SpinNucleus::H1;
  nmrpred::SimulationOptions options;
};

Input parse_input(const std::string &text) {
  json doc;
  try {
    doc = json::parse(text);
  } catch (const json::parse_error &e) {
    throw SetupError{std::string("simulate: input is not valid JSON: ") + e.what()};
  }
  if (!doc.is_object()) throw SetupError{"simulate: input must be a JSON object with \"mhz\", \"spins\", \"couplings\""};
  static const std::set<std::string> known = {"mhz",
                                              "spins",
                                              "couplings",
                                              "observe",
                                              "line_width_hz",
                                              "weak_coupling_ratio",
                                              "max_block_size",
                                              "merge_tolerance_hz",
                                              "equivalent_shift_tolerance_ppm"};
  for (const auto &item : doc.items())
    if (!known.count(item.key())) throw SetupError{"simulate: unknown key \"" + item.key() + "\""};
  Input in;
  if (!doc.contains("mhz")) throw SetupError{"simulate: \"mhz\" (1H frequency of the spectrometer) is missing"};
  in.options.field_mhz = number(doc["mhz"], "\"mhz\"");
  if (doc.contains("observe")) {
    if (!doc["observe"].is_string()) throw SetupError{"simulate: \"observe\" must be a string such as \"1H\""};
    in.observe = nmrpred::parse_spin_nucleus(doc["observe"].get<std::string>());
  }
  if (doc.contains("line_width_hz")) in.options.line_width_hz = number(doc["line_width_hz"], "\"line_width_hz\"");
  if (doc.contains("weak_coupling_ratio"))
    in.options.weak_coupling_ratio = number(doc["weak_coupling_ratio"], "\"weak_coupling_ratio\"");
  if (doc.contains("max_block_size")) in.options.max_block_size = index(doc["max_block_size"], "\"max_block_size\"");
  if (doc.contains("merge_tolerance_hz"))
    in.options.merge_tolerance_hz = number(doc["merge_tolerance_hz"], "\"merge_tolerance_hz\"");
  if (doc.contains("equivalent_shift_tolerance_ppm"))
    in.options.equivalent_shift_tolerance_ppm =
        number(doc["equivalent_shift_tolerance_ppm"], "\"equivalent_shift_tolerance_ppm\"");

  if (!doc.contains("spins") || !doc["spins"].is_array())
    throw SetupError{"simulate: \"spins\" must be an array of spins"};
  const json &spins = doc["spins"];
  for (std::size_t i = 0; i < spins.size(); ++i) {
    const json &s = spins[i];
    const std::string where = "spin " + std::to_string(i);
    nmrpred::Spin spin;
    if (s.is_number()) {
      spin.shift_ppm = s.get<double>();
    } else if (s.is_object()) {
      for (const auto &item : s.items())
        if (item.key() != "shift" && item.key() != "nucleus" && item.key() != "class" && item.key() != "exchangeable")
          throw SetupError{"simulate: " + where + ": unknown key \"" + item.key() + "\""};
      if (!s.contains("shift")) throw SetupError{"simulate: " + where + ": \"shift\" is missing"};
      spin.shift_ppm = number(s["shift"], where + ": \"shift\"");
      if (s.contains("nucleus")) {
        if (!s["nucleus"].is_string()) throw SetupError{"simulate: " + where + ": \"nucleus\" must be a string"};
        spin.nucleus = nmrpred::parse_spin_nucleus(s["nucleus"].get<std::string>());
      }
      if (s.contains("class")) spin.equivalence_class = static_cast<std::int64_t>(index(s["class"], where + ": \"class\""));
      if (s.contains("exchangeable")) {
        if (!s["exchangeable"].is_boolean()) throw SetupError{"simulate: " + where + ": \"exchangeable\" must be true or false"};
        spin.exchangeable = s["exchangeable"].get<bool>();
      }
    } else {
      throw SetupError{"simulate: " + where + " must be an object {\"shift\": ppm, \"nucleus\": \"1H\"} or a number"};
    }
    in.system.spins.push_back(spin);
  }
  if (doc.contains("couplings")) {
    const json &couplings = doc["couplings"];
    if (!couplings.is_array()) throw SetupError{"simulate: \"couplings\" must be an array of [i, j, J_Hz]"};
    for (std::size_t c = 0; c < couplings.size(); ++c) {
      const json &k = couplings[c];
      const std::string where = "coupling " + std::to_string(c);
      if (!k.is_array() || k.size() != 3) throw SetupError{"simulate: " + where + " must be [i, j, J_Hz]"};
      in.system.couplings.push_back(
          {index(k[0], where + ": i"), index(k[1], where + ": j"), number(k[2], where + ": J")});
    }
  }
  return in;
}

json line_json(const nmrpred::SpectralLine &l) { return {{"ppm", l.ppm}, {"hz", l.hz}, {"intensity", l.intensity}}; }

int run_simulate(const SimulateArgs &args) {
  std::string text;
  if (args.file == "-") {
    text.assign(std::istreambuf_iterator<char>(std::cin), std::istreambuf_iterator<char>());
  } else {
    text = read_file(args.file);
  }
  Input in = parse_input(text);
  const nmrpred::Simulation sim = nmrpred::simulate(in.system, in.observe, in.options);
  json out;
  out["observe"] = nmrpred::spin_nucleus_name(sim.observed);
  out["mhz"] = sim.field_mhz;
  out["observe_mhz"] = sim.observed_mhz;
  json lines = json::array();
  for (const auto &l : sim.lines) lines.push_back(line_json(l));
  out["lines"] = std::move(lines);
  json multiplets = json::array();
  for (const auto &m : sim.multiplets) {
    json mj;
    mj["ppm"] = m.ppm;
    mj["ppm_low"] = m.ppm_low;
    mj["ppm_high"] = m.ppm_high;
    mj["label"] = m.label;
    mj["j_hz"] = m.j_hz;
    mj["integral"] = m.integral;
    mj["spins"] = m.atoms;
    json ml = json::array();
    for (const auto &l : m.lines) ml.push_back(line_json(l));
    mj["lines"] = std::move(ml);
    multiplets.push_back(std::move(mj));
  }
  out["multiplets"] = std::move(multiplets);
  out["warnings"] = sim.warnings;
  std::cout << out.dump(args.indent) << '\n';
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
