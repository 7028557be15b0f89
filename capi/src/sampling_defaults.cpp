#include "sampling_defaults.hpp"

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <string>

#include <nmrpred/error.hpp>

namespace nmrpred::capi {

std::size_t default_points(double ppm_low, double ppm_high, double observe_mhz, double width_hz) {
  const double needed = 4.0 * (ppm_high - ppm_low) * observe_mhz / width_hz + 1.0;
  std::size_t points = 65536;
  while (points < 4194304 && static_cast<double>(points) < needed) points *= 2;
  return points;
}

SamplingOptions default_sampling(const Simulation &sim, double line_width_hz, bool &file_nucleus) {
  if (!std::isfinite(line_width_hz) || line_width_hz <= 0)
    throw ArgumentError("line width must be a finite number of Hz > 0, got " + std::to_string(line_width_hz));
  SamplingOptions o;
  file_nucleus = sim.observed == SpinNucleus::H1 || sim.observed == SpinNucleus::C13;
  if (file_nucleus) {
    o = sampling_defaults(sim.observed == SpinNucleus::H1 ? Nucleus::H1 : Nucleus::C13, sim.observed_mhz);
  } else {
    o.field_mhz = sim.observed_mhz;
    double lo = -1, hi = 1;
    if (!sim.lines.empty()) {
      lo = sim.lines.front().ppm;
      hi = sim.lines.back().ppm;
      const double pad = std::max(1.0, 0.1 * (hi - lo));
      lo -= pad;
      hi += pad;
    }
    o.ppm_low = lo;
    o.ppm_high = hi;
  }
  o.line_width_hz = line_width_hz;
  o.broad_line_width_hz = std::max(o.broad_line_width_hz, line_width_hz);
  o.points = default_points(o.ppm_low, o.ppm_high, o.field_mhz, o.line_width_hz);
  return o;
}

}  // namespace nmrpred::capi
