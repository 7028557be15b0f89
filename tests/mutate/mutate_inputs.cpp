// Mutation test of the texts a user hands the library: structure records
// (any format the reader detects), measured peak lists, user reference
// tables and spin-system JSON. Each iteration takes a seed text, changes it
// a few times at random (a byte, an inserted token, a deleted or copied
// stretch, inserted digits) and runs the call that reads it, then the work
// that uses what was read. The contract under test is the library's error
// rule: bad input gets an nmrpred::Error of a documented kind, never a crash,
// a hang, an internal error or a non-finite value.
//
// A fifth kind changes molecule graphs rather than texts: what a C++ caller
// may build as MoleculeData without any reader (elements, charges, bond
// orders and hydrogens no chemistry allows), run through predict() and
// predict_c13_set(), whose 13C shifts must equal predict()'s.
//
// Usage: nmrpred_mutate_inputs KIND ITERATIONS SEED FILE...
//   KIND        records | measured | reference | spin | graphs
//   ITERATIONS  mutated inputs to try
//   SEED        the random generator's seed (runs are repeatable)
//   FILE...     seed texts: for records, structure files (SMILES, MOL, SDF,
//               InChI); for measured, JSON files whose "cases" and "errors"
//               entries hold an "input" text (tests/data/measured_corpus.json)
//               or plain peak-list files; for reference, user reference
//               tables (tried three rows at a time); for spin, structure files whose molecules' predicted
//               1H spin systems are written as JSON to start from; for
//               graphs, structure files whose molecules are the seeds.
// Each iteration has 20 s of processor time (not wall time: on a loaded
// machine a quick input can wait longer than that); a longer one is
// reported as a hang. Exit status 0
// when nothing was found, 1 for findings (each printed with the input, as a
// C string), 2 for usage errors. Built with the tests; ctest runs a short,
// fixed-seed pass of each kind, and longer runs are for maintainers
// (DEVELOPERS.md).

#include <nmrpred/error.hpp>
#include <nmrpred/io.hpp>
#include <nmrpred/measured.hpp>
#include <nmrpred/predict.hpp>
#include <nmrpred/spin.hpp>
#include <nmrpred/tables.hpp>

#include <array>
#include <csignal>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <exception>
#include <fstream>
#include <iterator>
#include <limits>
#include <optional>
#include <random>
#include <string>
#include <string_view>
#include <vector>

#include <sys/time.h>
#include <unistd.h>

#include <fmt/format.h>
#include <nlohmann/json.hpp>

namespace {

// The input being tried (for kind graphs, the graph's description), for the
// time-limit handler to print.
std::string g_current;

// A C-string literal of `s`, so that a finding can be pasted into a test.
std::string c_literal(std::string_view s) {
  std::string out = "\"";
  for (unsigned char c : s) {
    if (c == '"' || c == '\\') out += '\\', out += static_cast<char>(c);
    else if (c == '\n') out += "\\n";
    else if (c == '\t') out += "\\t";
    else if (c < 0x20 || c >= 0x7f) out += fmt::format("\\x{:02x}\"\"", c);
    else out += static_cast<char>(c);
  }
  return out + "\"";
}

void on_alarm(int) {
  // Not async-signal-safe in general; the process ends here anyway.
  const std::string text = "HANG (over 20 s of processor time) on input " + c_literal(g_current) + "\n";
  (void)!write(STDOUT_FILENO, text.data(), text.size());
  std::_Exit(1);
}

// Arms (seconds > 0) or disarms (0) the processor-time limit of an input.
void limit_cpu(long seconds) {
  itimerval t{};
  t.it_value.tv_sec = seconds;
  setitimer(ITIMER_PROF, &t, nullptr);
}

std::string slurp(const std::string &path) {
  std::ifstream in(path, std::ios::binary);
  if (!in) throw std::runtime_error("cannot open " + path);
  return std::string(std::istreambuf_iterator<char>(in), std::istreambuf_iterator<char>());
}

// Texts that make parsers take other paths than random bytes reach.
constexpr const char *kTokens[] = {
    "1e308", "1e999", "-1", "NaN", "inf", "[", "]", "{", "}", "\"", ",", ":", "0", "1e-320",
    "99999999999999999999", "\"spins\"", "\"couplings\"", "\"mhz\"", "\"class\"", "\"nucleus\"", "\"2H\"",
    "\"19F\"", "true", "null", "\t", "\n", ";", "=", "|", "-", "(", ")", "\xce\xb4", "Hz", "J =", "m", "dd",
    "H", "C", "1H NMR", "13C NMR", "\xff", "\xc3", "C1", "[C@H]", "c1ccccc1", "CDCl3", "DMSO-d6", "1000",
    "4096", "0.0001", ",,", "\\u0000", "\\", "M  END", "$$$$", "M  V30 ", "BEGIN ATOM", "END BOND",
    "InChI=1S/", "/c1-2", "V2000", "V3000", "999"};

std::string mutate(std::string s, std::mt19937_64 &rng) {
  const int n = 1 + static_cast<int>(rng() % 6);
  for (int k = 0; k < n; ++k) {
    const std::size_t pos = rng() % (s.size() + 1);
    switch (rng() % 6) {
      case 0:
        if (!s.empty()) s[std::min(pos, s.size() - 1)] = static_cast<char>(rng() % 256);
        break;
      case 1: s.insert(pos, kTokens[rng() % std::size(kTokens)]); break;
      case 2: s.erase(std::min(pos, s.size()), 1 + rng() % 8); break;
      case 3:
        if (!s.empty()) s.insert(pos, s.substr(rng() % s.size(), 1 + rng() % 40));
        break;
      case 4: s.insert(pos, std::string(1 + rng() % 3, "0123456789"[rng() % 10])); break;
      default: s.erase(std::min(pos, s.size()), 1 + rng() % 64); break;
    }
  }
  return s;
}

// Values that take the spin-system reader and the simulator to their edges:
// the limits of a double, zero, negatives, big integers, wrong types.
nlohmann::json odd_value(std::mt19937_64 &rng) {
  switch (rng() % 18) {
    case 0: return 0;
    case 1: return -1;
    case 2: return 1e308;
    case 3: return -1e308;
    case 4: return 1e-320;
    case 5: return 0.5;
    case 6: return 1e6;
    case 7: return std::numeric_limits<std::uint64_t>::max();
    case 8: return std::numeric_limits<std::int64_t>::min();
    case 9: return "";
    case 10: return "13C";
    case 11: return "19F";
    case 12: return nullptr;
    case 13: return true;
    case 14: return nlohmann::json::array();
    case 15: return nlohmann::json::object();
    case 16: return static_cast<double>(rng() % 4000) / 10.0 - 50.0;
    default: return static_cast<std::int64_t>(rng() % 40);
  }
}

// A node of `j` reached by a random walk from the root (maybe the root).
nlohmann::json &random_node(nlohmann::json &j, std::mt19937_64 &rng) {
  nlohmann::json *at = &j;
  while ((at->is_array() || at->is_object()) && !at->empty() && rng() % 4 != 0) {
    auto it = at->begin();
    std::advance(it, static_cast<std::ptrdiff_t>(rng() % at->size()));
    at = &*it;
  }
  return *at;
}

// Keys of the spin-system format (nmrpred/spin.hpp) and one it does not know.
constexpr const char *kSpinKeys[] = {"mhz", "observe", "line_width_hz", "weak_coupling_ratio", "max_block_size",
                                     "merge_tolerance_hz", "equivalent_shift_tolerance_ppm", "spins", "couplings",
                                     "shift", "nucleus", "class", "exchangeable", "unknown"};

// `text` changed as JSON (a value replaced, an entry dropped or copied, a
// key or coupling added) when it is JSON, so that most results still read
// as JSON and reach the checks after the syntax; byte changes otherwise.
std::string mutate_json(const std::string &text, std::mt19937_64 &rng) {
  auto j = nlohmann::json::parse(text, nullptr, false);
  if (j.is_discarded()) return text;
  const int n = 1 + static_cast<int>(rng() % 4);
  for (int k = 0; k < n; ++k) {
    nlohmann::json &node = random_node(j, rng);
    switch (rng() % 6) {
      case 0: node = odd_value(rng); break;
      case 1:
        if ((node.is_array() || node.is_object()) && !node.empty()) {
          auto it = node.begin();
          std::advance(it, static_cast<std::ptrdiff_t>(rng() % node.size()));
          node.erase(it);
        }
        break;
      case 2:
        // Copies of an entry: larger systems, repeated classes.
        if (node.is_array() && !node.empty()) {
          const auto copy = node[rng() % node.size()];
          for (std::size_t c = 1 + rng() % 12; c > 0; --c) node.push_back(copy);
        }
        break;
      case 3:
        if (node.is_object()) node[kSpinKeys[rng() % std::size(kSpinKeys)]] = odd_value(rng);
        break;
      case 4:
        if (j.is_object()) {
          const std::int64_t spins =
              j.contains("spins") && j["spins"].is_array() ? static_cast<std::int64_t>(j["spins"].size()) : 4;
          auto index = [&] { return static_cast<std::int64_t>(rng() % static_cast<std::uint64_t>(spins + 2)) - 1; };
          auto &couplings = j["couplings"];
          if (!couplings.is_array()) couplings = nlohmann::json::array();
          const double hz = static_cast<double>(rng() % 400) / 10.0 - 20.0;
          couplings.push_back({index(), index(), rng() % 3 == 0 ? odd_value(rng) : nlohmann::json(hz)});
        }
        break;
      default:
        if (node.is_number()) node = node.get<double>() * (rng() % 2 ? 1e3 : -1.0);
        break;
    }
  }
  return j.dump();
}

// Seed texts of a measured-peak-list corpus file: the "input" of each case
// and error entry; any other file is one seed as it is.
void add_measured_seeds(const std::string &text, std::vector<std::string> &seeds) {
  const auto j = nlohmann::json::parse(text, nullptr, false);
  if (j.is_discarded() || !j.is_object()) {
    seeds.push_back(text);
    return;
  }
  for (const char *list : {"cases", "errors"})
    if (j.contains(list))
      for (const auto &entry : j[list])
        if (entry.contains("input") && entry["input"].is_string()) seeds.push_back(entry["input"].get<std::string>());
}

// Seed texts of a user reference table: its header (the comment lines and
// the column names) with three rows at a time, their ids renamed. A whole
// table's seed would almost always come out with some bad row, which
// refuses the table.
void add_reference_seeds(const std::string &text, std::vector<std::string> &seeds) {
  std::string header;
  std::vector<std::string> rows;
  std::size_t at = 0;
  bool columns_seen = false;
  while (at < text.size()) {
    const std::size_t end = std::min(text.find('\n', at), text.size());
    const std::string line = text.substr(at, end - at + 1);
    if (!columns_seen && (line.empty() || line[0] == '#' || line.rfind("id\t", 0) == 0)) {
      header += line;
      columns_seen = line.rfind("id\t", 0) == 0;
    } else if (line.find_first_not_of(" \t\r\n") != std::string::npos) {
      // Renamed: a user record may not reuse a built-in record's id.
      rows.push_back("mutated-" + line);
    }
    at = end + 1;
  }
  for (std::size_t i = 0; i < rows.size(); i += 3) {
    std::string seed = header;
    for (std::size_t j = i; j < std::min(rows.size(), i + 3); ++j) seed += rows[j];
    seeds.push_back(seed);
  }
}

// Spin-system JSON of every molecule of a structure file: the predicted 1H
// spin system in the documented format (nmrpred/spin.hpp).
void add_spin_seeds(const std::string &text, const nmrpred::Tables &tables, std::vector<std::string> &seeds) {
  for (const auto &record : nmrpred::predict_all(text, nmrpred::Format::Auto, tables)) {
    if (!record.ok()) continue;
    const auto spins = nmrpred::spin_system(*record.prediction, record.prediction->couplings, nmrpred::Nucleus::H1);
    nlohmann::json j;
    j["mhz"] = 400;
    j["spins"] = nlohmann::json::array();
    for (const auto &s : spins.system.spins)
      j["spins"].push_back({{"shift", s.shift_ppm},
                            {"nucleus", nmrpred::spin_nucleus_name(s.nucleus)},
                            {"class", s.equivalence_class},
                            {"exchangeable", s.exchangeable}});
    j["couplings"] = nlohmann::json::array();
    for (const auto &c : spins.system.couplings) j["couplings"].push_back({c.i, c.j, c.j_hz});
    seeds.push_back(j.dump());
  }
}

// The graph of a molecule as data, to change and build again.
nmrpred::MoleculeData data_of(const nmrpred::Molecule &m) {
  nmrpred::MoleculeData d;
  d.atoms = m.atoms();
  d.bonds = m.bonds();
  d.tetrahedral = m.tetrahedral_stereo();
  d.double_bonds = m.double_bond_stereo();
  return d;
}

// Molecule graphs a C++ caller may build without a reader: every molecule
// read from a structure file.
void add_graph_seeds(const std::string &text, std::vector<nmrpred::MoleculeData> &seeds) {
  for (const auto &r : nmrpred::read_records(text, nmrpred::Format::Auto))
    if (r.molecule) seeds.push_back(data_of(*r.molecule));
}

// `d` changed a few times at random the way no reader would: elements,
// charges, radicals, isotopes, aromatic flags and bond orders no chemistry
// allows, bonds added and removed, hydrogens on any atom. Hydrogens stay
// behind the heavy atoms (the Molecule rule); a change that breaks a stated
// configuration drops the configurations half of the time, so that the rest
// still build.
nmrpred::MoleculeData mutate_graph(nmrpred::MoleculeData d, std::mt19937_64 &rng) {
  using nmrpred::BondOrder;
  constexpr std::uint8_t kElements[] = {3, 5, 6, 6, 6, 7, 8, 9, 11, 14, 15, 16, 17, 26, 34, 35, 53, 80, 118};
  constexpr BondOrder kOrders[] = {BondOrder::Single, BondOrder::Double, BondOrder::Triple, BondOrder::Aromatic};
  std::size_t heavy = 0;
  while (heavy < d.atoms.size() && d.atoms[heavy].atomic_number != 1) ++heavy;
  if (heavy == 0) return d;
  const int n = 1 + static_cast<int>(rng() % 4);
  for (int k = 0; k < n; ++k) {
    auto &atom = d.atoms[rng() % heavy];
    switch (rng() % 9) {
      case 0: atom.atomic_number = kElements[rng() % std::size(kElements)]; break;
      case 1:
        atom.formal_charge =
            static_cast<std::int8_t>(rng() % 3 == 0 ? (rng() % 2 ? 127 : -128) : static_cast<int>(rng() % 9) - 4);
        break;
      case 2: atom.radical_electrons = static_cast<std::uint8_t>(rng() % 3 == 0 ? 255 : rng() % 4); break;
      case 3: atom.aromatic = !atom.aromatic; break;
      case 4:
        atom.isotope = static_cast<std::uint16_t>(std::array<int, 6>{2, 3, 13, 15, 1000, 65535}[rng() % 6]);
        break;
      case 5:
        if (!d.bonds.empty()) d.bonds[rng() % d.bonds.size()].order = kOrders[rng() % std::size(kOrders)];
        break;
      case 6: {
        // A bond between two atoms not bonded yet (rings closed anywhere,
        // hydrogens with two partners).
        const auto a = static_cast<std::uint32_t>(rng() % d.atoms.size());
        const auto b = static_cast<std::uint32_t>(rng() % d.atoms.size());
        bool bonded = a == b;
        for (const auto &bd : d.bonds) bonded |= (bd.begin == std::min(a, b) && bd.end == std::max(a, b));
        if (!bonded) d.bonds.push_back({std::min(a, b), std::max(a, b), kOrders[rng() % std::size(kOrders)]});
        break;
      }
      case 7:
        if (!d.bonds.empty()) d.bonds.erase(d.bonds.begin() + static_cast<std::ptrdiff_t>(rng() % d.bonds.size()));
        if (rng() % 2) d.tetrahedral.clear(), d.double_bonds.clear();
        break;
      default: {
        // Hydrogens on a heavy atom, up to six at once.
        const auto on = static_cast<std::uint32_t>(&atom - d.atoms.data());
        for (std::size_t c = 1 + rng() % 6; c > 0; --c) {
          d.atoms.push_back(nmrpred::Atom{1});
          d.bonds.push_back({on, static_cast<std::uint32_t>(d.atoms.size() - 1), BondOrder::Single});
        }
        if (rng() % 2) d.tetrahedral.clear();
        break;
      }
    }
  }
  return d;
}

// A graph as text for a finding: per atom "Z[+charge][.radicals][^isotope][a]",
// per bond "begin-end:order", and the stereo counts.
std::string describe(const nmrpred::MoleculeData &d) {
  std::string out = "atoms";
  for (const auto &a : d.atoms)
    out += fmt::format(" {}{}{}{}{}", a.atomic_number, a.formal_charge ? fmt::format("{:+}", a.formal_charge) : "",
                       a.radical_electrons ? fmt::format(".{}", a.radical_electrons) : "",
                       a.isotope ? fmt::format("^{}", a.isotope) : "", a.aromatic ? "a" : "");
  out += "; bonds";
  for (const auto &b : d.bonds) out += fmt::format(" {}-{}:{}", b.begin, b.end, static_cast<int>(b.order));
  return out + fmt::format("; {} tetrahedral, {} double-bond configurations", d.tetrahedral.size(),
                           d.double_bonds.size());
}

// One finding per input at most: prints it and counts it.
struct Findings {
  long count = 0;
  void add(const std::string &what, const std::string &input) {
    ++count;
    fmt::print("FINDING: {} on input {}\n", what, c_literal(input));
  }
};

bool finite_simulation(const nmrpred::Simulation &sim) {
  for (const auto &line : sim.lines)
    if (!std::isfinite(line.ppm) || !std::isfinite(line.intensity)) return false;
  return true;
}

// Runs one mutated input of `kind` (text `s`, or for kind graphs `graph`);
// returns "" or what went wrong.
std::string run_one(const std::string &kind, const std::string &s, const nmrpred::MoleculeData &graph,
                    const nmrpred::Tables &tables, long &ok, long &refused) {
  if (kind == "records") {
    for (const auto &r : nmrpred::predict_all(s, nmrpred::Format::Auto, tables)) {
      if (r.status == nmrpred::Status::Internal) return "internal error in a record: " + r.error;
      if (!r.ok()) {
        ++refused;
        continue;
      }
      ++ok;
      for (const auto *list : {&r.prediction->c13, &r.prediction->h1})
        for (const auto &shift : *list)
          if (!std::isfinite(shift.ppm) || !std::isfinite(shift.uncertainty_ppm))
            return fmt::format("non-finite shift at atom {}", shift.atom);
      if (r.prediction->h1_simulation && !finite_simulation(*r.prediction->h1_simulation))
        return "non-finite line in the 1H simulation";
    }
  } else if (kind == "graphs") {
    std::optional<nmrpred::Molecule> m;
    try {
      m.emplace(graph);
    } catch (const nmrpred::InputError &) {
      ++refused;  // a graph the Molecule rules refuse
      return "";
    }
    const auto p = nmrpred::predict(*m, tables);
    for (const auto *list : {&p.c13, &p.h1})
      for (const auto &shift : *list)
        if (!std::isfinite(shift.ppm) || !std::isfinite(shift.uncertainty_ppm))
          return fmt::format("non-finite shift at atom {}", shift.atom);
    if (p.h1_simulation && !finite_simulation(*p.h1_simulation)) return "non-finite line in the 1H simulation";
    // The set call gives what the single calls give, here too.
    const auto set = nmrpred::predict_c13_set({*m, *m}, tables);
    for (const auto &entry : set) {
      if (entry.error != nmrpred::Status::Ok)
        return "predict_c13_set failed where predict did not: " + entry.error_message;
      if (entry.shifts.size() != p.c13.size()) return "predict_c13_set and predict differ in the number of 13C shifts";
      for (std::size_t i = 0; i < p.c13.size(); ++i)
        if (!(entry.shifts[i] == p.c13[i]))
          return fmt::format("predict_c13_set and predict differ at atom {}", p.c13[i].atom);
    }
    ++ok;
  } else if (kind == "measured") {
    for (const auto &m : nmrpred::parse_measured(s)) {
      if (nmrpred::format_measured(m).empty()) return "a parsed peak list formats as nothing";
      ++ok;
    }
  } else if (kind == "reference") {
    const auto t = tables.with_user_reference(s, "mutated.tsv");
    nmrpred::PredictOptions o;
    o.predict_couplings = false;
    for (const auto &r : nmrpred::predict_all("CC(C)=O\nClCCCl\nc1ccccc1O\nCC(=O)OCC\n", nmrpred::Format::Smiles, *t, o)) {
      if (!r.ok()) return "a valid query failed with user records: " + r.error;
      for (const auto &shift : r.prediction->c13)
        if (!std::isfinite(shift.ppm)) return "non-finite 13C shift with user records";
    }
    ++ok;
  } else {
    const auto in = nmrpred::parse_spin_system_json(s);
    if (!finite_simulation(nmrpred::simulate(in.system, in.observe, in.options)))
      return "non-finite line in a simulation";
    ++ok;
  }
  return "";
}

}  // namespace

int main(int argc, char **argv) {
  if (argc < 5) {
    std::fprintf(stderr, "usage: %s records|measured|reference|spin|graphs ITERATIONS SEED FILE...\n", argv[0]);
    return 2;
  }
  const std::string kind = argv[1];
  if (kind != "records" && kind != "measured" && kind != "reference" && kind != "spin" && kind != "graphs") {
    std::fprintf(stderr, "unknown kind '%s'\n", kind.c_str());
    return 2;
  }
  const long iterations = std::atol(argv[2]);
  std::mt19937_64 rng(std::strtoull(argv[3], nullptr, 10));
  const auto tables = nmrpred::Tables::builtin();
  std::vector<std::string> seeds;
  std::vector<nmrpred::MoleculeData> graph_seeds;
  try {
    for (int i = 4; i < argc; ++i) {
      const std::string text = slurp(argv[i]);
      if (kind == "measured") add_measured_seeds(text, seeds);
      else if (kind == "spin") add_spin_seeds(text, *tables, seeds);
      else if (kind == "reference") add_reference_seeds(text, seeds);
      else if (kind == "graphs") add_graph_seeds(text, graph_seeds);
      else seeds.push_back(text);
    }
  } catch (const std::exception &e) {
    std::fprintf(stderr, "%s\n", e.what());
    return 2;
  }
  if (seeds.empty() && graph_seeds.empty()) {
    std::fprintf(stderr, "no seed texts\n");
    return 2;
  }
  std::signal(SIGPROF, on_alarm);
  Findings findings;
  long ok = 0, refused = 0;
  nmrpred::MoleculeData graph;  // kind graphs: the graph being tried
  for (long it = 0; it < iterations; ++it) {
    if (kind == "graphs") {
      graph = mutate_graph(graph_seeds[rng() % graph_seeds.size()], rng);
      g_current = describe(graph);
    } else {
      const std::string &seed = seeds[rng() % seeds.size()];
      // Spin systems are JSON: half the inputs are changed as JSON (byte
      // changes alone left 34 of 2,000 readable).
      g_current = kind == "spin" && rng() % 2 == 0 ? mutate_json(seed, rng) : mutate(seed, rng);
    }
    limit_cpu(20);
    try {
      const std::string what = run_one(kind, g_current, graph, *tables, ok, refused);
      if (!what.empty()) findings.add(what, g_current);
    } catch (const nmrpred::InternalError &e) {
      findings.add(fmt::format("internal error: {}", e.what()), g_current);
    } catch (const nmrpred::Error &) {
      ++refused;  // the documented outcome of bad input
    } catch (const std::exception &e) {
      findings.add(fmt::format("exception outside nmrpred::Error: {}", e.what()), g_current);
    }
    limit_cpu(0);
  }
  fmt::print("{}: {} inputs from {} seeds, {} read, {} refused with an error, {} findings\n", kind, iterations,
             kind == "graphs" ? graph_seeds.size() : seeds.size(), ok, refused, findings.count);
  return findings.count == 0 ? 0 : 1;
}
