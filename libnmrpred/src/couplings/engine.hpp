#ifndef NMRPRED_COUPLINGS_ENGINE_HPP
#define NMRPRED_COUPLINGS_ENGINE_HPP

// Per-molecule state of predict_couplings(): facts every rule asks about
// (rings, aromatic ring tokens, hybridisation, class representatives,
// double-bond geometry) computed once, so that no rule runs a SMARTS search
// per atom pair. Private to couplings/.

#include <cstddef>
#include <cstdint>
#include <deque>
#include <map>
#include <memory>
#include <optional>
#include <set>
#include <string>
#include <utility>
#include <vector>

#include <nmrpred/classes.hpp>
#include <nmrpred/couplings.hpp>
#include <nmrpred/molecule.hpp>

#include "couplings/coupling_tables.hpp"
#include "graph/smarts.hpp"

namespace nmrpred::detail {

// "7.25": a coupling for method texts (no "-0.00").
std::string format_hz(double v);

// One coupling value before it becomes a Coupling.
struct JEstimate {
  double j_hz = 0;
  double uncertainty_hz = 0;
  std::string rule;    // row id
  std::string source;  // row source
  std::string method;
  bool geometry = false;  // from 3D coordinates (Karplus): averaged per class pair later
  // The value depends on which protons of the two carriers are meant
  // (cis/trans, ring faces, dihedral angles); otherwise it is reused for
  // every proton pair of the same two carriers.
  bool per_proton = false;
};

// Where a proton or substituent sits relative to another across a C=C.
enum class Side { Cis, Trans, Unknown };
struct Relation {
  Side side = Side::Unknown;
  bool assumed_e = false;  // E geometry assumed for lack of stereo
};

// An aromatic ring with its tokens (tables/FORMAT.md, hh_aromatic.tsv).
struct AromaticRing {
  std::vector<std::uint32_t> atoms;  // in ring order
  std::vector<std::string> tokens;   // parallel to atoms
  std::vector<int> codes;            // ring_token_code() of each atom
  bool fused = false;                // some token carries '*'
  std::string text;                  // tokens joined by '.'
  // hh_aromatic.tsv rows whose atoms fit this ring, each with the ring
  // numberings that fit it (position of ring atom i = ((dir * (i - start))
  // mod n) + 1); `stripped` rows fit only with the '*' marks removed.
  // Filled on first use.
  struct Fit {
    std::size_t row;
    int start, dir;
    bool stripped;
  };
  bool fits_done = false;
  std::vector<Fit> fits;
  // For ring atoms i, k: index into fits of the fit serving the pair
  // (entry i * size + k), -1 if none, -2 not yet known.
  std::vector<int> pair_fit;
  // Estimates already made for this ring, by 2 * row + stripped: every
  // pair the same row serves gets the same value and method.
  std::vector<std::pair<std::size_t, JEstimate>> made;
};

class Engine {
 public:
  Engine(const Molecule &m, const AtomClasses &classes, const CouplingTables &tables, const CouplingOptions &options);

  const Molecule &m;
  const AtomClasses &classes;
  const CouplingTables &tab;
  const CouplingOptions &opt;

  // --- facts per atom / bond ----------------------------------------------
  // A [begin, end) range of atom indices.
  struct Span {
    const std::uint32_t *b, *e;
    const std::uint32_t *begin() const { return b; }
    const std::uint32_t *end() const { return e; }
    std::size_t size() const { return static_cast<std::size_t>(e - b); }
    bool empty() const { return b == e; }
    std::uint32_t operator[](std::size_t i) const { return b[i]; }
  };
  // Hydrogen atoms bonded to atom a, ascending.
  Span hydrogens(std::size_t a) const { return {&h_list_[0] + h_off_[a], &h_list_[0] + h_off_[a + 1]}; }
  // Heavy-atom neighbours of a, ascending.
  Span heavy(std::size_t a) const { return {&x_list_[0] + x_off_[a], &x_list_[0] + x_off_[a + 1]}; }
  BondOrder order(std::size_t a, std::size_t b) const;
  // Smallest ring (of at most kMaxRing atoms) containing the bond a-b: its
  // size (0 if none) and its atoms in ring order. Among equally small rings
  // the first found is kept.
  static constexpr int kMaxRing = 8;
  int bond_ring_size(std::size_t a, std::size_t b) const;
  const std::vector<std::uint32_t> *bond_ring(std::size_t a, std::size_t b) const;
  // A three-membered ring containing atom a, or null.
  const std::vector<std::uint32_t> *three_ring(std::size_t a) const;
  // Number of pi bonds at atom a (double 1, triple 2, aromatic 1).
  int pi_bonds(std::size_t a) const { return pi_[a]; }
  // sp3 carbon (neutral, four single bonds).
  bool sp3_carbon(std::size_t a) const { return sp3_[a]; }
  // Carbon with exactly one C=C double bond and three neighbours (not
  // aromatic, not cumulated); its partner, or -1.
  std::int64_t alkene_partner(std::size_t a) const { return alkene_partner_[a]; }
  // Aldehyde carbon: C(=O) with at least one hydrogen.
  bool aldehyde_carbon(std::size_t a) const { return aldehyde_[a]; }
  // sp carbon of a C#C bond; its partner, or -1.
  std::int64_t alkyne_partner(std::size_t a) const { return alkyne_partner_[a]; }
  // Electronegativity (karplus.tsv) of atom a's element, NaN if not given.
  double chi(std::size_t a) const;
  // Lowest atom index of a's chemical class.
  std::uint32_t class_rep(std::size_t a) const { return class_rep_[classes.chemical[a]]; }
  bool same_class(std::size_t a, std::size_t b) const { return classes.chemical[a] == classes.chemical[b]; }

  // The ring with its row fits computed (see AromaticRing::fits).
  AromaticRing &aromatic_ring_fitted(int r);
  // Index into fits of the fit serving ring atoms i and k, -1 if none.
  int aromatic_pair_fit(int r, int i, int k);
  // Index into aromatic_rings() of a ring holding both atoms, or -1.
  int shared_aromatic_ring(std::size_t a, std::size_t b) const;

  // --- geometry --------------------------------------------------------------
  // Relation of x (bonded to ca) and y (bonded to cb) across the double bond
  // ca=cb: ring (up to 7 atoms), input stereo, the =CH2 convention of the 1H
  // increment rules (shifts/increments_h1.cpp), or E assumed when each carbon
  // carries one hydrogen.
  Relation relation(std::size_t ca, std::size_t cb, std::size_t x, std::size_t y) const;
  // Whether hydrogens h1 (on c1) and h2 (on c2), c1-c2 a bond of ring `ring`,
  // lie on the same face, from the configurations the input gave or, for two
  // CH2 groups, from their classes; Unknown otherwise.
  Side ring_faces(const std::vector<std::uint32_t> &ring, std::size_t c1, std::size_t h1, std::size_t c2,
                  std::size_t h2) const;
  // True when the input has usable 3D coordinates for atom a.
  bool has_position(std::size_t a) const;
  const double *position(std::size_t a) const { return &m.coordinates()[3 * a]; }

  // --- table lookups, cached per atom ---------------------------------------
  // First hh_alkene.tsv row for substituent s on alkene carbon c (skeleton c
  // and its partner), or null.
  const VinylRow *vinyl_row(std::size_t s, std::size_t c);
  // The SMARTS view of the molecule, made on first use: most molecules
  // never need one.
  SmartsTarget &smarts_target();
  // Whether heteronuclear.tsv row k's anchor matches atom x.
  bool anchor_matches(std::size_t k, std::size_t x);
  // First ch_one_bond.tsv row for carbon c, or null.
  const OneBondRow *one_bond_row(std::size_t c);
  const CouplingValue *hh(HhRule r) const;

  // --- remarks ----------------------------------------------------------------
  void warn(const std::string &text) {
    if (warned_.insert(text).second) warnings_.push_back(text);
  }
  const std::vector<std::string> &warnings() const { return warnings_; }

 private:
  std::vector<std::uint32_t> h_off_, h_list_, x_off_, x_list_;
  std::vector<int> pi_;
  std::vector<bool> sp3_, aldehyde_;
  std::vector<std::int64_t> alkene_partner_, alkyne_partner_;
  std::vector<std::uint32_t> class_rep_;
  std::vector<std::uint32_t> ring_through(std::uint32_t a, std::uint32_t b, bool aromatic_only, int max_size) const;
  void find_bridges() const;
  void find_aromatic_rings() const;
  // Ring facts, filled on demand (hence mutable; an Engine serves one call
  // on one thread).
  mutable std::deque<std::vector<std::uint32_t>> rings_;  // stable addresses
  mutable std::vector<bool> bridge_;
  mutable std::vector<int> bond_ring_index_;  // per bond: into rings_, -1 none, -2 not yet known
  mutable std::vector<int> dist_;
  mutable std::vector<std::uint32_t> parent_, touched_, frontier_, next_;
  mutable bool aromatic_done_ = false;
  std::unique_ptr<SmartsTarget> target_;
  mutable std::vector<AromaticRing> aromatic_rings_;
  mutable std::vector<std::vector<int>> atom_aromatic_rings_;
  bool coordinates_ok_ = false;
  std::map<std::pair<std::size_t, std::size_t>, const VinylRow *> vinyl_cache_;
  std::map<std::pair<std::size_t, std::size_t>, bool> anchor_cache_;
  std::map<std::size_t, const OneBondRow *> one_bond_cache_;
  std::set<std::string> warned_;
  std::vector<std::string> warnings_;
};

// Coupling rules, one file each. Each returns no value when no rule covers
// the pair (a warning says why where it matters).
//
// J(H,H) between protons h1 (on c1) and h2 (on c2), their carriers `d` bonds
// apart (0 = the same atom). Deuterium counts as a proton here; the caller
// scales J(H,D).
std::optional<JEstimate> proton_pair(Engine &e, std::size_t h1, std::size_t c1, std::size_t h2, std::size_t c2, int d);
// Vicinal J(H,H) from the dihedral angle (Haasnoot-de Leeuw-Altona); no
// value when coordinates or parameters are missing.
std::optional<JEstimate> karplus_pair(Engine &e, std::size_t h1, std::size_t c1, std::size_t h2, std::size_t c2);
// Every J(H,F), J(H,P), J(C,F), J(C,P) and J(C,D) of the molecule.
void heteronuclear_couplings(Engine &e, std::vector<Coupling> &out);

}  // namespace nmrpred::detail

#endif
