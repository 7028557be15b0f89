// Leave-one-out accuracy of the shift predictor over the built-in reference
// compounds: each compound is predicted in blind mode (every compound of the
// same constitution left out of the lookup) and compared with its assigned
// shifts. Prints overall and per-class figures; asserts nothing.
//
//   build/bin/nmrpred_loo_shifts [--increments-only]

#include <nmrpred/classes.hpp>
#include <nmrpred/io.hpp>
#include <nmrpred/shifts.hpp>
#include <nmrpred/tables.hpp>

#include <algorithm>
#include <cmath>
#include <cstdio>
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
    std::printf("%-28s n=%5zu  MAE %6.2f  RMSE %6.2f  max %6.1f  >%.1f: %5.1f%%  within +/-1u: %5.1f%%\n", name,
                err.size(), abs / n, std::sqrt(sq / n), mx, far, 100.0 * off / n, 100.0 * within / n);
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

int main(int argc, char **argv) {
  nmrpred::ShiftOptions opt;
  opt.blind = true;
  if (argc > 1 && std::strcmp(argv[1], "--increments-only") == 0) opt.use_reference = false;
  const auto tables = nmrpred::Tables::builtin();
  Stats all;
  std::map<std::string, Stats> by_type, by_h, by_source;
  std::vector<std::pair<double, std::string>> worst;
  for (const auto &rc : tables->reference()) {
    const auto m = nmrpred::read_molecule(rc.smiles, nmrpred::Format::Smiles);
    const auto cls = nmrpred::compute_classes(m);
    const auto shifts = nmrpred::predict_c13(m, cls, *tables, opt);
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
        worst.emplace_back(std::fabs(e), rc.id + " atom " + std::to_string(a) + " (" + s->method + ")");
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
  for (std::size_t i = 0; i < 10 && i < worst.size(); ++i) std::printf("  %6.1f  %s\n", worst[i].first, worst[i].second.c_str());
  return 0;
}
