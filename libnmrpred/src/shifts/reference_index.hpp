#ifndef NMRPRED_SHIFTS_REFERENCE_INDEX_HPP
#define NMRPRED_SHIFTS_REFERENCE_INDEX_HPP

// Lookup structures built from the reference compounds: for each origin
// (built-in or user), nucleus and HOSE sphere level, the reference atoms whose
// environment has a given code, already averaged per compound and summarised,
// so a lookup costs one hash probe per level.

#include <array>
#include <cstdint>
#include <memory>
#include <string>
#include <unordered_map>
#include <vector>

#include <nmrpred/hose.hpp>
#include <nmrpred/tables.hpp>

namespace nmrpred::detail {

enum IndexNucleus { kIndexC13 = 0, kIndexH1 = 1 };
enum IndexOrigin { kBuiltin = 0, kUser = 1 };

// One reference compound's atoms with one code, averaged.
struct CompoundValue {
  std::uint32_t compound;  // index into Tables::reference()
  double shift_ppm;
  // shift - what the 13C increment rules give for the same atoms; NaN where
  // the rules do not apply. Lookups use it to correct the rules for the
  // query's own environment.
  double residual_ppm;
};

struct Summary {
  int n = 0;  // compounds
  double median = 0, sd = 0;
};

struct Bucket {
  std::vector<CompoundValue> compounds;  // sorted by compound
  Summary shift, residual;               // over all compounds (residual: those that have one)
};

// Hash of the code with `spheres` spheres, computed from its parts
// (hose_spheres()/split_hose_code()) without building the text.
std::uint64_t hose_key(const std::vector<std::string> &parts, int spheres);

// Median and sample standard deviation about it.
Summary summarise(std::vector<double> values);

struct ReferenceIndex {
  // levels[origin][nucleus][k] maps hose_key(parts, k), k = 1..kMaxHoseSpheres.
  std::array<std::array<std::array<std::unordered_map<std::uint64_t, Bucket>, kMaxHoseSpheres + 1>, 2>, 2> levels;
  std::vector<std::uint64_t> constitution;  // per compound
  bool has_user = false;
};

// Needs tables.reference() and tables.c13_increments(); not tables.reference_index().
std::shared_ptr<const ReferenceIndex> build_reference_index(const Tables &tables);

}  // namespace nmrpred::detail

#endif
