// Times sampling a line list onto a chemical-shift axis, and the JCAMP-DX and
// SVG writers, on fixed synthetic line lists (no molecule needed).
//
// Usage: bench_spectrum [REPEATS]   (default 200)
//
// The main input is about what a drug-like molecule gives in 1H: 25 signals
// of 8 lines each (200 lines) between 0.5 and 9 ppm, from a fixed generator,
// sampled to 65536 points. For scale the report also times the same lines
// evaluated at every point (what windowless sampling would cost) and
// sampling no lines (allocating and filling the two output arrays).
// Median, spread (min..max), machine, compiler and library version are
// printed. Pin it to one core (taskset -c 0). No assertions: it only measures.

#include <nmrpred/spectrum.hpp>

#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdint>
#include <cstdio>
#include <cstdlib>
#include <fstream>
#include <functional>
#include <string>
#include <vector>

#include <fmt/format.h>

#include "bench_common.hpp"

namespace {

using nmrpred_bench::Clock;
using nmrpred_bench::compiler;
using nmrpred_bench::cpu_model;

// A fixed 64-bit linear congruential generator (Knuth's MMIX constants), so
// that the input is the same on every platform.
struct Lcg {
  std::uint64_t state;
  double uniform() {
    state = state * 6364136223846793005ULL + 1442695040888963407ULL;
    return static_cast<double>(state >> 11) * (1.0 / 9007199254740992.0);
  }
};

// `signals` multiplets of 8 lines (three couplings, ddd-like), unit area per line.
std::vector<nmrpred::SpectralLine> synthetic_lines(int signals, double low, double high, double mhz) {
  Lcg rng{20240611};
  std::vector<nmrpred::SpectralLine> out;
  for (int s = 0; s < signals; ++s) {
    const double centre = low + (high - low) * rng.uniform();
    const double j1 = 2 + 14 * rng.uniform(), j2 = 1 + 7 * rng.uniform(), j3 = 0.5 + 3 * rng.uniform();
    for (int k = 0; k < 8; ++k) {
      const double hz = ((k & 1) ? 0.5 : -0.5) * j1 + ((k & 2) ? 0.5 : -0.5) * j2 + ((k & 4) ? 0.5 : -0.5) * j3;
      nmrpred::SpectralLine l;
      l.ppm = centre + hz / mhz;
      l.hz = l.ppm * mhz;
      l.intensity = 0.25;
      out.push_back(l);
    }
  }
  return out;
}

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

void report(const char *what, const Timing &t) {
  std::printf("%-58s median %8.3f ms   spread %8.3f .. %8.3f ms\n", what, t.median_ms, t.min_ms, t.max_ms);
}

}  // namespace

int main(int argc, char **argv) {
  const int repeats = argc > 1 ? std::max(1, std::atoi(argv[1])) : 200;
  std::printf("bench_spectrum: libnmrpred %s (%s), %s, %s, %d repeats\n", NMRPRED_BENCH_VERSION,
              NMRPRED_BENCH_BUILD_TYPE, compiler().c_str(), cpu_model().c_str(), repeats);
  double sink = 0;
  auto o = nmrpred::sampling_defaults(nmrpred::Nucleus::H1, 400);
  const auto lines = synthetic_lines(25, 0.5, 9.0, o.field_mhz);
  std::printf("input: %zu lines, axis %.1f .. %.1f ppm, FWHM %.1f Hz at %.0f MHz\n\n", lines.size(), o.ppm_low,
              o.ppm_high, o.line_width_hz, o.field_mhz);

  const auto no_lines = [&] { return nmrpred::sample_lines({}, o).ppm[7]; };
  report("sample_lines, no lines, 65536 points (fixed cost)", time_it(repeats, no_lines, sink));
  for (auto shape : {nmrpred::LineShape::Lorentzian, nmrpred::LineShape::Gaussian}) {
    auto so = o;
    so.shape = shape;
    const char *name = shape == nmrpred::LineShape::Gaussian ? "Gaussian" : "Lorentzian";
    for (std::size_t points : {std::size_t{65536}, std::size_t{1} << 20}) {
      so.points = points;
      report(fmt::format("sample_lines, 200 {} lines, {} points", name, points).c_str(),
             time_it(
                 points > 65536 ? std::max(1, repeats / 10) : repeats,
                 [&] {
                   const auto s = nmrpred::sample_lines(lines, so);
                   return s.intensity[points / 2];
                 },
                 sink));
    }
  }
  {
    // Windowless reference: every line at every point (Lorentzian).
    const double g = o.line_width_hz / o.field_mhz / 2;
    report("every line at every point, 200 Lorentzian, 65536 (scale)",
           time_it(
               std::max(1, repeats / 10),
               [&] {
                 std::vector<double> y(65536, 0.0);
                 const double step = (o.ppm_high - o.ppm_low) / 65535;
                 for (const auto &l : lines)
                   for (std::size_t i = 0; i < y.size(); ++i) {
                     const double d = o.ppm_low + static_cast<double>(i) * step - l.ppm;
                     y[i] += l.intensity * g / (3.141592653589793 * (d * d + g * g));
                   }
                 return y[100];
               },
               sink));
  }
  const auto spectrum = nmrpred::sample_lines(lines, o);
  for (auto enc : {nmrpred::JcampEncoding::Affn, nmrpred::JcampEncoding::DifDup}) {
    nmrpred::JcampOptions jo;
    jo.encoding = enc;
    std::size_t bytes = 0;
    const auto t = time_it(
        std::max(1, repeats / 10),
        [&] {
          const auto text = nmrpred::format_jcamp_dx(spectrum, jo);
          bytes = text.size();
          return static_cast<double>(text.size());
        },
        sink);
    report(fmt::format("format_jcamp_dx {}, 65536 points ({} KiB)",
                       enc == nmrpred::JcampEncoding::Affn ? "AFFN" : "DIFDUP", bytes / 1024)
               .c_str(),
           t);
  }
  {
    std::vector<nmrpred::Multiplet> signals;
    for (std::size_t s = 0; s < lines.size(); s += 8) {
      nmrpred::Multiplet m;
      m.lines.assign(lines.begin() + static_cast<long>(s), lines.begin() + static_cast<long>(s + 8));
      std::sort(m.lines.begin(), m.lines.end(), [](const auto &a, const auto &b) { return a.ppm < b.ppm; });
      m.ppm_low = m.lines.front().ppm;
      m.ppm_high = m.lines.back().ppm;
      m.ppm = (m.ppm_low + m.ppm_high) / 2;
      m.label = "ddd";
      m.j_hz = {12.0, 6.0, 2.0};
      m.integral = 2;
      signals.push_back(m);
    }
    std::size_t bytes = 0;
    const auto t = time_it(
        std::max(1, repeats / 10),
        [&] {
          const auto text = nmrpred::format_svg(spectrum, signals);
          bytes = text.size();
          return static_cast<double>(text.size());
        },
        sink);
    report(fmt::format("format_svg, 25 signals ({} KiB)", bytes / 1024).c_str(), t);
  }
  std::printf("\n(checksum %g)\n", sink);
  return 0;
}
