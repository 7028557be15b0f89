#ifndef NMRPRED_COUPLINGS_HPP
#define NMRPRED_COUPLINGS_HPP

/// \file couplings.hpp
/// Scalar (J) coupling constants estimated from the molecular graph, its
/// stereo and, where the molecule has 3D coordinates, its dihedral angles.
/// Each value names the rule of tables/couplings/ that produced it and that
/// rule's published source. tables/FORMAT.md ("Coupling tables") says how
/// every rule is applied and what is not covered.
///
/// Nuclei: protons (isotope 0 or 1), deuterons (hydrogen with isotope 2:
/// J(H,D) = J(H,H) x gamma(2H)/gamma(1H) and 1J(C,D)), carbons, F and P, all
/// as atoms of the molecule graph. Tritium is not coupled (a warning says
/// so). Protons on O, N and S exchange in most solutions and get no coupling
/// unless CouplingOptions::exchangeable is set.
///
/// Thread rule: pure functions of their arguments; call from any thread.

#include <cstddef>
#include <string>
#include <vector>

#include <nmrpred/classes.hpp>
#include <nmrpred/export.hpp>
#include <nmrpred/molecule.hpp>
#include <nmrpred/tables.hpp>

namespace nmrpred {

/// One estimated coupling between two atoms. Plain value.
struct Coupling {
  std::size_t a = 0;            ///< first atom (a < b), index into Molecule::atoms()
  std::size_t b = 0;            ///< second atom
  int bonds = 0;                ///< bonds on the shortest path between them (1 for 1J, 2 for 2J, ...)
  double j_hz = 0;              ///< signed coupling constant, Hz
  double uncertainty_hz = 0;    ///< one standard deviation, Hz
  /// id of the row in tables/couplings/ that gave the value ("hh-3j-alkene-trans-conj",
  /// "vinyl-aryl", ...); "hla" for the dihedral relation of couplings/karplus.tsv
  std::string rule;
  std::string source;           ///< key of tables/SOURCES.md, maybe followed by " (from memory)"
  std::string method;           ///< in words: the rule and any correction applied (Karplus angle, substituents)
  friend bool operator==(const Coupling &x, const Coupling &y) {
    return x.a == y.a && x.b == y.b && x.bonds == y.bonds && x.j_hz == y.j_hz && x.rule == y.rule;
  }
};

/// Which couplings to estimate. Plain value; new members are appended with a
/// default that keeps earlier results unchanged.
struct CouplingOptions {
  /// J(H,H) (and J(H,D)) through 2 to 5 bonds; 4J and 5J only where the
  /// trade expects one: allylic, propargylic, aromatic meta and para,
  /// homoallylic, homopropargylic. W couplings in rigid polycycles are not
  /// estimated (not detected reliably from the graph).
  bool proton_proton = true;
  /// J(H,F), J(H,P) (what a 1H spectrum shows) and J(C,F), J(C,P), 1J(C,D)
  /// (what a proton-decoupled 13C spectrum shows). J(F,F), J(F,P), J(C,C)
  /// and 1J(C,H) are not estimated.
  bool heteronuclear = true;
  /// Where the molecule has 3D coordinates (Molecule::has_3d_coordinates()),
  /// vicinal 3J(H,H) of sp3-sp3 bonds without a methyl group from the
  /// dihedral angle (Haasnoot-de Leeuw-Altona relation with substituent
  /// terms) instead of the ring and freely-rotating rules. The conformation
  /// given is taken as the only one.
  bool use_geometry = true;
  /// Couplings with |J| below this (Hz) are left out. Must be finite and >= 0.
  double min_abs_hz = 0.3;
  /// Protons on O, N and S exchange quickly in most solutions and then show
  /// no coupling, so by default they get none. True: vicinal H-O-C-H,
  /// H-N-C-H and H-S-C-H couplings as seen under slow exchange (dry DMSO-d6,
  /// amides); nothing else changes.
  bool exchangeable = false;
};

/// Estimated couplings of `molecule`, sorted by (a, b). Couplings between
/// chemically equivalent atoms are included (they matter for magnetic
/// equivalence and strongly coupled spin systems even where a first-order
/// spectrum hides them). Pairs related by the molecule's symmetry get
/// identical values, and the atom order of the input changes no value (it
/// can only change which of two diastereotopic =CH2 protons the convention
/// below calls cis, as it does for their shifts). `classes` must come from
/// compute_classes(molecule).
///
/// Geometry: which protons of a C=C are cis comes from a ring of up to seven
/// atoms or the input's stereo; without either, an HC=CH is taken as E and a
/// =CH2 follows the convention of the 1H increment rules (the proton of the
/// class with the lower lowest atom index is cis to the higher-ranked group
/// on the other carbon), so that predicted shifts and couplings describe the
/// same protons. Where the structure cannot say, cis and trans are averaged
/// with a wide uncertainty. With 3D coordinates (and `use_geometry`),
/// vicinal sp3-sp3 couplings not involving a methyl group come from the
/// dihedral angle and are averaged over the pairs of the same two classes.
///
/// A table set without some coupling tables (see Tables::load) gives the
/// couplings the remaining tables cover, with a warning; there is no
/// built-in fallback.
///
/// Remarks (no rule for a fragment, geometry assumed or averaged, missing
/// tables) are appended to `warnings` when it is not null, each once. Throws
/// ArgumentError if `classes` belongs to another molecule or `min_abs_hz` is
/// negative or not finite. Cost: linear in the number of atom pairs within
/// five bonds; no pattern search per pair.
NMRPRED_API std::vector<Coupling> predict_couplings(const Molecule &molecule, const AtomClasses &classes,
                                                    const Tables &tables, const CouplingOptions &options = {},
                                                    std::vector<std::string> *warnings = nullptr);

}  // namespace nmrpred

#endif
