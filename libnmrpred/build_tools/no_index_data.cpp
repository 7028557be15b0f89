// The precomputed entries of a library without any: linked into the program
// that works them out (make_index_data.cpp), which builds every index from
// the tables.

#include "shifts/reference_index.hpp"

namespace nmrpred::detail {

const PrecomputedEntries kPrecomputedEntries = {0, "", 0, nullptr, nullptr, 0};

}  // namespace nmrpred::detail
