#ifndef NMRPRED_SOLVENTS_HPP
#define NMRPRED_SOLVENTS_HPP

/// \file solvents.hpp
/// NMR solvents as tables/solvents.tsv describes them: the residual 1H and 13C
/// signals of the deuterated solvent (with their multiplicity from coupling to
/// deuterium) and the position of dissolved water, so that spectra can draw them
/// and peak matching can set them aside. Values: Gottlieb, Kotlyar and Nudelman
/// (1997) and Fulmer et al. (2010), see tables/SOURCES.md.
///
/// Thread rule: pure functions over an immutable Tables; call from any thread.

#include <string>
#include <string_view>
#include <vector>

#include <nmrpred/export.hpp>
#include <nmrpred/tables.hpp>

namespace nmrpred {

/// One residual signal of a solvent. Plain value.
struct SolventSignal {
  double shift_ppm = 0;       ///< ppm from TMS
  std::string multiplicity;   ///< "s", "br s", "m", "t" (1:1:1), "p" (quintet), "sept"
  double coupling_hz = 0;     ///< H-D or C-D coupling spacing the lines; 0 when none is given
};

/// One solvent. Plain value.
struct Solvent {
  std::string id;                        ///< table id, e.g. "dmso-d6"
  std::string name;                      ///< the usual spelling, e.g. "DMSO-d6"
  std::vector<std::string> aliases;      ///< lower-case names accepted by find_solvent()
  std::vector<SolventSignal> h1_residual;
  std::vector<SolventSignal> c13;        ///< empty for D2O
  double water_h1_ppm = 0;               ///< dissolved water (HDO/H2O) near 25 degC
  /// True where labile protons (OH, NH, SH) exchange with the solvent's
  /// deuterium and leave the 1H spectrum (D2O, CD3OD).
  bool exchanges_labile_protons = false;
  std::string source;                    ///< key from tables/SOURCES.md, maybe " (from memory)"
};

/// Every solvent of the table set, in table order. Throws TablesError naming
/// the line if tables/solvents.tsv is missing or malformed.
NMRPRED_API std::vector<Solvent> solvents(const Tables &tables);

/// The solvent called `name` (its name, id or an alias, case-insensitive,
/// surrounding spaces ignored). Throws ArgumentError listing the known names
/// when none matches.
NMRPRED_API Solvent find_solvent(const Tables &tables, std::string_view name);

}  // namespace nmrpred

#endif
