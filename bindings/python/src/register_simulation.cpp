// nmrpred._core: simulated spectra (spin systems as JSON, spectra of predicted
// records), their sampling and their JCAMP-DX / SVG forms.
#include <cmath>
#include <optional>
#include <string>
#include <utility>
#include <vector>

#include <pybind11/numpy.h>
#include <pybind11/pybind11.h>
#include <pybind11/stl.h>

#include <nmrpred/error.hpp>
#include <nmrpred/predict.hpp>
#include <nmrpred/spectrum.hpp>
#include <nmrpred/spin.hpp>

#include "../../../capi/src/sampling_defaults.hpp"
#include "register.hpp"

namespace py = pybind11;

namespace nmrpred::python {

namespace {

using Float64Array = py::array_t<double>;

/// A simulation with the sampling settings it was made with.
struct PySpectrum {
  Simulation sim;
  SamplingOptions sampling;
  bool file_nucleus = true;
  std::string solvent;
};

Float64Array array_of(const std::vector<double> &v) {
  Float64Array out(static_cast<py::ssize_t>(v.size()));
  auto w = out.mutable_unchecked<1>();
  for (std::size_t i = 0; i < v.size(); ++i) w(static_cast<py::ssize_t>(i)) = v[i];
  return out;
}

py::dict lines_of(const std::vector<SpectralLine> &lines) {
  std::vector<double> ppm, hz, intensity;
  for (const auto &l : lines) {
    ppm.push_back(l.ppm);
    hz.push_back(l.hz);
    intensity.push_back(l.intensity);
  }
  py::dict d;
  d["ppm"] = array_of(ppm);
  d["hz"] = array_of(hz);
  d["intensity"] = array_of(intensity);
  return d;
}

LineShape shape_of(const std::string &name) {
  if (name == "lorentzian") return LineShape::Lorentzian;
  if (name == "gaussian") return LineShape::Gaussian;
  throw ArgumentError("shape must be \"lorentzian\" or \"gaussian\", got \"" + name + "\"");
}

/// The spectrum's sampling settings with the caller's overrides; the point
/// count follows a changed axis or width unless given.
SamplingOptions sampling_with(const PySpectrum &s, std::optional<std::size_t> points, std::optional<double> ppm_low,
                              std::optional<double> ppm_high, const std::string &shape,
                              std::optional<double> line_width_hz) {
  SamplingOptions o = s.sampling;
  if (ppm_low) o.ppm_low = *ppm_low;
  if (ppm_high) o.ppm_high = *ppm_high;
  if (line_width_hz) {
    o.line_width_hz = *line_width_hz;
    o.broad_line_width_hz = std::max(o.broad_line_width_hz, *line_width_hz);
  }
  o.shape = shape_of(shape);
  if (!(o.ppm_low < o.ppm_high))
    throw ArgumentError("ppm_range must run from low to high, got (" + std::to_string(o.ppm_low) + ", " +
                        std::to_string(o.ppm_high) + ")");
  if (points)
    o.points = *points;
  else if (ppm_low || ppm_high || line_width_hz)
    o.points = capi::default_points(o.ppm_low, o.ppm_high, o.field_mhz, o.line_width_hz);
  return o;
}

SampledSpectrum sampled(const PySpectrum &s, const SamplingOptions &o) {
  py::gil_scoped_release release;
  return sample_signals(s.sim.multiplets, o);
}

void require_file_nucleus(const PySpectrum &s, const char *what) {
  if (!s.file_nucleus)
    throw UnsupportedError(std::string(what) + " is written for 1H and 13C spectra only, not " +
                           spin_nucleus_name(s.sim.observed));
}

PySpectrum make(Simulation sim, double line_width_hz, std::string solvent) {
  PySpectrum s;
  s.sim = std::move(sim);
  s.sampling = capi::default_sampling(s.sim, line_width_hz, s.file_nucleus);
  s.solvent = std::move(solvent);
  return s;
}

}  // namespace

void register_simulation(py::module_ &m) {
  py::class_<PySpectrum>(m, "Spectrum", "A simulated spectrum (private; see nmrpred.Spectrum).")
      .def_property_readonly("observe", [](const PySpectrum &s) { return std::string(spin_nucleus_name(s.sim.observed)); })
      .def_property_readonly("field_mhz", [](const PySpectrum &s) { return s.sim.field_mhz; })
      .def_property_readonly("observe_mhz", [](const PySpectrum &s) { return s.sim.observed_mhz; })
      .def_property_readonly("warnings", [](const PySpectrum &s) { return s.sim.warnings; })
      .def_property_readonly("solvent", [](const PySpectrum &s) { return s.solvent; })
      .def("lines", [](const PySpectrum &s) { return lines_of(s.sim.lines); })
      .def("multiplets",
           [](const PySpectrum &s) {
             py::list out;
             for (const auto &mu : s.sim.multiplets) {
               py::dict d;
               d["ppm"] = mu.ppm;
               d["ppm_low"] = mu.ppm_low;
               d["ppm_high"] = mu.ppm_high;
               d["label"] = mu.label;
               d["j_hz"] = mu.j_hz;
               d["integral"] = mu.integral;
               d["atoms"] = std::vector<std::int64_t>(mu.atoms.begin(), mu.atoms.end());
               d["lines"] = lines_of(mu.lines);
               out.append(std::move(d));
             }
             return out;
           })
      .def("default_sampling",
           [](const PySpectrum &s) {
             py::dict d;
             d["ppm_low"] = s.sampling.ppm_low;
             d["ppm_high"] = s.sampling.ppm_high;
             d["points"] = s.sampling.points;
             d["line_width_hz"] = s.sampling.line_width_hz;
             return d;
           })
      .def(
          "sample",
          [](const PySpectrum &s, std::optional<std::size_t> points, std::optional<double> ppm_low,
             std::optional<double> ppm_high, const std::string &shape, std::optional<double> line_width_hz) {
            const SampledSpectrum x = sampled(s, sampling_with(s, points, ppm_low, ppm_high, shape, line_width_hz));
            return py::make_tuple(array_of(x.ppm), array_of(x.intensity));
          },
          py::arg("points"), py::arg("ppm_low"), py::arg("ppm_high"), py::arg("shape"), py::arg("line_width_hz"))
      .def(
          "to_jcamp",
          [](const PySpectrum &s, std::optional<std::size_t> points, std::optional<double> ppm_low,
             std::optional<double> ppm_high, const std::string &shape, std::optional<double> line_width_hz,
             const std::string &title) {
            require_file_nucleus(s, "JCAMP-DX");
            const SampledSpectrum x = sampled(s, sampling_with(s, points, ppm_low, ppm_high, shape, line_width_hz));
            JcampOptions o;
            if (!title.empty()) o.title = title;
            o.solvent_name = s.solvent;
            return format_jcamp_dx(x, o);
          },
          py::arg("points"), py::arg("ppm_low"), py::arg("ppm_high"), py::arg("shape"), py::arg("line_width_hz"),
          py::arg("title"))
      .def(
          "to_svg",
          [](const PySpectrum &s, std::optional<std::size_t> points, std::optional<double> ppm_low,
             std::optional<double> ppm_high, const std::string &shape, std::optional<double> line_width_hz,
             const std::string &title) {
            require_file_nucleus(s, "the SVG drawing");
            const SampledSpectrum x = sampled(s, sampling_with(s, points, ppm_low, ppm_high, shape, line_width_hz));
            PlotOptions o;
            o.title = title;
            return format_svg(x, s.sim.multiplets, {}, o);
          },
          py::arg("points"), py::arg("ppm_low"), py::arg("ppm_high"), py::arg("shape"), py::arg("line_width_hz"),
          py::arg("title"));

  m.def(
      "simulate_json",
      [](const std::string &text, double field_mhz, double line_width_hz) {
        SimulationOptions defaults;
        defaults.field_mhz = field_mhz;
        defaults.line_width_hz = line_width_hz;
        py::gil_scoped_release release;
        const SpinSystemInput in = parse_spin_system_json(text, defaults);
        return make(simulate(in.system, in.observe, in.options), in.options.line_width_hz, "");
      },
      py::arg("text"), py::arg("field_mhz"), py::arg("line_width_hz"),
      "Simulates a spin system given as JSON (the `nmrpred simulate` input); the GIL is released.");
  m.def(
      "simulate_record",
      [](const RecordPrediction &r, const std::string &nucleus, double field_mhz, double line_width_hz) {
        if (!r.prediction) throw InputError("record " + std::to_string(r.record) + " failed: " + r.error);
        Nucleus n;
        if (nucleus == "1H")
          n = Nucleus::H1;
        else if (nucleus == "13C")
          n = Nucleus::C13;
        else
          throw ArgumentError("nucleus must be \"1H\" or \"13C\", got \"" + nucleus + "\"");
        const Prediction &p = *r.prediction;
        if (!p.options.predict_shifts || (n == Nucleus::H1 && !p.options.predict_h1))
          throw ArgumentError("the prediction has no " + nucleus + " shifts (predict_shifts or predict_h1 was off)");
        SimulationOptions o;
        o.field_mhz = field_mhz;
        o.line_width_hz = line_width_hz;
        py::gil_scoped_release release;
        Simulation sim;
        if (p.signals(n).empty()) {
          sim.observed = n == Nucleus::H1 ? SpinNucleus::H1 : SpinNucleus::C13;
          validate(o);
          sim.field_mhz = field_mhz;
          sim.observed_mhz = field_mhz * frequency_ratio(sim.observed);
          sim.warnings.push_back("no observed " + nucleus + " signal");
        } else {
          sim = simulate(p, p.couplings, n, o);
        }
        return make(std::move(sim), line_width_hz, p.solvent.name);
      },
      py::arg("record"), py::arg("nucleus"), py::arg("field_mhz"), py::arg("line_width_hz"),
      "Simulates the 1H or 13C spectrum of a predicted record; the GIL is released.");
}

}  // namespace nmrpred::python
