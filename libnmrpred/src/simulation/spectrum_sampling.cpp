// Sampling line lists on an equally spaced chemical-shift axis.
//
// Lorentzian tails fall off as 1/offset^2, so cutting them at any window
// drops area (1/(pi k) of it beyond +-k FWHM) and evaluating every line at
// every point costs lines x points (13 million evaluations for 200 lines on
// 65536 points). Instead each line is evaluated on a grid kStride times
// coarser than the axis, the coarse sum is interpolated with 6-point
// Lagrange polynomials, and within kHalfCells coarse cells of each centre the
// line's own interpolant is replaced by its exact values. Far from the
// centre the line is smooth on the coarse scale: the interpolation error
// falls off like (stride / offset)^6, and relative to the line's height it
// peaks, near 3e-6, for lines about 5 strides wide (measured against the
// exact sum in tests/test_spectrum.cpp; under 1e-7 for lines narrower than
// one stride).

#include <nmrpred/error.hpp>
#include <nmrpred/spectrum.hpp>

#include <algorithm>
#include <array>
#include <cmath>
#include <string>

#include <fmt/format.h>

#include "simulation/spectrum_shapes.hpp"

namespace nmrpred {

namespace detail {

namespace {

constexpr double kPi = 3.14159265358979323846;
// FWHM = 2 sqrt(2 ln 2) sigma for a Gaussian (common practice).
constexpr double kFwhmPerSigma = 2.3548200450309493;
// Gaussian window: exp(-(5 * 2.3548)^2 / 2) = 9e-31 of the height beyond it.
constexpr double kGaussianWindowFwhm = 5.0;
constexpr std::size_t kStride = 64;
constexpr long kHalfCells = 8;
// Below this many points every Lorentzian line is evaluated everywhere: the
// exact window would cover most of the axis anyway.
constexpr std::size_t kDirectPoints = 4096;
constexpr std::size_t kMinPoints = 16;
constexpr std::size_t kMaxPoints = std::size_t{1} << 22;
constexpr double kMinWidthHz = 1e-6;

// Lagrange weights of the kTaps nodes -kLeft .. kTaps-kLeft-1 at fraction u
// of the cell between nodes 0 and 1.
constexpr int kTaps = 6;
constexpr int kLeft = 2;
std::array<double, kTaps> lagrange_weights(double u) {
  std::array<double, kTaps> w{};
  for (int j = 0; j < kTaps; ++j) {
    double num = 1, den = 1;
    for (int m = 0; m < kTaps; ++m) {
      if (m == j) continue;
      num *= u - (m - kLeft);
      den *= j - m;
    }
    w[static_cast<std::size_t>(j)] = num / den;
  }
  return w;
}

void accumulate_gaussian(const std::vector<ShapedLine> &lines, double low, double step, std::size_t n, double *out) {
  for (const auto &l : lines) {
    const double sigma = l.fwhm_ppm / kFwhmPerSigma;
    const double half = kGaussianWindowFwhm * l.fwhm_ppm;
    const double first = std::ceil((l.ppm - half - low) / step);
    const double last = std::floor((l.ppm + half - low) / step);
    if (last < 0 || first > static_cast<double>(n - 1)) continue;
    const auto i0 = static_cast<std::size_t>(std::max(first, 0.0));
    const auto i1 = static_cast<std::size_t>(std::min(last, static_cast<double>(n - 1)));
    const double height = l.area / (sigma * std::sqrt(2 * kPi));
    const double k = -0.5 / (sigma * sigma);
    for (std::size_t i = i0; i <= i1; ++i) {
      const double d = low + static_cast<double>(i) * step - l.ppm;
      out[i] += height * std::exp(k * d * d);
    }
  }
}

// One cell of kStride samples starting at out: the interpolant of the kTaps
// node values c, weighted by w (w[j * kStride + t] for node j, sample t),
// times `sign`. Fixed trip counts and restrict let the compiler vectorise.
inline void add_interpolant(const double *__restrict c, const double *__restrict w, double sign, double *__restrict out,
                            std::size_t count) {
  for (std::size_t t = 0; t < count; ++t) {
    double v = 0;
    for (int j = 0; j < kTaps; ++j) v += w[static_cast<std::size_t>(j) * kStride + t] * c[j];
    out[t] += sign * v;
  }
}

void accumulate_lorentzian(const std::vector<ShapedLine> &lines, double low, double step, std::size_t n, double *out) {
  if (n <= kDirectPoints) {
    for (const auto &l : lines) {
      const double g = l.fwhm_ppm / 2, a = l.area * g / kPi, g2 = g * g;
      for (std::size_t i = 0; i < n; ++i) {
        const double d = low + static_cast<double>(i) * step - l.ppm;
        out[i] += a / (d * d + g2);
      }
    }
    return;
  }
  // Cells 0..cells-1 cover samples 0..n-1; node k sits at sample k * kStride
  // and is stored at k + kLeft, for k = -kLeft .. cells + kTaps - kLeft - 1.
  const std::size_t cells = (n - 1 + kStride - 1) / kStride;
  const std::size_t nodes = cells + kTaps - 1;
  const double h = static_cast<double>(kStride) * step;
  std::vector<double> coarse(nodes, 0.0);
  for (const auto &l : lines) {
    const double g = l.fwhm_ppm / 2, a = l.area * g / kPi, g2 = g * g;
    const double base = low - l.ppm - kLeft * h;
    double *__restrict c = coarse.data();
    for (std::size_t j = 0; j < nodes; ++j) {
      const double d = base + static_cast<double>(j) * h;
      c[j] += a / (d * d + g2);
    }
  }
  std::vector<double> weights(static_cast<std::size_t>(kTaps) * kStride);
  for (std::size_t t = 0; t < kStride; ++t) {
    const auto w = lagrange_weights(static_cast<double>(t) / kStride);
    for (std::size_t j = 0; j < w.size(); ++j) weights[j * kStride + t] = w[j];
  }
  for (std::size_t k = 0; k < cells; ++k) {
    const std::size_t i0 = k * kStride;
    add_interpolant(coarse.data() + k, weights.data(), 1.0, out + i0, std::min(kStride, n - i0));
  }
  // Exact values near each centre, minus that line's share of the interpolant.
  const long last_cell = static_cast<long>(cells) - 1;
  const double reach = static_cast<double>((kHalfCells + kTaps) * static_cast<long>(kStride));
  std::array<double, 2 * kHalfCells + kTaps> own{};
  std::array<double, kStride> exact{};
  for (const auto &l : lines) {
    const double centre = (l.ppm - low) / step;
    if (!(centre > -reach && centre < static_cast<double>(n) + reach)) continue;
    const double g = l.fwhm_ppm / 2, a = l.area * g / kPi, g2 = g * g;
    const long kc = static_cast<long>(std::floor(centre / static_cast<double>(kStride)));
    const long k_lo = std::max(kc - kHalfCells, 0L), k_hi = std::min(kc + kHalfCells, last_cell);
    if (k_lo > k_hi) continue;
    // Nodes kc-kHalfCells-kLeft onwards, computed as the coarse pass did.
    const long first_node = kc - kHalfCells - kLeft;
    const double base = low - l.ppm - kLeft * h;
    for (std::size_t j = 0; j < own.size(); ++j) {
      const double d = base + static_cast<double>(first_node + kLeft + static_cast<long>(j)) * h;
      own[j] = a / (d * d + g2);
    }
    for (long k = k_lo; k <= k_hi; ++k) {
      const std::size_t i0 = static_cast<std::size_t>(k) * kStride;
      const std::size_t count = std::min(kStride, n - i0);
      const double d0 = low + static_cast<double>(i0) * step - l.ppm;
      double *__restrict e = exact.data();
      for (std::size_t t = 0; t < kStride; ++t) {
        const double d = d0 + static_cast<double>(t) * step;
        e[t] = a / (d * d + g2);
      }
      for (std::size_t t = 0; t < count; ++t) out[i0 + t] += exact[t];
      add_interpolant(own.data() + (k - kc + kHalfCells), weights.data(), -1.0, out + i0, count);
    }
  }
}

void check_options(const SamplingOptions &o, bool broad_used) {
  auto bad = [](const std::string &what) { throw ArgumentError("spectrum sampling: " + what); };
  if (!std::isfinite(o.field_mhz) || o.field_mhz <= 0)
    bad(fmt::format("field_mhz must be a finite number > 0 (got {})", o.field_mhz));
  if (!std::isfinite(o.ppm_low)) bad(fmt::format("ppm_low must be finite (got {})", o.ppm_low));
  if (!std::isfinite(o.ppm_high)) bad(fmt::format("ppm_high must be finite (got {})", o.ppm_high));
  if (o.ppm_low >= o.ppm_high) bad(fmt::format("ppm_low ({}) must be below ppm_high ({})", o.ppm_low, o.ppm_high));
  if (!std::isfinite(o.ppm_high - o.ppm_low))
    bad(fmt::format("the window {} .. {} ppm is too wide", o.ppm_low, o.ppm_high));
  if (o.points < kMinPoints || o.points > kMaxPoints)
    bad(fmt::format("points must be between {} and {} (got {})", kMinPoints, kMaxPoints, o.points));
  // Narrower lines would underflow the Lorentzian's squared half width.
  if (!std::isfinite(o.line_width_hz) || o.line_width_hz < kMinWidthHz)
    bad(fmt::format("line_width_hz must be a finite number >= {} (got {})", kMinWidthHz, o.line_width_hz));
  if (broad_used && (!std::isfinite(o.broad_line_width_hz) || o.broad_line_width_hz < kMinWidthHz))
    bad(fmt::format("broad_line_width_hz must be a finite number >= {} (got {})", kMinWidthHz, o.broad_line_width_hz));
  if (o.shape != LineShape::Lorentzian && o.shape != LineShape::Gaussian)
    bad(fmt::format("unknown line shape {}", static_cast<int>(o.shape)));
  // A step that rounds away would put several samples at one position.
  const double step = (o.ppm_high - o.ppm_low) / static_cast<double>(o.points - 1);
  if (!(step > std::max(std::fabs(o.ppm_low), std::fabs(o.ppm_high)) * 1e-12))
    bad(fmt::format("the window {} .. {} ppm is too narrow for {} points", o.ppm_low, o.ppm_high, o.points));
}

void check_line(const SpectralLine &l, const std::string &where) {
  if (!std::isfinite(l.ppm)) throw ArgumentError(fmt::format("spectrum sampling: {}: ppm is {}", where, l.ppm));
  if (!std::isfinite(l.intensity))
    throw ArgumentError(fmt::format("spectrum sampling: {}: intensity is {}", where, l.intensity));
}

SampledSpectrum sample(const std::vector<ShapedLine> &lines, const SamplingOptions &o) {
  SampledSpectrum s;
  s.nucleus = o.nucleus;
  s.field_mhz = o.field_mhz;
  s.line_width_hz = o.line_width_hz;
  s.broad_line_width_hz = o.broad_line_width_hz;
  s.shape = o.shape;
  const std::size_t n = o.points;
  const double step = (o.ppm_high - o.ppm_low) / static_cast<double>(n - 1);
  s.ppm.resize(n);
  for (std::size_t i = 0; i < n; ++i) s.ppm[i] = o.ppm_low + static_cast<double>(i) * step;
  s.ppm.back() = o.ppm_high;
  s.intensity.assign(n, 0.0);
  accumulate_lines(lines, o.shape, o.ppm_low, step, n, s.intensity.data());
  return s;
}

}  // namespace

double line_shape_value(LineShape shape, double offset_ppm, double fwhm_ppm) {
  if (shape == LineShape::Gaussian) {
    const double sigma = fwhm_ppm / kFwhmPerSigma;
    return std::exp(-0.5 * offset_ppm * offset_ppm / (sigma * sigma)) / (sigma * std::sqrt(2 * kPi));
  }
  const double g = fwhm_ppm / 2;
  return g / (kPi * (offset_ppm * offset_ppm + g * g));
}

double line_shape_cdf(LineShape shape, double offset_ppm, double fwhm_ppm) {
  if (shape == LineShape::Gaussian) {
    const double sigma = fwhm_ppm / kFwhmPerSigma;
    return 0.5 * std::erfc(-offset_ppm / (sigma * std::sqrt(2.0)));
  }
  return 0.5 + std::atan(offset_ppm / (fwhm_ppm / 2)) / kPi;
}

void accumulate_lines(const std::vector<ShapedLine> &lines, LineShape shape, double low_ppm, double step_ppm,
                      std::size_t n, double *out) {
  if (n == 0 || lines.empty()) return;
  if (shape == LineShape::Gaussian)
    accumulate_gaussian(lines, low_ppm, step_ppm, n, out);
  else
    accumulate_lorentzian(lines, low_ppm, step_ppm, n, out);
}

void check_sampled(const SampledSpectrum &s, const char *who) {
  auto bad = [who](const std::string &what) { throw ArgumentError(fmt::format("{}: {}", who, what)); };
  if (s.ppm.size() < 2) bad(fmt::format("the spectrum has {} points; at least 2 are needed", s.ppm.size()));
  if (s.intensity.size() != s.ppm.size())
    bad(fmt::format("the spectrum has {} positions but {} intensities", s.ppm.size(), s.intensity.size()));
  if (!std::isfinite(s.field_mhz) || s.field_mhz <= 0)
    bad(fmt::format("field_mhz must be a finite number > 0 (got {})", s.field_mhz));
  for (std::size_t i = 0; i < s.ppm.size(); ++i) {
    if (!std::isfinite(s.ppm[i]) || !std::isfinite(s.intensity[i]))
      bad(fmt::format("point {} is not finite (ppm {}, intensity {})", i, s.ppm[i], s.intensity[i]));
    if (i > 0 && !(s.ppm[i] > s.ppm[i - 1]))
      bad(fmt::format("ppm must increase along the spectrum (points {} and {})", i - 1, i));
  }
}

}  // namespace detail

SamplingOptions sampling_defaults(Nucleus nucleus, double field_mhz) {
  if (!std::isfinite(field_mhz) || field_mhz <= 0)
    throw ArgumentError(fmt::format("spectrum sampling: field_mhz must be a finite number > 0 (got {})", field_mhz));
  SamplingOptions o;
  o.nucleus = nucleus;
  o.field_mhz = field_mhz;
  if (nucleus == Nucleus::C13) {
    o.ppm_low = -5;
    o.ppm_high = 225;
    o.line_width_hz = 2;
    o.broad_line_width_hz = 10;
  }
  // At least 4 samples per FWHM, in powers of two from 65536 up.
  const double wanted = 4 * (o.ppm_high - o.ppm_low) * field_mhz / o.line_width_hz;
  while (static_cast<double>(o.points) < wanted && o.points < detail::kMaxPoints) o.points *= 2;
  return o;
}

SampledSpectrum sample_lines(const std::vector<SpectralLine> &lines, const SamplingOptions &options) {
  detail::check_options(options, false);
  const double fwhm = options.line_width_hz / options.field_mhz;
  std::vector<detail::ShapedLine> shaped;
  shaped.reserve(lines.size());
  for (std::size_t i = 0; i < lines.size(); ++i) {
    detail::check_line(lines[i], fmt::format("line {}", i));
    shaped.push_back({lines[i].ppm, lines[i].intensity, fwhm});
  }
  return detail::sample(shaped, options);
}

SampledSpectrum sample_signals(const std::vector<Multiplet> &signals, const SamplingOptions &options) {
  const bool any_broad =
      std::any_of(signals.begin(), signals.end(), [](const Multiplet &m) { return m.label.rfind("br ", 0) == 0; });
  detail::check_options(options, any_broad);
  std::vector<detail::ShapedLine> shaped;
  for (std::size_t s = 0; s < signals.size(); ++s) {
    const auto &m = signals[s];
    const double width_hz = m.label.rfind("br ", 0) == 0 ? options.broad_line_width_hz : options.line_width_hz;
    const double fwhm = width_hz / options.field_mhz;
    for (std::size_t i = 0; i < m.lines.size(); ++i) {
      detail::check_line(m.lines[i], fmt::format("signal {} ({} at {} ppm), line {}", s, m.label, m.ppm, i));
      shaped.push_back({m.lines[i].ppm, m.lines[i].intensity, fwhm});
    }
  }
  return detail::sample(shaped, options);
}

}  // namespace nmrpred
