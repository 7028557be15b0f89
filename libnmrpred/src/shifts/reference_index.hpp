#ifndef NMRPRED_SHIFTS_REFERENCE_INDEX_HPP
#define NMRPRED_SHIFTS_REFERENCE_INDEX_HPP

// Lookup structures built from the reference compounds: for each nucleus and
// each HOSE sphere level, the assigned shifts of every reference atom whose
// environment has that code.

#include <array>
#include <cstdint>
#include <memory>
#include <string>
#include <unordered_map>
#include <vector>

#include <nmrpred/hose.hpp>
#include <nmrpred/tables.hpp>

namespace nmrpred::detail {

struct IndexEntry {
  double shift_ppm;
  // What the 13C increment rules give for this reference atom (NaN where no
  // rule applies): lookups use shift - increment to correct the rules for
  // the query's own environment.
  double increment_ppm;
  std::uint32_t compound;  // index into Tables::reference()
};

enum IndexNucleus { kIndexC13 = 0, kIndexH1 = 1 };

struct ReferenceIndex {
  // levels[nucleus][k] maps the code with k spheres (1..kMaxHoseSpheres).
  std::array<std::array<std::unordered_map<std::string, std::vector<IndexEntry>>, kMaxHoseSpheres + 1>, 2> levels;
  std::vector<std::uint64_t> constitution;  // per compound
};

// Needs tables.reference() and tables.c13_increments(); not tables.reference_index().
std::shared_ptr<const ReferenceIndex> build_reference_index(const Tables &tables);

}  // namespace nmrpred::detail

#endif
