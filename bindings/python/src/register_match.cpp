// nmrpred._core: measured peak lists (read, normalise) and ranking candidate
// structures against them.
#include <optional>
#include <string>
#include <utility>
#include <vector>

#include <nlohmann/json.hpp>
#include <pybind11/pybind11.h>
#include <pybind11/stl.h>

#include <nmrpred/error.hpp>
#include <nmrpred/match.hpp>
#include <nmrpred/measured.hpp>
#include <nmrpred/predict.hpp>

#include "register.hpp"

namespace py = pybind11;

namespace nmrpred::python {

namespace {

using json = nlohmann::ordered_json;

MeasuredFormat format_of(const std::string &name) {
  if (name == "auto") return MeasuredFormat::Auto;
  if (name == "text") return MeasuredFormat::Text;
  if (name == "csv") return MeasuredFormat::Csv;
  if (name == "json") return MeasuredFormat::Json;
  throw ArgumentError("format must be \"auto\", \"text\", \"csv\" or \"json\", got \"" + name + "\"");
}

std::optional<Nucleus> nucleus_of(const std::optional<std::string> &name) {
  if (!name) return std::nullopt;
  if (*name == "1H") return Nucleus::H1;
  if (*name == "13C") return Nucleus::C13;
  throw ArgumentError("default_nucleus must be \"1H\", \"13C\" or None, got \"" + *name + "\"");
}

/// A peak as a dict whose keys are those of the JSON input format
/// (docs/measured.md), plus "text" and "position".
py::dict peak_dict(const MeasuredPeak &p) {
  py::dict d;
  d["shift"] = p.ppm;
  d["range"] = p.ppm_low != p.ppm_high ? py::object(py::make_tuple(p.ppm_low, p.ppm_high)) : py::none();
  d["integral"] = p.integral ? py::object(py::float_(*p.integral)) : py::none();
  d["multiplicity"] = p.multiplicity.empty() ? py::object(py::none()) : py::object(py::str(p.multiplicity));
  d["j_hz"] = p.j_hz;
  d["j_partner"] = p.j_partner;
  d["attached_h"] = p.attached_h ? py::object(py::int_(*p.attached_h)) : py::none();
  d["assignment"] = p.assignment.empty() ? py::object(py::none()) : py::object(py::str(p.assignment));
  d["text"] = p.text;
  d["position"] = p.position;
  return d;
}

std::vector<MeasuredSpectrum> parse_texts(const std::vector<std::string> &texts) {
  std::vector<MeasuredSpectrum> out;
  for (std::size_t i = 0; i < texts.size(); ++i) {
    try {
      for (auto &s : parse_measured(texts[i])) out.push_back(std::move(s));
    } catch (const InputError &e) {
      throw InputError("measured text " + std::to_string(i) + ": " + e.what());
    }
  }
  return out;
}

}  // namespace

std::string match_json(const std::vector<RecordPrediction> &records, const std::vector<std::string> &measured_texts,
                       const Tables &tables) {
  if (measured_texts.empty()) throw ArgumentError("no measured peak list given");
  const auto measured = parse_texts(measured_texts);
  std::vector<Prediction> predictions;
  std::vector<std::size_t> candidate_of;
  for (std::size_t k = 0; k < records.size(); ++k)
    if (records[k].prediction) {
      predictions.push_back(*records[k].prediction);
      candidate_of.push_back(k);
    }
  Ranking ranking;
  if (!predictions.empty()) ranking = rank_candidates(predictions, measured, tables);
  std::vector<std::size_t> ranked_of(records.size(), static_cast<std::size_t>(-1));
  for (std::size_t r = 0; r < candidate_of.size(); ++r) ranked_of[candidate_of[r]] = r;

  // The layout of nmr_match_to_json() in the C interface.
  auto order = json::array();
  for (const std::size_t r : ranking.order)
    order.push_back({{"candidate", candidate_of[r]},
                     {"title", records[candidate_of[r]].title},
                     {"score", ranking.results[r].score},
                     {"verdict", verdict_name(ranking.results[r].verdict)},
                     {"probability", ranking.probabilities[r]}});
  // Matches are spliced in as text after "candidate" and "title", keeping the
  // library's own serialisation.
  std::string text = "{\"ranking\":" + order.dump(-1, ' ', false, json::error_handler_t::replace) +
                     ",\"margin\":" + (ranking.order.size() > 1 ? json(ranking.margin) : json(nullptr)).dump() +
                     ",\"candidates\":[";
  for (std::size_t k = 0; k < records.size(); ++k) {
    if (k) text += ',';
    text += "{\"candidate\":" + std::to_string(k) +
            ",\"title\":" + json(records[k].title).dump(-1, ' ', false, json::error_handler_t::replace) + ',';
    if (records[k].prediction) {
      const std::string body = to_json(ranking.results[ranked_of[k]]);
      text.append(body, 1, std::string::npos);  // past its '{'
    } else {
      json error = {{"code", static_cast<int>(records[k].status)},
                    {"name", status_constant_name(records[k].status)},
                    {"message", records[k].error}};
      text += "\"error\":" + error.dump(-1, ' ', false, json::error_handler_t::replace) + '}';
    }
  }
  text += "]}";
  return text;
}

void register_match(py::module_ &m) {
  m.def(
      "parse_measured",
      [](const std::string &text, const std::string &format, const std::optional<std::string> &default_nucleus) {
        const MeasuredFormat f = format_of(format);
        const std::optional<Nucleus> n = nucleus_of(default_nucleus);
        std::vector<MeasuredSpectrum> spectra;
        {
          py::gil_scoped_release release;
          spectra = parse_measured(text, f, n);
        }
        py::list out;
        for (const auto &s : spectra) {
          py::dict d;
          d["nucleus"] = s.nucleus == Nucleus::H1 ? "1H" : "13C";
          d["mhz"] = s.mhz ? py::object(py::float_(*s.mhz)) : py::none();
          d["solvent"] = s.solvent.empty() ? py::object(py::none()) : py::object(py::str(s.solvent));
          py::list peaks;
          for (const auto &p : s.peaks) peaks.append(peak_dict(p));
          d["peaks"] = std::move(peaks);
          out.append(std::move(d));
        }
        return out;
      },
      py::arg("text"), py::arg("format"), py::arg("default_nucleus"));
  m.def(
      "format_measured",
      [](const std::string &text) {
        py::gil_scoped_release release;
        std::string out;
        for (const auto &s : parse_measured(text)) {
          if (!out.empty()) out += '\n';
          out += format_measured(s);
        }
        return out;
      },
      py::arg("text"));
  m.def(
      "measured_solvents",
      [](const std::vector<std::string> &texts) {
        std::vector<std::string> out;
        for (const auto &s : parse_texts(texts))
          if (!s.solvent.empty()) out.push_back(s.solvent);
        return out;
      },
      py::arg("texts"));
}

}  // namespace nmrpred::python
