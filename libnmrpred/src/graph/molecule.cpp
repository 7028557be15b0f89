#include <nmrpred/error.hpp>
#include <nmrpred/molecule.hpp>

#include <algorithm>
#include <array>
#include <numeric>

#include <fmt/format.h>

namespace nmrpred {

namespace {

constexpr std::array<const char *, 119> kSymbols = {
    "?",  "H",  "He", "Li", "Be", "B",  "C",  "N",  "O",  "F",  "Ne", "Na", "Mg", "Al", "Si", "P",
    "S",  "Cl", "Ar", "K",  "Ca", "Sc", "Ti", "V",  "Cr", "Mn", "Fe", "Co", "Ni", "Cu", "Zn", "Ga",
    "Ge", "As", "Se", "Br", "Kr", "Rb", "Sr", "Y",  "Zr", "Nb", "Mo", "Tc", "Ru", "Rh", "Pd", "Ag",
    "Cd", "In", "Sn", "Sb", "Te", "I",  "Xe", "Cs", "Ba", "La", "Ce", "Pr", "Nd", "Pm", "Sm", "Eu",
    "Gd", "Tb", "Dy", "Ho", "Er", "Tm", "Yb", "Lu", "Hf", "Ta", "W",  "Re", "Os", "Ir", "Pt", "Au",
    "Hg", "Tl", "Pb", "Bi", "Po", "At", "Rn", "Fr", "Ra", "Ac", "Th", "Pa", "U",  "Np", "Pu", "Am",
    "Cm", "Bk", "Cf", "Es", "Fm", "Md", "No", "Lr", "Rf", "Db", "Sg", "Bh", "Hs", "Mt", "Ds", "Rg",
    "Cn", "Nh", "Fl", "Mc", "Lv", "Ts", "Og"};

}  // namespace

const char *Molecule::element_symbol(unsigned atomic_number) noexcept {
  return atomic_number < kSymbols.size() ? kSymbols[atomic_number] : "?";
}

unsigned Molecule::element_from_symbol(const std::string &symbol) noexcept {
  for (unsigned z = 1; z < kSymbols.size(); ++z)
    if (symbol == kSymbols[z]) return z;
  return 0;
}

Molecule::Molecule(MoleculeData data) : data_(std::move(data)) {
  const std::size_t n = data_.atoms.size();
  if (n > 0xFFFFFFF0u) throw InputError("molecule has too many atoms");
  for (std::size_t i = 0; i < n; ++i) {
    const unsigned z = data_.atoms[i].atomic_number;
    if (z == 0 || z >= kSymbols.size())
      throw InputError(fmt::format("atom {}: atomic number {} is not an element", i, z));
  }
  // Heavy atoms first, then hydrogens: later stages rely on it.
  heavy_count_ = 0;
  while (heavy_count_ < n && data_.atoms[heavy_count_].atomic_number != 1) ++heavy_count_;
  for (std::size_t i = heavy_count_; i < n; ++i)
    if (data_.atoms[i].atomic_number != 1)
      throw InputError(fmt::format("atom {}: heavy atom after the first hydrogen", i));

  if (!data_.input_index.empty() && data_.input_index.size() != n)
    throw InputError("input_index size does not match the atom count");
  if (!data_.coordinates.empty() && data_.coordinates.size() != 3 * n)
    throw InputError("coordinate count does not match the atom count");

  std::vector<std::uint32_t> deg(n, 0);
  for (auto &b : data_.bonds) {
    if (b.begin > b.end) std::swap(b.begin, b.end);
    if (b.end >= n) throw InputError(fmt::format("bond {}-{}: atom index out of range", b.begin, b.end));
    if (b.begin == b.end) throw InputError(fmt::format("bond {}-{}: an atom bonded to itself", b.begin, b.end));
    ++deg[b.begin];
    ++deg[b.end];
  }
  offset_.assign(n + 1, 0);
  for (std::size_t i = 0; i < n; ++i) offset_[i + 1] = offset_[i] + deg[i];
  adj_atom_.assign(offset_[n], 0);
  adj_bond_.assign(offset_[n], 0);
  std::vector<std::uint32_t> fill(offset_.begin(), offset_.end() - 1);
  for (std::uint32_t k = 0; k < data_.bonds.size(); ++k) {
    const auto &b = data_.bonds[k];
    adj_atom_[fill[b.begin]] = b.end;
    adj_bond_[fill[b.begin]++] = k;
    adj_atom_[fill[b.end]] = b.begin;
    adj_bond_[fill[b.end]++] = k;
  }
  for (std::size_t i = 0; i < n; ++i) {
    // Sort each neighbour list by neighbour index, keeping bond ids parallel.
    const auto lo = offset_[i], hi = offset_[i + 1];
    std::vector<std::pair<std::uint32_t, std::uint32_t>> tmp;
    tmp.reserve(hi - lo);
    for (auto k = lo; k < hi; ++k) tmp.emplace_back(adj_atom_[k], adj_bond_[k]);
    std::sort(tmp.begin(), tmp.end());
    for (std::size_t k = 0; k < tmp.size(); ++k) {
      if (k > 0 && tmp[k].first == tmp[k - 1].first)
        throw InputError(fmt::format("atoms {} and {} are bonded twice", i, tmp[k].first));
      adj_atom_[lo + k] = tmp[k].first;
      adj_bond_[lo + k] = tmp[k].second;
    }
  }
  if (adj_atom_.empty()) {
    // Keep neighbours_begin() valid for a molecule without bonds.
    adj_atom_.push_back(0);
    adj_bond_.push_back(0);
  }

  for (const auto &t : data_.tetrahedral) {
    if (t.centre >= n) throw InputError("stereocentre index out of range");
    int lone = 0;
    for (auto l : t.ligands) {
      if (l == kLonePair) {
        ++lone;
        continue;
      }
      if (l < 0 || static_cast<std::size_t>(l) >= n || bond_between(t.centre, l) < 0)
        throw InputError(fmt::format("stereocentre {}: ligand {} is not bonded to it", t.centre, l));
    }
    if (lone > 1 || degree(t.centre) + lone != 4)
      throw InputError(fmt::format("stereocentre {}: ligands do not match its neighbours", t.centre));
  }
  for (const auto &d : data_.double_bonds) {
    if (std::max({d.begin, d.end, d.ref_begin, d.ref_end}) >= n || bond_between(d.begin, d.end) < 0 ||
        bond_between(d.begin, d.ref_begin) < 0 || bond_between(d.end, d.ref_end) < 0 ||
        d.ref_begin == d.end || d.ref_end == d.begin)
      throw InputError(fmt::format("double bond {}={}: stereo references are not its neighbours", d.begin, d.end));
  }

  // Connected components by iterative DFS (no recursion: 5,000-atom chains are legal).
  fragment_.assign(n, 0xFFFFFFFFu);
  fragment_count_ = 0;
  std::vector<std::uint32_t> stack;
  for (std::size_t s = 0; s < n; ++s) {
    if (fragment_[s] != 0xFFFFFFFFu) continue;
    const auto id = static_cast<std::uint32_t>(fragment_count_++);
    fragment_[s] = id;
    stack.push_back(static_cast<std::uint32_t>(s));
    while (!stack.empty()) {
      const auto a = stack.back();
      stack.pop_back();
      for (auto k = offset_[a]; k < offset_[a + 1]; ++k) {
        const auto b = adj_atom_[k];
        if (fragment_[b] == 0xFFFFFFFFu) {
          fragment_[b] = id;
          stack.push_back(b);
        }
      }
    }
  }
}

std::int64_t Molecule::bond_between(std::size_t a, std::size_t b) const {
  if (a >= atom_count() || b >= atom_count()) return -1;
  const auto *first = &adj_atom_[0] + offset_[a];
  const auto *last = &adj_atom_[0] + offset_[a + 1];
  const auto *it = std::lower_bound(first, last, static_cast<std::uint32_t>(b));
  if (it == last || *it != b) return -1;
  return adj_bond_[offset_[a] + static_cast<std::size_t>(it - first)];
}

std::size_t Molecule::hydrogen_count(std::size_t i) const {
  std::size_t h = 0;
  for (auto k = offset_.at(i); k < offset_.at(i + 1); ++k)
    if (data_.atoms[adj_atom_[k]].atomic_number == 1) ++h;
  return h;
}

std::int64_t Molecule::attached_to(std::size_t i) const {
  if (atom(i).atomic_number != 1 || degree(i) == 0) return -1;
  return adj_atom_[offset_[i]];
}

const char *status_name(Status status) noexcept {
  switch (status) {
    case Status::Ok: return "ok";
    case Status::Argument: return "invalid argument";
    case Status::Input: return "unusable input";
    case Status::Unsupported: return "unsupported";
    case Status::Tables: return "table error";
    case Status::NoMemory: return "out of memory";
    case Status::Internal: return "internal error";
  }
  return "unknown status";
}

}  // namespace nmrpred
