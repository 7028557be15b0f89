// J(H,F), J(H,P), J(C,F), J(C,P) from tables/couplings/heteronuclear.tsv and
// J(C,D) from 1J(C,H) of tables/couplings/ch_one_bond.tsv, applied as
// tables/FORMAT.md ("Coupling tables") describes. From each F and P atom a
// breadth-first search reaches every proton and carbon within the longest
// path of the table; a pair takes the first row in file order whose anchor
// SMARTS matches the F or P atom and whose path equals the atoms and bonds
// of a shortest path between the two (all shortest paths are tried, so the
// result does not depend on atom order).

#include <algorithm>
#include <cctype>
#include <cmath>
#include <string>
#include <vector>

#include <fmt/format.h>

#include "couplings/engine.hpp"
#include "shifts/increment_support.hpp"

namespace nmrpred::detail {

namespace {

// gamma(2H)/gamma(1H) (source: HARRIS-2001, frequency ratio 15.350609 %).
constexpr double kDeuteriumRatio = 0.15350609;
// A target reached by more shortest paths than this (cages) is left out
// rather than searched further.
constexpr std::size_t kMaxPaths = 64;

std::string hz(double v) { return format_hz(v); }

std::string token(const Molecule &m, std::size_t a) {
  std::string t = Molecule::element_symbol(m.atom(a).atomic_number);
  if (m.atom(a).aromatic)
    for (auto &ch : t) ch = static_cast<char>(std::tolower(static_cast<unsigned char>(ch)));
  return t;
}

char bond_char(BondOrder o) {
  switch (o) {
    case BondOrder::Single:
      return '-';
    case BondOrder::Double:
      return '=';
    case BondOrder::Triple:
      return '#';
    case BondOrder::Aromatic:
      return ':';
  }
  return '?';
}

struct Path {
  std::vector<std::uint32_t> atoms;  // anchor first
  std::string text;
};

struct Search {
  std::vector<int> dist;
  std::vector<std::vector<std::uint32_t>> preds;
  std::vector<std::uint32_t> reached;
};

void bfs(const Molecule &m, std::size_t x, int depth, Search &s) {
  s.dist.assign(m.atom_count(), -1);
  s.preds.assign(m.atom_count(), {});
  s.reached.clear();
  s.dist[x] = 0;
  std::vector<std::uint32_t> frontier{static_cast<std::uint32_t>(x)};
  for (int d = 1; d <= depth && !frontier.empty(); ++d) {
    std::vector<std::uint32_t> next;
    for (auto a : frontier) {
      if (m.is_hydrogen(a) && a != x) continue;  // protons end paths
      for (auto it = m.neighbours_begin(a); it != m.neighbours_end(a); ++it) {
        const auto b = *it;
        if (s.dist[b] == -1) {
          s.dist[b] = d;
          next.push_back(b);
          s.reached.push_back(b);
        }
        if (s.dist[b] == d) s.preds[b].push_back(a);
      }
    }
    frontier.swap(next);
  }
}

// Every shortest path from the anchor to t; false when there are too many.
bool paths_to(const Engine &e, const Search &s, std::size_t t, std::vector<Path> &out) {
  out.clear();
  std::vector<std::vector<std::uint32_t>> partial{{static_cast<std::uint32_t>(t)}};
  while (!partial.empty()) {
    auto p = std::move(partial.back());
    partial.pop_back();
    const auto head = p.back();
    if (s.dist[head] == 0) {
      std::reverse(p.begin(), p.end());
      Path path;
      path.text = token(e.m, p[0]);
      for (std::size_t i = 1; i < p.size(); ++i) {
        path.text += bond_char(e.order(p[i - 1], p[i]));
        path.text += e.m.is_hydrogen(p[i]) ? std::string("H") : token(e.m, p[i]);
      }
      path.atoms = std::move(p);
      out.push_back(std::move(path));
      if (out.size() > kMaxPaths) return false;
      continue;
    }
    for (auto q : s.preds[head]) {
      auto longer = p;
      longer.push_back(q);
      partial.push_back(std::move(longer));
    }
    if (partial.size() > 8 * kMaxPaths) return false;
  }
  return true;
}

HeteroPair pair_kind(const Molecule &m, std::size_t x, std::size_t t, bool &ok) {
  const bool fluorine = m.atom(x).atomic_number == 9;
  ok = true;
  if (m.is_hydrogen(t)) return fluorine ? HeteroPair::HF : HeteroPair::HP;
  if (m.atom(t).atomic_number == 6) return fluorine ? HeteroPair::CF : HeteroPair::CP;
  ok = false;
  return HeteroPair::HF;
}

// The geometry a row asks for, seen on every path with its text: Cis,
// Trans, or Unknown when the structure does not say (or paths disagree).
Relation geometry_of(Engine &e, const std::vector<Path> &paths, const std::string &text) {
  Relation out;
  bool first = true;
  for (const auto &p : paths) {
    if (p.text != text || p.atoms.size() != 4) continue;
    const Relation r = e.relation(p.atoms[1], p.atoms[2], p.atoms[0], p.atoms[3]);
    if (first)
      out = r, first = false;
    else if (r.side != out.side)
      return {};
  }
  return out;
}

}  // namespace

void heteronuclear_couplings(Engine &e, std::vector<Coupling> &out) {
  const Molecule &m = e.m;
  const auto &rows = e.tab.hetero;
  if (e.tab.hetero_present && !rows.empty()) {
    Search s;
    std::vector<Path> paths;
    for (std::size_t x = 0; x < m.heavy_atom_count(); ++x) {
      const unsigned zx = m.atom(x).atomic_number;
      if (zx != 9 && zx != 15) continue;
      // Rows that can serve this atom: its element first in the path and
      // its anchor matching (one SMARTS match per row and atom).
      std::vector<bool> usable(rows.size(), false);
      bool any = false;
      for (std::size_t k = 0; k < rows.size(); ++k) {
        const bool element = rows[k].path[0] == (zx == 9 ? 'F' : 'P');
        usable[k] = element && e.anchor_matches(k, x);
        any |= usable[k];
      }
      if (!any) continue;
      bfs(m, x, e.tab.hetero_max_bonds, s);
      auto targets = s.reached;
      std::sort(targets.begin(), targets.end());
      for (auto t : targets) {
        bool ok = false;
        const HeteroPair kind = pair_kind(m, x, t, ok);
        if (!ok) continue;
        if (m.is_hydrogen(t)) {
          // Deuterium and tritium are not covered; protons on O, N, S
          // exchange (no coupling, as for J(H,H)).
          if (m.atom(t).isotope > 1) continue;
          const auto carrier = m.attached_to(t);
          if (carrier < 0) continue;
          const unsigned zc = m.atom(static_cast<std::size_t>(carrier)).atomic_number;
          if (zc == 7 || zc == 8 || zc == 16) continue;
        }
        bool wanted = false;
        for (std::size_t k = 0; k < rows.size() && !wanted; ++k)
          wanted = usable[k] && rows[k].pair == kind && rows[k].bonds == s.dist[t];
        if (!wanted) continue;
        if (!paths_to(e, s, t, paths)) {
          e.warn(fmt::format("too many shortest paths between {} and {}: no coupling estimated", atom_label(m, x),
                             atom_label(m, t)));
          continue;
        }
        auto has_text = [&](const std::string &text) {
          return std::any_of(paths.begin(), paths.end(), [&](const Path &p) { return p.text == text; });
        };
        auto row_fits = [&](std::size_t k, HeteroGeometry want) {
          const auto &row = rows[k];
          if (!usable[k] || row.pair != kind || row.bonds != s.dist[t] || !has_text(row.path)) return false;
          if (row.carrier_h >= 0) {
            const auto c = m.attached_to(t);
            if (c < 0 || static_cast<int>(m.hydrogen_count(static_cast<std::size_t>(c))) != row.carrier_h) return false;
          }
          return want == HeteroGeometry::Any || row.geometry == want;
        };
        std::size_t k = 0;
        while (k < rows.size() && !row_fits(k, HeteroGeometry::Any)) ++k;
        if (k == rows.size()) continue;
        const auto &row = rows[k];
        Coupling c;
        c.a = std::min<std::size_t>(x, t);
        c.b = std::max<std::size_t>(x, t);
        c.bonds = s.dist[t];
        c.j_hz = row.j_hz;
        c.uncertainty_hz = row.uncertainty_hz;
        c.rule = row.id;
        c.source = row.source;
        c.method = fmt::format("{} path {}: {} {}", atom_label(m, x), row.path, row.id, hz(row.j_hz));
        if (row.geometry != HeteroGeometry::Any) {
          const Relation rel = geometry_of(e, paths, row.path);
          const HeteroGeometry want = rel.side == Side::Cis     ? HeteroGeometry::Cis
                                      : rel.side == Side::Trans ? HeteroGeometry::Trans
                                                                : HeteroGeometry::Any;
          if (want != HeteroGeometry::Any) {
            std::size_t g = k;
            while (g < rows.size() && !row_fits(g, want)) ++g;
            if (g == rows.size()) continue;
            c.j_hz = rows[g].j_hz;
            c.uncertainty_hz = rows[g].uncertainty_hz;
            c.rule = rows[g].id;
            c.source = rows[g].source;
            c.method = fmt::format("{} path {}, {}: {} {}", atom_label(m, x), rows[g].path,
                                   want == HeteroGeometry::Cis ? "cis" : "trans", rows[g].id, hz(rows[g].j_hz));
            if (rel.assumed_e) {
              c.method += " (geometry not given; E assumed)";
              e.warn(fmt::format("C=C {}={}: double-bond geometry not given; E assumed for the couplings",
                                 atom_label(m, paths[0].atoms[1]), atom_label(m, paths[0].atoms[2])));
            }
          } else {
            // Not placed by the structure: the mean of the cis and trans rows.
            std::size_t gc = k, gt = k;
            while (gc < rows.size() && !row_fits(gc, HeteroGeometry::Cis)) ++gc;
            while (gt < rows.size() && !row_fits(gt, HeteroGeometry::Trans)) ++gt;
            if (gc == rows.size() || gt == rows.size()) continue;
            const double a = rows[gc].j_hz, b = rows[gt].j_hz;
            c.j_hz = 0.5 * (a + b);
            c.uncertainty_hz = std::sqrt(std::pow(std::max(rows[gc].uncertainty_hz, rows[gt].uncertainty_hz), 2) +
                                         std::pow(0.5 * (b - a), 2));
            c.rule = rows[gc].id;
            c.source = rows[gc].source;
            c.method = fmt::format(
                "{} path {}: cis {} {} and trans {} {} averaged (the structure does not place "
                "them): {}",
                atom_label(m, x), rows[gc].path, rows[gc].id, hz(a), rows[gt].id, hz(b), hz(c.j_hz));
            for (const auto &p : paths)
              if (p.text == rows[gc].path) {
                e.warn(fmt::format("C=C {}={}: cis/trans of {} to the protons across it not defined by the "
                                   "structure; cis and trans J averaged",
                                   atom_label(m, p.atoms[1]), atom_label(m, p.atoms[2]),
                                   Molecule::element_symbol(zx)));
                break;
              }
          }
        }
        if (std::fabs(c.j_hz) < e.opt.min_abs_hz) continue;
        out.push_back(std::move(c));
      }
    }
  }
  // J(C,D) = 1J(C,H) x gamma(2H)/gamma(1H).
  if (!e.tab.one_bond_present) return;
  for (std::size_t d = m.heavy_atom_count(); d < m.atom_count(); ++d) {
    if (m.atom(d).isotope != 2) continue;
    const auto carrier = m.attached_to(d);
    if (carrier < 0) continue;
    const auto c = static_cast<std::size_t>(carrier);
    if (m.atom(c).atomic_number != 6) continue;
    const auto *row = e.one_bond_row(c);
    if (!row) {
      e.warn(fmt::format("no couplings/ch_one_bond.tsv row for {}: J(C,D) left out", atom_label(m, c)));
      continue;
    }
    Coupling cp;
    cp.a = c;
    cp.b = d;
    cp.bonds = 1;
    cp.j_hz = row->j_hz * kDeuteriumRatio;
    cp.uncertainty_hz = row->uncertainty_hz * kDeuteriumRatio;
    cp.rule = row->id;
    cp.source = row->source;
    cp.method =
        fmt::format("1J(C,D) = 1J(C,H) {} {} x gamma(2H)/gamma(1H) 0.15351 = {}", row->id, hz(row->j_hz), hz(cp.j_hz));
    if (std::fabs(cp.j_hz) < e.opt.min_abs_hz) continue;
    out.push_back(std::move(cp));
  }
}

}  // namespace nmrpred::detail
