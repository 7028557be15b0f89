// Times ranking 10 candidate structures of 28-32 heavy atoms (the first ten
// single-fragment NCI structures of that size made of C, N, O and S, from
// Debian's rdkit-data first_5K.smi, copied below) against one 1H and one 13C
// peak list, prediction included. The peak lists are the first candidate's
// own predicted signals with every shift moved by a fixed amount (+0.04 ppm
// 1H, +0.6 ppm 13C), so that the placement has real work to do.
//
// Usage: bench_match [REPEATS]   (default 21)
//
// Reports the median wall time of one whole ranking (predict 10 + rank) and of
// the ranking alone, with the spread (min..max), plus machine, compiler and
// library version. Single-threaded by construction; pin it to one core
// (taskset -c 0). No assertions: a benchmark only measures.

#include <nmrpred/match.hpp>
#include <nmrpred/measured.hpp>
#include <nmrpred/predict.hpp>

#include <algorithm>
#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <fstream>
#include <functional>
#include <string>
#include <vector>


#include "bench_common.hpp"

namespace {

using nmrpred_bench::Clock;
using nmrpred_bench::compiler;
using nmrpred_bench::cpu_model;

const char *const kCandidates[] = {
    "C(COC1=C(C=CC=C1)C2=CC=CC=C2)OC3=CC=CC=C3C4=CC=CC=C4",
    "CC(=O)C[CH](SCCSCCS[CH](CC(C)=O)C1=CC=CC=C1)C2=CC=CC=C2",
    "O=C(CC(C1=CC=CC=C1)(C2=CC=CC=C2)C3=CC=CC=C3)C4=CC=CC=C4",
    "O=C(C[CH](N1CCN(CC1)CC2=CC=CC=C2)C(=O)C3=CC=CC=C3)C4=CC=CC=C4",
    "O=C([CH]([CH](N1CCOCC1)C2=CC=CC=C2)N3CCOCC3)C4=CC=CC=C4",
    "CC(=O)NC1=CC=C(C=C1)C(=O)[CH]([CH](N2CCOCC2)C3=CC=CC=C3)N4CCOCC4",
    "O=C([CH]([CH](N1CCOCC1)C(=O)C2=CC=CC=C2)N3CCOCC3)C4=CC=CC=C4",
    "OC1=C(CCCC2=CC=C(OC3=CC=CC=C3)C=C2)C(=O)C4=C(C=CC=C4)C1=O",
    "CCCCCCCCCCCC(=O)OOC(=O)CCCCCCCCCCC",
    "CCN(CC)CCOC1=CC=C(NC(=S)NC2=CC=C(OCC(C)C)C=C2)C=C1",
};

struct Timing {
  double median_ms = 0, min_ms = 0, max_ms = 0;
};

Timing time_it(int repeats, const std::function<double()> &work, double &sink) {
  std::vector<double> ms;
  for (int r = 0; r < repeats; ++r) {
    const auto t0 = Clock::now();
    sink += work();
    ms.push_back(std::chrono::duration<double, std::milli>(Clock::now() - t0).count());
  }
  std::sort(ms.begin(), ms.end());
  return {ms[ms.size() / 2], ms.front(), ms.back()};
}

nmrpred::MeasuredSpectrum peaks_of(const nmrpred::Prediction &p, nmrpred::Nucleus n, double shift_ppm) {
  nmrpred::MeasuredSpectrum s;
  s.nucleus = n;
  s.solvent = "CDCl3";
  for (const auto &sig : p.signals(n)) {
    nmrpred::MeasuredPeak pk;
    pk.ppm = pk.ppm_low = pk.ppm_high = sig.ppm + shift_ppm;
    if (n == nmrpred::Nucleus::H1) pk.integral = sig.count;
    s.peaks.push_back(pk);
  }
  return s;
}

}  // namespace

int main(int argc, char **argv) {
  const int repeats = argc > 1 ? std::max(1, std::atoi(argv[1])) : 21;
  const auto tables = nmrpred::Tables::builtin();
  std::vector<nmrpred::Molecule> molecules;
  for (const char *s : kCandidates) molecules.push_back(nmrpred::read_molecule(s, nmrpred::Format::Smiles));

  std::vector<nmrpred::Prediction> predictions;
  for (const auto &m : molecules) predictions.push_back(nmrpred::predict(m, *tables));
  const std::vector<nmrpred::MeasuredSpectrum> measured = {
      peaks_of(predictions[0], nmrpred::Nucleus::H1, 0.04), peaks_of(predictions[0], nmrpred::Nucleus::C13, 0.6)};

  double sink = 0;
  const Timing whole = time_it(repeats, [&] {
    std::vector<nmrpred::Prediction> cands;
    for (const auto &m : molecules) cands.push_back(nmrpred::predict(m, *tables));
    return nmrpred::rank_candidates(cands, measured, *tables).margin;
  }, sink);
  const Timing ranking = time_it(repeats, [&] { return nmrpred::rank_candidates(predictions, measured, *tables).margin; },
                                 sink);
  const auto r = nmrpred::rank_candidates(predictions, measured, *tables);

  std::printf("bench_match: libnmrpred %s (%s), %s, %s\n", NMRPRED_BENCH_VERSION, NMRPRED_BENCH_BUILD_TYPE,
              cpu_model().c_str(),
#if defined(__GNUC__) && !defined(__clang__)
              "gcc " __VERSION__
#else
              "compiler unknown"
#endif
  );
  std::printf("tables %s; %zu candidates; 1H peaks %zu, 13C peaks %zu; repeats %d\n", tables->version().c_str(),
              molecules.size(), measured[0].peaks.size(), measured[1].peaks.size(), repeats);
  std::printf("predict 10 + rank: median %.2f ms (min %.2f, max %.2f)\n", whole.median_ms, whole.min_ms, whole.max_ms);
  std::printf("rank only:         median %.2f ms (min %.2f, max %.2f)\n", ranking.median_ms, ranking.min_ms,
              ranking.max_ms);
  std::printf("best candidate %zu, margin %.2f, all placements proven optimal: %s\n", r.order[0], r.margin,
              std::all_of(r.results.begin(), r.results.end(),
                          [](const nmrpred::MatchResult &m) {
                            return std::all_of(m.spectra.begin(), m.spectra.end(),
                                               [](const nmrpred::SpectrumMatch &s) { return s.proven_optimal; });
                          })
                  ? "yes"
                  : "no");
  std::printf("(checksum %.3f)\n", sink);
  return 0;
}
