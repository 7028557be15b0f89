// First-order readings of simulated multiplets (multiplet_reading.hpp): the
// signal and each candidate pattern are drawn on one grid at the line width
// and compared by cosine similarity.
#include "simulation/multiplet_reading.hpp"

#include <algorithm>
#include <cmath>
#include <cstddef>
#include <string>
#include <vector>

#include "simulation/spin_exact.hpp"

namespace nmrpred::simulation::detail {

namespace {

using Line = std::pair<double, double>;  // (Hz, intensity)

/// Grid points per line width: peaks are placed to a sixteenth of it.
constexpr double kPointsPerWidth = 8;
/// A Lorentzian is drawn out to this many line widths each side; beyond, it is
/// below 1/400 of its height and hardly changes a similarity.
constexpr double kWindowWidths = 10;
/// Most grid points of one drawing (wider signals get a coarser grid).
constexpr std::size_t kMaxPoints = 1 << 15;
/// Peaks lower than this fraction of a drawing's highest are not peaks (a
/// septet's outer lines are 1/20 of its centre).
constexpr double kPeakFloor = 0.02;
/// A pattern of two or more peaks also reads a signal whose highest peaks are
/// its peaks (spacings within kSpacingShare of theirs or half a line width,
/// heights relative to each other within a factor kHeightFactor: roofing)
/// while every other peak stays below kMinorPeak of the highest: the trade
/// reads the AA'XX' halves of para-disubstituted benzenes as doublets and
/// passes over their extra lines (common practice), which reach about 40 % of
/// the main peaks with J_meta about 1.6 Hz; a 1:2:1 triplet's outer peaks
/// (50 %) are not minor. kHeightFactor rejects the roofing of an AB pair with
/// |delta nu / J| below about 3 (inner to outer line 1.9 there).
constexpr double kSpacingShare = 0.15;
constexpr double kHeightFactor = 1.6;
constexpr double kMinorPeak = 0.45;

struct Grid {
  double lo = 0;
  double step = 1;
  std::size_t n = 0;
};

/// Draws `lines` as Lorentzians of full width `w` on `g`: each line is shared
/// between its two nearest points (keeping its centroid), then the points are
/// convolved with the line shape, so the cost is bounded by the grid.
std::vector<double> draw(const std::vector<Line> &lines, const Grid &g, double w) {
  std::vector<double> bins(g.n, 0.0);
  for (const Line &l : lines) {
    const double x = (l.first - g.lo) / g.step;
    if (!(x >= 0) || x > static_cast<double>(g.n - 1)) continue;
    const auto i = static_cast<std::size_t>(x);
    const double frac = x - static_cast<double>(i);
    bins[i] += l.second * (1 - frac);
    if (i + 1 < g.n) bins[i + 1] += l.second * frac;
  }
  const auto half = static_cast<std::size_t>(std::ceil(kWindowWidths * w / g.step));
  std::vector<double> kernel(half + 1);
  for (std::size_t k = 0; k <= half; ++k) {
    const double u = 2 * static_cast<double>(k) * g.step / w;
    kernel[k] = 1 / (1 + u * u);
  }
  std::vector<double> y(g.n, 0.0);
  for (std::size_t i = 0; i < g.n; ++i) {
    if (bins[i] == 0) continue;
    const std::size_t from = i > half ? i - half : 0, to = std::min(g.n - 1, i + half);
    for (std::size_t j = from; j <= to; ++j) y[j] += bins[i] * kernel[j > i ? j - i : i - j];
  }
  return y;
}

double cosine(const std::vector<double> &a, const std::vector<double> &b) {
  double ab = 0, aa = 0, bb = 0;
  for (std::size_t i = 0; i < a.size(); ++i) {
    ab += a[i] * b[i];
    aa += a[i] * a[i];
    bb += b[i] * b[i];
  }
  return aa > 0 && bb > 0 ? ab / std::sqrt(aa * bb) : 0;
}

/// The stick pattern of `steps` centred on 0.
std::vector<Line> pattern(const std::vector<SplitStep> &steps) {
  std::vector<Line> out{{0.0, 1.0}};
  for (const SplitStep &s : steps)
    for (int twice : s.partner_twice) {
      const std::vector<double> w = fz_distribution(twice, 1);
      std::vector<Line> next;
      next.reserve(out.size() * w.size());
      for (const Line &l : out)
        for (std::size_t k = 0; k < w.size(); ++k)
          next.emplace_back(l.first + s.j_hz * (static_cast<double>(k) - 0.5 * twice), l.second * w[k]);
      out = std::move(next);
    }
  return out;
}

double half_span(const std::vector<SplitStep> &steps) {
  double h = 0;
  for (const SplitStep &s : steps)
    for (int twice : s.partner_twice) h += 0.5 * twice * s.j_hz;
  return h;
}

/// Letters for a splitting by `equivalents` spin-1/2 partners: "d" .. "sept";
/// empty beyond.
const char *letters(int equivalents) {
  switch (equivalents) {
    case 1: return "d";
    case 2: return "t";
    case 3: return "q";
    case 4: return "p";
    case 5: return "sext";
    case 6: return "sept";
    default: return "";
  }
}

/// The trade's label of `steps`, or empty when they have no such name: one
/// step of up to six equivalents, or two or three steps of up to three each.
std::string label_of(const std::vector<SplitStep> &steps) {
  if (steps.empty()) return "s";
  if (steps.size() > 3) return {};
  std::string label;
  for (const SplitStep &s : steps) {
    int equivalents = 0;
    for (int twice : s.partner_twice) equivalents += twice;
    if (steps.size() > 1 && equivalents > 3) return {};
    const char *l = letters(equivalents);
    if (!*l) return {};
    label += l;
  }
  return label;
}

/// Peaks (Hz, height) of a drawing, at least `floor` of its highest, placed
/// by a parabola through the top three points.
std::vector<Line> peaks_of(const std::vector<double> &y, const Grid &g, double floor) {
  std::vector<Line> peaks;
  if (y.empty()) return peaks;
  const double top = *std::max_element(y.begin(), y.end());
  for (std::size_t i = 1; i + 1 < y.size(); ++i) {
    if (!(y[i] > y[i - 1] && y[i] >= y[i + 1]) || y[i] < floor * top) continue;
    const double curvature = y[i - 1] - 2 * y[i] + y[i + 1];
    const double offset = curvature < 0 ? 0.5 * (y[i - 1] - y[i + 1]) / curvature : 0;
    peaks.emplace_back(g.lo + (static_cast<double>(i) + offset) * g.step, y[i]);
  }
  return peaks;
}

/// Whether the highest peaks of the signal are the peaks of a pattern of two
/// or more peaks (see kMinorPeak): same number, spacings and relative heights
/// alike, every other peak minor.
bool peaks_alike(const std::vector<Line> &signal, const std::vector<Line> &pattern, double w) {
  const std::size_t k = pattern.size();
  if (k < 2 || signal.size() < k) return false;
  std::vector<Line> top = signal;
  std::sort(top.begin(), top.end(), [](const Line &a, const Line &b) { return a.second > b.second; });
  for (std::size_t i = k; i < top.size(); ++i)
    if (top[i].second > kMinorPeak * top[0].second) return false;
  top.resize(k);
  std::sort(top.begin(), top.end());
  double sum_top = 0, sum_pattern = 0;
  for (std::size_t i = 0; i < k; ++i) {
    sum_top += top[i].second;
    sum_pattern += pattern[i].second;
  }
  for (std::size_t i = 0; i < k; ++i) {
    const double ratio = (top[i].second / sum_top) / (pattern[i].second / sum_pattern);
    if (ratio > kHeightFactor || ratio < 1 / kHeightFactor) return false;
    if (i == 0) continue;
    const double want = pattern[i].first - pattern[i - 1].first, got = top[i].first - top[i - 1].first;
    if (std::fabs(got - want) > std::max(0.5 * w, kSpacingShare * want)) return false;
  }
  return true;
}

}  // namespace

Reading read_multiplet(const std::vector<std::pair<double, double>> &lines,
                       const std::vector<std::vector<SplitStep>> &candidates, double w) {
  Reading none{"m", {}};
  double strongest = 0, sum = 0, moment = 0;
  for (const Line &l : lines) {
    strongest = std::max(strongest, l.second);
    sum += l.second;
    moment += l.first * l.second;
  }
  if (!(sum > 0)) return none;
  const double centre = moment / sum;
  double lo = centre, hi = centre;
  for (const Line &l : lines)
    if (l.second >= 1e-3 * strongest) {
      lo = std::min(lo, l.first);
      hi = std::max(hi, l.first);
    }
  // The grid also reaches as far as the candidates' outer lines.
  for (const auto &c : candidates) {
    const double h = half_span(c);
    lo = std::min(lo, centre - h);
    hi = std::max(hi, centre + h);
  }
  lo -= 3 * w;
  hi += 3 * w;
  Grid g;
  g.lo = lo;
  g.step = std::max(w / kPointsPerWidth, (hi - lo) / static_cast<double>(kMaxPoints - 1));
  g.n = static_cast<std::size_t>(std::ceil((hi - lo) / g.step)) + 1;
  const std::vector<double> signal = draw(lines, g, w);
  const std::vector<Line> signal_peaks = peaks_of(signal, g, kPeakFloor);

  Reading best = none;
  double best_score = -1;
  Reading alike = none;  // the pattern whose peaks are the signal's, if any
  double alike_score = -1;
  const auto consider = [&](const std::vector<SplitStep> &steps) {
    const std::string label = label_of(steps);
    if (label.empty()) return;
    std::vector<Line> sticks = pattern(steps);
    for (Line &l : sticks) l.first += centre;
    const std::vector<double> drawn = draw(sticks, g, w);
    const double score = cosine(signal, drawn);
    Reading r{label, {}};
    for (const SplitStep &s : steps) r.j_hz.push_back(s.j_hz);
    if (score > alike_score && peaks_alike(signal_peaks, peaks_of(drawn, g, kPeakFloor), w)) {
      alike_score = score;
      alike = r;
    }
    if (score <= best_score) return;
    best_score = score;
    best = std::move(r);
  };
  // Each pattern, and the same without its smallest splittings (which may
  // not show), then a singlet.
  for (const auto &c : candidates)
    for (std::size_t keep = c.size(); keep > 0; --keep)
      consider(std::vector<SplitStep>(c.begin(), c.begin() + static_cast<std::ptrdiff_t>(keep)));
  consider({});
  if (best_score >= kReadingSimilarity) return best;
  return alike_score >= 0 ? alike : none;
}

}  // namespace nmrpred::simulation::detail
