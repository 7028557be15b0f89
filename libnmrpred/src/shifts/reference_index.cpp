#include "shifts/reference_index.hpp"

#include <limits>

#include "shifts/sources.hpp"

#include <nmrpred/classes.hpp>
#include <nmrpred/error.hpp>
#include <nmrpred/io.hpp>

#include <fmt/format.h>

namespace nmrpred::detail {

std::shared_ptr<const ReferenceIndex> build_reference_index(const Tables &tables) {
  const auto &compounds = tables.reference();
  auto index = std::make_shared<ReferenceIndex>();
  const ShiftOptions plain;
  index->constitution.resize(compounds.size());
  for (std::uint32_t ci = 0; ci < compounds.size(); ++ci) {
    const auto &c = compounds[ci];
    Molecule m;
    try {
      m = read_molecule(c.smiles, Format::Smiles);
    } catch (const Error &e) {
      throw InputError(fmt::format("{}:{}: reference '{}': SMILES '{}' cannot be read: {}", c.file, c.line, c.id,
                                   c.smiles, e.what()));
    }
    const auto classes = compute_classes(m);
    index->constitution[ci] = constitution_key(m, classes);
    const ShiftQuery q(m, classes, tables, plain, Nucleus::C13);
    const auto increments = make_c13_increments(tables.c13_increments());
    auto add = [&](int nucleus, std::size_t centre, double value) {
      const auto parts = hose_spheres(m, classes, centre, kMaxHoseSpheres);
      double inc = std::numeric_limits<double>::quiet_NaN();
      Shift s;
      if (nucleus == kIndexC13 && increments->estimate(q, centre, s)) inc = s.ppm;
      for (int k = 1; k <= kMaxHoseSpheres; ++k)
        index->levels[nucleus][k][join_hose_spheres(parts, k)].push_back({value, inc, ci});
    };
    auto check_atom = [&](std::uint32_t a) {
      if (a >= m.heavy_atom_count())
        throw TablesError(fmt::format("{}:{}: reference '{}': atom {} is out of range", c.file, c.line, c.id, a));
    };
    for (const auto &as : c.c13)
      for (std::size_t k = 0; k < as.atoms.size(); ++k) {
        check_atom(as.atoms[k]);
        if (m.atom(as.atoms[k]).atomic_number != 6)
          throw TablesError(fmt::format("{}:{}: reference '{}': 13C shift on atom {}, which is not carbon", c.file, c.line, c.id, as.atoms[k]));
        add(kIndexC13, as.atoms[k], as.values.size() == as.atoms.size() ? as.values[k] : as.values[0]);
      }
    for (const auto &as : c.h1)
      for (std::size_t k = 0; k < as.atoms.size(); ++k) {
        check_atom(as.atoms[k]);
        std::int64_t h = -1;
        for (auto it = m.neighbours_begin(as.atoms[k]); it != m.neighbours_end(as.atoms[k]); ++it)
          if (m.is_hydrogen(*it)) {
            h = *it;
            break;
          }
        if (h < 0)
          throw TablesError(fmt::format("{}:{}: reference '{}': 1H shift on atom {}, which carries no hydrogen", c.file, c.line, c.id, as.atoms[k]));
        if (as.atoms.size() == 1 && as.values.size() == 2) {
          // A diastereotopic pair: both protons share the topological code.
          add(kIndexH1, static_cast<std::size_t>(h), as.values[0]);
          add(kIndexH1, static_cast<std::size_t>(h), as.values[1]);
        } else {
          add(kIndexH1, static_cast<std::size_t>(h), as.values.size() == as.atoms.size() ? as.values[k] : as.values[0]);
        }
      }
  }
  return index;
}

}  // namespace nmrpred::detail
