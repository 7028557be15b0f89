// `nmrpred spectrum --smiles S | FILE`: the predicted 1H or 13C spectrum of one
// structure. Prints one JSON object
//   {"record", "title", "nucleus", "field_mhz", "observe_mhz", "solvent",
//    "line_width_hz", "multiplets": [{"ppm", "ppm_low", "ppm_high", "label",
//    "j_hz", "integral", "atoms", "lines": [{"ppm", "hz", "intensity"}]}],
//    "solvent_signals": [{"text", "ppm", "label", "j_hz", "integral"}] (with
//    --solvent-signals), "text" (the signals in the trade's prose style),
//    "files": {"svg", "jcamp"} (paths written), "warnings"}
// or, with --text, only the prose line. --svg and --jcamp write the sampled
// spectrum as a drawing and as a JCAMP-DX file. Several records in FILE need
// --record N (0-based, as "record" in `nmrpred predict`). A structure the
// library cannot handle exits 1; a bad option or unreadable file exits 2.
#include <cmath>
#include <fstream>
#include <iostream>
#include <iterator>
#include <memory>
#include <optional>
#include <string>
#include <tuple>
#include <utility>
#include <vector>

#include <nlohmann/json.hpp>

#include <nmrpred/measured.hpp>
#include <nmrpred/predict.hpp>
#include <nmrpred/spectrum.hpp>

#include "common.hpp"

namespace nmrpred_cli {

namespace {

using json = nlohmann::ordered_json;

struct SpectrumArgs {
  std::string smiles;
  std::string file;
  std::string format = "auto";
  long record = -1;
  std::string nucleus = "1H";
  double mhz = 400;
  std::string solvent = "CDCl3";
  std::string svg;
  std::string jcamp;
  std::size_t points = 0;  // 0: sampling_defaults()
  std::string ppm_range;   // "LOW:HIGH"; empty: sampling_defaults()
  double line_width_hz = 0;  // 0: sampling_defaults()
  std::string shape = "lorentzian";
  bool solvent_signals = false;
  bool blind = false;
  bool text = false;
  int indent = -1;
  TablesArgs tables;
};

/// "LOW:HIGH" in ppm; SetupError naming the problem otherwise.
std::pair<double, double> parse_ppm_range(const std::string &text) {
  const auto colon = text.find(':');
  if (colon == std::string::npos) throw SetupError{"--ppm must be LOW:HIGH in ppm (e.g. -0.5:12), got '" + text + "'"};
  auto number = [&](const std::string &part) {
    std::size_t used = 0;
    double v = 0;
    try {
      v = std::stod(part, &used);
    } catch (const std::exception &) {
      used = 0;
    }
    if (part.empty() || used != part.size() || !std::isfinite(v))
      throw SetupError{"--ppm must be LOW:HIGH in ppm (e.g. -0.5:12), got '" + text + "'"};
    return v;
  };
  const double low = number(text.substr(0, colon)), high = number(text.substr(colon + 1));
  if (!(low < high)) throw SetupError{"--ppm: LOW must be below HIGH, got '" + text + "'"};
  return {low, high};
}

/// Text a JCAMP-DX label accepts: one line of printable ASCII.
std::string printable_ascii(const std::string &s) {
  std::string out;
  for (unsigned char c : s) out += (c >= 0x20 && c < 0x7f) ? static_cast<char>(c) : '?';
  return out;
}

void write_text(const std::string &path, const std::string &text) {
  std::ofstream out(path, std::ios::binary);
  if (!out) throw SetupError{"cannot open '" + path + "' for writing"};
  out << text;
  out.close();
  if (!out) throw SetupError{"error while writing '" + path + "'"};
}

/// The one record the command works on; SetupError when the input holds
/// none, or several and no --record chose one.
nmrpred::ReadRecord pick_record(const SpectrumArgs &args) {
  std::vector<nmrpred::ReadRecord> records;
  if (!args.smiles.empty()) {
    if (args.smiles.find_first_of("\r\n") != std::string::npos)
      throw SetupError{"spectrum: --smiles must be one line"};
    records = nmrpred::read_records(args.smiles + "\n", nmrpred::Format::Smiles);
  } else {
    std::string text;
    if (args.file == "-") {
      text.assign(std::istreambuf_iterator<char>(std::cin), std::istreambuf_iterator<char>());
    } else {
      text = read_file(args.file);
    }
    records = nmrpred::read_records(text, nmrpred::parse_format(args.format));
  }
  if (records.empty()) throw SetupError{"spectrum: the input holds no structure"};
  if (args.record >= 0) {
    if (static_cast<std::size_t>(args.record) >= records.size())
      throw SetupError{"spectrum: --record " + std::to_string(args.record) + " but the input holds " +
                       std::to_string(records.size()) + " record(s) (numbered from 0)"};
    return std::move(records[static_cast<std::size_t>(args.record)]);
  }
  if (records.size() > 1)
    throw SetupError{"spectrum: the input holds " + std::to_string(records.size()) +
                     " records; choose one with --record N (numbered from 0)"};
  return std::move(records[0]);
}

int run_spectrum(const SpectrumArgs &args) {
  if (args.smiles.empty() && args.file.empty())
    throw SetupError{"spectrum: give --smiles SMILES or a FILE ('-' for standard input)"};
  const nmrpred::Nucleus nucleus = args.nucleus == "13C" ? nmrpred::Nucleus::C13 : nmrpred::Nucleus::H1;
  const double observe_mhz =
      nucleus == nmrpred::Nucleus::H1 ? args.mhz : args.mhz * nmrpred::frequency_ratio(nmrpred::SpinNucleus::C13);

  nmrpred::SamplingOptions sampling = nmrpred::sampling_defaults(nucleus, observe_mhz);
  if (args.points > 0) sampling.points = args.points;
  if (!args.ppm_range.empty()) std::tie(sampling.ppm_low, sampling.ppm_high) = parse_ppm_range(args.ppm_range);
  if (args.line_width_hz != 0) sampling.line_width_hz = args.line_width_hz;
  sampling.shape = args.shape == "gaussian" ? nmrpred::LineShape::Gaussian : nmrpred::LineShape::Lorentzian;

  nmrpred::PredictOptions options;
  options.blind = args.blind;
  options.solvent = args.solvent;
  options.field_mhz = args.mhz;
  options.line_width_hz = sampling.line_width_hz;
  options.predict_couplings = true;
  options.predict_h1 = true;
  nmrpred::validate(options);
  const auto tables = load_tables(args.tables);
  try {
    nmrpred::validate(options, *tables);
  } catch (const nmrpred::TablesError &e) {
    throw SetupError{e.what()};
  }

  const nmrpred::RecordPrediction r = nmrpred::predict_record(pick_record(args), *tables, options);
  if (!r.ok()) {
    std::cerr << "nmrpred: record " << r.record << ": " << r.error << '\n';
    return kExitRecordFailed;
  }
  const nmrpred::Prediction &p = *r.prediction;
  std::vector<std::string> warnings = p.warnings;

  nmrpred::SimulationOptions so;
  so.field_mhz = options.field_mhz;
  so.line_width_hz = options.line_width_hz;
  nmrpred::Simulation sim;
  if (nucleus == nmrpred::Nucleus::H1 && p.h1_simulation) {
    sim = *p.h1_simulation;  // its warnings are already among the prediction's
  } else if (!p.signals(nucleus).empty()) {
    sim = nmrpred::simulate(p, p.couplings, nucleus, so);
    warnings.insert(warnings.end(), sim.warnings.begin(), sim.warnings.end());
  } else {
    warnings.push_back(std::string("the structure shows no ") + args.nucleus + " signal");
  }

  std::vector<nmrpred::SolventPeak> solvent;
  if (args.solvent_signals) solvent = nmrpred::solvent_peaks(p.solvent, nucleus, observe_mhz);
  std::vector<nmrpred::Multiplet> all = sim.multiplets;
  for (const auto &s : solvent) all.push_back(s.signal);

  std::string prose;
  try {
    prose = nmrpred::format_measured(nmrpred::as_measured(p, nucleus, std::round(observe_mhz)));
  } catch (const nmrpred::InputError &e) {
    warnings.push_back(std::string("no prose peak list: ") + e.what());
  }

  json files = json::object();
  if (!args.svg.empty() || !args.jcamp.empty()) {
    const nmrpred::SampledSpectrum sampled = nmrpred::sample_signals(all, sampling);
    const std::string title = r.title.empty() ? std::string("predicted ") + args.nucleus + " spectrum"
                                              : r.title + " (predicted " + args.nucleus + ")";
    if (!args.svg.empty()) {
      nmrpred::PlotOptions plot;
      plot.title = title;
      write_text(args.svg, nmrpred::format_svg(sampled, sim.multiplets, solvent, plot));
      files["svg"] = args.svg;
    }
    if (!args.jcamp.empty()) {
      nmrpred::JcampOptions jo;
      jo.title = printable_ascii(title);
      jo.solvent_name = printable_ascii(p.solvent.name);
      write_text(args.jcamp, nmrpred::format_jcamp_dx(sampled, jo));
      files["jcamp"] = args.jcamp;
    }
  }

  if (args.text) {
    std::cout << prose << '\n';
    return kExitOk;
  }
  json out;
  out["record"] = r.record;
  out["title"] = r.title;
  out["nucleus"] = args.nucleus;
  out["field_mhz"] = options.field_mhz;
  out["observe_mhz"] = observe_mhz;
  out["solvent"] = p.solvent.name;
  out["line_width_hz"] = sampling.line_width_hz;
  // The library's layout of multiplets (nmrpred::to_json(const Simulation &)).
  out["multiplets"] = json::parse(nmrpred::to_json(sim))["multiplets"];
  if (args.solvent_signals) {
    json list = json::array();
    for (const auto &s : solvent) {
      json j;
      j["text"] = s.text;
      j["ppm"] = s.signal.ppm;
      j["label"] = s.signal.label;
      j["j_hz"] = s.signal.j_hz;
      j["integral"] = s.signal.integral;
      list.push_back(std::move(j));
    }
    out["solvent_signals"] = std::move(list);
  }
  out["text"] = prose;
  out["files"] = std::move(files);
  out["warnings"] = warnings;
  std::cout << out.dump(args.indent, ' ', false, json::error_handler_t::replace) << '\n';
  return kExitOk;
}

}  // namespace

Command add_spectrum_command(CLI::App &app) {
  auto args = std::make_shared<SpectrumArgs>();
  CLI::App *cmd = app.add_subcommand(
      "spectrum", "Predict the 1H or 13C spectrum of one structure: multiplets as JSON, optionally SVG and JCAMP-DX files");
  auto *smiles_opt = cmd->add_option("--smiles", args->smiles, "The structure as SMILES");
  auto *file_opt = cmd->add_option("file", args->file, "Structure file to read, '-' for standard input");
  smiles_opt->excludes(file_opt);
  cmd->add_option("--format", args->format, "Input format of FILE")
      ->check(CLI::IsMember({"auto", "smiles", "mol", "sdf", "inchi"}))
      ->capture_default_str();
  cmd->add_option("--record", args->record, "Record of FILE to use, numbered from 0 (needed when FILE holds several)")
      ->check(CLI::NonNegativeNumber);
  cmd->add_option("--nucleus", args->nucleus, "Observed nucleus")
      ->check(CLI::IsMember({"1H", "13C"}))
      ->capture_default_str();
  cmd->add_option("--mhz", args->mhz, "Spectrometer field as the 1H frequency, MHz (40..1200)")->capture_default_str();
  cmd->add_option("--solvent", args->solvent, "Solvent of the sample (see `nmrpred solvents`)")->capture_default_str();
  cmd->add_option("--svg", args->svg, "Write the spectrum as an SVG drawing to this file");
  cmd->add_option("--jcamp", args->jcamp, "Write the sampled spectrum as a JCAMP-DX file to this file");
  cmd->add_option("--points", args->points, "Samples of the written spectrum (default: enough for the line width)")
      ->check(CLI::Range(std::size_t{16}, std::size_t{4194304}));
  cmd->add_option("--ppm", args->ppm_range, "Chemical-shift range LOW:HIGH of the written spectrum, ppm");
  cmd->add_option("--line-width", args->line_width_hz,
                  "Line width (full width at half height), Hz (default 1 for 1H, 2 for 13C)");
  cmd->add_option("--shape", args->shape, "Line shape of the written spectrum")
      ->check(CLI::IsMember({"lorentzian", "gaussian"}))
      ->capture_default_str();
  cmd->add_flag("--solvent-signals", args->solvent_signals, "Add the residual solvent and water signals");
  cmd->add_flag("--blind", args->blind, "Predict shifts as if the tables did not hold the compound itself");
  cmd->add_flag("--text", args->text, "Print the predicted peak list in the trade's prose style instead of JSON");
  cmd->add_option("--indent", args->indent, "Indent the JSON output by this many spaces (default: one line)");
  add_tables_options(cmd, args->tables);
  return {cmd, [args] { return run_spectrum(*args); }};
}

}  // namespace nmrpred_cli
