#ifndef NMRPRED_SRC_IO_TEXT_HPP
#define NMRPRED_SRC_IO_TEXT_HPP

// Small line-level helpers shared by format detection and the record splitter.
// Pure functions on text; no Open Babel here.

#include <cstddef>
#include <string>
#include <string_view>
#include <vector>

namespace nmrpred::io::detail {

inline bool is_space(char c) { return c == ' ' || c == '\t' || c == '\r' || c == '\n' || c == '\f' || c == '\v'; }

inline std::string_view trim_right(std::string_view s) {
  while (!s.empty() && is_space(s.back())) s.remove_suffix(1);
  return s;
}

inline std::string_view trim_left(std::string_view s) {
  while (!s.empty() && is_space(s.front())) s.remove_prefix(1);
  return s;
}

inline std::string_view trim(std::string_view s) { return trim_left(trim_right(s)); }

inline bool is_blank(std::string_view s) { return trim(s).empty(); }

inline bool starts_with(std::string_view s, std::string_view prefix) {
  return s.size() >= prefix.size() && s.substr(0, prefix.size()) == prefix;
}

inline bool ends_with(std::string_view s, std::string_view suffix) {
  return s.size() >= suffix.size() && s.substr(s.size() - suffix.size()) == suffix;
}

// The whitespace-separated fields of a line, as views into it.
inline std::vector<std::string_view> split_fields(std::string_view s) {
  std::vector<std::string_view> out;
  std::size_t p = 0;
  while (p < s.size()) {
    while (p < s.size() && is_space(s[p])) ++p;
    const std::size_t q = p;
    while (p < s.size() && !is_space(s[p])) ++p;
    if (p > q) out.push_back(s.substr(q, p - q));
  }
  return out;
}

// A counts line stamped V3000: the connection table follows in "M  V30" lines.
inline bool is_v3000_counts_line(std::string_view line) { return ends_with(trim_right(line), "V3000"); }

// MDL CTfile counts line: "aaabbblllfffcccsssxxxrrrpppiiimmmvvvvvv", i.e. the
// atom and bond counts as right-justified 3-character integers, normally
// followed by the version stamp V2000 or V3000. Old writers omit the stamp, so
// the two integer fields alone also count.
inline bool is_counts_line(std::string_view line) {
  line = trim_right(line);
  if (line.size() < 6) return false;
  auto field_ok = [](std::string_view f) {
    bool digit_seen = false;
    for (char c : f) {
      if (c >= '0' && c <= '9') {
        digit_seen = true;
      } else if (c != ' ' || digit_seen) {
        return false;  // a space after a digit means the field is not right-justified
      }
    }
    return digit_seen;
  };
  if (!field_ok(line.substr(0, 3)) || !field_ok(line.substr(3, 3))) return false;
  if (ends_with(line, "V2000") || ends_with(line, "V3000")) return true;
  // Without the stamp, accept only the fixed-column layout of digits and spaces.
  for (char c : line)
    if (!(c == ' ' || (c >= '0' && c <= '9'))) return false;
  return true;
}

// Blank lines tolerated before a molfile header (see mdl_header_shift).
inline constexpr std::size_t kMaxLeadingBlankLines = 4;

// Number of leading lines detect_format() examines.
inline constexpr std::size_t kDetectLines = 3 + kMaxLeadingBlankLines + 1;

// Lines that only occur in MDL molfiles and SD files.
inline bool is_mdl_marker_line(std::string_view line) {
  const auto t = trim_right(line);
  return t == "M  END" || t == "$$$$" || starts_with(t, "M  V30 ");
}

// How many leading lines to drop so that an MDL counts line sits at index 3,
// where the CTfile header puts it; -1 if the lines do not start a molfile.
// Only blank lines are ever dropped: pasted text often starts with an empty
// line, but a blank name line inside the 3-line header is legal and kept.
template <class Lines>
int mdl_header_shift(const Lines &lines) {
  for (std::size_t k = 3; k < lines.size() && k < 3 + kMaxLeadingBlankLines + 1; ++k) {
    if (!is_counts_line(lines[k])) continue;
    bool blank_before = true;
    for (std::size_t j = 0; j + 3 < k; ++j)
      if (!is_blank(lines[j])) blank_before = false;
    if (blank_before) return static_cast<int>(k - 3);
  }
  return -1;
}

// Removes one trailing '\r' so that files with CRLF line ends read like LF files.
inline void strip_cr(std::string &line) {
  if (!line.empty() && line.back() == '\r') line.pop_back();
}

}  // namespace nmrpred::io::detail

#endif
