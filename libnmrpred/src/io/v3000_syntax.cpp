// Shape of the V3000 connection table (MDL CTfile formats, the extended
// connection table: "M  V30" lines, BEGIN/END blocks, COUNTS na nb nsg n3d
// chiral, atom lines "index type x y z aamap [properties]", bond lines
// "index type atom1 atom2 [properties]", '-' continuation) (from memory).

#include "io/v3000_syntax.hpp"

#include <algorithm>
#include <array>
#include <map>
#include <string_view>

#include <fmt/format.h>

#include "io/text.hpp"

namespace nmrpred::io::detail {

namespace {

// A positive decimal integer of at most 9 digits, or -1.
long positive(std::string_view t) {
  if (t.empty() || t.size() > 9) return -1;
  long v = 0;
  for (char c : t) {
    if (c < '0' || c > '9') return -1;
    v = v * 10 + (c - '0');
  }
  return v > 0 ? v : -1;
}

// A non-negative decimal integer of at most 9 digits, or -1.
long count(std::string_view t) { return t == "0" ? 0 : positive(t); }

}  // namespace

V3000Block v3000_block(const std::vector<std::string> &lines, std::size_t first_line, std::string &problem) {
  problem.clear();
  V3000Block out;
  std::string &text = out.text;
  auto fail = [&](std::size_t line, const std::string &what) {
    problem = fmt::format("malformed V3000 connection table: line {}: {}", first_line + line, what);
    return V3000Block();
  };
  // Header and counts line as they are.
  for (std::size_t l = 0; l < 4 && l < lines.size(); ++l) text += lines[l], text += '\n';
  std::vector<std::string> open;  // BEGIN blocks not yet ended, innermost last
  long atoms_declared = -1, bonds_declared = -1, atoms_seen = 0, bonds_seen = 0;
  std::map<long, std::uint32_t> atom_position;  // atom index -> position in the atom block
  bool ended = false;
  for (std::size_t l = 4; l < lines.size(); ++l) {
    const std::string_view raw = trim_right(lines[l]);
    if (!starts_with(raw, "M  V30")) {
      if (trim(raw) == "M  END") {
        if (!open.empty()) return fail(l, fmt::format("'M  END' inside the {} block (no 'M  V30 END {}')", open.back(), open.back()));
        ended = true;
        // "M  END" and whatever follows it (an SD file's data items).
        for (; l < lines.size(); ++l) text += lines[l], text += '\n';
        break;
      }
      // Other lines (V2000 property lines, comments) go to Open Babel as they are.
      text += lines[l];
      text += '\n';
      continue;
    }
    // The logical line: this one and its continuations.
    const std::size_t at = l;
    std::string logical(raw);
    while (!logical.empty() && logical.back() == '-') {
      logical.pop_back();
      if (++l >= lines.size()) return fail(at, "a continued line ('-' at its end) with no line after it");
      const std::string_view next = trim_right(lines[l]);
      if (!starts_with(next, "M  V30")) return fail(l, "a continued line goes on in a line that is not an 'M  V30' line");
      logical.append(next.substr(std::min<std::size_t>(7, next.size())));  // after "M  V30 "
    }
    const auto t = split_fields(logical);
    if (t.size() < 3) return fail(at, "an 'M  V30' line with nothing after it");
    const std::string_view key = t[2];
    const std::string_view block = open.empty() ? std::string_view() : std::string_view(open.back());
    if (key == "BEGIN") {
      if (t.size() < 4) return fail(at, "'BEGIN' names no block");
      if (open.size() >= 8) return fail(at, "blocks nested more than 8 deep");
      if (t[3] == "ATOM" || t[3] == "BOND") {
        if (block != "CTAB") return fail(at, fmt::format("'BEGIN {}' outside a CTAB block", t[3]));
        if (atoms_declared < 0) return fail(at, fmt::format("'BEGIN {}' before the COUNTS line", t[3]));
        if (t[3] == "BOND" && atoms_seen == 0 && atoms_declared > 0)
          return fail(at, "'BEGIN BOND' before the atom block");
      }
      open.emplace_back(t[3]);
    } else if (key == "END") {
      if (t.size() < 4) return fail(at, "'END' names no block");
      if (open.empty() || t[3] != block)
        return fail(at, block.empty() ? fmt::format("'END {}' with no block open", t[3])
                                      : fmt::format("'END {}' inside the {} block", t[3], block));
      if (block == "ATOM" && atoms_seen != atoms_declared)
        return fail(at, fmt::format("the atom block holds {} atoms, the COUNTS line says {}", atoms_seen, atoms_declared));
      if (block == "BOND" && bonds_seen != bonds_declared)
        return fail(at, fmt::format("the bond block holds {} bonds, the COUNTS line says {}", bonds_seen, bonds_declared));
      if (block == "CTAB" && (atoms_seen != atoms_declared || bonds_seen != bonds_declared))
        return fail(at, fmt::format("the CTAB block holds {} atoms and {} bonds, the COUNTS line says {} and {}",
                                    atoms_seen, bonds_seen, atoms_declared, bonds_declared));
      open.pop_back();
    } else if (block == "ATOM") {
      // index type x y z aamap
      if (t.size() < 8) return fail(at, "an atom line needs an index, a type, x, y, z and an atom-map number");
      const long id = positive(t[2]);
      if (id < 0) return fail(at, fmt::format("atom index '{}' is not a positive integer", t[2]));
      if (!atom_position.emplace(id, static_cast<std::uint32_t>(atoms_seen)).second)
        return fail(at, fmt::format("atom index {} given twice", id));
      ++atoms_seen;
    } else if (block == "BOND") {
      // index type atom1 atom2
      if (t.size() < 6) return fail(at, "a bond line needs an index, a type and two atoms");
      if (positive(t[2]) < 0) return fail(at, fmt::format("bond index '{}' is not a positive integer", t[2]));
      if (positive(t[3]) < 0) return fail(at, fmt::format("bond type '{}' is not a positive integer", t[3]));
      std::array<std::uint32_t, 2> ends{};
      for (std::size_t k = 0; k < 2; ++k) {
        const auto found = atom_position.find(positive(t[4 + k]));
        if (found == atom_position.end())
          return fail(at, fmt::format("bond to atom '{}', which the atom block does not hold", t[4 + k]));
        ends[k] = found->second;
      }
      if (t[3] == "2" && std::find(t.begin() + 6, t.end(), "CFG=2") != t.end())
        out.either_double_bonds.emplace_back(ends[0], ends[1]);
      ++bonds_seen;
    } else if (key == "COUNTS") {
      if (block != "CTAB") return fail(at, "a COUNTS line outside a CTAB block");
      if (atoms_declared >= 0) return fail(at, "a second COUNTS line");
      if (t.size() < 5) return fail(at, "the COUNTS line needs the atom and bond counts");
      atoms_declared = count(t[3]);
      bonds_declared = count(t[4]);
      if (atoms_declared < 0 || bonds_declared < 0)
        return fail(at, fmt::format("counts '{}' and '{}' are not both non-negative integers", t[3], t[4]));
    } else if (open.empty()) {
      return fail(at, fmt::format("'{}' outside any block", key));
    }
    text += logical;
    text += '\n';
  }
  if (!ended) return fail(lines.size() - 1, "no 'M  END' line");
  if (atoms_declared < 0) return fail(3, "no COUNTS line in a CTAB block");
  return out;
}

}  // namespace nmrpred::io::detail
