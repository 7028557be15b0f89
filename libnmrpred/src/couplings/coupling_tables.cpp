// Reading tables/couplings/*.tsv (tables/FORMAT.md, "Coupling tables").
// Every check here names file and line, so a bad replacement table set fails
// at load time rather than giving odd couplings later.

#include "couplings/coupling_tables.hpp"

#include <nmrpred/error.hpp>
#include <nmrpred/molecule.hpp>

#include <algorithm>
#include <cctype>
#include <cmath>
#include <iterator>
#include <limits>
#include <set>
#include <string>

#include <fmt/format.h>

#include "shifts/increment_support.hpp"
#include "tables/parse.hpp"

namespace nmrpred::detail {

namespace {

constexpr const char *kHhNames[] = {
    "hh-2j-sp3-base",
    "hh-2j-sp3-pi",
    "hh-2j-sp3-heteroatom",
    "hh-2j-cyclopropane",
    "hh-2j-oxirane",
    "hh-2j-ethylene",
    "hh-3j-ethylene-cis",
    "hh-3j-ethylene-trans",
    "hh-3j-free-intercept",
    "hh-3j-free-slope",
    "hh-3j-cyclopropane-cis",
    "hh-3j-cyclopropane-trans",
    "hh-3j-cyclopropane-unresolved",
    "hh-3j-oxirane-cis",
    "hh-3j-oxirane-trans",
    "hh-3j-oxirane-unresolved",
    "hh-3j-ring4-unresolved",
    "hh-3j-ring5-unresolved",
    "hh-3j-ring6-cis",
    "hh-3j-ring6-trans",
    "hh-3j-ring6-unresolved",
    "hh-3j-sp3-alkene",
    "hh-3j-sp3-alkene-ring",
    "hh-3j-sp3-aldehyde",
    "hh-3j-sp2-aldehyde",
    "hh-3j-diene",
    "hh-3j-alkene-cis-cc",
    "hh-3j-alkene-trans-cc",
    "hh-3j-alkene-cis-conj",
    "hh-3j-alkene-trans-conj",
    "hh-3j-alkene-ring3",
    "hh-3j-alkene-ring4",
    "hh-3j-alkene-ring5",
    "hh-3j-alkene-ring6",
    "hh-3j-alkene-ring7",
    "hh-4j-allylic",
    "hh-4j-propargylic",
    "hh-5j-homoallylic",
    "hh-5j-homopropargylic",
    "hh-3j-aromatic-6ring",
    "hh-4j-aromatic-6ring",
    "hh-5j-aromatic-6ring",
    "hh-3j-aromatic-5ring",
    "hh-4j-aromatic-5ring",
    "hh-3j-hoch",
    "hh-3j-hnch",
    "hh-3j-hsch",
};

// The bond count each rule describes (its `bonds` column must agree).
constexpr int kHhBonds[] = {2, 2, 2, 2, 2, 2, 3, 3, 3, 3, 3, 3, 3, 3, 3, 3, 3, 3, 3, 3, 3, 3, 3, 3,
                            3, 3, 3, 3, 3, 3, 3, 3, 3, 3, 3, 4, 4, 5, 5, 3, 4, 5, 3, 4, 3, 3, 3};

static_assert(std::size(kHhNames) == kHhRuleCount && std::size(kHhBonds) == kHhRuleCount,
              "one name and one bond count per HhRule");

constexpr const char *kHhPath = "couplings/hh_rules.tsv";
constexpr const char *kAlkenePath = "couplings/hh_alkene.tsv";
constexpr const char *kAromaticPath = "couplings/hh_aromatic.tsv";
constexpr const char *kHeteroPath = "couplings/heteronuclear.tsv";
constexpr const char *kOneBondPath = "couplings/ch_one_bond.tsv";
constexpr const char *kKarplusPath = "couplings/karplus.tsv";

// Largest |J| any row may hold: 1J(P,H) of H-phosphonates reaches ~760 Hz.
constexpr double kMaxAbsHz = 1000.0;

class Checker {
 public:
  Checker(const Tables &tables, const TableReader &r) : keys_(tables.source_keys()), r_(r) {}
  const std::string &source(const TsvRow &row, std::size_t c) const {
    const auto &s = row.fields[c];
    const auto key = source_key_of(s);
    if (std::find(keys_.begin(), keys_.end(), key) == keys_.end())
      r_.fail(row, fmt::format("source '{}' is not defined in SOURCES.md", s));
    const auto rest = std::string_view(s).substr(key.size());
    if (!rest.empty() && rest != " (from memory)") r_.fail(row, fmt::format("source '{}': unknown suffix", s));
    return s;
  }
  double hz(const TsvRow &row, std::size_t c) const {
    const double v = r_.need_ppm(row, c);
    if (!std::isfinite(v) || std::fabs(v) > kMaxAbsHz)
      r_.fail(row, fmt::format("column '{}': {} Hz is out of range", r_.table().columns[c], v));
    return v;
  }
  double positive(const TsvRow &row, std::size_t c) const {
    const double v = hz(row, c);
    if (!(v > 0)) r_.fail(row, fmt::format("column '{}' must be positive", r_.table().columns[c]));
    return v;
  }
  // min_hz..max_hz, each optional ('-'), must contain the value.
  void range(const TsvRow &row, std::size_t c_min, std::size_t c_max, double v) const {
    const auto lo = r_.ppm(row, c_min), hi = r_.ppm(row, c_max);
    if (lo && hi && *lo > *hi) r_.fail(row, "min_hz is above max_hz");
    if ((lo && v < *lo) || (hi && v > *hi)) r_.fail(row, "the value lies outside min_hz..max_hz");
  }
  void unique(const TsvRow &row, const std::string &id) {
    if (id.empty() || !ids_.insert(id).second) r_.fail(row, fmt::format("id '{}' is empty or used twice", id));
  }

 private:
  const std::vector<std::string> &keys_;
  const TableReader &r_;
  std::set<std::string> ids_;
};

void read_hh(const Tables &tables, CouplingTables &out) {
  TableReader r(tables, kHhPath);
  if (!r.present()) return;
  Checker ck(tables, r);
  const auto c_id = r.col("id"), c_bonds = r.col("bonds"), c_j = r.col("j_hz"), c_unc = r.col("uncertainty_hz"),
             c_min = r.col("min_hz"), c_max = r.col("max_hz"), c_source = r.col("source");
  for (const auto &row : r.table().rows) {
    const auto &id = row.fields[c_id];
    ck.unique(row, id);
    const auto *name = std::find_if(std::begin(kHhNames), std::end(kHhNames), [&](const char *n) { return id == n; });
    if (name == std::end(kHhNames)) r.fail(row, fmt::format("unknown rule id '{}'", id));
    const auto k = static_cast<std::size_t>(name - std::begin(kHhNames));
    CouplingValue v;
    v.id = id;
    v.bonds = r.integer(row, c_bonds, 1, 6);
    if (v.bonds != kHhBonds[k])
      r.fail(row, fmt::format("rule '{}' describes {} bonds, not {}", id, kHhBonds[k], v.bonds));
    v.j_hz = ck.hz(row, c_j);
    v.uncertainty_hz = ck.positive(row, c_unc);
    ck.range(row, c_min, c_max, v.j_hz);
    v.source = ck.source(row, c_source);
    v.present = true;
    out.hh[k] = std::move(v);
  }
  out.hh_present = true;
}

void read_alkene(const Tables &tables, CouplingTables &out) {
  TableReader r(tables, kAlkenePath);
  if (!r.present()) return;
  Checker ck(tables, r);
  const auto c_id = r.col("id"), c_smarts = r.col("smarts"), c_cis = r.col("j_cis_hz"), c_trans = r.col("j_trans_hz"),
             c_gem = r.col("j_gem_hz"), c_unc = r.col("uncertainty_hz"), c_source = r.col("source");
  for (const auto &row : r.table().rows) {
    VinylRow v;
    v.id = row.fields[c_id];
    ck.unique(row, v.id);
    v.smarts = r.smarts(row, c_smarts);
    v.cis_hz = ck.hz(row, c_cis);
    v.trans_hz = ck.hz(row, c_trans);
    v.gem_hz = ck.hz(row, c_gem);
    v.uncertainty_hz = ck.positive(row, c_unc);
    v.source = ck.source(row, c_source);
    out.vinyl.push_back(std::move(v));
  }
  out.alkene_present = true;
}

// "n.c.c*.c+" -> tokens; each is a lowercase element symbol followed by
// optional '+'/'-' (charge) and '*' (also in another aromatic ring).
bool ring_tokens(std::string_view text, std::vector<std::string> &out, std::vector<int> &codes) {
  for (auto t : split(text, '.')) {
    std::size_t k = 0;
    while (k < t.size() && std::islower(static_cast<unsigned char>(t[k]))) ++k;
    if (k == 0) return false;
    std::string sym(t.substr(0, k));
    sym[0] = static_cast<char>(std::toupper(static_cast<unsigned char>(sym[0])));
    const unsigned z = Molecule::element_from_symbol(sym);
    if (z == 0) return false;
    auto rest = t.substr(k);
    int charge = 0;
    if (!rest.empty() && (rest.front() == '+' || rest.front() == '-')) {
      charge = rest.front() == '+' ? 1 : -1;
      rest.remove_prefix(1);
    }
    const bool fused = !rest.empty() && rest.front() == '*';
    if (fused) rest.remove_prefix(1);
    if (!rest.empty()) return false;
    out.emplace_back(t);
    codes.push_back(ring_token_code(z, charge, fused));
  }
  return true;
}

void read_aromatic(const Tables &tables, CouplingTables &out) {
  TableReader r(tables, kAromaticPath);
  if (!r.present()) return;
  Checker ck(tables, r);
  const auto c_id = r.col("id"), c_ring = r.col("ring"), c_atoms = r.col("atoms"), c_pos = r.col("positions"),
             c_bonds = r.col("bonds"), c_j = r.col("j_hz"), c_unc = r.col("uncertainty_hz"), c_min = r.col("min_hz"),
             c_max = r.col("max_hz"), c_source = r.col("source");
  for (const auto &row : r.table().rows) {
    AromaticRow a;
    a.id = row.fields[c_id];
    ck.unique(row, a.id);
    a.ring = row.fields[c_ring];
    if (!ring_tokens(row.fields[c_atoms], a.atoms, a.codes) || a.atoms.size() < 5 || a.atoms.size() > 6)
      r.fail(row, fmt::format("atoms '{}' is not a five- or six-membered ring of element tokens", row.fields[c_atoms]));
    const auto pos = r.indices(row, c_pos);
    const int n = static_cast<int>(a.atoms.size());
    if (pos.size() != 2 || pos[0] < 1 || pos[1] <= pos[0] || pos[1] > n)
      r.fail(row, fmt::format("positions '{}' must be two increasing ring positions 1..{}", row.fields[c_pos], n));
    a.sorted_codes = a.codes;
    std::sort(a.sorted_codes.begin(), a.sorted_codes.end());
    a.sorted_plain = a.codes;
    for (auto &c : a.sorted_plain) c &= ~1;
    std::sort(a.sorted_plain.begin(), a.sorted_plain.end());
    a.position_a = pos[0];
    a.position_b = pos[1];
    const int gap = std::min(pos[1] - pos[0], n - (pos[1] - pos[0]));
    a.bonds = r.integer(row, c_bonds, 3, 5);
    if (a.bonds != gap + 2)
      r.fail(row, fmt::format("positions {},{} are {} bonds apart, not {}", pos[0], pos[1], gap + 2, a.bonds));
    a.j_hz = ck.hz(row, c_j);
    a.uncertainty_hz = ck.positive(row, c_unc);
    ck.range(row, c_min, c_max, a.j_hz);
    a.source = ck.source(row, c_source);
    out.aromatic.push_back(std::move(a));
  }
  out.aromatic_present = true;
}

// "F-c:c-H": atoms (element symbols, lowercase = aromatic) joined by bond
// symbols - = # :. The first atom must be the anchor's element, the last H
// (pairs hf, hp) or C/c (cf, cp).
int path_bonds(std::string_view path, HeteroPair pair) {
  std::vector<std::string> atoms;
  std::string cur;
  for (char ch : path) {
    if (ch == '-' || ch == '=' || ch == '#' || ch == ':') {
      if (cur.empty()) return -1;
      atoms.push_back(cur);
      cur.clear();
    } else if (std::isalpha(static_cast<unsigned char>(ch))) {
      cur += ch;
    } else {
      return -1;
    }
  }
  if (cur.empty()) return -1;
  atoms.push_back(cur);
  for (auto a : atoms) {
    a[0] = static_cast<char>(std::toupper(static_cast<unsigned char>(a[0])));
    if (Molecule::element_from_symbol(a) == 0) return -1;
  }
  const bool fluorine = pair == HeteroPair::HF || pair == HeteroPair::CF;
  if (atoms.front() != (fluorine ? "F" : "P")) return -1;
  const bool proton = pair == HeteroPair::HF || pair == HeteroPair::HP;
  if (proton ? atoms.back() != "H" : (atoms.back() != "C" && atoms.back() != "c")) return -1;
  return static_cast<int>(atoms.size()) - 1;
}

void read_hetero(const Tables &tables, CouplingTables &out) {
  TableReader r(tables, kHeteroPath);
  if (!r.present()) return;
  Checker ck(tables, r);
  const auto c_id = r.col("id"), c_pair = r.col("pair"), c_anchor = r.col("anchor"), c_path = r.col("path"),
             c_carrier = r.col("carrier"), c_geo = r.col("geometry"), c_j = r.col("j_hz"),
             c_unc = r.col("uncertainty_hz"), c_min = r.col("min_hz"), c_max = r.col("max_hz"),
             c_source = r.col("source");
  for (const auto &row : r.table().rows) {
    HeteroRow h;
    h.id = row.fields[c_id];
    ck.unique(row, h.id);
    const auto &pair = row.fields[c_pair];
    if (pair == "hf")
      h.pair = HeteroPair::HF;
    else if (pair == "hp")
      h.pair = HeteroPair::HP;
    else if (pair == "cf")
      h.pair = HeteroPair::CF;
    else if (pair == "cp")
      h.pair = HeteroPair::CP;
    else
      r.fail(row, fmt::format("unknown pair '{}' (hf, hp, cf, cp)", pair));
    h.anchor = r.smarts(row, c_anchor);
    h.anchor_index = out.anchors.size();
    for (std::size_t k = 0; k < out.anchors.size(); ++k)
      if (out.anchors[k].text() == h.anchor.text()) h.anchor_index = k;
    if (h.anchor_index == out.anchors.size()) out.anchors.push_back(h.anchor);
    h.path = row.fields[c_path];
    const int bonds = path_bonds(h.path, h.pair);
    if (bonds < 1 || bonds > 5)
      r.fail(row, fmt::format("path '{}' does not fit pair '{}' (1 to 5 bonds)", h.path, pair));
    h.bonds = bonds;
    out.hetero_max_bonds = std::max(out.hetero_max_bonds, bonds);
    const auto &carrier = row.fields[c_carrier];
    if (carrier == "*")
      h.carrier_h = -1;
    else if (carrier == "CH3")
      h.carrier_h = 3;
    else if (carrier == "CH2")
      h.carrier_h = 2;
    else if (carrier == "CH")
      h.carrier_h = 1;
    else
      r.fail(row, fmt::format("unknown carrier '{}' (*, CH3, CH2, CH)", carrier));
    if (carrier != "*" && (h.pair == HeteroPair::CF || h.pair == HeteroPair::CP || bonds < 2))
      r.fail(row, "a carrier condition needs a proton partner at least two bonds away");
    const auto &geo = row.fields[c_geo];
    if (geo == "-")
      h.geometry = HeteroGeometry::Any;
    else if (geo == "cis")
      h.geometry = HeteroGeometry::Cis;
    else if (geo == "trans")
      h.geometry = HeteroGeometry::Trans;
    else
      r.fail(row, fmt::format("unknown geometry '{}' (-, cis, trans)", geo));
    if (h.geometry != HeteroGeometry::Any &&
        (bonds != 3 || h.path.find('=') == std::string::npos || h.path.find('=') != h.path.rfind('=')))
      r.fail(row, "cis/trans needs a three-bond path across one double bond");
    h.j_hz = ck.hz(row, c_j);
    h.uncertainty_hz = ck.positive(row, c_unc);
    ck.range(row, c_min, c_max, h.j_hz);
    h.source = ck.source(row, c_source);
    out.hetero.push_back(std::move(h));
  }
  out.hetero_present = true;
}

void read_one_bond(const Tables &tables, CouplingTables &out) {
  TableReader r(tables, kOneBondPath);
  if (!r.present()) return;
  Checker ck(tables, r);
  const auto c_id = r.col("id"), c_smarts = r.col("smarts"), c_j = r.col("j_hz"), c_unc = r.col("uncertainty_hz"),
             c_source = r.col("source");
  for (const auto &row : r.table().rows) {
    OneBondRow o;
    o.id = row.fields[c_id];
    ck.unique(row, o.id);
    o.smarts = r.smarts(row, c_smarts);
    o.j_hz = ck.positive(row, c_j);
    o.uncertainty_hz = ck.positive(row, c_unc);
    o.source = ck.source(row, c_source);
    out.one_bond.push_back(std::move(o));
  }
  out.one_bond_present = true;
}

void read_karplus(const Tables &tables, CouplingTables &out) {
  auto &k = out.karplus;
  k.chi.fill(std::numeric_limits<double>::quiet_NaN());
  TableReader r(tables, kKarplusPath);
  if (!r.present()) return;
  Checker ck(tables, r);
  const auto c_kind = r.col("kind"), c_id = r.col("id"), c_value = r.col("value"), c_source = r.col("source");
  std::array<bool, 8> have{};
  for (const auto &row : r.table().rows) {
    const auto &kind = row.fields[c_kind], &id = row.fields[c_id];
    ck.unique(row, id);
    const double v = r.need_ppm(row, c_value);
    const auto &source = ck.source(row, c_source);
    if (kind == "hla") {
      std::size_t slot = 8;
      if (id == "sigma")
        slot = 7;
      else if (id.size() == 2 && id[0] == 'p' && id[1] >= '1' && id[1] <= '7')
        slot = static_cast<std::size_t>(id[1] - '1');
      if (slot == 8) r.fail(row, fmt::format("unknown hla parameter '{}' (p1..p7, sigma)", id));
      if (slot == 7) {
        if (!(v > 0 && v < 10)) r.fail(row, "sigma must lie between 0 and 10 Hz");
        k.sigma_hz = v;
      } else {
        if (!(std::fabs(v) < 100)) r.fail(row, "an hla parameter must lie within +-100");
        k.p[slot] = v;
        if (slot == 0) k.source = source;
      }
      have[slot] = true;
    } else if (kind == "electronegativity") {
      if (id.rfind("chi-", 0) != 0) r.fail(row, fmt::format("electronegativity id '{}' must be chi-<element>", id));
      std::string sym = id.substr(4);
      if (!sym.empty()) sym[0] = static_cast<char>(std::toupper(static_cast<unsigned char>(sym[0])));
      const unsigned z = Molecule::element_from_symbol(sym);
      if (z == 0 || z >= k.chi.size()) r.fail(row, fmt::format("unknown element in '{}'", id));
      if (!(v > 0.5 && v < 4.5)) r.fail(row, "an electronegativity must lie between 0.5 and 4.5");
      k.chi[z] = v;
      k.chi_source[z] = source;
    } else {
      r.fail(row, fmt::format("unknown kind '{}' (hla, electronegativity)", kind));
    }
  }
  k.present = std::all_of(have.begin(), have.end(), [](bool b) { return b; }) && !std::isnan(k.chi[1]);
}

}  // namespace

const char *hh_rule_name(HhRule r) noexcept {
  const auto k = static_cast<std::size_t>(r);
  return k < kHhRuleCount ? kHhNames[k] : "?";
}

std::shared_ptr<const CouplingTables> parse_coupling_tables(const Tables &tables) {
  auto out = std::make_shared<CouplingTables>();
  read_hh(tables, *out);
  read_alkene(tables, *out);
  read_aromatic(tables, *out);
  read_hetero(tables, *out);
  read_one_bond(tables, *out);
  read_karplus(tables, *out);
  return out;
}

}  // namespace nmrpred::detail
