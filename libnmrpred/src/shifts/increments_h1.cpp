// 1H shifts from published increment rules: the tables in
// tables/increments/h1_*.tsv, applied as tables/FORMAT.md ("1H increment and
// solvent tables") describes and tests/python/test_h1_tables.py checks. One
// scheme per kind of proton, chosen by the atom that carries it:
//   C of CHO, HC(=O)X, C#C-H; O-H, N-H, S-H   h1_special (per solvent)
//   benzene ring C-H                         7.26 + ortho/meta/para increments
//   heteroaromatic and fused ring C-H        base value of the parent ring
//   alkene C-H, and C-H of lactam rings      Pascual-Meier-Simon, 5.25 + Z terms
//   (2-pyridones, uracils)
//   sp3 C-H                                  Shoolery's rule (CH2XY) or the
//                                            CH3/CH2/CH alpha/beta position table
// A proton no rule covers is passed on: a substituent without a row is never
// counted as zero.

#include "shifts/increments_h1.hpp"

#include <nmrpred/error.hpp>
#include <nmrpred/solvents.hpp>

#include <algorithm>
#include <array>
#include <cmath>
#include <cstdint>
#include <cstring>
#include <functional>
#include <initializer_list>
#include <iterator>
#include <optional>
#include <string>
#include <tuple>
#include <type_traits>
#include <utility>
#include <vector>

#include <fmt/format.h>

#include "graph/smarts.hpp"
#include "shifts/fixed_text.hpp"
#include "shifts/increment_support.hpp"
#include "support/small_vec.hpp"
#include "support/thread_lease.hpp"
#include "tables/parse.hpp"

namespace nmrpred::detail {

namespace {

// ---------------------------------------------------------------------------
// Uncertainties (one standard deviation, ppm): sigma = sqrt(floor^2 +
// (slope * n)^2) with n the number of increments summed, because additive
// rules lose accuracy with every substituent (crowding and interactions
// they leave out). Calibrated against tables/reference/*.tsv (every
// assigned proton a scheme covers, rules only) so that about two thirds of
// the errors fall within one sigma; figures in the report of this change.
constexpr Spread kShoolerySpread{0.21, 0.0};
// Shoolery's rule applied to a CH with two or three groups, at most one
// through a heteroatom: it overshoots there by up to 0.9 ppm; the spread is
// the RMS error over the 7 such reference protons (0.50, leave-one-out
// benchmark, --increments-only).
constexpr Spread kShooleryMethineSpread{0.50, 0.0};
constexpr Spread kAlphaSpread{0.15, 0.0};
// The alpha rows derived for an amine nitrogen on an aromatic ring
// (FORMAT.md, h1_shoolery step 2a) have no value of their own in the source
// and come out 0.05-0.48 ppm low on the 11 reference protons they cover
// (rules alone): the spread is their RMS error, 0.33 ppm, so the +/-1u
// interval holds 7 of the 11 rather than 2 with kAlphaSpread.
constexpr Spread kDerivedAlphaSpread{0.33, 0.0};
constexpr Spread kBetaSpread{0.10, 0.0};
// Several beta groups summed (step 3a): calibrated as above on the 19 such
// reference protons (RMS error 0.16 ppm, two thirds within 0.12).
constexpr Spread kBetaSumSpread{0.10, 0.05};
// A group alpha and others beta (step 3b): calibrated as above on the 94
// such reference protons (RMS error 0.19 ppm, two thirds within 0.21).
constexpr Spread kAlphaBetaSpread{0.18, 0.06};
// Added in quadrature per CH2 beta step carried over to a CH (step 3c).
constexpr double kBetaCarriedPpm = 0.15;
constexpr Spread kAlkaneSpread{0.10, 0.0};
// Added in quadrature for the four-membered ring term (row ring4-ch2): one
// parent (cyclobutane) fixes it, so how well it carries over to rings with
// groups is untested; 0.3 ppm is half the term.
constexpr double kRing4Ppm = 0.3;
constexpr Spread kAlkeneSpread{0.10, 0.08};
constexpr Spread kBenzeneSpread{0.08, 0.06};
// Heteroaromatic base values: the parent itself, then per ring substituent
// the table gives no increment for.
constexpr Spread kHeteroSpread{0.06, 0.28};
// Added in quadrature per benzene increment carried over to a heteroaromatic
// or fused parent ring (tables/FORMAT.md, h1_heteroaromatic): calibrated with
// the leave-one-out benchmark (benchmarks/loo_shifts.cpp --1h
// --increments-only) on the substituted heteroaromatic reference protons.
constexpr double kCarriedOverPpm = 0.15;
// Added in quadrature when an alkene's geometry had to be assumed.
constexpr double kAssumedGeometryPpm = 0.3;
// Added in quadrature for a C=C in a five-membered ring (cyclopentenes,
// cyclopentenones, maleic anhydride, norbornenes, indene): on
// tables/reference the rule came out 0.3-1.2 ppm low there (RMS 0.7); with
// the ring-correction row the 22 such protons still have RMS 0.64 (rules
// alone; norbornadiene 1.1 low, N-methylmaleimide 1.1 high).
constexpr double kFiveRingAlkenePpm = 0.7;
// Added in quadrature for the C=C of a lactam ring read as an open enone
// (ring_enone below): the rule was made on open chains; RMS error 0.37 ppm
// over the 7 such reference protons (benchmarks/loo_shifts.cpp --1h
// --increments-only).
constexpr double kRingEnonePpm = 0.4;

// Appends v as fmt's "{:.2f}" writes it, except that -0.00 is written 0.00.
void append_ppm(std::string &out, double v) {
  std::uint64_t hundredths = 0;
  if (!scaled_magnitude(v, 100, hundredths)) {
    out += fmt::format("{:.2f}", v);
    return;
  }
  append_scaled(out, std::signbit(v) && hundredths != 0 ? '-' : 0, hundredths, 2);
}

std::string fmt_ppm(double v) {
  std::string s;
  append_ppm(s, v);
  return s;
}

// "id value" as the method texts name a row's value; made once when the
// tables are parsed rather than for every proton.
std::string labelled(const std::string &id, double ppm) { return id + ' ' + fmt_ppm(ppm); }

// ---------------------------------------------------------------------------
// Parsed tables

struct ValueRow {
  std::string id;
  SmartsPattern smarts;
  double ppm = 0;
  std::string label;  // labelled(id, ppm)
};

struct Param {
  std::string id;
  double ppm = 0;
  bool set = false;
  std::string label;  // labelled(id, ppm)
};

struct ShooleryTable {
  bool present = false;
  Param shoolery_base;
  std::string shoolery_base_label;                // "base " + shoolery_base.label
  std::array<Param, 4> alkane;                    // by H count 1..3
  Param ring4;                                    // four-membered ring term
  std::vector<ValueRow> sigma;
  std::array<std::vector<ValueRow>, 4> alpha;     // by H count 1..3
  std::array<std::vector<ValueRow>, 4> beta;      // by H count 1..3
};

enum class Variant { Any, InRing, Conjugated, Isolated };

struct AlkeneRow {
  std::string id;
  SmartsPattern smarts;
  Variant variant = Variant::Any;
  double gem = 0, cis = 0, trans = 0;
};

struct AlkeneTable {
  bool present = false;
  Param base;
  std::string base_label;  // "base <ppm>", the sums' first term
  std::vector<AlkeneRow> rows;
  std::vector<AlkeneRow> ring5;  // kind ring-correction (FORMAT.md, h1_alkene)
};

struct BenzeneRow {
  std::string id;
  SmartsPattern smarts;
  std::array<double, 4> by_relation{};  // -, ortho, meta, para
};

struct BenzeneTable {
  bool present = false;
  Param base;
  std::string base_label;  // "base <ppm>", the sums' first term
  std::vector<BenzeneRow> rows;
};

// Ring systems (heavy atoms joined by bonds that lie on a cycle) found
// without ring perception, by their bridges. A ring system holds every ring
// of the smallest rings (graph/smarts.hpp) it shares an atom with, so its
// facts bound what a SMARTS ring can map onto.
struct RingSystem {
  int atoms = 0, bonds = 0;
  std::array<int, 4> aromatic{};  // aromatic C, N, O, S
  bool carbonyl = false;          // a carbon with a double bond to O
  int cycles() const { return bonds - atoms + 1; }
};

// Index into RingSystem::aromatic, or -1 for another element.
int aromatic_slot(int atomic_number) {
  switch (atomic_number) {
    case 6: return 0;
    case 7: return 1;
    case 8: return 2;
    case 16: return 3;
    default: return -1;
  }
}

// What a row's SMARTS (h1_heteroaromatic, h1_special) asks of the ring system
// that its atom 0 maps into, read from the text once when the tables are parsed. Only a
// pattern written as one chain of atoms whose first and last atoms close a
// ring (other closures inside the chain, branches without closures) is read;
// for anything else `known` stays false and the row is never screened out.
struct RowShape {
  bool known = false;
  int atoms = 0;              // chain atoms, all on the ring of atom 0
  int cycles = 0;             // ring closures: independent cycles
  bool all_r1 = false;        // every chain atom demands R1
  std::array<int, 4> aromatic{};  // chain atoms demanding aromatic C, N, O, S

  // False when no mapping can put atom 0 in ring system `sys` (null: on no
  // ring). The pattern's rings map onto cycles of one ring system, which
  // then holds as many independent cycles and atoms. A cycle of atoms each
  // in one smallest ring is its ring system's only cycle: an atom of it with
  // a third ring bond would lie in a second smallest ring (every ring bond
  // lies in one, and a ring passes an atom by two of its bonds).
  bool may_hold(const RingSystem *sys) const {
    if (!known) return true;
    if (!sys || cycles > sys->cycles() || atoms > sys->atoms) return false;
    if (all_r1 && (sys->cycles() != 1 || sys->atoms != atoms)) return false;
    int known_atoms = 0;
    for (std::size_t i = 0; i < aromatic.size(); ++i) {
      if (aromatic[i] > sys->aromatic[i]) return false;
      known_atoms += aromatic[i];
    }
    // A chain as large as the system maps onto all of it: with the element
    // of every chain atom demanded, the system holds exactly those.
    return atoms != sys->atoms || known_atoms != atoms || aromatic == sys->aromatic;
  }
};

// RowShape::aromatic slot of a lower-case (aromatic) element symbol, or -1.
int aromatic_symbol_slot(char c) {
  switch (c) {
    case 'c': return 0;
    case 'n': return 1;
    case 'o': return 2;
    case 's': return 3;
    default: return -1;
  }
}

bool lower_case(char c) { return c >= 'a' && c <= 'z'; }
bool digit(char c) { return c >= '0' && c <= '9'; }

RowShape read_shape(std::string_view text) {
  const RowShape unknown;
  if (text.find_first_of("$%") != std::string_view::npos) return unknown;
  RowShape out;
  out.all_r1 = true;
  std::array<int, 10> open;  // chain atom that opened ring closure digit d, or -1
  open.fill(-1);
  int depth = 0, first_closed_at = -1;
  for (std::size_t i = 0; i < text.size(); ++i) {
    const char ch = text[i];
    if (ch == '(') {
      ++depth;
    } else if (ch == ')') {
      if (--depth < 0) return unknown;
    } else if (ch == '[') {
      const auto close = text.find(']', i);
      if (close == std::string_view::npos) return unknown;
      const auto body = text.substr(i + 1, close - i - 1);
      i = close;
      if (depth > 0) continue;
      ++out.atoms;
      // ';' binds loosest: a term "R1" of it is demanded outright.
      bool r1 = false;
      for (std::size_t at = 0; at <= body.size();) {
        const auto end = std::min(body.find(';', at), body.size());
        r1 = r1 || body.substr(at, end - at) == "R1";
        at = end + 1;
      }
      out.all_r1 = out.all_r1 && r1;
      // Without ',' or '!' every primitive is demanded, the leading element
      // symbol too (a second lower-case letter would make another symbol).
      if (body.empty() || body.find_first_of(",!") != std::string_view::npos ||
          (body.size() > 1 && lower_case(body[1])))
        continue;
      const int slot = aromatic_symbol_slot(body[0]);
      if (slot >= 0) ++out.aromatic[static_cast<std::size_t>(slot)];
    } else if (depth > 0) {
      if (digit(ch)) return unknown;  // a branch closing a ring
    } else if (digit(ch)) {
      if (out.atoms == 0) return unknown;
      auto &o = open[static_cast<std::size_t>(ch - '0')];
      if (o < 0) {
        o = out.atoms - 1;
        continue;
      }
      if (out.atoms - 1 - o < 2) return unknown;
      if (o == 0) first_closed_at = out.atoms - 1;
      ++out.cycles;
      o = -1;
    } else {
      const int slot = aromatic_symbol_slot(ch);
      // Bonds written out, other atoms (aromatic Se among them): not read.
      if (slot < 0 || (ch == 's' && i + 1 < text.size() && text[i + 1] == 'e')) return unknown;
      ++out.atoms;
      out.all_r1 = false;
      ++out.aromatic[static_cast<std::size_t>(slot)];
    }
  }
  if (depth != 0 || std::any_of(open.begin(), open.end(), [](int o) { return o >= 0; })) return unknown;
  // Atom 0's ring must run along the whole chain: closed by its last atom.
  if (out.atoms < 3 || first_closed_at != out.atoms - 1) return unknown;
  out.known = true;
  return out;
}

// `text` with the term R1 taken out of every chain atom (one outside a
// branch), or empty when a chain atom would be left with no other demand.
// Where RowShape::may_hold lets an all-R1 row try a ring system at all, that
// system is one ring of the chain's length, so a match maps the chain onto
// it and every chain atom lies on exactly one smallest ring: the terms hold
// without the ring perception that testing them would start.
std::string without_r1(std::string_view text) {
  std::string out;
  out.reserve(text.size());
  int depth = 0;
  for (std::size_t i = 0; i < text.size(); ++i) {
    const char ch = text[i];
    depth += ch == '(' ? 1 : ch == ')' ? -1 : 0;
    const auto close = ch == '[' ? text.find(']', i) : std::string_view::npos;
    if (depth > 0 || close == std::string_view::npos) {
      out += ch;
      continue;
    }
    const auto body = text.substr(i + 1, close - i - 1);
    std::string kept;
    for (std::size_t at = 0; at <= body.size();) {
      const auto end = std::min(body.find(';', at), body.size());
      const auto term = body.substr(at, end - at);
      if (term != "R1") {
        if (!kept.empty()) kept += ';';
        kept += term;
      }
      at = end + 1;
    }
    if (kept.empty()) return {};
    out += '[';
    out += kept;
    out += ']';
    i = close;
  }
  return out;
}

struct HeteroRow {
  std::string id, ring, position;
  SmartsPattern smarts;
  RowShape shape;  // read_shape(smarts)
  // What hetero() searches for: `smarts`, or for a row whose chain atoms all
  // demand R1 the same without those terms (without_r1()). Both have the
  // same atoms and bonds, so a search visits their mappings in one order.
  SmartsPattern searched;
  double ppm = 0;
  std::string scheme, label;  // the method text's scheme name and labelled(id, ppm)
};

struct SpecialRow {
  std::string id, solvent;  // solvent "*" = any
  Opt typical_ppm;
  double min_ppm = 0, max_ppm = 0;
  // The estimate the row gives and its method text (special_estimate()),
  // the same for every proton.
  double ppm = 0;
  std::string method;
};

struct SpecialGroup {
  std::string name;
  SmartsPattern smarts;
  RowShape shape;  // read_shape(smarts): the three-membered ring groups
  bool exchanges = false;
  std::vector<SpecialRow> rows;
};

}  // namespace

// The parsed tables; opaque outside this file (increments_h1.hpp).
struct H1IncrementTables {
  ShooleryTable shoolery;
  AlkeneTable alkene;
  BenzeneTable benzene;
  std::vector<HeteroRow> hetero;
  std::vector<SpecialGroup> special;
  std::vector<Solvent> solvents;  // as nmrpred::solvents() gives them; empty without solvents.tsv
  bool has_solvents = false;      // the set has a solvents.tsv
};

namespace {

constexpr const char *kShooleryPath = "increments/h1_shoolery.tsv";

void read_shoolery(const Tables &tables, ShooleryTable &out) {
  TableReader r(tables, kShooleryPath);
  if (!r.present()) return;
  const auto c_kind = r.col("kind"), c_id = r.col("id"), c_smarts = r.col("smarts"), c_value = r.col("value_ppm");
  const char *const types[] = {"", "ch", "ch2", "ch3"};
  for (const auto &row : r.table().rows) {
    const auto &kind = row.fields[c_kind], &id = row.fields[c_id];
    const double v = r.need_ppm(row, c_value);
    if (kind == "base") {
      bool known = false;
      if (id == "shoolery-base") out.shoolery_base = Param{id, v, true, labelled(id, v)}, known = true;
      if (id == "ring4-ch2") out.ring4 = Param{id, v, true, labelled(id, v)}, known = true;
      for (std::size_t h = 1; h <= 3; ++h)
        if (id == fmt::format("alkane-{}", types[h])) out.alkane[h] = Param{id, v, true, labelled(id, v)}, known = true;
      if (!known) r.fail(row, fmt::format("unknown base row '{}'", id));
      continue;
    }
    ValueRow vr{id, r.smarts(row, c_smarts), v, labelled(id, v)};
    if (kind == "sigma") {
      out.sigma.push_back(std::move(vr));
      continue;
    }
    bool known = false;
    for (std::size_t h = 1; h <= 3 && !known; ++h) {
      if (kind == fmt::format("alpha-{}", types[h])) out.alpha[h].push_back(vr), known = true;
      else if (kind == fmt::format("beta-{}", types[h])) out.beta[h].push_back(vr), known = true;
    }
    if (!known) r.fail(row, fmt::format("unknown kind '{}'", kind));
  }
  if (out.shoolery_base.set) out.shoolery_base_label = "base " + out.shoolery_base.label;
  out.present = true;
}

void read_alkene(const Tables &tables, AlkeneTable &out) {
  const char *path = "increments/h1_alkene.tsv";
  TableReader r(tables, path);
  if (!r.present()) return;
  const auto c_kind = r.col("kind"), c_id = r.col("id"), c_smarts = r.col("smarts"), c_variant = r.col("variant"),
             c_base = r.col("base_ppm"), c_gem = r.col("z_gem_ppm"), c_cis = r.col("z_cis_ppm"),
             c_trans = r.col("z_trans_ppm");
  for (const auto &row : r.table().rows) {
    const auto &kind = row.fields[c_kind];
    if (kind == "base") {
      const double v = r.need_ppm(row, c_base);
      out.base = Param{row.fields[c_id], v, true, labelled(row.fields[c_id], v)};
    } else if (kind == "substituent") {
      AlkeneRow a;
      a.id = row.fields[c_id];
      a.smarts = r.smarts(row, c_smarts);
      const auto &v = row.fields[c_variant];
      if (v == "any") a.variant = Variant::Any;
      else if (v == "in-ring") a.variant = Variant::InRing;
      else if (v == "conjugated") a.variant = Variant::Conjugated;
      else if (v == "isolated") a.variant = Variant::Isolated;
      else r.fail(row, fmt::format("unknown variant '{}'", v));
      a.gem = r.need_ppm(row, c_gem), a.cis = r.need_ppm(row, c_cis), a.trans = r.need_ppm(row, c_trans);
      out.rows.push_back(std::move(a));
    } else if (kind == "ring-correction") {
      AlkeneRow a;
      a.id = row.fields[c_id];
      a.smarts = r.smarts(row, c_smarts);
      a.trans = r.need_ppm(row, c_trans);
      out.ring5.push_back(std::move(a));
    } else {
      r.fail(row, fmt::format("unknown kind '{}'", kind));
    }
  }
  if (!out.base.set) throw TablesError(fmt::format("{}: no base row", path));
  out.base_label = "base " + fmt_ppm(out.base.ppm);
  out.present = true;
}

void read_benzene(const Tables &tables, BenzeneTable &out) {
  const char *path = "increments/h1_benzene.tsv";
  TableReader r(tables, path);
  if (!r.present()) return;
  const auto c_kind = r.col("kind"), c_id = r.col("id"), c_smarts = r.col("smarts"), c_base = r.col("base_ppm");
  const std::array<std::size_t, 4> c_rel{0, r.col("z_ortho_ppm"), r.col("z_meta_ppm"), r.col("z_para_ppm")};
  for (const auto &row : r.table().rows) {
    const auto &kind = row.fields[c_kind];
    if (kind == "base") {
      const double v = r.need_ppm(row, c_base);
      out.base = Param{row.fields[c_id], v, true, labelled(row.fields[c_id], v)};
    } else if (kind == "substituent") {
      BenzeneRow b;
      b.id = row.fields[c_id];
      b.smarts = r.smarts(row, c_smarts);
      for (std::size_t i = 1; i <= 3; ++i) b.by_relation[i] = r.need_ppm(row, c_rel[i]);
      out.rows.push_back(std::move(b));
    } else {
      r.fail(row, fmt::format("unknown kind '{}'", kind));
    }
  }
  if (!out.base.set) throw TablesError(fmt::format("{}: no base row", path));
  out.base_label = "base " + fmt_ppm(out.base.ppm);
  out.present = true;
}

void read_hetero(const Tables &tables, std::vector<HeteroRow> &out) {
  TableReader r(tables, "increments/h1_heteroaromatic.tsv");
  if (!r.present()) return;
  const auto c_kind = r.col("kind"), c_id = r.col("id"), c_ring = r.col("ring"), c_pos = r.col("position"),
             c_smarts = r.col("smarts"), c_shift = r.col("shift_ppm");
  for (const auto &row : r.table().rows) {
    if (row.fields[c_kind] != "base") r.fail(row, fmt::format("unknown kind '{}'", row.fields[c_kind]));
    HeteroRow h;
    h.id = row.fields[c_id];
    h.ring = row.fields[c_ring];
    h.position = row.fields[c_pos];
    h.smarts = r.smarts(row, c_smarts);
    h.shape = read_shape(h.smarts.text());
    const std::string plain = h.shape.known && h.shape.all_r1 ? without_r1(h.smarts.text()) : std::string();
    h.searched = plain.empty() ? h.smarts : SmartsPattern(plain);
    h.ppm = r.need_ppm(row, c_shift);
    h.scheme = fmt::format("heteroaromatic base value ({}, position {})", h.ring, h.position);
    h.label = labelled(h.id, h.ppm);
    out.push_back(std::move(h));
  }
}

// Fills r.ppm and r.method. tables/FORMAT.md: min..max is a wide range for
// matching measured peaks; half of it is the spread we report. A row without
// a typical value gives the middle of its range.
void special_estimate(const std::string &group, SpecialRow &r) {
  const std::string where = r.solvent == "*" ? std::string("any solvent") : r.solvent;
  if (r.typical_ppm) {
    r.ppm = *r.typical_ppm;
    r.method = fmt::format("typical value of the group '{}' in {}: {} {} (range {}-{})", group, where, r.id,
                           fmt_ppm(r.ppm), fmt_ppm(r.min_ppm), fmt_ppm(r.max_ppm));
  } else {
    r.ppm = 0.5 * (r.min_ppm + r.max_ppm);
    r.method = fmt::format("group '{}' in {}: {} gives no typical value; middle of the range {}-{} = {}", group,
                           where, r.id, fmt_ppm(r.min_ppm), fmt_ppm(r.max_ppm), fmt_ppm(r.ppm));
  }
}

void read_special(const Tables &tables, std::vector<SpecialGroup> &out) {
  TableReader r(tables, "increments/h1_special.tsv");
  if (!r.present()) return;
  const auto c_id = r.col("id"), c_group = r.col("group"), c_smarts = r.col("smarts"), c_solvent = r.col("solvent"),
             c_typ = r.col("typical_ppm"), c_min = r.col("min_ppm"), c_max = r.col("max_ppm"),
             c_exch = r.col("exchanges");
  for (const auto &row : r.table().rows) {
    const auto &name = row.fields[c_group];
    auto it = std::find_if(out.begin(), out.end(), [&](const SpecialGroup &g) { return g.name == name; });
    const auto &exch = row.fields[c_exch];
    if (exch != "yes" && exch != "no") r.fail(row, fmt::format("column 'exchanges': '{}' is not yes or no", exch));
    if (it == out.end()) {
      SpecialGroup g;
      g.name = name;
      g.smarts = r.smarts(row, c_smarts);
      g.shape = read_shape(g.smarts.text());
      g.exchanges = exch == "yes";
      out.push_back(std::move(g));
      it = out.end() - 1;
    } else if (std::string(it->smarts.text()) != row.fields[c_smarts] || it->exchanges != (exch == "yes")) {
      r.fail(row, fmt::format("group '{}' differs from its first row in smarts or exchanges", name));
    }
    SpecialRow s;
    s.id = row.fields[c_id];
    s.solvent = row.fields[c_solvent];
    s.typical_ppm = r.ppm(row, c_typ);
    s.min_ppm = r.need_ppm(row, c_min);
    s.max_ppm = r.need_ppm(row, c_max);
    if (!(s.min_ppm < s.max_ppm)) r.fail(row, "min_ppm must be below max_ppm");
    if (s.typical_ppm && !(s.min_ppm <= *s.typical_ppm && *s.typical_ppm <= s.max_ppm))
      r.fail(row, "typical_ppm must lie within min_ppm..max_ppm");
    for (const auto &other : it->rows)
      if (other.solvent == s.solvent) r.fail(row, fmt::format("group '{}' lists solvent '{}' twice", name, s.solvent));
    special_estimate(name, s);
    it->rows.push_back(std::move(s));
  }
}

void read_solvents(const Tables &tables, H1IncrementTables &out) {
  if (tables.file_text("solvents.tsv").empty()) return;
  out.solvents = nmrpred::solvents(tables);
  out.has_solvents = true;
}

// ---------------------------------------------------------------------------
// A sum of increments, kept term by term for the method text. The scheme
// name (in pieces, written one after another), the base label, roles and row
// ids are views of literals or of the parsed tables, which outlive every Sum:
// a proton's estimate then copies no string but its method text.
class Sum {
 public:
  Sum(const std::array<std::string_view, 5> &scheme, Spread spread) : scheme_(scheme), spread_(spread) {}
  void base(std::string_view label, double ppm) {
    base_label_ = label;
    base_ppm_ = ppm;
  }
  void add(std::string_view role, std::string_view id, double ppm) { terms_.push_back(Term{role, id, ppm}); }
  // A note written "(<head><tail>)" after the sum, once however often it is
  // given: `tail` views a literal, `head` holds what is made per proton.
  void note(std::string head, std::string_view tail = {}) {
    for (const auto &n : notes_)
      if (n.head == head && n.tail == tail) return;
    notes_.push_back(Note{std::move(head), tail});
  }
  void widen(double ppm) { extra_var_ += ppm * ppm; }
  double ppm() const {
    double v = base_ppm_;
    for (const auto &t : terms_) v += t.ppm;
    return v;
  }
  double uncertainty(int count) const {
    const double slope = spread_.slope_ppm * count;
    return std::sqrt(spread_.floor_ppm * spread_.floor_ppm + slope * slope + extra_var_);
  }
  int term_count() const { return static_cast<int>(terms_.size()); }
  // Appends the method text to `s`.
  void method(std::string &s) const {
    std::size_t size = s.size() + base_label_.size() + 16;
    for (auto part : scheme_) size += part.size();
    for (const auto &t : terms_) size += t.role.size() + t.id.size() + 16;
    for (const auto &n : notes_) size += n.head.size() + n.tail.size() + 3;
    if (s.capacity() < size) s.reserve(std::max(size, 2 * s.capacity()));
    for (auto part : scheme_) s += part;
    s += ": ";
    s += base_label_;
    for (const auto &t : terms_) {
      s += " + ";
      s += t.role;
      if (!t.role.empty()) s += ' ';
      s += t.id;
      s += ' ';
      append_ppm(s, t.ppm);
    }
    s += " = ";
    append_ppm(s, ppm());
    for (const auto &n : notes_) {
      s += " (";
      s += n.head;
      s += n.tail;
      s += ')';
    }
  }

 private:
  struct Term {
    std::string_view role, id;
    double ppm = 0;
  };
  struct Note {
    std::string head;
    std::string_view tail;
  };
  std::array<std::string_view, 5> scheme_;
  Spread spread_;
  std::string_view base_label_;
  double base_ppm_ = 0;
  SmallVec<Term, 12> terms_;
  std::vector<Note> notes_;  // rare: made only when a note is given
  double extra_var_ = 0;
};

// An estimate ready to be copied into a Shift. Its method text lies in the
// source's per-molecule text buffer (H1Increments::methods_), at
// [method_at, method_at + method_size): one buffer for the molecule rather
// than a string per proton.
struct Estimate {
  double ppm = 0;
  double uncertainty_ppm = 0;
  std::size_t method_at = 0, method_size = 0;
  bool exchangeable = false;
  bool observed = true;
  bool solvent_named = false;  // ShiftDraft::solvent_named
};

// ---------------------------------------------------------------------------
// Graph helpers

std::vector<std::size_t> heavy_neighbours(const Molecule &m, std::size_t a) {
  std::vector<std::size_t> out;
  for_heavy_neighbours(m, a, [&](std::size_t x, BondOrder) { out.push_back(x); });
  return out;
}

// Aromatic or part of a double/triple bond (tables/FORMAT.md, alkene variants).
bool unsaturated(const Molecule &m, std::size_t a) {
  if (m.atom(a).aromatic) return true;
  bool multiple = false;
  const auto *bid = m.bond_ids_begin(a);
  for (std::size_t i = 0; i < m.degree(a); ++i) {
    const auto o = m.bond(bid[i]).order;
    multiple |= o == BondOrder::Double || o == BondOrder::Triple || o == BondOrder::Aromatic;
  }
  return multiple;
}

bool in_one_ring(const SmartsTarget &t, std::initializer_list<std::size_t> atoms, std::size_t max_size = 0) {
  for (const auto r : t.rings()) {
    if (max_size && r.size() > max_size) continue;
    bool all = true;
    for (auto a : atoms) all = all && std::find(r.begin(), r.end(), a) != r.end();
    if (all) return true;
  }
  return false;
}

// First row in file order that applies to substituent atom x: its SMARTS
// matches with atom 0 on x and no other atom on the skeleton
// (tables/FORMAT.md), and `keep` accepts it.
template <class Row, class Keep>
const Row *first_row(const std::vector<Row> &rows, const SmartsTarget &t, std::size_t x,
                     const std::vector<bool> &skeleton, Keep keep) {
  for (const auto &row : rows)
    if (match_at(row.smarts, t, x, skeleton) && keep(row)) return &row;
  return nullptr;
}

template <class Row>
const Row *first_row(const std::vector<Row> &rows, const SmartsTarget &t, std::size_t x,
                     const std::vector<bool> &skeleton) {
  return first_row(rows, t, x, skeleton, [](const Row &) { return true; });
}

// ---------------------------------------------------------------------------
// Rings without ring perception

// The atoms of a ring of at most 8 (aromatic_cycle()), kept in place.
struct RingAtoms {
  std::array<std::uint32_t, 8> atoms{};
  std::size_t size = 0;
  const std::uint32_t *begin() const { return atoms.data(); }
  const std::uint32_t *end() const { return atoms.data() + size; }
  // Implicit, so that it passes where a ring of SmartsTarget::rings() does.
  operator RingView() const { return RingView(begin(), end()); }
};

// `cycle`, a ring that is its atoms' whole ring system (in either direction
// from any atom), in the order SmartsTarget::rings() lists it. Perception
// (graph/smarts.cpp) first finds the ring from its lowest atom r0, breadth
// first, taking neighbours in list order and never crossing a bridge, so
// each side of the ring is one tree path, and the side of r0's first-listed
// ring neighbour reaches every depth first (and the far atom of an even
// ring). The one ring bond off the tree closes the ring, which runs from r0
// along the tree to that bond's first atom and back along the other side.
RingAtoms rings_order(const Molecule &m, const RingAtoms &cycle) {
  const std::size_t size = cycle.size,
                    i0 = static_cast<std::size_t>(std::min_element(cycle.begin(), cycle.end()) - cycle.begin());
  auto at = [&](std::size_t step, bool forward) {
    return cycle.atoms[forward ? (i0 + step) % size : (i0 + size - step % size) % size];
  };
  bool first_forward = true;
  for (auto it = m.neighbours_begin(cycle.atoms[i0]); it != m.neighbours_end(cycle.atoms[i0]); ++it) {
    if (*it == at(1, true)) break;
    if (*it == at(1, false)) {
      first_forward = false;
      break;
    }
  }
  const std::size_t half = size / 2;
  // The closing bond's atom on the first side (the far atom of an even ring)
  // and on the other side.
  const auto near_end = at(half, first_forward);
  const auto far_end = at(size % 2 == 0 ? half - 1 : half, !first_forward);
  const auto &closing = m.bond(static_cast<std::size_t>(m.bond_between(near_end, far_end)));
  const bool forward = closing.begin == near_end ? first_forward : !first_forward;
  RingAtoms out;
  out.size = size;
  for (std::size_t i = 0; i < size; ++i) out.atoms[i] = at(i, forward);
  return out;
}

// The cycle of aromatic bonds through heavy atom k, each atom on it with
// exactly two, from k; empty when there is none or it has more than 8 atoms
// (larger rings are left to ring perception).
RingAtoms aromatic_cycle(const Molecule &m, std::size_t k) {
  constexpr std::size_t kMaxSize = 8;
  static_assert(kMaxSize == std::tuple_size_v<decltype(RingAtoms::atoms)>);
  const std::size_t n = m.heavy_atom_count();
  if (k >= n) return {};
  auto ring_neighbours = [&](std::size_t a, std::size_t (&out)[2]) {
    std::size_t count = 0;
    const auto *bid = m.bond_ids_begin(a);
    for (auto it = m.neighbours_begin(a); it != m.neighbours_end(a); ++it, ++bid)
      if (*it < n && m.bond(*bid).order == BondOrder::Aromatic) {
        if (count < 2) out[count] = *it;
        ++count;
      }
    return count;
  };
  RingAtoms cycle;
  cycle.atoms[cycle.size++] = static_cast<std::uint32_t>(k);
  std::size_t prev = k, cur = k;
  for (;;) {
    std::size_t next[2];
    if (ring_neighbours(cur, next) != 2) return {};
    const std::size_t step = cur == k ? next[0] : (next[0] != prev ? next[0] : next[1]);
    if (step == k) return cycle;
    if (cycle.size == kMaxSize) return {};
    cycle.atoms[cycle.size++] = static_cast<std::uint32_t>(step);
    prev = cur, cur = step;
  }
}

// The buffers of find_ring_systems(), which a caller may keep from one
// molecule to the next.
struct RingWalk {
  // The neighbours still to look at are kept as pointers: the accessors
  // check their index on every call.
  struct Frame {
    std::uint32_t atom, via_bond;
    const std::uint32_t *next, *end, *bond;
  };
  std::vector<std::uint32_t> scratch;
  std::vector<Frame> stack;
};

// The ring systems of m's heavy atoms, into `systems` (emptied first); `of`
// gets per heavy atom the index of its system or -1 when it lies on no ring.
// A bond lies on a ring unless it is a bridge, and one depth-first search
// finds them (a tree bond is one when nothing below it reaches back above
// it): the atoms visited below a bridge and not yet placed then make one
// ring system, or a lone atom.
void find_ring_systems(const Molecule &m, std::vector<std::int32_t> &of, std::vector<RingSystem> &systems,
                       RingWalk &walk) {
  const auto n = static_cast<std::uint32_t>(m.heavy_atom_count());
  const Atom *atoms = m.atoms().data();
  const Bond *bonds = m.bonds().data();
  constexpr std::uint32_t kNoBond = ~std::uint32_t{0};
  // Visit order and low point (0: not yet visited), and the stack of atoms
  // visited but in no system yet, in one block.
  std::vector<std::uint32_t> &scratch = walk.scratch;
  scratch.assign(3 * std::size_t{n}, 0);
  std::uint32_t *const order = scratch.data(), *const low = order + n, *const pending = low + n;
  std::size_t pending_size = 0;
  systems.clear();
  of.assign(n, -1);
  auto place = [&](std::uint32_t first) {
    std::size_t from = pending_size;
    while (pending[--from] != first) {
    }
    if (pending_size - from > 1) {
      const auto id = static_cast<std::int32_t>(systems.size());
      for (std::size_t i = from; i < pending_size; ++i) of[pending[i]] = id;
      RingSystem sys;
      for (std::size_t i = from; i < pending_size; ++i) {
        const std::uint32_t a = pending[i];
        const bool carbon = atoms[a].atomic_number == 6;
        const auto *bid = m.bond_ids_begin(a);
        for (auto it = m.neighbours_begin(a), end = it + m.degree(a); it != end; ++it, ++bid) {
          const std::uint32_t x = *it;
          if (x >= n) continue;
          sys.carbonyl = sys.carbonyl ||
                         (carbon && atoms[x].atomic_number == 8 && bonds[*bid].order == BondOrder::Double);
          if (of[x] == id && x > a) ++sys.bonds;  // each ring bond once
        }
        ++sys.atoms;
        const int slot = atoms[a].aromatic ? aromatic_slot(atoms[a].atomic_number) : -1;
        if (slot >= 0) ++sys.aromatic[static_cast<std::size_t>(slot)];
      }
      systems.push_back(sys);
    }
    pending_size = from;
  };
  using Frame = RingWalk::Frame;
  std::vector<Frame> &stack = walk.stack;
  stack.clear();
  stack.reserve(n);
  std::uint32_t visited = 0;
  auto enter = [&](std::uint32_t a, std::uint32_t via) {
    order[a] = low[a] = ++visited;
    pending[pending_size++] = a;
    const std::uint32_t *nb = m.neighbours_begin(a);
    stack.push_back(Frame{a, via, nb, nb + m.degree(a), m.bond_ids_begin(a)});
  };
  for (std::uint32_t root = 0; root < n; ++root) {
    if (order[root] != 0) continue;
    enter(root, kNoBond);
    while (!stack.empty()) {
      Frame &f = stack.back();
      if (f.next != f.end) {
        const std::uint32_t x = *f.next++, b = *f.bond++;
        if (x >= n || b == f.via_bond) continue;
        if (order[x] != 0) low[f.atom] = std::min(low[f.atom], order[x]);
        else enter(x, b);
        continue;
      }
      const std::uint32_t done = f.atom;
      stack.pop_back();
      if (stack.empty()) break;
      const std::uint32_t parent = stack.back().atom;
      low[parent] = std::min(low[parent], low[done]);
      if (low[done] > order[parent]) place(done);
    }
    place(root);
  }
}

// Whether aromatic_cycle() of an atom, `cycle_size` atoms long, is the whole
// ring system `sys` of that atom (null: the atom is on no ring).
bool lone_system(const RingSystem *sys, std::size_t cycle_size) {
  return cycle_size >= 3 && sys && sys->atoms == static_cast<int>(cycle_size) && sys->cycles() == 1;
}

}  // namespace

std::vector<std::uint32_t> lone_ring(const Molecule &m, std::size_t k) {
  const auto cycle = aromatic_cycle(m, k);
  if (cycle.size < 3) return {};
  std::vector<std::int32_t> of;
  std::vector<RingSystem> systems;
  RingWalk walk;
  find_ring_systems(m, of, systems, walk);
  const RingSystem *sys = of[k] >= 0 ? &systems[static_cast<std::size_t>(of[k])] : nullptr;
  if (!lone_system(sys, cycle.size)) return {};
  const auto ring = rings_order(m, cycle);
  return std::vector<std::uint32_t>(ring.begin(), ring.end());
}

namespace {

// ---------------------------------------------------------------------------
// The source

class H1Increments final : public ShiftSource {
 public:
  H1Increments(std::shared_ptr<const H1IncrementTables> parsed, std::string solvent)
      : parsed_(std::move(parsed)), tab_(*parsed_) {
    if (solvent.empty()) solvent = "CDCl3";
    if (tab_.solvents.empty()) {
      // No solvents.tsv in this table set: the h1_special names are all we know.
      const auto key = lower_trimmed(solvent);
      solvent_name_ = solvent;
      exchanges_ = key == "d2o" || key == "cd3od";
      return;
    }
    const Solvent &s = find_listed_solvent(tab_.solvents, solvent);
    solvent_name_ = s.name;
    exchanges_ = s.exchanges_labile_protons;
    water_ppm_ = s.water_h1_ppm;
    known_ = true;
  }

  bool estimate(const ShiftQuery &q, std::size_t atom, ShiftDraft &out) const override {
    if (q.nucleus != Nucleus::H1) return false;
    const auto &r = evaluate(q, atom);
    if (!r) return false;
    out.ppm = r->ppm;
    out.uncertainty_ppm = r->uncertainty_ppm;
    out.source = ShiftSourceKind::Increments;
    out.sphere = 0;
    out.method.assign(state_->methods, r->method_at, r->method_size);
    out.references.clear();
    out.exchangeable = r->exchangeable;
    out.observed = r->observed;
    out.solvent_named = r->solvent_named;
    return true;
  }

  // The rule estimate for hydrogen `atom`, or nothing when no rule covers it.
  // Remembered per molecule: the reference lookup asks for it before this
  // source is asked in its own turn, and only the alkene rule looks at more
  // than the carrier, so the protons of one carbon share the rest.
  const std::optional<Estimate> &evaluate(const ShiftQuery &q, std::size_t atom) const {
    static const std::optional<Estimate> kNone;
    const Molecule &m = q.molecule;
    if (atom >= m.atom_count() || !m.is_hydrogen(atom) || m.atom(atom).isotope > 1) return kNone;
    const auto carrier = m.attached_to(atom);
    if (carrier < 0 || m.degree(atom) != 1) return kNone;
    const auto c = static_cast<std::size_t>(carrier);
    const SmartsTarget &t = target(q);
    if (state_->memo.empty()) state_->memo.resize(m.atom_count());
    // A proton's own answer, else its carrier's.
    const bool heavy_carrier = c < m.heavy_atom_count();
    if (state_->memo[atom].done) return state_->memo[atom].value;
    if (heavy_carrier && state_->memo[c].done) return state_->memo[c].value;
    bool per_proton = false;
    auto value = evaluate_uncached(q, t, atom, c, per_proton);
    Memo &slot = state_->memo[per_proton || !heavy_carrier ? atom : c];
    slot.done = true;
    slot.value = value;
    return slot.value;
  }

 private:
  // evaluate()'s answer for one atom (a proton, or a carrier for all its
  // protons).
  struct Memo {
    bool done = false;
    std::optional<Estimate> value;
  };

  // The estimate of Sum `s` with its method text in State::methods.
  Estimate from_sum(const Sum &s, int count) const {
    Estimate e{s.ppm(), s.uncertainty(count)};
    e.method_at = state_->methods.size();
    s.method(state_->methods);
    e.method_size = state_->methods.size() - e.method_at;
    return e;
  }
  Estimate from_sum(const Sum &s) const { return from_sum(s, s.term_count()); }

  // evaluate() for proton `atom` on carrier `c`; sets `per_proton` when the
  // answer depends on the proton, not only on its carrier.
  std::optional<Estimate> evaluate_uncached(const ShiftQuery &q, const SmartsTarget &t, std::size_t atom,
                                            std::size_t c, bool &per_proton) const {
    const Molecule &m = q.molecule;
    const auto &a = m.atom(c);
    if (a.formal_charge != 0 || a.radical_electrons != 0) return std::nullopt;
    const SpecialGroup *group = special_group(t, c);
    if (a.atomic_number != 6) {
      if (a.atomic_number == 7 || a.atomic_number == 8 || a.atomic_number == 16) return labile(group);
      return std::nullopt;
    }
    if (group) return special_ch(*group);
    if (a.aromatic) {
      if (auto r = benzene(t, c)) return r;
      if (auto r = hetero(t, c)) return r;
      return ring_enone(t, c);
    }
    int doubles = 0, multiple_other = 0;
    std::size_t partner = c;
    for_heavy_neighbours(m, c, [&](std::size_t b, BondOrder o) {
      if (o == BondOrder::Double && m.atom(b).atomic_number == 6) ++doubles, partner = b;
      else if (o != BondOrder::Single) ++multiple_other;
    });
    if (doubles == 1 && multiple_other == 0) {
      per_proton = true;
      return alkene(q, t, atom, c, partner);
    }
    if (is_sp3_carbon(m, c)) return sp3(t, c);
    return std::nullopt;
  }

  // The query's SmartsTarget (ShiftQuery::smarts_target), shared by all
  // protons of the molecule; the rows found below belong to it. Not
  // thread-safe (header: one thread per source object).
  const SmartsTarget &target(const ShiftQuery &q) const {
    const SmartsTarget &t = q.smarts_target();
    if (query_ != &q || target_ != &t) {
      target_ = &t;
      query_ = &q;
      state_.serves(t.molecule().atom_count());
      state_->benzene_rings.clear();
      state_->lone_of.clear();
      state_->lone_rings.clear();
      state_->system_of.clear();
      state_->systems.clear();
      state_->system_rows.clear();
      state_->memo.clear();
      state_->methods.clear();
    }
    return t;
  }

  // --- h1_special -----------------------------------------------------------
  // The first group in file order whose SMARTS matches on the proton's atom.
  const SpecialGroup *special_group(const SmartsTarget &t, std::size_t c) const {
    const std::vector<bool> none;
    for (const auto &g : tab_.special) {
      if (c >= t.atom_count() || !g.smarts.root_may_match(t.packed(c)) ||
          !g.smarts.neighbours_may_match(t.neighbour_kinds(c)))
        continue;
      // match_at() after its own screens; a ring group then needs a ring
      // around c that can hold it, known without a search: a three-membered
      // one shows in c's neighbours, others in its ring system.
      if (g.shape.known && (g.shape.atoms == 3 && g.shape.cycles == 1
                                ? !on_triangle(t.molecule(), c)
                                : !g.shape.may_hold(ring_system(t.molecule(), c))))
        continue;
      if (match_at_unscreened(g.smarts, t, c, none)) return &g;
    }
    return nullptr;
  }

  // Whether two heavy neighbours of c are bonded to each other.
  static bool on_triangle(const Molecule &m, std::size_t c) {
    const std::size_t n = m.heavy_atom_count();
    const std::uint32_t *begin = m.neighbours_begin(c), *end = begin + m.degree(c);
    for (const auto *i = begin; i != end; ++i)
      for (const auto *j = i + 1; j != end; ++j)
        if (*i < n && *j < n && m.bond_between(*i, *j) >= 0) return true;
    return false;
  }

  const SpecialRow *special_row(const SpecialGroup &g) const {
    for (const auto &r : g.rows)
      if (r.solvent == "*" || r.solvent == solvent_name_) return &r;
    return nullptr;
  }

  Estimate special_value(const SpecialRow &r) const {
    Estimate e;
    e.ppm = r.ppm;
    e.uncertainty_ppm = 0.5 * (r.max_ppm - r.min_ppm);
    e.method_at = state_->methods.size();
    state_->methods += r.method;
    e.method_size = r.method.size();
    e.solvent_named = true;  // special_row(): this solvent's row or one for any solvent
    return e;
  }

  // Appends `text` to the method text of `e`, the last one written.
  void extend_method(Estimate &e, std::string_view text) const {
    state_->methods += text;
    e.method_size += text.size();
  }

  std::optional<Estimate> special_ch(const SpecialGroup &g) const {
    const auto *row = special_row(g);
    if (!row) return std::nullopt;  // FORMAT.md: not covered in this solvent
    return special_value(*row);
  }

  std::optional<Estimate> labile(const SpecialGroup *g) const {
    if (!g) return std::nullopt;
    if (g->exchanges && exchanges_) {
      // tables/FORMAT.md (h1_special): in D2O and CD3OD these protons are
      // replaced by deuterium; what remains of them is part of the water
      // signal. Spread: half the widest range the group has in any solvent.
      double half = 0;
      for (const auto &r : g->rows) half = std::max(half, 0.5 * (r.max_ppm - r.min_ppm));
      Estimate e;
      e.ppm = known_ ? water_ppm_ : 4.79;
      e.uncertainty_ppm = half;
      e.exchangeable = true;
      e.observed = false;
      e.method_at = state_->methods.size();
      fmt::format_to(std::back_inserter(state_->methods),
                     "group '{}': exchanges with the deuterium of {} and gives no signal of its own "
                     "(it joins the solvent's water signal at {})",
                     g->name, solvent_name_, fmt_ppm(e.ppm));
      e.method_size = state_->methods.size() - e.method_at;
      return e;
    }
    const auto *row = special_row(*g);
    if (!row) return std::nullopt;
    auto e = special_value(*row);
    e.exchangeable = g->exchanges;
    if (g->exchanges) extend_method(e, "; moves with concentration, water and temperature");
    return e;
  }

  // --- benzene ----------------------------------------------------------------
  std::optional<Estimate> benzene(const SmartsTarget &t, std::size_t k) const {
    if (!tab_.benzene.present) return std::nullopt;
    // Most aromatic protons sit on a ring that is its whole ring system: the
    // only smallest ring holding k, found without ring perception.
    if (LoneRing *lone = lone_ring(t.molecule(), k)) {
      if (lone->atoms.size != 6) return std::nullopt;
      if (!lone->benzene) lone->benzene = make_benzene_ring(t, lone->atoms, true);
      return lone->benzene->benzenoid ? benzene_sum(lone->atoms, *lone->benzene, k) : std::nullopt;
    }
    // A six-membered ring gives a sum only when every bond leaving it is a
    // bridge (make_benzene_ring: a group closing a ring has no row), which
    // makes it its whole ring system; any other system needs no perception.
    const RingSystem *sys = ring_system(t.molecule(), k);
    if (!sys || sys->atoms != 6) return std::nullopt;
    const RingList &rings = t.rings();
    for (std::size_t ring_index = 0; ring_index < rings.size(); ++ring_index) {
      const RingView ring = rings[ring_index];
      if (ring.size() != 6 || std::find(ring.begin(), ring.end(), k) == ring.end()) continue;
      const BenzeneRing &br = benzene_ring(t, ring_index);
      if (!br.benzenoid) continue;
      if (auto e = benzene_sum(ring, br, k)) return e;
    }
    return std::nullopt;
  }

  // What benzene() needs of a six-membered ring, the same for every proton
  // of the ring, so made once per molecule: whether it is a benzene ring,
  // and its groups in the order the sum adds them, each with its ring
  // position and row (null when no row applies, or when the group closes
  // another ring: FORMAT.md leaves fused rings and groups bonded to two ring
  // atoms to the heteroaromatic table).
  struct BenzeneRing {
    struct Group {
      int position;
      const BenzeneRow *row;
    };
    bool benzenoid = false;
    SmallVec<Group, 8> groups;
  };

  // The sum for proton carbon k on benzene ring `ring`, or nothing when a
  // group has no row or sits on k's own carbon, which is not a substituent
  // the table describes.
  std::optional<Estimate> benzene_sum(RingView ring, const BenzeneRing &br,
                                      std::size_t k) const {
    const auto ik = static_cast<int>(std::find(ring.begin(), ring.end(), k) - ring.begin());
    const char *const relation[] = {"", "ortho", "meta", "para"};
    Sum s({"benzene increments"}, kBenzeneSpread);
    s.base(tab_.benzene.base_label, tab_.benzene.base.ppm);
    for (const auto &g : br.groups) {
      const int rel = std::min(std::abs(g.position - ik), 6 - std::abs(g.position - ik));
      if (rel == 0 || !g.row) return std::nullopt;
      s.add(relation[rel], g.row->id, g.row->by_relation[static_cast<std::size_t>(rel)]);
    }
    return from_sum(s);
  }

  // benzene ring `ring_index` of t.rings().
  const BenzeneRing &benzene_ring(const SmartsTarget &t, std::size_t ring_index) const {
    if (state_->benzene_rings.empty()) state_->benzene_rings.resize(t.rings().size());
    auto &slot = state_->benzene_rings[ring_index];
    if (!slot) slot = make_benzene_ring(t, t.rings()[ring_index], false);
    return *slot;
  }

  // `lone`: every bond leaving the ring is a bridge, so no group closes
  // another ring (and no ring perception is needed to tell).
  BenzeneRing make_benzene_ring(const SmartsTarget &t, RingView ring, bool lone) const {
    BenzeneRing out;
    const Molecule &m = t.molecule();
    bool benzenoid = true;
    for (std::size_t i = 0; i < 6 && benzenoid; ++i) {
      const auto &at = m.atom(ring[i]);
      const auto b = m.bond_between(ring[i], ring[(i + 1) % 6]);
      benzenoid = at.atomic_number == 6 && at.aromatic && at.formal_charge == 0 && b >= 0 &&
                  m.bond(static_cast<std::size_t>(b)).order == BondOrder::Aromatic;
    }
    if (!benzenoid) return out;
    out.benzenoid = true;
    Flagged flagged(state_->marks, m.atom_count());
    for (auto a : ring) flagged.set(a);
    const std::vector<bool> &skeleton = flagged.bits();
    for (int ir = 0; ir < 6; ++ir) {
      const auto r = ring[static_cast<std::size_t>(ir)];
      for_heavy_neighbours(m, r, [&](std::size_t x, BondOrder) {
        if (skeleton[x]) return;
        const bool closes_ring = !lone && in_one_ring(t, {r, x});
        const BenzeneRow *row = closes_ring ? nullptr : first_row(tab_.benzene.rows, t, x, skeleton);
        out.groups.push_back(BenzeneRing::Group{ir, row});
      });
    }
    return out;
  }

  // lone_ring() of an atom and its benzene facts, once asked.
  struct LoneRing {
    RingAtoms atoms;
    std::optional<BenzeneRing> benzene;
  };
  static constexpr std::int32_t kLoneUnknown = -1, kLoneNone = -2;

  // lone_ring(m, k), remembered for every atom of the ring.
  LoneRing *lone_ring(const Molecule &m, std::size_t k) const {
    if (state_->lone_of.empty()) state_->lone_of.assign(m.heavy_atom_count(), kLoneUnknown);
    if (k >= state_->lone_of.size()) return nullptr;
    if (state_->lone_of[k] == kLoneUnknown) {
      // The answer holds for every atom of the cycle.
      const auto cycle = aromatic_cycle(m, k);
      state_->lone_of[k] = kLoneNone;
      if (lone_system(cycle.size >= 3 ? ring_system(m, k) : nullptr, cycle.size)) {
        for (auto a : cycle) state_->lone_of[a] = static_cast<std::int32_t>(state_->lone_rings.size());
        state_->lone_rings.push_back(LoneRing{rings_order(m, cycle), std::nullopt});
      } else {
        for (auto a : cycle) state_->lone_of[a] = kLoneNone;
      }
    }
    return state_->lone_of[k] >= 0 ? &state_->lone_rings[static_cast<std::size_t>(state_->lone_of[k])] : nullptr;
  }

  // The ring system of heavy atom k, or null when k lies on no ring; found
  // once per molecule (find_ring_systems()). The rules below ask it before
  // anything that needs ring perception, which costs more than the rest of
  // their work for a fused ring system, and rarely has to run then.
  const RingSystem *ring_system(const Molecule &m, std::size_t k) const {
    if (state_->system_of.empty()) find_ring_systems(m, state_->system_of, state_->systems, state_->ring_walk);
    const auto &of = state_->system_of;
    return k < of.size() && of[k] >= 0 ? &state_->systems[static_cast<std::size_t>(of[k])] : nullptr;
  }

  // Whether bonded heavy atoms a and x share a smallest ring, without ring
  // perception: they do when their bond lies on a cycle (the smallest
  // rings span the cycles, so one of them holds the bond), that is when the
  // bond is no bridge and so joins two atoms of one ring system; a ring
  // through both atoms without their bond would make it lie on a cycle too.
  bool same_ring_system(const Molecule &m, std::size_t a, std::size_t x) const {
    const RingSystem *sys = ring_system(m, a);
    return sys && sys == ring_system(m, x);
  }

  // --- heteroaromatic base values -------------------------------------------
  std::optional<Estimate> hetero(const SmartsTarget &t, std::size_t k) const {
    const Molecule &m = t.molecule();
    for (const std::uint32_t r : hetero_rows(m, k)) {
      const HeteroRow &row = tab_.hetero[r];
      // The screens of match_at on k and its neighbours reject most of the
      // rest before a search. A search per row and proton, anchored at k,
      // costs less than the whole-molecule search per row that was shared by
      // the protons (one rejected by the ring systems now never runs), and
      // neither it nor carry_benzene_terms() starts ring perception.
      if (!row.smarts.root_may_match(t.packed(k)) || !row.searched.neighbours_may_match(t.neighbour_kinds(k)) ||
          !first_mapping_at(row.searched, t, k))
        continue;
      const std::vector<std::uint32_t> &map = state_->hetero_map;
      // The first matching row names the parent; FORMAT.md keeps the rows
      // of different parents apart, so no other row can apply.
      Flagged flagged(state_->marks, m.atom_count());
      for (auto a : map) flagged.set(a);
      const std::vector<bool> &in_ring = flagged.bits();
      int nitrogens = 0, substituents = 0;
      bool n_substituted = false;
      for (auto a : map) {
        const auto &at = m.atom(a);
        if (at.formal_charge != 0) return std::nullopt;  // ring cation or N-oxide
        // The N-alkyl carbon of a 1-alkylazole row is part of that parent:
        // neither a substituent nor a carrier of any.
        if (!at.aromatic) continue;
        if (at.atomic_number == 7) ++nitrogens;
        bool bad = false;
        for_heavy_neighbours(m, a, [&](std::size_t x, BondOrder o) {
          if (in_ring[x]) return;
          // An exocyclic double bond makes a pyridone-type ring, not the parent.
          if (o == BondOrder::Double) bad = true;
          ++substituents;
          if (at.atomic_number == 7) n_substituted = true;
        });
        if (bad) return std::nullopt;
      }
      // FORMAT.md: the imidazole and pyrazole rows average the NH
      // tautomers, so N-substituted azoles without a row of their own
      // (1-alkylimidazole, 1-alkylpyrazole) are not covered.
      if (nitrogens >= 2 && n_substituted) return std::nullopt;
      Sum s({row.scheme}, kHeteroSpread);
      s.base(row.label, row.ppm);
      // Substituents on ring carbons take the benzene increment for their
      // relation to the proton, counted in bonds inside the parent
      // (tables/FORMAT.md, h1_heteroaromatic); the rest are not accounted for.
      const int unaccounted = substituents - carry_benzene_terms(t, k, map, in_ring, s);
      if (unaccounted > 0)
        s.note(std::to_string(unaccounted),
               unaccounted == 1 ? " ring substituent not accounted for: the table gives no increments for this ring"
                                : " ring substituents not accounted for: the table gives no increments for this ring");
      return from_sum(s, unaccounted);
    }
    return std::nullopt;
  }

  // The h1_heteroaromatic rows, in file order, whose rings may fit the ring
  // system of k (RowShape::may_hold), found once per ring system: the other
  // rows need no search, and so no ring perception, for any of its protons.
  const std::vector<std::uint32_t> &hetero_rows(const Molecule &m, std::size_t k) const {
    const RingSystem *sys = ring_system(m, k);
    if (state_->system_rows.empty()) state_->system_rows.resize(state_->systems.size() + 1);
    const auto &systems = state_->systems;
    auto &rows = state_->system_rows[sys ? static_cast<std::size_t>(sys - systems.data()) : systems.size()];
    if (!rows) {
      rows.emplace();
      for (std::size_t r = 0; r < tab_.hetero.size(); ++r)
        if (tab_.hetero[r].shape.may_hold(sys)) rows->push_back(static_cast<std::uint32_t>(r));
    }
    return *rows;
  }

  // Puts into State::hetero_map the first mapping of `p` with pattern atom 0 on
  // atom k in the order for_each_match visits them (ascending along
  // search_order(0)): the rows name the parent ring by it. False when there
  // is none. A search anchored at k needs no ring perception for the rows
  // (searched patterns) and tries only k's own ring; hetero_rows() has left
  // out the rows whose ring k's ring system cannot hold.
  bool first_mapping_at(const SmartsPattern &p, const SmartsTarget &t, std::size_t k) const {
    state_->anchor.assign(1, static_cast<std::int64_t>(k));
    const std::function<bool(const std::vector<std::uint32_t> &)> keep = [this](const std::vector<std::uint32_t> &map) {
      state_->hetero_map.assign(map.begin(), map.end());
      return true;
    };
    return for_each_match(p, t, state_->anchor, {}, keep);
  }

  // Adds to `s` the benzene increments of the groups on the aromatic ring
  // carbons of parent match `map` (ring atoms flagged in `in_ring`) that lie
  // one to three bonds from the proton's carbon k inside the parent, and
  // returns how many groups it accounted for. Each carried-over term widens
  // the uncertainty by kCarriedOverPpm. A group without a benzene row, one
  // closing another ring, or one farther away is left out (the caller says so).
  int carry_benzene_terms(const SmartsTarget &t, std::size_t k, const std::vector<std::uint32_t> &map,
                          const std::vector<bool> &in_ring, Sum &s) const {
    const Molecule &m = t.molecule();
    if (!tab_.benzene.present) return 0;
    // Distances by position in `map`, which holds every atom flagged in
    // `in_ring`: the few atoms of one ring, not an array per molecule atom.
    auto position = [&](std::size_t a) {
      return static_cast<std::size_t>(std::find(map.begin(), map.end(), a) - map.begin());
    };
    SmallVec<int, 16> dist;
    for (std::size_t j = 0; j < map.size(); ++j) dist.push_back(-1);
    dist[position(k)] = 0;
    SmallVec<std::uint32_t, 16> queue;
    queue.push_back(static_cast<std::uint32_t>(position(k)));
    for (std::size_t i = 0; i < queue.size(); ++i) {
      const std::uint32_t from = queue[i];
      const int next = dist[from] + 1;
      for_heavy_neighbours(m, map[from], [&](std::size_t z, BondOrder) {
        if (!in_ring[z]) return;
        const auto p = position(z);
        if (dist[p] < 0) dist[p] = next, queue.push_back(static_cast<std::uint32_t>(p));
      });
    }
    const char *const relation[] = {"", "ortho (carried over)", "meta (carried over)", "para (carried over)"};
    int carried = 0;
    for (std::size_t j = 0; j < map.size(); ++j) {
      const std::size_t a = map[j];
      const auto &at = m.atom(a);
      const int d = dist[j];
      if (at.atomic_number != 6 || !at.aromatic || d < 1 || d > 3) continue;
      for_heavy_neighbours(m, a, [&](std::size_t x, BondOrder) {
        if (in_ring[x] || same_ring_system(m, a, x)) return;
        const auto *b = first_row(tab_.benzene.rows, t, x, in_ring);
        if (!b) return;
        const auto rel = static_cast<std::size_t>(d);
        s.add(relation[rel], b->id, b->by_relation[rel]);
        s.widen(kCarriedOverPpm);
        ++carried;
      });
    }
    return carried;
  }

  // --- alkenes (Pascual-Meier-Simon) -----------------------------------------
  // Operational reading of "conjugated" (tables/FORMAT.md, h1_alkene).
  static bool conjugated(const Molecule &m, std::size_t ca, std::size_t cb, std::size_t sub) {
    for (auto c : {ca, cb})
      for (auto n : heavy_neighbours(m, c))
        if (n != ca && n != cb && n != sub && unsaturated(m, n)) return true;
    std::vector<std::size_t> partners;
    for_heavy_neighbours(m, sub, [&](std::size_t x, BondOrder o) {
      if (o == BondOrder::Double || o == BondOrder::Triple) partners.push_back(x);
    });
    std::vector<std::size_t> units{sub};
    units.insert(units.end(), partners.begin(), partners.end());
    for (auto a : units)
      for (auto n : heavy_neighbours(m, a)) {
        if (n == ca || n == cb || n == sub || std::find(partners.begin(), partners.end(), n) != partners.end())
          continue;
        if (unsaturated(m, n)) return true;
      }
    return false;
  }

  bool variant_holds(const SmartsTarget &t, Variant v, std::size_t ca, std::size_t cb, std::size_t sub) const {
    switch (v) {
      case Variant::Any: return true;
      case Variant::InRing: return in_one_ring(t, {ca, cb, sub});
      case Variant::Conjugated: return conjugated(t.molecule(), ca, cb, sub);
      case Variant::Isolated: return !conjugated(t.molecule(), ca, cb, sub);
    }
    return false;
  }

  // A light CIP comparison for the E assumption: atomic number (then mass),
  // then the sorted atomic numbers of the next sphere with duplicated atoms
  // for multiple bonds; graph rank and index break remaining ties.
  static std::vector<int> cip_key(const Molecule &m, std::size_t from, std::size_t x) {
    const auto &ax = m.atom(x);
    std::vector<int> next;
    const auto *bid = m.bond_ids_begin(x);
    for (auto it = m.neighbours_begin(x); it != m.neighbours_end(x); ++it, ++bid) {
      if (*it == from) continue;
      const int z = m.atom(*it).atomic_number;
      const auto o = m.bond(*bid).order;
      const int copies = o == BondOrder::Triple ? 3 : (o == BondOrder::Double || o == BondOrder::Aromatic) ? 2 : 1;
      for (int i = 0; i < copies; ++i) next.push_back(z);
    }
    std::sort(next.rbegin(), next.rend());
    std::vector<int> key{ax.atomic_number, ax.isotope};
    key.insert(key.end(), next.begin(), next.end());
    return key;
  }

  // Of two atoms bonded to `centre`, the one of higher priority.
  static std::size_t higher(const ShiftQuery &q, std::size_t centre, std::size_t x, std::size_t y, bool cip) {
    const Molecule &m = q.molecule;
    if (cip) {
      const auto kx = cip_key(m, centre, x), ky = cip_key(m, centre, y);
      if (kx != ky) return kx > ky ? x : y;
    }
    const auto &rank = q.classes.invariant_rank;
    if (x < rank.size() && y < rank.size() && rank[x] != rank[y]) return rank[x] > rank[y] ? x : y;
    return std::min(x, y);
  }

  std::optional<Estimate> alkene(const ShiftQuery &q, const SmartsTarget &t, std::size_t h, std::size_t ca,
                                 std::size_t cb) const {
    const Molecule &m = t.molecule();
    if (!tab_.alkene.present) return std::nullopt;
    const auto &b = m.atom(cb);
    if (b.aromatic || b.formal_charge != 0 || b.radical_electrons != 0) return std::nullopt;
    if (m.degree(ca) != 3 || m.degree(cb) != 3) return std::nullopt;
    // Cumulated double bonds (allenes) are not covered (FORMAT.md).
    for (auto c : {ca, cb}) {
      int multiple = 0;
      const auto *bid = m.bond_ids_begin(c);
      for (std::size_t i = 0; i < m.degree(c); ++i) multiple += m.bond(bid[i]).order != BondOrder::Single;
      if (multiple != 1) return std::nullopt;
    }
    // Strained ring alkenes (cyclopropene, cyclobutene) are not covered.
    if (in_one_ring(t, {ca, cb}, 4)) return std::nullopt;
    std::size_t other_a = ca;  // ca's third neighbour (heavy atom or hydrogen)
    std::vector<std::size_t> on_b;  // cb's two other neighbours
    for (auto it = m.neighbours_begin(ca); it != m.neighbours_end(ca); ++it)
      if (*it != cb && *it != h) other_a = *it;
    for (auto it = m.neighbours_begin(cb); it != m.neighbours_end(cb); ++it)
      if (*it != ca) on_b.push_back(*it);
    if (other_a == ca || on_b.size() != 2) return std::nullopt;

    Flagged flagged(state_->marks, m.atom_count());
    flagged.set(ca);
    flagged.set(cb);
    const std::vector<bool> &skeleton = flagged.bits();
    const AlkeneTable &tab = tab_.alkene;
    auto row_for = [&](std::size_t s) {
      return first_row(tab.rows, t, s, skeleton,
                       [&](const AlkeneRow &r) { return variant_holds(t, r.variant, ca, cb, s); });
    };

    // Which neighbour of cb is cis to h.
    std::string geometry_note;
    bool assumed = false;
    std::size_t cis_b = on_b[0];
    const bool heavy0 = !m.is_hydrogen(on_b[0]), heavy1 = !m.is_hydrogen(on_b[1]);
    if (heavy0 || heavy1) {
      const int known = known_cis(t, ca, cb, h, other_a, on_b[0]);
      if (known >= 0) {
        cis_b = known ? on_b[0] : on_b[1];
      } else if (m.is_hydrogen(other_a)) {
        // =CH2 end without given geometry: the lower-index proton is taken
        // cis to the higher-ranked group on the other carbon.
        const std::size_t top = (heavy0 && heavy1) ? higher(q, cb, on_b[0], on_b[1], false)
                                                   : (heavy0 ? on_b[0] : on_b[1]);
        const std::size_t other_top = top == on_b[0] ? on_b[1] : on_b[0];
        cis_b = h < other_a ? top : other_top;
        geometry_note = fmt::format("geometry of the =CH2 protons not given; the lower-index proton (H{}) is taken "
                                    "cis to {}",
                                    std::min(h, other_a), atom_label(m, top));
      } else {
        // Substituents on both carbons and no geometry given: E assumed,
        // i.e. h cis to the higher-priority group on cb.
        cis_b = (heavy0 && heavy1) ? higher(q, cb, on_b[0], on_b[1], true) : (heavy0 ? on_b[0] : on_b[1]);
        geometry_note = "geometry not given; E assumed";
        assumed = true;
      }
    }

    Sum s({"alkene increments (Pascual-Meier-Simon)"}, kAlkeneSpread);
    s.base(tab.base_label, tab.base.ppm);
    int count = 0;
    auto term = [&](std::size_t x, const char *role) -> bool {
      if (m.is_hydrogen(x)) return true;
      const auto *row = row_for(x);
      if (!row) return false;
      const std::string_view r(role);
      s.add(r, row->id, r == "gem" ? row->gem : r == "cis" ? row->cis : row->trans);
      ++count;
      return true;
    };
    if (!term(other_a, "gem")) return std::nullopt;
    for (auto x : on_b)
      if (!term(x, x == cis_b ? "cis" : "trans")) return std::nullopt;
    if (!geometry_note.empty()) s.note(std::move(geometry_note));
    if (assumed) s.widen(kAssumedGeometryPpm);
    if (in_one_ring(t, {ca, cb}, 5)) {
      // A ring partner conjugated with the C=C and trans to h moves h further
      // in a five-membered ring than the open-chain rule says (FORMAT.md,
      // h1_alkene, kind ring-correction).
      for (auto x : on_b) {
        if (x == cis_b || m.is_hydrogen(x) || !in_one_ring(t, {ca, cb, x}, 5)) continue;
        if (const auto *row = first_row(tab.ring5, t, x, skeleton)) s.add("trans, five-membered ring", row->id, row->trans);
      }
      s.note({}, "C=C in a five-membered ring, outside the rule's tested scope");
      s.widen(kFiveRingAlkenePpm);
    }
    return from_sum(s, count);
  }

  // 1 when h (on ca) is cis to y (on cb), 0 when trans, -1 when neither a
  // small ring nor the input fixes the geometry. `g` is ca's third neighbour.
  static int known_cis(const SmartsTarget &t, std::size_t ca, std::size_t cb, std::size_t h, std::size_t g,
                       std::size_t y) {
    const Molecule &m = t.molecule();
    std::size_t y2 = y;
    for (auto it = m.neighbours_begin(cb); it != m.neighbours_end(cb); ++it)
      if (*it != ca && *it != y) y2 = *it;
    // In a ring of up to 7 atoms the ring bonds leave the double bond on
    // the same side (io/ gives such bonds no stereo entry).
    if (!m.is_hydrogen(g)) {
      if (!m.is_hydrogen(y) && in_one_ring(t, {ca, cb, g, y}, 7)) return 0;
      if (y2 != y && !m.is_hydrogen(y2) && in_one_ring(t, {ca, cb, g, y2}, 7)) return 1;
    }
    for (const auto &d : m.double_bond_stereo()) {
      std::size_t ra, rb;
      if (d.begin == ca && d.end == cb) ra = d.ref_begin, rb = d.ref_end;
      else if (d.begin == cb && d.end == ca) ra = d.ref_end, rb = d.ref_begin;
      else continue;
      // A reference atom other than ours is the other group on that carbon,
      // which flips the relation.
      const bool cis = (d.cis != (ra != h)) != (rb != y);
      return cis ? 1 : 0;
    }
    return -1;
  }

  // --- C=C of a lactam ring --------------------------------------------------
  // A ring of C and N atoms that perception calls aromatic but that carries
  // a ring C=O (2-pyridones, uracils, quinolin-2-ones) has no heteroaromatic
  // parent (hetero() refuses it): its C-H sit on the C=C of an enone or
  // enamide, and the Pascual-Meier-Simon rule reads them as such
  // (tables/FORMAT.md, h1_alkene).
  std::optional<Estimate> ring_enone(const SmartsTarget &t, std::size_t ca) const {
    const Molecule &m = t.molecule();
    if (!tab_.alkene.present || m.hydrogen_count(ca) != 1 || m.degree(ca) != 3) return std::nullopt;
    // The ring and its C=O carbon lie in ca's ring system: without such a
    // carbon there, no ring perception is needed to tell.
    const RingSystem *sys = ring_system(m, ca);
    if (!sys || !sys->carbonyl) return std::nullopt;
    for (const auto ring : t.rings()) {
      const std::size_t n = ring.size();
      const auto pos = static_cast<std::size_t>(std::find(ring.begin(), ring.end(), ca) - ring.begin());
      if ((n != 5 && n != 6) || pos == n) continue;
      Flagged members(state_->marks2, m.atom_count());
      for (auto a : ring) members.set(a);
      const std::vector<bool> &member = members.bits();
      // Ring atoms that can carry a ring double bond: aromatic carbons and
      // two-connected nitrogens without an exocyclic double bond.
      std::vector<bool> open(n, false);
      bool oxo = false, aromatic = true;
      for (std::size_t i = 0; i < n; ++i) {
        const auto a = ring[i];
        // Lactam rings only: in 2-pyranones and coumarins the rule leaves
        // H-3 near 5.8 against 6.2-6.4 (4-methylcoumarins).
        aromatic = aromatic && m.atom(a).aromatic && (m.atom(a).atomic_number == 6 || m.atom(a).atomic_number == 7);
        const auto exo = exocyclic_double(m, a, member);
        const int z = m.atom(a).atomic_number;
        oxo = oxo || (exo >= 0 && z == 6 && m.atom(static_cast<std::size_t>(exo)).atomic_number == 8);
        open[i] = exo < 0 && (z == 6 || (z == 7 && m.degree(a) == 2));
      }
      if (!aromatic || !oxo) continue;
      // The ring double bonds pair the open atoms run by run from the end
      // next to a closed atom (the Kekule structure with the C=O outside).
      std::size_t start = 0;
      while (start < n && open[start]) ++start;
      if (start == n) continue;
      std::size_t cb = ca;
      std::vector<std::size_t> run;
      for (std::size_t k = 1; k <= n; ++k) {
        const auto i = (start + k) % n;
        if (open[i]) run.push_back(i);
        if (open[i] && k < n) continue;
        const auto at = std::find(run.begin(), run.end(), pos);
        if (at != run.end() && run.size() % 2 == 0) {
          const auto j = static_cast<std::size_t>(at - run.begin());
          cb = ring[run[j % 2 == 0 ? j + 1 : j - 1]];
        }
        run.clear();
      }
      if (cb == ca || m.atom(cb).atomic_number != 6) continue;
      const std::size_t g = ring[(pos + 1) % n] == cb ? ring[(pos + n - 1) % n] : ring[(pos + 1) % n];
      std::size_t y = cb, z = cb;  // cb's ring neighbour (trans to the proton) and its other one (cis)
      for (auto x : heavy_neighbours(m, cb))
        if (x != ca) (member[x] ? y : z) = x;
      if (y == cb) continue;
      Flagged flagged(state_->marks, m.atom_count());
      flagged.set(ca);
      flagged.set(cb);
      const std::vector<bool> &skeleton = flagged.bits();
      Sum s({"alkene increments (Pascual-Meier-Simon)"}, kAlkeneSpread);
      s.base(tab_.alkene.base_label, tab_.alkene.base.ppm);
      int count = 0;
      bool donor = false, acceptor = false;
      auto term = [&](std::size_t x, const char *role) -> bool {
        const AlkeneRow *row = nullptr;
        if (m.atom(x).aromatic) {
          const auto id = ring_member_row(t, ca, cb, x);
          donor |= id == "alkoxy-conj" || id == "amino-conj";
          acceptor |= id == "amide" || id == "ester" || id == "ester-conj" || id == "keto" || id == "keto-conj";
          for (const auto &r : tab_.alkene.rows)
            if (r.id == id) row = &r;
        } else {
          row = first_row(tab_.alkene.rows, t, x, skeleton,
                          [&](const AlkeneRow &r) { return variant_holds(t, r.variant, ca, cb, x); });
        }
        if (!row) return false;
        const std::string_view r(role);
        s.add(r, row->id, r == "gem" ? row->gem : r == "cis" ? row->cis : row->trans);
        ++count;
        return true;
      };
      if (!term(g, "gem") || !term(y, "trans") || (z != cb && !term(z, "cis"))) return std::nullopt;
      // A ring O or plain ring N on the C=C together with a ring C=O makes a
      // push-pull system (4-pyranones, 4-pyridones), which the rule does not
      // cover (FORMAT.md, h1_alkene): 4-pyranone H-3 comes out near 5.3
      // against about 6.4.
      if (donor && acceptor) return std::nullopt;
      s.note({}, "ring C=C of a pyridone-type ring, read as an open enone");
      s.widen(kRingEnonePpm);
      return from_sum(s, count);
    }
    return std::nullopt;
  }

  // The neighbour of `a` outside the ring (`member`) bonded to it by a double
  // bond, or -1.
  static std::int64_t exocyclic_double(const Molecule &m, std::size_t a, const std::vector<bool> &member) {
    std::int64_t out = -1;
    const auto *bid = m.bond_ids_begin(a);
    for (auto it = m.neighbours_begin(a); it != m.neighbours_end(a); ++it, ++bid)
      if (!member[*it] && m.bond(*bid).order == BondOrder::Double) out = static_cast<std::int64_t>(*it);
    return out;
  }

  // The h1_alkene row id for an aromatic atom x bonded to the ring C=C
  // (ca=cb) of a pyridone-type ring, named by what x is in the open-chain
  // reading; empty when there is none.
  std::string ring_member_row(const SmartsTarget &t, std::size_t ca, std::size_t cb, std::size_t x) const {
    const Molecule &m = t.molecule();
    const bool conj = conjugated(m, ca, cb, x);
    auto carbonyl = [&](std::size_t c) {
      const std::vector<bool> none(m.atom_count(), false);
      const auto o = exocyclic_double(m, c, none);
      return m.atom(c).atomic_number == 6 && o >= 0 && m.atom(static_cast<std::size_t>(o)).atomic_number == 8;
    };
    const int zx = m.atom(x).atomic_number;
    if (zx == 8) return "alkoxy-conj";
    if (zx == 7) {
      for (auto w : heavy_neighbours(m, x))
        if (w != ca && w != cb && carbonyl(w)) return "acylamino";
      return "amino-conj";
    }
    if (zx != 6) return {};
    if (carbonyl(x)) {
      for (auto w : heavy_neighbours(m, x)) {
        if (w == ca || w == cb || (m.atom(w).atomic_number == 8 && !m.atom(w).aromatic && m.degree(w) == 1)) continue;
        const int zw = m.atom(w).atomic_number;
        if (zw == 7) return "amide";
        if (zw == 8) return conj ? "ester-conj" : "ester";
        if (zw == 6) return conj ? "keto-conj" : "keto";
      }
      return {};
    }
    // A carbon of a fused benzene ring is an aryl group; one of the same
    // ring is the other end of a conjugated C=C.
    for (const auto r : t.rings())
      if (r.size() == 6 && std::find(r.begin(), r.end(), x) != r.end() &&
          std::all_of(r.begin(), r.end(), [&](std::uint32_t a) { return m.atom(a).atomic_number == 6; }) &&
          std::find(r.begin(), r.end(), ca) == r.end())
        return "aryl";
    return "alkenyl-conj";
  }

  // --- sp3 C-H: Shoolery's rule and the position table -----------------------
  // At most four values (an sp3 carbon's neighbours, or some of them), kept
  // in place rather than in a vector per carbon.
  template <class T>
  class Four {
   public:
    void push_back(T v) {
      if (count_ < values_.size()) values_[count_++] = v;
    }
    std::size_t size() const { return count_; }
    bool empty() const { return count_ == 0; }
    T operator[](std::size_t i) const { return values_[i]; }
    const T *begin() const { return values_.data(); }
    const T *end() const { return values_.data() + count_; }

   private:
    std::array<T, 4> values_{};
    std::size_t count_ = 0;
  };

  struct Sp3Neighbours : Four<std::size_t> {
    Sp3Neighbours(const Molecule &m, std::size_t c) {
      for_heavy_neighbours(m, c, [&](std::size_t x, BondOrder) { push_back(x); });
    }
  };

  // A few atoms flagged in `bits`, scratch kept by the source (all false
  // between uses, never shorter than the molecule), cleared again when this
  // ends: a skeleton per carbon without a vector per carbon.
  class Flagged {
   public:
    Flagged(std::vector<bool> &bits, std::size_t atom_count) : bits_(bits) {
      if (bits_.size() < atom_count) bits_.assign(atom_count, false);
    }
    Flagged(const Flagged &) = delete;
    Flagged &operator=(const Flagged &) = delete;
    ~Flagged() {
      for (auto a : set_) bits_[a] = false;
    }
    void set(std::size_t a) {
      bits_[a] = true;
      set_.push_back(static_cast<std::uint32_t>(a));
    }
    const std::vector<bool> &bits() const { return bits_; }

   private:
    std::vector<bool> &bits_;
    SmallVec<std::uint32_t, 16> set_;
  };

  std::optional<Estimate> sp3(const SmartsTarget &t, std::size_t c) const {
    const ShooleryTable &tab = tab_.shoolery;
    if (!tab.present) return std::nullopt;
    // Ring strain in three-membered rings (cyclopropanes, epoxides,
    // aziridines) is not covered (FORMAT.md). A carbon of a four-membered
    // ring takes the open-chain value plus the ring term of row ring4-ch2
    // (FORMAT.md, h1_shoolery step 4); without that row it is not covered.
    const Sp3Neighbours nbrs(t.molecule(), c);
    const int ring = small_ring(t.molecule(), c, nbrs);
    if (ring == 3 || (ring == 4 && !tab.ring4.set)) return std::nullopt;
    auto est = sp3_chain(t, c, nbrs);
    if (!est || ring != 4) return est;
    est->ppm += tab.ring4.ppm;
    est->uncertainty_ppm = std::hypot(est->uncertainty_ppm, kRing4Ppm);
    extend_method(*est, fmt::format(" + four-membered ring {} {} = {}", tab.ring4.id, fmt_ppm(tab.ring4.ppm),
                                    fmt_ppm(est->ppm)));
    return est;
  }

  // SmartsTarget::smallest_ring(c) where that is 3 or 4, else 0, without
  // ring perception, which costs more than the rest of most molecules' rules.
  // The smallest rings (graph/smarts.hpp) keep every triangle, and a
  // four-cycle through an atom on no triangle is no sum of triangles (a
  // triangle holding one of its bonds at the atom would hold the atom), so
  // it is kept too: both show in the atom's neighbourhood.
  static int small_ring(const Molecule &m, std::size_t c, const Sp3Neighbours &nbrs) {
    const std::size_t n = nbrs.size();
    for (std::size_t i = 0; i < n; ++i)
      for (std::size_t j = i + 1; j < n; ++j)
        if (m.bond_between(nbrs[i], nbrs[j]) >= 0) return 3;
    for (std::size_t i = 0; i < n; ++i)
      for (std::size_t j = i + 1; j < n; ++j)
        for (auto it = m.neighbours_begin(nbrs[i]); it != m.neighbours_end(nbrs[i]); ++it)
          if (*it != c && !m.is_hydrogen(*it) && m.bond_between(*it, nbrs[j]) >= 0) return 4;
    return 0;
  }

  std::optional<Estimate> sp3_chain(const SmartsTarget &t, std::size_t c, const Sp3Neighbours &nbrs) const {
    const Molecule &m = t.molecule();
    const ShooleryTable &tab = tab_.shoolery;
    const std::size_t n_h = m.hydrogen_count(c);
    if (n_h == 4) {
      if (!tab.shoolery_base.set) return std::nullopt;
      Sum s({"Shoolery's rule"}, kShoolerySpread);
      s.base(tab.shoolery_base_label, tab.shoolery_base.ppm);
      return from_sum(s);
    }
    if (n_h < 1 || n_h > 3) return std::nullopt;
    Flagged flagged(state_->marks, m.atom_count());
    flagged.set(c);
    const std::vector<bool> &skeleton = flagged.bits();
    // Sort the neighbours: `direct` groups (not an sp3 carbon), `shoolery`
    // sp3 carbons that are groups of their own in Shoolery's table (CF3,
    // CF2R), `beta` sp3 carbons carrying a group one bond further (the
    // group atoms are counted), and clean alkyl carbons.
    Four<std::size_t> direct, own, beta;
    Four<int> beta_groups;
    // Each neighbour's sigma row, found once: Shoolery's rule below asks
    // again for the rows looked up here.
    std::array<const ValueRow *, 4> sigma{};
    std::array<bool, 4> sigma_found{};
    auto sigma_row = [&](std::size_t i) {
      if (!sigma_found[i]) sigma[i] = first_row(tab.sigma, t, nbrs[i], skeleton), sigma_found[i] = true;
      return sigma[i];
    };
    for (std::size_t i = 0; i < nbrs.size(); ++i) {
      const std::size_t n = nbrs[i];
      if (!is_sp3_carbon(m, n)) {
        direct.push_back(n);
        continue;
      }
      int groups = 0;
      for_heavy_neighbours(m, n, [&](std::size_t y, BondOrder) {
        if (y != c && !is_sp3_carbon(m, y)) ++groups;
      });
      if (groups == 0) continue;
      const auto *sg = sigma_row(i);
      if (sg && sg->id != "sigma-alkyl") {
        own.push_back(n);
      } else {
        beta.push_back(n);
        beta_groups.push_back(groups);
      }
    }
    const std::size_t n_groups = direct.size() + own.size();
    const char *const type[] = {"", "CH", "CH2", "CH3"};
    // A group alpha with others beta (step 3b), and a CH taking carried-over
    // beta steps (step 3c), are summed only with at most two groups within
    // two bonds in all, and a CH only with at most one of them bonded
    // through a heteroatom (as in step 1a): beyond that the sums overshoot
    // as Shoolery's does on a CH (sugar ring CH-OH 1.1-1.4 ppm, vicinal
    // dibromides, cyclic carbonate CH and HOCH2-CBr3 0.4-1.2 ppm too high).
    int beta_total = 0, hetero_groups = 0;
    for (int g : beta_groups) beta_total += g;
    for (auto d : direct) hetero_groups += m.atom(d).atomic_number != 6;
    for (auto b : beta)
      for_heavy_neighbours(m, b, [&](std::size_t y, BondOrder) {
        hetero_groups += y != c && !is_sp3_carbon(m, y) && m.atom(y).atomic_number != 6;
      });
    const bool carried = n_h == 1 && tab.beta[1].empty() && !beta.empty();
    if (!beta.empty() && (n_groups > 0 || carried) && n_groups + beta_total > 2) return std::nullopt;
    if (carried && hetero_groups > 1) return std::nullopt;

    auto shoolery = [&](Spread spread) -> std::optional<Estimate> {
      // Shoolery's rule for CH2XY: 0.23 + sigma(X) + sigma(Y); clean alkyl
      // takes the sigma of row sigma-alkyl (FORMAT.md, h1_shoolery step 1).
      if (!tab.shoolery_base.set) return std::nullopt;
      Sum s({"Shoolery's rule"}, spread);
      s.base(tab.shoolery_base_label, tab.shoolery_base.ppm);
      for (std::size_t i = 0; i < nbrs.size(); ++i) {
        const auto *row = sigma_row(i);
        if (!row) return std::nullopt;
        s.add("", row->id, row->ppm);
      }
      return from_sum(s, 0);
    };

    if (n_h == 2 && nbrs.size() == 2 && n_groups == 2) return shoolery(kShoolerySpread);
    // CHXYZ with two or three groups, at most one of them bonded through a
    // heteroatom and at most one a C=O or C#N carbon (FORMAT.md, h1_shoolery
    // step 1a): beyond that the sum overshoots by 0.5-2 ppm (CHCl3,
    // orthoformates, acetals, malonates, cyanoacetates).
    if (n_h == 1 && nbrs.size() == 3 && n_groups >= 2) {
      int hetero = 0, acceptor = 0;
      for (auto n : nbrs) {
        hetero += m.atom(n).atomic_number != 6;
        bool polar = false;
        for_heavy_neighbours(m, n, [&](std::size_t y, BondOrder o) {
          polar |= o != BondOrder::Single && o != BondOrder::Aromatic && m.atom(y).atomic_number != 6;
        });
        acceptor += polar;
      }
      if (hetero <= 1 && acceptor <= 1) return shoolery(kShooleryMethineSpread);
      return std::nullopt;
    }
    if (n_groups == 1) {
      if (!own.empty()) {
        // A group with only a sigma row (CF3, CF2R) next to a CH2.
        if (n_h == 2 && nbrs.size() == 2 && beta.empty()) return shoolery(kShoolerySpread);
        return std::nullopt;
      }
      const auto *row = first_row(tab.alpha[n_h], t, direct[0], skeleton);
      if (!row) {
        if (n_h == 2 && nbrs.size() == 2 && beta.empty()) return shoolery(kShoolerySpread);
        return std::nullopt;
      }
      if (!beta.empty()) {
        // A group alpha and others beta (FORMAT.md step 3b): the alpha row
        // plus each beta row's step above the plain alkane, as in step 3a.
        Sum s({"position table (", type[n_h], " alpha to a group, beta to others, additive)"}, kAlphaBetaSpread);
        s.base(row->label, row->ppm);
        if (!add_beta_steps(t, c, n_h, beta, s)) return std::nullopt;
        return from_sum(s);
      }
      static constexpr std::string_view kDerived = "-arylamino";
      const bool derived = row->id.size() > kDerived.size() &&
                           row->id.compare(row->id.size() - kDerived.size(), kDerived.size(), kDerived) == 0;
      Sum s({"position table (", type[n_h], " alpha to a group)"}, derived ? kDerivedAlphaSpread : kAlphaSpread);
      s.base(row->label, row->ppm);
      return from_sum(s, 0);
    }
    if (n_groups > 1) return std::nullopt;  // CH2XY with three heavy neighbours
    if (!beta.empty()) {
      if (beta.size() == 1 && beta_groups[0] == 1 && !tab.beta[n_h].empty()) {
        // Exactly one group one bond further away (FORMAT.md step 3).
        const auto *row = first_row(tab.beta[n_h], t, beta[0], skeleton);
        if (!row) return std::nullopt;
        Sum s({"position table (", type[n_h], " beta to a group)"}, kBetaSpread);
        s.base(row->label, row->ppm);
        return from_sum(s, 0);
      }
      return beta_sum(t, c, n_h, beta);
    }
    const auto &alk = tab.alkane[n_h];
    if (!alk.set) return std::nullopt;
    Sum s({"position table (", type[n_h], " with no group within two bonds)"}, kAlkaneSpread);
    s.base(alk.label, alk.ppm);
    return from_sum(s, 0);
  }

  // Several groups one bond further away (FORMAT.md step 3a): each adds the
  // difference between its beta row and the alkane value, as increments add
  // in additive schemes. Every group must have a row.
  std::optional<Estimate> beta_sum(const SmartsTarget &t, std::size_t c, std::size_t n_h,
                                   const Four<std::size_t> &beta) const {
    const auto &alk = tab_.shoolery.alkane[n_h];
    if (!alk.set) return std::nullopt;
    const char *const type[] = {"", "CH", "CH2", "CH3"};
    int groups = 0;
    for (auto b : beta)
      for_heavy_neighbours(t.molecule(), b, [&](std::size_t y, BondOrder) {
        groups += y != c && !is_sp3_carbon(t.molecule(), y);
      });
    Sum s({"position table (", type[n_h], " beta to ", groups == 1 ? "a group" : "several groups", ", additive)"},
          kBetaSumSpread);
    s.base(alk.label, alk.ppm);
    if (!add_beta_steps(t, c, n_h, beta, s)) return std::nullopt;
    return from_sum(s);
  }

  // Adds to `s`, for every group on the sp3 carbons `beta` next to c, its
  // beta row minus the plain alkane value; false when a group has no row.
  // The position table has no beta rows for CH: a CH takes the steps of the
  // CH2 rows (FORMAT.md step 3c), each widening the uncertainty.
  bool add_beta_steps(const SmartsTarget &t, std::size_t c, std::size_t n_h, const Four<std::size_t> &beta,
                      Sum &s) const {
    const Molecule &m = t.molecule();
    const ShooleryTable &tab = tab_.shoolery;
    const bool carried = n_h == 1 && tab.beta[1].empty();
    const std::size_t rows_h = carried ? 2 : n_h;
    const auto &alk = tab.alkane[rows_h];
    if (!alk.set || tab.beta[rows_h].empty()) return false;
    for (auto b : beta) {
      Four<std::size_t> groups;
      for_heavy_neighbours(m, b, [&](std::size_t y, BondOrder) {
        if (y != c && !is_sp3_carbon(m, y)) groups.push_back(y);
      });
      for (auto y : groups) {
        // The other groups on b join the skeleton, so the row's group atom
        // can only be y.
        Flagged skeleton(state_->marks2, m.atom_count());
        skeleton.set(c);
        for (auto z : groups)
          if (z != y) skeleton.set(z);
        const auto *row = first_row(tab.beta[rows_h], t, b, skeleton.bits());
        if (!row) return false;
        s.add(carried ? "(carried over from CH2)" : "", row->id, row->ppm - alk.ppm);
        if (carried) s.widen(kBetaCarriedPpm);
      }
    }
    return true;
  }

  std::shared_ptr<const H1IncrementTables> parsed_;
  const H1IncrementTables &tab_;
  std::string solvent_name_;
  bool exchanges_ = false;
  bool known_ = false;
  double water_ppm_ = 0;
  mutable const ShiftQuery *query_ = nullptr;
  mutable const SmartsTarget *target_ = nullptr;
  // What the source finds out about the current molecule, and scratch: the
  // thread's own, lent to one call after another (ThreadLease), so that
  // the buffers keep their capacity; a source per call allocated them
  // anew for every molecule.
  struct State {
    std::vector<std::optional<BenzeneRing>> benzene_rings;  // see benzene_ring()
    std::vector<std::int32_t> lone_of;  // per heavy atom: index into lone_rings, or kLoneUnknown/None
    std::vector<LoneRing> lone_rings;   // see lone_ring()
    // first_mapping_at()'s anchor and answer, kept for their capacity.
    std::vector<std::int64_t> anchor;
    std::vector<std::uint32_t> hetero_map;
    std::vector<std::int32_t> system_of;  // see ring_system()
    // Flagged scratch: marks for the skeleton or ring of one rule, marks2
    // for a second set while that is in use (add_beta_steps() within
    // sp3_chain(), the ring of ring_enone()).
    std::vector<bool> marks, marks2;
    std::vector<RingSystem> systems;
    RingWalk ring_walk;  // find_ring_systems()'s buffers
    std::vector<std::optional<std::vector<std::uint32_t>>> system_rows;  // see hetero_rows()
    // evaluate()'s answers by atom, and the method texts of the estimates
    // made for this molecule (Estimate::method_at).
    std::vector<Memo> memo;
    std::string methods;
  };
  mutable ThreadLease<State> state_;
};

}  // namespace

std::shared_ptr<const H1IncrementTables> parse_h1_increment_tables(const Tables &tables) {
  auto out = std::make_shared<H1IncrementTables>();
  read_shoolery(tables, out->shoolery);
  read_alkene(tables, out->alkene);
  read_benzene(tables, out->benzene);
  read_hetero(tables, out->hetero);
  read_special(tables, out->special);
  read_solvents(tables, *out);
  return out;
}

const std::vector<Solvent> *parsed_solvents(const H1IncrementTables &parsed) {
  return parsed.has_solvents ? &parsed.solvents : nullptr;
}

std::unique_ptr<ShiftSource> make_h1_increments(std::shared_ptr<const H1IncrementTables> parsed,
                                                std::string solvent) {
  if (!parsed) throw InternalError("make_h1_increments: no parsed tables");
  return std::make_unique<H1Increments>(std::move(parsed), std::move(solvent));
}

}  // namespace nmrpred::detail
