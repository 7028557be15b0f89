// predict_couplings(): every proton pair within five bonds through a
// breadth-first search over heavy atoms from each proton-bearing atom, the
// rules of proton_proton.cpp and karplus.cpp on each pair, then the
// heteronuclear couplings (heteronuclear.cpp).

#include <nmrpred/couplings.hpp>
#include <nmrpred/error.hpp>

#include <algorithm>
#include <cmath>
#include <map>
#include <optional>
#include <tuple>
#include <utility>

#include <fmt/format.h>

#include "couplings/coupling_tables.hpp"
#include "couplings/engine.hpp"
#include "shifts/increment_support.hpp"

namespace nmrpred {

namespace {

// gamma(2H)/gamma(1H) (source: HARRIS-2001, frequency ratio 15.350609 %).
constexpr double kDeuteriumRatio = 0.15350609;
// Carriers up to three bonds apart: J(H,H) through at most five bonds.
constexpr int kMaxCarrierDistance = 3;

// Protons (and deuterons) of heavy atom c that the J(H,H) rules consider.
std::vector<std::uint32_t> coupled_hydrogens(detail::Engine &e, std::size_t c) {
  std::vector<std::uint32_t> out;
  for (auto h : e.hydrogens(c)) {
    const auto iso = e.m.atom(h).isotope;
    if (iso > 2) {
      e.warn(fmt::format("tritium {} is not coupled (no J(H,T) rules)", detail::atom_label(e.m, h)));
      continue;
    }
    out.push_back(h);
  }
  return out;
}

bool carrier_ok(detail::Engine &e, std::size_t c) {
  const auto &a = e.m.atom(c);
  const unsigned z = a.atomic_number;
  const bool exchange = z == 7 || z == 8 || z == 16;
  if (z != 6 && !(exchange && e.opt.exchangeable)) return false;
  if (a.radical_electrons != 0 || (z == 6 && a.formal_charge != 0)) {
    if (!e.hydrogens(c).empty())
      e.warn(fmt::format("no coupling rules for protons on the {} atom {}", a.radical_electrons ? "radical" : "charged",
                         detail::atom_label(e.m, c)));
    return false;
  }
  return true;
}

void proton_pairs(detail::Engine &e, std::vector<Coupling> &out, std::vector<bool> &geometric) {
  const Molecule &m = e.m;
  const std::size_t heavy = m.heavy_atom_count();
  std::vector<int> dist(heavy, -1);
  std::vector<std::uint32_t> touched, frontier, next;
  std::vector<bool> usable(heavy, false);
  std::vector<std::vector<std::uint32_t>> hs(heavy);
  for (std::size_t c = 0; c < heavy; ++c) {
    if (e.hydrogens(c).empty()) continue;
    usable[c] = carrier_ok(e, c);
    if (usable[c]) hs[c] = coupled_hydrogens(e, c);
  }
  for (std::size_t c1 = 0; c1 < heavy; ++c1) {
    if (!usable[c1] || hs[c1].empty()) continue;
    for (auto t : touched) dist[t] = -1;
    touched.assign(1, static_cast<std::uint32_t>(c1));
    dist[c1] = 0;
    frontier.assign(1, static_cast<std::uint32_t>(c1));
    for (int d = 1; d <= kMaxCarrierDistance; ++d) {
      next.clear();
      for (auto a : frontier)
        for (auto b : e.heavy(a))
          if (dist[b] < 0) {
            dist[b] = d;
            touched.push_back(b);
            next.push_back(b);
          }
      frontier.swap(next);
    }
    std::sort(touched.begin(), touched.end());
    for (auto c2 : touched) {
      if (c2 < c1 || !usable[c2] || hs[c2].empty()) continue;
      const int d = dist[c2];
      // Most rules depend on the two carriers only: evaluate once per
      // carrier pair unless the estimate says it is proton-specific.
      bool evaluated = false;
      std::optional<detail::JEstimate> shared;
      for (auto h1 : hs[c1])
        for (auto h2 : hs[c2]) {
          if (c1 == c2 && h2 <= h1) continue;
          const bool d1 = m.atom(h1).isotope == 2, d2 = m.atom(h2).isotope == 2;
          if (d1 && d2) continue;  // J(D,D) is (0.1535)^2 of J(H,H): never resolved
          std::optional<detail::JEstimate> est;
          if (evaluated && (!shared || !shared->per_proton)) {
            est = shared;
          } else {
            est = detail::proton_pair(e, h1, c1, h2, c2, d);
            if (!evaluated) shared = est, evaluated = true;
          }
          if (!est) continue;
          Coupling c;
          c.a = std::min(h1, h2);
          c.b = std::max(h1, h2);
          c.bonds = d + 2;
          c.j_hz = est->j_hz;
          c.uncertainty_hz = est->uncertainty_hz;
          c.rule = std::move(est->rule);
          c.source = std::move(est->source);
          c.method = std::move(est->method);
          if (d1 || d2) {
            c.j_hz *= kDeuteriumRatio;
            c.uncertainty_hz *= kDeuteriumRatio;
            c.method += fmt::format("; J(H,D) = J(H,H) x gamma(2H)/gamma(1H) 0.15351 = {:.2f}", c.j_hz);
          }
          out.push_back(std::move(c));
          geometric.push_back(est->geometry);
        }
    }
  }
}

// Couplings taken from 3D coordinates are averaged over every pair with the
// same two chemical classes and bond count: the class model says those
// pairs are exchanged by symmetry or by fast motion (methyl rotation, ring
// flips), and equivalent pairs must get one value.
void average_geometric(const AtomClasses &classes, std::vector<Coupling> &cs, const std::vector<bool> &geometric) {
  if (std::none_of(geometric.begin(), geometric.end(), [](bool g) { return g; })) return;
  using Key = std::tuple<std::uint32_t, std::uint32_t, int>;
  std::map<Key, std::vector<std::size_t>> groups;
  auto key = [&](const Coupling &c) {
    const auto p = classes.chemical[c.a], q = classes.chemical[c.b];
    return Key{std::min(p, q), std::max(p, q), c.bonds};
  };
  for (std::size_t i = 0; i < cs.size(); ++i) groups[key(cs[i])].push_back(i);
  for (const auto &[k, members] : groups) {
    if (members.size() < 2) continue;
    if (std::none_of(members.begin(), members.end(), [&](std::size_t i) { return geometric[i]; })) continue;
    double sum = 0, var = 0;
    for (auto i : members) sum += cs[i].j_hz, var = std::max(var, cs[i].uncertainty_hz);
    const double mean = sum / static_cast<double>(members.size());
    for (auto i : members) {
      cs[i].j_hz = mean;
      cs[i].uncertainty_hz = var;
      cs[i].method += fmt::format("; averaged over the {} pairs of these two classes: {:.2f}", members.size(), mean);
    }
  }
}

}  // namespace

std::vector<Coupling> predict_couplings(const Molecule &molecule, const AtomClasses &classes, const Tables &tables,
                                        const CouplingOptions &options, std::vector<std::string> *warnings) {
  if (classes.chemical.size() != molecule.atom_count() || classes.topological.size() != molecule.atom_count())
    throw ArgumentError("predict_couplings: classes belong to another molecule");
  for (auto c : classes.chemical)
    if (c >= classes.chemical_count) throw ArgumentError("predict_couplings: classes are inconsistent");
  if (!std::isfinite(options.min_abs_hz) || options.min_abs_hz < 0)
    throw ArgumentError(
        fmt::format("predict_couplings: min_abs_hz must be a finite number >= 0, not {}", options.min_abs_hz));
  const auto &parsed = tables.coupling_tables();
  if (!parsed) throw InternalError("predict_couplings: table set without parsed coupling tables");
  detail::Engine e(molecule, classes, *parsed, options);
  std::vector<Coupling> out;
  std::vector<bool> geometric;
  if (options.proton_proton) {
    if (!parsed->hh_present)
      e.warn("this table set has no couplings/hh_rules.tsv: no J(H,H) estimated");
    else
      proton_pairs(e, out, geometric);
    if (!parsed->alkene_present) e.warn("this table set has no couplings/hh_alkene.tsv: no alkene J(H,H)");
    if (!parsed->aromatic_present)
      e.warn(
          "this table set has no couplings/hh_aromatic.tsv: ring-position J(H,H) replaced by general aromatic values");
    if (!parsed->karplus.present && options.use_geometry && molecule.has_3d_coordinates())
      e.warn("this table set has no usable couplings/karplus.tsv: 3D coordinates not used");
  }
  average_geometric(classes, out, geometric);
  out.erase(
      std::remove_if(out.begin(), out.end(), [&](const Coupling &c) { return std::fabs(c.j_hz) < options.min_abs_hz; }),
      out.end());
  if (options.heteronuclear) {
    if (!parsed->hetero_present)
      e.warn("this table set has no couplings/heteronuclear.tsv: no J(H,F), J(H,P), J(C,F), J(C,P)");
    if (!parsed->one_bond_present) e.warn("this table set has no couplings/ch_one_bond.tsv: no J(C,D)");
    detail::heteronuclear_couplings(e, out);
  }
  std::sort(out.begin(), out.end(),
            [](const Coupling &x, const Coupling &y) { return std::tie(x.a, x.b) < std::tie(y.a, y.b); });
  if (warnings) warnings->insert(warnings->end(), e.warnings().begin(), e.warnings().end());
  return out;
}

}  // namespace nmrpred
