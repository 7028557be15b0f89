// Leave-one-out accuracy of the shift predictor over the built-in reference
// compounds: each compound is predicted in blind mode (every compound of the
// same constitution left out of the lookup) and compared with its assigned
// shifts. Prints overall and per-class figures; asserts nothing.
//
//   build/bin/nmrpred_loo_shifts [--increments-only] [--1h] [--worst N]
//
// --worst N lists the N largest errors (default 10), each with its sign
// (prediction minus reference value) in brackets.

#include <nmrpred/classes.hpp>
#include <nmrpred/io.hpp>
#include <nmrpred/shifts.hpp>
#include <nmrpred/tables.hpp>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <map>
#include <string>
#include <vector>

namespace {

struct Stats {
  std::vector<double> err;
  int within = 0;  // |error| <= uncertainty
  void add(double e, double u) {
    err.push_back(e);
    within += std::fabs(e) <= u;
  }
  void print(const char *name, double far) const {
    if (err.empty()) return;
    double abs = 0, sq = 0, mx = 0;
    int off = 0;
    for (double e : err) {
      abs += std::fabs(e);
      sq += e * e;
      mx = std::max(mx, std::fabs(e));
      off += std::fabs(e) > far;
    }
    const double n = static_cast<double>(err.size());
    std::printf("%-28s n=%5zu  MAE %6.2f  RMSE %6.2f  max %6.1f  >%.1f: %5.1f%% (%4d)  within +/-1u: %5.1f%%\n",
                name, err.size(), abs / n, std::sqrt(sq / n), mx, far, 100.0 * off / n, off, 100.0 * within / n);
  }
};

std::string carbon_type(const nmrpred::Molecule &m, std::size_t a) {
  bool aromatic = m.atom(a).aromatic, dbl_c = false, dbl_het = false, triple = false;
  const auto *bid = m.bond_ids_begin(a);
  for (auto it = m.neighbours_begin(a); it != m.neighbours_end(a); ++it, ++bid) {
    const auto o = m.bond(*bid).order;
    const auto z = m.atom(*it).atomic_number;
    if (o == nmrpred::BondOrder::Triple) triple = true;
    if (o == nmrpred::BondOrder::Double) (z == 6 ? dbl_c : dbl_het) = true;
  }
  if (triple) return "sp";
  if (dbl_het) return "carbonyl/C=X";
  if (aromatic) return "sp2 aromatic";
  if (dbl_c) return "sp2 alkene";
  return "sp3";
}

}  // namespace

std::string proton_type(const nmrpred::Molecule &m, std::size_t heavy) {
  const auto z = m.atom(heavy).atomic_number;
  if (z != 6) return "exchangeable (O/N/S-H)";
  bool aromatic = m.atom(heavy).aromatic, alkene = false, carbonyl = false, hetero = false, hetero_ring = false;
  const auto *bid = m.bond_ids_begin(heavy);
  for (auto it = m.neighbours_begin(heavy); it != m.neighbours_end(heavy); ++it, ++bid) {
    const auto nz = m.atom(*it).atomic_number;
    const auto o = m.bond(*bid).order;
    if (o == nmrpred::BondOrder::Double) (nz == 8 ? carbonyl : alkene) = true;
    if (o == nmrpred::BondOrder::Aromatic && nz != 6) hetero_ring = true;
    if (o == nmrpred::BondOrder::Single && nz != 6 && nz != 1) hetero = true;
  }
  if (carbonyl) return "aldehyde/formyl";
  if (aromatic) return hetero_ring ? "heteroaromatic" : "aromatic";
  if (alkene) return "alkene";
  return hetero ? "alkyl next to heteroatom" : "alkyl";
}

int run_h1(const nmrpred::Tables &tables, const nmrpred::ShiftOptions &opt, std::size_t n_worst) {
  Stats all;
  std::map<std::string, Stats> by_type, by_source;
  std::vector<std::pair<double, std::string>> worst;
  for (const auto &rc : tables.reference()) {
    const auto m = nmrpred::read_molecule(rc.smiles, nmrpred::Format::Smiles);
    const auto cls = nmrpred::compute_classes(m);
    nmrpred::ShiftOptions o = opt;
    o.solvent = rc.solvent;
    const auto shifts = nmrpred::predict_h1(m, cls, tables, o);
    std::map<std::size_t, std::vector<const nmrpred::Shift *>> on_heavy;
    for (const auto &s : shifts) on_heavy[static_cast<std::size_t>(m.attached_to(s.atom))].push_back(&s);
    for (const auto &as : rc.h1) {
      for (std::size_t k = 0; k < as.atoms.size(); ++k) {
        const auto heavy = as.atoms[k];
        const auto &hs = on_heavy[heavy];
        if (hs.empty()) continue;
        std::vector<double> truth;
        if (!as.pair_atoms && as.values.size() == 2) {
          // i=a|b or i,j=a|b: the two protons of each listed atom.
          truth.push_back(as.values[0]);
          truth.push_back(as.values[1]);
        } else if (as.pair_atoms) {
          truth.push_back(0.5 * (as.values[0] + as.values[1]));
        } else {
          truth.push_back(as.values[0]);
        }
        // Pair predictions and values in sorted order (which diastereotopic
        // proton is which is not stated).
        std::vector<const nmrpred::Shift *> ps(hs.begin(), hs.end());
        std::sort(ps.begin(), ps.end(), [](auto *a, auto *b) { return a->ppm < b->ppm; });
        std::sort(truth.begin(), truth.end());
        const bool pair = truth.size() == 2 && ps.size() >= 2;
        const std::size_t n = pair ? 2 : 1;
        for (std::size_t i = 0; i < n; ++i) {
          const auto *s = pair ? ps[i == 0 ? 0 : ps.size() - 1] : ps[0];
          const double t = pair ? truth[i] : (truth.size() == 2 ? 0.5 * (truth[0] + truth[1]) : truth[0]);
          // One value for all protons of the atom: compared with the mean of
          // their predictions (a diastereotopic pair may be predicted apart).
          double predicted = s->ppm;
          if (!pair) {
            predicted = 0;
            for (const auto *p : ps) predicted += p->ppm;
            predicted /= static_cast<double>(ps.size());
          }
          const double e = predicted - t;
          const auto type = proton_type(m, heavy);
          by_type[type].add(e, s->uncertainty_ppm);
          if (pair && (type == "alkyl" || type == "alkyl next to heteroatom"))
            by_type["sp3 CH2 pair (both listed)"].add(e, s->uncertainty_ppm);
          if (s->exchangeable) continue;
          all.add(e, s->uncertainty_ppm);
          by_source[s->source == nmrpred::ShiftSourceKind::Reference
                        ? "lookup sphere " + std::to_string(s->sphere) +
                              (s->method.find("corrected") != std::string::npos ? " corrected" : " direct")
                        : (s->source == nmrpred::ShiftSourceKind::Increments ? "increments" : "class average")]
              .add(e, s->uncertainty_ppm);
          char signed_e[32];
          std::snprintf(signed_e, sizeof signed_e, "%+.2f", e);
          worst.emplace_back(std::fabs(e), rc.id + " H on atom " + std::to_string(heavy) + " [" + signed_e + "] (" +
                                               s->method.str() + ")");
        }
      }
    }
  }
  std::printf("1H leave-one-out over %zu reference compounds (tables %s)%s\n", tables.reference().size(),
              tables.version().c_str(), opt.use_reference ? "" : ", increments only");
  all.print("non-exchangeable protons", 0.5);
  for (const auto &kv : by_type) kv.second.print(kv.first.c_str(), 0.5);
  for (const auto &kv : by_source) kv.second.print(kv.first.c_str(), 0.5);
  std::sort(worst.rbegin(), worst.rend());
  std::printf("largest errors:\n");
  for (std::size_t i = 0; i < n_worst && i < worst.size(); ++i) std::printf("  %6.2f  %s\n", worst[i].first, worst[i].second.c_str());
  return 0;
}

int main(int argc, char **argv) {
  nmrpred::ShiftOptions opt;
  opt.blind = true;
  bool h1 = false;
  std::size_t n_worst = 10;
  for (int i = 1; i < argc; ++i) {
    if (std::strcmp(argv[i], "--increments-only") == 0) opt.use_reference = false;
    if (std::strcmp(argv[i], "--1h") == 0) h1 = true;
    if (std::strcmp(argv[i], "--worst") == 0 && i + 1 < argc) n_worst = std::strtoul(argv[++i], nullptr, 10);
  }
  const auto tables = nmrpred::Tables::builtin();
  if (h1) return run_h1(*tables, opt, n_worst);
  Stats all;
  std::map<std::string, Stats> by_type, by_h, by_source;
  std::vector<std::pair<double, std::string>> worst;
  for (const auto &rc : tables->reference()) {
    const auto m = nmrpred::read_molecule(rc.smiles, nmrpred::Format::Smiles);
    const auto cls = nmrpred::compute_classes(m);
    // Each compound in the solvent it was measured in (13C terms of
    // tables/increments/c13_solvent.tsv).
    nmrpred::ShiftOptions o = opt;
    o.solvent = rc.solvent;
    const auto shifts = nmrpred::predict_c13(m, cls, *tables, o);
    std::map<std::size_t, const nmrpred::Shift *> by_atom;
    for (const auto &s : shifts) by_atom[s.atom] = &s;
    for (const auto &as : rc.c13) {
      for (std::size_t k = 0; k < as.atoms.size(); ++k) {
        const auto a = as.atoms[k];
        // An unassigned pair is compared with its mean: no method can tell
        // which value belongs to which atom.
        const double truth = as.values.size() == as.atoms.size() && as.values.size() == 2
                                 ? 0.5 * (as.values[0] + as.values[1])
                                 : as.values[0];
        const auto *s = by_atom.at(a);
        const double e = s->ppm - truth;
        all.add(e, s->uncertainty_ppm);
        by_type[carbon_type(m, a)].add(e, s->uncertainty_ppm);
        const char *hname[] = {"C", "CH", "CH2", "CH3", "CH4"};
        by_h[hname[std::min<std::size_t>(m.hydrogen_count(a), 4)]].add(e, s->uncertainty_ppm);
        by_source[s->source == nmrpred::ShiftSourceKind::Reference
                      ? "lookup sphere " + std::to_string(s->sphere) +
                            (s->method.find("corrected") != std::string::npos ? " corrected" : " direct")
                      : (s->source == nmrpred::ShiftSourceKind::Increments ? "increments" : "class average")]
            .add(e, s->uncertainty_ppm);
        char signed_e[32];
        std::snprintf(signed_e, sizeof signed_e, "%+.1f", e);
        worst.emplace_back(std::fabs(e), rc.id + " atom " + std::to_string(a) + " [" + signed_e + "] (" + s->method.str() + ")");
      }
    }
  }
  std::printf("13C leave-one-out over %zu reference compounds (tables %s)%s\n", tables->reference().size(),
              tables->version().c_str(), opt.use_reference ? "" : ", increments only");
  all.print("all carbons", 5.0);
  for (const auto &kv : by_type) kv.second.print(kv.first.c_str(), 5.0);
  for (const auto &kv : by_h) kv.second.print(kv.first.c_str(), 5.0);
  for (const auto &kv : by_source) kv.second.print(kv.first.c_str(), 5.0);
  std::sort(worst.rbegin(), worst.rend());
  std::printf("largest errors:\n");
  for (std::size_t i = 0; i < n_worst && i < worst.size(); ++i) std::printf("  %6.1f  %s\n", worst[i].first, worst[i].second.c_str());
  return 0;
}
