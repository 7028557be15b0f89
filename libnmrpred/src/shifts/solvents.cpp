#include <nmrpred/error.hpp>
#include <nmrpred/solvents.hpp>

#include <algorithm>
#include <cctype>
#include <optional>

#include <fmt/format.h>

#include "shifts/increments_h1.hpp"
#include "shifts/sources.hpp"
#include "tables/parse.hpp"

namespace nmrpred {

namespace detail {

namespace {

std::string_view trimmed(std::string_view s) {
  while (!s.empty() && std::isspace(static_cast<unsigned char>(s.front()))) s.remove_prefix(1);
  while (!s.empty() && std::isspace(static_cast<unsigned char>(s.back()))) s.remove_suffix(1);
  return s;
}

char lower(char c) { return static_cast<char>(std::tolower(static_cast<unsigned char>(c))); }

}  // namespace

std::string lower_trimmed(std::string_view s) {
  std::string out(trimmed(s));
  for (auto &c : out) c = lower(c);
  return out;
}

const Solvent &find_listed_solvent(const std::vector<Solvent> &list, std::string_view name) {
  const auto key = lower_trimmed(name);
  // Every prediction looks its solvent up: names are compared in place
  // rather than lower-cased into new strings.
  auto same_name = [&](std::string_view n) {
    n = trimmed(n);
    return n.size() == key.size() &&
           std::equal(n.begin(), n.end(), key.begin(), [](char a, char b) { return lower(a) == b; });
  };
  for (const auto &s : list)
    if (same_name(s.name) || s.id == key || std::find(s.aliases.begin(), s.aliases.end(), key) != s.aliases.end())
      return s;
  std::string known;
  for (const auto &s : list) known += (known.empty() ? "" : ", ") + s.name;
  throw ArgumentError(fmt::format("unknown solvent '{}' (known: {})", name, known));
}

}  // namespace detail

namespace {

std::vector<SolventSignal> signals(const std::string &where, std::string_view shifts, std::string_view mults,
                                   std::string_view couplings) {
  std::vector<SolventSignal> out;
  if (shifts == "-") return out;
  const auto s = detail::split(shifts, ';'), m = detail::split(mults, ';'), j = detail::split(couplings, ';');
  if (m.size() != s.size() || j.size() != s.size())
    throw TablesError(fmt::format("{}: shift, multiplicity and coupling lists differ in length", where));
  for (std::size_t i = 0; i < s.size(); ++i) {
    SolventSignal sig;
    if (!detail::parse_double(s[i], sig.shift_ppm)) throw TablesError(fmt::format("{}: bad shift '{}'", where, s[i]));
    sig.multiplicity = std::string(m[i]);
    if (j[i] != "-" && !detail::parse_double(j[i], sig.coupling_hz))
      throw TablesError(fmt::format("{}: bad coupling '{}'", where, j[i]));
    out.push_back(std::move(sig));
  }
  return out;
}

// The list read when the tables were parsed (shifts/increments_h1.cpp), or
// null while they are being parsed or when the set has no solvents.tsv.
const std::vector<Solvent> *parsed_list(const Tables &tables) {
  const auto &h1 = tables.h1_increments();
  return h1 ? detail::parsed_solvents(*h1) : nullptr;
}

}  // namespace

std::vector<Solvent> solvents(const Tables &tables) {
  if (const auto *parsed = parsed_list(tables)) return *parsed;
  const auto text = tables.file_text("solvents.tsv");
  if (text.empty()) throw TablesError("tables: solvents.tsv is missing");
  const auto t = detail::parse_tsv(text, "solvents.tsv", true);
  const auto c_id = detail::column(t, "id"), c_name = detail::column(t, "name"),
             c_alias = detail::column(t, "aliases"), c_h = detail::column(t, "h1_residual_ppm"),
             c_hm = detail::column(t, "h1_multiplicity"), c_hj = detail::column(t, "j_hd_hz"),
             c_c = detail::column(t, "c13_ppm"), c_cm = detail::column(t, "c13_multiplicity"),
             c_cj = detail::column(t, "j_cd_hz"), c_w = detail::column(t, "water_h1_ppm"),
             c_src = detail::column(t, "source");
  std::vector<Solvent> out;
  for (const auto &row : t.rows) {
    const std::string where = fmt::format("solvents.tsv:{}", row.line);
    const auto &f = row.fields;
    Solvent s;
    s.id = f[c_id];
    s.name = f[c_name];
    for (auto a : detail::split(f[c_alias], ';'))
      if (!a.empty() && a != "-") s.aliases.push_back(detail::lower_trimmed(a));
    s.h1_residual = signals(where, f[c_h], f[c_hm], f[c_hj]);
    s.c13 = signals(where, f[c_c], f[c_cm], f[c_cj]);
    if (!detail::parse_double(f[c_w], s.water_h1_ppm))
      throw TablesError(fmt::format("{}: bad water shift '{}'", where, f[c_w]));
    // Labile protons exchange with the deuterons of the solvent's own O-D
    // group (common practice).
    s.exchanges_labile_protons = s.id == "d2o" || s.id == "cd3od";
    s.source = f[c_src];
    out.push_back(std::move(s));
  }
  return out;
}

Solvent find_solvent(const Tables &tables, std::string_view name) {
  std::optional<Solvent> owned;
  return detail::find_solvent_ref(tables, name, owned);
}

namespace detail {

const Solvent &find_solvent_ref(const Tables &tables, std::string_view name, std::optional<Solvent> &owned) {
  // Every prediction looks its solvent up: use the list parsed with the
  // tables rather than reading solvents.tsv again.
  if (const auto *parsed = parsed_list(tables)) return find_listed_solvent(*parsed, name);
  return owned.emplace(find_listed_solvent(solvents(tables), name));
}

}  // namespace detail

}  // namespace nmrpred
