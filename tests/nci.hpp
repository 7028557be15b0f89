#ifndef NMRPRED_TESTS_NCI_HPP
#define NMRPRED_TESTS_NCI_HPP
// The NCI sample of Debian's rdkit-data, for checks over every molecule.
#include <algorithm>
#include <cstdio>
#include <fstream>
#include <string>
#include <vector>

#include <nmrpred/io.hpp>

namespace nci {

// Path of the sample, asked of RDKit through Debian's interpreter (as
// benchmarks/run.sh does); empty if RDKit cannot say.
inline const std::string &path() {
  static const std::string p = [] {
    std::string out;
    if (FILE *pipe = popen("/usr/bin/python3 -c \"import os; from rdkit import RDConfig; "
                           "print(os.path.join(RDConfig.RDDataDir, 'NCI', 'first_5K.smi'))\" 2>/dev/null",
                           "r")) {
      char buf[4096];
      while (std::fgets(buf, sizeof buf, pipe)) out += buf;
      pclose(pipe);
    }
    while (!out.empty() && (out.back() == '\n' || out.back() == '\r')) out.pop_back();
    return out;
  }();
  return p;
}

// The records of the sample, one line each (read once).
inline const std::vector<std::string> &lines() {
  static const std::vector<std::string> all = [] {
    std::vector<std::string> out;
    std::ifstream in(path(), std::ios::binary);
    std::string line;
    while (std::getline(in, line))
      if (!line.empty()) out.push_back(line);
    return out;
  }();
  return all;
}

// Molecules of records [first, last), read on demand so that each test case
// pays only for its own slice.
inline std::vector<nmrpred::Molecule> molecules(std::size_t first, std::size_t last) {
  const auto &all = lines();
  std::string text;
  for (std::size_t i = first; i < std::min(last, all.size()); ++i) text += all[i] + "\n";
  std::vector<nmrpred::Molecule> out;
  for (auto &rec : nmrpred::read_records(text, nmrpred::Format::Smiles))
    if (rec.molecule) out.push_back(std::move(*rec.molecule));
  return out;
}

}  // namespace nci

#endif
