// `nmrpred match`: ranks candidate structures against measured 1H and/or 13C
// peak lists and prints one JSON object (docs/matching.md describes it):
//   {"tables_version", "blind", "solvent",
//    "measured": [{"nucleus", "solvent", "peaks"}, ...],
//    "ranking": [{"record", "title", "score", "verdict", "probability"}, ...] best first,
//    "margin",
//    "candidates": [{"record", "title", <the keys of nmrpred::to_json(MatchResult)>}
//                   or {"record", "error": {"code", "name", "message"}}, ...] in input order}
// A candidate that cannot be read or predicted keeps its place with its error
// and the others are still ranked. Exit status as for `predict`: 0 every
// candidate was ranked, 1 a candidate failed (or there was none, or the
// measured data cannot be used), 2 the command line cannot be carried out.
#include "common.hpp"

#include <charconv>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <iostream>
#include <optional>
#include <sstream>
#include <string>
#include <system_error>
#include <vector>

#include <nmrpred/match.hpp>
#include <nmrpred/measured.hpp>
#include <nmrpred/predict.hpp>
#include <nmrpred/solvents.hpp>

namespace nmrpred_cli {

namespace {

struct MatchArgs {
  std::vector<std::string> smiles;
  std::string file;
  std::string format = "auto";
  std::vector<std::string> measured;
  std::string nucleus;
  std::string solvent;
  bool blind = false;
  std::size_t worst = 3;
  TablesArgs tables;
};

std::string json_string(const std::string &s) {
  std::string out = "\"";
  for (unsigned char c : s) {
    switch (c) {
      case '"': out += "\\\""; break;
      case '\\': out += "\\\\"; break;
      case '\n': out += "\\n"; break;
      case '\r': out += "\\r"; break;
      case '\t': out += "\\t"; break;
      default:
        if (c < 0x20) {
          static const char hex[] = "0123456789abcdef";
          out += "\\u00";
          out += hex[c >> 4];
          out += hex[c & 15];
        } else {
          out += static_cast<char>(c);
        }
    }
  }
  return out + "\"";
}

std::string number(double v) {
  if (!std::isfinite(v)) return "null";
  char buf[64];
  const auto r = std::to_chars(buf, buf + sizeof buf, v);
  return std::string(buf, r.ptr);
}

/// `text` is a JSON object; returns it with `prefix` ("\"a\":1,") put first.
std::string with_leading_keys(const std::string &prefix, const std::string &object) {
  if (object.size() < 2 || object.front() != '{') return object;
  const bool empty = object.find_first_not_of(" \n", 1) == object.size() - 1;
  std::string body = prefix;
  if (empty && !body.empty() && body.back() == ',') body.pop_back();
  return "{" + body + object.substr(1);
}

/// The text of a --measured value: a file's content when it names a file.
std::string measured_text(const std::string &value) {
  std::error_code ec;
  if (value.find('\n') == std::string::npos && value.size() < 4096 && std::filesystem::is_regular_file(value, ec))
    return read_file(value);
  return value;
}

int run_match(const MatchArgs &args) {
  if (args.smiles.empty() && args.file.empty()) {
    std::cerr << "nmrpred match: give candidate structures with --smiles SMILES (repeatable) or a FILE\n";
    return kExitUsage;
  }
  if (args.measured.empty()) {
    std::cerr << "nmrpred match: give the measured peak list(s) with --measured TEXT-OR-FILE\n";
    return kExitUsage;
  }
  const nmrpred::Format format = nmrpred::parse_format(args.format);
  if (!args.smiles.empty() && format != nmrpred::Format::Auto && format != nmrpred::Format::Smiles) {
    std::cerr << "nmrpred match: --smiles cannot be combined with --format " << args.format << '\n';
    return kExitUsage;
  }
  std::optional<nmrpred::Nucleus> default_nucleus;
  if (args.nucleus == "1H") default_nucleus = nmrpred::Nucleus::H1;
  if (args.nucleus == "13C") default_nucleus = nmrpred::Nucleus::C13;

  const auto tables = load_tables(args.tables);

  std::vector<nmrpred::MeasuredSpectrum> measured;
  for (const auto &value : args.measured) {
    auto parsed = nmrpred::parse_measured(measured_text(value), nmrpred::MeasuredFormat::Auto, default_nucleus);
    for (auto &s : parsed) measured.push_back(std::move(s));
  }

  // The sample's solvent: --solvent, else the first one the data name that
  // the tables know, else CDCl3 (as `predict`).
  nmrpred::PredictOptions options;
  options.blind = args.blind;
  options.solvent = args.solvent;
  if (options.solvent.empty()) {
    options.solvent = "CDCl3";
    for (const auto &s : measured) {
      if (s.solvent.empty()) continue;
      try {
        options.solvent = nmrpred::find_solvent(*tables, s.solvent).name;
        break;
      } catch (const nmrpred::Error &) {
        continue;  // match() reports the unknown solvent as a warning
      }
    }
  }
  nmrpred::validate(options);
  try {
    nmrpred::validate(options, *tables);
  } catch (const nmrpred::TablesError &e) {
    throw SetupError{e.what()};
  }
  nmrpred::MatchOptions match_options;
  match_options.worst_count = args.worst;

  std::string structures;
  if (!args.smiles.empty()) {
    for (std::size_t k = 0; k < args.smiles.size(); ++k) {
      const std::string &s = args.smiles[k];
      if (s.find_first_not_of(" \t") == std::string::npos || s.find_first_of("\r\n") != std::string::npos) {
        std::cerr << "nmrpred match: --smiles value " << k + 1 << " is empty or spans several lines\n";
        return kExitUsage;
      }
      structures += s + '\n';
    }
  } else if (args.file == "-") {
    std::ostringstream ss;
    ss << std::cin.rdbuf();
    structures = ss.str();
  } else {
    structures = read_file(args.file);
  }
  const auto records = nmrpred::predict_all(structures, args.smiles.empty() ? format : nmrpred::Format::Smiles,
                                            *tables, options);

  std::vector<nmrpred::Prediction> candidates;
  std::vector<std::size_t> candidate_record;  // index into records
  for (std::size_t k = 0; k < records.size(); ++k) {
    if (!records[k].ok()) continue;
    candidates.push_back(*records[k].prediction);
    candidate_record.push_back(k);
  }
  std::optional<nmrpred::Ranking> ranking;
  if (!candidates.empty()) ranking = nmrpred::rank_candidates(candidates, measured, *tables, match_options);

  std::string out = "{\"tables_version\":" + json_string(tables->version()) + ",\"blind\":" +
                    (args.blind ? "true" : "false") + ",\"solvent\":" + json_string(options.solvent) + ",\"measured\":[";
  for (std::size_t k = 0; k < measured.size(); ++k) {
    if (k) out += ',';
    out += "{\"nucleus\":" + json_string(measured[k].nucleus == nmrpred::Nucleus::H1 ? "1H" : "13C") +
           ",\"solvent\":" + json_string(measured[k].solvent) + ",\"peaks\":" + std::to_string(measured[k].peaks.size()) + "}";
  }
  out += "],\"ranking\":[";
  if (ranking) {
    for (std::size_t pos = 0; pos < ranking->order.size(); ++pos) {
      const std::size_t c = ranking->order[pos];
      const auto &rec = records[candidate_record[c]];
      const auto &res = ranking->results[c];
      if (pos) out += ',';
      out += "{\"record\":" + std::to_string(rec.record) + ",\"title\":" + json_string(rec.title) +
             ",\"score\":" + number(res.score) + ",\"verdict\":" + json_string(nmrpred::verdict_name(res.verdict)) +
             ",\"probability\":" + number(ranking->probabilities[c]) + "}";
    }
  }
  out += "],\"margin\":" + (ranking && ranking->order.size() > 1 ? number(ranking->margin) : std::string("null"));
  out += ",\"candidates\":[";
  std::size_t next = 0;
  for (std::size_t k = 0; k < records.size(); ++k) {
    if (k) out += ',';
    const auto &rec = records[k];
    if (!rec.ok()) {
      out += nmrpred::to_json(rec);
      continue;
    }
    const std::string keys = "\"record\":" + std::to_string(rec.record) + ",\"title\":" + json_string(rec.title) + ",";
    out += with_leading_keys(keys, nmrpred::to_json(ranking->results[next++]));
  }
  out += "]}";
  std::cout << out << '\n';
  std::cout.flush();

  if (records.empty()) {
    std::cerr << "nmrpred match: the input holds no structure\n";
    return kExitRecordFailed;
  }
  const std::size_t failed = records.size() - candidates.size();
  if (failed > 0) {
    std::cerr << "nmrpred match: " << failed << " of " << records.size() << " candidate(s) failed\n";
    return kExitRecordFailed;
  }
  return kExitOk;
}

}  // namespace

Command add_match_command(CLI::App &app) {
  auto args = std::make_shared<MatchArgs>();
  CLI::App *cmd = app.add_subcommand(
      "match", "Rank candidate structures against measured 1H/13C peak lists and print one JSON object");
  auto *smiles_opt = cmd->add_option("--smiles", args->smiles, "A candidate structure as SMILES (repeatable)");
  auto *file_opt = cmd->add_option("file", args->file, "Structure file of the candidates, '-' for standard input");
  smiles_opt->allow_extra_args(false);
  smiles_opt->excludes(file_opt);
  cmd->add_option("--format", args->format, "Input format of FILE")
      ->check(CLI::IsMember({"auto", "smiles", "mol", "sdf", "inchi"}))
      ->capture_default_str();
  cmd->add_option("--measured", args->measured,
                  "Measured peak list: a file or the text itself, as written in an experimental section, "
                  "CSV or JSON (repeatable: one 1H and one 13C)")
      ->allow_extra_args(false);
  cmd->add_option("--nucleus", args->nucleus, "Nucleus of a --measured list that does not say")
      ->check(CLI::IsMember({"1H", "13C"}));
  cmd->add_option("--solvent", args->solvent,
                  "Solvent of the sample (default: the one the measured data name, else CDCl3)");
  cmd->add_flag("--blind", args->blind,
                "Predict as if the tables did not hold the candidates themselves (honest test on known compounds)");
  cmd->add_option("--worst", args->worst, "Mismatches described in words per candidate")->capture_default_str();
  add_tables_options(cmd, args->tables);
  return {cmd, [args] { return run_match(*args); }};
}

}  // namespace nmrpred_cli
