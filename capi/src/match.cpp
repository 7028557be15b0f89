// Measured peak lists and matching: nmr_measured_format, nmr_match and the
// nmr_match_result accessors.
#include "internal.hpp"

#include <cstring>
#include <memory>
#include <new>
#include <string_view>

#include <fmt/format.h>
#include <nlohmann/json.hpp>

#include <nmrpred/measured.hpp>
#include <nmrpred/solvents.hpp>

using nmrpred::capi::fail;
using nmrpred::capi::guarded;

namespace {

using json = nlohmann::ordered_json;

int copy_text(const std::string &text, char **out) noexcept {
  char *s = new (std::nothrow) char[text.size() + 1];
  if (!s) return NMR_ERR_NOMEM;
  std::memcpy(s, text.c_str(), text.size() + 1);
  *out = s;
  return NMR_OK;
}

std::vector<nmrpred::MeasuredSpectrum> parse_all(const char *const *texts, size_t count) {
  std::vector<nmrpred::MeasuredSpectrum> measured;
  for (size_t i = 0; i < count; ++i) {
    if (!texts[i]) throw nmrpred::ArgumentError(fmt::format("measured_texts[{}] is NULL", i));
    try {
      for (auto &s : nmrpred::parse_measured(texts[i])) measured.push_back(std::move(s));
    } catch (const nmrpred::Error &e) {
      // Say which text, as the parser's line and column are within it.
      throw nmrpred::InputError(fmt::format("measured_texts[{}]: {}", i, e.what()));
    }
  }
  return measured;
}

/// The candidate if `candidate` is in range, else null.
const nmr_match_result::Candidate *candidate_at(const nmr_match_result *m, size_t candidate) noexcept {
  return m && candidate < m->candidates.size() ? &m->candidates[candidate] : nullptr;
}

/// Status for a per-candidate accessor; `result` receives the match when NMR_OK.
int match_of(const nmr_match_result *m, size_t candidate, const nmrpred::MatchResult **result) noexcept {
  const auto *c = candidate_at(m, candidate);
  if (!c) return NMR_ERR_ARGUMENT;
  if (c->status != NMR_OK) return c->status;
  *result = &m->ranking.results[c->ranked];
  return NMR_OK;
}

}  // namespace

extern "C" {

int nmr_measured_format(char **out, nmr_context *ctx, const char *measured_text) {
  if (out) *out = nullptr;
  if (!ctx) return NMR_ERR_ARGUMENT;
  return guarded(ctx, [&] {
    if (!out) return fail(ctx, NMR_ERR_ARGUMENT, "out is NULL");
    if (!measured_text) return fail(ctx, NMR_ERR_ARGUMENT, "measured_text is NULL");
    std::string text;
    for (const auto &s : nmrpred::parse_measured(measured_text)) {
      if (!text.empty()) text += '\n';
      text += nmrpred::format_measured(s);
    }
    const int rc = copy_text(text, out);
    return rc == NMR_OK ? rc : fail(ctx, rc, "out of memory");
  });
}

int nmr_match(nmr_match_result **out, nmr_context *ctx, const char *candidates_format, const char *candidates_text,
              const char *const *measured_texts, size_t measured_count) {
  if (out) *out = nullptr;
  if (!ctx) return NMR_ERR_ARGUMENT;
  return guarded(ctx, [&] {
    if (!out) return fail(ctx, NMR_ERR_ARGUMENT, "out is NULL");
    if (!candidates_text) return fail(ctx, NMR_ERR_ARGUMENT, "candidates_text is NULL");
    if (!measured_texts) return fail(ctx, NMR_ERR_ARGUMENT, "measured_texts is NULL");
    if (measured_count == 0) return fail(ctx, NMR_ERR_ARGUMENT, "measured_count is 0: give at least one peak list");
    if (!ctx->tables)
      return fail(ctx, NMR_ERR_TABLES, "the context has no tables (nmr_context_new failed); create a new one");
    const nmrpred::Format format =
        candidates_format ? nmrpred::parse_format(candidates_format) : nmrpred::Format::Auto;
    const auto measured = parse_all(measured_texts, measured_count);

    nmrpred::PredictOptions options = ctx->options;
    if (!ctx->solvent_set) {
      // The data say what solvent the sample was in; a name the tables do not
      // know is left to match(), which reports it as a warning.
      for (const auto &s : measured) {
        if (s.solvent.empty()) continue;
        try {
          options.solvent = nmrpred::find_solvent(*ctx->tables, s.solvent).name;
          break;
        } catch (const nmrpred::ArgumentError &) {
          continue;
        }
      }
    }
    const auto records = nmrpred::predict_all(std::string_view(candidates_text, std::strlen(candidates_text)),
                                              format, *ctx->tables, options);
    if (records.empty())
      return fail(ctx, NMR_ERR_INPUT, "candidates_text holds no structure (it is empty or only whitespace)");

    auto m = std::make_unique<nmr_match_result>();
    std::vector<nmrpred::Prediction> predictions;
    for (std::size_t k = 0; k < records.size(); ++k) {
      nmr_match_result::Candidate c;
      c.status = static_cast<int>(records[k].status);
      c.error = records[k].error;
      c.title = records[k].title;
      if (records[k].prediction) {
        c.ranked = predictions.size();
        predictions.push_back(*records[k].prediction);
        m->candidate_of.push_back(k);
      }
      m->candidates.push_back(std::move(c));
    }
    if (!predictions.empty()) m->ranking = nmrpred::rank_candidates(predictions, measured, *ctx->tables);
    *out = m.release();
    return static_cast<int>(NMR_OK);
  });
}

void nmr_match_result_free(nmr_match_result *m) { delete m; }

size_t nmr_match_candidate_count(const nmr_match_result *m) { return m ? m->candidates.size() : 0; }

int nmr_match_candidate_status(const nmr_match_result *m, size_t candidate) {
  const auto *c = candidate_at(m, candidate);
  return c ? c->status : NMR_ERR_ARGUMENT;
}

const char *nmr_match_candidate_error(const nmr_match_result *m, size_t candidate) {
  if (!m) return "no match result (m is NULL)";
  const auto *c = candidate_at(m, candidate);
  return c ? c->error.c_str() : "candidate index out of range";
}

const char *nmr_match_candidate_title(const nmr_match_result *m, size_t candidate) {
  const auto *c = candidate_at(m, candidate);
  return c ? c->title.c_str() : "";
}

size_t nmr_match_ranked_count(const nmr_match_result *m) { return m ? m->ranking.order.size() : 0; }

int nmr_match_ranked(const nmr_match_result *m, size_t rank, size_t *candidate_out) {
  if (!m || !candidate_out || rank >= m->ranking.order.size()) return NMR_ERR_ARGUMENT;
  *candidate_out = m->candidate_of[m->ranking.order[rank]];
  return NMR_OK;
}

int nmr_match_score(const nmr_match_result *m, size_t candidate, double *score_out) {
  const nmrpred::MatchResult *r = nullptr;
  if (!score_out) return NMR_ERR_ARGUMENT;
  const int rc = match_of(m, candidate, &r);
  if (rc == NMR_OK) *score_out = r->score;
  return rc;
}

int nmr_match_probability(const nmr_match_result *m, size_t candidate, double *probability_out) {
  const nmrpred::MatchResult *r = nullptr;
  if (!probability_out) return NMR_ERR_ARGUMENT;
  const int rc = match_of(m, candidate, &r);
  if (rc == NMR_OK) *probability_out = m->ranking.probabilities[m->candidates[candidate].ranked];
  return rc;
}

int nmr_match_verdict(const nmr_match_result *m, size_t candidate, const char **verdict_out) {
  const nmrpred::MatchResult *r = nullptr;
  if (!verdict_out) return NMR_ERR_ARGUMENT;
  const int rc = match_of(m, candidate, &r);
  if (rc == NMR_OK) *verdict_out = nmrpred::verdict_name(r->verdict);
  return rc;
}

size_t nmr_match_reason_count(const nmr_match_result *m, size_t candidate) {
  const nmrpred::MatchResult *r = nullptr;
  return match_of(m, candidate, &r) == NMR_OK ? r->reasons.size() : 0;
}

const char *nmr_match_reason(const nmr_match_result *m, size_t candidate, size_t i) {
  const nmrpred::MatchResult *r = nullptr;
  if (match_of(m, candidate, &r) != NMR_OK || i >= r->reasons.size()) return nullptr;
  return r->reasons[i].c_str();
}

int nmr_match_margin(const nmr_match_result *m, double *margin_out) {
  if (!m || !margin_out) return NMR_ERR_ARGUMENT;
  if (m->ranking.order.size() < 2) return NMR_ERR_UNSUPPORTED;
  *margin_out = m->ranking.margin;
  return NMR_OK;
}

int nmr_match_to_json(const nmr_match_result *m, char **json_out) {
  if (!m || !json_out) return NMR_ERR_ARGUMENT;
  try {
    auto ranking = json::array();
    for (std::size_t pos = 0; pos < m->ranking.order.size(); ++pos) {
      const std::size_t r = m->ranking.order[pos];
      const std::size_t k = m->candidate_of[r];
      ranking.push_back({{"candidate", k},
                         {"title", m->candidates[k].title},
                         {"score", m->ranking.results[r].score},
                         {"verdict", nmrpred::verdict_name(m->ranking.results[r].verdict)},
                         {"probability", m->ranking.probabilities[r]}});
    }
    // Candidates are spliced in as text: each match keeps the library's own
    // serialisation (and its documented keys) after "candidate" and "title".
    std::string text = "{\"ranking\":" + ranking.dump(-1, ' ', false, json::error_handler_t::replace) +
                       ",\"margin\":" + (m->ranking.order.size() > 1 ? json(m->ranking.margin) : json(nullptr)).dump() +
                       ",\"candidates\":[";
    for (std::size_t k = 0; k < m->candidates.size(); ++k) {
      const auto &c = m->candidates[k];
      if (k) text += ',';
      text += "{\"candidate\":" + std::to_string(k) +
              ",\"title\":" + json(c.title).dump(-1, ' ', false, json::error_handler_t::replace) + ',';
      if (c.status == NMR_OK) {
        const std::string body = nmrpred::to_json(m->ranking.results[c.ranked]);
        text.append(body, 1, std::string::npos);  // past its '{'
      } else {
        json error = {{"code", c.status},
                      {"name", nmrpred::status_constant_name(static_cast<nmrpred::Status>(c.status))},
                      {"message", c.error}};
        text += "\"error\":" + error.dump(-1, ' ', false, json::error_handler_t::replace) + '}';
      }
    }
    text += "]}";
    return copy_text(text, json_out);
  } catch (const std::bad_alloc &) {
    return NMR_ERR_NOMEM;
  } catch (...) {
    return NMR_ERR_INTERNAL;
  }
}

}  // extern "C"
