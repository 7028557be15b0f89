// Solvent residual and water signals as line lists.
//
// A residual signal couples to n equivalent deuterons. Each deuteron (spin 1)
// takes the states m = -1, 0, +1 with equal population, so the lines sit at
// J * (m1 + ... + mn) and their intensities count the ways to reach each sum:
// the coefficients of (1 + x + x^2)^n (common practice). The table gives the
// multiplicity as the trade writes it; n follows from its 2n + 1 lines.

#include <nmrpred/error.hpp>
#include <nmrpred/spectrum.hpp>

#include <cmath>
#include <string>
#include <string_view>

#include <fmt/format.h>

namespace nmrpred {

namespace {

// Lines of the trade's multiplicity letters; 0 for anything else.
int line_count(std::string_view m) {
  if (m == "s") return 1;
  if (m == "d") return 2;
  if (m == "t") return 3;
  if (m == "q") return 4;
  if (m == "quint" || m == "p") return 5;
  if (m == "sext") return 6;
  if (m == "sept" || m == "hept") return 7;
  if (m == "oct") return 8;
  if (m == "non") return 9;
  return 0;
}

// The label Multiplet uses for 2n + 1 lines (see nmrpred/spin.hpp).
std::string label_for(int deuterons) {
  switch (deuterons) {
    case 0:
      return "s";
    case 1:
      return "t";
    case 2:
      return "p";
    case 3:
      return "sept";
    default:
      return "m";
  }
}

// Coefficients of (1 + x + x^2)^n.
std::vector<double> spin1_pattern(int n) {
  std::vector<double> c{1.0};
  for (int k = 0; k < n; ++k) {
    std::vector<double> next(c.size() + 2, 0.0);
    for (std::size_t i = 0; i < c.size(); ++i)
      for (std::size_t j = 0; j < 3; ++j) next[i + j] += c[i];
    c = std::move(next);
  }
  return c;
}

SolventPeak make_peak(SolventPeakKind kind, std::string text, Nucleus nucleus, double ppm, int deuterons, double j_hz,
                      std::string label, double area, double field_mhz) {
  SolventPeak p;
  p.kind = kind;
  p.text = std::move(text);
  p.deuterons = deuterons;
  auto &m = p.signal;
  m.nucleus = nucleus;
  m.ppm = ppm;
  m.label = std::move(label);
  if (deuterons > 0) m.j_hz = {j_hz};
  m.integral = area;
  const auto pattern = spin1_pattern(deuterons);
  double total = 0;
  for (double c : pattern) total += c;
  for (std::size_t i = 0; i < pattern.size(); ++i) {
    const double offset_hz = (static_cast<double>(i) - deuterons) * j_hz;
    SpectralLine l;
    l.ppm = ppm + offset_hz / field_mhz;
    l.hz = l.ppm * field_mhz;
    l.intensity = area * pattern[i] / total;
    m.lines.push_back(l);
  }
  m.ppm_low = m.lines.front().ppm;
  m.ppm_high = m.lines.back().ppm;
  return p;
}

SolventPeak residual_peak(const Solvent &solvent, const SolventSignal &sig, Nucleus nucleus, double area,
                          double field_mhz) {
  const std::string &mult = sig.multiplicity;
  if (mult == "br s" || mult == "m")
    return make_peak(SolventPeakKind::Residual, solvent.name, nucleus, sig.shift_ppm, 0, 0,
                     mult == "m" ? "br m" : "br s", area, field_mhz);
  const int lines = line_count(mult);
  if (lines == 0 || lines % 2 == 0)
    throw TablesError(
        fmt::format("solvents.tsv: {} signal at {} ppm: multiplicity '{}' cannot come from coupling "
                    "to deuterium (spin 1 gives 2n+1 lines)",
                    solvent.name, sig.shift_ppm, mult));
  const int deuterons = (lines - 1) / 2;
  if (deuterons > 0 && !(std::isfinite(sig.coupling_hz) && sig.coupling_hz > 0))
    throw TablesError(fmt::format("solvents.tsv: {} signal at {} ppm: multiplicity '{}' needs a coupling constant",
                                  solvent.name, sig.shift_ppm, mult));
  return make_peak(SolventPeakKind::Residual, solvent.name, nucleus, sig.shift_ppm, deuterons, sig.coupling_hz,
                   label_for(deuterons), area, field_mhz);
}

}  // namespace

std::vector<SolventPeak> solvent_peaks(const Solvent &solvent, Nucleus nucleus, double field_mhz,
                                       const SolventPeakOptions &options) {
  if (!std::isfinite(field_mhz) || field_mhz <= 0)
    throw ArgumentError(fmt::format("solvent peaks: field_mhz must be a finite number > 0 (got {})", field_mhz));
  if (!std::isfinite(options.residual_area) || options.residual_area < 0)
    throw ArgumentError(
        fmt::format("solvent peaks: residual_area must be a finite number >= 0 (got {})", options.residual_area));
  if (!std::isfinite(options.water_area) || options.water_area < 0)
    throw ArgumentError(
        fmt::format("solvent peaks: water_area must be a finite number >= 0 (got {})", options.water_area));
  std::vector<SolventPeak> out;
  const bool h1 = nucleus == Nucleus::H1;
  // HDO in D2O is both the residual and the water signal: give it once.
  constexpr double kSameSignalPpm = 0.01;
  for (const auto &sig : h1 ? solvent.h1_residual : solvent.c13) {
    if (h1 && options.water && std::fabs(sig.shift_ppm - solvent.water_h1_ppm) < kSameSignalPpm) continue;
    out.push_back(residual_peak(solvent, sig, nucleus, options.residual_area, field_mhz));
  }
  if (h1 && options.water) {
    // Water exchanges with a solvent's O-D groups and is seen as HDO there
    // (common practice).
    out.push_back(make_peak(SolventPeakKind::Water, solvent.exchanges_labile_protons ? "HDO" : "H2O", nucleus,
                            solvent.water_h1_ppm, 0, 0, "br s", options.water_area, field_mhz));
  }
  return out;
}

}  // namespace nmrpred
