// Matching measured peak lists against predictions: the cost model, the
// verdict and the ranking (match.hpp; the reasoning is in docs/matching.md).
#include <nmrpred/match.hpp>

#include <algorithm>
#include <cctype>
#include <cmath>
#include <limits>
#include <numeric>
#include <optional>
#include <set>

#include <fmt/format.h>

#include <nmrpred/error.hpp>
#include <nmrpred/solvents.hpp>

#include "matching/assign.hpp"

namespace nmrpred {

namespace {

const char *nucleus_label(Nucleus n) { return n == Nucleus::H1 ? "1H" : "13C"; }

// Residual term: nu * ln(1 + z^2 / nu), the negative log-density of a
// Student-t residual up to constants and scale (common practice in robust
// regression): about z^2 for small z, only logarithmic for gross errors, so one
// wrong prediction cannot swamp the rest.
double robust(double z, double nu) { return nu * std::log1p(z * z / nu); }

// Huber's function of r (quadratic up to |r| = 2, linear beyond): convex, as the
// assignment needs, and gentle with one badly integrated peak.
double huber(double r) {
  const double a = std::fabs(r);
  return a <= 2.0 ? a * a : 4.0 * a - 4.0;
}

// Spread allowed for an integral of I protons: reported integrals are rounded
// to whole protons, and larger ones carry a few percent of error on top
// (common practice).
double integral_sd(double integral) { return 0.1 * integral + 0.25; }

// An integral off by more than rounding allows: half a proton plus 10 %.
bool integral_off(double integral, double load) { return std::fabs(load - integral) > 0.5 + 0.1 * integral; }

// Regularized upper incomplete gamma Q(a, x), by its series for x < a + 1 and
// its continued fraction otherwise (Abramowitz and Stegun 6.5.29 and 6.5.31;
// common practice).
double gamma_q(double a, double x) {
  if (x <= 0) return 1.0;
  const double log_prefix = a * std::log(x) - x - std::lgamma(a);
  if (x < a + 1) {
    double term = 1.0 / a, sum = term;
    for (int n = 1; n < 1000; ++n) {
      term *= x / (a + n);
      sum += term;
      if (std::fabs(term) < std::fabs(sum) * 1e-15) break;
    }
    return std::max(0.0, 1.0 - sum * std::exp(log_prefix));
  }
  // Lentz's method for the continued fraction.
  const double tiny = 1e-300;
  double b = x + 1 - a, c = 1 / tiny, d = 1 / b, h = d;
  for (int i = 1; i < 1000; ++i) {
    const double an = -i * (i - a);
    b += 2;
    d = an * d + b;
    if (std::fabs(d) < tiny) d = tiny;
    c = b + an / c;
    if (std::fabs(c) < tiny) c = tiny;
    d = 1 / d;
    const double del = d * c;
    h *= del;
    if (std::fabs(del - 1) < 1e-15) break;
  }
  return std::min(1.0, std::exp(log_prefix) * h);
}

std::string normalized_multiplicity(const std::string &m) {
  std::string s;
  for (char c : m) s += static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  // "br s", "br. s", "broad s" all describe the splitting "s".
  for (const char *prefix : {"broad", "br.", "br"}) {
    const std::string p(prefix);
    if (s.compare(0, p.size(), p) == 0) {
      s.erase(0, p.size());
      break;
    }
  }
  const auto first = s.find_first_not_of(" \t");
  if (first == std::string::npos) return "";
  const auto last = s.find_last_not_of(" \t");
  return s.substr(first, last - first + 1);
}

// Splitting steps of a multiplicity ("td" -> {3, 2}: lines per step, largest
// coupling first as written); empty for "s"; nullopt for "m" or anything
// unreadable (then the term is not used).
std::optional<std::vector<int>> multiplet_steps(const std::string &m) {
  if (m.empty() || m == "m") return std::nullopt;
  if (m == "s") return std::vector<int>{};
  static const std::pair<const char *, int> kWords[] = {{"quint", 5}, {"sext", 6}, {"sept", 7}, {"hept", 7},
                                                        {"oct", 8},   {"non", 9},  {"p", 5},    {"d", 2},
                                                        {"t", 3},     {"q", 4}};
  std::vector<int> steps;
  std::size_t k = 0;
  while (k < m.size()) {
    bool found = false;
    for (const auto &[word, lines] : kWords) {
      const std::string w(word);
      if (m.compare(k, w.size(), w) == 0) {
        steps.push_back(lines);
        k += w.size();
        found = true;
        break;
      }
    }
    if (!found) return std::nullopt;
  }
  return steps;
}

// Whether an observed multiplicity can be what the predicted one looks like
// in a reported spectrum. Common practice: couplings below about 3 Hz often
// go unresolved (a "dd" with J = 8.0, 1.5 Hz is reported as "d"), and two
// couplings within about 1.5 Hz of each other give an apparent single step
// (a "dd" with J = 7.8, 7.4 Hz is reported as "t"). So the observed steps
// must be the leading steps of the prediction, before or after merging
// near-equal couplings, with every remaining coupling small. Without
// predicted couplings the letters must agree.
bool multiplicity_compatible(const std::vector<int> &observed, const std::vector<int> &predicted,
                             const std::vector<double> &j_hz) {
  if (j_hz.size() != predicted.size()) return observed == predicted;
  constexpr double kUnresolvedHz = 3.0, kMergeHz = 1.5;
  auto fits = [&](const std::vector<int> &steps, const std::vector<double> &j) {
    if (observed.size() > steps.size()) return false;
    for (std::size_t k = 0; k < observed.size(); ++k)
      if (observed[k] != steps[k]) return false;
    for (std::size_t k = observed.size(); k < steps.size(); ++k)
      if (j[k] >= kUnresolvedHz) return false;
    return true;
  };
  if (fits(predicted, j_hz)) return true;
  std::vector<int> merged;
  std::vector<double> merged_j;
  for (std::size_t k = 0; k < predicted.size(); ++k) {
    if (!merged.empty() && std::fabs(merged_j.back() - j_hz[k]) < kMergeHz) {
      merged.back() += predicted[k] - 1;  // equal couplings: n1 + n2 - 1 lines
      merged_j.back() = 0.5 * (merged_j.back() + j_hz[k]);
    } else {
      merged.push_back(predicted[k]);
      merged_j.push_back(j_hz[k]);
    }
  }
  return fits(merged, merged_j);
}

// The geminal coupling a predicted 1H signal hides: its protons share a carbon
// with the protons of another signal (a diastereotopic CH2) predicted so
// close that, at `mhz`, the pair is strongly coupled and the simulated pattern
// shows no geminal splitting. Measured pairs usually do differ (common
// practice: the two protons of a CH2 next to a stereocentre mostly give an
// ABX "dd" each), so the geminal step may be seen where the prediction has
// none. Returns |2J| in Hz, or nothing.
std::optional<double> hidden_geminal_j(const Prediction &pred, const std::vector<Signal> &signals, std::size_t i,
                                       double mhz) {
  const Molecule &mol = pred.molecule;
  for (std::size_t k = 0; k < signals.size(); ++k) {
    if (k == i) continue;
    for (std::size_t h : signals[i].atoms) {
      const auto c = mol.attached_to(h);
      if (c < 0) continue;
      for (std::size_t g : signals[k].atoms) {
        if (mol.attached_to(g) != c) continue;
        double j = 14.0;  // a typical sp3 geminal |2J| when no coupling was predicted (common practice)
        for (const auto &cp : pred.couplings)
          if (cp.a == std::min(h, g) && cp.b == std::max(h, g)) j = std::fabs(cp.j_hz);
        if (std::fabs(signals[i].ppm - signals[k].ppm) * mhz < 3 * j) return j;
      }
    }
  }
  return std::nullopt;
}

// multiplicity_compatible(), also accepting the prediction with its hidden
// geminal step (see hidden_geminal_j()) put back in coupling order.
bool multiplicity_compatible_geminal(const std::vector<int> &observed, const std::vector<int> &predicted,
                                     const std::vector<double> &j_hz, std::optional<double> geminal) {
  if (multiplicity_compatible(observed, predicted, j_hz)) return true;
  if (!geminal || j_hz.size() != predicted.size()) return false;
  std::vector<int> steps;
  std::vector<double> js;
  bool placed = false;
  for (std::size_t k = 0; k <= predicted.size(); ++k) {
    if (!placed && (k == predicted.size() || j_hz[k] < *geminal)) {
      steps.push_back(2);
      js.push_back(*geminal);
      placed = true;
    }
    if (k < predicted.size()) {
      steps.push_back(predicted[k]);
      js.push_back(j_hz[k]);
    }
  }
  return multiplicity_compatible(observed, steps, js);
}

std::string format_ppm(Nucleus n, double v) { return n == Nucleus::H1 ? fmt::format("{:.2f}", v) : fmt::format("{:.1f}", v); }

std::string format_peak(Nucleus n, const MeasuredPeak &p) {
  if (p.ppm_high > p.ppm_low) return format_ppm(n, p.ppm_high) + "-" + format_ppm(n, p.ppm_low);
  return format_ppm(n, p.ppm);
}

const char *hydrogen_kind(int h) {
  switch (h) {
    case 0: return "C";
    case 1: return "CH";
    case 2: return "CH2";
    case 3: return "CH3";
    default: return "CH4";
  }
}

// Names a signal by its atoms: carbons as "C3/C5" (0-based atom indices), protons
// by the atoms they sit on, "H on C3/C5".
std::string signal_label(const Molecule &mol, const Signal &s) {
  std::vector<std::size_t> atoms;
  if (s.nucleus == Nucleus::H1) {
    std::set<std::size_t> heavy;
    for (std::size_t h : s.atoms) {
      const auto a = mol.attached_to(h);
      if (a >= 0) heavy.insert(static_cast<std::size_t>(a));
    }
    atoms.assign(heavy.begin(), heavy.end());
  } else {
    atoms = s.atoms;
  }
  std::string out = s.nucleus == Nucleus::H1 ? "H on " : "";
  const std::size_t shown = std::min<std::size_t>(atoms.size(), 4);
  for (std::size_t k = 0; k < shown; ++k) {
    if (k > 0) out += '/';
    out += fmt::format("{}{}", Molecule::element_symbol(mol.atom(atoms[k]).atomic_number), atoms[k]);
  }
  if (atoms.size() > shown) out += "/...";
  if (atoms.empty()) out += "H";
  return out;
}

// Distance from a value to a peak's range, observed minus predicted.
double residual_to(const MeasuredPeak &p, double predicted) {
  if (predicted < p.ppm_low) return p.ppm_low - predicted;
  if (predicted > p.ppm_high) return p.ppm_high - predicted;
  return 0.0;
}

bool near_any(const MeasuredPeak &p, const std::vector<double> &values, double window) {
  for (double v : values)
    if (std::max({0.0, p.ppm_low - v, v - p.ppm_high}) <= window) return true;
  return false;
}

void check_spectra(const std::vector<MeasuredSpectrum> &measured) {
  if (measured.empty()) throw ArgumentError("match: no measured spectrum was given");
  bool seen_h = false, seen_c = false;
  for (std::size_t s = 0; s < measured.size(); ++s) {
    const auto &sp = measured[s];
    const char *nuc = nucleus_label(sp.nucleus);
    if (sp.nucleus != Nucleus::H1 && sp.nucleus != Nucleus::C13)
      throw ArgumentError(fmt::format("match: measured spectrum {} is of an unsupported nucleus", s + 1));
    bool &seen = sp.nucleus == Nucleus::H1 ? seen_h : seen_c;
    if (seen)
      throw ArgumentError(fmt::format("match: two {} spectra were given; give one peak list per nucleus", nuc));
    seen = true;
    if (sp.peaks.empty()) throw InputError(fmt::format("match: the {} peak list (spectrum {}) is empty", nuc, s + 1));
    for (std::size_t k = 0; k < sp.peaks.size(); ++k) {
      const auto &p = sp.peaks[k];
      const std::string where = fmt::format("match: {} peak {}{}", nuc, k + 1, p.text.empty() ? "" : " ('" + p.text + "')");
      if (!std::isfinite(p.ppm) || !std::isfinite(p.ppm_low) || !std::isfinite(p.ppm_high))
        throw InputError(where + ": the shift is not a finite number");
      if (p.ppm_low > p.ppm_high) throw InputError(where + ": the range's low end lies above its high end");
      if (p.ppm < p.ppm_low - 1e-9 || p.ppm > p.ppm_high + 1e-9)
        throw InputError(where + ": the centre lies outside the range");
      if (p.integral && (!std::isfinite(*p.integral) || *p.integral < 0))
        throw InputError(where + ": the integral is not a finite number >= 0");
      for (double j : p.j_hz)
        if (!std::isfinite(j)) throw InputError(where + ": a coupling constant is not a finite number");
      if (p.attached_h && (*p.attached_h < 0 || *p.attached_h > 4))
        throw InputError(where + ": attached protons must be 0..4");
    }
  }
}

// Figures of one spectrum needed for the verdict and the worst list.
struct Finding {
  double badness = 0;
  std::string text;
};

struct SpectrumStats {
  std::vector<double> z;  // placed signals
  std::size_t missing = 0, unexplained = 0, solvent = 0, integral_mismatches = 0, multiplicity_mismatches = 0,
              attached_h_mismatches = 0, non_exchangeable_signals = 0, candidate_peaks = 0, integrated_peaks = 0,
              dept_peaks = 0;
  std::vector<Finding> findings;
};

SpectrumMatch match_spectrum(const Prediction &pred, const MeasuredSpectrum &sp, std::size_t index,
                             const Tables &tables, const MatchOptions &opt, std::vector<std::string> &warnings,
                             SpectrumStats &st) {
  const Nucleus nuc = sp.nucleus;
  const char *nuc_name = nucleus_label(nuc);
  const bool h1 = nuc == Nucleus::H1;
  if (!pred.options.predict_shifts || (h1 && !pred.options.predict_h1))
    throw ArgumentError(fmt::format("match: the prediction holds no {} shifts; predict them to match a {} list",
                                    nuc_name, nuc_name));
  const std::vector<Signal> &signals = pred.signals(nuc);
  const auto &peaks = sp.peaks;
  const std::size_t n = signals.size(), m = peaks.size();

  // Solvent signals to set aside: the data's own solvent when it names one.
  Solvent solvent = pred.solvent;
  if (!sp.solvent.empty()) {
    try {
      solvent = find_solvent(tables, sp.solvent);
      if (solvent.id != pred.solvent.id)
        warnings.push_back(fmt::format("the {} data were measured in {}, the prediction was made for {}", nuc_name,
                                       solvent.name, pred.solvent.name));
    } catch (const Error &) {
      warnings.push_back(fmt::format("the solvent '{}' of the {} data is unknown; the signals of {} are set aside instead",
                                     sp.solvent, nuc_name, pred.solvent.name));
    }
  }
  std::vector<double> residual;
  if (h1) {
    for (const auto &s : solvent.h1_residual) residual.push_back(s.shift_ppm);
  } else {
    for (const auto &s : solvent.c13) residual.push_back(s.shift_ppm);
  }

  // Integrals: whole numbers are protons; anything else is relative and is
  // scaled to the predicted total.
  std::vector<std::optional<double>> integral(m);
  if (h1 && opt.use_integrals) {
    double sum = 0;
    bool whole = true, any = false;
    for (std::size_t j = 0; j < m; ++j) {
      if (!peaks[j].integral) continue;
      any = true;
      const double v = *peaks[j].integral;
      sum += v;
      if (v < 0.8 || std::fabs(v - std::round(v)) > 0.2) whole = false;
      integral[j] = v;
    }
    int predicted_total = 0;
    for (const auto &s : signals) predicted_total += s.count;
    if (any && !whole && sum > 0 && predicted_total > 0) {
      const double f = predicted_total / sum;
      for (auto &v : integral)
        if (v) *v *= f;
      warnings.push_back(fmt::format("the 1H integrals are not whole protons; they were scaled by {:.3g} to the "
                                     "{} protons predicted",
                                     f, predicted_total));
    }
  }

  // Combined uncertainty; a floor keeps z finite for a zero-width prediction.
  const double meas = h1 ? opt.h1_measurement_ppm : opt.c13_measurement_ppm;
  std::vector<double> sd(n);
  for (std::size_t i = 0; i < n; ++i) sd[i] = std::max(std::hypot(signals[i].uncertainty_ppm, meas), 1e-3);

  detail::AssignProblem prob;
  prob.signals = n;
  prob.peaks = m;
  prob.weight.resize(n);
  prob.missing.resize(n);
  prob.unit_cost.resize(n * m);
  int units = 0;
  for (std::size_t i = 0; i < n; ++i) {
    prob.weight[i] = h1 ? std::max(signals[i].count, 1) : 1;
    units += prob.weight[i];
    prob.missing[i] = signals[i].exchangeable ? 0.0 : opt.missing_cost;
  }
  std::vector<char> mult_bad(n * m, 0), dept_bad(n * m, 0);
  const double mhz = sp.mhz && *sp.mhz > 0 ? *sp.mhz : pred.options.field_mhz;
  for (std::size_t i = 0; i < n; ++i) {
    const auto pm = multiplet_steps(normalized_multiplicity(signals[i].multiplicity));
    const auto geminal = h1 && pm ? hidden_geminal_j(pred, signals, i, mhz) : std::nullopt;
    for (std::size_t j = 0; j < m; ++j) {
      double c = robust(residual_to(peaks[j], signals[i].ppm) / sd[i], opt.robust_nu);
      if (h1) {
        const auto om = multiplet_steps(normalized_multiplicity(peaks[j].multiplicity));
        if (pm && om && !multiplicity_compatible_geminal(*om, *pm, signals[i].j_hz, geminal)) {
          c += opt.multiplicity_cost;
          mult_bad[i * m + j] = 1;
        }
      } else if (peaks[j].attached_h && *peaks[j].attached_h != signals[i].attached_h) {
        c += opt.attached_h_cost;
        dept_bad[i * m + j] = 1;
      }
      // One shift per class: the residual term counts once per signal, spread
      // over its units so that the flow can carry it (docs/matching.md, "Cost").
      prob.unit_cost[i * m + j] = c / prob.weight[i];
    }
  }
  std::vector<char> solvent_like(m, 0);
  prob.occupancy.assign(m, std::vector<double>(static_cast<std::size_t>(units) + 1, 0.0));
  for (std::size_t j = 0; j < m; ++j) {
    auto &g = prob.occupancy[j];
    if (integral[j]) {
      // An integrated peak is taken as the compound's, never as solvent.
      const double s = integral_sd(*integral[j]);
      for (std::size_t k = 0; k < g.size(); ++k) g[k] = huber((static_cast<double>(k) - *integral[j]) / s);
      continue;
    }
    solvent_like[j] = near_any(peaks[j], residual, h1 ? opt.h1_solvent_window_ppm : opt.c13_solvent_window_ppm) ||
                      (h1 && near_any(peaks[j], {solvent.water_h1_ppm}, opt.water_window_ppm));
    g[0] = solvent_like[j] ? 0.0 : opt.unexplained_cost;
    for (std::size_t k = 1; k < g.size(); ++k) g[k] = h1 ? 0.0 : (k - 1) * opt.overlap_cost;
  }

  const detail::AssignSolution sol = detail::solve_assignment(prob);

  SpectrumMatch out;
  out.nucleus = nuc;
  out.spectrum = index;
  out.solvent = solvent.name;
  out.cost = sol.cost;
  out.lower_bound = sol.lower_bound;
  out.proven_optimal = sol.proven_optimal;
  out.peaks.resize(m);
  std::vector<int> load(m, 0);
  for (std::size_t j = 0; j < m; ++j) {
    auto &pk = out.peaks[j];
    pk.peak = j;
    pk.ppm = peaks[j].ppm;
    pk.ppm_low = peaks[j].ppm_low;
    pk.ppm_high = peaks[j].ppm_high;
    pk.integral = integral[j];
  }
  auto nearest_signal = [&](std::size_t j) {
    std::optional<std::size_t> best;
    double bz = 0;
    for (std::size_t i = 0; i < n; ++i) {
      const double z = std::fabs(residual_to(peaks[j], signals[i].ppm) / sd[i]);
      if (!best || z < bz) {
        best = i;
        bz = z;
      }
    }
    return std::make_pair(best, bz);
  };
  out.signals.resize(n);
  for (std::size_t i = 0; i < n; ++i) {
    auto &sm = out.signals[i];
    const Signal &sig = signals[i];
    sm.signal = i;
    sm.predicted_ppm = sig.ppm;
    sm.uncertainty_ppm = sig.uncertainty_ppm;
    sm.exchangeable = sig.exchangeable;
    if (!sig.exchangeable) ++st.non_exchangeable_signals;
    const long d = sol.place[i];
    const std::string label = signal_label(pred.molecule, sig);
    if (d < 0) {
      sm.cost = prob.weight[i] * prob.missing[i];
      if (sig.exchangeable) continue;
      ++st.missing;
      // Nearest observed peak, for the description.
      std::optional<std::size_t> near;
      double nz = 0;
      for (std::size_t j = 0; j < m; ++j) {
        const double z = std::fabs(residual_to(peaks[j], sig.ppm) / sd[i]);
        if (!near || z < nz) {
          near = j;
          nz = z;
        }
      }
      std::string text = fmt::format("{} prediction {} at {} +- {} ppm has no observed peak", nuc_name, label,
                                     format_ppm(nuc, sig.ppm), format_ppm(nuc, sig.uncertainty_ppm));
      if (near) text += fmt::format("; nearest is {} ({:.1f} sigma)", format_peak(nuc, peaks[*near]), nz);
      st.findings.push_back({std::max(nz, 3.0), text});
      continue;
    }
    const auto j = static_cast<std::size_t>(d);
    sm.peak = j;
    sm.residual_ppm = residual_to(peaks[j], sig.ppm);
    sm.z = sm.residual_ppm / sd[i];
    sm.cost = prob.weight[i] * prob.unit_cost[i * m + j];
    sm.multiplicity_mismatch = mult_bad[i * m + j] != 0;
    sm.attached_h_mismatch = dept_bad[i * m + j] != 0;
    st.z.push_back(sm.z);
    load[j] += prob.weight[i];
    auto &pk = out.peaks[j];
    pk.signals.push_back(i);
    pk.atoms.insert(pk.atoms.end(), sig.atoms.begin(), sig.atoms.end());
    if (std::fabs(sm.z) > 2.0)
      st.findings.push_back({std::fabs(sm.z), fmt::format("{} {} observed, assigned {} at {} +- {} ppm ({:.1f} sigma)",
                                                          nuc_name, format_peak(nuc, peaks[j]), label,
                                                          format_ppm(nuc, sig.ppm), format_ppm(nuc, sig.uncertainty_ppm),
                                                          std::fabs(sm.z))});
    if (sm.multiplicity_mismatch) {
      ++st.multiplicity_mismatches;
      st.findings.push_back({2.5, fmt::format("1H {} observed as {}, assigned {} predicted as {}", format_peak(nuc, peaks[j]),
                                              peaks[j].multiplicity, label, sig.multiplicity)});
    }
    if (sm.attached_h_mismatch) {
      ++st.attached_h_mismatches;
      st.findings.push_back({5.0, fmt::format("13C {} observed as {}, assigned {} ({})", format_peak(nuc, peaks[j]),
                                              hydrogen_kind(*peaks[j].attached_h), label, hydrogen_kind(sig.attached_h))});
    }
  }
  for (std::size_t j = 0; j < m; ++j) {
    auto &pk = out.peaks[j];
    std::sort(pk.atoms.begin(), pk.atoms.end());
    pk.assigned_count = load[j];
    pk.cost = prob.occupancy[j][static_cast<std::size_t>(load[j])];
    if (integral[j]) ++st.integrated_peaks;
    if (peaks[j].attached_h) ++st.dept_peaks;
    if (!pk.signals.empty()) {
      pk.role = PeakRole::Assigned;
    } else if (solvent_like[j]) {
      pk.role = PeakRole::Solvent;
    } else {
      pk.role = PeakRole::Unexplained;
    }
    if (pk.role == PeakRole::Solvent) {
      ++st.solvent;
      continue;
    }
    ++st.candidate_peaks;
    if (integral[j] && integral_off(*integral[j], load[j])) {
      ++st.integral_mismatches;
      if (load[j] > 0) {
        std::string labels;
        for (std::size_t i : pk.signals) labels += (labels.empty() ? "" : ", ") + signal_label(pred.molecule, signals[i]);
        st.findings.push_back({2.0 + std::fabs(load[j] - *integral[j]) / integral_sd(*integral[j]),
                               fmt::format("1H {} observed with {:.3g}H, assigned {} proton{} ({})",
                                           format_peak(nuc, peaks[j]), *integral[j], load[j], load[j] == 1 ? "" : "s",
                                           labels)});
      }
    }
    if (pk.role == PeakRole::Unexplained) {
      ++st.unexplained;
      const auto [near, nz] = nearest_signal(j);
      std::string text = fmt::format("{} {} observed", nuc_name, format_peak(nuc, peaks[j]));
      if (integral[j]) text += fmt::format(" with {:.3g}H", *integral[j]);
      if (near) {
        text += fmt::format(", nearest prediction {} at {} +- {} ppm ({:.1f} sigma)",
                            signal_label(pred.molecule, signals[*near]), format_ppm(nuc, signals[*near].ppm),
                            format_ppm(nuc, signals[*near].uncertainty_ppm), nz);
      } else {
        text += fmt::format(", but the structure has no {} signal", nuc_name);
      }
      st.findings.push_back({std::max(nz, 3.0), text});
    }
  }
  return out;
}

}  // namespace

const char *verdict_name(Verdict verdict) noexcept {
  switch (verdict) {
    case Verdict::Consistent: return "consistent";
    case Verdict::Doubtful: return "doubtful";
    case Verdict::Inconsistent: return "inconsistent";
  }
  return "inconsistent";
}

const char *peak_role_name(PeakRole role) noexcept {
  switch (role) {
    case PeakRole::Assigned: return "assigned";
    case PeakRole::Solvent: return "solvent";
    case PeakRole::Unexplained: return "unexplained";
  }
  return "unexplained";
}

void validate(const MatchOptions &o) {
  auto need = [](bool ok, const char *name, const char *rule) {
    if (!ok) throw ArgumentError(fmt::format("MatchOptions::{} must be {}", name, rule));
  };
  auto nonneg = [&](double v, const char *name) { need(std::isfinite(v) && v >= 0, name, "a finite number >= 0"); };
  need(std::isfinite(o.robust_nu) && o.robust_nu > 0, "robust_nu", "a finite number > 0");
  need(std::isfinite(o.probability_temperature) && o.probability_temperature > 0, "probability_temperature",
       "a finite number > 0");
  nonneg(o.c13_measurement_ppm, "c13_measurement_ppm");
  nonneg(o.h1_measurement_ppm, "h1_measurement_ppm");
  nonneg(o.missing_cost, "missing_cost");
  nonneg(o.unexplained_cost, "unexplained_cost");
  nonneg(o.overlap_cost, "overlap_cost");
  nonneg(o.multiplicity_cost, "multiplicity_cost");
  nonneg(o.attached_h_cost, "attached_h_cost");
  nonneg(o.h1_solvent_window_ppm, "h1_solvent_window_ppm");
  nonneg(o.c13_solvent_window_ppm, "c13_solvent_window_ppm");
  nonneg(o.water_window_ppm, "water_window_ppm");
}

MatchResult match(const Prediction &prediction, const std::vector<MeasuredSpectrum> &measured, const Tables &tables,
                  const MatchOptions &options) {
  validate(options);
  check_spectra(measured);
  MatchResult r;
  std::vector<Finding> findings;
  std::vector<double> z;
  std::size_t non_exchangeable = 0, candidate_peaks = 0, integrated = 0, dept = 0;
  for (std::size_t s = 0; s < measured.size(); ++s) {
    SpectrumStats st;
    r.spectra.push_back(match_spectrum(prediction, measured[s], s, tables, options, r.warnings, st));
    r.score += r.spectra.back().cost;
    z.insert(z.end(), st.z.begin(), st.z.end());
    findings.insert(findings.end(), st.findings.begin(), st.findings.end());
    r.missing_signals += st.missing;
    r.unexplained_peaks += st.unexplained;
    r.solvent_peaks += st.solvent;
    r.integral_mismatches += st.integral_mismatches;
    r.multiplicity_mismatches += st.multiplicity_mismatches;
    r.attached_h_mismatches += st.attached_h_mismatches;
    non_exchangeable += st.non_exchangeable_signals;
    candidate_peaks += st.candidate_peaks;
    integrated += st.integrated_peaks;
    dept += st.dept_peaks;
  }
  r.placed_signals = z.size();
  double chi2 = 0;
  for (double v : z) {
    chi2 += v * v;
    r.max_abs_z = std::max(r.max_abs_z, std::fabs(v));
  }
  r.chi2_p_value = z.empty() ? 1.0 : gamma_q(0.5 * static_cast<double>(z.size()), 0.5 * chi2);

  // Verdict thresholds: docs/matching.md, "Verdict".
  auto frac = [](std::size_t a, std::size_t b) { return b == 0 ? 0.0 : static_cast<double>(a) / static_cast<double>(b); };
  std::vector<std::string> hard, soft;
  if (r.max_abs_z > 6.0) hard.push_back(fmt::format("a signal lies {:.1f} sigma from its peak (limit 6)", r.max_abs_z));
  else if (r.max_abs_z > 3.5) soft.push_back(fmt::format("a signal lies {:.1f} sigma from its peak (limit 3.5)", r.max_abs_z));
  if (r.chi2_p_value < 1e-6)
    hard.push_back(fmt::format("the residuals together are too large (chi-square p = {:.2g}, limit 1e-6)", r.chi2_p_value));
  else if (r.chi2_p_value < 1e-3)
    soft.push_back(fmt::format("the residuals together are large (chi-square p = {:.2g}, limit 0.001)", r.chi2_p_value));
  if (r.unexplained_peaks > 0) {
    auto &to = (frac(r.unexplained_peaks, candidate_peaks) > 0.25 ? hard : soft);
    to.push_back(fmt::format("{} of {} observed peaks unexplained", r.unexplained_peaks, candidate_peaks));
  }
  if (r.missing_signals > 0) {
    auto &to = (frac(r.missing_signals, non_exchangeable) > 0.25 ? hard : soft);
    to.push_back(fmt::format("{} of {} predicted signals without a peak", r.missing_signals, non_exchangeable));
  }
  if (r.integral_mismatches > 0) {
    auto &to = (frac(r.integral_mismatches, integrated) > 0.25 ? hard : soft);
    to.push_back(fmt::format("{} of {} integrals disagree", r.integral_mismatches, integrated));
  }
  if (r.attached_h_mismatches > 0) {
    auto &to = (frac(r.attached_h_mismatches, dept) > 0.25 ? hard : soft);
    to.push_back(fmt::format("{} of {} 13C peaks with attached protons given disagree", r.attached_h_mismatches, dept));
  }
  if (r.multiplicity_mismatches > 0)
    soft.push_back(fmt::format("{} multiplicities disagree", r.multiplicity_mismatches));
  r.verdict = !hard.empty() ? Verdict::Inconsistent : !soft.empty() ? Verdict::Doubtful : Verdict::Consistent;
  r.reasons = hard;
  r.reasons.insert(r.reasons.end(), soft.begin(), soft.end());

  std::stable_sort(findings.begin(), findings.end(),
                   [](const Finding &a, const Finding &b) { return a.badness > b.badness; });
  for (std::size_t k = 0; k < findings.size() && k < options.worst_count; ++k) r.worst.push_back(findings[k].text);
  return r;
}

Ranking rank_candidates(const std::vector<Prediction> &candidates, const std::vector<MeasuredSpectrum> &measured,
                        const Tables &tables, const MatchOptions &options) {
  validate(options);
  check_spectra(measured);
  if (candidates.empty()) throw ArgumentError("rank_candidates: no candidate structure was given");
  Ranking out;
  out.results.reserve(candidates.size());
  for (const auto &c : candidates) out.results.push_back(match(c, measured, tables, options));
  out.order.resize(candidates.size());
  std::iota(out.order.begin(), out.order.end(), std::size_t{0});
  std::stable_sort(out.order.begin(), out.order.end(),
                   [&](std::size_t a, std::size_t b) { return out.results[a].score < out.results[b].score; });
  const double best = out.results[out.order[0]].score;
  double sum = 0;
  out.probabilities.resize(candidates.size());
  for (std::size_t k = 0; k < candidates.size(); ++k) {
    out.probabilities[k] = std::exp(-(out.results[k].score - best) / options.probability_temperature);
    sum += out.probabilities[k];
  }
  for (auto &p : out.probabilities) p /= sum;
  out.margin = candidates.size() > 1 ? out.results[out.order[1]].score - best : 0.0;
  return out;
}

}  // namespace nmrpred
