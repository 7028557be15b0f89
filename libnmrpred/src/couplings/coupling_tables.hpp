#ifndef NMRPRED_COUPLINGS_COUPLING_TABLES_HPP
#define NMRPRED_COUPLINGS_COUPLING_TABLES_HPP

// The coupling tables of tables/couplings/ (layout: tables/FORMAT.md,
// "Coupling tables"), parsed and compiled once per Tables object. Private to
// the library (couplings/ and tables/).

#include <array>
#include <cstddef>
#include <memory>
#include <string>
#include <vector>

#include <nmrpred/tables.hpp>

#include "graph/smarts.hpp"

namespace nmrpred::detail {

// The rows of hh_rules.tsv the engine knows, in file-independent order.
// kHhRuleNames gives each one's id; a table row with any other id is an error.
enum class HhRule : int {
  GemSp3Base,
  GemSp3Pi,
  GemSp3Heteroatom,
  GemCyclopropane,
  GemOxirane,
  GemEthylene,
  EthyleneCis,
  EthyleneTrans,
  FreeIntercept,
  FreeSlope,
  CyclopropaneCis,
  CyclopropaneTrans,
  CyclopropaneUnresolved,
  OxiraneCis,
  OxiraneTrans,
  OxiraneUnresolved,
  Ring4Unresolved,
  Ring5Unresolved,
  Ring6Cis,
  Ring6Trans,
  Ring6Unresolved,
  Sp3Alkene,
  Sp3AlkeneRing,
  Sp3Aldehyde,
  Sp2Aldehyde,
  Diene,
  AlkeneCisCC,
  AlkeneTransCC,
  AlkeneCisConj,
  AlkeneTransConj,
  AlkeneRing3,
  AlkeneRing4,
  AlkeneRing5,
  AlkeneRing6,
  AlkeneRing7,
  Allylic,
  Propargylic,
  Homoallylic,
  Homopropargylic,
  Aromatic6Ortho,
  Aromatic6Meta,
  Aromatic6Para,
  Aromatic5Vicinal,
  Aromatic5Long,
  ExchangeHOCH,
  ExchangeHNCH,
  ExchangeHSCH,
  Count
};
inline constexpr std::size_t kHhRuleCount = static_cast<std::size_t>(HhRule::Count);

// A value row (hh_rules.tsv, or one of the parameters of karplus.tsv).
struct CouplingValue {
  std::string id;
  int bonds = 0;
  double j_hz = 0;
  double uncertainty_hz = 0;
  std::string source;  // as written in the table, maybe with " (from memory)"
  bool present = false;
};

// hh_alkene.tsv: couplings of a monosubstituted ethylene CH2=CH-X by the group X.
struct VinylRow {
  std::string id;
  SmartsPattern smarts;  // first atom: the substituent atom X
  double cis_hz = 0, trans_hz = 0, gem_hz = 0, uncertainty_hz = 0;
  std::string source;
};

// hh_aromatic.tsv: one proton pair of an aromatic ring by ring positions.
struct AromaticRow {
  std::string id, ring;
  std::vector<std::string> atoms;  // ring tokens in numbering order ("n", "c", "c*" ...)
  std::vector<int> codes;          // the same as ring_token_code() values
  std::vector<int> sorted_codes;   // codes sorted, with and without the fusion marks
  std::vector<int> sorted_plain;
  int position_a = 0, position_b = 0;  // 1-based, position_a < position_b
  int bonds = 0;
  double j_hz = 0, uncertainty_hz = 0;
  std::string source;
};

enum class HeteroPair : int { HF, HP, CF, CP };
enum class HeteroGeometry : int { Any, Cis, Trans };

// heteronuclear.tsv: J between F or P (the anchor) and H or C, by the
// anchor's environment and the path to the partner.
struct HeteroRow {
  std::string id;
  HeteroPair pair = HeteroPair::HF;
  SmartsPattern anchor;          // first atom: the F or P atom
  std::size_t anchor_index = 0;  // into CouplingTables::anchors (rows share patterns)
  std::string path;              // "F-c:c-H"
  int bonds = 0;                 // bonds along the path
  int carrier_h = -1;            // hydrogens on the partner proton's carbon, -1 = any
  HeteroGeometry geometry = HeteroGeometry::Any;
  double j_hz = 0, uncertainty_hz = 0;
  std::string source;
};

// ch_one_bond.tsv: 1J(C,H) by carbon environment (J(C,D) is scaled from it).
struct OneBondRow {
  std::string id;
  SmartsPattern smarts;  // first atom: the carbon
  double j_hz = 0, uncertainty_hz = 0;
  std::string source;
};

// karplus.tsv: the Haasnoot-de Leeuw-Altona parameters and electronegativities.
struct KarplusTable {
  bool present = false;       // all of p1..p7 and sigma given
  std::array<double, 7> p{};  // p1..p7
  double sigma_hz = 0;
  std::string source;             // of p1
  std::array<double, 119> chi{};  // by atomic number; NaN where not given
  std::array<std::string, 119> chi_source;
};

struct CouplingTables {
  bool hh_present = false;
  std::array<CouplingValue, kHhRuleCount> hh;
  bool alkene_present = false;
  std::vector<VinylRow> vinyl;
  bool aromatic_present = false;
  std::vector<AromaticRow> aromatic;
  bool hetero_present = false;
  std::vector<HeteroRow> hetero;
  std::vector<SmartsPattern> anchors;  // distinct anchor patterns of `hetero`
  int hetero_max_bonds = 0;
  bool one_bond_present = false;
  std::vector<OneBondRow> one_bond;
  KarplusTable karplus;
};

// A ring token as a number, for fast comparison: element, charge sign and
// fusion mark ('*') of hh_aromatic.tsv tokens, or of a ring atom.
inline int ring_token_code(unsigned atomic_number, int charge, bool fused) {
  return static_cast<int>(atomic_number) * 8 + (charge > 0 ? 2 : charge < 0 ? 4 : 0) + (fused ? 1 : 0);
}

// Id of an hh_rules.tsv row ("hh-3j-free-intercept").
const char *hh_rule_name(HhRule r) noexcept;

// Reads tables/couplings/*.tsv of `tables`. A file absent from the set
// leaves its part empty (`*_present` false): the engine then leaves those
// couplings out and says so. Throws TablesError naming "file:line" for a
// malformed row (unknown id or kind, bad number, range not containing the
// value, path or geometry it cannot read, unknown source key, SMARTS the
// matcher does not support). Thread rule: pure; call from any thread.
std::shared_ptr<const CouplingTables> parse_coupling_tables(const Tables &tables);

}  // namespace nmrpred::detail

#endif
