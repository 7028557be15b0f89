#ifndef NMRPRED_SHIFTS_INCREMENT_SUPPORT_HPP
#define NMRPRED_SHIFTS_INCREMENT_SUPPORT_HPP

// Pieces shared by the 13C and 1H increment-rule sources: reading a rule
// table row by row with errors naming file and line, the uncertainty model of
// an additive scheme, and small graph helpers.

#include <cstdint>
#include <optional>
#include <string>
#include <vector>

#include <fmt/format.h>

#include <nmrpred/error.hpp>
#include <nmrpred/molecule.hpp>
#include <nmrpred/tables.hpp>

#include "graph/smarts.hpp"
#include "tables/parse.hpp"

namespace nmrpred::detail {

using Opt = std::optional<double>;

// Uncertainty of an additive scheme (one standard deviation, ppm):
// sigma = sqrt(floor^2 + (slope * n)^2) with n the number of increments
// summed, because additive rules lose accuracy with every substituent.
struct Spread {
  double floor_ppm;
  double slope_ppm;
};

// One rule table, read once; a table absent from the set reads as empty.
class TableReader {
 public:
  TableReader(const Tables &tables, const char *path) : path_(path) {
    const auto text = tables.file_text(path);
    present_ = !text.empty();
    if (present_) table_ = parse_tsv(text, path, true);
  }
  bool present() const { return present_; }
  const TsvTable &table() const { return table_; }
  std::size_t col(const char *name) const { return column(table_, name); }
  [[noreturn]] void fail(const TsvRow &row, const std::string &why) const {
    throw TablesError(fmt::format("{}:{}: {}", path_, row.line, why));
  }
  Opt ppm(const TsvRow &row, std::size_t c) const {
    const auto &f = row.fields[c];
    if (f == "-") return std::nullopt;
    double v = 0;
    if (!parse_double(f, v)) fail(row, fmt::format("column '{}': '{}' is not a number", table_.columns[c], f));
    return v;
  }
  double need_ppm(const TsvRow &row, std::size_t c) const {
    const auto v = ppm(row, c);
    if (!v) fail(row, fmt::format("column '{}' needs a number", table_.columns[c]));
    return *v;
  }
  int integer(const TsvRow &row, std::size_t c, int lo, int hi) const {
    std::uint32_t v = 0;
    if (!parse_index(row.fields[c], v) || static_cast<int>(v) < lo || static_cast<int>(v) > hi)
      fail(row, fmt::format("column '{}': '{}' is not an integer {}..{}", table_.columns[c], row.fields[c], lo, hi));
    return static_cast<int>(v);
  }
  std::vector<int> indices(const TsvRow &row, std::size_t c) const {
    std::vector<int> out;
    for (auto part : split(row.fields[c], ',')) {
      std::uint32_t v = 0;
      if (!parse_index(part, v)) fail(row, fmt::format("column '{}': bad atom index '{}'", table_.columns[c], part));
      out.push_back(static_cast<int>(v));
    }
    return out;
  }
  SmartsPattern smarts(const TsvRow &row, std::size_t c) const {
    try {
      return SmartsPattern(row.fields[c]);
    } catch (const TablesError &e) {
      fail(row, e.what());
    }
  }

 private:
  const char *path_;
  bool present_ = false;
  TsvTable table_;
};

// These two run inside every rule of both nuclei: the atom is checked once,
// its neighbours and bonds are then read without a range check each.
inline bool is_sp3_carbon(const Molecule &m, std::size_t a) {
  const auto &at = m.atom(a);
  if (at.atomic_number != 6 || at.aromatic || at.formal_charge != 0 || at.radical_electrons != 0) return false;
  if (m.degree(a) != 4) return false;
  const auto *bid = m.bond_ids_begin(a);
  const Bond *bonds = m.bonds().data();
  for (std::size_t i = 0; i < 4; ++i)
    if (bonds[bid[i]].order != BondOrder::Single) return false;
  return true;
}

template <class F>
void for_heavy_neighbours(const Molecule &m, std::size_t a, F f) {
  const auto *bid = m.bond_ids_begin(a);
  const Atom *atoms = m.atoms().data();
  const Bond *bonds = m.bonds().data();
  for (auto it = m.neighbours_begin(a), end = m.neighbours_end(a); it != end; ++it, ++bid)
    if (atoms[*it].atomic_number != 1) f(static_cast<std::size_t>(*it), bonds[*bid].order);
}

inline std::string atom_label(const Molecule &m, std::size_t a) {
  return fmt::format("{}{}", Molecule::element_symbol(m.atom(a).atomic_number), a);
}

}  // namespace nmrpred::detail

#endif
