// Times structure reading, equivalence classes and HOSE codes over a SMILES
// file (the NCI sample from Debian's rdkit-data; see benchmarks/README.md).
//
// Usage: bench_read_classes [--ratios] SMILES_FILE [REPEATS]
// (--ratios: only the ratios of the shift predictions to reading, the
// bars' block of the report.)
//
// Each stage runs REPEATS times over the whole file; the report gives the
// median wall time, the spread (min..max) and molecules per second at the
// median, plus machine, compiler and library version. Single-threaded by
// construction; pin it to one core (taskset -c 0) for stable figures.
// No assertions: a benchmark only measures.

#include <nmrpred/classes.hpp>
#include <nmrpred/error.hpp>
#include <nmrpred/hose.hpp>
#include <nmrpred/io.hpp>
#include <nmrpred/molecule.hpp>
#include <nmrpred/predict.hpp>
#include <nmrpred/shifts.hpp>
#include <nmrpred/spectrum.hpp>
#include <nmrpred/tables.hpp>

#include <sys/utsname.h>

#include <algorithm>
#include <array>
#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <fstream>
#include <functional>
#include <iterator>
#include <sstream>
#include <string>
#include <string_view>
#include <utility>
#include <vector>

#include <fmt/format.h>

#include "bench_common.hpp"

namespace {

using nmrpred_bench::Clock;
using nmrpred_bench::compiler;
using nmrpred_bench::cpu_model;

std::string read_file(const char *path) {
  std::ifstream in(path, std::ios::binary);
  if (!in) throw std::runtime_error(fmt::format("cannot open {}", path));
  return std::string(std::istreambuf_iterator<char>(in), std::istreambuf_iterator<char>());
}

struct Timing {
  double median_s = 0, min_s = 0, max_s = 0;
};

// Runs `work` `repeats` times and summarises the wall times. The result of
// each run is folded into `sink` so the optimiser cannot drop the work.
// Median, min and max of a non-empty list of values.
Timing summarise(std::vector<double> t) {
  std::sort(t.begin(), t.end());
  const std::size_t n = t.size();
  const double median = n % 2 ? t[n / 2] : 0.5 * (t[n / 2 - 1] + t[n / 2]);
  return {median, t.front(), t.back()};
}

Timing time_it(int repeats, const std::function<std::size_t()> &work, std::size_t &sink) {
  std::vector<double> t;
  for (int r = 0; r < repeats; ++r) {
    const auto start = Clock::now();
    sink += work();
    t.push_back(std::chrono::duration<double>(Clock::now() - start).count());
  }
  return summarise(std::move(t));
}

void report(const char *stage, std::size_t molecules, const Timing &t) {
  fmt::print("{:<38} {:>8} {:>10.3f} {:>10.3f} {:>10.3f} {:>12.0f}\n", stage, molecules, t.median_s,
             t.min_s, t.max_s, t.median_s > 0 ? static_cast<double>(molecules) / t.median_s : 0.0);
}

// Times three stages back to back in each repeat, in an order that rotates
// with the repeat; per repeat, the wall time of each stage.
template <std::size_t N>
std::vector<std::array<double, N>> rotating_repeats(int repeats, const std::array<std::function<std::size_t()>, N> &stages,
                                                    std::size_t &sink) {
  std::vector<std::array<double, N>> out;
  for (int r = 0; r < repeats; ++r) {
    std::array<double, N> t{};
    for (std::size_t i = 0; i < N; ++i) {
      const std::size_t stage = (i + static_cast<std::size_t>(r)) % N;
      const auto start = Clock::now();
      sink += stages[stage]();
      t[stage] = std::chrono::duration<double>(Clock::now() - start).count();
    }
    out.push_back(t);
  }
  return out;
}

// Median, min and max of ratios, as the ratio blocks print them.
std::string ratio_summary(std::vector<double> v) {
  const Timing t = summarise(std::move(v));
  return fmt::format("{:>6.2f}x {:>6.2f}x {:>6.2f}x", t.median_s, t.min_s, t.max_s);
}

}  // namespace

int main(int argc, char **argv) {
  // --ratios: only the ratios to reading of the shift bars (their block),
  // a minute rather than several, for runs repeated to see the spread.
  const bool all_stages = !(argc > 1 && std::string_view(argv[1]) == "--ratios");
  if (!all_stages) --argc, ++argv;
  if (argc < 2) {
    std::fprintf(stderr, "usage: %s [--ratios] SMILES_FILE [REPEATS]\n", argv[0]);
    return 2;
  }
  const int repeats = argc > 2 ? std::max(1, std::atoi(argv[2])) : 5;
  try {
    const std::string text = read_file(argv[1]);
    utsname un{};
    uname(&un);
    fmt::print("libnmrpred {} ({} build), {}\n", NMRPRED_BENCH_VERSION, NMRPRED_BENCH_BUILD_TYPE, compiler());
    fmt::print("machine: {}, {} {} {}\n", cpu_model(), un.sysname, un.release, un.machine);
    fmt::print("input: {}\nrepeats: {} (median and min..max of wall time; one thread)\n\n", argv[1], repeats);

    // Read once outside the timings to know the molecules and sort them by size.
    const auto records = nmrpred::read_records(text, nmrpred::Format::Smiles);
    std::vector<nmrpred::Molecule> molecules;
    for (const auto &r : records)
      if (r.molecule) molecules.push_back(*r.molecule);
    fmt::print("records: {}, read: {}, refused: {}\n\n", records.size(), molecules.size(),
               records.size() - molecules.size());

    fmt::print("{:<38} {:>8} {:>10} {:>10} {:>10} {:>12}\n", "stage", "mols", "median s", "min s", "max s",
               "mols/s");
    std::size_t sink = 0;

    const std::function<std::size_t()> read_all = [&] {
      return nmrpred::read_records(text, nmrpred::Format::Smiles).size();
    };
    if (all_stages) report("read (Open Babel -> Molecule)", records.size(), time_it(repeats, read_all, sink));

    auto classes_only = [&](const std::vector<nmrpred::Molecule> &mols) {
      std::size_t n = 0;
      for (const auto &m : mols) n += nmrpred::compute_classes(m).chemical_count;
      return n;
    };
    auto classes_and_codes = [&](const std::vector<nmrpred::Molecule> &mols) {
      std::size_t n = 0;
      for (const auto &m : mols) {
        const auto classes = nmrpred::compute_classes(m);
        for (const auto &code : nmrpred::hose_codes(m, classes)) n += code.size();
      }
      return n;
    };

    if (all_stages) {
      report("classes (read beforehand)", molecules.size(), time_it(repeats, [&] { return classes_only(molecules); }, sink));
      report("classes + HOSE codes (read beforehand)", molecules.size(),
             time_it(repeats, [&] { return classes_and_codes(molecules); }, sink));
      report("read + classes + HOSE codes", records.size(), time_it(repeats, [&] {
               std::size_t n = 0;
               for (const auto &r : nmrpred::read_records(text, nmrpred::Format::Smiles))
                 if (r.molecule) {
                   const auto classes = nmrpred::compute_classes(*r.molecule);
                   for (const auto &code : nmrpred::hose_codes(*r.molecule, classes)) n += code.size();
                 }
               return n;
             }, sink));
    }

    // 13C prediction: the built-in tables are loaded once, outside the timing,
    // as a host application would.
    const auto tables = nmrpred::Tables::builtin();
    // What loading them costs, once per process: all a one-molecule command
    // pays before its work (the "mols" column counts reference compounds).
    if (all_stages)
      report("built-in tables (Tables::builtin)", tables->reference().size(),
             time_it(repeats, [] { return nmrpred::Tables::builtin()->reference().size(); }, sink));
    // One molecule's work in the 13C and the both-nuclei stages, whichever way
    // the molecules arrive (read beforehand, read all first, streamed).
    auto c13_of = [&](const nmrpred::Molecule &m) {
      return nmrpred::predict_c13(m, nmrpred::compute_classes(m), *tables).size();
    };
    auto c13_h1_of = [&](const nmrpred::Molecule &m) {
      const auto shifts = nmrpred::predict_c13_h1(m, nmrpred::compute_classes(m), *tables);
      return shifts.c13.size() + shifts.h1.size();
    };
    const std::function<std::size_t()> classes_c13 = [&] {
      std::size_t n = 0;
      for (const auto &m : molecules) n += c13_of(m);
      return n;
    };
    if (all_stages) report("classes + 13C shifts (read beforehand)", molecules.size(), time_it(repeats, classes_c13, sink));
    // Both nuclei through the public call a host wanting both makes,
    // predict_c13_h1 (one call sharing the molecule's work between the
    // nuclei; until it existed this row timed predict_c13 then predict_h1),
    // without the HOSE code texts and signal lists predict_all also writes.
    const std::function<std::size_t()> classes_c13_h1 = [&] {
      std::size_t n = 0;
      for (const auto &m : molecules) n += c13_h1_of(m);
      return n;
    };
    if (all_stages) {
      report("classes + 13C + 1H shifts (read beforehand)", molecules.size(), time_it(repeats, classes_c13_h1, sink));
      report("read + classes + 13C shifts", records.size(), time_it(repeats, [&] {
               std::size_t n = 0;
               for (const auto &r : nmrpred::read_records(text, nmrpred::Format::Smiles))
                 if (r.molecule) n += c13_of(*r.molecule);
               return n;
             }, sink));
      // Couplings and the 1H simulation are timed apart (below), so this stage
      // keeps measuring what it measured before they existed.
      nmrpred::PredictOptions shifts_only;
      shifts_only.predict_couplings = false;
      report("predict_all (read, classes, HOSE, 13C, 1H)", records.size(), time_it(repeats, [&] {
               return nmrpred::predict_all(text, nmrpred::Format::Smiles, *tables, shifts_only).size();
             }, sink));
      // Default options: + couplings, the 1H line list and multiplets at 400 MHz.
      report("predict_all + 1H line list", records.size(), time_it(repeats, [&] {
               std::size_t n = 0;
               for (const auto &r : nmrpred::predict_all(text, nmrpred::Format::Smiles, *tables))
                 if (r.prediction && r.prediction->h1_simulation) n += r.prediction->h1_simulation->lines.size();
               return n;
             }, sink));
      // Their JSON text (what `nmrpred predict` prints), from records predicted
      // once: the output, not the prediction.
      {
        const auto full = nmrpred::predict_all(text, nmrpred::Format::Smiles, *tables);
        report("  JSON text of those records (to_json)", full.size(), time_it(repeats, [&] {
                 std::size_t n = 0;
                 for (const auto &r : full) n += nmrpred::to_json(r).size();
                 return n;
               }, sink));
      }
      // The line lists are made once; this times only sampling them (with the
      // residual solvent and water signals) on 65536 points.
      std::vector<nmrpred::Simulation> sims;
      nmrpred::Solvent cdcl3 = nmrpred::find_solvent(*tables, "CDCl3");
      for (const auto &r : nmrpred::predict_all(text, nmrpred::Format::Smiles, *tables))
        if (r.prediction && r.prediction->h1_simulation) sims.push_back(*r.prediction->h1_simulation);
      const auto solvent_signals = nmrpred::solvent_peaks(cdcl3, nmrpred::Nucleus::H1, 400);
      nmrpred::SamplingOptions sampling = nmrpred::sampling_defaults(nmrpred::Nucleus::H1, 400);
      sampling.points = 65536;
      report("  64k-point sampling of those lists", sims.size(), time_it(repeats, [&] {
               std::size_t n = 0;
               for (const auto &sim : sims) {
                 std::vector<nmrpred::Multiplet> all = sim.multiplets;
                 for (const auto &p : solvent_signals) all.push_back(p.signal);
                 n += nmrpred::sample_signals(all, sampling).intensity.size();
               }
               return n;
             }, sink));

      // Per molecule: reading one SMILES line, then the full 1H line list
      // (prediction + couplings + simulation), then 64k-point sampling; the
      // ratios to reading are taken per molecule and their median reported.
      {
        std::vector<double> read_t, lines_t, sample_t, lines_ratio, sample_ratio;
        std::istringstream in(text);
        std::string line;
        while (std::getline(in, line)) {
          if (line.empty()) continue;
          auto t0 = Clock::now();
          auto recs = nmrpred::read_records(line, nmrpred::Format::Smiles);
          auto t1 = Clock::now();
          if (recs.empty() || !recs[0].molecule) continue;
          nmrpred::RecordPrediction r;
          try {
            r = nmrpred::predict_record(std::move(recs[0]), *tables);
          } catch (const nmrpred::Error &) {
            continue;
          }
          auto t2 = Clock::now();
          if (!r.prediction || !r.prediction->h1_simulation) continue;
          std::vector<nmrpred::Multiplet> all = r.prediction->h1_simulation->multiplets;
          for (const auto &p : solvent_signals) all.push_back(p.signal);
          sink += nmrpred::sample_signals(all, sampling).intensity.size();
          auto t3 = Clock::now();
          const double rt = std::chrono::duration<double>(t1 - t0).count();
          const double lt = std::chrono::duration<double>(t2 - t1).count();
          const double st = std::chrono::duration<double>(t3 - t2).count();
          read_t.push_back(rt);
          lines_t.push_back(lt);
          sample_t.push_back(st);
          lines_ratio.push_back(lt / rt);
          sample_ratio.push_back(st / rt);
        }
        auto median = [](std::vector<double> v) {
          if (v.empty()) return 0.0;
          std::sort(v.begin(), v.end());
          return v[v.size() / 2];
        };
        auto p95 = [](std::vector<double> v) {
          if (v.empty()) return 0.0;
          std::sort(v.begin(), v.end());
          return v[v.size() * 95 / 100];
        };
        fmt::print("\nper molecule ({} with a 1H spectrum; median / 95th percentile, one pass):\n", read_t.size());
        fmt::print("  read one SMILES                {:>9.1f} / {:>9.1f} us\n", 1e6 * median(read_t), 1e6 * p95(read_t));
        fmt::print("  1H line list (predict, J, sim) {:>9.1f} / {:>9.1f} us   x{:.1f} / x{:.1f} of reading\n",
                   1e6 * median(lines_t), 1e6 * p95(lines_t), median(lines_ratio), p95(lines_ratio));
        fmt::print("  + 64k-point sampling           {:>9.1f} / {:>9.1f} us   x{:.1f} / x{:.1f} of reading\n",
                   1e6 * median(sample_t), 1e6 * p95(sample_t), median(sample_ratio), p95(sample_ratio));
      }

      // Cost grows with size; report classes + codes per size class of heavy atoms.
      const std::size_t bounds[] = {15, 30, static_cast<std::size_t>(-1)};
      std::vector<nmrpred::Molecule> by_size[3];
      for (const auto &m : molecules) {
        std::size_t k = 0;
        while (m.heavy_atom_count() > bounds[k]) ++k;
        by_size[k].push_back(m);
      }
      const char *labels[] = {"  classes + codes, <= 15 heavy atoms", "  classes + codes, 16..30 heavy atoms",
                              "  classes + codes, > 30 heavy atoms"};
      for (int k = 0; k < 3; ++k)
        if (!by_size[k].empty())
          report(labels[k], by_size[k].size(), time_it(repeats, [&] { return classes_and_codes(by_size[k]); }, sink));
    }

    // The speed bars of the shift predictions are ratios to reading. On a
    // shared virtual machine the speed drifts by tens of per cent within
    // minutes, so stages timed one after the other can disagree by more than
    // the ratio's margin. Here each repeat times reading, classes + 13C (one
    // call per molecule, then one call for the set) and classes + 13C + 1H
    // back to back (in an order that rotates with the
    // repeat), and the ratios are taken within the repeat.
    // The set call, predict_c13_set, computes the classes (of the heavy
    // atoms, which is all 13C reads) and the 13C shifts of the whole list
    // stage by stage over blocks of molecules.
    {
      const std::function<std::size_t()> classes_c13_set = [&] {
        std::size_t n = 0;
        for (const auto &entry : nmrpred::predict_c13_set(molecules, *tables)) n += entry.shifts.size();
        return n;
      };
      std::vector<double> c13_ratio, set_ratio, both_ratio;
      for (const auto &t : rotating_repeats<4>(repeats, {read_all, classes_c13, classes_c13_set, classes_c13_h1}, sink)) {
        c13_ratio.push_back(t[1] / t[0]);
        set_ratio.push_back(t[2] / t[0]);
        both_ratio.push_back(t[3] / t[0]);
      }
      fmt::print("\nratio to reading, both timed in the same repeat ({} repeats; median, min, max):\n", repeats);
      fmt::print("  {:<40} {}\n", "classes + 13C shifts / read", ratio_summary(c13_ratio));
      fmt::print("  {:<40} {}\n", "the same, one predict_c13_set call / read", ratio_summary(set_ratio));
      fmt::print("  {:<40} {}\n", "classes + 13C + 1H shifts / read", ratio_summary(both_ratio));
    }

    // A host that reads a molecule and predicts it at once: what prediction
    // adds to reading there. Not the bars' measure (above, over molecules
    // read beforehand), which comes out lower; the cache simulation of
    // benchmarks/README.md (eighth round) points to reading in between
    // disturbing the branch predictors and instruction caches, not to the
    // tables falling out of the data caches.
    if (all_stages) {
      auto streamed = [&](int what) {
        std::istringstream in(text);
        nmrpred::MoleculeReader reader(in, nmrpred::Format::Smiles);
        nmrpred::ReadRecord record;
        std::size_t n = 0;
        while (reader.next(record)) {
          if (!record.molecule) continue;
          const nmrpred::Molecule &m = *record.molecule;
          n += what == 0 ? m.atom_count() : what == 1 ? c13_of(m) : c13_h1_of(m);
        }
        return n;
      };
      std::vector<double> c13_added, both_added;
      for (const auto &t : rotating_repeats<3>(repeats, {[&] { return streamed(0); }, [&] { return streamed(1); },
                                                       [&] { return streamed(2); }}, sink)) {
        c13_added.push_back((t[1] - t[0]) / t[0]);
        both_added.push_back((t[2] - t[0]) / t[0]);
      }
      fmt::print("\nadded to reading when each molecule is predicted as soon as it is read ({} repeats; median, min, max):\n",
                 repeats);
      fmt::print("  {:<40} {}\n", "classes + 13C shifts, added / read", ratio_summary(c13_added));
      fmt::print("  {:<40} {}\n", "classes + 13C + 1H shifts, added / read", ratio_summary(both_added));
    }

    fmt::print("\n(checksum {})\n", sink % 1000003);
  } catch (const std::exception &e) {
    std::fprintf(stderr, "bench_read_classes: %s\n", e.what());
    return 1;
  }
  return 0;
}
