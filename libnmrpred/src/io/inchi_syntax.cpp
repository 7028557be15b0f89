// Layer syntax of InChI strings: IUPAC InChI Technical Manual, layers and
// their character sets (from memory). Only the shape is checked; the InChI
// library still decides whether the structure makes sense.

#include "io/inchi_syntax.hpp"

#include <vector>

#include <fmt/format.h>

#include <nmrpred/molecule.hpp>

#include "io/text.hpp"

namespace nmrpred::io::detail {

namespace {

bool is_digit(char c) { return c >= '0' && c <= '9'; }
bool is_upper(char c) { return c >= 'A' && c <= 'Z'; }
bool is_lower(char c) { return c >= 'a' && c <= 'z'; }

// Bounds that keep the numbers below well inside int.
constexpr long kMaxCount = 100000;

// Reads a run of digits at f[i]; -1 if it is absurdly long or large.
long read_number(std::string_view f, std::size_t &i) {
  long v = 0;
  while (i < f.size() && is_digit(f[i])) {
    v = v * 10 + (f[i] - '0');
    if (v > kMaxCount) return -1;
    ++i;
  }
  return v;
}

// Formula: components separated by '.', each an optional multiplier and then
// element symbols with optional counts ("C7H6ClNO", "2Na", "C2H3O2"). Empty is
// allowed (the empty structure "InChI=1S//"). Fills the number of non-hydrogen
// atoms of every component, multipliers expanded.
std::string check_formula(std::string_view f, std::vector<long> &heavy) {
  heavy.clear();
  std::size_t i = 0;
  while (i < f.size()) {
    long multiplier = 1;
    if (is_digit(f[i])) multiplier = read_number(f, i);
    if (multiplier <= 0) return "bad multiplier in the formula layer";
    long count = 0;
    bool any = false;
    while (i < f.size() && f[i] != '.') {
      const char c = f[i];
      if (!is_upper(c)) return fmt::format("unexpected '{}' in the formula layer", c);
      std::string symbol(1, c);
      ++i;
      if (i < f.size() && is_lower(f[i])) symbol += f[i++];
      if (Molecule::element_from_symbol(symbol) == 0)
        return fmt::format("unknown element '{}' in the formula layer", symbol);
      long n = 1;
      if (i < f.size() && is_digit(f[i])) n = read_number(f, i);
      if (n <= 0) return "bad atom count in the formula layer";
      if (symbol != "H") count += n;
      if (count > kMaxCount) return "too many atoms in the formula layer";
      any = true;
    }
    if (!any) return "empty component in the formula layer";
    if (heavy.size() + static_cast<std::size_t>(multiplier) > static_cast<std::size_t>(kMaxCount))
      return "too many components in the formula layer";
    heavy.insert(heavy.end(), static_cast<std::size_t>(multiplier), count);
    if (i < f.size()) {
      ++i;  // '.'
      if (i == f.size()) return "empty component in the formula layer";
    }
  }
  return {};
}

// Layers that describe atoms list one group per component, separated by ';'; a
// group may start with a multiplier "n*" that stands for n equal components.
// Atom numbers of a group must not exceed the heavy atoms of its component.
// In the /h layer a number right after 'H' is a hydrogen count, not an atom.
std::string check_atom_numbers(char kind, std::string_view body, const std::vector<long> &heavy) {
  std::size_t component = 0;
  std::size_t start = 0;
  while (start <= body.size()) {
    auto end = body.find(';', start);
    if (end == std::string_view::npos) end = body.size();
    auto group = body.substr(start, end - start);
    long repeat = 1;
    const auto star = group.find('*');
    if (star != std::string_view::npos) {
      std::size_t k = 0;
      repeat = read_number(group, k);
      if (k != star || repeat <= 0) return fmt::format("bad multiplier in InChI layer '/{}'", kind);
      group.remove_prefix(star + 1);
    }
    if (component + static_cast<std::size_t>(repeat) > heavy.size())
      return fmt::format("InChI layer '/{}' lists more components than the formula", kind);
    for (std::size_t i = 0; i < group.size();) {
      if (!is_digit(group[i])) {
        if (kind == 'h' && group[i] == '(' && (i + 1 >= group.size() || group[i + 1] != 'H'))
          return "a mobile-hydrogen group in the /h layer must start with 'H'";
        ++i;
        continue;
      }
      const bool h_count = kind == 'h' && i > 0 && group[i - 1] == 'H';
      const long v = read_number(group, i);
      if (v < 0) return fmt::format("number too large in InChI layer '/{}'", kind);
      if (h_count) continue;
      for (long r = 0; r < repeat; ++r)
        if (v < 1 || v > heavy[component + static_cast<std::size_t>(r)])
          return fmt::format("atom {} in InChI layer '/{}' is not in its component", v, kind);
    }
    component += static_cast<std::size_t>(repeat);
    if (end == body.size()) break;
    start = end + 1;
  }
  return {};
}

std::string_view allowed_chars(char layer) {
  switch (layer) {
    case 'c': return "0123456789-(),;*.";
    case 'h': return "0123456789H-(),;*.";
    case 'q': return "0123456789+-;.*";
    case 'p': return "0123456789+-;.*";
    case 'b': return "0123456789-+,;*.";
    case 't': return "0123456789-+?,;*.";
    case 'm': return "0123456789.;*";
    case 's': return "0123456789";
    case 'i': return "0123456789HDT+-,;*.";
    case 'o': return "0123456789(),;.";
    default: return {};
  }
}

}  // namespace

std::string check_inchi_syntax(std::string_view s) {
  if (!starts_with(s, "InChI=1")) return "an InChI string must start with 'InChI=1'";
  s.remove_prefix(7);
  if (!s.empty() && s.front() == 'S') s.remove_prefix(1);
  if (s.empty() || s.front() != '/') return "no '/' after the InChI version";
  s.remove_prefix(1);

  std::size_t slash = s.find('/');
  std::vector<long> heavy;
  std::string err = check_formula(s.substr(0, slash), heavy);
  if (!err.empty()) return err;
  while (slash != std::string_view::npos) {
    s.remove_prefix(slash + 1);
    slash = s.find('/');
    const auto layer = s.substr(0, slash);
    if (layer.empty()) {
      // "InChI=1S//" is the empty structure; an empty layer elsewhere is not.
      if (slash == std::string_view::npos) break;
      return "empty InChI layer";
    }
    const char kind = layer.front();
    const auto body = layer.substr(1);
    if (kind == 'f' || kind == 'r') {
      // Fixed-H and reconnected layers start with a formula of their own, and
      // the layers after it refer to that one.
      if (body.empty()) continue;  // "/f" alone: same formula as the main layer
      err = check_formula(body, heavy);
      if (!err.empty()) return err;
      continue;
    }
    const auto chars = allowed_chars(kind);
    if (chars.empty()) return fmt::format("unknown InChI layer '/{}'", kind);
    int depth = 0;
    for (char c : body) {
      if (chars.find(c) == std::string_view::npos)
        return fmt::format("unexpected '{}' in InChI layer '/{}'", c, kind);
      if (c == '(') ++depth;
      if (c == ')' && --depth < 0) return fmt::format("unbalanced ')' in InChI layer '/{}'", kind);
    }
    if (depth != 0) return fmt::format("unbalanced '(' in InChI layer '/{}'", kind);
    if (kind == 'c' || kind == 'h' || kind == 'b' || kind == 't') {
      err = check_atom_numbers(kind, body, heavy);
      if (!err.empty()) return err;
    }
  }
  return {};
}

}  // namespace nmrpred::io::detail
