// Readers of peak lists as plain tables: CSV with a header row, and JSON.
// Both point their messages at a byte of the caller's input, as the prose
// reader does.

#include <algorithm>
#include <cmath>
#include <string>
#include <utility>

#include <fmt/format.h>
#include <nlohmann/json.hpp>

#include "matching/measured_scan.hpp"

namespace nmrpred::matching::detail {

namespace {

// ------------------------------------------------------------------ CSV

enum class Column { Shift, Low, High, Integral, Multiplicity, J, AttachedH, Assignment };

struct ColumnName {
  std::string_view name;
  Column column;
};

constexpr ColumnName kColumnNames[] = {
    {"shift", Column::Shift},         {"ppm", Column::Shift},
    {"shift_ppm", Column::Shift},     {"delta", Column::Shift},
    {"chemical shift", Column::Shift}, {"chemical_shift", Column::Shift},
    {"low", Column::Low},             {"ppm_low", Column::Low},
    {"shift_low", Column::Low},       {"high", Column::High},
    {"ppm_high", Column::High},       {"shift_high", Column::High},
    {"integral", Column::Integral},   {"integration", Column::Integral},
    {"count", Column::Integral},      {"multiplicity", Column::Multiplicity},
    {"mult", Column::Multiplicity},   {"mult.", Column::Multiplicity},
    {"j", Column::J},                 {"j_hz", Column::J},
    {"coupling", Column::J},          {"couplings", Column::J},
    {"nh", Column::AttachedH},        {"attached_h", Column::AttachedH},
    {"assignment", Column::Assignment}, {"remark", Column::Assignment},
};

// "Shift (ppm)", " J [Hz] ", "\"mult\"" -> "shift", "j", "mult".
std::string column_key(std::string_view cell) {
  std::string out;
  int depth = 0;
  for (char c : cell) {
    if (c == '(' || c == '[') {
      ++depth;
    } else if (c == ')' || c == ']') {
      if (depth > 0) --depth;
    } else if (depth == 0) {
      out += lower(c);
    }
  }
  return std::string(trim(out));
}

std::optional<Column> find_column(std::string_view cell) {
  const std::string key = column_key(cell);
  for (const auto &c : kColumnNames)
    if (c.name == key) return c.column;
  return std::nullopt;
}

struct Cell {
  std::size_t b = 0, e = 0;  // content in Source::s (quotes excluded)
  std::string value;         // content with doubled quotes undone
};

struct Line {
  std::size_t b = 0, e = 0;
};

std::vector<Line> split_lines(const Source &src) {
  std::vector<Line> lines;
  std::size_t b = 0;
  while (b <= src.s.size()) {
    std::size_t e = src.s.find('\n', b);
    if (e == std::string::npos) e = src.s.size();
    lines.push_back({b, e});
    b = e + 1;
  }
  return lines;
}

std::vector<Cell> split_cells(const Source &src, const Line &line, char delim) {
  std::vector<Cell> cells;
  std::size_t i = line.b;
  for (;;) {
    while (i < line.e && src.s[i] == ' ') ++i;
    Cell cell;
    if (i < line.e && src.s[i] == '"') {
      const std::size_t open = i;
      ++i;
      cell.b = i;
      for (;;) {
        if (i >= line.e) fail(src, open, "expected a closing '\"' on the same line for this quoted cell");
        if (src.s[i] == '"') {
          if (i + 1 < line.e && src.s[i + 1] == '"') {
            cell.value += '"';
            i += 2;
            continue;
          }
          break;
        }
        cell.value += src.s[i];
        ++i;
      }
      cell.e = i;
      ++i;
      while (i < line.e && src.s[i] == ' ') ++i;
      if (i < line.e && src.s[i] != delim)
        fail(src, i, fmt::format("expected '{}' after the closing '\"'", delim == '\t' ? "\\t" : ","));
    } else {
      cell.b = i;
      while (i < line.e && src.s[i] != delim) ++i;
      cell.e = i;
      while (cell.e > cell.b && is_space(src.s[cell.e - 1])) --cell.e;
      cell.value = src.s.substr(cell.b, cell.e - cell.b);
    }
    cells.push_back(std::move(cell));
    if (i >= line.e) break;
    ++i;  // the delimiter
  }
  return cells;
}

bool comment_or_blank(const Source &src, const Line &l) {
  const std::string_view t = trim(std::string_view(src.s).substr(l.b, l.e - l.b));
  return t.empty() || t.front() == '#';
}

char delimiter_of(const Source &src, const Line &l) {
  return src.s.find('\t', l.b) < l.e ? '\t' : ',';
}

// A number filling [b, e) of Source::s (surrounding spaces allowed).
double whole_number(const Source &src, std::size_t b, std::size_t e, bool allow_sign, const char *what) {
  while (b < e && is_space(src.s[b])) ++b;
  const auto num = (b < e) ? scan_number(src, b, allow_sign) : std::nullopt;
  if (!num || num->end > e) fail(src, b, fmt::format("expected {}", what));
  std::size_t k = num->end;
  while (k < e && is_space(src.s[k])) ++k;
  if (k != e) fail(src, k, fmt::format("expected {} alone in the cell", what));
  return num->value;
}

class CsvReader {
 public:
  CsvReader(const Source &src, std::optional<Nucleus> default_nucleus) : src_(src), default_(default_nucleus) {}

  std::vector<MeasuredSpectrum> run() {
    const auto lines = split_lines(src_);
    std::size_t li = 0;
    MeasuredSpectrum sp;
    std::optional<Nucleus> nucleus = default_;
    for (; li < lines.size() && comment_or_blank(src_, lines[li]); ++li) metadata(lines[li], sp, nucleus);
    if (li == lines.size()) fail(src_, src_.s.size(), "expected a header row of column names");
    const Line &head = lines[li];
    const char delim = delimiter_of(src_, head);
    std::vector<Column> columns;
    for (const auto &cell : split_cells(src_, head, delim)) {
      const auto c = find_column(cell.value);
      if (!c)
        fail(src_, cell.b,
             "expected a column name (shift, low, high, integral, multiplicity, j, nh or assignment)");
      if (std::find(columns.begin(), columns.end(), *c) != columns.end())
        fail(src_, cell.b, "expected each column once, found a second");
      columns.push_back(*c);
    }
    auto has = [&](Column c) { return std::find(columns.begin(), columns.end(), c) != columns.end(); };
    if (!has(Column::Shift) && !(has(Column::Low) && has(Column::High)))
      fail(src_, head.b, "expected a 'shift' column, or 'low' and 'high' columns");
    if (has(Column::Low) != has(Column::High))
      fail(src_, head.b, "expected both 'low' and 'high' columns, or neither");
    if (!nucleus)
      fail(src_, 0,
           "expected a line '# nucleus: 1H' or '# nucleus: 13C' before the header row (or a default nucleus "
           "from the caller)");
    sp.nucleus = *nucleus;
    for (++li; li < lines.size(); ++li) {
      if (comment_or_blank(src_, lines[li])) continue;
      const auto cells = split_cells(src_, lines[li], delim);
      if (cells.size() > columns.size())
        fail(src_, cells[columns.size()].b,
             fmt::format("expected {} cells as in the header row, found more", columns.size()));
      sp.peaks.push_back(row(lines[li], cells, columns, sp.nucleus));
    }
    if (sp.peaks.empty()) fail(src_, src_.s.size(), "expected at least one row of peaks after the header row");
    return {std::move(sp)};
  }

 private:
  const Source &src_;
  std::optional<Nucleus> default_;

  // "# nucleus: 13C", "# mhz: 101", "# solvent: CDCl3"; other comments are
  // left alone.
  void metadata(const Line &l, MeasuredSpectrum &sp, std::optional<Nucleus> &nucleus) {
    std::string_view t = trim(std::string_view(src_.s).substr(l.b, l.e - l.b));
    if (t.empty()) return;
    t.remove_prefix(1);
    const std::size_t colon = t.find_first_of(":=");
    if (colon == std::string_view::npos) return;
    const std::string key = to_lower(trim(t.substr(0, colon)));
    const std::string_view value = trim(t.substr(colon + 1));
    const std::size_t vpos = static_cast<std::size_t>(value.data() - src_.s.data());
    if (key == "nucleus") {
      std::string label;
      const auto n = nucleus_from_label(value, &label);
      if (!n) fail(src_, vpos, "expected the nucleus 1H or 13C");
      nucleus = n;
    } else if (key == "mhz" || key == "field") {
      std::size_t e = vpos + value.size();
      if (value.size() > 3 && iequals(value.substr(value.size() - 3), "MHz")) e -= 3;
      const double v = whole_number(src_, vpos, e, false, "the field in MHz");
      if (!(v > 0) || v > 10000) fail(src_, vpos, "expected a field between 0 and 10000 MHz");
      sp.mhz = v;
    } else if (key == "solvent") {
      sp.solvent = std::string(value);
    }
  }

  MeasuredPeak row(const Line &l, const std::vector<Cell> &cells, const std::vector<Column> &columns,
                   Nucleus nucleus) {
    MeasuredPeak p;
    p.position = src_.at[l.b];
    p.text = std::string(trim(src_.original.substr(src_.at[l.b], src_.at[l.e] - src_.at[l.b])));
    std::optional<double> shift, low, high;
    std::size_t shift_pos = l.b, low_pos = l.b;
    for (std::size_t k = 0; k < cells.size(); ++k) {
      const Cell &c = cells[k];
      if (trim(c.value).empty()) continue;
      switch (columns[k]) {
        case Column::Shift: {
          shift_pos = c.b;
          range_cell(c, nucleus, p);
          shift = p.ppm;
          break;
        }
        case Column::Low:
          low_pos = c.b;
          low = whole_number(src_, c.b, c.e, true, "a chemical shift");
          check_shift(src_, c.b, nucleus, *low);
          break;
        case Column::High:
          high = whole_number(src_, c.b, c.e, true, "a chemical shift");
          check_shift(src_, c.b, nucleus, *high);
          break;
        case Column::Integral: {
          std::size_t e = c.e;
          const char letter = nucleus == Nucleus::C13 ? 'C' : 'H';
          if (e > c.b && src_.s[e - 1] == letter) --e;
          const double v = whole_number(src_, c.b, e, false, "an integral");
          if (!(v > 0) || v > kMaxIntegral) fail(src_, c.b, "expected an integral above 0 and at most 1000");
          p.integral = v;
          break;
        }
        case Column::Multiplicity: {
          const auto m = normalize_multiplicity(c.value);
          if (!m) fail(src_, c.b, "expected a multiplicity (s, d, t, q, p, dd, m, br s, ...)");
          p.multiplicity = *m;
          break;
        }
        case Column::J:
          couplings_cell(c, p);
          break;
        case Column::AttachedH: {
          const Item it = classify_item(c.value, Nucleus::C13);
          if (it.kind == ItemKind::AttachedH && !it.integral) {
            p.attached_h = it.attached_h;
          } else {
            const double v = whole_number(src_, c.b, c.e, false, "attached protons (0 to 4, or C, CH, CH2, CH3)");
            if (v != std::floor(v) || v > kMaxAttachedH)
              fail(src_, c.b, "expected attached protons (0 to 4, or C, CH, CH2, CH3)");
            p.attached_h = static_cast<int>(v);
          }
          break;
        }
        case Column::Assignment:
          p.assignment = std::string(trim(c.value));
          break;
      }
    }
    if (shift && (low || high)) fail(src_, low_pos, "expected either 'shift' or 'low'/'high' in a row, not both");
    if (!shift) {
      if (!low || !high) fail(src_, low ? shift_pos : l.b, "expected a chemical shift in the row");
      p.ppm_low = std::min(*low, *high);
      p.ppm_high = std::max(*low, *high);
      p.ppm = p.ppm_low == p.ppm_high ? p.ppm_low : (p.ppm_low + p.ppm_high) / 2;
    }
    return p;
  }

  // "7.31", "7.40-7.28", "7.40 – 7.28", "7.28 to 7.40".
  void range_cell(const Cell &c, Nucleus nucleus, MeasuredPeak &p) {
    std::size_t i = c.b;
    const auto a = scan_number(src_, i, true);
    if (!a || a->end > c.e) fail(src_, i, "expected a chemical shift or a range such as '7.40-7.28'");
    check_shift(src_, i, nucleus, a->value);
    double lo = a->value, hi = a->value;
    std::size_t k = a->end;
    while (k < c.e && is_space(src_.s[k])) ++k;
    if (k < c.e) {
      if (src_.s[k] == '-') {
        ++k;
      } else if (word_at(src_, k, "to")) {
        k += 2;
      } else {
        fail(src_, k, "expected the chemical shift alone in the cell, or a range such as '7.40-7.28'");
      }
      const double b = whole_number(src_, k, c.e, true, "the other end of the range");
      check_shift(src_, k, nucleus, b);
      lo = std::min(a->value, b);
      hi = std::max(a->value, b);
    }
    p.ppm_low = lo;
    p.ppm_high = hi;
    p.ppm = lo == hi ? lo : (lo + hi) / 2;
  }

  // "8.5; 2.1", "8.5, 2.1 Hz" (quoted), "8.5 2.1".
  void couplings_cell(const Cell &c, MeasuredPeak &p) {
    std::size_t i = c.b;
    for (;;) {
      while (i < c.e && (is_space(src_.s[i]) || src_.s[i] == ';' || src_.s[i] == ',')) ++i;
      if (i >= c.e) break;
      if (word_at(src_, i, "Hz")) {
        i += 2;
        continue;
      }
      const auto v = scan_number(src_, i, true);
      if (!v || v->end > c.e) fail(src_, i, "expected coupling constants in Hz separated by ';'");
      if (std::abs(v->value) > kMaxAbsJHz) fail(src_, i, "expected a coupling constant within 1000 Hz");
      p.j_hz.push_back(v->value);
      p.j_partner.emplace_back();
      i = v->end;
      if (i < c.e && !(is_space(src_.s[i]) || src_.s[i] == ';' || src_.s[i] == ',' || word_at(src_, i, "Hz")))
        fail(src_, i, "expected ';' between coupling constants");
    }
  }
};

// ----------------------------------------------------------------- JSON

constexpr int kMaxJsonDepth = 64;

std::size_t json_ws(std::string_view t, std::size_t i) {
  while (i < t.size() && (t[i] == ' ' || t[i] == '\t' || t[i] == '\n' || t[i] == '\r')) ++i;
  return i;
}

std::size_t json_skip_string(std::string_view t, std::size_t i) {
  ++i;
  while (i < t.size() && t[i] != '"') i += (t[i] == '\\') ? 2 : 1;
  return std::min(i + 1, t.size());
}

// End of the value at `i` of text that nlohmann has already accepted, so the
// shape is known to be valid; recursion is bounded by kMaxJsonDepth.
std::size_t json_skip_value(std::string_view t, std::size_t i) {
  i = json_ws(t, i);
  if (i >= t.size()) return i;
  const char c = t[i];
  if (c == '"') return json_skip_string(t, i);
  if (c == '{' || c == '[') {
    const char close = c == '{' ? '}' : ']';
    i = json_ws(t, i + 1);
    if (i < t.size() && t[i] == close) return i + 1;
    while (i < t.size()) {
      if (c == '{') {
        i = json_ws(t, json_skip_string(t, json_ws(t, i)));
        ++i;  // ':'
      }
      i = json_ws(t, json_skip_value(t, i));
      if (i >= t.size() || t[i] == close) return std::min(i + 1, t.size());
      ++i;  // ','
    }
    return i;
  }
  while (i < t.size() && t[i] != ',' && t[i] != ']' && t[i] != '}' && t[i] != ' ' && t[i] != '\n' &&
         t[i] != '\t' && t[i] != '\r')
    ++i;
  return i;
}

struct PathStep {
  std::string key;        // object member, or
  std::size_t index = 0;  // array element when key is empty
  bool is_index = false;
};
using Path = std::vector<PathStep>;

std::string path_text(const Path &path) {
  std::string out;
  for (const auto &s : path) out += s.is_index ? fmt::format("[{}]", s.index) : (out.empty() ? "" : ".") + s.key;
  return out.empty() ? "the top level" : "'" + out + "'";
}

// Byte offset of the value at `path`; 0 if it cannot be found.
std::size_t json_locate(std::string_view t, const Path &path) {
  std::size_t i = json_ws(t, 0);
  for (const auto &step : path) {
    if (i >= t.size()) return 0;
    if (step.is_index) {
      if (t[i] != '[') return 0;
      i = json_ws(t, i + 1);
      for (std::size_t k = 0; k < step.index; ++k) {
        i = json_ws(t, json_skip_value(t, i));
        if (i >= t.size() || t[i] != ',') return 0;
        i = json_ws(t, i + 1);
      }
    } else {
      if (t[i] != '{') return 0;
      i = json_ws(t, i + 1);
      bool found = false;
      while (i < t.size() && t[i] == '"') {
        const std::size_t kend = json_skip_string(t, i);
        std::string key;
        try {
          key = nlohmann::json::parse(t.substr(i, kend - i)).get<std::string>();
        } catch (const std::exception &) {
          return 0;
        }
        i = json_ws(t, json_ws(t, kend) + 1);
        if (key == step.key) {
          found = true;
          break;
        }
        i = json_ws(t, json_skip_value(t, i));
        if (i >= t.size() || t[i] != ',') return 0;
        i = json_ws(t, i + 1);
      }
      if (!found) return 0;
    }
  }
  return i;
}

// Where in t the number quoted in a JSON number-overflow message ("... number
// overflow parsing '1e999'") first occurs; the end of t if it cannot be found.
std::size_t overflowing_number_at(std::string_view t, std::string_view message) {
  constexpr std::string_view lead = "parsing '";
  const std::size_t from = message.find(lead);
  if (from == std::string_view::npos) return t.size();
  const std::size_t start = from + lead.size(), end = message.find('\'', start);
  if (end == std::string_view::npos || end == start) return t.size();
  const std::size_t at = t.find(message.substr(start, end - start));
  return at == std::string_view::npos ? t.size() : at;
}

class JsonReader {
 public:
  JsonReader(std::string_view text, std::optional<Nucleus> default_nucleus) : t_(text), default_(default_nucleus) {}

  std::vector<MeasuredSpectrum> run() {
    check_depth();
    nlohmann::json doc;
    try {
      doc = nlohmann::json::parse(t_);
    } catch (const nlohmann::json::parse_error &e) {
      std::string detail = e.what();
      const std::size_t colon = detail.find(": ", detail.find("column"));
      if (colon != std::string::npos) detail = detail.substr(colon + 2);
      // The parser quotes the bytes it last read, which need not be text.
      const std::size_t quoted = detail.find("; last read");
      if (quoted != std::string::npos) detail.erase(quoted);
      fail_at_byte(t_, e.byte > 0 ? e.byte - 1 : 0, fmt::format("expected valid JSON ({})", detail));
    } catch (const nlohmann::json::out_of_range &e) {
      // A number no double holds ("1e999"); the parser names the number but
      // not where it is, so its first occurrence stands for the place.
      fail_at_byte(t_, overflowing_number_at(t_, e.what()), "expected a number within the range of a double");
    }
    std::vector<MeasuredSpectrum> out;
    Path path;
    if (doc.is_object()) {
      out.push_back(spectrum(doc, path));
    } else if (doc.is_array()) {
      if (doc.empty()) fail_path(path, "expected at least one peak or spectrum");
      const bool spectra = doc[0].is_object() && doc[0].contains("peaks");
      if (spectra) {
        for (std::size_t k = 0; k < doc.size(); ++k) {
          path = {{"", k, true}};
          if (!doc[k].is_object() || !doc[k].contains("peaks"))
            fail_path(path, "expected a spectrum object with 'peaks' like the first element");
          out.push_back(spectrum(doc[k], path));
        }
      } else {
        if (!default_)
          fail_path(path,
                    "expected {\"nucleus\": \"1H\", \"peaks\": [...]} around a bare array of peaks (or a default "
                    "nucleus from the caller)");
        MeasuredSpectrum sp;
        sp.nucleus = *default_;
        peaks(doc, path, sp);
        out.push_back(std::move(sp));
      }
    } else {
      fail_path(path, "expected a JSON object or array");
    }
    return out;
  }

 private:
  std::string_view t_;
  std::optional<Nucleus> default_;

  // nlohmann's parser recurses, so nesting is bounded before it runs.
  void check_depth() const {
    int depth = 0;
    for (std::size_t i = 0; i < t_.size(); ++i) {
      const char c = t_[i];
      if (c == '"') {
        i = json_skip_string(t_, i) - 1;
      } else if (c == '{' || c == '[') {
        if (++depth > kMaxJsonDepth)
          fail_at_byte(t_, i, fmt::format("expected JSON nested at most {} levels deep", kMaxJsonDepth));
      } else if (c == '}' || c == ']') {
        --depth;
      }
    }
  }

  [[noreturn]] void fail_path(const Path &path, const std::string &what) const {
    fail_at_byte(t_, json_locate(t_, path), fmt::format("{} (in {})", what, path_text(path)));
  }

  static Path child(const Path &p, std::string key) {
    Path q = p;
    q.push_back({std::move(key), 0, false});
    return q;
  }
  static Path element(const Path &p, std::size_t k) {
    Path q = p;
    q.push_back({"", k, true});
    return q;
  }

  double number(const nlohmann::json &v, const Path &path, const char *what) const {
    if (!v.is_number()) fail_path(path, fmt::format("expected {} as a JSON number", what));
    const double d = v.get<double>();
    if (!std::isfinite(d)) fail_path(path, fmt::format("expected {} as a finite number", what));
    return d;
  }

  MeasuredSpectrum spectrum(const nlohmann::json &obj, const Path &path) const {
    MeasuredSpectrum sp;
    for (const auto &[key, value] : obj.items()) {
      if (key != "nucleus" && key != "mhz" && key != "solvent" && key != "peaks")
        fail_path(child(path, key), fmt::format("unknown key '{}': expected nucleus, mhz, solvent or peaks", key));
    }
    std::optional<Nucleus> nucleus = default_;
    if (obj.contains("nucleus") && !obj["nucleus"].is_null()) {
      const auto &v = obj["nucleus"];
      std::optional<Nucleus> n;
      if (v.is_string()) {
        n = nucleus_from_label(trim(normalize(v.get<std::string>()).s));
      } else if (v.is_number_integer()) {
        const auto k = v.get<long long>();
        if (k == 1) n = Nucleus::H1;
        if (k == 13) n = Nucleus::C13;
      }
      if (!n) fail_path(child(path, "nucleus"), "expected the nucleus \"1H\" or \"13C\"");
      nucleus = n;
    }
    if (!nucleus)
      fail_path(path, "expected a \"nucleus\" (\"1H\" or \"13C\") in the spectrum (or a default nucleus from "
                      "the caller)");
    sp.nucleus = *nucleus;
    if (obj.contains("mhz") && !obj["mhz"].is_null()) {
      const double v = number(obj["mhz"], child(path, "mhz"), "the field in MHz");
      if (!(v > 0) || v > 10000) fail_path(child(path, "mhz"), "expected a field between 0 and 10000 MHz");
      sp.mhz = v;
    }
    if (obj.contains("solvent") && !obj["solvent"].is_null()) {
      if (!obj["solvent"].is_string()) fail_path(child(path, "solvent"), "expected the solvent as a string");
      sp.solvent = std::string(trim(normalize(obj["solvent"].get<std::string>()).s));
    }
    if (!obj.contains("peaks")) fail_path(path, "expected \"peaks\": [...] in the spectrum");
    const auto &list = obj["peaks"];
    if (!list.is_array()) fail_path(child(path, "peaks"), "expected an array of peaks");
    peaks(list, child(path, "peaks"), sp);
    return sp;
  }

  void peaks(const nlohmann::json &list, const Path &path, MeasuredSpectrum &sp) const {
    // Element offsets in one pass over the array, so that a long list is
    // read in linear time.
    std::vector<std::size_t> starts;
    std::size_t i = json_locate(t_, path);
    if (i < t_.size() && t_[i] == '[') {
      i = json_ws(t_, i + 1);
      while (i < t_.size() && t_[i] != ']') {
        starts.push_back(i);
        i = json_ws(t_, json_skip_value(t_, i));
        if (i < t_.size() && t_[i] == ',') i = json_ws(t_, i + 1);
      }
    }
    for (std::size_t k = 0; k < list.size(); ++k)
      sp.peaks.push_back(peak(list[k], element(path, k), sp.nucleus, k < starts.size() ? starts[k] : 0));
  }

  void check_shift(const Path &path, Nucleus nucleus, double ppm) const {
    if (!plausible_shift(nucleus, ppm)) check_shift_at_byte(t_, json_locate(t_, path), nucleus, ppm);
  }

  MeasuredPeak peak(const nlohmann::json &obj, const Path &path, Nucleus nucleus, std::size_t start) const {
    if (!obj.is_object()) fail_path(path, "expected a peak object such as {\"shift\": 7.26}");
    MeasuredPeak p;
    p.position = start;
    p.text = std::string(t_.substr(p.position, json_skip_value(t_, p.position) - p.position));
    for (const auto &[key, value] : obj.items()) {
      if (key != "shift" && key != "ppm" && key != "range" && key != "integral" && key != "multiplicity" &&
          key != "j_hz" && key != "attached_h" && key != "assignment" && key != "j_partner")
        fail_path(child(path, key),
                  fmt::format("unknown key '{}': expected shift, range, integral, multiplicity, j_hz, attached_h, "
                              "assignment or j_partner",
                              key));
    }
    const bool has_shift = obj.contains("shift") || obj.contains("ppm");
    if (obj.contains("shift") && obj.contains("ppm")) fail_path(child(path, "ppm"), "expected 'shift' or 'ppm', not both");
    if (has_shift && obj.contains("range")) fail_path(child(path, "range"), "expected 'shift' or 'range', not both");
    if (has_shift) {
      const std::string key = obj.contains("shift") ? "shift" : "ppm";
      const double v = number(obj[key], child(path, key), "the chemical shift");
      check_shift(child(path, key), nucleus, v);
      p.ppm = p.ppm_low = p.ppm_high = v;
    } else if (obj.contains("range")) {
      const auto &r = obj["range"];
      const Path rp = child(path, "range");
      if (!r.is_array() || r.size() != 2) fail_path(rp, "expected a range as [low, high]");
      const double a = number(r[0], element(rp, 0), "the end of the range");
      const double b = number(r[1], element(rp, 1), "the end of the range");
      check_shift(element(rp, 0), nucleus, a);
      check_shift(element(rp, 1), nucleus, b);
      p.ppm_low = std::min(a, b);
      p.ppm_high = std::max(a, b);
      p.ppm = a == b ? a : (a + b) / 2;
    } else {
      fail_path(path, "expected a 'shift' or a 'range' in the peak");
    }
    if (obj.contains("integral") && !obj["integral"].is_null()) {
      const double v = number(obj["integral"], child(path, "integral"), "the integral");
      if (!(v > 0) || v > kMaxIntegral) fail_path(child(path, "integral"), "expected an integral above 0 and at most 1000");
      p.integral = v;
    }
    if (obj.contains("multiplicity") && !obj["multiplicity"].is_null()) {
      const auto &v = obj["multiplicity"];
      if (!v.is_string()) fail_path(child(path, "multiplicity"), "expected the multiplicity as a string");
      const std::string text(trim(normalize(v.get<std::string>()).s));
      if (!text.empty()) {
        const auto m = normalize_multiplicity(text);
        if (!m) fail_path(child(path, "multiplicity"), "expected a multiplicity (s, d, t, q, p, dd, m, br s, ...)");
        p.multiplicity = *m;
      }
    }
    if (obj.contains("j_hz") && !obj["j_hz"].is_null()) {
      const auto &v = obj["j_hz"];
      const Path jp = child(path, "j_hz");
      auto add = [&](const nlohmann::json &x, const Path &xp) {
        const double j = number(x, xp, "a coupling constant in Hz");
        if (std::abs(j) > kMaxAbsJHz) fail_path(xp, "expected a coupling constant within 1000 Hz");
        p.j_hz.push_back(j);
      };
      if (v.is_array()) {
        for (std::size_t k = 0; k < v.size(); ++k) add(v[k], element(jp, k));
      } else {
        add(v, jp);
      }
    }
    p.j_partner.assign(p.j_hz.size(), std::string());
    if (obj.contains("j_partner") && !obj["j_partner"].is_null()) {
      const auto &v = obj["j_partner"];
      const Path pp = child(path, "j_partner");
      if (!v.is_array() || v.size() != p.j_hz.size())
        fail_path(pp, "expected an array of strings as long as 'j_hz'");
      for (std::size_t k = 0; k < v.size(); ++k) {
        if (!v[k].is_string()) fail_path(element(pp, k), "expected the partner element as a string (\"F\", or \"\")");
        p.j_partner[k] = v[k].get<std::string>();
      }
    }
    if (obj.contains("attached_h") && !obj["attached_h"].is_null()) {
      const double v = number(obj["attached_h"], child(path, "attached_h"), "the attached protons");
      if (v != std::floor(v) || v < 0 || v > kMaxAttachedH)
        fail_path(child(path, "attached_h"), "expected attached protons as a whole number from 0 to 4");
      p.attached_h = static_cast<int>(v);
    }
    if (obj.contains("assignment") && !obj["assignment"].is_null()) {
      if (!obj["assignment"].is_string()) fail_path(child(path, "assignment"), "expected the assignment as a string");
      p.assignment = obj["assignment"].get<std::string>();
    }
    return p;
  }
};

}  // namespace

bool looks_like_csv(const Source &src) {
  for (const auto &l : split_lines(src)) {
    if (comment_or_blank(src, l)) continue;
    const char delim = delimiter_of(src, l);
    std::size_t b = l.b;
    std::size_t known = 0, cells = 0;
    bool first_known = false;
    while (b <= l.e) {
      std::size_t e = src.s.find(delim, b);
      if (e == std::string::npos || e > l.e) e = l.e;
      std::string_view cell = trim(std::string_view(src.s).substr(b, e - b));
      if (cell.size() >= 2 && cell.front() == '"' && cell.back() == '"') cell = cell.substr(1, cell.size() - 2);
      const bool k = find_column(cell).has_value();
      if (cells == 0) first_known = k;
      known += k;
      ++cells;
      b = e + 1;
    }
    // A known first column and mostly known names: a table, even if one
    // name is misspelt (the CSV reader then names it).
    return first_known && 2 * known >= cells;
  }
  return false;
}

std::vector<MeasuredSpectrum> parse_csv(const Source &src, std::optional<Nucleus> default_nucleus) {
  return CsvReader(src, default_nucleus).run();
}

std::vector<MeasuredSpectrum> parse_json(std::string_view text, std::optional<Nucleus> default_nucleus) {
  return JsonReader(text, default_nucleus).run();
}

}  // namespace nmrpred::matching::detail
