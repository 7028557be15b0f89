#include <nmrpred/error.hpp>
#include <nmrpred/tables.hpp>

#include <algorithm>
#include <charconv>
#include <fstream>
#include <sstream>

#include <fmt/format.h>

#include "couplings/coupling_tables.hpp"
#include "shifts/reference_index.hpp"
#include "shifts/increments_h1.hpp"
#include "shifts/sources.hpp"
#include "tables/embedded.hpp"
#include "tables/parse.hpp"

namespace nmrpred {

namespace detail {

std::uint64_t fnv1a(std::string_view text, std::uint64_t h) {
  for (unsigned char c : text) {
    h ^= c;
    h *= 0x100000001B3ull;
  }
  return h;
}

std::vector<std::string_view> split(std::string_view s, char sep) {
  std::vector<std::string_view> out;
  std::size_t start = 0;
  while (true) {
    const auto k = s.find(sep, start);
    if (k == std::string_view::npos) {
      out.push_back(s.substr(start));
      return out;
    }
    out.push_back(s.substr(start, k - start));
    start = k + 1;
  }
}

bool parse_double(std::string_view s, double &out) {
  if (s.empty()) return false;
  const char *first = s.data(), *last = s.data() + s.size();
  auto r = std::from_chars(first, last, out);
  return r.ec == std::errc() && r.ptr == last;
}

bool parse_index(std::string_view s, std::uint32_t &out) {
  if (s.empty()) return false;
  auto r = std::from_chars(s.data(), s.data() + s.size(), out);
  return r.ec == std::errc() && r.ptr == s.data() + s.size();
}

std::vector<std::string> parse_source_keys(std::string_view sources_md) {
  // Rows of the Markdown table: "| KEY | citation | identifier |".
  std::vector<std::string> keys;
  for (auto line : split(sources_md, '\n')) {
    if (line.size() < 4 || line[0] != '|') continue;
    const auto cells = split(line.substr(1), '|');
    if (cells.empty()) continue;
    std::string_view key = cells[0];
    while (!key.empty() && key.front() == ' ') key.remove_prefix(1);
    while (!key.empty() && key.back() == ' ') key.remove_suffix(1);
    if (key.empty() || key == "key") continue;
    const bool ok = std::all_of(key.begin(), key.end(), [](char c) {
      return (c >= 'A' && c <= 'Z') || (c >= '0' && c <= '9') || c == '-';
    });
    if (ok) keys.emplace_back(key);
  }
  return keys;
}

std::string source_key_of(std::string_view source) {
  const auto k = source.find(" (");
  return std::string(k == std::string_view::npos ? source : source.substr(0, k));
}

TsvTable parse_tsv(std::string_view text, std::string_view name, bool require_header) {
  TsvTable t;
  t.name = std::string(name);
  std::size_t line_no = 0;
  bool have_columns = false;
  for (auto line : split(text, '\n')) {
    ++line_no;
    if (!line.empty() && line.back() == '\r') line.remove_suffix(1);
    if (line.empty()) continue;
    if (line[0] == '#') {
      if (have_columns) throw TablesError(fmt::format("{}:{}: comment line after the column header", name, line_no));
      const auto colon = line.find(':');
      if (colon != std::string_view::npos) {
        std::string_view key = line.substr(1, colon - 1), value = line.substr(colon + 1);
        while (!key.empty() && key.front() == ' ') key.remove_prefix(1);
        while (!value.empty() && value.front() == ' ') value.remove_prefix(1);
        t.header.emplace_back(std::string(key), std::string(value));
      }
      continue;
    }
    auto fields = split(line, '\t');
    if (!have_columns) {
      for (auto f : fields) t.columns.emplace_back(f);
      have_columns = true;
      continue;
    }
    if (fields.size() != t.columns.size())
      throw TablesError(fmt::format("{}:{}: {} fields, the header has {}", name, line_no, fields.size(), t.columns.size()));
    TsvRow row;
    row.line = line_no;
    for (auto f : fields) row.fields.emplace_back(f);
    t.rows.push_back(std::move(row));
  }
  if (!have_columns) throw TablesError(fmt::format("{}: no column header line", name));
  if (require_header)
    for (const char *k : {"table", "version", "units", "sources"}) {
      const bool found = std::any_of(t.header.begin(), t.header.end(), [&](const auto &kv) { return kv.first == k; });
      if (!found) throw TablesError(fmt::format("{}: missing '# {}:' line", name, k));
    }
  return t;
}

std::size_t column(const TsvTable &t, std::string_view col) {
  for (std::size_t i = 0; i < t.columns.size(); ++i)
    if (t.columns[i] == col) return i;
  throw TablesError(fmt::format("{}: no column '{}'", t.name, col));
}

namespace {

std::vector<ReferenceAssignment> parse_assignments(std::string_view field, bool protons, const std::string &where) {
  std::vector<ReferenceAssignment> out;
  if (field == "-" || field.empty()) return out;
  for (auto entry : split(field, ';')) {
    const auto eq = entry.find('=');
    if (eq == std::string_view::npos) throw TablesError(fmt::format("{}: entry '{}' has no '='", where, entry));
    const auto lhs = entry.substr(0, eq), rhs = entry.substr(eq + 1);
    ReferenceAssignment a;
    const bool pair_atoms = lhs.find('|') != std::string_view::npos;
    a.pair_atoms = pair_atoms;
    for (auto idx : split(lhs, pair_atoms ? '|' : ',')) {
      std::uint32_t i = 0;
      if (!parse_index(idx, i)) throw TablesError(fmt::format("{}: bad atom index '{}'", where, idx));
      a.atoms.push_back(i);
    }
    for (auto v : split(rhs, '|')) {
      double x = 0;
      if (!parse_double(v, x)) throw TablesError(fmt::format("{}: bad shift '{}'", where, v));
      a.values.push_back(x);
    }
    if (a.values.size() > 2 || (pair_atoms && (a.atoms.size() != 2 || a.values.size() != 2)) ||
        (a.values.size() == 2 && !pair_atoms && !protons))
      throw TablesError(fmt::format("{}: entry '{}' does not match any assignment form", where, entry));
    out.push_back(std::move(a));
  }
  return out;
}

}  // namespace

std::vector<ReferenceCompound> parse_reference(std::string_view text, std::string_view name, bool user,
                                               const std::vector<std::string> &keys) {
  const auto t = parse_tsv(text, name, !user);
  const auto c_id = column(t, "id"), c_smiles = column(t, "smiles"), c_solvent = column(t, "solvent"),
             c_c13 = column(t, "c13"), c_h1 = column(t, "h1"), c_source = column(t, "source");
  std::vector<ReferenceCompound> out;
  for (const auto &row : t.rows) {
    const std::string where = fmt::format("{}:{}", name, row.line);
    ReferenceCompound c;
    c.id = row.fields[c_id];
    c.smiles = row.fields[c_smiles];
    c.solvent = row.fields[c_solvent];
    c.source = row.fields[c_source];
    c.user = user;
    c.file = std::string(name);
    c.line = row.line;
    if (c.id.empty() || c.smiles.empty()) throw TablesError(where + ": empty id or SMILES");
    if (!user && std::find(keys.begin(), keys.end(), source_key_of(c.source)) == keys.end())
      throw TablesError(fmt::format("{}: source '{}' is not defined in SOURCES.md", where, c.source));
    c.c13 = parse_assignments(row.fields[c_c13], false, where);
    c.h1 = parse_assignments(row.fields[c_h1], true, where);
    out.push_back(std::move(c));
  }
  return out;
}

}  // namespace detail

struct Tables::Private {
  static std::shared_ptr<Tables> make(std::vector<std::pair<std::string, std::string>> files, const std::string &prefix) {
    std::shared_ptr<Tables> t(new Tables());
    std::sort(files.begin(), files.end());
    std::uint64_t h = 0xCBF29CE484222325ull;
    const std::string *sources = nullptr;
    for (const auto &f : files) {
      h = detail::fnv1a(f.first, h);
      h = detail::fnv1a(f.second, h);
      if (f.first == "SOURCES.md") sources = &f.second;
    }
    if (!sources) throw TablesError("tables: SOURCES.md is missing");
    t->source_keys_ = detail::parse_source_keys(*sources);
    for (const auto &f : files)
      if (f.first.rfind("reference/", 0) == 0 && f.first.size() > 4 && f.first.substr(f.first.size() - 4) == ".tsv") {
        auto recs = detail::parse_reference(f.second, f.first, false, t->source_keys_);
        for (auto &r : recs) t->reference_.push_back(std::move(r));
      }
    // Ids are unique across files: provenance names compounds by id.
    std::vector<std::string> ids;
    for (const auto &r : t->reference_) ids.push_back(r.id);
    std::sort(ids.begin(), ids.end());
    const auto dup = std::adjacent_find(ids.begin(), ids.end());
    if (dup != ids.end()) throw TablesError(fmt::format("tables: reference id '{}' is used twice", *dup));
    t->version_ = fmt::format("{}-{:016x}", prefix, h);
    t->files_hash_ = h;
    t->files_ = std::move(files);
    t->c13_increments_ = detail::parse_c13_increment_tables(*t);
    t->h1_increments_ = detail::parse_h1_increment_tables(*t);
    t->coupling_tables_ = detail::parse_coupling_tables(*t);
    t->index_ = detail::build_reference_index(*t, h);
    return t;
  }
};

Tables::Tables() = default;
Tables::~Tables() = default;

std::string_view Tables::file_text(std::string_view path) const noexcept {
  for (const auto &f : files_)
    if (f.first == path) return f.second;
  return {};
}

std::shared_ptr<const Tables> Tables::builtin() {
  std::vector<std::pair<std::string, std::string>> files;
  for (std::size_t i = 0; i < detail::kEmbeddedTableCount; ++i) {
    const auto &e = detail::kEmbeddedTables[i];
    files.emplace_back(e.path, std::string(e.text, e.length));
  }
  return Private::make(std::move(files), "builtin");
}

std::shared_ptr<const Tables> Tables::load(const std::string &directory) {
  std::vector<std::pair<std::string, std::string>> files;
  auto read = [&](const std::string &rel, bool required) {
    std::ifstream in(directory + "/" + rel, std::ios::binary);
    if (!in) {
      if (required) throw TablesError(fmt::format("tables: cannot open {}/{}", directory, rel));
      return;
    }
    std::ostringstream ss;
    ss << in.rdbuf();
    files.emplace_back(rel, ss.str());
  };
  read("SOURCES.md", true);
  // The file list is the built-in one: a replacement set overrides those files.
  bool any_reference = false;
  for (std::size_t i = 0; i < detail::kEmbeddedTableCount; ++i) {
    const std::string rel = detail::kEmbeddedTables[i].path;
    if (rel == "SOURCES.md") continue;
    const auto before = files.size();
    read(rel, false);
    any_reference |= files.size() > before && rel.rfind("reference/", 0) == 0;
  }
  if (!any_reference) throw TablesError(fmt::format("tables: no reference/*.tsv file found in {}", directory));
  return Private::make(std::move(files), "dir");
}

std::shared_ptr<const Tables> Tables::with_user_reference(std::string_view tsv_text, std::string_view name) const {
  auto recs = detail::parse_reference(tsv_text, name, true, source_keys_);
  if (recs.empty()) throw TablesError(fmt::format("{}: no records", name));
  std::shared_ptr<Tables> t(new Tables());
  t->source_keys_ = source_keys_;
  t->files_ = files_;
  t->reference_ = reference_;
  std::vector<std::string> ids;
  for (const auto &r : reference_) ids.push_back(r.id);
  for (auto &r : recs) {
    if (std::find(ids.begin(), ids.end(), r.id) != ids.end())
      throw TablesError(fmt::format("{}: id '{}' is already in use", name, r.id));
    ids.push_back(r.id);
    t->reference_.push_back(std::move(r));
  }
  t->version_ = fmt::format("{}+user-{:016x}", version_, detail::fnv1a(tsv_text, 0xCBF29CE484222325ull));
  t->files_hash_ = files_hash_;
  t->c13_increments_ = c13_increments_;
  t->h1_increments_ = h1_increments_;
  t->coupling_tables_ = coupling_tables_;
  t->index_ = detail::build_reference_index(*t, files_hash_);
  return t;
}

}  // namespace nmrpred
