// Build step: works out the reference index entries of the built-in
// compounds (reading each SMILES, classes, HOSE keys and digests, rule
// values: most of the time Tables::builtin() took) and writes them as a C++
// file that is compiled into the library, so that a program using it starts
// without doing that work. Linked with no_index_data.cpp, so the tables it
// loads are indexed from scratch.
//
// Usage: nmrpred_make_index_data OUTPUT.cpp
//
// The file holds the hash of the table files and the Open Babel release it
// was made with; build_reference_index() uses the entries only where both
// match, and tests/test_reference_index.cpp checks that the index made from
// them equals one made from the tables.

#include <cinttypes>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <exception>
#include <fstream>
#include <string>

#include <nmrpred/tables.hpp>

#include "io/raw_molecule.hpp"
#include "shifts/reference_index.hpp"

namespace {

// Exact text of a double: C99 hexadecimal floating point, or the NaN constant.
std::string exact(double v) {
  if (std::isnan(v)) return "kNaN";
  if (!std::isfinite(v)) throw std::runtime_error("non-finite value in a reference entry");
  char buf[64];
  std::snprintf(buf, sizeof buf, "%a", v);
  return buf;
}

std::string hex(std::uint64_t v) {
  char buf[32];
  std::snprintf(buf, sizeof buf, "0x%016" PRIx64 "u", v);
  return buf;
}

}  // namespace

int main(int argc, char **argv) {
  if (argc != 2) {
    std::fprintf(stderr, "usage: %s OUTPUT.cpp\n", argv[0]);
    return 2;
  }
  try {
    namespace d = nmrpred::detail;
    const auto tables = nmrpred::Tables::builtin();
    // Tables::version() of the built-in set: "builtin-" and the hash in hex.
    const std::string &version = tables->version();
    const std::string prefix = "builtin-";
    if (version.compare(0, prefix.size(), prefix) != 0)
      throw std::runtime_error("unexpected table version " + version);
    const std::uint64_t files_hash = std::strtoull(version.c_str() + prefix.size(), nullptr, 16);
    const std::size_t compounds = tables->reference().size();
    const d::IndexEntries all = d::reference_entries(*tables, 0, compounds);
    const std::string reader = nmrpred::io::detail::reader_version();

    std::string out;
    out += "// Generated at build time by libnmrpred/build_tools/make_index_data.cpp. Do not edit.\n";
    out += "// The reference index entries of the built-in compounds (shifts/reference_index.hpp).\n\n";
    out += "#include <limits>\n\n#include \"shifts/reference_index.hpp\"\n\n";
    out += "namespace nmrpred::detail {\n\nnamespace {\n\n";
    out += "constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();\n\n";
    out += "const std::uint64_t kConstitution[] = {\n";
    for (const auto c : all.constitution) out += "    " + hex(c) + ",\n";
    out += "};\n\nconst IndexEntry kEntries[] = {\n";
    for (const auto &e : all.entries) {
      out += "    {" + std::to_string(e.compound) + "u, " + std::to_string(e.nucleus) + "u, {{";
      for (std::size_t k = 0; k < e.key.size(); ++k) out += (k ? ", " : "") + hex(e.key[k]);
      out += "}}, {{";
      for (std::size_t k = 0; k < e.digest.size(); ++k) out += (k ? ", " : "") + hex(e.digest[k]);
      out += "}}, " + exact(e.shift_ppm) + ", " + exact(e.increment_ppm) + ", " + exact(e.pair_half_ppm) + ", " +
             hex(e.scheme) + "},\n";
    }
    out += "};\n\n}  // namespace\n\n";
    out += "const PrecomputedEntries kPrecomputedEntries = {" + hex(files_hash) + ", \"" + reader + "\", " +
           std::to_string(compounds) + "u, kConstitution, kEntries, " + std::to_string(all.entries.size()) +
           "u};\n\n}  // namespace nmrpred::detail\n";

    const std::string tmp = std::string(argv[1]) + ".tmp";
    {
      std::ofstream f(tmp, std::ios::binary);
      f << out;
      if (!f) throw std::runtime_error("cannot write " + tmp);
    }
    if (std::rename(tmp.c_str(), argv[1]) != 0) throw std::runtime_error(std::string("cannot write ") + argv[1]);
    std::printf("%zu reference compounds, %zu entries\n", compounds, all.entries.size());
    return 0;
  } catch (const std::exception &e) {
    std::fprintf(stderr, "%s: %s\n", argv[0], e.what());
    return 1;
  }
}
