// Reader of peak lists in the trade's prose style, as pasted from notebooks
// and experimental sections:
//   1H NMR (400 MHz, CDCl3) δ 7.31 (d, J = 8.5 Hz, 2H), 3.80 (s, 3H); 13C NMR ...
// A hand-written scanner over the normalised text (measured_scan.hpp), so that
// every message can point at a byte of the caller's input. The grammar is
// described in docs/measured.md. Every loop advances the cursor or stops, so
// no input can make it hang.

#include <algorithm>
#include <iterator>
#include <cmath>
#include <string>

#include <fmt/format.h>

#include "matching/measured_scan.hpp"

namespace nmrpred::matching::detail {

namespace {

// Solvents recognised when written bare in a header, outside parentheses
// ("1H NMR, CDCl3, 400 MHz: δ ..."); inside parentheses any remark that is
// not a field or temperature is taken as the solvent. Common practice:
// the usual spellings of NMR solvents.
constexpr std::string_view kBareSolvents[] = {
    "cdcl3",          "chloroform-d",   "dmso-d6",     "d6-dmso",      "dmso",        "cd3od",
    "methanol-d4",    "d4-methanol",    "d2o",         "acetone-d6",   "d6-acetone",  "c6d6",
    "benzene-d6",     "d6-benzene",     "cd3cn",       "acetonitrile-d3", "cd2cl2",   "dichloromethane-d2",
    "thf-d8",         "d8-thf",         "toluene-d8",  "d8-toluene",   "pyridine-d5", "c5d5n",
    "dmf-d7",         "tfa-d",          "cf3cood",     "cd3cooh",      "cd3cood",     "acetic acid-d4",
    "nitromethane-d3", "cd3no2",        "1,2-dichlorobenzene-d4", "cdcl2cdcl2",
};

bool is_bare_solvent(std::string_view word) {
  // "CDCl3/CD3OD", "CDCl3+CD3OD": mixtures of known solvents.
  const std::string lw = to_lower(word);
  std::size_t b = 0;
  bool any = false;
  while (b <= lw.size()) {
    std::size_t e = lw.find_first_of("/+", b);
    if (e == std::string::npos) e = lw.size();
    const std::string_view part = std::string_view(lw).substr(b, e - b);
    if (std::find(std::begin(kBareSolvents), std::end(kBareSolvents), part) == std::end(kBareSolvents)) return false;
    any = true;
    b = e + 1;
  }
  return any;
}

// Element symbols a coupling label may name (the nuclei with a spin that peak
// lists report couplings to). Letters outside this list ("JAB") name protons
// of a spin system, not a heteronucleus.
constexpr std::string_view kCouplingElements[] = {
    "H", "D", "C", "N", "F", "P", "Si", "B", "Se", "Sn", "Pt", "Rh",
    "W", "Hg", "Cd", "Tl", "Pb", "Li", "Y", "Ag", "Te", "Xe", "Al", "Cs",
};

bool is_coupling_element(std::string_view e) {
  return std::find(std::begin(kCouplingElements), std::end(kCouplingElements), e) != std::end(kCouplingElements);
}

struct NucleusToken {
  std::size_t end = 0;
  std::optional<Nucleus> nucleus;
  std::string label;
};

struct MarkerToken {
  std::size_t end = 0;
  std::optional<Nucleus> hint;  // δH, δC
};

enum class ListEnd { End, Next };

class TextReader {
 public:
  TextReader(const Source &src, std::optional<Nucleus> default_nucleus)
      : src_(src), s_(src.s), n_(src.s.size()), default_(default_nucleus) {}

  std::vector<MeasuredSpectrum> run() {
    skip_blank();
    if (i_ >= n_)
      fail(src_, i_, "expected a peak list such as '1H NMR (400 MHz, CDCl3) δ 7.26 (s, 1H)'");
    std::vector<MeasuredSpectrum> out;
    for (bool first = true;; first = false) {
      MeasuredSpectrum sp;
      parse_header(sp, first);
      const ListEnd end = parse_list(sp);
      out.push_back(std::move(sp));
      if (end == ListEnd::End) break;
    }
    return out;
  }

 private:
  const Source &src_;
  const std::string &s_;
  const std::size_t n_;
  std::optional<Nucleus> default_;
  std::size_t i_ = 0;

  char ch(std::size_t k) const { return k < n_ ? s_[k] : '\0'; }
  bool alnum(std::size_t k) const { return k < n_ && (is_alpha(s_[k]) || is_digit(s_[k])); }

  std::size_t spaces_from(std::size_t k) const {
    while (k < n_ && is_space(s_[k])) ++k;
    return k;
  }
  // Inside a peak a line break is a space: PDFs break lines anywhere.
  std::size_t blank_from(std::size_t k) const {
    while (k < n_ && (is_space(s_[k]) || s_[k] == '\n')) ++k;
    return k;
  }
  // Skips spaces and line breaks; returns how many characters it skipped.
  std::size_t skip_blank() {
    const std::size_t from = i_;
    while (i_ < n_ && (is_space(s_[i_]) || s_[i_] == '\n')) ++i_;
    return i_ - from;
  }

  bool peak_start(std::size_t k) const {
    return src_.plain_digit(k) || ((ch(k) == '-' || ch(k) == '+') && src_.plain_digit(k + 1));
  }

  // "1H NMR", "¹H-NMR", "13C{1H} NMR", "13C NMR spectrum"; also other nuclei
  // ("19F NMR"), which the caller refuses by name.
  std::optional<NucleusToken> nucleus_token(std::size_t k) const {
    if (k > 0 && alnum(k - 1)) return std::nullopt;
    std::size_t j = k;
    while (j < n_ && is_digit(s_[j]) && j - k < 3) ++j;
    if (j == k || !(ch(j) >= 'A' && ch(j) <= 'Z')) return std::nullopt;
    ++j;
    if (ch(j) >= 'a' && ch(j) <= 'z') ++j;
    NucleusToken t;
    t.label = s_.substr(k, j - k);
    bool decoupled = false;
    if (ch(j) == '{' || (ch(j) == '-' && ch(j + 1) == '{')) {
      const std::size_t open = ch(j) == '{' ? j : j + 1;
      // Bounded searches keep a text full of '{' or '(' linear to read.
      const std::size_t close = s_.substr(open, 13).find('}');
      if (close == std::string::npos) return std::nullopt;
      j = open + close + 1;
      decoupled = true;
    }
    std::size_t m = spaces_from(j);
    if (ch(m) == '-') m = spaces_from(m + 1);
    if (word_at(src_, m, "NMR")) {
      j = m + 3;
    } else if (!decoupled) {
      return std::nullopt;
    }
    if (word_at(src_, spaces_from(j), "spectrum")) j = spaces_from(j) + 8;
    if (alnum(j)) return std::nullopt;
    t.end = j;
    t.nucleus = nucleus_from_label(t.label);
    return t;
  }

  // "δ", "δH", "δC", "delta", and "d" (what δ becomes when a Symbol-font δ
  // is pasted as text), with an optional "/ppm", "in ppm" or "ppm" after it.
  std::optional<MarkerToken> marker_token(std::size_t k) const {
    if (k > 0 && alnum(k - 1)) return std::nullopt;
    std::size_t j;
    if (k + 5 <= n_ && iequals(std::string_view(s_).substr(k, 5), "delta")) {
      j = k + 5;
    } else if (ch(k) == 'd') {
      j = k + 1;
    } else {
      return std::nullopt;
    }
    MarkerToken t;
    if ((ch(j) == 'H' || ch(j) == 'C') && !is_alpha(ch(j + 1))) {
      t.hint = ch(j) == 'H' ? Nucleus::H1 : Nucleus::C13;
      ++j;
    }
    if (is_alpha(ch(j)) || is_digit(ch(j)) || ch(j) == '-' || ch(j) == '.') return std::nullopt;
    // The ASCII "d" stands for δ only where δ would stand: before a space,
    // '(', ':', '=' or '/' (so "d6-DMSO" is not taken for it).
    if (s_[k] == 'd' && !(k + 5 <= n_ && iequals(std::string_view(s_).substr(k, 5), "delta"))) {
      const char c = ch(j);
      if (!(is_space(c) || c == '(' || c == ':' || c == '=' || c == '/' || c == '\n')) return std::nullopt;
    }
    std::size_t m = spaces_from(j);
    if (ch(m) == '/') {
      m = spaces_from(m + 1);
      if (word_at(src_, m, "ppm")) j = m + 3;
    } else if (word_at(src_, m, "in") && word_at(src_, spaces_from(m + 2), "ppm")) {
      j = spaces_from(m + 2) + 3;
    } else if (word_at(src_, m, "ppm")) {
      j = m + 3;
    }
    t.end = j;
    return t;
  }

  bool header_ahead(std::size_t k) const {
    if (nucleus_token(k)) return true;
    const auto m = marker_token(k);
    return m && m->hint;
  }

  // ------------------------------------------------------------------ header

  struct HeaderState {
    std::optional<Nucleus> from_header;
    std::optional<Nucleus> from_marker;
    std::size_t marker_pos = 0;
    bool marker = false;
    bool anything = false;
  };

  void set_field(MeasuredSpectrum &sp, std::size_t pos, double mhz) {
    if (sp.mhz) fail(src_, pos, "expected one field per spectrum, found a second");
    if (!(mhz > 0) || mhz > 10000) fail(src_, pos, "expected a field between 0 and 10000 MHz");
    sp.mhz = mhz;
  }

  void set_header_nucleus(HeaderState &h, std::size_t pos, Nucleus nucleus) {
    if (h.from_header && *h.from_header != nucleus)
      fail(src_, pos, fmt::format("expected one nucleus per spectrum; the header already said {}",
                                  nucleus_label(*h.from_header)));
    h.from_header = nucleus;
  }

  void parse_header(MeasuredSpectrum &sp, bool first) {
    const std::size_t block_start = i_;
    HeaderState h;
    for (;;) {
      skip_blank();
      if (i_ >= n_) break;
      if (auto t = nucleus_token(i_)) {
        if (!t->nucleus)
          fail(src_, i_, fmt::format("expected a 1H or 13C peak list; {} NMR is not read", t->label));
        if (h.anything)
          fail(src_, i_, "expected the peaks of the header before another nucleus header");
        set_header_nucleus(h, i_, *t->nucleus);
        h.anything = true;
        i_ = t->end;
        continue;
      }
      const char c = s_[i_];
      if (c == '(') {
        parse_header_group(sp, h);
        h.anything = true;
        continue;
      }
      if (auto m = marker_token(i_)) {
        if (h.marker) fail(src_, i_, "expected a chemical shift after the 'δ'");
        h.marker = true;
        h.from_marker = m->hint;
        h.marker_pos = i_;
        h.anything = true;
        i_ = m->end;
        continue;
      }
      if (c == ':' || c == '=' || c == ',' || c == ';') {
        ++i_;
        continue;
      }
      if (peak_start(i_)) {
        const auto num = scan_number(src_, i_, true);
        const std::size_t j = spaces_from(num->end);
        if (word_at(src_, j, "MHz")) {
          set_field(sp, i_, num->value);
          i_ = j + 3;
          h.anything = true;
          continue;
        }
        if (word_at(src_, j, "K") || word_at(src_, j, "oC")) {
          i_ = j + (s_[j] == 'K' ? 1 : 2);
          continue;
        }
        break;  // the first peak
      }
      // A bare word: a solvent, or a word that carries nothing.
      std::size_t e = i_;
      while (e < n_ && !is_space(s_[e]) && s_[e] != '\n' && s_[e] != ',' && s_[e] != ';' && s_[e] != ':' &&
             s_[e] != '(' && s_[e] != ')' && s_[e] != '=')
        ++e;
      const std::string word = s_.substr(i_, e - i_);
      const std::string lw = to_lower(word);
      if (lw == "in" || lw == "ppm" || lw == "nmr" || lw == "spectrum" || lw == "data") {
        i_ = e;
        continue;
      }
      if (e > i_ && is_bare_solvent(word)) {
        if (!sp.solvent.empty()) fail(src_, i_, "expected one solvent per spectrum, found a second");
        sp.solvent = word;
        h.anything = true;
        i_ = e;
        continue;
      }
      fail(src_, i_,
           h.anything ? "expected the field ('400 MHz'), the solvent, 'δ' or a chemical shift"
                      : "expected a nucleus header ('1H NMR', '13C NMR'), 'δ' or a chemical shift");
    }
    if (h.from_header && h.from_marker && *h.from_header != *h.from_marker)
      fail(src_, h.marker_pos,
           fmt::format("expected 'δ' or 'δ{}' after a {} NMR header", *h.from_header == Nucleus::H1 ? "H" : "C",
                       nucleus_label(*h.from_header)));
    if (h.from_header) {
      sp.nucleus = *h.from_header;
    } else if (h.from_marker) {
      sp.nucleus = *h.from_marker;
    } else if (first && default_) {
      sp.nucleus = *default_;
    } else {
      fail(src_, block_start,
           "expected a nucleus header ('1H NMR', '13C NMR') or 'δH'/'δC' before the peaks (or a default "
           "nucleus from the caller)");
    }
  }

  // Moves to the end of one item inside parentheses: the next ',' or ';' or
  // the closing ')' at this depth (nested parentheses belong to the item), or
  // the end of the text.
  void skip_item() {
    int depth = 0;
    for (; i_ < n_; ++i_) {
      const char c = s_[i_];
      if (c == '(') {
        ++depth;
      } else if (c == ')') {
        if (depth == 0) return;
        --depth;
      } else if ((c == ',' || c == ';') && depth == 0) {
        return;
      }
    }
  }

  // "(400 MHz, CDCl3)", "(CDCl3, 101 MHz, 298 K)", "(ppm)".
  void parse_header_group(MeasuredSpectrum &sp, HeaderState &h) {
    const std::size_t open = i_;
    ++i_;
    for (;;) {
      skip_blank();
      const std::size_t item = i_;
      skip_item();
      if (i_ >= n_)
        fail(src_, i_, fmt::format("expected ')' to close the '(' of {}", where(src_.original, src_.at[open])));
      header_item(sp, h, item, trim(std::string_view(s_).substr(item, i_ - item)));
      if (s_[i_] == ')') {
        ++i_;
        return;
      }
      ++i_;
    }
  }

  void header_item(MeasuredSpectrum &sp, HeaderState &h, std::size_t pos, std::string_view item) {
    if (item.empty()) fail(src_, pos, "expected the field ('400 MHz'), the solvent or the temperature");
    if (peak_start(pos)) {
      const auto num = scan_number(src_, pos, true);
      const std::size_t j = spaces_from(num->end);
      const std::string_view rest = trim(item.substr(std::min(num->end - pos, item.size())));
      if (iequals(rest, "MHz")) {
        set_field(sp, pos, num->value);
        return;
      }
      if (iequals(rest, "K") || iequals(rest, "oC")) return;
      if (rest.size() > 3 && iequals(rest.substr(0, 3), "MHz"))
        fail(src_, spaces_from(j + 3), "expected ',' or ')' after the field");
      // "25 mM", "0.03% TMS": a remark about the sample. No solvent name
      // starts with a number followed by a space.
      if (is_space(ch(num->end))) return;
    }
    const std::string lw = to_lower(item);
    std::string label;
    if (auto nuc = nucleus_from_label(item, &label)) {
      set_header_nucleus(h, pos, *nuc);
      return;
    }
    if (!label.empty()) fail(src_, pos, fmt::format("expected a 1H or 13C peak list; {} NMR is not read", label));
    if (lw == "ppm" || lw == "delta" || lw == "delta ppm" || lw == "delta/ppm" || lw == "delta in ppm" ||
        lw == "in ppm" || lw == "rt" || lw == "r.t." || lw == "room temperature" ||
        lw == "ambient temperature" || lw.find("tms") != std::string::npos || lw.rfind("ref", 0) == 0)
      return;
    if (lw.find("mhz") != std::string::npos)
      fail(src_, pos, "expected the field as a number followed by 'MHz' (for example '400 MHz')");
    if (sp.solvent.empty()) {
      std::string_view solvent = item;
      if (solvent.size() > 3 && iequals(solvent.substr(0, 3), "in ")) solvent = trim(solvent.substr(3));
      sp.solvent = std::string(solvent);
    }
    // Further remarks ("25 mM", "rotamers") describe the sample, not the list.
  }

  // ------------------------------------------------------------------- peaks

  ListEnd parse_list(MeasuredSpectrum &sp) {
    skip_blank();
    if (!peak_start(i_)) fail(src_, i_, "expected a chemical shift after the header");
    // Peaks written without a description, which a later "(each 1H, s)" covers.
    std::size_t bare_from = 0;
    for (;;) {
      const bool described = parse_peak(sp, bare_from);
      if (described) bare_from = sp.peaks.size();
      bool spaced = skip_blank() > 0;
      if (i_ >= n_) return ListEnd::End;
      if (word_at(src_, i_, "ppm")) {
        i_ += 3;
        spaced = skip_blank() > 0;
        if (i_ >= n_) return ListEnd::End;
      }
      const char c = s_[i_];
      if (c == ',' || c == ';') {
        ++i_;
        skip_blank();
        if (i_ >= n_) {
          if (c == ';') return ListEnd::End;
          fail(src_, i_, "expected a chemical shift after ','");
        }
        if (header_ahead(i_)) return ListEnd::Next;
        if (peak_start(i_)) continue;
        fail(src_, i_, fmt::format("expected a chemical shift after '{}'", c));
      }
      if (c == '.') {
        ++i_;
        skip_blank();
        if (i_ >= n_) return ListEnd::End;
        if (header_ahead(i_)) return ListEnd::Next;
        fail(src_, i_, "expected the end of the text or another spectrum ('13C NMR ...') after '.'");
      }
      if (spaced && word_at(src_, i_, "and")) {
        i_ += 3;
        skip_blank();
        if (peak_start(i_)) continue;
        fail(src_, i_, "expected a chemical shift after 'and'");
      }
      if (spaced && peak_start(i_)) continue;
      if (spaced && header_ahead(i_)) return ListEnd::Next;
      fail(src_, i_, "expected ',', ';' or '.' after the peak");
    }
  }

  // One peak: a shift or a range, then its descriptions in parentheses.
  // Returns whether it had a description.
  bool parse_peak(MeasuredSpectrum &sp, std::size_t bare_from) {
    const std::size_t start = i_;
    MeasuredPeak p;
    const auto a = scan_number(src_, i_, true);
    reject_decimal_comma(src_, i_, *a);
    check_shift(src_, i_, sp.nucleus, a->value);
    i_ = a->end;
    double lo = a->value, hi = a->value;
    {
      std::size_t j = blank_from(i_);
      bool range = false;
      if (ch(j) == '-') {
        range = true;
        ++j;
      } else if (j > i_ && word_at(src_, j, "to")) {
        range = true;
        j += 2;
      }
      if (range) {
        j = blank_from(j);
        if (!peak_start(j)) fail(src_, j, "expected the other end of the range");
        const auto b = scan_number(src_, j, true);
        reject_decimal_comma(src_, j, *b);
        check_shift(src_, j, sp.nucleus, b->value);
        i_ = b->end;
        lo = std::min(a->value, b->value);
        hi = std::max(a->value, b->value);
      }
    }
    p.ppm_low = lo;
    p.ppm_high = hi;
    p.ppm = lo == hi ? lo : (lo + hi) / 2;
    {
      const std::size_t j = blank_from(i_);
      if (word_at(src_, j, "ppm")) i_ = j + 3;
    }
    bool described = false, each = false;
    for (;;) {
      const std::size_t j = blank_from(i_);
      if (ch(j) != '(') break;
      i_ = j;
      parse_description(p, sp.nucleus, each);
      described = true;
    }
    p.position = src_.at[start];
    p.text = std::string(src_.original.substr(src_.at[start], src_.at[i_] - src_.at[start]));
    if (each) {
      for (std::size_t k = bare_from; k < sp.peaks.size(); ++k) {
        auto &q = sp.peaks[k];
        q.integral = p.integral;
        q.multiplicity = p.multiplicity;
        q.j_hz = p.j_hz;
        q.j_partner = p.j_partner;
        q.attached_h = p.attached_h;
        q.assignment = p.assignment;
      }
    }
    sp.peaks.push_back(std::move(p));
    return described;
  }

  [[noreturn]] void fail_unclosed(std::size_t open) {
    fail(src_, i_, fmt::format("expected ')' to close the '(' of {}", where(src_.original, src_.at[open])));
  }

  void parse_description(MeasuredPeak &p, Nucleus nucleus, bool &each) {
    const std::size_t open = i_;
    ++i_;
    bool any = false;
    for (;;) {
      skip_blank();
      if (i_ >= n_) fail_unclosed(open);
      if (s_[i_] == ')') {
        if (!any) fail(src_, i_, "expected a multiplicity, J, integral or assignment inside '()'");
        ++i_;
        return;
      }
      const std::size_t item = i_;
      if (!parse_coupling(p, nucleus)) {
        skip_item();
        if (i_ >= n_) fail_unclosed(open);
        description_item(p, nucleus, item, std::string_view(s_).substr(item, i_ - item), each);
      }
      any = true;
      skip_blank();
      if (i_ >= n_) fail_unclosed(open);
      if (s_[i_] == ',' || s_[i_] == ';') {
        const char sep = s_[i_];
        ++i_;
        skip_blank();
        if (ch(i_) == ')' || ch(i_) == ',' || ch(i_) == ';')
          fail(src_, i_, fmt::format("expected a multiplicity, J, integral or assignment after '{}'", sep));
        continue;
      }
      if (s_[i_] != ')') fail(src_, i_, "expected ',' or ')'");
    }
  }

  void description_item(MeasuredPeak &p, Nucleus nucleus, std::size_t pos, std::string_view text, bool &each) {
    const Item it = classify_item(text, nucleus);
    if (it.kind == ItemKind::Assignment && split_item(p, nucleus, pos, text, each)) return;
    auto set_integral = [&](double v) {
      if (p.integral) fail(src_, pos, "expected one integral per peak, found a second");
      if (!(v > 0) || v > kMaxIntegral) fail(src_, pos, "expected an integral above 0 and at most 1000");
      p.integral = v;
    };
    switch (it.kind) {
      case ItemKind::Empty:
        fail(src_, pos, "expected a multiplicity, J, integral or assignment");
      case ItemKind::Integral:
        set_integral(*it.integral);
        each = each || it.each;
        return;
      case ItemKind::AttachedH:
        if (p.attached_h) fail(src_, pos, "expected one attached-proton count per peak, found a second");
        p.attached_h = *it.attached_h;
        if (it.integral) set_integral(*it.integral);
        return;
      case ItemKind::Multiplicity:
        if (!p.multiplicity.empty()) fail(src_, pos, "expected one multiplicity per peak, found a second");
        p.multiplicity = it.multiplicity;
        return;
      case ItemKind::Coupling:
        if (std::abs(it.j_hz) > kMaxAbsJHz) fail(src_, pos, "expected a coupling constant within 1000 Hz");
        p.j_hz.push_back(it.j_hz);
        p.j_partner.emplace_back();
        return;
      case ItemKind::BareNumber:
        fail(src_, pos,
             nucleus == Nucleus::H1 ? "expected 'H' after the integral or 'Hz' after the coupling constant"
                                    : "expected 'C' after the carbon count or 'Hz' after the coupling constant");
      case ItemKind::Assignment: {
        // Kept as the caller wrote it ("OCH₃" stays so), trimmed.
        std::size_t b = pos, e = pos + text.size();
        while (b < e && (is_space(s_[b]) || s_[b] == '\n')) ++b;
        while (e > b && (is_space(s_[e - 1]) || s_[e - 1] == '\n')) --e;
        if (!p.assignment.empty()) p.assignment += ", ";
        p.assignment += src_.original.substr(src_.at[b], src_.at[e] - src_.at[b]);
        return;
      }
    }
  }

  // "(s 3H)", "(br s 1H)", "(3H s)": a multiplicity and an integral (or
  // attached protons) with the comma left out. Splits the item at a space
  // when both sides are such items of different kinds; otherwise the item
  // stays an assignment.
  bool split_item(MeasuredPeak &p, Nucleus nucleus, std::size_t pos, std::string_view text, bool &each) {
    auto useful = [](ItemKind k) {
      return k == ItemKind::Multiplicity || k == ItemKind::Integral || k == ItemKind::AttachedH;
    };
    for (std::size_t cut = 1; cut + 1 < text.size(); ++cut) {
      if (!is_space(text[cut])) continue;
      const std::string_view left = text.substr(0, cut), right = text.substr(cut + 1);
      const Item a = classify_item(left, nucleus), b = classify_item(right, nucleus);
      if (!useful(a.kind) || !useful(b.kind) || a.kind == b.kind || a.each || b.each) continue;
      description_item(p, nucleus, pos, left, each);
      description_item(p, nucleus, pos + cut + 1, right, each);
      return true;
    }
    return false;
  }

  // "J = 8.5, 2.1 Hz", "J 8.5", "3J = 7.0 Hz", "J1,2 = 3.5 Hz", "JHF = 47 Hz",
  // "J(H,F) = 47", "2JCF = 21.0 Hz". Returns false, consuming nothing, when
  // the item does not start like a coupling.
  bool parse_coupling(MeasuredPeak &p, Nucleus nucleus) {
    std::size_t k = i_;
    if (is_digit(ch(k)) && ch(k + 1) == 'J') ++k;  // coupling path length: 3J
    if (ch(k) != 'J') return false;
    ++k;
    if (ch(k) == '_') ++k;
    std::string first, second;  // a heteronuclear label, when written
    auto element_at = [&](std::size_t &q) -> std::string {
      if (!(ch(q) >= 'A' && ch(q) <= 'Z')) return {};
      std::size_t e = q + 1;
      if (ch(e) >= 'a' && ch(e) <= 'z') ++e;
      std::string el = s_.substr(q, e - q);
      q = e;
      return el;
    };
    bool written_sign = false;
    if (ch(k) == '(') {
      const std::size_t found = s_.substr(k, 25).find(')');
      if (found == std::string::npos) return false;
      const std::size_t close = k + found;
      // "(H,F)", "(1H,19F)", "(C-F)"; anything else in the parentheses is
      // a position label ("J(2,3)") and names no nucleus.
      std::string_view inner = std::string_view(s_).substr(k + 1, close - k - 1);
      const std::size_t cut = inner.find_first_of(",-");
      if (cut != std::string_view::npos) {
        auto strip = [](std::string_view v) {
          v = trim(v);
          while (!v.empty() && is_digit(v.front())) v.remove_prefix(1);
          return std::string(v);
        };
        const std::string a = strip(inner.substr(0, cut)), b = strip(inner.substr(cut + 1));
        if (is_coupling_element(a) && is_coupling_element(b)) {
          first = a;
          second = b;
        }
      }
      k = close + 1;
    } else if (ch(k) >= 'A' && ch(k) <= 'Z') {
      std::size_t q = k;
      const std::string a = element_at(q);
      if (ch(q) == '-' || ch(q) == ',' || ch(q) == '_') ++q;
      const std::string b = element_at(q);
      if (b.empty() || is_alpha(ch(q))) return false;
      if (is_coupling_element(a) && is_coupling_element(b)) {
        first = a;
        second = b;
      }
      k = q;
    }
    // A position index ("J1", "J2,3", "J1-2") counts only when '=' or ':'
    // follows; otherwise the digits are the value ("J8.5" is not written,
    // but "J 8.5" is).
    if (is_digit(ch(k))) {
      std::size_t q = k;
      while (is_digit(ch(q))) ++q;
      while ((ch(q) == ',' || ch(q) == '-') && is_digit(ch(q + 1))) {
        ++q;
        while (is_digit(ch(q))) ++q;
      }
      const std::size_t r = spaces_from(q);
      if (ch(r) == '=' || ch(r) == ':') k = q;
    }
    k = blank_from(k);
    if (ch(k) == '=' || ch(k) == ':' || ch(k) == '~') {
      written_sign = true;
      k = blank_from(k + 1);
    }
    if (!peak_start(k)) {
      if (!written_sign && first.empty()) return false;  // "J-resolved", "Jones": an assignment
      fail(src_, k, "expected a coupling constant in Hz after 'J ='");
    }
    std::string partner;
    if (!first.empty() && first != second) {
      const std::string observed = nucleus == Nucleus::C13 ? "C" : "H";
      if (first == observed) partner = second;
      else if (second == observed) partner = first;
      else partner = first + "," + second;
    }
    for (;;) {
      const std::size_t vpos = k;
      const auto v = scan_number(src_, k, true);
      reject_decimal_comma(src_, k, *v);
      if (std::abs(v->value) > kMaxAbsJHz) fail(src_, vpos, "expected a coupling constant within 1000 Hz");
      p.j_hz.push_back(v->value);
      p.j_partner.push_back(partner);
      k = blank_from(v->end);
      if (word_at(src_, k, "Hz")) k += 2;
      std::size_t m = blank_from(k);
      if (ch(m) == ',' || ch(m) == '/' || ch(m) == '&') {
        ++m;
      } else if (word_at(src_, m, "and")) {
        m += 3;
      } else {
        break;
      }
      while (m < n_ && (is_space(s_[m]) || s_[m] == '\n')) ++m;
      if (!peak_start(m) || !continues_couplings(m)) break;
      k = m;
    }
    i_ = k;
    return true;
  }

  // After "J = 8.5," a number is another coupling constant unless it is an
  // integral or a count ("2H", "2 x"): it must be followed by "Hz", a
  // separator or the closing parenthesis.
  bool continues_couplings(std::size_t m) const {
    const auto v = scan_number(src_, m, true);
    const std::size_t e = blank_from(v->end);
    const char c = ch(e);
    return e >= n_ || c == ',' || c == ')' || c == ';' || c == '/' || c == '&' || c == '\n' ||
           word_at(src_, e, "Hz") || word_at(src_, e, "and");
  }
};

}  // namespace

std::vector<MeasuredSpectrum> parse_text(const Source &src, std::optional<Nucleus> default_nucleus) {
  return TextReader(src, default_nucleus).run();
}

}  // namespace nmrpred::matching::detail
