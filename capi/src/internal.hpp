// Private to capi/: the layouts behind the opaque handles and the one place
// where C++ exceptions are turned into status codes.
#ifndef NMRPRED_CAPI_INTERNAL_HPP
#define NMRPRED_CAPI_INTERNAL_HPP

#include <cstddef>
#include <exception>
#include <limits>
#include <memory>
#include <new>
#include <string>
#include <vector>

#include <nmrpred.h>
#include <nmrpred/error.hpp>
#include <nmrpred/couplings.hpp>
#include <nmrpred/match.hpp>
#include <nmrpred/predict.hpp>
#include <nmrpred/spectrum.hpp>
#include <nmrpred/spin.hpp>
#include <nmrpred/tables.hpp>

namespace nmrpred::capi {

/// Context options of sampled spectra that PredictOptions does not hold (the
/// field, line width and couplings switch live there). NaN and 0 mean "the
/// nucleus's default".
struct SpectrumSettings {
  double points = 0;
  double ppm_low = std::numeric_limits<double>::quiet_NaN();
  double ppm_high = std::numeric_limits<double>::quiet_NaN();
  nmrpred::LineShape shape = nmrpred::LineShape::Lorentzian;
};

}  // namespace nmrpred::capi

struct nmr_context {
  nmrpred::PredictOptions options;
  /// Null only when nmr_context_new failed to read the tables.
  std::shared_ptr<const nmrpred::Tables> tables;
  /// Calls of nmr_context_add_reference so far; numbers the user sets in messages.
  std::size_t reference_sets = 0;
  std::string last_error;
  nmrpred::capi::SpectrumSettings spectrum;
  /// True once NMR_OPT_SOLVENT was set: nmr_match then keeps it rather than
  /// taking the solvent the measured data name.
  bool solvent_set = false;
};

struct nmr_result {
  std::vector<nmrpred::RecordPrediction> records;
  std::size_t failed = 0;
  std::string tables_version;
};

struct nmr_spectrum {
  nmrpred::Simulation simulation;
  /// Sampling settings fixed when the spectrum was made; `sampling.points` is
  /// the default count of nmr_spectrum_sample(0)/to_jcamp/to_svg.
  nmrpred::SamplingOptions sampling;
  /// False for isotopes a SampledSpectrum cannot name (2H, 19F, 31P): such
  /// spectra sample but cannot be written as JCAMP-DX or SVG.
  bool file_nucleus = true;
  std::string solvent_name;
};

struct nmr_match_result {
  struct Candidate {
    int status = 0;
    std::string error;
    std::string title;
    /// Index into ranking.results, or npos for a failed candidate.
    std::size_t ranked = static_cast<std::size_t>(-1);
  };
  std::vector<Candidate> candidates;
  nmrpred::Ranking ranking;
  /// Input index of each entry of ranking.results.
  std::vector<std::size_t> candidate_of;
};

namespace nmrpred::capi {

/// Records `message` as ctx's last error (if there is a context) and returns
/// `status`. Never throws: if even the message cannot be stored, the code alone
/// still reports the failure.
inline int fail(nmr_context *ctx, int status, const char *message) noexcept {
  if (ctx) {
    try {
      ctx->last_error = message;
    } catch (...) {
      ctx->last_error.clear();
    }
  }
  return status;
}

inline int fail(nmr_context *ctx, int status, const std::string &message) noexcept {
  return fail(ctx, status, message.c_str());
}

/// Runs `body` (returning a status) with the context's error cleared first and
/// every exception mapped to a status plus message on the context.
template <class Body>
int guarded(nmr_context *ctx, Body &&body) noexcept {
  try {
    if (ctx) ctx->last_error.clear();
    return body();
  } catch (const nmrpred::Error &e) {
    return fail(ctx, static_cast<int>(e.status()), e.what());
  } catch (const std::bad_alloc &) {
    return fail(ctx, NMR_ERR_NOMEM, "out of memory");
  } catch (const std::exception &e) {
    try {
      return fail(ctx, NMR_ERR_INTERNAL, std::string("internal error (please report): ") + e.what());
    } catch (...) {
      return fail(ctx, NMR_ERR_INTERNAL, "internal error (please report)");
    }
  } catch (...) {
    return fail(ctx, NMR_ERR_INTERNAL, "internal error (please report): unknown exception");
  }
}

}  // namespace nmrpred::capi

#endif
