// Entry points of measured peak lists: format dispatch, writing a list in the
// trade's prose style, and predictions as peak lists.

#include <algorithm>
#include <cmath>
#include <string>

#include <fmt/format.h>

#include <nmrpred/error.hpp>
#include <nmrpred/measured.hpp>

#include "matching/measured_scan.hpp"

namespace nmrpred {

namespace {

using matching::detail::classify_item;
using matching::detail::ItemKind;

bool valid_nucleus(Nucleus n) { return n == Nucleus::H1 || n == Nucleus::C13; }

[[noreturn]] void unwritable(const std::string &what) {
  throw InputError(fmt::format("cannot write the peak list: {}", what));
}

// Fixed decimals without "-0.00".
std::string fixed(double v, int decimals) {
  std::string s = fmt::format("{:.{}f}", v, decimals);
  if (s.find_first_not_of("-0.") == std::string::npos && s[0] == '-') s.erase(0, 1);
  return s;
}

// Up to `decimals` decimals, trailing zeros dropped: 400 -> "400", 100.60 -> "100.6".
std::string compact(double v, int decimals) {
  std::string s = fixed(v, decimals);
  if (s.find('.') != std::string::npos) {
    while (s.back() == '0') s.pop_back();
    if (s.back() == '.') s.pop_back();
  }
  return s;
}

void check_finite(double v, const char *what) {
  if (!std::isfinite(v)) unwritable(fmt::format("the {} is not a finite number", what));
}

// Splits an assignment into the items the reader would see.
std::vector<std::string_view> assignment_items(std::string_view a) {
  std::vector<std::string_view> items;
  int depth = 0;
  std::size_t b = 0;
  for (std::size_t i = 0; i <= a.size(); ++i) {
    const char c = i < a.size() ? a[i] : ',';
    if (c == '(') ++depth;
    if (c == ')') --depth;
    if (depth < 0) unwritable(fmt::format("the assignment '{}' has a ')' without '('", a));
    if ((c == ',' || c == ';') && depth == 0) {
      items.push_back(a.substr(b, i - b));
      b = i + 1;
    }
  }
  if (depth != 0) unwritable(fmt::format("the assignment '{}' has a '(' without ')'", a));
  return items;
}

std::string format_peak(const MeasuredPeak &p, Nucleus nucleus, bool strict) {
  const int decimals = nucleus == Nucleus::H1 ? 2 : 1;
  check_finite(p.ppm, "chemical shift");
  check_finite(p.ppm_low, "low end of the range");
  check_finite(p.ppm_high, "high end of the range");
  std::string out;
  const std::string lo = fixed(p.ppm_low, decimals), hi = fixed(p.ppm_high, decimals);
  if (p.ppm_low != p.ppm_high && lo != hi) {
    // High end first, as lists run downfield to upfield; an en dash, so that
    // a negative end reads unambiguously.
    out = hi + "\u2013" + lo;
  } else {
    out = fixed(p.ppm, decimals);
  }
  std::vector<std::string> items;
  if (!p.multiplicity.empty()) {
    if (strict) {
      const auto m = matching::detail::normalize_multiplicity(p.multiplicity);
      if (!m || *m != p.multiplicity)
        unwritable(fmt::format("'{}' is not a multiplicity the reader accepts as written", p.multiplicity));
    }
    items.push_back(p.multiplicity);
  }
  const std::string observed = nucleus == Nucleus::C13 ? "C" : "H";
  for (std::size_t k = 0; k < p.j_hz.size();) {
    const std::string partner = k < p.j_partner.size() ? p.j_partner[k] : std::string();
    std::string values;
    std::size_t m = k;
    for (; m < p.j_hz.size() && (m < p.j_partner.size() ? p.j_partner[m] : std::string()) == partner; ++m) {
      check_finite(p.j_hz[m], "coupling constant");
      if (m > k) values += ", ";
      values += fixed(p.j_hz[m], 1);
    }
    std::string label = "J";
    if (!partner.empty()) label += partner.find(',') != std::string::npos ? "(" + partner + ")"
                                                                         : "(" + observed + "," + partner + ")";
    items.push_back(label + " = " + values + " Hz");
    k = m;
  }
  if (p.integral) {
    check_finite(*p.integral, "integral");
    items.push_back(compact(*p.integral, 2) + (nucleus == Nucleus::C13 ? "C" : "H"));
  }
  if (p.attached_h && nucleus == Nucleus::C13) {
    const int h = *p.attached_h;
    if (h < 0 || h > matching::detail::kMaxAttachedH) {
      if (strict) unwritable(fmt::format("{} attached protons", h));
    } else {
      items.push_back(h == 0 ? std::string("C") : h == 1 ? std::string("CH") : "CH" + std::to_string(h));
    }
  }
  if (!p.assignment.empty()) {
    if (strict) {
      for (const auto item : assignment_items(p.assignment)) {
        // Read back the way the reader sees it: typographic characters made plain.
        const std::string plain = matching::detail::normalize(item).s;
        const auto t = matching::detail::trim(plain);
        const bool coupling_like = !t.empty() && (t[0] == 'J' || (t.size() > 1 && t[1] == 'J'));
        if (t.empty() || classify_item(t, nucleus).kind != ItemKind::Assignment || coupling_like ||
            t.find('\n') != std::string_view::npos)
          unwritable(fmt::format("the assignment '{}' would read back as something else", p.assignment));
      }
    }
    items.push_back(p.assignment);
  }
  if (!items.empty()) {
    out += " (";
    for (std::size_t k = 0; k < items.size(); ++k) out += (k ? ", " : "") + items[k];
    out += ")";
  }
  return out;
}

}  // namespace

std::vector<MeasuredSpectrum> parse_measured(std::string_view text, MeasuredFormat format,
                                             std::optional<Nucleus> default_nucleus) {
  using namespace matching::detail;
  if (default_nucleus && !valid_nucleus(*default_nucleus))
    throw ArgumentError(fmt::format("default_nucleus {} is not 1H or 13C", static_cast<int>(*default_nucleus)));
  if (format == MeasuredFormat::Auto) {
    std::size_t i = 0;
    if (text.substr(0, 3) == "\xEF\xBB\xBF") i = 3;
    while (i < text.size() && (text[i] == ' ' || text[i] == '\t' || text[i] == '\n' || text[i] == '\r')) ++i;
    if (i < text.size() && (text[i] == '{' || text[i] == '[')) {
      format = MeasuredFormat::Json;
    } else {
      check_text(text);
      const Source src = normalize(text);
      return looks_like_csv(src) ? parse_csv(src, default_nucleus) : parse_text(src, default_nucleus);
    }
  }
  switch (format) {
    case MeasuredFormat::Json:
      return parse_json(text, default_nucleus);
    case MeasuredFormat::Csv:
      check_text(text);
      return parse_csv(normalize(text), default_nucleus);
    case MeasuredFormat::Text:
      check_text(text);
      return parse_text(normalize(text), default_nucleus);
    case MeasuredFormat::Auto:
      break;
  }
  throw ArgumentError(fmt::format("unknown measured-data format {}", static_cast<int>(format)));
}

std::string format_measured(const MeasuredSpectrum &spectrum) {
  if (!valid_nucleus(spectrum.nucleus))
    unwritable(fmt::format("nucleus {} is not 1H or 13C", static_cast<int>(spectrum.nucleus)));
  std::string out = matching::detail::nucleus_label(spectrum.nucleus);
  out += " NMR";
  std::vector<std::string> head;
  if (spectrum.mhz) {
    if (!(*spectrum.mhz > 0) || !std::isfinite(*spectrum.mhz)) unwritable("the field is not a positive number");
    head.push_back(compact(*spectrum.mhz, 2) + " MHz");
  }
  if (!spectrum.solvent.empty()) {
    const std::string lw = matching::detail::to_lower(spectrum.solvent);
    if (spectrum.solvent.find_first_of(",;()\n\r") != std::string::npos || lw.find("mhz") != std::string::npos ||
        lw.find("tms") != std::string::npos)
      unwritable(fmt::format("the solvent '{}' would read back as something else", spectrum.solvent));
    head.push_back(spectrum.solvent);
  }
  if (!head.empty()) {
    out += " (";
    for (std::size_t k = 0; k < head.size(); ++k) out += (k ? ", " : "") + head[k];
    out += ")";
  }
  if (spectrum.peaks.empty()) return out + ": no peaks.";
  out += " \u03B4 ";
  for (std::size_t k = 0; k < spectrum.peaks.size(); ++k) {
    if (k) out += ", ";
    out += format_peak(spectrum.peaks[k], spectrum.nucleus, true);
  }
  out += ".";
  return out;
}

MeasuredSpectrum as_measured(const Prediction &prediction, Nucleus nucleus, std::optional<double> mhz) {
  MeasuredSpectrum sp;
  sp.nucleus = nucleus;
  sp.mhz = mhz;
  sp.solvent = prediction.solvent.name;
  // Signals of different classes that would be written alike (same shift,
  // multiplicity and J values at the written precision, and for 13C the same
  // attached-H count) are one peak in a spectrum, and a chemist writes them
  // once with the summed integral: two diastereotopic OCH2 protons predicted
  // at one shift read "4.15 (q, J = 7.0 Hz, 2H)", not two 1H entries.
  std::vector<std::string> keys;  // per peak: its written form without the integral, empty if unwritable
  std::vector<double> counts;     // per peak: atoms it stands for
  for (const auto &s : prediction.signals(nucleus)) {
    MeasuredPeak p;
    p.ppm = p.ppm_low = p.ppm_high = s.ppm;
    p.multiplicity = s.multiplicity;
    p.j_hz = s.j_hz;
    p.j_partner.assign(p.j_hz.size(), std::string());
    if (nucleus == Nucleus::C13) p.attached_h = s.attached_h;
    std::string key;
    try {
      key = format_peak(p, nucleus, false);
    } catch (const InputError &) {
      // A non-finite predicted value has no written form; the peak keeps its numbers.
    }
    const auto same = key.empty() ? keys.end() : std::find(keys.begin(), keys.end(), key);
    const std::size_t at = same == keys.end() ? sp.peaks.size() : static_cast<std::size_t>(same - keys.begin());
    if (same == keys.end()) {
      sp.peaks.push_back(std::move(p));
      keys.push_back(std::move(key));
      counts.push_back(0);
    }
    counts[at] += static_cast<double>(s.count);
    MeasuredPeak &peak = sp.peaks[at];
    if (nucleus == Nucleus::H1 || counts[at] > 1) peak.integral = counts[at];
    if (!keys[at].empty()) peak.text = format_peak(peak, nucleus, false);
  }
  return sp;
}

}  // namespace nmrpred
