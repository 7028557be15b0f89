// Spin systems of predicted molecules: 1H with 2H, 19F and 31P partners;
// proton-decoupled 13C with 19F, 31P and 2H partners (nmrpred/spin.hpp).
#include <nmrpred/predict.hpp>
#include <nmrpred/spin.hpp>

#include <algorithm>
#include <limits>
#include <map>
#include <set>
#include <utility>

#include <fmt/format.h>

#include <nmrpred/error.hpp>

namespace nmrpred {

namespace {

constexpr std::size_t kNone = std::numeric_limits<std::size_t>::max();

/// The isotope of a partner atom that splits lines of the observed nucleus,
/// or false. Deuterium is hydrogen of mass 2; tritium and other elements do
/// not take part.
bool partner_isotope(const Atom &a, SpinNucleus &out) {
  if (a.atomic_number == 1 && a.isotope == 2) {
    out = SpinNucleus::H2;
    return true;
  }
  if (a.atomic_number == 9 && (a.isotope == 0 || a.isotope == 19)) {
    out = SpinNucleus::F19;
    return true;
  }
  if (a.atomic_number == 15 && (a.isotope == 0 || a.isotope == 31)) {
    out = SpinNucleus::P31;
    return true;
  }
  return false;
}

}  // namespace

MoleculeSpinSystem spin_system(const Prediction &prediction, const std::vector<Coupling> &couplings,
                               Nucleus observe) {
  const Molecule &mol = prediction.molecule;
  if (prediction.classes.chemical.size() != mol.atom_count())
    throw ArgumentError("spin_system: the prediction's classes belong to another molecule");
  const std::vector<Shift> &shifts = observe == Nucleus::H1 ? prediction.h1 : prediction.c13;
  if (shifts.empty())
    throw ArgumentError(fmt::format("spin_system: the prediction holds no {} shifts (were they predicted?)",
                                    observe == Nucleus::H1 ? "1H" : "13C"));
  MoleculeSpinSystem out;
  std::vector<std::size_t> spin_of(mol.atom_count(), kNone);
  const SpinNucleus observed = observe == Nucleus::H1 ? SpinNucleus::H1 : SpinNucleus::C13;
  // Spins in the order of the atoms' invariant ranks (atom index among equal
  // ranks), which do not depend on how the structure was written. The
  // simulation settles ties in spin order (which coupling joins a cluster
  // first when a cluster reaches its size limit, which partner is treated
  // approximately), so in atom order two writings of one molecule could give
  // other lines: 77 of the first 2,000 NCI records against RDKit's random
  // SMILES of them (benchmarks/README.md, exact spin simulation).
  const auto &rank = prediction.classes.invariant_rank;
  // Atom indices were checked against the molecule before any comparison.
  const bool ranked = rank.size() == mol.atom_count();
  auto canonical = [&](std::size_t x, std::size_t y) {
    if (ranked && rank[x] != rank[y]) return rank[x] < rank[y];
    return x < y;
  };
  for (const Shift &s : shifts)
    if (s.atom >= mol.atom_count())
      throw ArgumentError(fmt::format("spin_system: shift of atom {}, the molecule has {} atoms", s.atom, mol.atom_count()));
  std::vector<const Shift *> in_order;
  in_order.reserve(shifts.size());
  for (const Shift &s : shifts) in_order.push_back(&s);
  std::stable_sort(in_order.begin(), in_order.end(),
                   [&](const Shift *x, const Shift *y) { return canonical(x->atom, y->atom); });
  std::size_t exchanged = 0;
  for (const Shift *shift : in_order) {
    const Shift &s = *shift;
    if (!s.observed) {
      ++exchanged;
      continue;
    }
    Spin spin;
    spin.shift_ppm = s.ppm;
    spin.nucleus = observed;
    spin.equivalence_class = prediction.classes.chemical[s.atom];
    spin.exchangeable = observe == Nucleus::H1 && s.exchangeable;
    spin_of[s.atom] = out.system.spins.size();
    out.system.spins.push_back(spin);
    out.atoms.push_back(s.atom);
  }
  if (exchanged > 0)
    out.warnings.push_back(fmt::format("{} proton(s) exchanged for deuterium by the solvent give no signal", exchanged));

  // Partners: atoms coupled to an observed spin. Their shifts are not
  // predicted (0 stands in) and couplings among them are left out, so they
  // act as first-order partners only.
  std::set<std::size_t> unsupported;
  std::vector<std::pair<std::size_t, SpinNucleus>> partners;  // (atom, isotope), in canonical order below
  for (const Coupling &c : couplings) {
    if (c.a >= mol.atom_count() || c.b >= mol.atom_count())
      throw ArgumentError(fmt::format("spin_system: coupling between atoms {} and {}, the molecule has {} atoms", c.a,
                                      c.b, mol.atom_count()));
    for (const auto &[obs, other] : {std::make_pair(c.a, c.b), std::make_pair(c.b, c.a)}) {
      if (spin_of[obs] == kNone || out.system.spins[spin_of[obs]].nucleus != observed) continue;
      if (spin_of[other] != kNone) continue;
      SpinNucleus iso;
      if (!partner_isotope(mol.atom(other), iso)) {
        if (mol.atom(other).atomic_number != 1 && mol.atom(other).atomic_number != 6) unsupported.insert(other);
        continue;
      }
      partners.emplace_back(other, iso);
    }
  }
  std::sort(partners.begin(), partners.end(), [&](const auto &x, const auto &y) { return canonical(x.first, y.first); });
  partners.erase(std::unique(partners.begin(), partners.end()), partners.end());
  for (const auto &[other, iso] : partners) {
    Spin spin;
    spin.nucleus = iso;
    spin.equivalence_class = prediction.classes.chemical[other];
    spin_of[other] = out.system.spins.size();
    out.system.spins.push_back(spin);
    out.atoms.push_back(other);
  }
  if (!unsupported.empty())
    out.warnings.push_back(fmt::format("couplings to {} atom(s) of isotopes the simulation does not handle left out",
                                       unsupported.size()));

  std::set<std::pair<std::size_t, std::size_t>> seen;
  for (const Coupling &c : couplings) {
    const std::size_t i = spin_of[c.a], j = spin_of[c.b];
    if (i == kNone || j == kNone || c.j_hz == 0) continue;
    const bool oi = out.system.spins[i].nucleus == observed, oj = out.system.spins[j].nucleus == observed;
    if (!oi && !oj) continue;  // partner-partner
    // Exchange averages the couplings of OH, NH and SH protons away.
    if (out.system.spins[i].exchangeable || out.system.spins[j].exchangeable) continue;
    // Natural abundance: two 13C in one molecule are too rare to show.
    if (observed == SpinNucleus::C13 && oi && oj) continue;
    if (!seen.insert(std::minmax(i, j)).second) continue;
    out.system.couplings.push_back({i, j, c.j_hz});
  }
  return out;
}

Simulation simulate(const Prediction &prediction, const std::vector<Coupling> &couplings, Nucleus observe,
                    const SimulationOptions &options) {
  validate(options);
  MoleculeSpinSystem ms = spin_system(prediction, couplings, observe);
  const SpinNucleus observed = observe == Nucleus::H1 ? SpinNucleus::H1 : SpinNucleus::C13;
  Simulation sim = simulate(ms.system, observed, options);
  // Spin indices to the atoms of each signal's chemical class (a class's
  // atoms are all observed or all not, so the spins cover the class).
  for (Multiplet &m : sim.multiplets) {
    for (std::size_t &a : m.atoms) a = ms.atoms[a];
    std::sort(m.atoms.begin(), m.atoms.end());
  }
  std::stable_sort(sim.multiplets.begin(), sim.multiplets.end(), [](const Multiplet &a, const Multiplet &b) {
    return a.ppm > b.ppm || (a.ppm == b.ppm && a.atoms < b.atoms);
  });
  ms.warnings.insert(ms.warnings.end(), sim.warnings.begin(), sim.warnings.end());
  sim.warnings = std::move(ms.warnings);
  return sim;
}

}  // namespace nmrpred
