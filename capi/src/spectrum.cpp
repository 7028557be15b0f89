// Simulated spectra: spin systems given as JSON, spectra of predicted
// records, and the nmr_spectrum accessors (lines, multiplets, sampling,
// JCAMP-DX, SVG, JSON).
#include "internal.hpp"
#include "sampling_defaults.hpp"

#include <algorithm>
#include <cmath>
#include <cstring>
#include <limits>
#include <memory>
#include <new>
#include <string_view>

#include <fmt/format.h>

using nmrpred::capi::fail;
using nmrpred::capi::guarded;

namespace {

constexpr std::size_t kMinPoints = 16;
constexpr std::size_t kMaxPoints = 4194304;

/// The spectrum's sampling settings: the defaults of its nucleus, overridden
/// by the context's NMR_OPT_PPM_LOW/HIGH, NMR_OPT_POINTS and NMR_OPT_LINE_SHAPE.
nmrpred::SamplingOptions sampling_for(const nmrpred::Simulation &sim, const nmrpred::capi::SpectrumSettings &set,
                                      double line_width_hz, bool &file_nucleus) {
  nmrpred::SamplingOptions o = nmrpred::capi::default_sampling(sim, line_width_hz, file_nucleus);
  const bool axis_changed = !std::isnan(set.ppm_low) || !std::isnan(set.ppm_high);
  if (!std::isnan(set.ppm_low)) o.ppm_low = set.ppm_low;
  if (!std::isnan(set.ppm_high)) o.ppm_high = set.ppm_high;
  if (!(o.ppm_low < o.ppm_high))
    throw nmrpred::ArgumentError(fmt::format("the spectrum's axis runs from {} to {} ppm: NMR_OPT_PPM_LOW must be "
                                             "below NMR_OPT_PPM_HIGH",
                                             o.ppm_low, o.ppm_high));
  if (set.points > 0)
    o.points = static_cast<std::size_t>(set.points);
  else if (axis_changed)
    o.points = nmrpred::capi::default_points(o.ppm_low, o.ppm_high, o.field_mhz, o.line_width_hz);
  o.shape = set.shape;
  return o;
}

/// Samples every multiplet (broad ones with the broad width). A spectrum
/// without multiplets still samples, as a flat line.
nmrpred::SampledSpectrum sampled(const nmr_spectrum &spec, std::size_t points) {
  nmrpred::SamplingOptions o = spec.sampling;
  o.points = points;
  return nmrpred::sample_signals(spec.simulation.multiplets, o);
}

int copy_text(const std::string &text, char **out) noexcept {
  char *s = new (std::nothrow) char[text.size() + 1];
  if (!s) return NMR_ERR_NOMEM;
  std::memcpy(s, text.c_str(), text.size() + 1);
  *out = s;
  return NMR_OK;
}

/// Runs an accessor body that takes no context: exceptions become codes only.
template <class Body>
int quiet(Body &&body) noexcept {
  try {
    return body();
  } catch (const nmrpred::Error &e) {
    return static_cast<int>(e.status());
  } catch (const std::bad_alloc &) {
    return NMR_ERR_NOMEM;
  } catch (...) {
    return NMR_ERR_INTERNAL;
  }
}

const nmrpred::Multiplet *multiplet_at(const nmr_spectrum *spec, size_t i) noexcept {
  if (!spec || i >= spec->simulation.multiplets.size()) return nullptr;
  return &spec->simulation.multiplets[i];
}

}  // namespace

extern "C" {

int nmr_simulate_json(nmr_spectrum **out, nmr_context *ctx, const char *spin_system_json) {
  if (out) *out = nullptr;
  if (!ctx) return NMR_ERR_ARGUMENT;
  return guarded(ctx, [&] {
    if (!out) return fail(ctx, NMR_ERR_ARGUMENT, "out is NULL");
    if (!spin_system_json) return fail(ctx, NMR_ERR_ARGUMENT, "spin_system_json is NULL");
    nmrpred::SimulationOptions defaults;
    defaults.field_mhz = ctx->options.field_mhz;
    defaults.line_width_hz = ctx->options.line_width_hz;
    const nmrpred::SpinSystemInput in = nmrpred::parse_spin_system_json(spin_system_json, defaults);
    auto spec = std::make_unique<nmr_spectrum>();
    spec->simulation = nmrpred::simulate(in.system, in.observe, in.options);
    spec->sampling = sampling_for(spec->simulation, ctx->spectrum, in.options.line_width_hz, spec->file_nucleus);
    *out = spec.release();
    return static_cast<int>(NMR_OK);
  });
}

int nmr_result_simulate(nmr_spectrum **out, nmr_context *ctx, const nmr_result *res, size_t record, int nucleus) {
  if (out) *out = nullptr;
  if (!ctx) return NMR_ERR_ARGUMENT;
  return guarded(ctx, [&] {
    if (!out) return fail(ctx, NMR_ERR_ARGUMENT, "out is NULL");
    if (!res) return fail(ctx, NMR_ERR_ARGUMENT, "res is NULL");
    if (record >= res->records.size())
      return fail(ctx, NMR_ERR_ARGUMENT,
                  fmt::format("record {} is out of range (the result has {})", record, res->records.size()));
    if (nucleus != NMR_NUCLEUS_1H && nucleus != NMR_NUCLEUS_13C)
      return fail(ctx, NMR_ERR_ARGUMENT,
                  fmt::format("nucleus {} is not NMR_NUCLEUS_1H (1) or NMR_NUCLEUS_13C (13)", nucleus));
    const nmrpred::RecordPrediction &r = res->records[record];
    if (!r.prediction)
      return fail(ctx, static_cast<int>(r.status), fmt::format("record {} failed: {}", record, r.error));
    const nmrpred::Prediction &p = *r.prediction;
    const auto n = static_cast<nmrpred::Nucleus>(nucleus);
    if (!p.options.predict_shifts || (n == nmrpred::Nucleus::H1 && !p.options.predict_h1))
      return fail(ctx, NMR_ERR_ARGUMENT,
                  fmt::format("record {} has no {} shifts (NMR_OPT_PREDICT_SHIFTS or NMR_OPT_PREDICT_H1 was off)",
                              record, n == nmrpred::Nucleus::H1 ? "1H" : "13C"));
    nmrpred::SimulationOptions o;
    o.field_mhz = ctx->options.field_mhz;
    o.line_width_hz = ctx->options.line_width_hz;
    auto spec = std::make_unique<nmr_spectrum>();
    // A record without observed nuclei of this kind (no hydrogen, or all
    // exchanged) has an empty spectrum, as a measurement would.
    if (p.signals(n).empty()) {
      spec->simulation.observed = n == nmrpred::Nucleus::H1 ? nmrpred::SpinNucleus::H1 : nmrpred::SpinNucleus::C13;
      spec->simulation.field_mhz = o.field_mhz;
      spec->simulation.observed_mhz = o.field_mhz * nmrpred::frequency_ratio(spec->simulation.observed);
      spec->simulation.warnings.push_back(
          fmt::format("record {} has no observed {} signal", record, n == nmrpred::Nucleus::H1 ? "1H" : "13C"));
    } else {
      spec->simulation = nmrpred::simulate(p, p.couplings, n, o);
    }
    spec->sampling = sampling_for(spec->simulation, ctx->spectrum, o.line_width_hz, spec->file_nucleus);
    spec->solvent_name = p.solvent.name;
    *out = spec.release();
    return static_cast<int>(NMR_OK);
  });
}

void nmr_spectrum_free(nmr_spectrum *spec) { delete spec; }

int nmr_spectrum_nucleus(const nmr_spectrum *spec) {
  return spec ? static_cast<int>(spec->simulation.observed) : 0;
}

double nmr_spectrum_observe_mhz(const nmr_spectrum *spec) {
  return spec ? spec->simulation.observed_mhz : std::numeric_limits<double>::quiet_NaN();
}

size_t nmr_spectrum_line_count(const nmr_spectrum *spec) { return spec ? spec->simulation.lines.size() : 0; }

int nmr_spectrum_lines(const nmr_spectrum *spec, double *ppm_out, double *hz_out, double *intensity_out,
                       size_t capacity) {
  if (!spec || capacity < spec->simulation.lines.size()) return NMR_ERR_ARGUMENT;
  const auto &lines = spec->simulation.lines;
  for (std::size_t i = 0; i < lines.size(); ++i) {
    if (ppm_out) ppm_out[i] = lines[i].ppm;
    if (hz_out) hz_out[i] = lines[i].hz;
    if (intensity_out) intensity_out[i] = lines[i].intensity;
  }
  return NMR_OK;
}

size_t nmr_spectrum_multiplet_count(const nmr_spectrum *spec) {
  return spec ? spec->simulation.multiplets.size() : 0;
}

int nmr_spectrum_multiplet_label(const nmr_spectrum *spec, size_t multiplet, const char **label_out) {
  const auto *m = multiplet_at(spec, multiplet);
  if (!m || !label_out) return NMR_ERR_ARGUMENT;
  *label_out = m->label.c_str();
  return NMR_OK;
}

int nmr_spectrum_multiplet_ppm(const nmr_spectrum *spec, size_t multiplet, double *ppm_out, double *ppm_low_out,
                               double *ppm_high_out) {
  const auto *m = multiplet_at(spec, multiplet);
  if (!m) return NMR_ERR_ARGUMENT;
  if (ppm_out) *ppm_out = m->ppm;
  if (ppm_low_out) *ppm_low_out = m->ppm_low;
  if (ppm_high_out) *ppm_high_out = m->ppm_high;
  return NMR_OK;
}

int nmr_spectrum_multiplet_integral(const nmr_spectrum *spec, size_t multiplet, double *integral_out) {
  const auto *m = multiplet_at(spec, multiplet);
  if (!m || !integral_out) return NMR_ERR_ARGUMENT;
  *integral_out = m->integral;
  return NMR_OK;
}

size_t nmr_spectrum_multiplet_j_count(const nmr_spectrum *spec, size_t multiplet) {
  const auto *m = multiplet_at(spec, multiplet);
  return m ? m->j_hz.size() : 0;
}

int nmr_spectrum_multiplet_j(const nmr_spectrum *spec, size_t multiplet, size_t i, double *j_hz_out) {
  const auto *m = multiplet_at(spec, multiplet);
  if (!m || !j_hz_out || i >= m->j_hz.size()) return NMR_ERR_ARGUMENT;
  *j_hz_out = m->j_hz[i];
  return NMR_OK;
}

size_t nmr_spectrum_multiplet_atom_count(const nmr_spectrum *spec, size_t multiplet) {
  const auto *m = multiplet_at(spec, multiplet);
  return m ? m->atoms.size() : 0;
}

int nmr_spectrum_multiplet_atom(const nmr_spectrum *spec, size_t multiplet, size_t i, size_t *atom_out) {
  const auto *m = multiplet_at(spec, multiplet);
  if (!m || !atom_out || i >= m->atoms.size()) return NMR_ERR_ARGUMENT;
  *atom_out = m->atoms[i];
  return NMR_OK;
}

size_t nmr_spectrum_warning_count(const nmr_spectrum *spec) { return spec ? spec->simulation.warnings.size() : 0; }

const char *nmr_spectrum_warning(const nmr_spectrum *spec, size_t i) {
  if (!spec || i >= spec->simulation.warnings.size()) return nullptr;
  return spec->simulation.warnings[i].c_str();
}

size_t nmr_spectrum_default_points(const nmr_spectrum *spec) { return spec ? spec->sampling.points : 0; }

int nmr_spectrum_sample(const nmr_spectrum *spec, double *ppm_out, double *intensity_out, size_t points) {
  if (!spec || points < kMinPoints || points > kMaxPoints) return NMR_ERR_ARGUMENT;
  return quiet([&] {
    const nmrpred::SampledSpectrum s = sampled(*spec, points);
    if (s.ppm.size() != points || s.intensity.size() != points) return static_cast<int>(NMR_ERR_INTERNAL);
    if (ppm_out) std::copy(s.ppm.begin(), s.ppm.end(), ppm_out);
    if (intensity_out) std::copy(s.intensity.begin(), s.intensity.end(), intensity_out);
    return static_cast<int>(NMR_OK);
  });
}

int nmr_spectrum_to_jcamp(const nmr_spectrum *spec, char **text_out) {
  if (!spec || !text_out) return NMR_ERR_ARGUMENT;
  if (!spec->file_nucleus) return NMR_ERR_UNSUPPORTED;
  return quiet([&] {
    nmrpred::JcampOptions o;
    o.solvent_name = spec->solvent_name;
    return copy_text(nmrpred::format_jcamp_dx(sampled(*spec, spec->sampling.points), o), text_out);
  });
}

int nmr_spectrum_to_svg(const nmr_spectrum *spec, char **text_out) {
  if (!spec || !text_out) return NMR_ERR_ARGUMENT;
  if (!spec->file_nucleus) return NMR_ERR_UNSUPPORTED;
  return quiet([&] {
    return copy_text(nmrpred::format_svg(sampled(*spec, spec->sampling.points), spec->simulation.multiplets),
                     text_out);
  });
}

int nmr_spectrum_to_json(const nmr_spectrum *spec, char **json_out) {
  if (!spec || !json_out) return NMR_ERR_ARGUMENT;
  return quiet([&] { return copy_text(nmrpred::to_json(spec->simulation), json_out); });
}

}  // extern "C"
