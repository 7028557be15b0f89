// The shift engine: small sources with one interface, tried in order.

#include <nmrpred/error.hpp>
#include <nmrpred/hose.hpp>
#include <nmrpred/shifts.hpp>

#include <algorithm>
#include <cmath>
#include <map>
#include <memory>

#include <fmt/format.h>

#include "shifts/reference_index.hpp"
#include "shifts/sources.hpp"

namespace nmrpred {

namespace detail {

namespace {

// Lookup settings per sphere level k (index k). The support is the number of
// distinct reference compounds needed to accept a level; the prior is the
// typical error of a match at that level, calibrated by the leave-one-out
// benchmark (benchmarks/README.md).
struct LevelSetting {
  int min_support;
  double prior_ppm;
};
constexpr LevelSetting kC13Levels[kMaxHoseSpheres + 1] = {
    {0, 0}, {3, 7.0}, {2, 3.6}, {1, 2.4}, {1, 1.7}, {1, 1.3}, {1, 1.0}};
constexpr LevelSetting kH1Levels[kMaxHoseSpheres + 1] = {
    {0, 0}, {3, 0.9}, {2, 0.45}, {1, 0.25}, {1, 0.18}, {1, 0.14}, {1, 0.12}};

class ReferenceLookup final : public ShiftSource {
 public:
  explicit ReferenceLookup(bool user) : user_(user) {}

  bool estimate(const ShiftQuery &q, std::size_t atom, Shift &out) const override {
    const auto &index = q.tables.reference_index();
    const auto &refs = q.tables.reference();
    const int nucleus = q.nucleus == Nucleus::C13 ? kIndexC13 : kIndexH1;
    const auto *levels = q.nucleus == Nucleus::C13 ? kC13Levels : kH1Levels;
    const auto &parts = q.parts(atom);
    for (int k = kMaxHoseSpheres; k >= 1; --k) {
      const auto &map = index.levels[nucleus][k];
      const auto it = map.find(join_hose_spheres(parts, k));
      if (it == map.end()) continue;
      // Average per compound first, so one compound with many equal atoms
      // does not outvote the others.
      std::map<std::uint32_t, std::pair<double, int>> per_compound;
      for (const auto &e : it->second) {
        const auto &rc = refs[e.compound];
        if (rc.user != user_) continue;
        if (q.options.blind && index.constitution[e.compound] == q.constitution) continue;
        auto &acc = per_compound[e.compound];
        acc.first += e.shift_ppm;
        acc.second += 1;
      }
      const int n = static_cast<int>(per_compound.size());
      if (n < (user_ ? 1 : levels[k].min_support)) continue;
      std::vector<double> values;
      for (const auto &kv : per_compound) values.push_back(kv.second.first / kv.second.second);
      std::sort(values.begin(), values.end());
      // Median resists a single odd reference better than the mean.
      const double median = values.size() % 2 ? values[values.size() / 2]
                                              : 0.5 * (values[values.size() / 2 - 1] + values[values.size() / 2]);
      double var = 0;
      for (double v : values) var += (v - median) * (v - median);
      const double sd = n > 1 ? std::sqrt(var / (n - 1)) : 0.0;
      out.ppm = median;
      out.uncertainty_ppm = std::sqrt(levels[k].prior_ppm * levels[k].prior_ppm + sd * sd);
      out.source = user_ ? ShiftSourceKind::UserReference : ShiftSourceKind::Reference;
      out.sphere = k;
      out.method = fmt::format("{} reference lookup, HOSE sphere {}, {} compound{}",
                               user_ ? "user" : "built-in", k, n, n == 1 ? "" : "s");
      out.references.clear();
      for (const auto &kv : per_compound) {
        if (out.references.size() == 10) break;
        out.references.push_back(refs[kv.first].id);
      }
      return true;
    }
    return false;
  }

 private:
  bool user_;
};

}  // namespace

const std::vector<std::string> &ShiftQuery::parts(std::size_t atom) const {
  auto &slot = parts_cache_[atom];
  if (slot.empty()) slot = hose_spheres(molecule, classes, atom, kMaxHoseSpheres);
  return slot;
}

std::vector<Shift> run_sources(const ShiftQuery &q, const std::vector<const ShiftSource *> &sources,
                               const std::vector<std::size_t> &atoms, std::vector<std::string> *warnings) {
  std::vector<Shift> out;
  std::map<std::uint32_t, std::size_t> by_class;  // chemical class -> position in out
  for (auto atom : atoms) {
    const auto cls = q.classes.chemical[atom];
    const auto seen = by_class.find(cls);
    if (seen != by_class.end()) {
      // Equivalent atoms always share the value.
      Shift copy = out[seen->second];
      copy.atom = atom;
      out.push_back(std::move(copy));
      continue;
    }
    Shift s;
    s.atom = atom;
    s.nucleus = q.nucleus;
    bool done = false;
    for (const auto *src : sources)
      if (src->estimate(q, atom, s)) {
        done = true;
        break;
      }
    if (!done) throw InternalError(fmt::format("atom {}: no shift source answered", atom));
    if (s.source == ShiftSourceKind::ClassAverage && warnings)
      warnings->push_back(fmt::format("atom {}: no reference environment or increment rule fits; "
                                      "class average with a large uncertainty",
                                      atom));
    by_class.emplace(cls, out.size());
    out.push_back(std::move(s));
  }
  return out;
}

std::unique_ptr<ShiftSource> make_reference_lookup(bool user) { return std::make_unique<ReferenceLookup>(user); }

}  // namespace detail

std::vector<Shift> predict_c13(const Molecule &molecule, const AtomClasses &classes, const Tables &tables,
                               const ShiftOptions &options, std::vector<std::string> *warnings) {
  if (classes.chemical.size() != molecule.atom_count())
    throw ArgumentError("predict_c13: classes belong to another molecule");
  detail::ShiftQuery q(molecule, classes, tables, options, Nucleus::C13);
  const auto user = detail::make_reference_lookup(true);
  const auto builtin = detail::make_reference_lookup(false);
  const auto fallback = detail::make_c13_class_average();
  std::unique_ptr<detail::ShiftSource> increments;
  if (options.use_increments) increments = detail::make_c13_increments(tables);
  std::vector<const detail::ShiftSource *> sources;
  if (options.use_reference) {
    sources.push_back(user.get());
    sources.push_back(builtin.get());
  }
  if (increments) sources.push_back(increments.get());
  sources.push_back(fallback.get());
  std::vector<std::size_t> atoms;
  for (std::size_t a = 0; a < molecule.heavy_atom_count(); ++a)
    if (molecule.atom(a).atomic_number == 6) atoms.push_back(a);
  return detail::run_sources(q, sources, atoms, warnings);
}

}  // namespace nmrpred
