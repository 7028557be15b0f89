#ifndef NMRPRED_SRC_MATCHING_MEASURED_SCAN_HPP
#define NMRPRED_SRC_MATCHING_MEASURED_SCAN_HPP

// Shared pieces of the measured peak-list readers (measured_text.cpp,
// measured_table.cpp) and writer (measured.cpp): the typographic clean-up
// that keeps a map back to the caller's bytes, error messages with byte
// offset, line and column, number scanning, and the multiplicity vocabulary.

#include <cstddef>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include <nmrpred/measured.hpp>

namespace nmrpred::matching::detail {

// The input with typographic characters made plain ASCII (non-breaking and
// other Unicode spaces -> ' ', dashes and the minus sign -> '-', δ -> "delta",
// × -> 'x', super- and subscript digits -> digits, ° -> 'o', zero-width
// characters dropped, CR and CRLF -> '\n'). Every byte of `s` knows the byte
// of `original` it came from, so messages point into the caller's text.
struct Source {
  std::string_view original;
  std::string s;
  std::vector<std::size_t> at;      // at[i]: offset in original of s[i]; at[s.size()] == original.size()
  std::vector<unsigned char> typo;  // 1 where s[i] came from a non-ASCII character
  bool plain_digit(std::size_t i) const { return i < s.size() && s[i] >= '0' && s[i] <= '9' && !typo[i]; }
  char at_or_nul(std::size_t i) const { return i < s.size() ? s[i] : '\0'; }
};

Source normalize(std::string_view text);

// Fails on bytes that are not UTF-8 and on control characters other than
// tab, line feed, carriage return, vertical tab and form feed: the peak text
// of a result must be printable and decodable by every binding.
void check_text(std::string_view text);

// Throws InputError: "<what> at line L, column C (byte B); found <token>".
// `byte` is an offset into `original`; columns count UTF-8 characters.
[[noreturn]] void fail_at_byte(std::string_view original, std::size_t byte, const std::string &what);
// Same, for an offset into Source::s.
[[noreturn]] void fail(const Source &src, std::size_t i, const std::string &what);
// "line L, column C" of a byte offset, for messages that refer back.
std::string where(std::string_view original, std::size_t byte);

inline bool is_space(char c) { return c == ' ' || c == '\t'; }
inline bool is_alpha(char c) { return (c >= 'a' && c <= 'z') || (c >= 'A' && c <= 'Z'); }
inline bool is_digit(char c) { return c >= '0' && c <= '9'; }
inline char lower(char c) { return (c >= 'A' && c <= 'Z') ? static_cast<char>(c - 'A' + 'a') : c; }
std::string to_lower(std::string_view s);
std::string_view trim(std::string_view s);
// Case-insensitive comparison of ASCII text.
bool iequals(std::string_view a, std::string_view b);
// True when s[i..] starts with `word` (case-insensitive) and no letter follows.
bool word_at(const Source &src, std::size_t i, std::string_view word);

// A number as the trade writes it: optional sign (when allowed), plain ASCII
// digits, optional '.' and digits. No exponent, no leading '.', no digits
// that were super- or subscripts.
struct Number {
  double value = 0;
  std::size_t end = 0;   // index in Source::s just after the number
  bool fraction = false; // a decimal point was written
};
std::optional<Number> scan_number(const Source &src, std::size_t i, bool allow_sign);
// Fails with a clear message when the number ending at `num.end` continues
// with a decimal comma ("7,31"), which this reader does not accept because
// the comma also separates peaks.
void reject_decimal_comma(const Source &src, std::size_t start, const Number &num);

// The trade's multiplicity in normalised letters ("dd", "br s", "app t",
// "p", "2 x d", "ABq"), or nothing if `text` is not one.
std::optional<std::string> normalize_multiplicity(std::string_view text);

// A nucleus label such as "1H", "13C", "¹³C" (already normalised) as a
// Nucleus; nothing for other text. `label_out` receives the mass number and
// element as written when the label has that shape ("19F"), so callers can
// say which unsupported nucleus they met.
std::optional<Nucleus> nucleus_from_label(std::string_view text, std::string *label_out = nullptr);

// "1H" or "13C".
const char *nucleus_label(Nucleus n);

// Plausible values: outside them the text almost surely says something else
// (a 13C list read as 1H, a field taken for a shift). Common practice: 1H
// shifts of diamagnetic compounds lie within about -5..20 ppm and 13C within
// about -10..240 ppm; the windows are wider to admit hydrides and
// paramagnetic samples.
bool plausible_shift(Nucleus n, double ppm);
void check_shift(const Source &src, std::size_t i, Nucleus n, double ppm);
void check_shift_at_byte(std::string_view original, std::size_t byte, Nucleus n, double ppm);
inline constexpr double kMaxAbsJHz = 1000;      // common practice: 1J(P,H) reaches about 700 Hz
inline constexpr double kMaxIntegral = 1000;    // far above any molecule a peak list describes
inline constexpr int kMaxAttachedH = 4;         // CH4

// Classification of one item inside a peak's parentheses, shared by the
// prose reader and by format_measured (which checks that what it writes reads
// back as the same kind of item).
enum class ItemKind { Empty, Integral, AttachedH, Multiplicity, Coupling, BareNumber, Assignment };
struct Item {
  ItemKind kind = ItemKind::Assignment;
  std::optional<double> integral;
  std::optional<int> attached_h;
  std::string multiplicity;
  double j_hz = 0;
  bool each = false;  // "1H each": the item applies to several shifts
};
Item classify_item(std::string_view text, Nucleus nucleus);

// Prose reader (measured_text.cpp).
std::vector<MeasuredSpectrum> parse_text(const Source &src, std::optional<Nucleus> default_nucleus);
// Tables (measured_table.cpp).
std::vector<MeasuredSpectrum> parse_csv(const Source &src, std::optional<Nucleus> default_nucleus);
std::vector<MeasuredSpectrum> parse_json(std::string_view text, std::optional<Nucleus> default_nucleus);
// True when the first line that is neither blank nor a '#' comment is a row
// of known column names.
bool looks_like_csv(const Source &src);

}  // namespace nmrpred::matching::detail

#endif
