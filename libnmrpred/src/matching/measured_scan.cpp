// Typographic clean-up, messages, numbers and the multiplicity vocabulary of
// the measured peak-list readers.

#include "matching/measured_scan.hpp"

#include <algorithm>
#include <charconv>
#include <cmath>
#include <cstdint>

#include <fmt/format.h>

#include <nmrpred/error.hpp>

namespace nmrpred::matching::detail {

namespace {

// One typographic character and what it reads as. Several characters map to
// the same ASCII text, because pasted text carries whatever the word processor
// or PDF made of the author's keystrokes.
struct Replacement {
  std::string_view utf8;
  std::string_view ascii;  // empty: the character is dropped
};

constexpr Replacement kReplacements[] = {
    {"\xC2\xA0", " "},          // no-break space
    {"\xE2\x80\x80", " "},      // en quad ... hair space (U+2000..U+200A)
    {"\xE2\x80\x81", " "},     {"\xE2\x80\x82", " "}, {"\xE2\x80\x83", " "}, {"\xE2\x80\x84", " "},
    {"\xE2\x80\x85", " "},     {"\xE2\x80\x86", " "}, {"\xE2\x80\x87", " "}, {"\xE2\x80\x88", " "},
    {"\xE2\x80\x89", " "},     {"\xE2\x80\x8A", " "},
    {"\xE2\x80\xAF", " "},      // narrow no-break space
    {"\xE2\x81\x9F", " "},      // medium mathematical space
    {"\xE3\x80\x80", " "},      // ideographic space
    {"\xE2\x80\x8B", ""},       // zero-width space
    {"\xE2\x80\x8C", ""},      {"\xE2\x80\x8D", ""},  // zero-width (non-)joiner
    {"\xE2\x81\xA0", ""},       // word joiner
    {"\xEF\xBB\xBF", ""},       // byte order mark
    {"\xC2\xAD", ""},           // soft hyphen
    {"\xE2\x80\x90", "-"},      // hyphen
    {"\xE2\x80\x91", "-"},      // non-breaking hyphen
    {"\xE2\x80\x92", "-"},      // figure dash
    {"\xE2\x80\x93", "-"},      // en dash
    {"\xE2\x80\x94", "-"},      // em dash
    {"\xE2\x80\x95", "-"},      // horizontal bar
    {"\xE2\x88\x92", "-"},      // minus sign
    {"\xEF\xB9\xA3", "-"},      // small hyphen-minus
    {"\xEF\xBC\x8D", "-"},      // fullwidth hyphen-minus
    {"\xCE\xB4", "delta"},      // δ
    {"\xC3\x97", "x"},          // multiplication sign
    {"\xE2\x80\x98", "'"},     {"\xE2\x80\x99", "'"}, {"\xE2\x80\xB2", "'"},  // quotes, prime (AA'BB')
    {"\xE2\x80\x9C", "\""},    {"\xE2\x80\x9D", "\""},
    {"\xC2\xB0", "o"},          // degree sign ("25 °C" reads as "25 oC", as some type it)
    {"\xE2\x81\xB0", "0"},     {"\xC2\xB9", "1"},     {"\xC2\xB2", "2"},     {"\xC2\xB3", "3"},
    {"\xE2\x81\xB4", "4"},     {"\xE2\x81\xB5", "5"}, {"\xE2\x81\xB6", "6"}, {"\xE2\x81\xB7", "7"},
    {"\xE2\x81\xB8", "8"},     {"\xE2\x81\xB9", "9"},
    {"\xE2\x82\x80", "0"},     {"\xE2\x82\x81", "1"}, {"\xE2\x82\x82", "2"}, {"\xE2\x82\x83", "3"},
    {"\xE2\x82\x84", "4"},     {"\xE2\x82\x85", "5"}, {"\xE2\x82\x86", "6"}, {"\xE2\x82\x87", "7"},
    {"\xE2\x82\x88", "8"},     {"\xE2\x82\x89", "9"},
};

// Length of the UTF-8 sequence starting at `i` if it is well formed, else 0.
std::size_t utf8_length(std::string_view t, std::size_t i) {
  const auto c = static_cast<unsigned char>(t[i]);
  std::size_t n = 0;
  if (c < 0x80) return 1;
  if (c >= 0xC2 && c <= 0xDF) n = 2;
  else if (c >= 0xE0 && c <= 0xEF) n = 3;
  else if (c >= 0xF0 && c <= 0xF4) n = 4;
  else return 0;
  if (i + n > t.size()) return 0;
  for (std::size_t k = 1; k < n; ++k)
    if ((static_cast<unsigned char>(t[i + k]) & 0xC0) != 0x80) return 0;
  return n;
}

// A short token of the original text at `byte`, printable and valid UTF-8
// whatever the input held: a punctuation mark alone (the token after it is
// what the next message would be about), a quoted string up to its closing
// quote, otherwise the text up to the next space.
std::string found_text(std::string_view t, std::size_t byte) {
  if (byte >= t.size()) return "the end of the text";
  if (t[byte] == '\n' || t[byte] == '\r') return "the end of the line";
  const auto first = static_cast<unsigned char>(t[byte]);
  const bool quote = first == '"';
  const char f = t[byte];
  const bool punct = !quote && first < 0x80 && !is_alpha(f) && !is_digit(f) && first >= 0x20 && first != 0x7F;
  std::string out;
  std::size_t i = byte;
  for (std::size_t chars = 0; i < t.size() && chars < 16; ++chars) {
    const char c = t[i];
    if (chars > 0 && (c == '\n' || c == '\r' || (!quote && (c == ' ' || c == '\t')))) break;
    const std::size_t n = utf8_length(t, i);
    const auto u = static_cast<unsigned char>(c);
    if (n == 0 || (n == 1 && (u < 0x20 || u == 0x7F))) {
      out += fmt::format("\\x{:02X}", u);
      ++i;
    } else {
      out.append(t.substr(i, n));
      i += n;
    }
    if (punct || (quote && chars > 0 && c == '"')) break;
  }
  return "'" + out + "'";
}

}  // namespace

Source normalize(std::string_view text) {
  Source src;
  src.original = text;
  src.s.reserve(text.size());
  src.at.reserve(text.size() + 1);
  src.typo.reserve(text.size());
  auto put = [&](std::string_view ascii, std::size_t from, bool typo) {
    for (char c : ascii) {
      src.s.push_back(c);
      src.at.push_back(from);
      src.typo.push_back(typo ? 1 : 0);
    }
  };
  std::size_t i = 0;
  while (i < text.size()) {
    const char c = text[i];
    if (c == '\r') {
      put("\n", i, false);
      i += (i + 1 < text.size() && text[i + 1] == '\n') ? 2 : 1;
      continue;
    }
    if (c == '\v' || c == '\f') {
      put(" ", i, false);
      ++i;
      continue;
    }
    if (static_cast<unsigned char>(c) < 0x80) {
      put(std::string_view(&text[i], 1), i, false);
      ++i;
      continue;
    }
    bool replaced = false;
    for (const auto &r : kReplacements) {
      if (text.substr(i, r.utf8.size()) == r.utf8) {
        put(r.ascii, i, true);
        i += r.utf8.size();
        replaced = true;
        break;
      }
    }
    if (replaced) continue;
    // Any other character is kept byte for byte; the readers treat it as
    // something they do not know and say so.
    const std::size_t n = std::max<std::size_t>(1, utf8_length(text, i));
    for (std::size_t k = 0; k < n; ++k) put(std::string_view(&text[i + k], 1), i, true);
    i += n;
  }
  src.at.push_back(text.size());
  return src;
}

void check_text(std::string_view text) {
  for (std::size_t i = 0; i < text.size();) {
    const std::size_t n = utf8_length(text, i);
    if (n == 0) fail_at_byte(text, i, "expected UTF-8 text");
    const auto u = static_cast<unsigned char>(text[i]);
    if (n == 1 && ((u < 0x20 && u != '\t' && u != '\n' && u != '\r' && u != '\v' && u != '\f') || u == 0x7F))
      fail_at_byte(text, i, "expected text without control characters");
    i += n;
  }
}

std::string where(std::string_view original, std::size_t byte) {
  if (byte > original.size()) byte = original.size();
  std::size_t line = 1, column = 1;
  for (std::size_t i = 0; i < byte; ++i) {
    const char c = original[i];
    if (c == '\n' || (c == '\r' && (i + 1 >= original.size() || original[i + 1] != '\n'))) {
      ++line;
      column = 1;
    } else if (c == '\r') {
      // CR of CRLF: the LF ends the line.
    } else if ((static_cast<unsigned char>(c) & 0xC0) != 0x80) {
      ++column;
    }
  }
  return fmt::format("line {}, column {}", line, column);
}

void fail_at_byte(std::string_view original, std::size_t byte, const std::string &what) {
  if (byte > original.size()) byte = original.size();
  throw InputError(fmt::format("{} at {} (byte {}); found {}", what, where(original, byte), byte,
                               found_text(original, byte)));
}

void fail(const Source &src, std::size_t i, const std::string &what) {
  if (i > src.s.size()) i = src.s.size();
  fail_at_byte(src.original, src.at[i], what);
}

std::string to_lower(std::string_view s) {
  std::string out(s);
  for (auto &c : out) c = lower(c);
  return out;
}

std::string_view trim(std::string_view s) {
  while (!s.empty() && (is_space(s.front()) || s.front() == '\n')) s.remove_prefix(1);
  while (!s.empty() && (is_space(s.back()) || s.back() == '\n')) s.remove_suffix(1);
  return s;
}

bool iequals(std::string_view a, std::string_view b) {
  if (a.size() != b.size()) return false;
  for (std::size_t i = 0; i < a.size(); ++i)
    if (lower(a[i]) != lower(b[i])) return false;
  return true;
}

bool word_at(const Source &src, std::size_t i, std::string_view word) {
  if (i + word.size() > src.s.size()) return false;
  if (!iequals(std::string_view(src.s).substr(i, word.size()), word)) return false;
  return !is_alpha(src.at_or_nul(i + word.size()));
}

std::optional<Number> scan_number(const Source &src, std::size_t i, bool allow_sign) {
  const std::size_t start = i;
  bool negative = false;
  if (allow_sign && i < src.s.size() && (src.s[i] == '-' || src.s[i] == '+')) {
    negative = src.s[i] == '-';
    ++i;
  }
  const std::size_t digits = i;
  while (src.plain_digit(i)) ++i;
  if (i == digits) return std::nullopt;
  Number num;
  if (src.at_or_nul(i) == '.' && src.plain_digit(i + 1)) {
    num.fraction = true;
    ++i;
    while (src.plain_digit(i)) ++i;
  }
  num.end = i;
  // No peak list needs more; a pasted run of digits is a mistake, not a value.
  if (i - digits > 24) fail(src, start, "expected a number of at most 24 digits");
  const char *first = src.s.data() + digits;
  const char *last = src.s.data() + i;
  double v = 0;
  const auto res = std::from_chars(first, last, v);
  if (res.ec != std::errc() || res.ptr != last || !std::isfinite(v)) fail(src, start, "expected a finite number");
  num.value = negative ? -v : v;
  return num;
}

void reject_decimal_comma(const Source &src, std::size_t start, const Number &num) {
  if (num.fraction) return;
  if (src.at_or_nul(num.end) != ',' || !src.plain_digit(num.end + 1)) return;
  std::size_t k = num.end + 1;
  while (src.plain_digit(k)) ++k;
  const std::string written = src.s.substr(start, k - start);
  std::string point = written;
  point[num.end - start] = '.';
  fail(src, start,
       fmt::format("decimal comma in '{}': write '{}' (a comma separates peaks and coupling constants here)",
                   written, point));
}

namespace {

// One splitting step of a multiplicity, long and short forms.
struct Step {
  std::string_view written;
  std::string_view letters;
};

// Common practice: the trade's abbreviations for first-order multiplets.
// "quint"/"quin"/"pent" are written for a quintet and "hept" for a septet;
// they are normalised to one spelling (the one simulated multiplets use: "p",
// "sept") so that lists from different authors compare.
constexpr Step kLetterSteps[] = {
    {"quint", "p"}, {"quin", "p"}, {"pent", "p"}, {"sext", "sext"}, {"sept", "sept"},
    {"hept", "sept"}, {"d", "d"},  {"t", "t"},    {"q", "q"},       {"p", "p"},
};

constexpr Step kWordSteps[] = {
    {"doublet", "d"},  {"triplet", "t"}, {"quartet", "q"}, {"quintet", "p"}, {"pentet", "p"},
    {"sextet", "sext"}, {"septet", "sept"}, {"heptet", "sept"},
};

// "dd", "dtd", "dquint" (read as "dp"): a sequence of splitting steps written as letters.
std::optional<std::string> letters_core(std::string_view w) {
  if (w == "s" || w == "m") return std::string(w);
  std::string out;
  int steps = 0;
  while (!w.empty()) {
    bool hit = false;
    for (const auto &st : kLetterSteps) {
      if (w.substr(0, st.written.size()) == st.written) {
        out += st.letters;
        w.remove_prefix(st.written.size());
        hit = true;
        break;
      }
    }
    if (!hit || ++steps > 6) return std::nullopt;
  }
  if (out.empty()) return std::nullopt;
  return out;
}

// "doublet of doublets", "triplet of doublets", "singlet", "multiplet".
std::optional<std::string> words_core(const std::vector<std::string> &w) {
  if (w.size() == 1 && w[0] == "singlet") return std::string("s");
  if (w.size() == 1 && w[0] == "multiplet") return std::string("m");
  std::string out;
  for (std::size_t k = 0; k < w.size(); ++k) {
    if (k % 2 == 1) {
      if (w[k] != "of") return std::nullopt;
      continue;
    }
    std::string word = w[k];
    if (word.size() > 1 && word.back() == 's') word.pop_back();
    bool hit = false;
    for (const auto &st : kWordSteps) {
      if (word == st.written) {
        out += st.letters;
        hit = true;
        break;
      }
    }
    if (!hit) return std::nullopt;
  }
  if (out.empty() || w.size() % 2 == 0) return std::nullopt;
  return out;
}

}  // namespace

std::optional<std::string> normalize_multiplicity(std::string_view text) {
  text = trim(text);
  if (text.empty() || text.size() > 64) return std::nullopt;
  {
    // The AB quartet keeps its capitals: they name the spin system.
    std::string squeezed;
    for (char c : text)
      if (!is_space(c)) squeezed += lower(c);
    if (squeezed == "abq" || squeezed == "abquartet" || squeezed == "absystem") return std::string("ABq");
  }
  // Letters are the trade's lower-case ones; capitals are accepted only in the
  // long forms ("Doublet"), since "D" or "T" alone is more likely a label.
  std::string t;
  for (char c : text) {
    if (c == '.' || c == '-' || c == '\n' || c == '\t') c = ' ';
    t += c;
  }
  std::vector<std::string> words;
  {
    std::size_t k = 0;
    while (k < t.size()) {
      while (k < t.size() && t[k] == ' ') ++k;
      const std::size_t b = k;
      while (k < t.size() && t[k] != ' ') ++k;
      if (k > b) words.push_back(t.substr(b, k - b));
    }
  }
  if (words.empty()) return std::nullopt;
  std::string prefix;
  std::size_t w = 0;
  // "2 x d", "2x d", "2 xd": overlapping signals of the same shape.
  {
    const std::string &first = words[0];
    std::size_t d = 0;
    while (d < first.size() && is_digit(first[d])) ++d;
    if (d > 0 && d <= 1 && first[0] >= '2') {
      std::string rest = first.substr(d);
      if (rest.empty() && words.size() > 1 && (words[1] == "x" || words[1][0] == 'x')) {
        rest = words[1];
        ++w;
      }
      if (rest.empty() || rest[0] != 'x') return std::nullopt;
      rest.erase(0, 1);
      prefix = first.substr(0, d) + " x ";
      ++w;
      if (!rest.empty()) words.insert(words.begin() + static_cast<std::ptrdiff_t>(w), rest);
    }
  }
  bool broad = false, apparent = false;
  for (; w < words.size(); ++w) {
    const std::string lw = to_lower(words[w]);
    if (lw == "br" || lw == "broad") {
      broad = true;
    } else if (lw == "app" || lw == "apparent" || lw == "pseudo" || lw == "ps") {
      apparent = true;
    } else if (words[w] == "bs" || words[w] == "brs") {
      broad = true;
      words[w] = "s";
      break;
    } else if (words[w] == "bd" || words[w] == "brd" || words[w] == "bt" || words[w] == "brt" ||
               words[w] == "bm" || words[w] == "brm") {
      broad = true;
      words[w] = words[w].substr(words[w].size() - 1);
      break;
    } else {
      break;
    }
  }
  std::optional<std::string> core;
  if (w == words.size()) {
    if (!broad || apparent) return std::nullopt;
    core = std::string();  // "br" alone: a broad signal of unstated shape
  } else if (w + 1 == words.size()) {
    core = letters_core(words[w]);
    if (!core) core = words_core({to_lower(words[w])});
  } else {
    std::vector<std::string> rest;
    for (std::size_t k = w; k < words.size(); ++k) rest.push_back(to_lower(words[k]));
    core = words_core(rest);
  }
  if (!core) return std::nullopt;
  std::string out = prefix;
  if (broad) out += core->empty() ? "br" : "br ";
  if (apparent) out += "app ";
  out += *core;
  return out;
}

std::optional<Nucleus> nucleus_from_label(std::string_view text, std::string *label_out) {
  std::size_t k = 0;
  while (k < text.size() && is_digit(text[k])) ++k;
  if (k == 0 || k > 3) return std::nullopt;
  std::size_t e = k;
  if (e >= text.size() || !(text[e] >= 'A' && text[e] <= 'Z')) return std::nullopt;
  ++e;
  if (e < text.size() && text[e] >= 'a' && text[e] <= 'z') ++e;
  if (e != text.size()) return std::nullopt;
  if (label_out) *label_out = std::string(text);
  if (text == "1H") return Nucleus::H1;
  if (text == "13C") return Nucleus::C13;
  return std::nullopt;
}

const char *nucleus_label(Nucleus n) { return n == Nucleus::C13 ? "13C" : "1H"; }

namespace {

struct ShiftWindow {
  double low, high;
};

ShiftWindow window(Nucleus n) { return n == Nucleus::C13 ? ShiftWindow{-50, 400} : ShiftWindow{-50, 50}; }

std::string window_message(Nucleus n, double ppm) {
  const auto w = window(n);
  std::string msg = fmt::format("expected a {} chemical shift between {} and {} ppm, not {}", nucleus_label(n),
                                w.low, w.high, ppm);
  if (n == Nucleus::H1 && ppm > w.high && ppm <= 400) msg += " (is this a 13C list?)";
  return msg;
}

}  // namespace

bool plausible_shift(Nucleus n, double ppm) {
  const auto w = window(n);
  return ppm >= w.low && ppm <= w.high;
}

void check_shift(const Source &src, std::size_t i, Nucleus n, double ppm) {
  if (!plausible_shift(n, ppm)) fail(src, i, window_message(n, ppm));
}

void check_shift_at_byte(std::string_view original, std::size_t byte, Nucleus n, double ppm) {
  if (!plausible_shift(n, ppm)) fail_at_byte(original, byte, window_message(n, ppm));
}

namespace {

// "C", "Cq", "CH", "CH2", "CH3", "CH4" (13C editing), with digits already plain.
std::optional<int> attached_form(std::string_view t) {
  if (t == "C" || t == "Cq" || t == "Cquat" || t == "C_q" || t == "qC") return 0;
  if (t == "CH") return 1;
  if (t == "CH2") return 2;
  if (t == "CH3") return 3;
  if (t == "CH4") return 4;
  return std::nullopt;
}

// A count written before a form: "2", "2 x ", "2x", "2 ". Returns the count
// and the rest, or nothing.
std::optional<std::pair<double, std::string_view>> leading_count(std::string_view t) {
  std::size_t k = 0;
  while (k < t.size() && is_digit(t[k])) ++k;
  std::size_t end = k;
  if (k > 0 && k < t.size() && t[k] == '.') {
    std::size_t f = k + 1;
    while (f < t.size() && is_digit(t[f])) ++f;
    if (f > k + 1) end = f;
  }
  if (k == 0 || end > 12) return std::nullopt;
  double v = 0;
  const auto res = std::from_chars(t.data(), t.data() + end, v);
  if (res.ec != std::errc() || res.ptr != t.data() + end) return std::nullopt;
  std::string_view rest = t.substr(end);
  while (!rest.empty() && is_space(rest.front())) rest.remove_prefix(1);
  if (!rest.empty() && rest.front() == 'x') {
    rest.remove_prefix(1);
    while (!rest.empty() && is_space(rest.front())) rest.remove_prefix(1);
  }
  return std::make_pair(v, rest);
}

}  // namespace

Item classify_item(std::string_view text, Nucleus nucleus) {
  Item item;
  std::string_view t = trim(text);
  if (t.empty()) {
    item.kind = ItemKind::Empty;
    return item;
  }
  // "each 1H" / "1H each": one description for several shifts.
  std::string_view core = t;
  if (core.size() > 5 && iequals(core.substr(core.size() - 5), " each")) {
    core = trim(core.substr(0, core.size() - 5));
    item.each = true;
  } else if (core.size() > 5 && iequals(core.substr(0, 5), "each ")) {
    core = trim(core.substr(5));
    item.each = true;
  }
  const char count_letter = nucleus == Nucleus::C13 ? 'C' : 'H';
  if (auto lc = leading_count(core)) {
    const auto [count, rest] = *lc;
    if (rest.size() == 1 && rest[0] == count_letter) {
      item.kind = ItemKind::Integral;
      item.integral = count;
      return item;
    }
    if (nucleus == Nucleus::C13 && !item.each) {
      if (auto a = attached_form(rest); a && rest != "C") {
        item.kind = ItemKind::AttachedH;
        item.integral = count;
        item.attached_h = *a;
        return item;
      }
    }
    if (!item.each && (iequals(rest, "Hz"))) {
      item.kind = ItemKind::Coupling;
      item.j_hz = count;
      return item;
    }
    if (!item.each && rest.empty() && core.find('x') == std::string_view::npos) {
      item.kind = ItemKind::BareNumber;
      return item;
    }
  }
  if (item.each) {
    item.kind = ItemKind::Assignment;
    item.each = false;
    return item;
  }
  // "x2", "x 2": a count after the sign.
  if (core.size() >= 2 && core[0] == 'x') {
    std::string_view rest = trim(core.substr(1));
    std::size_t k = 0;
    while (k < rest.size() && is_digit(rest[k])) ++k;
    double v = 0;
    if (k > 0 && k == rest.size() && k <= 4 && std::from_chars(rest.data(), rest.data() + k, v).ec == std::errc()) {
      item.kind = ItemKind::Integral;
      item.integral = v;
      return item;
    }
  }
  if (nucleus == Nucleus::C13) {
    if (auto a = attached_form(core)) {
      item.kind = ItemKind::AttachedH;
      item.attached_h = *a;
      return item;
    }
  }
  if (auto m = normalize_multiplicity(core)) {
    item.kind = ItemKind::Multiplicity;
    item.multiplicity = *m;
    return item;
  }
  item.kind = ItemKind::Assignment;
  return item;
}

}  // namespace nmrpred::matching::detail
