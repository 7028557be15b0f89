#ifndef NMRPRED_SHIFTS_FIXED_TEXT_HPP
#define NMRPRED_SHIFTS_FIXED_TEXT_HPP

// Fixed-point text of a double as fmt's "{:.1f}" / "{:.2f}" writes it, by
// exact integer arithmetic: method texts hold values for every predicted
// atom, and this costs a tenth of std::to_chars.

#include <cstdint>
#include <cstring>
#include <string>

namespace nmrpred::detail {

// |v| * scale (scale 10 or 100) rounded to a whole number as fmt rounds the
// exact binary value, ties to even; false when |v| >= 2^52, infinite or not
// a number (the caller leaves those to the formatter). For |v| < 2^52,
// v = m * 2^-shift with m below 2^53, so scale * m stays below 2^60 and the
// rounding is a shift and the bits it drops.
inline bool scaled_magnitude(double v, unsigned scale, std::uint64_t &out) {
  std::uint64_t bits = 0;
  std::memcpy(&bits, &v, sizeof bits);
  const auto biased = static_cast<int>(bits >> 52 & 0x7FF);
  std::uint64_t m = bits & ((std::uint64_t{1} << 52) - 1);
  if (biased != 0) m |= std::uint64_t{1} << 52;
  const int shift = biased != 0 ? 1075 - biased : 1074;
  if (shift <= 0) return false;
  out = 0;  // |v| < 2^-11 when shift >= 64: rounds to 0
  if (shift < 64) {
    const std::uint64_t x = m * scale;
    out = x >> shift;
    const std::uint64_t dropped = x & ((std::uint64_t{1} << shift) - 1), half = std::uint64_t{1} << (shift - 1);
    if (dropped > half || (dropped == half && (out & 1) != 0)) ++out;
  }
  return true;
}

// Writes `sign` (may be 0: none) and scaled / 10^decimals with `decimals`
// (1 or 2) digits after the point at p, at most 23 characters; returns the
// end. The digits are counted first and written in place, back to front.
inline char *put_scaled(char *p, char sign, std::uint64_t scaled, int decimals) {
  if (sign) *p++ = sign;
  int digits = 1;
  for (std::uint64_t whole = decimals == 1 ? scaled / 10 : scaled / 100; whole >= 10; whole /= 10) ++digits;
  char *const end = p + digits + 1 + decimals;
  char *q = end;
  for (int d = 0; d < decimals; ++d, scaled /= 10) *--q = static_cast<char>('0' + scaled % 10);
  *--q = '.';
  for (;; scaled /= 10) {
    *--q = static_cast<char>('0' + scaled % 10);
    if (scaled < 10) break;
  }
  return end;
}

// The same appended to `out`.
inline void append_scaled(std::string &out, char sign, std::uint64_t scaled, int decimals) {
  char buf[24];
  out.append(buf, put_scaled(buf, sign, scaled, decimals));
}

}  // namespace nmrpred::detail

#endif
