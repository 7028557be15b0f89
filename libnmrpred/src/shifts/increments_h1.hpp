#ifndef NMRPRED_SHIFTS_INCREMENTS_H1_HPP
#define NMRPRED_SHIFTS_INCREMENTS_H1_HPP

// 1H shifts from published increment rules: the tables
// tables/increments/h1_*.tsv applied as tables/FORMAT.md ("1H increment and
// solvent tables") describes. Private to the library (shifts/).

#include <cstddef>
#include <cstdint>
#include <memory>
#include <string>
#include <string_view>
#include <vector>

#include <nmrpred/molecule.hpp>
#include <nmrpred/solvents.hpp>

#include "sources.hpp"

namespace nmrpred::detail {

// The parsed 1H rule tables (h1_shoolery, h1_alkene, h1_benzene,
// h1_heteroaromatic, h1_special) and the solvent list of solvents.tsv, with
// every SMARTS compiled. Immutable once made; share it between threads
// through std::shared_ptr<const H1IncrementTables>. Opaque outside
// increments_h1.cpp.
struct H1IncrementTables;

// Reads and compiles the 1H rule tables of `tables`. A table absent from the
// set leaves its scheme empty (its protons are declined). Throws TablesError
// naming "file:line" for a malformed row (missing or non-numeric value,
// unknown kind or variant, min > max) or a SMARTS the matcher does not
// support. Thread rule: pure; call from any thread.
std::shared_ptr<const H1IncrementTables> parse_h1_increment_tables(const Tables &tables);

// The solvents of the tables' solvents.tsv as nmrpred::solvents() read them
// when the tables were parsed, or null when the set has no solvents.tsv.
// Lets solvents() and find_solvent() skip parsing the file on every call.
const std::vector<Solvent> *parsed_solvents(const H1IncrementTables &parsed);

// `s` without surrounding spaces, in lower case, as solvent names compare
// (shifts/solvents.cpp).
std::string lower_trimmed(std::string_view s);

// The solvent of `list` called `name`, as nmrpred::find_solvent() finds it
// (name, id or alias, case-insensitive, surrounding spaces ignored). Throws
// ArgumentError listing the known names when none matches.
const Solvent &find_listed_solvent(const std::vector<Solvent> &list, std::string_view name);

// The 1H increment source for `solvent` (a name, id or alias of
// tables/solvents.tsv, case-insensitive; empty means CDCl3). The solvent
// selects the rows of h1_special.tsv for exchangeable (O-H, N-H, S-H) and
// other solvent-dependent protons; the increment schemes themselves hold for
// CDCl3. Throws ArgumentError naming the known solvents for an unknown name,
// InternalError for a null `parsed`.
//
// estimate(q, atom, out) takes `atom` = a hydrogen of q.molecule (isotope 0
// or 1) and q.nucleus == Nucleus::H1. It fills ppm (from TMS),
// uncertainty_ppm (one standard deviation, calibrated per scheme on
// tables/reference), source = Increments, sphere = 0, method (the scheme and
// every increment summed with its row id), clears references, sets
// exchangeable (protons on O, N, S of an exchanging group) and observed
// (false when the solvent replaces the proton by deuterium), and returns
// true; or returns false when no rule covers the proton (an unknown
// substituent is never counted as zero). Exchangeable protons in D2O or
// CD3OD get the solvent's water position and a method saying they exchange
// and give no signal. A source object keeps a per-molecule cache: use it
// from one thread at a time.
std::unique_ptr<ShiftSource> make_h1_increments(std::shared_ptr<const H1IncrementTables> parsed,
                                                std::string solvent);

// The ring through heavy atom k along bonds of order Aromatic (every atom on
// it with exactly two, at most 8 atoms), when it is the whole ring system of
// its atoms (every other bond they have is a bridge), in the order
// SmartsTarget::rings() lists it, where it is then the only ring holding k;
// empty otherwise. Lets the 1H rules skip ring perception, which costs more
// than the rest of their work, for most aromatic protons. Pure.
std::vector<std::uint32_t> lone_ring(const Molecule &m, std::size_t k);

}  // namespace nmrpred::detail

#endif
