// Times the exact spin simulation (nmrpred/spin.hpp) on the strongly coupled
// spin systems of benchmarks/spin_systems.json (8 to 14 spins, one cluster
// each; a family without symmetry and one of CH3/CH2 chains), the same
// systems benchmarks/spin_numpy_reference.py times with NumPy.
// Usage: bench_spin [REPEATS] [FILE]   (default 5 repeats, 14 spins a third
// of them). Prints median, min and max processor seconds per system (the
// process's CPU time: on a machine shared with other work, wall-clock time
// measures the neighbours too) and the median wall-clock seconds. Asserts
// nothing.
#include <algorithm>
#include <chrono>
#include <ctime>
#include <cstdlib>
#include <fstream>
#include <iostream>
#include <sstream>
#include <string>
#include <vector>

#include <fmt/format.h>
#include <nlohmann/json.hpp>

#include <nmrpred/spin.hpp>
#include <nmrpred/version.hpp>

#ifndef NMRPRED_BENCH_VERSION
#define NMRPRED_BENCH_VERSION "?"
#endif
#ifndef NMRPRED_BENCH_BUILD_TYPE
#define NMRPRED_BENCH_BUILD_TYPE "?"
#endif

namespace {

struct Named {
  std::string name;
  nmrpred::SpinSystemInput input;
};

/// Every entry of "systems" is a spin-system document of the library's JSON
/// reader (nmrpred::parse_spin_system_json) plus "name" and "family", so the
/// library gets the group structure ("class") exactly as the file states it.
std::vector<Named> read_systems(const std::string &path) {
  std::ifstream in(path);
  if (!in) throw std::runtime_error("cannot open " + path);
  std::stringstream ss;
  ss << in.rdbuf();
  const auto doc = nlohmann::json::parse(ss.str());
  std::vector<Named> out;
  for (auto s : doc.at("systems")) {
    Named n;
    n.name = s.at("name").get<std::string>();
    s.erase("name");
    s.erase("family");
    n.input = nmrpred::parse_spin_system_json(s.dump());
    out.push_back(std::move(n));
  }
  return out;
}

}  // namespace

int main(int argc, char **argv) {
  try {
    const int repeats = argc > 1 ? std::max(1, std::atoi(argv[1])) : 5;
    const std::string path = argc > 2 ? argv[2] : NMRPRED_BENCH_SPIN_SYSTEMS;
    const auto systems = read_systems(path);
    fmt::print("libnmrpred {} ({} build, {}), one thread\n", NMRPRED_BENCH_VERSION, NMRPRED_BENCH_BUILD_TYPE,
#if defined(__clang__)
               "clang " __clang_version__
#elif defined(__GNUC__)
               "g++ " __VERSION__
#else
               "unknown compiler"
#endif
    );
    fmt::print("{:<32} {:>10} {:>10} {:>10} {:>10} {:>9}\n", "system", "median cpu", "min cpu", "max cpu",
               "wall", "lines");
    for (const auto &s : systems) {
      // The file asks for one exact cluster (weak_coupling_ratio 1e300), as the NumPy reference.
      const nmrpred::SimulationOptions &options = s.input.options;
      const int runs = s.input.system.spins.size() >= 14 ? std::max(1, repeats / 3) : repeats;
      std::vector<double> times, walls;
      std::size_t lines = 0;
      for (int r = 0; r < runs; ++r) {
        const auto t0 = std::chrono::steady_clock::now();
        const std::clock_t c0 = std::clock();
        const auto sim = nmrpred::simulate(s.input.system, s.input.observe, options);
        times.push_back(static_cast<double>(std::clock() - c0) / CLOCKS_PER_SEC);
        walls.push_back(std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count());
        lines = sim.lines.size();
      }
      std::sort(times.begin(), times.end());
      std::sort(walls.begin(), walls.end());
      fmt::print("{:<32} {:>10.4f} {:>10.4f} {:>10.4f} {:>10.4f} {:>9}\n", s.name, times[times.size() / 2],
                 times.front(), times.back(), walls[walls.size() / 2], lines);
    }
  } catch (const std::exception &e) {
    std::cerr << "bench_spin: " << e.what() << '\n';
    return 1;
  }
  return 0;
}
