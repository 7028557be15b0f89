// What every timing program prints about where it ran: the library version and
// build type (set by benchmarks/CMakeLists.txt), the processor and the compiler.
#ifndef NMRPRED_BENCH_COMMON_HPP
#define NMRPRED_BENCH_COMMON_HPP

#include <chrono>
#include <fstream>
#include <string>

#include <fmt/format.h>

#ifndef NMRPRED_BENCH_VERSION
#define NMRPRED_BENCH_VERSION "unknown"
#endif
#ifndef NMRPRED_BENCH_BUILD_TYPE
#define NMRPRED_BENCH_BUILD_TYPE "unknown"
#endif

namespace nmrpred_bench {

using Clock = std::chrono::steady_clock;

/// The processor's model name from /proc/cpuinfo, "unknown CPU" elsewhere.
inline std::string cpu_model() {
  std::ifstream in("/proc/cpuinfo");
  std::string line;
  while (std::getline(in, line))
    if (line.rfind("model name", 0) == 0) {
      const auto colon = line.find(':');
      if (colon != std::string::npos) return line.substr(colon + 2);
    }
  return "unknown CPU";
}

/// Compiler and version the benchmark was built with.
inline std::string compiler() {
#if defined(__clang__)
  return fmt::format("clang {}", __clang_version__);
#elif defined(__GNUC__)
  return fmt::format("gcc {}", __VERSION__);
#else
  return "unknown compiler";
#endif
}

}  // namespace nmrpred_bench

#endif
