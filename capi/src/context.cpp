#include "internal.hpp"

#include <cmath>
#include <cstring>
#include <memory>
#include <string_view>

#include <fmt/format.h>

#include <nmrpred/io.hpp>

using nmrpred::capi::fail;
using nmrpred::capi::guarded;

namespace {

// Until a replaceable table set exists nothing tabulated feeds a result, and
// the version says exactly that rather than inventing a name.
constexpr const char *kTablesVersion = "none";

}  // namespace

extern "C" {

int nmr_context_new(nmr_context **out, const char *tables_dir) {
  if (!out) return NMR_ERR_ARGUMENT;
  *out = nullptr;
  nmr_context *ctx = new (std::nothrow) nmr_context();
  if (!ctx) return NMR_ERR_NOMEM;
  *out = ctx;
  return guarded(ctx, [&] {
    ctx->tables_version = kTablesVersion;
    if (tables_dir)
      return fail(ctx, NMR_ERR_UNSUPPORTED,
                  fmt::format("tables_dir '{}': this version has no replaceable table set; pass NULL", tables_dir));
    return static_cast<int>(NMR_OK);
  });
}

void nmr_context_free(nmr_context *ctx) { delete ctx; }

const char *nmr_context_last_error(const nmr_context *ctx) {
  if (!ctx) return "no context (ctx is NULL)";
  return ctx->last_error.c_str();
}

const char *nmr_context_tables_version(const nmr_context *ctx) {
  if (!ctx) return "";
  return ctx->tables_version.c_str();
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
      default:
        return fail(ctx, NMR_ERR_UNSUPPORTED, fmt::format("unknown option key {}", option));
    }
  });
}

int nmr_predict(nmr_result **out, nmr_context *ctx, const char *format, const char *text) {
  if (out) *out = nullptr;
  if (!ctx) return NMR_ERR_ARGUMENT;
  return guarded(ctx, [&] {
    if (!out) return fail(ctx, NMR_ERR_ARGUMENT, "out is NULL");
    if (!text) return fail(ctx, NMR_ERR_ARGUMENT, "text is NULL");
    const nmrpred::Format f = format ? nmrpred::parse_format(format) : nmrpred::Format::Auto;
    auto res = std::make_unique<nmr_result>();
    res->records = nmrpred::predict_all(std::string_view(text, std::strlen(text)), f, ctx->options);
    if (res->records.empty())
      return fail(ctx, NMR_ERR_INPUT, "the text holds no structure (it is empty or only whitespace)");
    for (const auto &r : res->records)
      if (!r.ok()) ++res->failed;
    *out = res.release();
    return static_cast<int>(NMR_OK);
  });
}

}  // extern "C"
