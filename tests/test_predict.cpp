// The umbrella API (nmrpred/predict.hpp): 13C and 1H shifts carried through
// predict, predict_record and predict_all, blind mode, user reference records,
// signals, solvents, JSON, and the errors of unusable tables, user records and
// unknown solvents.
//
// Sources of the expected values:
//  [GOTTLIEB]  GOTTLIEB-1997 (tables/SOURCES.md), Table 2, 13C of toluene and
//              benzene in CDCl3 (from memory), as recorded in the built-in
//              table tables/reference/aromatic.tsv. A non-blind lookup of a
//              compound the tables hold must give back its recorded values.
//  [CP]        Common practice: equivalent nuclei resonate together, so they
//              share one shift and one signal; the number of 13C signals of
//              small symmetric molecules; a carbon's attached protons (0-3)
//              are what DEPT-style editing tells apart, and 2H is not seen by
//              it.
//  [CP-1H]     Common practice for 1H spectra (any introductory NMR text): a
//              signal's integral is proportional to the number of protons in
//              it (CH3 3, CH2 2, OH 1), so the integrals of a molecule add up
//              to its proton count; protons on O, N and S exchange, and in D2O
//              or CD3OD they are replaced by deuterium and vanish from the
//              spectrum (the "D2O shake"); 2H is not seen in a 1H spectrum;
//              diastereotopic CH2 protons (next to a stereocentre, as in
//              butan-2-ol) are chemically distinct and give separate signals.
//  [FULMER]    FULMER-2010 (tables/SOURCES.md), residual CHCl3 7.26 ppm and
//              CDCl3 77.16 ppm, water in CDCl3 1.56 ppm; D2O: HDO 4.79 ppm
//              (from memory).
//  [FORMAT]    tables/FORMAT.md, "Reference shift records": the record layout
//              that user records follow, so the faults below are faults by it.
// Records marked "demo data" carry invented values that exist only to show
// which source the library used; they are not published shifts.

#include <doctest/doctest.h>

#include <nmrpred/error.hpp>
#include <nmrpred/predict.hpp>
#include <nmrpred/shifts.hpp>
#include <nmrpred/tables.hpp>

#include <algorithm>
#include <filesystem>
#include <fstream>
#include <map>
#include <functional>
#include <memory>
#include <set>
#include <string>
#include <thread>
#include <vector>

#include <nlohmann/json.hpp>

#include "check.hpp"

namespace {

using nmrpred::Nucleus;
using nmrpred::Prediction;
using nmrpred::PredictOptions;
using nmrpred::Shift;
using nmrpred::ShiftSourceKind;
using nmrpred::Tables;

// Parsed once for the whole file: building the tables takes tens of milliseconds.
const Tables &builtin_tables() {
  static const std::shared_ptr<const Tables> tables = Tables::builtin();
  return *tables;
}

Prediction predict_smiles(const std::string &smiles, const Tables &tables, const PredictOptions &options = {}) {
  return nmrpred::predict(nmrpred::read_molecule(smiles, nmrpred::Format::Smiles), tables, options);
}

// The JSON record of the first structure in `smiles`, as predict_record() and
// the command line give it.
std::string record_json(const std::string &smiles, const Tables &tables, const PredictOptions &options) {
  return nmrpred::to_json(
      nmrpred::predict_record(nmrpred::read_records(smiles, nmrpred::Format::Smiles).at(0), tables, options));
}

bool names(const Shift &s, const std::string &id) {
  return std::find(s.references.begin(), s.references.end(), id) != s.references.end();
}

struct ShiftRow {
  const char *input;  // SMILES
  std::size_t atom;
  double expected_ppm;
  double tolerance_ppm;
  const char *source;
};

// Toluene, Cc1ccccc1: 0 CH3, 1 ipso, 2/6 ortho, 3/5 meta, 4 para.
const ShiftRow kToluene[] = {
    {"Cc1ccccc1", 0, 21.5, 0.01, "[GOTTLIEB] toluene CH3"},
    {"Cc1ccccc1", 1, 137.9, 0.01, "[GOTTLIEB] toluene C1"},
    {"Cc1ccccc1", 2, 129.1, 0.01, "[GOTTLIEB] toluene C2/C6"},
    {"Cc1ccccc1", 6, 129.1, 0.01, "[GOTTLIEB] toluene C2/C6"},
    {"Cc1ccccc1", 3, 128.3, 0.01, "[GOTTLIEB] toluene C3/C5"},
    {"Cc1ccccc1", 5, 128.3, 0.01, "[GOTTLIEB] toluene C3/C5"},
    {"Cc1ccccc1", 4, 125.3, 0.01, "[GOTTLIEB] toluene C4"},
};

// Demo data (invented values, not published shifts): a user record for
// toluene under a made-up id, with values no real spectrum would show, so that
// a result can only have come from it.
const char *kDemoUserRecords =
    "id\tsmiles\tsolvent\tc13\th1\tsource\n"
    "demo-user-toluene\tCc1ccccc1\tCDCl3\t0=10.0;1=20.0;2,6=30.0;3,5=40.0;4=50.0\t-\tdemo data (invented)\n";

const ShiftRow kDemoToluene[] = {
    {"Cc1ccccc1", 0, 10.0, 0.01, "demo data in kDemoUserRecords"},
    {"Cc1ccccc1", 1, 20.0, 0.01, "demo data in kDemoUserRecords"},
    {"Cc1ccccc1", 2, 30.0, 0.01, "demo data in kDemoUserRecords"},
    {"Cc1ccccc1", 6, 30.0, 0.01, "demo data in kDemoUserRecords"},
    {"Cc1ccccc1", 3, 40.0, 0.01, "demo data in kDemoUserRecords"},
    {"Cc1ccccc1", 5, 40.0, 0.01, "demo data in kDemoUserRecords"},
    {"Cc1ccccc1", 4, 50.0, 0.01, "demo data in kDemoUserRecords"},
};

struct SignalRow {
  const char *input;
  std::size_t carbon_signals;
  const char *source;
};

const SignalRow kSignalCounts[] = {
    {"c1ccccc1", 1, "[CP] benzene"},
    {"Cc1ccccc1", 5, "[CP] toluene"},
    {"Cc1ccc(C)cc1", 3, "[CP] p-xylene"},
    {"CC(C)(C)c1ccccc1", 6, "[CP] tert-butylbenzene"},
    {"CCOCC", 2, "[CP] diethyl ether"},
    {"CC(O)CC", 4, "[CP] butan-2-ol"},
    {"C1CCCCC1", 1, "[CP] cyclohexane"},
    {"CC(C)(C)C", 2, "[CP] neopentane"},
    {"O=C(O)CC(O)(CC(=O)O)C(=O)O", 4, "[CP] citric acid"},
};

struct AttachedHRow {
  const char *input;
  std::size_t atom;  // a carbon of the signal
  int attached_h;
  const char *source;
};

const AttachedHRow kAttachedH[] = {
    {"Cc1ccccc1", 0, 3, "[CP] toluene CH3"},
    {"Cc1ccccc1", 1, 0, "[CP] toluene C1 (quaternary)"},
    {"Cc1ccccc1", 4, 1, "[CP] toluene C4-H"},
    {"C1CCCCC1", 0, 2, "[CP] cyclohexane CH2"},
    {"CC(C)(C)c1ccccc1", 1, 0, "[CP] tert-butylbenzene C(CH3)3"},
    {"C", 0, 4, "[CP] methane CH4"},
    {"[2H]C([2H])([2H])c1ccccc1", 0, 0, "[CP] CD3 carries no 1H"},
    {"[2H]C([2H])c1ccccc1", 0, 1, "[CP] CHD2: one 1H, the two 2H not counted"},
};

struct BadRecordRow {
  const char *text;
  nmrpred::Status status;
  const char *message_part;
  const char *why;
};

const char *kHeader = "id\tsmiles\tsolvent\tc13\th1\tsource\n";

std::string with_header(const char *rows) { return std::string(kHeader) + rows; }

// Writes `text` to `dir`/`rel`, creating folders.
void write_file(const std::filesystem::path &dir, const std::string &rel, std::string_view text) {
  const auto path = dir / rel;
  std::filesystem::create_directories(path.parent_path());
  std::ofstream out(path, std::ios::binary);
  out << text;
}

// A fresh empty folder under the system's temporary folder, removed at scope exit.

}  // namespace

TEST_SUITE("predict") {
  TEST_CASE("default options predict 13C and 1H shifts in CDCl3 with every reference record") {
    const PredictOptions o;
    CHECK(o.predict_shifts);
    CHECK(o.predict_h1);
    CHECK(o.solvent == "CDCl3");
    CHECK_FALSE(o.blind);
  }

  TEST_CASE("a compound the tables hold is found at a high HOSE sphere and named among the references") {
    const auto p = predict_smiles("Cc1ccccc1", builtin_tables());
    CHECK(p.c13.size() == 7);
    CHECK(p.tables_version == builtin_tables().version());
    for (const auto &row : kToluene) {
      INFO(row.input, " atom ", row.atom, " ", row.source);
      const Shift *s = p.shift(row.atom, Nucleus::C13);
      REQUIRE(s != nullptr);
      check_close(s->ppm, row.expected_ppm, row.tolerance_ppm);
      CHECK(s->source == ShiftSourceKind::Reference);
      CHECK(s->sphere >= 4);
      CHECK(names(*s, "toluene"));
      CHECK(s->uncertainty_ppm > 0);
      CHECK_FALSE(s->method.empty());
    }
  }

  TEST_CASE("blind mode leaves the query's own record out and changes the result") {
    const auto seen = predict_smiles("Cc1ccccc1", builtin_tables());
    PredictOptions blind;
    blind.blind = true;
    const auto p = predict_smiles("Cc1ccccc1", builtin_tables(), blind);
    REQUIRE(p.c13.size() == seen.c13.size());
    bool any_different = false;
    for (std::size_t k = 0; k < p.c13.size(); ++k) {
      const Shift &s = p.c13[k];
      INFO("atom ", s.atom, ": ", s.method);
      CHECK_FALSE(names(s, "toluene"));
      CHECK(s.atom == seen.c13[k].atom);
      if (!(s == seen.c13[k])) any_different = true;
    }
    CHECK(any_different);
    // Blind mode is about the query's own constitution: a compound the tables
    // do not hold gets the same answer either way.
    const std::string absent = "CCCCCCCCCCCC(=O)OCc1ccc(Cl)cc1";
    const auto q = nmrpred::read_molecule(absent, nmrpred::Format::Smiles);
    const auto q_key = nmrpred::constitution_key(q, nmrpred::compute_classes(q));
    for (const auto &c : builtin_tables().reference()) {
      const auto m = nmrpred::read_molecule(c.smiles, nmrpred::Format::Smiles);
      REQUIRE_MESSAGE(nmrpred::constitution_key(m, nmrpred::compute_classes(m)) != q_key,
                      "precondition: the tables must not hold ", absent, " (", c.id, ")");
    }
    CHECK(predict_smiles(absent, builtin_tables(), blind).c13 == predict_smiles(absent, builtin_tables()).c13);
  }

  TEST_CASE("user reference records take precedence over built-in ones and are named") {
    const auto user = builtin_tables().with_user_reference(kDemoUserRecords, "demo.tsv");
    CHECK(user->version().rfind(builtin_tables().version() + "+user-", 0) == 0);
    const auto p = predict_smiles("Cc1ccccc1", *user);
    CHECK(p.tables_version == user->version());
    for (const auto &row : kDemoToluene) {
      INFO(row.input, " atom ", row.atom, " ", row.source);
      const Shift *s = p.shift(row.atom, Nucleus::C13);
      REQUIRE(s != nullptr);
      check_close(s->ppm, row.expected_ppm, row.tolerance_ppm);
      CHECK(s->source == ShiftSourceKind::UserReference);
      CHECK(s->references == std::vector<std::string>{"demo-user-toluene"});
    }
    // The built-in set is immutable: adding records made a new set.
    for (const auto &row : kToluene) {
      INFO(row.input, " atom ", row.atom, " ", row.source);
      check_close(predict_smiles(row.input, builtin_tables()).shift(row.atom, Nucleus::C13)->ppm, row.expected_ppm,
                  row.tolerance_ppm);
    }
    // Blind mode leaves out user records of the query's constitution too.
    PredictOptions blind;
    blind.blind = true;
    for (const auto &s : predict_smiles("Cc1ccccc1", *user, blind).c13) {
      INFO("atom ", s.atom);
      CHECK_FALSE(names(s, "demo-user-toluene"));
      CHECK(s.source != ShiftSourceKind::UserReference);
    }
    const auto &refs = user->reference();
    const auto it = std::find_if(refs.begin(), refs.end(), [](const auto &c) { return c.id == "demo-user-toluene"; });
    REQUIRE(it != refs.end());
    CHECK(it->user);
    CHECK(it->file == "demo.tsv");
  }

  TEST_CASE("equivalent carbons carry equal shifts and form one signal, downfield first") {
    for (const auto &row : kSignalCounts) {
      INFO(row.input, " ", row.source);
      const auto p = predict_smiles(row.input, builtin_tables());
      CHECK(p.c13_signals.size() == row.carbon_signals);
      std::set<std::size_t> carbons, in_signals;
      for (const auto &s : p.c13) carbons.insert(s.atom);
      for (std::size_t a = 0; a < p.molecule.atom_count(); ++a)
        CHECK((p.molecule.atom(a).atomic_number == 6) == (carbons.count(a) == 1));
      for (std::size_t k = 0; k < p.c13_signals.size(); ++k) {
        const auto &g = p.c13_signals[k];
        CHECK(g.nucleus == Nucleus::C13);
        REQUIRE_FALSE(g.atoms.empty());
        CHECK(std::is_sorted(g.atoms.begin(), g.atoms.end()));
        if (k > 0) CHECK(p.c13_signals[k - 1].ppm >= g.ppm);
        const Shift *first = p.shift(g.atoms[0], Nucleus::C13);
        REQUIRE(first != nullptr);
        for (auto a : g.atoms) {
          in_signals.insert(a);
          const Shift *s = p.shift(a, Nucleus::C13);
          REQUIRE(s != nullptr);
          CHECK(p.classes.chemical[a] == p.classes.chemical[g.atoms[0]]);
          CHECK(s->ppm == first->ppm);
          CHECK(s->uncertainty_ppm == first->uncertainty_ppm);
          CHECK(s->method == first->method);
          CHECK(s->references == first->references);
        }
        CHECK(g.ppm == first->ppm);
        CHECK(g.uncertainty_ppm == first->uncertainty_ppm);
        CHECK(g.method == first->method);
      }
      CHECK(in_signals == carbons);
      // A carbon of every class is in some signal, and no class is split.
      std::map<std::uint32_t, std::size_t> signals_per_class;
      for (const auto &g : p.c13_signals) ++signals_per_class[p.classes.chemical[g.atoms[0]]];
      for (const auto &kv : signals_per_class) CHECK(kv.second == 1);
    }
  }

  TEST_CASE("a signal counts the protons on its carbons") {
    for (const auto &row : kAttachedH) {
      INFO(row.input, " atom ", row.atom, " ", row.source);
      const auto p = predict_smiles(row.input, builtin_tables());
      const auto it = std::find_if(p.c13_signals.begin(), p.c13_signals.end(), [&](const nmrpred::Signal &g) {
        return std::find(g.atoms.begin(), g.atoms.end(), row.atom) != g.atoms.end();
      });
      REQUIRE(it != p.c13_signals.end());
      CHECK(it->attached_h == row.attached_h);
    }
  }

  TEST_CASE("Prediction::shift finds 13C shifts of carbons and 1H shifts of protons") {
    const auto p = predict_smiles("CCO", builtin_tables());
    CHECK(p.shift(0, Nucleus::C13) != nullptr);
    CHECK(p.shift(1, Nucleus::C13) != nullptr);
    CHECK(p.shift(2, Nucleus::C13) == nullptr);  // oxygen
    CHECK(p.shift(2, Nucleus::H1) == nullptr);
    CHECK(p.shift(0, Nucleus::H1) == nullptr);   // a carbon has no 1H shift
    CHECK(p.h1.size() == 6);                      // [CP-1H] C2H6O
    for (std::size_t h = p.molecule.heavy_atom_count(); h < p.molecule.atom_count(); ++h) {
      INFO("hydrogen ", h);
      CHECK(p.shift(h, Nucleus::C13) == nullptr);
      const Shift *s = p.shift(h, Nucleus::H1);
      REQUIRE(s != nullptr);
      CHECK(s->atom == h);
      CHECK(s->nucleus == Nucleus::H1);
    }
    CHECK(p.shift(p.molecule.atom_count(), Nucleus::C13) == nullptr);
    CHECK(p.shift(p.molecule.atom_count(), Nucleus::H1) == nullptr);
    CHECK(&p.signals(Nucleus::C13) == &p.c13_signals);
    CHECK(&p.signals(Nucleus::H1) == &p.h1_signals);
  }

  TEST_CASE("switching shift prediction off gives the foundation output alone") {
    PredictOptions off;
    off.predict_shifts = false;
    const auto with = predict_smiles("CC(O)CC", builtin_tables());
    const auto without = predict_smiles("CC(O)CC", builtin_tables(), off);
    CHECK(without.c13.empty());
    CHECK(without.c13_signals.empty());
    CHECK(without.h1.empty());
    CHECK(without.h1_signals.empty());
    CHECK(without.h1_exchanged_signals.empty());
    CHECK(without.shift(0, Nucleus::C13) == nullptr);
    CHECK(without.classes == with.classes);
    CHECK(without.hose == with.hose);
    const auto j = nlohmann::json::parse(nmrpred::to_json(nmrpred::predict_record(
        nmrpred::read_records("CC(O)CC", nmrpred::Format::Smiles).at(0), builtin_tables(), off)));
    CHECK(j.at("signals") == nlohmann::json::object());
    for (const auto &atom : j.at("atoms")) CHECK_FALSE(atom.contains("shift"));
  }

  TEST_CASE("the prediction's warnings include those of the shift engine") {
    // Tetramethyltin: no reference record has a carbon on tin, so the engine
    // falls back to its last resort and says so (checked below, not assumed).
    const auto m = nmrpred::read_molecule("C[Sn](C)(C)C", nmrpred::Format::Smiles);
    std::vector<std::string> engine;
    nmrpred::predict_c13(m, nmrpred::compute_classes(m), builtin_tables(), {}, &engine);
    REQUIRE_MESSAGE(!engine.empty(), "precondition: pick a molecule the shift engine warns about");
    const auto p = nmrpred::predict(m, builtin_tables());
    for (const auto &w : engine) {
      INFO(w);
      CHECK(std::find(p.warnings.begin(), p.warnings.end(), w) != p.warnings.end());
    }
  }

  TEST_CASE("a batch predicts shifts for every good record and keeps the bad one in place") {
    const auto records = nmrpred::predict_all("CC\nC1CC\nc1ccccc1 benzene\n", nmrpred::Format::Smiles, builtin_tables());
    REQUIRE(records.size() == 3);
    CHECK(records[0].ok());
    CHECK(records[1].status == nmrpred::Status::Input);
    REQUIRE(records[2].ok());
    const auto &benzene = *records[2].prediction;
    REQUIRE(benzene.c13_signals.size() == 1);
    CHECK(benzene.c13_signals[0].atoms == std::vector<std::size_t>{0, 1, 2, 3, 4, 5});
    CHECK(benzene.c13_signals[0].attached_h == 1);
    INFO("[GOTTLIEB] benzene");
    check_close(benzene.c13_signals[0].ppm, 128.4, 0.01);
    CHECK(benzene.tables_version == builtin_tables().version());
  }

  TEST_CASE("the JSON of a record carries shifts, signals and the tables version") {
    const auto rec = nmrpred::predict_record(nmrpred::read_records("Cc1ccccc1 toluene", nmrpred::Format::Smiles).at(0),
                                             builtin_tables());
    REQUIRE(rec.ok());
    const auto &p = *rec.prediction;
    const auto j = nlohmann::json::parse(nmrpred::to_json(rec));
    CHECK(j.at("tables_version") == builtin_tables().version());
    const auto &atoms = j.at("atoms");
    REQUIRE(atoms.size() == p.molecule.atom_count());
    for (std::size_t i = 0; i < atoms.size(); ++i) {
      INFO("atom ", i);
      const auto &a = atoms[i];
      const bool carbon = a.at("element") == "C", hydrogen = a.at("element") == "H";
      const Shift *s = p.shift(i, carbon ? Nucleus::C13 : Nucleus::H1);
      CHECK((carbon || hydrogen) == (s != nullptr));  // toluene has no 2H
      for (const char *key : {"shift", "shift_uncertainty", "shift_method", "shift_references"})
        CHECK(a.contains(key) == (s != nullptr));
      CHECK(a.contains("exchangeable") == hydrogen);
      if (!s) continue;
      CHECK(a.at("shift").get<double>() == s->ppm);
      CHECK(a.at("shift_uncertainty").get<double>() == s->uncertainty_ppm);
      CHECK(a.at("shift_method") == s->method);
      CHECK(a.at("shift_references").get<std::vector<std::string>>() == s->references);
      if (hydrogen) CHECK(a.at("exchangeable") == false);
    }
    const auto &signals = j.at("signals");
    REQUIRE(signals.size() == 3);
    CHECK(signals.at("1H").size() == p.h1_signals.size());
    CHECK(signals.at("1H_exchanged").empty());
    const auto &c13 = signals.at("13C");
    REQUIRE(c13.size() == p.c13_signals.size());
    for (std::size_t k = 0; k < c13.size(); ++k) {
      const auto &g = p.c13_signals[k];
      CHECK(c13[k].at("shift").get<double>() == g.ppm);
      CHECK(c13[k].at("atoms").get<std::vector<std::size_t>>() == g.atoms);
      CHECK(c13[k].at("attached_h") == g.attached_h);
      CHECK(c13[k].at("shift_uncertainty").get<double>() == g.uncertainty_ppm);
      CHECK(c13[k].at("shift_method") == g.method);
      if (k > 0) CHECK(c13[k - 1].at("shift").get<double>() >= c13[k].at("shift").get<double>());
    }
  }

  TEST_CASE("the JSON text is the compact form the nlohmann serializer writes for it") {
    // The writer writes text straight (no document); nlohmann (Debian's
    // nlohmann-json3-dev, a general-purpose library) parses it and writes its
    // own compact form, which must come out byte for byte the same: valid
    // JSON, the same separators, escapes and shortest round-trip doubles,
    // invalid UTF-8 of a title replaced.
    const std::string titles[] = {"plain", "quote \" and back\\slash", "tab\there", "caf\xe9 Latin-1",
                                  "\xff\xfe broken UTF-8", "caf\xc3\xa9 UTF-8"};
    const char *smiles[] = {"CC(=O)OCC", "c1ccccc1O", "C[C@H](N)C(=O)O", "ClC=CCl", "CC", "C1CC"};
    std::string text;
    for (std::size_t i = 0; i < std::size(smiles); ++i) text += std::string(smiles[i]) + " " + titles[i] + "\n";
    const auto records = nmrpred::predict_all(text, nmrpred::Format::Smiles, builtin_tables());
    REQUIRE(records.size() == std::size(smiles));
    CHECK_FALSE(records[5].ok());  // the unclosed ring: an error record
    using Json = nlohmann::ordered_json;
    auto canonical = [](const std::string &t) {
      return Json::parse(t).dump(-1, ' ', false, Json::error_handler_t::replace);
    };
    // Values held as doubles stay JSON floats ("171.0", not "171"), which the
    // canonical form alone would not show: a parsed "171" dumps as "171".
    const std::set<std::string> float_keys = {"shift",    "shift_uncertainty", "ppm",        "ppm_low",
                                              "ppm_high", "hz",                "intensity",  "integral",
                                              "j_hz",     "uncertainty_hz",    "water_1h",   "residual_1h",
                                              "residual_13c", "field_mhz",     "line_width_hz"};
    std::size_t floats = 0;
    std::function<void(const Json &, bool)> check_floats = [&](const Json &v, bool under_float_key) {
      if (v.is_number()) {
        if (under_float_key) {
          CHECK(v.is_number_float());
          ++floats;
        }
        return;
      }
      if (v.is_array())
        for (const auto &x : v) check_floats(x, under_float_key);
      if (v.is_object())
        for (const auto &[k, x] : v.items()) check_floats(x, float_keys.count(k) != 0);
    };
    std::string joined = "[";
    for (const auto &r : records) {
      INFO("record ", r.record);
      const std::string one = nmrpred::to_json(r);
      CHECK(canonical(one) == one);
      check_floats(Json::parse(one), false);
      nmrpred::JsonOptions indented;
      indented.indent = 2;
      CHECK(nmrpred::to_json(r, indented) == Json::parse(one).dump(2));
      joined += (r.record ? "," : "") + one;
    }
    CHECK(nmrpred::to_json(records) == joined + "]");
    CHECK(floats > 500);
    CHECK(Json::parse(nmrpred::to_json(records[1])).at("title") == "quote \" and back\\slash");
    CHECK(Json::parse(nmrpred::to_json(records[4])).at("title") == "\xef\xbf\xbd\xef\xbf\xbd broken UTF-8");
    for (const auto &solvent : nmrpred::solvents(builtin_tables())) {
      const std::string one = nmrpred::to_json(solvent);
      CHECK(canonical(one) == one);
    }
    for (const auto &compound : builtin_tables().reference()) {
      const std::string one = nmrpred::to_json(compound);
      CHECK(canonical(one) == one);
    }
  }

  TEST_CASE("a reference compound serializes with its assignments") {
    const auto &refs = builtin_tables().reference();
    const auto it = std::find_if(refs.begin(), refs.end(), [](const auto &c) { return c.id == "toluene"; });
    REQUIRE(it != refs.end());
    const auto j = nlohmann::json::parse(nmrpred::to_json(*it));
    CHECK(j.at("id") == "toluene");
    CHECK(j.at("smiles") == it->smiles);
    CHECK(j.at("solvent") == it->solvent);
    CHECK(j.at("source") == it->source);
    CHECK(j.at("file") == it->file);
    CHECK(j.at("user") == false);
    REQUIRE(j.at("c13").size() == it->c13.size());
    for (std::size_t k = 0; k < it->c13.size(); ++k) {
      CHECK(j.at("c13")[k].at("atoms").get<std::vector<std::uint32_t>>() == it->c13[k].atoms);
      CHECK(j.at("c13")[k].at("ppm").get<std::vector<double>>() == it->c13[k].values);
    }
    CHECK(j.at("h1").size() == it->h1.size());
  }

  TEST_CASE("group_signals refuses shifts of another molecule") {
    const auto p = predict_smiles("CCO", builtin_tables());
    const auto other = predict_smiles("CCCO", builtin_tables());
    CHECK_THROWS_AS(nmrpred::group_signals(p.molecule, other.classes, p.c13), nmrpred::ArgumentError);
    auto shifts = p.c13;
    shifts[0].atom = p.molecule.atom_count();
    CHECK_THROWS_AS(nmrpred::group_signals(p.molecule, p.classes, shifts), nmrpred::ArgumentError);
  }

  TEST_CASE("a tables folder that cannot be used is a TablesError naming the problem") {
    auto check_tables_error = [](const std::string &dir, const std::string &part) {
      INFO(dir, " -> message should mention '", part, "'");
      try {
        Tables::load(dir);
        FAIL("Tables::load accepted ", dir);
      } catch (const nmrpred::TablesError &e) {
        CHECK(e.status() == nmrpred::Status::Tables);
        CHECK(std::string(e.what()).find(part) != std::string::npos);
      }
    };
    check_tables_error("tables-that-do-not-exist", "SOURCES.md");
    check_tables_error(NMRPRED_TEST_DATA_DIR, "SOURCES.md");  // a folder of structures, not tables

    TempDir no_reference("noref");
    write_file(no_reference.path, "SOURCES.md", builtin_tables().file_text("SOURCES.md"));
    check_tables_error(no_reference.path.string(), "reference");

    // [FORMAT]: every row has as many fields as the column header.
    TempDir bad_row("badrow");
    write_file(bad_row.path, "SOURCES.md", builtin_tables().file_text("SOURCES.md"));
    write_file(bad_row.path, "reference/aromatic.tsv",
               "# table: reference-shifts\n# version: 1\n# units: ppm relative to TMS\n# sources: COMMON-PRACTICE\n" +
                   std::string(kHeader) + "demo-a\tCC\tCDCl3\t0,1=7.0\n");
    check_tables_error(bad_row.path.string(), "reference/aromatic.tsv:6");
  }

  TEST_CASE("the project's tables folder read at run time equals the built-in set") {
    const auto dir = Tables::load(NMRPRED_TABLES_SOURCE_DIR);
    const std::string builtin = builtin_tables().version();
    REQUIRE(dir->version().rfind("dir-", 0) == 0);
    REQUIRE(builtin.rfind("builtin-", 0) == 0);
    // Same text, same hash: the name differs only in where the tables came from.
    CHECK(dir->version().substr(4) == builtin.substr(8));
    CHECK(dir->reference().size() == builtin_tables().reference().size());
  }

  TEST_CASE("bad user records are refused with the line or record that is wrong") {
    // Demo data (invented values) throughout; each row breaks one [FORMAT] rule.
    const BadRecordRow rows[] = {
        {kHeader, nmrpred::Status::Tables, "demo.tsv: no records", "a header and nothing else"},
        {"demo-a\tCC\tCDCl3\t0=7.0\t-\tdemo\n", nmrpred::Status::Tables, "no column 'id'",
         "the column header line is missing"},
        {"id\tsmiles\tsolvent\tc13\th1\tsource\ndemo-a\tCC\tCDCl3\t0=1x.0\t-\tdemo\n", nmrpred::Status::Tables,
         "demo.tsv:2", "a shift that is not a number"},
        {"id\tsmiles\tsolvent\tc13\th1\tsource\ndemo-a\tCC\tCDCl3\t0=7.0\t-\tdemo\ndemo-b\tCCC\tCDCl3\t0=7.0\n",
         nmrpred::Status::Tables, "demo.tsv:3", "too few fields"},
        {"id\tsmiles\tsolvent\tc13\th1\tsource\ndemo-a\tCC\tCDCl3\t0:7.0\t-\tdemo\n", nmrpred::Status::Tables,
         "demo.tsv:2", "an entry without '='"},
        {"id\tsmiles\tsolvent\tc13\th1\tsource\ntoluene\tCc1ccccc1\tCDCl3\t0=7.0\t-\tdemo\n", nmrpred::Status::Tables,
         "'toluene'", "an id the built-in set uses"},
        {"id\tsmiles\tsolvent\tc13\th1\tsource\ndemo-a\tCC\tCDCl3\t5=7.0\t-\tdemo\n", nmrpred::Status::Tables,
         "'demo-a'", "an atom index past the end"},
        {"id\tsmiles\tsolvent\tc13\th1\tsource\ndemo-a\tCO\tCDCl3\t1=7.0\t-\tdemo\n", nmrpred::Status::Tables,
         "'demo-a'", "a 13C value on oxygen"},
    };
    for (const auto &row : rows) {
      INFO(row.why, ": expect '", row.message_part, "'");
      try {
        builtin_tables().with_user_reference(row.text, "demo.tsv");
        FAIL("accepted: ", row.text);
      } catch (const nmrpred::Error &e) {
        INFO("message: ", e.what());
        CHECK(e.status() == row.status);
        CHECK(std::string(e.what()).find(row.message_part) != std::string::npos);
      }
    }
    // A SMILES that cannot be read: tables.hpp promises InputError naming the
    // line; the record must at least be named, whichever code comes back.
    try {
      builtin_tables().with_user_reference(with_header("demo-ring\tC1CC\tCDCl3\t0=7.0\t-\tdemo\n"), "demo.tsv");
      FAIL("accepted an unclosed ring");
    } catch (const nmrpred::Error &e) {
      INFO("message: ", e.what());
      CHECK((e.status() == nmrpred::Status::Input || e.status() == nmrpred::Status::Tables));
      CHECK(std::string(e.what()).find("demo-ring") != std::string::npos);
    }
  }

  TEST_CASE("ethanol in CDCl3 shows CH3, CH2 and OH signals with integrals 3, 2 and 1") {
    // CCO: atoms 0 CH3, 1 CH2, 2 O; hydrogens 3-5 on C0, 6-7 on C1, 8 on O.
    const auto p = predict_smiles("CCO", builtin_tables());
    CHECK(p.solvent.name == "CDCl3");
    REQUIRE(p.h1_signals.size() == 3);
    CHECK(p.h1_exchanged_signals.empty());
    std::map<std::size_t, const nmrpred::Signal *> by_heavy;  // heavy atom -> its protons' signal
    int total = 0;
    for (const auto &g : p.h1_signals) {
      INFO("signal at ", g.ppm);
      CHECK(g.nucleus == Nucleus::H1);
      CHECK(g.observed);
      CHECK(g.count == static_cast<int>(g.atoms.size()));
      total += g.count;
      by_heavy[static_cast<std::size_t>(p.molecule.attached_to(g.atoms[0]))] = &g;
    }
    CHECK(total == 6);  // [CP-1H] integrals add up to C2H6O's six protons
    REQUIRE(by_heavy.size() == 3);
    const struct {
      std::size_t heavy;
      int count;
      bool exchangeable;
      const char *source;
    } rows[] = {{0, 3, false, "[CP-1H] CH3"}, {1, 2, false, "[CP-1H] CH2 (enantiotopic pair)"},
                {2, 1, true, "[CP-1H] OH exchanges"}};
    for (const auto &row : rows) {
      INFO("heavy atom ", row.heavy, " ", row.source);
      REQUIRE(by_heavy.count(row.heavy) == 1);
      CHECK(by_heavy[row.heavy]->count == row.count);
      CHECK(by_heavy[row.heavy]->exchangeable == row.exchangeable);
      for (auto h : by_heavy[row.heavy]->atoms) CHECK(p.shift(h, Nucleus::H1)->exchangeable == row.exchangeable);
    }
    for (std::size_t k = 1; k < p.h1_signals.size(); ++k) CHECK(p.h1_signals[k - 1].ppm >= p.h1_signals[k].ppm);
  }

  TEST_CASE("in D2O and CD3OD the OH proton is exchanged: listed apart, and the integrals are 3 and 2") {
    for (const char *solvent : {"D2O", "CD3OD", "methanol-d4"}) {
      INFO(solvent, " [CP-1H] exchange with the solvent's deuterium");
      PredictOptions o;
      o.solvent = solvent;
      const auto p = predict_smiles("CCO", builtin_tables(), o);
      REQUIRE(p.h1_signals.size() == 2);
      std::multiset<int> counts;
      for (const auto &g : p.h1_signals) {
        counts.insert(g.count);
        CHECK_FALSE(g.exchangeable);
        CHECK(g.observed);
      }
      CHECK(counts == std::multiset<int>{2, 3});
      REQUIRE(p.h1_exchanged_signals.size() == 1);
      const auto &oh = p.h1_exchanged_signals[0];
      CHECK(oh.atoms == std::vector<std::size_t>{8});
      CHECK(oh.count == 1);
      CHECK(oh.exchangeable);
      CHECK_FALSE(oh.observed);
      // The proton keeps its predicted shift; only the signal is gone.
      REQUIRE(p.shift(8, Nucleus::H1) != nullptr);
      CHECK_FALSE(p.shift(8, Nucleus::H1)->observed);
      const auto j = nlohmann::json::parse(nmrpred::to_json(
          nmrpred::predict_record(nmrpred::read_records("CCO", nmrpred::Format::Smiles).at(0), builtin_tables(), o)));
      CHECK(j.at("signals").at("1H").size() == 2);
      REQUIRE(j.at("signals").at("1H_exchanged").size() == 1);
      CHECK(j.at("signals").at("1H_exchanged")[0].at("observed") == false);
      CHECK(j.at("atoms")[8].at("observed") == false);
      CHECK(j.at("atoms")[8].at("exchangeable") == true);
    }
    // DMSO-d6 does not exchange: the OH is seen.
    PredictOptions dmso;
    dmso.solvent = "dmso";
    const auto p = predict_smiles("CCO", builtin_tables(), dmso);
    CHECK(p.solvent.name == "DMSO-d6");
    CHECK(p.h1_signals.size() == 3);
    CHECK(p.h1_exchanged_signals.empty());
  }

  TEST_CASE("in another solvent than CDCl3 a carbon-bound proton's method says its value is for CDCl3") {
    // Issue 4: no published solvent correction of these protons is in the
    // tables, so the method says the value is that of CDCl3 solutions (the
    // rule tables and most reference compounds, tables/FORMAT.md); a special
    // group's row for any solvent names that itself; exchangeable protons
    // carry their own solvent note.
    auto method_of = [](const nmrpred::Prediction &p, std::size_t heavy) {
      for (std::size_t h = p.molecule.heavy_atom_count(); h < p.molecule.atom_count(); ++h)
        if (p.molecule.attached_to(h) == static_cast<std::int64_t>(heavy)) return std::string(p.shift(h, Nucleus::H1)->method);
      return std::string();
    };
    const std::string note = "value for CDCl3 solutions, no published correction to ";
    PredictOptions dmso, c6d6;
    dmso.solvent = "DMSO-d6";
    c6d6.solvent = "C6D6";
    // Acetophenone: atom 0 is the CH3.
    CHECK(method_of(predict_smiles("CC(=O)c1ccccc1", builtin_tables()), 0).find(note) == std::string::npos);
    CHECK(method_of(predict_smiles("CC(=O)c1ccccc1", builtin_tables(), dmso), 0).find(note + "DMSO-d6") !=
          std::string::npos);
    CHECK(method_of(predict_smiles("CC(=O)c1ccccc1", builtin_tables(), c6d6), 0).find(note + "C6D6") !=
          std::string::npos);
    // Propanal's CHO (atom 2): the special-group row holds in any solvent.
    const std::string cho = method_of(predict_smiles("CCC=O", builtin_tables(), dmso), 2);
    CHECK(cho.find("in any solvent") != std::string::npos);
    CHECK(cho.find(note) == std::string::npos);
    // Ethanol's OH in DMSO-d6: its own solvent note, not this one.
    const std::string oh = method_of(predict_smiles("CCO", builtin_tables(), dmso), 2);
    CHECK(oh.find("DMSO-d6") != std::string::npos);
    CHECK(oh.find(note) == std::string::npos);
  }

  TEST_CASE("deuterated positions give no 1H signal") {
    // CD3CH2OH: atoms 0 CD3, 1 CH2, 2 O, hydrogens 3-5 are 2H.
    const auto p = predict_smiles("[2H]C([2H])([2H])CO", builtin_tables());
    std::size_t deuterium = 0;
    for (std::size_t h = p.molecule.heavy_atom_count(); h < p.molecule.atom_count(); ++h) {
      if (p.molecule.atom(h).isotope != 2) continue;
      ++deuterium;
      INFO("deuterium ", h, " [CP-1H] 2H is not seen in a 1H spectrum");
      CHECK(p.shift(h, Nucleus::H1) == nullptr);
      for (const auto &g : p.h1_signals) CHECK(std::find(g.atoms.begin(), g.atoms.end(), h) == g.atoms.end());
    }
    CHECK(deuterium == 3);
    REQUIRE(p.h1_signals.size() == 2);  // CH2 and OH
    int total = 0;
    for (const auto &g : p.h1_signals) {
      total += g.count;
      CHECK(p.molecule.attached_to(g.atoms[0]) != 0);
    }
    CHECK(total == 3);
    CHECK(p.h1.size() == 3);
    const auto j = nlohmann::json::parse(nmrpred::to_json(nmrpred::predict_record(
        nmrpred::read_records("[2H]C([2H])([2H])CO", nmrpred::Format::Smiles).at(0), builtin_tables())));
    for (const auto &a : j.at("atoms"))
      if (a.at("isotope") == 2) CHECK_FALSE(a.contains("shift"));
  }

  TEST_CASE("diastereotopic CH2 protons of butan-2-ol are two signals even if their values coincide") {
    // CC(O)CC: atom 3 is the CH2 next to the stereocentre C1.
    const auto p = predict_smiles("CC(O)CC", builtin_tables());
    std::vector<std::size_t> ch2;
    for (std::size_t h = p.molecule.heavy_atom_count(); h < p.molecule.atom_count(); ++h)
      if (p.molecule.attached_to(h) == 3) ch2.push_back(h);
    REQUIRE(ch2.size() == 2);
    auto signal_of = [&](std::size_t h) {
      return std::find_if(p.h1_signals.begin(), p.h1_signals.end(), [&](const nmrpred::Signal &g) {
        return std::find(g.atoms.begin(), g.atoms.end(), h) != g.atoms.end();
      });
    };
    INFO("[CP-1H] diastereotopic protons");
    REQUIRE(signal_of(ch2[0]) != p.h1_signals.end());
    REQUIRE(signal_of(ch2[1]) != p.h1_signals.end());
    CHECK(signal_of(ch2[0]) != signal_of(ch2[1]));
    CHECK(signal_of(ch2[0])->count == 1);
    CHECK(signal_of(ch2[1])->count == 1);
    // CH3, CH3, CH, OH and the two CH2 protons; integrals add up to C4H10O.
    CHECK(p.h1_signals.size() == 6);
    int total = 0;
    for (const auto &g : p.h1_signals) total += g.count;
    CHECK(total == 10);
  }

  TEST_CASE("group_signals keeps classes apart even when their shifts are equal") {
    // Forcing equal values on the two diastereotopic protons must not merge
    // their signals: a signal is a class, not a value.
    const auto p = predict_smiles("CC(O)CC", builtin_tables());
    auto h1 = p.h1;
    std::vector<std::size_t> ch2;
    for (auto &s : h1)
      if (p.molecule.attached_to(s.atom) == 3) ch2.push_back(&s - h1.data());
    REQUIRE(ch2.size() == 2);
    h1[ch2[1]].ppm = h1[ch2[0]].ppm;
    h1[ch2[1]].uncertainty_ppm = h1[ch2[0]].uncertainty_ppm;
    CHECK(nmrpred::group_signals(p.molecule, p.classes, h1).size() == 6);
  }

  TEST_CASE("the JSON of a record carries 1H signals and the solvent's residual signals") {
    const auto rec =
        nmrpred::predict_record(nmrpred::read_records("CCO ethanol", nmrpred::Format::Smiles).at(0), builtin_tables());
    REQUIRE(rec.ok());
    const auto &p = *rec.prediction;
    // ordered_json keeps the keys in the order they were written.
    const auto j = nlohmann::ordered_json::parse(nmrpred::to_json(rec));
    const auto &h1 = j.at("signals").at("1H");
    REQUIRE(h1.size() == p.h1_signals.size());
    for (std::size_t k = 0; k < h1.size(); ++k) {
      const auto &g = p.h1_signals[k];
      std::vector<std::string> keys;
      for (const auto &kv : h1[k].items()) keys.push_back(kv.key());
      // Keys are only ever appended: the multiplet keys follow (couplings are on by default).
      CHECK(keys == std::vector<std::string>{"shift", "atoms", "count", "shift_uncertainty", "exchangeable",
                                             "observed", "shift_method", "multiplicity", "j_hz", "lines"});
      CHECK(h1[k].at("shift").get<double>() == g.ppm);
      CHECK(h1[k].at("atoms").get<std::vector<std::size_t>>() == g.atoms);
      CHECK(h1[k].at("count") == g.count);
      CHECK(h1[k].at("exchangeable") == g.exchangeable);
    }
    for (std::size_t i = p.molecule.heavy_atom_count(); i < p.molecule.atom_count(); ++i) {
      INFO("hydrogen ", i);
      const auto &a = j.at("atoms")[i];
      for (const char *key : {"shift", "shift_uncertainty", "shift_method", "shift_references", "exchangeable"})
        CHECK(a.contains(key));
      CHECK(a.at("exchangeable") == (i == 8));
    }
    const auto &solvent = j.at("solvent");
    CHECK(solvent.at("name") == "CDCl3");
    INFO("[FULMER] CDCl3");
    REQUIRE(solvent.at("residual_1h").size() == 1);
    check_close(solvent.at("residual_1h")[0].get<double>(), 7.26, 0.005);
    REQUIRE(solvent.at("residual_13c").size() == 1);
    check_close(solvent.at("residual_13c")[0].get<double>(), 77.16, 0.005);
    check_close(solvent.at("water_1h").get<double>(), 1.56, 0.005);

    PredictOptions d2o;
    d2o.solvent = "D2O";
    const auto jd = nlohmann::json::parse(nmrpred::to_json(
        nmrpred::predict_record(nmrpred::read_records("CCO", nmrpred::Format::Smiles).at(0), builtin_tables(), d2o)));
    INFO("[FULMER] D2O");
    CHECK(jd.at("solvent").at("residual_13c").empty());
    check_close(jd.at("solvent").at("water_1h").get<double>(), 4.79, 0.005);

    // predict_h1 off: 13C alone, as before 1H prediction existed.
    PredictOptions no_h1;
    no_h1.predict_h1 = false;
    const auto jn = nlohmann::json::parse(nmrpred::to_json(
        nmrpred::predict_record(nmrpred::read_records("CCO", nmrpred::Format::Smiles).at(0), builtin_tables(), no_h1)));
    CHECK(jn.at("signals").size() == 1);
    CHECK(jn.at("signals").contains("13C"));
    CHECK_FALSE(jn.at("atoms")[3].contains("shift"));
  }

  TEST_CASE("a solvent the tables do not know is an ArgumentError naming the known ones") {
    PredictOptions o;
    o.solvent = "chloroform-h";
    const auto m = nmrpred::read_molecule("CCO", nmrpred::Format::Smiles);
    for (int way = 0; way < 3; ++way) {
      INFO("way ", way);
      try {
        if (way == 0) nmrpred::predict(m, builtin_tables(), o);
        if (way == 1) nmrpred::predict_all("CCO\nCC\n", nmrpred::Format::Smiles, builtin_tables(), o);
        if (way == 2)
          nmrpred::predict_record(nmrpred::read_records("CCO", nmrpred::Format::Smiles).at(0), builtin_tables(), o);
        FAIL("accepted solvent ", o.solvent);
      } catch (const nmrpred::ArgumentError &e) {
        const std::string msg = e.what();
        INFO(msg);
        CHECK(msg.find("chloroform-h") != std::string::npos);
        CHECK(msg.find("CDCl3") != std::string::npos);
        CHECK(msg.find("D2O") != std::string::npos);
      }
    }
    CHECK(nmrpred::validate(PredictOptions{}, builtin_tables()).name == "CDCl3");
  }

  TEST_CASE("a solvent serializes with its residual signals") {
    const auto s = nmrpred::find_solvent(builtin_tables(), "CDCl3");
    const auto j = nlohmann::json::parse(nmrpred::to_json(s));
    CHECK(j.at("id") == s.id);
    CHECK(j.at("name") == "CDCl3");
    CHECK(j.at("exchanges_labile_protons") == false);
    REQUIRE(j.at("residual_13c_detail").size() == 1);
    CHECK(j.at("residual_13c_detail")[0].at("multiplicity") == s.c13[0].multiplicity);
    CHECK(j.at("residual_1h").get<std::vector<double>>() == std::vector<double>{s.h1_residual[0].shift_ppm});
    CHECK(nlohmann::json::parse(nmrpred::to_json(nmrpred::find_solvent(builtin_tables(), "D2O")))
              .at("exchanges_labile_protons") == true);
  }

  // Couplings and the simulated 1H spectrum carried through predict().
  //
  // Sources of the expected values:
  //  [GOTTLIEB-T1] GOTTLIEB-1997 (tables/SOURCES.md), Table 1, ethyl acetate in
  //                CDCl3: CH3CO 2.05 (s), OCH2 4.12 (q, J = 7.1 Hz), CH3 1.26
  //                (t, J = 7.1 Hz) (from memory).
  //  [CP-J]        Common practice for first-order 1H spectra (any introductory
  //                NMR text): n equivalent neighbours split a signal into n+1
  //                lines ("t" from CH2, "q" from CH3), a methyl with no proton
  //                within three bonds is a singlet; OH protons exchange fast in
  //                CDCl3, lose their couplings and appear as a broad singlet;
  //                the lines of a multiplet add up to its integral; para-
  //                disubstituted benzenes with different substituents show two
  //                2H "doublets" (an AA'XX' pattern) at high field, which grow
  //                into a roofed second-order pattern ("AA'BB'") when the shift
  //                difference in Hz approaches J, the inner lines of each half
  //                gaining intensity (the roof effect).
  //  [CF]          1J(C,F) of fluorobenzene about 245 Hz, so the C-F carbon of a
  //                proton-decoupled 13C spectrum is a doublet (common practice;
  //                PRETSCH-2009, tables/SOURCES.md, 13C-19F couplings, from memory).

  // Heavy atom whose protons make up `g` (protons only).
  std::size_t heavy_of(const Prediction &p, const nmrpred::Signal &g) {
    return static_cast<std::size_t>(p.molecule.attached_to(g.atoms.at(0)));
  }

  const nmrpred::Signal *signal_on(const Prediction &p, std::size_t heavy) {
    for (const auto &g : p.h1_signals)
      if (heavy_of(p, g) == heavy) return &g;
    return nullptr;
  }

  double line_sum(const nmrpred::Signal &g) {
    double s = 0;
    for (const auto &l : g.lines) s += l.intensity;
    return s;
  }

  TEST_CASE("ethyl acetate at 400 MHz: acetyl s, OCH2 q and CH3 t with J near 7 Hz, integrals 3:2:3") {
    // CC(=O)OCC: 0 acetyl CH3, 1 C=O, 2 =O, 3 O, 4 OCH2, 5 CH3.
    const auto p = predict_smiles("CC(=O)OCC", builtin_tables());
    CHECK(p.options.predict_couplings);
    CHECK_FALSE(p.couplings.empty());
    REQUIRE(p.h1_simulation.has_value());
    REQUIRE(p.h1_signals.size() == 3);
    const struct {
      std::size_t heavy;
      const char *label;
      int count;
      double j_hz;  // <0: none
      const char *source;
    } rows[] = {{0, "s", 3, -1, "[GOTTLIEB-T1] CH3CO 2.05 s"},
                {4, "q", 2, 7.1, "[GOTTLIEB-T1] OCH2 4.12 q 7.1"},
                {5, "t", 3, 7.1, "[GOTTLIEB-T1] CH3 1.26 t 7.1"}};
    for (const auto &row : rows) {
      INFO("heavy atom ", row.heavy, " ", row.source);
      const nmrpred::Signal *g = signal_on(p, row.heavy);
      REQUIRE(g != nullptr);
      CHECK(g->multiplicity == row.label);
      CHECK(g->count == row.count);
      if (row.j_hz < 0) {
        CHECK(g->j_hz.empty());
      } else {
        REQUIRE(g->j_hz.size() == 1);
        check_close(g->j_hz[0], row.j_hz, 1.0);  // vicinal J of free rotation, 6-8 Hz [CP-J]
      }
      // [CP-J] one line for s, n+1 for n equivalent neighbours; lines add up to the integral.
      CHECK(g->lines.size() == (row.label[0] == 's' ? 1u : row.label[0] == 't' ? 3u : 4u));
      check_close(line_sum(*g), g->count, 1e-6);
      for (std::size_t k = 1; k < g->lines.size(); ++k) CHECK(g->lines[k - 1].ppm < g->lines[k].ppm);
      for (const auto &l : g->lines) check_close(l.hz, l.ppm * p.options.field_mhz, 1e-6);
    }
  }

  TEST_CASE("the OH of ethanol is a broad singlet in CDCl3, and in D2O it has no lines") {
    const auto p = predict_smiles("CCO", builtin_tables());
    const nmrpred::Signal *oh = signal_on(p, 2);
    REQUIRE(oh != nullptr);
    CHECK(oh->multiplicity == "br s");  // [CP-J] fast exchange
    CHECK(oh->j_hz.empty());
    // Exchange decouples the OH, so the CH2 sees only the CH3: a quartet [CP-J].
    REQUIRE(signal_on(p, 1) != nullptr);
    CHECK(signal_on(p, 1)->multiplicity == "q");

    PredictOptions d2o;
    d2o.solvent = "D2O";
    const auto q = predict_smiles("CCO", builtin_tables(), d2o);
    REQUIRE(q.h1_exchanged_signals.size() == 1);
    CHECK(q.h1_exchanged_signals[0].lines.empty());
    CHECK(q.h1_exchanged_signals[0].multiplicity.empty());
    double total = 0;
    for (const auto &g : q.h1_signals) total += line_sum(g);
    check_close(total, 5, 1e-6);  // [CP-1H] CH3 + CH2: the spectrum shows 5 protons
    REQUIRE(q.h1_simulation.has_value());
    for (const auto &m : q.h1_simulation->multiplets) CHECK(m.atoms != q.h1_exchanged_signals[0].atoms);
  }

  // Lines closer than the line width merge on the spectrum; returns the
  // intensities of the peaks one sees, by position.
  std::vector<std::pair<double, double>> visible_peaks(const nmrpred::Signal &g, double field_mhz, double width_hz) {
    std::vector<std::pair<double, double>> peaks;  // (ppm, intensity)
    for (const auto &l : g.lines) {
      if (!peaks.empty() && (l.ppm - peaks.back().first) * field_mhz < width_hz) {
        auto &p = peaks.back();
        p.first = (p.first * p.second + l.ppm * l.intensity) / (p.second + l.intensity + 1e-300);
        p.second += l.intensity;
      } else {
        peaks.emplace_back(l.ppm, l.intensity);
      }
    }
    return peaks;
  }

  TEST_CASE("a para-disubstituted benzene gives two 2H doublet-like signals at 400 MHz and roofed multiplets at 40 MHz") {
    // 4-nitroanisole: ring protons ortho to NO2 near 8.2 ppm, ortho to OMe
    // near 6.9 ppm (Delta nu about 500 Hz at 400 MHz, J(ortho) 8-9 Hz). The
    // AA'XX' pattern is written "d" in papers although it is not first order
    // [CP-J]; what makes it look like one is that two lines about J(ortho)
    // apart carry most of the intensity, which is what is checked (the label
    // itself is the simulation's to choose: "d" or "m").
    const auto hi = predict_smiles("COc1ccc(cc1)[N+](=O)[O-]", builtin_tables());
    std::vector<const nmrpred::Signal *> ring;
    for (const auto &g : hi.h1_signals)
      if (hi.molecule.atom(heavy_of(hi, g)).aromatic) ring.push_back(&g);
    REQUIRE(ring.size() == 2);
    for (const auto *g : ring) {
      INFO("ring signal at ", g->ppm, " [CP-J] AA'XX' seen as a doublet");
      CHECK(g->count == 2);
      auto peaks = visible_peaks(*g, 400, 1.0);
      REQUIRE(peaks.size() >= 2);
      std::sort(peaks.begin(), peaks.end(), [](const auto &x, const auto &y) { return x.second > y.second; });
      check_close(std::abs(peaks[0].first - peaks[1].first) * 400, 8.5, 1.5);  // ortho J 7-10 Hz [CP-J]
      CHECK(peaks[0].second + peaks[1].second >= 0.6 * g->count);
      check_close(line_sum(*g), 2, 1e-6);
    }

    // At 40 MHz the two halves are about 50 Hz apart, some six J: each half
    // leans towards the other (roof effect [CP-J]), so the lines nearer the
    // partner carry more intensity than those farther away. The pattern is
    // second order; the halves are as far apart (in J) as those of
    // 4-chlorotoluene at 400 MHz, which papers write as doublets, so the
    // label may read "d" as well as "m" (issue 5: the label describes how
    // the signal looks) but nothing else [CP-J].
    PredictOptions low;
    low.field_mhz = 40;
    const auto lo = predict_smiles("COc1ccc(cc1)[N+](=O)[O-]", builtin_tables(), low);
    std::vector<const nmrpred::Signal *> ring40;
    for (const auto &g : lo.h1_signals)
      if (lo.molecule.atom(heavy_of(lo, g)).aromatic) ring40.push_back(&g);
    REQUIRE(ring40.size() == 2);
    const double mid = (ring40[0]->ppm + ring40[1]->ppm) / 2;
    for (const auto *g : ring40) {
      INFO("ring signal at ", g->ppm, " (40 MHz)");
      CHECK((g->multiplicity == "m" || g->multiplicity == "d"));
      double inner = 0, outer = 0;
      for (const auto &l : g->lines) (std::abs(l.ppm - mid) < std::abs(g->ppm - mid) ? inner : outer) += l.intensity;
      CHECK(inner > outer * 1.1);
      check_close(inner + outer, 2, 1e-6);
    }
  }

  TEST_CASE("the C-F carbon of fluorobenzene is a doublet of about 245 Hz in the 13C signals") {
    const auto p = predict_smiles("Fc1ccccc1", builtin_tables());
    const nmrpred::Signal *cf = nullptr;
    for (const auto &g : p.c13_signals)
      if (g.atoms == std::vector<std::size_t>{1}) cf = &g;
    REQUIRE(cf != nullptr);
    CHECK(cf->multiplicity == "d");  // [CF]
    REQUIRE(cf->j_hz.size() == 1);
    check_close(std::abs(cf->j_hz[0]), 245, 15);  // [CF]
    CHECK(cf->lines.empty());
    // A carbon without a heteronucleus nearby keeps no multiplicity: toluene's
    // proton-decoupled 13C spectrum is all singlets, written without a letter.
    for (const auto &g : predict_smiles("Cc1ccccc1", builtin_tables()).c13_signals) CHECK(g.multiplicity.empty());
  }

  TEST_CASE("with predict_couplings off there are no couplings, multiplets or lines") {
    PredictOptions o;
    o.predict_couplings = false;
    const auto p = predict_smiles("CC(=O)OCC", builtin_tables(), o);
    CHECK(p.couplings.empty());
    CHECK_FALSE(p.h1_simulation.has_value());
    for (const auto &g : p.h1_signals) {
      CHECK(g.multiplicity.empty());
      CHECK(g.lines.empty());
    }
    const auto j = nlohmann::json::parse(nmrpred::to_json(nmrpred::predict_record(
        nmrpred::read_records("CC(=O)OCC", nmrpred::Format::Smiles).at(0), builtin_tables(), o)));
    CHECK_FALSE(j.contains("couplings"));
    CHECK_FALSE(j.at("signals").at("1H")[0].contains("multiplicity"));
  }

  TEST_CASE("the JSON of a record lists its couplings and each 1H signal's multiplicity and lines") {
    const auto r = nmrpred::predict_record(nmrpred::read_records("CC(=O)OCC", nmrpred::Format::Smiles).at(0),
                                           builtin_tables());
    REQUIRE(r.ok());
    const auto j = nlohmann::json::parse(nmrpred::to_json(r));
    CHECK(j.at("field_mhz") == 400.0);
    REQUIRE(j.at("couplings").size() == r.prediction->couplings.size());
    for (const auto &c : j.at("couplings")) {
      REQUIRE(c.at("atoms").size() == 2);
      CHECK(c.at("atoms")[0].get<std::size_t>() < c.at("atoms")[1].get<std::size_t>());
      for (const char *key : {"bonds", "j_hz", "uncertainty_hz", "rule", "source"}) CHECK(c.contains(key));
    }
    double total = 0;
    for (const auto &g : j.at("signals").at("1H")) {
      CHECK(g.at("multiplicity").is_string());
      CHECK(g.at("j_hz").is_array());
      for (const auto &l : g.at("lines")) total += l.at("intensity").get<double>();
    }
    check_close(total, 8, 1e-6);  // [CP-1H] C4H8O2
    // Earlier keys are kept.
    CHECK(j.at("signals").at("1H")[0].contains("count"));
  }

  TEST_CASE("field and line width out of range are ArgumentErrors naming the option") {
    const struct {
      double field_mhz, line_width_hz;
      const char *name;
    } rows[] = {{39, 1, "field_mhz"},     {1201, 1, "field_mhz"},      {std::nan(""), 1, "field_mhz"},
                {400, 0, "line_width_hz"}, {400, 101, "line_width_hz"}, {400, std::nan(""), "line_width_hz"}};
    for (const auto &row : rows) {
      INFO(row.name, " ", row.field_mhz, " ", row.line_width_hz);
      PredictOptions o;
      o.field_mhz = row.field_mhz;
      o.line_width_hz = row.line_width_hz;
      try {
        nmrpred::validate(o);
        FAIL("accepted");
      } catch (const nmrpred::ArgumentError &e) {
        CHECK(std::string(e.what()).find(row.name) != std::string::npos);
      }
    }
  }

  TEST_CASE("a molecule of more than 4,096 atoms leaves no state behind for the next one") {
    // The scratch each thread keeps between calls is given back after a
    // molecule that large (ThreadLease::serves). A 1,500-carbon chain (4,502
    // atoms) between two predictions of one small molecule must not change
    // the second.
    const Tables &tables = builtin_tables();
    PredictOptions o;
    o.predict_couplings = false;
    const std::string small = "CC(=O)Oc1ccccc1C(=O)O";
    const std::string before = record_json(small, tables, o);
    const auto chain = nlohmann::json::parse(record_json(std::string(1500, 'C'), tables, o));
    REQUIRE(chain.at("atoms").size() == 4502);
    CHECK(chain.at("signals").at("13C").size() == 750);  // one signal per mirror pair of carbons
    CHECK(record_json(small, tables, o) == before);
  }

  TEST_CASE("predictions made by several threads at once equal those made by one") {
    // The core promises use from many threads (one Tables shared by all):
    // per-thread workspaces, leased scratch and the shared tables must not
    // leak one molecule's state into another's. Every fifth built-in
    // reference compound (a sample across the kinds of carbon and proton the
    // tables hold) and a few stereo cases, predicted with everything on
    // (couplings and multiplets included) in two settings, each thread in its
    // own order. The single-threaded results are the expected ones.
    const Tables &tables = builtin_tables();
    std::vector<std::string> inputs;
    for (std::size_t i = 0; i < tables.reference().size(); i += 5) inputs.push_back(tables.reference()[i].smiles);
    for (const char *s : {"C[C@H](O)CC", "C/C=C/C(=O)OC", "F/C=C\\Cl", "C[C@H]1CC[C@@H](C)CC1", "OC(=O)C[C@@H](N)C(=O)O"})
      inputs.emplace_back(s);
    REQUIRE(inputs.size() > 100);
    PredictOptions plain, other;
    other.blind = true;
    other.solvent = "DMSO-d6";
    other.field_mhz = 90;
    const PredictOptions *settings[2] = {&plain, &other};
    std::vector<std::string> expected[2];
    for (int k = 0; k < 2; ++k)
      for (const auto &s : inputs) expected[k].push_back(record_json(s, tables, *settings[k]));
    constexpr int kThreads = 4;
    std::vector<int> mismatches(kThreads, 0);
    std::vector<std::string> first_mismatch(kThreads);
    std::vector<std::thread> threads;
    for (int t = 0; t < kThreads; ++t)
      threads.emplace_back([&, t] {
        for (int round = 0; round < 2; ++round)
          for (std::size_t j = 0; j < inputs.size(); ++j) {
            // Threads start at different molecules and alternate settings,
            // so that different work runs side by side.
            const std::size_t i = (j + static_cast<std::size_t>(t) * inputs.size() / kThreads) % inputs.size();
            const int k = (t + round + static_cast<int>(j)) % 2;
            std::string got;
            try {
              got = record_json(inputs[i], tables, *settings[k]);
            } catch (const std::exception &e) {
              got = e.what();
            }
            if (got != expected[k][i] && mismatches[static_cast<std::size_t>(t)]++ == 0)
              first_mismatch[static_cast<std::size_t>(t)] = inputs[i];
          }
      });
    for (auto &th : threads) th.join();
    for (int t = 0; t < kThreads; ++t) {
      INFO("thread ", t, ", first differing input: ", first_mismatch[static_cast<std::size_t>(t)]);
      CHECK(mismatches[static_cast<std::size_t>(t)] == 0);
    }
  }
}
