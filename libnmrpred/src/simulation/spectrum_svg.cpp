// SVG drawing of a sampled spectrum with its signals.
//
// Layout from the top: title, the band of signal labels (written vertically,
// so many fit side by side), a band for the lines linking labels to peaks,
// the spectrum, the axis with ticks and tick values, the integral values and
// the axis label. Chemical shift decreases to the right (common practice).

#include <nmrpred/error.hpp>
#include <nmrpred/spectrum.hpp>

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <numeric>
#include <string>
#include <string_view>
#include <utility>
#include <vector>

#include <fmt/format.h>

#include "simulation/spectrum_shapes.hpp"

namespace nmrpred {

namespace {

// Average advance of a sans-serif character, in font sizes; generous so that
// estimated boxes contain the real glyphs.
constexpr double kCharWidth = 0.62;

// Valid UTF-8 with no control characters; anything else becomes '?'. XML 1.0
// forbids most control characters and U+FFFE/U+FFFF.
std::string clean_utf8(std::string_view s) {
  std::string out;
  out.reserve(s.size());
  std::size_t i = 0;
  while (i < s.size()) {
    const auto c = static_cast<unsigned char>(s[i]);
    if (c < 0x80) {
      out += (c < 0x20 || c == 0x7f) ? '?' : static_cast<char>(c);
      ++i;
      continue;
    }
    std::size_t len = 0;
    std::uint32_t cp = 0;
    if ((c & 0xe0) == 0xc0) {
      len = 2;
      cp = c & 0x1f;
    } else if ((c & 0xf0) == 0xe0) {
      len = 3;
      cp = c & 0x0f;
    } else if ((c & 0xf8) == 0xf0) {
      len = 4;
      cp = c & 0x07;
    }
    bool ok = len > 0 && i + len <= s.size();
    for (std::size_t k = 1; ok && k < len; ++k) {
      const auto cc = static_cast<unsigned char>(s[i + k]);
      if ((cc & 0xc0) != 0x80) ok = false;
      cp = (cp << 6) | (cc & 0x3f);
    }
    if (ok) {
      const std::uint32_t min_cp = len == 2 ? 0x80 : len == 3 ? 0x800 : 0x10000;
      ok = cp >= min_cp && cp <= 0x10ffff && !(cp >= 0xd800 && cp <= 0xdfff) && cp != 0xfffe && cp != 0xffff &&
           !(cp >= 0x80 && cp <= 0x9f);
    }
    if (ok) {
      out.append(s.substr(i, len));
      i += len;
    } else {
      out += '?';
      ++i;
    }
  }
  return out;
}

std::string xml_text(std::string_view s) {
  const std::string clean = clean_utf8(s);
  std::string out;
  out.reserve(clean.size());
  for (char c : clean) {
    switch (c) {
      case '&':
        out += "&amp;";
        break;
      case '<':
        out += "&lt;";
        break;
      case '>':
        out += "&gt;";
        break;
      case '"':
        out += "&quot;";
        break;
      case '\'':
        out += "&apos;";
        break;
      default:
        out += c;
    }
  }
  return out;
}

// Characters of a cleaned text (code points), for width estimates.
std::size_t char_count(std::string_view s) {
  std::size_t n = 0;
  for (char c : clean_utf8(s))
    if ((static_cast<unsigned char>(c) & 0xc0) != 0x80) ++n;
  return n;
}

// "2", "1.5": counts print without a trailing ".0".
std::string count_text(double v) {
  const double r = std::round(v);
  if (std::fabs(v - r) < 0.05) return fmt::format("{}", static_cast<long long>(r));
  return fmt::format("{:.1f}", v);
}

// Lowest and highest ppm of a signal, from its centre and lines (callers may
// leave ppm_low and ppm_high unset).
std::pair<double, double> span_of(const Multiplet &m) {
  double a = m.ppm, b = m.ppm;
  for (const auto &l : m.lines)
    if (std::isfinite(l.ppm)) a = std::min(a, l.ppm), b = std::max(b, l.ppm);
  return {a, b};
}

std::string signal_text(const Multiplet &m) {
  std::string t = fmt::format(m.nucleus == Nucleus::C13 ? "{:.1f}" : "{:.2f}", m.ppm);
  if (!m.label.empty()) t += " " + m.label;
  if (!m.j_hz.empty()) {
    t += " J=";
    for (std::size_t i = 0; i < m.j_hz.size(); ++i) t += fmt::format("{}{:.1f}", i ? ", " : "", m.j_hz[i]);
  }
  if (m.integral > 0) t += " " + count_text(m.integral) + (m.nucleus == Nucleus::C13 ? "C" : "H");
  return t;
}

// Centres within [lo, hi] for boxes of the given widths, as close as
// possible to the wanted centres (least squares) without overlap, in the
// wanted order. Boxes that cannot all fit are spread evenly over [lo, hi].
// Adjacent boxes merge into blocks centred on their members' wishes (pool
// adjacent violators).
std::vector<double> spread(const std::vector<double> &want, const std::vector<double> &width, double lo, double hi) {
  const std::size_t n = want.size();
  std::vector<double> out(n);
  if (n == 0) return out;
  const double total = std::accumulate(width.begin(), width.end(), 0.0);
  if (total >= hi - lo) {
    double x = lo + std::max(0.0, (hi - lo - total) / 2);
    const double squeeze = std::min(1.0, (hi - lo) / total);
    for (std::size_t i = 0; i < n; ++i) {
      out[i] = x + width[i] * squeeze / 2;
      x += width[i] * squeeze;
    }
    return out;
  }
  struct Block {
    std::size_t first, last;
    double width, sum;  // sum of (want - offset of the member's centre from the block start)
    double start() const { return sum / static_cast<double>(last - first + 1); }
  };
  std::vector<Block> blocks;
  for (std::size_t i = 0; i < n; ++i) {
    Block b{i, i, width[i], want[i] - width[i] / 2};
    while (!blocks.empty()) {
      const Block &p = blocks.back();
      const double p_start = std::clamp(p.start(), lo, hi - p.width);
      const double b_start = std::clamp(b.start(), lo, hi - b.width);
      if (p_start + p.width <= b_start) break;
      // Members of b sit after p's width inside the merged block.
      Block m{p.first, b.last, p.width + b.width, p.sum + b.sum - p.width * static_cast<double>(b.last - b.first + 1)};
      blocks.pop_back();
      b = m;
    }
    blocks.push_back(b);
  }
  for (const auto &b : blocks) {
    double x = std::clamp(b.start(), lo, hi - b.width);
    for (std::size_t i = b.first; i <= b.last; ++i) {
      out[i] = x + width[i] / 2;
      x += width[i];
    }
  }
  return out;
}

struct Tick {
  double ppm;
  std::string text;
};

// Major ticks at 1, 2 or 5 times a power of ten, about `target` of them.
std::vector<Tick> major_ticks(double lo, double hi, double target, double &step_out, double &minor_out) {
  const double raw = (hi - lo) / std::max(target, 1.0);
  int e = static_cast<int>(std::floor(std::log10(raw)));
  const double frac = raw / std::pow(10.0, e);
  double nice = frac < 1.5 ? 1 : frac < 3.5 ? 2 : frac < 7.5 ? 5 : 10;
  if (nice == 10) {
    nice = 1;
    ++e;
  }
  const double step = nice * std::pow(10.0, e);
  step_out = step;
  minor_out = step / (nice == 2 ? 4 : 5);
  const int decimals = std::max(0, -e);
  std::vector<Tick> ticks;
  const double k0 = std::ceil(lo / step - 1e-9), k1 = std::floor(hi / step + 1e-9);
  for (double k = k0; k <= k1; k += 1) {
    double v = k * step;
    if (std::fabs(v) < step * 1e-9) v = 0;
    ticks.push_back({v, fmt::format("{:.{}f}", v, decimals)});
  }
  return ticks;
}

std::string num(double v) { return fmt::format("{:.2f}", v); }

void check_plot_options(const PlotOptions &o) {
  auto in = [](double v, double lo, double hi) { return std::isfinite(v) && v >= lo && v <= hi; };
  if (!in(o.width_px, 200, 20000))
    throw ArgumentError(fmt::format("SVG: width_px must be between 200 and 20000 (got {})", o.width_px));
  if (!in(o.height_px, 150, 20000))
    throw ArgumentError(fmt::format("SVG: height_px must be between 150 and 20000 (got {})", o.height_px));
  if (!in(o.font_px, 4, 72))
    throw ArgumentError(fmt::format("SVG: font_px must be between 4 and 72 (got {})", o.font_px));
}

}  // namespace

std::string format_svg(const SampledSpectrum &spectrum, const std::vector<Multiplet> &signals,
                       const std::vector<SolventPeak> &solvent, const PlotOptions &options) {
  detail::check_sampled(spectrum, "SVG");
  check_plot_options(options);
  const auto &ppm = spectrum.ppm;
  const auto &inten = spectrum.intensity;
  const std::size_t n = ppm.size();
  const double lo = ppm.front(), hi = ppm.back();
  const double W = options.width_px, H = options.height_px, font = options.font_px;
  const bool c13 = spectrum.nucleus == Nucleus::C13;
  auto fwhm_of = [&](const Multiplet &m) {
    const bool broad = m.label.rfind("br ", 0) == 0;
    const double hz = broad && spectrum.broad_line_width_hz > 0 ? spectrum.broad_line_width_hz : spectrum.line_width_hz;
    return std::max(hz, 0.0) / spectrum.field_mhz;
  };
  auto inside = [&](double p) { return std::isfinite(p) && p >= lo && p <= hi; };

  // What gets a label: signals and solvent peaks whose centre is on the axis.
  struct Item {
    double ppm;
    double ppm_low, ppm_high, fwhm;
    std::string text;
    bool solvent;
  };
  std::vector<Item> items;
  for (const auto &m : signals)
    if (inside(m.ppm)) {
      const auto [a, b] = span_of(m);
      items.push_back({m.ppm, a, b, fwhm_of(m), signal_text(m), false});
    }
  for (const auto &s : solvent)
    if (inside(s.signal.ppm))
      items.push_back(
          {s.signal.ppm, span_of(s.signal).first, span_of(s.signal).second, fwhm_of(s.signal), s.text, true});
  // Left to right on the page is high to low ppm.
  std::stable_sort(items.begin(), items.end(), [](const Item &a, const Item &b) { return a.ppm > b.ppm; });

  // Vertical layout.
  const double margin = std::max(8.0, font);
  const double x0 = margin, x1 = W - margin;
  double y = margin * 0.5;
  const double title_h = options.title.empty() ? 0 : font * 1.6;
  y += title_h;
  double label_font = font;
  std::size_t longest = 0;
  if (options.show_labels)
    for (const auto &it : items) longest = std::max(longest, char_count(it.text));
  double label_band = 0;
  std::size_t label_rows = 1;
  if (options.show_labels && !items.empty()) {
    // One row of vertical labels, shrinking the font down to 6 px, then more rows.
    const double per_label = 1.25;
    label_font = std::min(font, (x1 - x0) / (static_cast<double>(items.size()) * per_label));
    if (label_font < 6) {
      label_font = std::min(font, 6.0);
      const double fit = std::max(1.0, std::floor((x1 - x0) / (label_font * per_label)));
      label_rows = static_cast<std::size_t>(std::ceil(static_cast<double>(items.size()) / fit));
    }
    // Labels take at most 40 % of the height; longer ones get a smaller font.
    const double max_band = 0.4 * H / static_cast<double>(label_rows);
    const double need = static_cast<double>(longest) * kCharWidth * label_font + 4;
    if (need > max_band) label_font = std::max(1.0, label_font * max_band / need);
    label_band = static_cast<double>(longest) * kCharWidth * label_font + 4;
  }
  y += label_band * static_cast<double>(label_rows);
  const double leader_top = y;
  const double leader_h = options.show_labels && !items.empty() ? 18 : 0;
  y += leader_h;
  const double y_top = y + 2;
  // Below the plot: ticks, tick values, integral values, axis label.
  const double tick_h = 6, axis_gap = 2;
  std::size_t integral_rows = 0;
  std::vector<double> int_width;
  std::vector<std::string> int_text;
  std::vector<double> int_want;
  auto x_of = [&](double p) { return x0 + (hi - p) / (hi - lo) * (x1 - x0); };
  if (options.show_integrals) {
    for (const auto &m : signals)
      if (inside(m.ppm) && m.integral > 0) {
        int_text.push_back(fmt::format("{:.2f}", m.integral));
        int_want.push_back(x_of(m.ppm));
      }
    // Keep the order of the page (signals may come in any order).
    std::vector<std::size_t> order(int_text.size());
    std::iota(order.begin(), order.end(), 0);
    std::stable_sort(order.begin(), order.end(),
                     [&](std::size_t a, std::size_t b) { return int_want[a] < int_want[b]; });
    std::vector<std::string> t2;
    std::vector<double> w2;
    for (auto i : order) {
      t2.push_back(int_text[i]);
      w2.push_back(int_want[i]);
    }
    int_text = std::move(t2);
    int_want = std::move(w2);
    for (const auto &t : int_text) int_width.push_back(static_cast<double>(t.size()) * kCharWidth * font + font * 0.6);
    // Every k-th value shares a row; take the fewest rows in which each fits.
    for (std::size_t rows = 1; rows <= int_text.size() && integral_rows == 0; ++rows) {
      bool fits = true;
      for (std::size_t r = 0; r < rows && fits; ++r) {
        double total = 0;
        for (std::size_t i = r; i < int_width.size(); i += rows) total += int_width[i];
        fits = total < x1 - x0;
      }
      if (fits) integral_rows = rows;
    }
  }
  const double below =
      axis_gap + tick_h + font * 1.3 + static_cast<double>(integral_rows) * font * 1.3 + font * 1.6 + margin * 0.5;
  const double y_base = H - below;
  if (y_base - y_top < 20)
    throw ArgumentError(
        fmt::format("SVG: height_px {} leaves no room for the spectrum (labels and axis need {:.0f} px)", H,
                    H - (y_base - y_top) + 20));

  // Vertical scale.
  double scale = 0;
  auto max_in = [&](double a, double b) {
    const auto ia = std::lower_bound(ppm.begin(), ppm.end(), a) - ppm.begin();
    const auto ib = std::upper_bound(ppm.begin(), ppm.end(), b) - ppm.begin();
    double mx = 0;
    for (auto i = ia; i < ib; ++i) mx = std::max(mx, inten[static_cast<std::size_t>(i)]);
    return mx;
  };
  if (options.scale_to_signals)
    for (const auto &it : items)
      if (!it.solvent) scale = std::max(scale, max_in(it.ppm_low - 2 * it.fwhm, it.ppm_high + 2 * it.fwhm));
  if (scale <= 0)
    for (double v : inten) scale = std::max(scale, v);
  if (scale <= 0) scale = 1;
  const double plot_h = y_base - y_top;
  auto y_of = [&](double v) { return y_base - v / scale * plot_h; };

  std::string svg;
  svg.reserve(64 * 1024);
  svg += "<?xml version=\"1.0\" encoding=\"UTF-8\" standalone=\"no\"?>\n";
  svg += fmt::format(
      "<svg xmlns=\"http://www.w3.org/2000/svg\" version=\"1.1\" width=\"{0}\" height=\"{1}\" viewBox=\"0 0 {0} {1}\" "
      "font-family=\"sans-serif\" font-size=\"{2}\">\n",
      num(W), num(H), num(font));
  svg +=
      fmt::format("<title>{}</title>\n",
                  xml_text(options.title.empty() ? std::string(c13 ? "13C spectrum" : "1H spectrum") : options.title));
  svg += fmt::format("<desc>{} spectrum at {:.2f} MHz, {} lines, FWHM {:g} Hz</desc>\n", c13 ? "13C" : "1H",
                     spectrum.field_mhz, spectrum.shape == LineShape::Gaussian ? "Gaussian" : "Lorentzian",
                     spectrum.line_width_hz);
  svg += fmt::format(
      "<defs><clipPath id=\"plot-area\"><rect x=\"{}\" y=\"{}\" width=\"{}\" height=\"{}\"/></clipPath></defs>\n",
      num(x0), num(y_top - 1), num(x1 - x0), num(plot_h + 2));
  svg += fmt::format("<rect x=\"0\" y=\"0\" width=\"{}\" height=\"{}\" fill=\"#ffffff\"/>\n", num(W), num(H));
  if (!options.title.empty())
    svg += fmt::format("<text class=\"title\" x=\"{}\" y=\"{}\" text-anchor=\"middle\" font-size=\"{}\">{}</text>\n",
                       num(W / 2), num(margin * 0.5 + font * 1.2), num(font * 1.15), xml_text(options.title));

  // The spectrum: per pixel column the lowest and highest sample, so that no
  // peak is lost however many points there are.
  {
    std::string d;
    const auto columns = static_cast<std::size_t>(std::max(1.0, std::floor(x1 - x0)));
    auto add = [&](double x, double v) {
      d += d.empty() ? "M" : "L";
      d += num(x) + " " + num(y_of(v));
    };
    if (n <= 2 * columns) {
      for (std::size_t k = n; k-- > 0;) add(x_of(ppm[k]), inten[k]);
    } else {
      // Column c covers samples whose x falls in [c, c+1) px from x0.
      std::size_t k = n;  // samples k..n-1 are drawn; walk from high ppm (left) to low ppm (right)
      for (std::size_t c = 0; c < columns && k > 0; ++c) {
        const double right = x0 + static_cast<double>(c + 1);
        std::size_t count = 0, imin = k - 1, imax = k - 1;
        while (k > 0 && (c + 1 == columns || x_of(ppm[k - 1]) < right)) {
          --k;
          ++count;
          if (inten[k] < inten[imin]) imin = k;
          if (inten[k] > inten[imax]) imax = k;
        }
        if (count == 0) continue;
        const double xc = x0 + static_cast<double>(c) + 0.5;
        // A higher index lies further left: draw it first.
        if (imin > imax) {
          add(xc, inten[imin]);
          add(xc, inten[imax]);
        } else {
          add(xc, inten[imax]);
          add(xc, inten[imin]);
        }
      }
    }
    svg += fmt::format(
        "<path class=\"spectrum\" d=\"{}\" fill=\"none\" stroke=\"#000000\" stroke-width=\"1\" "
        "stroke-linejoin=\"round\" clip-path=\"url(#plot-area)\"/>\n",
        d);
  }

  // Integral curves: the running integral of each signal's own lines from
  // its high-ppm side, rising to a height proportional to its integral.
  if (options.show_integrals) {
    double max_integral = 0;
    for (const auto &m : signals)
      if (inside(m.ppm)) max_integral = std::max(max_integral, m.integral);
    if (max_integral > 0) {
      svg += "<g class=\"integrals\" fill=\"none\" stroke=\"#808080\" stroke-width=\"1\">\n";
      for (const auto &m : signals) {
        if (!inside(m.ppm) || m.integral <= 0 || m.lines.empty()) continue;
        const double w = fwhm_of(m);
        if (!(w > 0)) continue;
        // At least 8 px either side, so that narrow signals show a curve, not a step.
        const double pad = std::max(3 * w, 8 * (hi - lo) / (x1 - x0));
        const auto [first, last] = span_of(m);
        const double a = std::max(lo, first - pad), b = std::min(hi, last + pad);
        if (!(b > a)) continue;
        auto running = [&](double p) {
          double s = 0;
          for (const auto &l : m.lines)
            s += l.intensity * (detail::line_shape_cdf(spectrum.shape, b - l.ppm, w) -
                                detail::line_shape_cdf(spectrum.shape, p - l.ppm, w));
          return s;
        };
        const double total = running(a);
        if (!(std::fabs(total) > 0) || !std::isfinite(total)) continue;
        const double rise = m.integral / max_integral * 0.3 * plot_h;
        const double base = y_base - 0.05 * plot_h;
        std::string d;
        constexpr int kSteps = 60;
        for (int s = 0; s <= kSteps; ++s) {
          const double p = b - (b - a) * s / kSteps;
          d += (s ? "L" : "M") + num(x_of(p)) + " " + num(base - running(p) / total * rise);
        }
        svg += fmt::format("<path d=\"{}\"/>\n", d);
      }
      svg += "</g>\n";
    }
  }

  // Axis, ticks and tick values.
  {
    const double ya = y_base + axis_gap;
    svg += "<g class=\"axis\" stroke=\"#000000\" stroke-width=\"1\">\n";
    svg += fmt::format("<line x1=\"{}\" y1=\"{}\" x2=\"{}\" y2=\"{}\"/>\n", num(x0), num(ya), num(x1), num(ya));
    double step = 1, minor = 0.2;
    const auto ticks = major_ticks(lo, hi, (x1 - x0) / (font * 7), step, minor);
    const double m0 = std::ceil(lo / minor - 1e-9), m1 = std::floor(hi / minor + 1e-9);
    if ((m1 - m0) < 5000)
      for (double k = m0; k <= m1; k += 1) {
        const double x = x_of(k * minor);
        svg +=
            fmt::format("<line x1=\"{0}\" y1=\"{1}\" x2=\"{0}\" y2=\"{2}\"/>\n", num(x), num(ya), num(ya + tick_h / 2));
      }
    for (const auto &t : ticks) {
      const double x = x_of(t.ppm);
      svg += fmt::format("<line x1=\"{0}\" y1=\"{1}\" x2=\"{0}\" y2=\"{2}\"/>\n", num(x), num(ya), num(ya + tick_h));
    }
    svg += "</g>\n<g class=\"tick-values\" text-anchor=\"middle\" fill=\"#000000\">\n";
    for (const auto &t : ticks)
      svg += fmt::format("<text x=\"{}\" y=\"{}\">{}</text>\n", num(x_of(t.ppm)), num(ya + tick_h + font), t.text);
    svg += "</g>\n";
    svg += fmt::format("<text class=\"axis-label\" x=\"{}\" y=\"{}\" text-anchor=\"middle\">{}</text>\n",
                       num((x0 + x1) / 2), num(H - margin * 0.5 - font * 0.3),
                       c13 ? "\xC2\xB9\xC2\xB3"
                             "C chemical shift \xCE\xB4 / ppm"
                           : "\xC2\xB9H chemical shift \xCE\xB4 / ppm");
  }

  // Integral values under the axis, pushed apart; more rows when crowded.
  if (integral_rows > 0) {
    svg += "<g class=\"integral-values\" text-anchor=\"middle\" fill=\"#404040\">\n";
    const double y0 = y_base + axis_gap + tick_h + font * 1.3 + font * 1.1;
    for (std::size_t r = 0; r < integral_rows; ++r) {
      std::vector<double> want, width;
      std::vector<std::size_t> idx;
      for (std::size_t i = r; i < int_text.size(); i += integral_rows) {
        want.push_back(int_want[i]);
        width.push_back(int_width[i]);
        idx.push_back(i);
      }
      const auto pos = spread(want, width, x0, x1);
      for (std::size_t k = 0; k < idx.size(); ++k)
        svg += fmt::format("<text x=\"{}\" y=\"{}\">{}</text>\n", num(pos[k]),
                           num(y0 + static_cast<double>(r) * font * 1.3), xml_text(int_text[idx[k]]));
    }
    svg += "</g>\n";
  }

  // Labels: vertical text pushed apart along the page, each linked to its peak.
  if (options.show_labels && !items.empty()) {
    const double box = label_font * 1.25;
    std::string labels, leaders;
    for (std::size_t r = 0; r < label_rows; ++r) {
      std::vector<double> want, width;
      std::vector<std::size_t> idx;
      for (std::size_t i = r; i < items.size(); i += label_rows) {
        want.push_back(x_of(items[i].ppm));
        width.push_back(box);
        idx.push_back(i);
      }
      const auto pos = spread(want, width, x0, x1);
      // Row 0 is the lowest band, nearest the peaks.
      const double bottom = leader_top - static_cast<double>(r) * label_band - 2;
      for (std::size_t k = 0; k < idx.size(); ++k) {
        const auto &it = items[idx[k]];
        const double xl = pos[k], xp = x_of(it.ppm);
        // rotate(-90) turns the text upwards; its glyphs then lie left of the
        // baseline, so the baseline sits right of the box centre.
        const double xb = xl + label_font * 0.35;
        labels += fmt::format(
            "<text class=\"{}\" x=\"{}\" y=\"{}\" transform=\"rotate(-90 {} {})\" font-size=\"{}\"{}>{}</text>\n",
            it.solvent ? "solvent-label" : "signal-label", num(xb), num(bottom), num(xb), num(bottom), num(label_font),
            it.solvent ? " fill=\"#606060\" font-style=\"italic\"" : " fill=\"#000000\"", xml_text(it.text));
        double top = max_in(it.ppm_low - 2 * it.fwhm, it.ppm_high + 2 * it.fwhm);
        const double yp = std::max(y_top, y_of(top)) - 3;
        const double knee1 = leader_top + 2, knee2 = leader_top + leader_h - 2;
        std::string d =
            fmt::format("M{} {}L{} {}L{} {}", num(xl), num(bottom + 2), num(xl), num(knee1), num(xp), num(knee2));
        if (yp > knee2) d += fmt::format("L{} {}", num(xp), num(yp));
        leaders += fmt::format("<path d=\"{}\"{}/>\n", d, it.solvent ? " stroke-dasharray=\"2 2\"" : "");
      }
    }
    svg += "<g class=\"leaders\" fill=\"none\" stroke=\"#a0a0a0\" stroke-width=\"0.7\">\n" + leaders + "</g>\n";
    svg += "<g class=\"labels\">\n" + labels + "</g>\n";
  }
  svg += "</svg>\n";
  return svg;
}

}  // namespace nmrpred
