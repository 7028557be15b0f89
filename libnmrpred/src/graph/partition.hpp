#ifndef NMRPRED_GRAPH_PARTITION_HPP
#define NMRPRED_GRAPH_PARTITION_HPP

// Private to src/graph: a coloured graph view of one fragment of a Molecule,
// ordered partitions of its atoms, and refinement to the coarsest equitable
// partition. The refinement only ever looks at colours, bond orders and cell
// positions, never at atom indices, so the ordered partition it produces does
// not depend on the input atom order.

#include <array>
#include <cstdint>
#include <vector>

#include <nmrpred/molecule.hpp>

namespace nmrpred::detail {

inline constexpr std::uint32_t kUnset = 0xFFFFFFFFu;

// Tetrahedral configuration: looking from lig[0] to the centre, lig[1..3] run
// clockwise. -1 stands for a lone pair.
struct TetraConfig {
  std::uint32_t centre = 0;
  std::array<std::int32_t, 4> lig{{-1, -1, -1, -1}};
};

// Double-bond geometry: ru (on u) and rv (on v) are cis or trans; -1 = lone pair.
struct DoubleConfig {
  std::uint32_t u = 0, v = 0;
  std::int32_t ru = -1, rv = -1;
  bool cis = false;
};

struct Graph {
  std::uint32_t n = 0;
  std::vector<std::uint64_t> colour;
  std::vector<std::uint32_t> off, nbr;  // CSR, neighbours sorted by local index
  std::vector<std::uint8_t> order;      // bond order code 1..4, parallel to nbr
  std::vector<std::uint32_t> global;    // local -> molecule atom index
  std::vector<char> leaf;               // degree 1
  std::vector<TetraConfig> tetra;
  std::vector<std::int32_t> tetra_of;   // per atom: index into tetra or -1
  std::vector<DoubleConfig> dbl;
  // Per atom: index into dbl of the double bond it ends, or -1. One is
  // enough: an atom on two double bonds is cumulated, which has no model.
  std::vector<std::int32_t> dbl_of;

  std::uint32_t degree(std::uint32_t a) const { return off[a + 1] - off[a]; }
  // Bond order code between a and b, 0 if not bonded.
  std::uint8_t bond(std::uint32_t a, std::uint32_t b) const;
};

struct Partition {
  std::vector<std::uint32_t> elems;  // atoms, cell by cell
  std::vector<std::uint32_t> pos;    // position of each atom in elems
  std::vector<std::uint32_t> cell;   // start position of each atom's cell
  std::vector<std::uint32_t> end;    // for a cell start s: one past its last position
  std::uint32_t size_of(std::uint32_t atom) const { return end[cell[atom]] - cell[atom]; }
};

// Reusable buffers for refine(); one per thread of work.
struct RefineScratch {
  std::vector<std::uint64_t> key;
  std::vector<std::uint32_t> touched_atoms;
  struct SortItem {
    std::uint64_t hi, lo;
  };
  std::vector<SortItem> sort_buf;  // touched atoms with their sort keys
  // Cell starts waiting to serve as splitters, one bit each: taking the
  // lowest is a scan of a word or two, cheaper than a heap.
  std::vector<std::uint64_t> pending;
  std::uint32_t pending_count = 0;
  std::uint32_t pending_low = 0;  // no bit set in words below this one
  bool is_pending(std::uint32_t start) const { return (pending[start >> 6] >> (start & 63)) & 1u; }
  void reset(std::uint32_t n);
};

// Builds the initial partition (cells of equal colour, ordered by colour) and
// refines it.
void initial_partition(const Graph &g, Partition &p, RefineScratch &s);
// Makes `atom` a singleton cell at the front of its cell and refines.
// Returns a hash of everything the refinement did, so two branches can be
// compared cheaply (equal structure is necessary for an isomorphism); 0
// without `traced`, which saves the hashing when nothing compares.
std::uint64_t individualize(const Graph &g, Partition &p, std::uint32_t atom, RefineScratch &s, bool traced = true);

}  // namespace nmrpred::detail

#endif
