#ifndef NMRPRED_TABLES_PARSE_HPP
#define NMRPRED_TABLES_PARSE_HPP

// Table text parsing shared by the stages that read tables. Numbers are parsed
// with std::from_chars, so the host's locale never changes a value.

#include <cstdint>
#include <string>
#include <string_view>
#include <utility>
#include <vector>

#include <nmrpred/tables.hpp>

namespace nmrpred::detail {

struct TsvRow {
  std::size_t line = 0;  // 1-based line in the file, for messages
  std::vector<std::string> fields;
};

struct TsvTable {
  std::string name;
  std::vector<std::pair<std::string, std::string>> header;  // "# key: value" lines
  std::vector<std::string> columns;
  std::vector<TsvRow> rows;
};

std::uint64_t fnv1a(std::string_view text, std::uint64_t h);
std::vector<std::string_view> split(std::string_view s, char sep);
bool parse_double(std::string_view s, double &out);
bool parse_index(std::string_view s, std::uint32_t &out);
std::vector<std::string> parse_source_keys(std::string_view sources_md);
// "PRETSCH-2009 (from memory)" -> "PRETSCH-2009"
std::string source_key_of(std::string_view source);
// Throws TablesError naming file and line. With require_header, the four
// "# table/version/units/sources:" lines must be present.
TsvTable parse_tsv(std::string_view text, std::string_view name, bool require_header);
std::size_t column(const TsvTable &t, std::string_view col);
std::vector<ReferenceCompound> parse_reference(std::string_view text, std::string_view name, bool user,
                                               const std::vector<std::string> &source_keys);

}  // namespace nmrpred::detail

#endif
