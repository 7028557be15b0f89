#ifndef NMRPRED_SRC_IO_V3000_SYNTAX_HPP
#define NMRPRED_SRC_IO_V3000_SYNTAX_HPP

#include <cstdint>
#include <string>
#include <utility>
#include <vector>

namespace nmrpred::io::detail {

// The connection table of a V3000 MOL block in the shape Open Babel's reader
// relies on, checked before it reads the block: Debian's Open Babel 3.1.1
// reads past the fields of a short atom or bond line and crashed on such
// blocks in our tests (mutation fuzzing). `lines` is the block, the counts
// line at index 3 and "M  V30" lines after it; `first_line` is the input
// line number of lines[0], for messages.
// Returns the block as text for Open Babel, continuation lines (a V3000 line
// ending in '-' goes on in the next "M  V30" line) joined into one, with the
// double bonds the block marks "either" (CFG=2), or sets `problem` (and
// returns nothing) when the block is malformed.
// Checked: BEGIN and END lines pair up (CTAB, ATOM, BOND and any other block);
// a COUNTS line gives the atom and bond counts; every atom line has an index,
// a symbol, x, y, z and the atom-map field; every bond line an index, a type
// and two atoms that the atom block holds; the counts agree with the blocks.
// Only the shape is checked; Open Babel still reads the values.
struct V3000Block {
  std::string text;
  // Double bonds written with CFG=2 (cis or trans, not known), as 0-based
  // positions of their atoms in the atom block. Open Babel 3.1.1 ignores the
  // flag and takes a geometry from the coordinates; the V2000 flag of the
  // same meaning (bond stereo 3) it honours.
  std::vector<std::pair<std::uint32_t, std::uint32_t>> either_double_bonds;
};
V3000Block v3000_block(const std::vector<std::string> &lines, std::size_t first_line, std::string &problem);

}  // namespace nmrpred::io::detail

#endif
