// JSON form of match results (match.hpp documents the keys).
#include <nmrpred/match.hpp>

#include <nlohmann/json.hpp>

namespace nmrpred {

namespace {

using nlohmann::json;

json spectrum_json(const SpectrumMatch &s) {
  json peaks = json::array();
  for (const auto &p : s.peaks) {
    peaks.push_back({{"peak", p.peak},
                     {"shift", p.ppm},
                     {"range", {p.ppm_low, p.ppm_high}},
                     {"integral", p.integral ? json(*p.integral) : json(nullptr)},
                     {"role", peak_role_name(p.role)},
                     {"signals", p.signals},
                     {"atoms", p.atoms},
                     {"assigned", p.assigned_count},
                     {"cost", p.cost}});
  }
  json signals = json::array();
  for (const auto &m : s.signals) {
    signals.push_back({{"signal", m.signal},
                       {"shift", m.predicted_ppm},
                       {"shift_uncertainty", m.uncertainty_ppm},
                       {"peak", m.peak ? json(*m.peak) : json(nullptr)},
                       {"residual", m.residual_ppm},
                       {"z", m.z},
                       {"cost", m.cost},
                       {"exchangeable", m.exchangeable}});
  }
  return {{"nucleus", s.nucleus == Nucleus::H1 ? "1H" : "13C"},
          {"spectrum", s.spectrum},
          {"solvent", s.solvent},
          {"cost", s.cost},
          {"lower_bound", s.lower_bound},
          {"proven_optimal", s.proven_optimal},
          {"assignment", std::move(peaks)},
          {"signals", std::move(signals)}};
}

json result_json(const MatchResult &r) {
  json spectra = json::array();
  for (const auto &s : r.spectra) spectra.push_back(spectrum_json(s));
  return {{"score", r.score},
          {"verdict", verdict_name(r.verdict)},
          {"reasons", r.reasons},
          {"worst", r.worst},
          {"warnings", r.warnings},
          {"summary",
           {{"max_abs_z", r.max_abs_z},
            {"chi2_p_value", r.chi2_p_value},
            {"placed_signals", r.placed_signals},
            {"missing_signals", r.missing_signals},
            {"unexplained_peaks", r.unexplained_peaks},
            {"solvent_peaks", r.solvent_peaks},
            {"integral_mismatches", r.integral_mismatches},
            {"multiplicity_mismatches", r.multiplicity_mismatches},
            {"attached_h_mismatches", r.attached_h_mismatches}}},
          {"spectra", std::move(spectra)}};
}

std::string dump(const json &j, const JsonOptions &options) {
  // Text from measured input (peak text in messages) may hold bad UTF-8.
  return j.dump(options.indent < 0 ? -1 : options.indent, ' ', false, json::error_handler_t::replace);
}

}  // namespace

std::string to_json(const MatchResult &result, const JsonOptions &options) { return dump(result_json(result), options); }

std::string to_json(const Ranking &ranking, const JsonOptions &options) {
  json order = json::array();
  for (std::size_t k : ranking.order) {
    const auto &r = ranking.results[k];
    order.push_back({{"candidate", k},
                     {"score", r.score},
                     {"verdict", verdict_name(r.verdict)},
                     {"probability", k < ranking.probabilities.size() ? ranking.probabilities[k] : 0.0}});
  }
  json candidates = json::array();
  for (const auto &r : ranking.results) candidates.push_back(result_json(r));
  return dump({{"ranking", std::move(order)}, {"margin", ranking.margin}, {"candidates", std::move(candidates)}},
              options);
}

}  // namespace nmrpred
