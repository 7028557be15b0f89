#include "internal.hpp"

#include <cmath>
#include <cstring>
#include <memory>
#include <string_view>

#include <fmt/format.h>

#include <nmrpred/io.hpp>
#include <nmrpred/solvents.hpp>

using nmrpred::capi::fail;
using nmrpred::capi::guarded;

namespace {

/// Reads a 0/1 switch option; anything else is rejected so that a caller
/// passing 0.5 or 2 learns about it rather than getting a guess.
int set_switch(nmr_context *ctx, const char *name, double value, bool &target) {
  if (value != 0.0 && value != 1.0)
    return fail(ctx, NMR_ERR_ARGUMENT, fmt::format("{} must be 0 or 1, got {}", name, value));
  target = value == 1.0;
  return NMR_OK;
}

/// A text option given to a numeric call or the other way round: the key is
/// known, so say which call it needs rather than just "unknown".
int wrong_kind(nmr_context *ctx, int option, bool is_text) {
  return fail(ctx, NMR_ERR_UNSUPPORTED,
              is_text ? fmt::format("option key {} takes text: use nmr_context_set_option_string", option)
                      : fmt::format("option key {} takes a number: use nmr_context_set_option_double", option));
}

bool is_numeric_option(int option) {
  return option == NMR_OPT_HOSE_SPHERES || option == NMR_OPT_BLIND || option == NMR_OPT_PREDICT_SHIFTS ||
         option == NMR_OPT_PREDICT_H1 || option == NMR_OPT_FIELD_MHZ || option == NMR_OPT_LINE_WIDTH_HZ ||
         option == NMR_OPT_PREDICT_COUPLINGS || option == NMR_OPT_POINTS || option == NMR_OPT_PPM_LOW ||
         option == NMR_OPT_PPM_HIGH || option == NMR_OPT_LINE_SHAPE;
}

/// A number that must lie in [low, high]; the limits are those of
/// PredictOptions / SamplingOptions, checked here so the error names the key.
int set_range(nmr_context *ctx, const char *name, double value, double low, double high, bool low_open,
              double &target) {
  if (!std::isfinite(value) || value > high || value < low || (low_open && value == low))
    return fail(ctx, NMR_ERR_ARGUMENT,
                fmt::format("{} must be a number {} {} and <= {}, got {}", name, low_open ? ">" : ">=", low, high,
                            value));
  target = value;
  return NMR_OK;
}

}  // namespace

extern "C" {

int nmr_context_new(nmr_context **out, const char *tables_dir) {
  if (!out) return NMR_ERR_ARGUMENT;
  *out = nullptr;
  nmr_context *ctx = new (std::nothrow) nmr_context();
  if (!ctx) return NMR_ERR_NOMEM;
  *out = ctx;
  return guarded(ctx, [&] {
    ctx->tables = tables_dir ? nmrpred::Tables::load(tables_dir) : nmrpred::Tables::builtin();
    return static_cast<int>(NMR_OK);
  });
}

void nmr_context_free(nmr_context *ctx) { delete ctx; }

const char *nmr_context_last_error(const nmr_context *ctx) {
  if (!ctx) return "no context (ctx is NULL)";
  return ctx->last_error.c_str();
}

const char *nmr_context_tables_version(const nmr_context *ctx) {
  if (!ctx || !ctx->tables) return "";
  return ctx->tables->version().c_str();
}

int nmr_context_add_reference(nmr_context *ctx, const char *tsv_text) {
  if (!ctx) return NMR_ERR_ARGUMENT;
  return guarded(ctx, [&] {
    if (!tsv_text) return fail(ctx, NMR_ERR_ARGUMENT, "tsv_text is NULL");
    if (!ctx->tables) return fail(ctx, NMR_ERR_TABLES, "the context has no tables (nmr_context_new failed)");
    // Messages name the set by its call number, as the caller has no file name
    // to give.
    const std::string name = fmt::format("user reference {}", ctx->reference_sets + 1);
    // Assigning only after success keeps the old tables on any failure.
    auto tables = ctx->tables->with_user_reference(std::string_view(tsv_text, std::strlen(tsv_text)), name);
    ctx->tables = std::move(tables);
    ++ctx->reference_sets;
    return static_cast<int>(NMR_OK);
  });
}

int nmr_context_set_option_double(nmr_context *ctx, int option, double value) {
  if (!ctx) return NMR_ERR_ARGUMENT;
  return guarded(ctx, [&] {
    switch (option) {
      case NMR_OPT_HOSE_SPHERES: {
        if (!std::isfinite(value) || value != std::floor(value) || value < 1 || value > nmrpred::kMaxHoseSpheres)
          return fail(ctx, NMR_ERR_ARGUMENT,
                      fmt::format("NMR_OPT_HOSE_SPHERES must be a whole number from 1 to {}, got {}",
                                  nmrpred::kMaxHoseSpheres, value));
        ctx->options.hose_spheres = static_cast<int>(value);
        return static_cast<int>(NMR_OK);
      }
      case NMR_OPT_BLIND:
        return set_switch(ctx, "NMR_OPT_BLIND", value, ctx->options.blind);
      case NMR_OPT_PREDICT_SHIFTS:
        return set_switch(ctx, "NMR_OPT_PREDICT_SHIFTS", value, ctx->options.predict_shifts);
      case NMR_OPT_PREDICT_H1:
        return set_switch(ctx, "NMR_OPT_PREDICT_H1", value, ctx->options.predict_h1);
      case NMR_OPT_FIELD_MHZ:
        return set_range(ctx, "NMR_OPT_FIELD_MHZ", value, 40, 1200, false, ctx->options.field_mhz);
      case NMR_OPT_LINE_WIDTH_HZ:
        return set_range(ctx, "NMR_OPT_LINE_WIDTH_HZ", value, 0, 100, true, ctx->options.line_width_hz);
      case NMR_OPT_PREDICT_COUPLINGS:
        return set_switch(ctx, "NMR_OPT_PREDICT_COUPLINGS", value, ctx->options.predict_couplings);
      case NMR_OPT_POINTS:
        if (!std::isfinite(value) || value != std::floor(value) || (value != 0 && (value < 16 || value > 4194304)))
          return fail(ctx, NMR_ERR_ARGUMENT,
                      fmt::format("NMR_OPT_POINTS must be 0 or a whole number from 16 to 4194304, got {}", value));
        ctx->spectrum.points = value;
        return static_cast<int>(NMR_OK);
      case NMR_OPT_PPM_LOW:
      case NMR_OPT_PPM_HIGH: {
        // NaN restores the default; infinities would make an axis of no use.
        if (std::isinf(value) || std::fabs(value) > 1e4)
          return fail(ctx, NMR_ERR_ARGUMENT,
                      fmt::format("{} must be NaN (the default) or a shift within +-10000 ppm, got {}",
                                  option == NMR_OPT_PPM_LOW ? "NMR_OPT_PPM_LOW" : "NMR_OPT_PPM_HIGH", value));
        (option == NMR_OPT_PPM_LOW ? ctx->spectrum.ppm_low : ctx->spectrum.ppm_high) = value;
        return static_cast<int>(NMR_OK);
      }
      case NMR_OPT_LINE_SHAPE:
        if (value != NMR_LINE_LORENTZIAN && value != NMR_LINE_GAUSSIAN)
          return fail(ctx, NMR_ERR_ARGUMENT,
                      fmt::format("NMR_OPT_LINE_SHAPE must be NMR_LINE_LORENTZIAN (1) or NMR_LINE_GAUSSIAN (2), "
                                  "got {}",
                                  value));
        ctx->spectrum.shape = static_cast<nmrpred::LineShape>(static_cast<int>(value));
        return static_cast<int>(NMR_OK);
      case NMR_OPT_SOLVENT:
        return wrong_kind(ctx, option, true);
      default:
        return fail(ctx, NMR_ERR_UNSUPPORTED, fmt::format("unknown option key {}", option));
    }
  });
}

int nmr_context_get_option_double(nmr_context *ctx, int option, double *value_out) {
  if (!ctx) return NMR_ERR_ARGUMENT;
  return guarded(ctx, [&] {
    if (!value_out) return fail(ctx, NMR_ERR_ARGUMENT, "value_out is NULL");
    switch (option) {
      case NMR_OPT_HOSE_SPHERES:
        *value_out = ctx->options.hose_spheres;
        return static_cast<int>(NMR_OK);
      case NMR_OPT_BLIND:
        *value_out = ctx->options.blind ? 1.0 : 0.0;
        return static_cast<int>(NMR_OK);
      case NMR_OPT_PREDICT_SHIFTS:
        *value_out = ctx->options.predict_shifts ? 1.0 : 0.0;
        return static_cast<int>(NMR_OK);
      case NMR_OPT_PREDICT_H1:
        *value_out = ctx->options.predict_h1 ? 1.0 : 0.0;
        return static_cast<int>(NMR_OK);
      case NMR_OPT_FIELD_MHZ:
        *value_out = ctx->options.field_mhz;
        return static_cast<int>(NMR_OK);
      case NMR_OPT_LINE_WIDTH_HZ:
        *value_out = ctx->options.line_width_hz;
        return static_cast<int>(NMR_OK);
      case NMR_OPT_PREDICT_COUPLINGS:
        *value_out = ctx->options.predict_couplings ? 1.0 : 0.0;
        return static_cast<int>(NMR_OK);
      case NMR_OPT_POINTS:
        *value_out = ctx->spectrum.points;
        return static_cast<int>(NMR_OK);
      case NMR_OPT_PPM_LOW:
        *value_out = ctx->spectrum.ppm_low;
        return static_cast<int>(NMR_OK);
      case NMR_OPT_PPM_HIGH:
        *value_out = ctx->spectrum.ppm_high;
        return static_cast<int>(NMR_OK);
      case NMR_OPT_LINE_SHAPE:
        *value_out = static_cast<double>(static_cast<int>(ctx->spectrum.shape));
        return static_cast<int>(NMR_OK);
      case NMR_OPT_SOLVENT:
        return wrong_kind(ctx, option, true);
      default:
        return fail(ctx, NMR_ERR_UNSUPPORTED, fmt::format("unknown option key {}", option));
    }
  });
}

int nmr_context_set_option_string(nmr_context *ctx, int option, const char *value) {
  if (!ctx) return NMR_ERR_ARGUMENT;
  return guarded(ctx, [&] {
    if (option == NMR_OPT_SOLVENT) {
      if (!value) return fail(ctx, NMR_ERR_ARGUMENT, "value is NULL");
      if (!ctx->tables)
        return fail(ctx, NMR_ERR_TABLES, "the context has no tables (nmr_context_new failed); create a new one");
      // Checked now, so that a typo surfaces at the call that made it; throws
      // ArgumentError naming the known solvents.
      ctx->options.solvent = nmrpred::find_solvent(*ctx->tables, value).name;
      ctx->solvent_set = true;
      return static_cast<int>(NMR_OK);
    }
    if (is_numeric_option(option)) return wrong_kind(ctx, option, false);
    return fail(ctx, NMR_ERR_UNSUPPORTED, fmt::format("unknown option key {}", option));
  });
}

int nmr_context_get_option_string(nmr_context *ctx, int option, const char **value_out) {
  if (!ctx) return NMR_ERR_ARGUMENT;
  return guarded(ctx, [&] {
    if (!value_out) return fail(ctx, NMR_ERR_ARGUMENT, "value_out is NULL");
    if (option == NMR_OPT_SOLVENT) {
      *value_out = ctx->options.solvent.c_str();
      return static_cast<int>(NMR_OK);
    }
    if (is_numeric_option(option)) return wrong_kind(ctx, option, false);
    return fail(ctx, NMR_ERR_UNSUPPORTED, fmt::format("unknown option key {}", option));
  });
}

int nmr_predict(nmr_result **out, nmr_context *ctx, const char *format, const char *text) {
  if (out) *out = nullptr;
  if (!ctx) return NMR_ERR_ARGUMENT;
  return guarded(ctx, [&] {
    if (!out) return fail(ctx, NMR_ERR_ARGUMENT, "out is NULL");
    if (!text) return fail(ctx, NMR_ERR_ARGUMENT, "text is NULL");
    if (!ctx->tables)
      return fail(ctx, NMR_ERR_TABLES, "the context has no tables (nmr_context_new failed); create a new one");
    const nmrpred::Format f = format ? nmrpred::parse_format(format) : nmrpred::Format::Auto;
    auto res = std::make_unique<nmr_result>();
    res->tables_version = ctx->tables->version();
    res->records = nmrpred::predict_all(std::string_view(text, std::strlen(text)), f, *ctx->tables, ctx->options);
    if (res->records.empty())
      return fail(ctx, NMR_ERR_INPUT, "the text holds no structure (it is empty or only whitespace)");
    for (const auto &r : res->records)
      if (!r.ok()) ++res->failed;
    *out = res.release();
    return static_cast<int>(NMR_OK);
  });
}

}  // extern "C"
