// J(H,H) from the rules of tables/couplings/hh_rules.tsv, hh_alkene.tsv and
// hh_aromatic.tsv, applied as tables/FORMAT.md ("Coupling tables")
// describes. One function per kind of path between the two carriers:
//   same carrier           geminal: sp3 additive terms, small rings, =CH2
//   one bond               vicinal: sp3-sp3 (Karplus, ring, free rotation),
//                          alkene cis/trans, sp3/sp2 next to C=C or CHO
//   aromatic ring          by ring positions
//   two or three bonds     allylic, propargylic, homoallylic, homopropargylic
// Pairs no rule covers get no coupling: long-range couplings not listed
// are small and usually unresolved.

#include <algorithm>
#include <cmath>
#include <string>
#include <vector>

#include <fmt/format.h>

#include "couplings/engine.hpp"
#include "shifts/increment_support.hpp"

namespace nmrpred::detail {

namespace {

// Widening (Hz, added in quadrature) where a rule is applied beyond the
// compounds it was taken from; each is our choice, documented in
// tables/FORMAT.md ("Coupling tables").
constexpr double kHeteroDisubstitutedHz = 1.0;  // HC=CH with one heteroatom substituent
constexpr double kTwoHeteroHz = 2.0;            // HC=CH with two heteroatom substituents
constexpr double kGemDisubstitutedHz = 1.0;     // =CH2 on a carbon with two groups
constexpr double kAssumedGeometryHz = 1.5;      // E assumed for lack of stereo
constexpr double kFusedRingHz = 1.0;            // monocycle row used for a fused ring
constexpr double kUnknownChiHz = 1.0;           // per substituent without electronegativity

std::string hz(double v) { return format_hz(v); }

double quad(double a, double b) { return std::sqrt(a * a + b * b); }

const CouplingValue *need(Engine &e, HhRule r) {
  const auto *v = e.hh(r);
  if (!v)
    e.warn(
        fmt::format("couplings/hh_rules.tsv has no row '{}': the couplings it covers are left out", hh_rule_name(r)));
  return v;
}

JEstimate value(const CouplingValue &v, const std::string &what) {
  return JEstimate{v.j_hz, v.uncertainty_hz, v.id, v.source, fmt::format("{}: {} {}", what, v.id, hz(v.j_hz))};
}

bool halogen_or_no(unsigned z) { return z == 7 || z == 8 || z == 9 || z == 17 || z == 35 || z == 53; }

// The ring's heteroatoms decide the small-ring rule: "C" all carbon, "O"
// one oxygen, anything else "other".
char three_ring_kind(const Engine &e, const std::vector<std::uint32_t> &ring) {
  int o = 0, other = 0;
  for (auto a : ring) {
    const unsigned z = e.m.atom(a).atomic_number;
    if (z == 8)
      ++o;
    else if (z != 6)
      ++other;
  }
  if (other == 0 && o == 0) return 'C';
  if (other == 0 && o == 1) return 'O';
  return '?';
}

std::vector<std::size_t> others(const Engine &e, std::size_t c, std::size_t not_this) {
  std::vector<std::size_t> out;
  for (auto x : e.heavy(c))
    if (x != not_this) out.push_back(x);
  return out;
}

// --- geminal -----------------------------------------------------------------

std::optional<JEstimate> geminal(Engine &e, std::size_t c) {
  const Molecule &m = e.m;
  if (m.atom(c).atomic_number != 6) return std::nullopt;
  if (e.sp3_carbon(c)) {
    if (const auto *ring = e.three_ring(c)) {
      const char kind = ring ? three_ring_kind(e, *ring) : '?';
      if (kind == '?') {
        e.warn(fmt::format("no geminal J(H,H) rule for {} in a three-membered ring with N, S or two heteroatoms",
                           atom_label(m, c)));
        return std::nullopt;
      }
      const auto *v = need(e, kind == 'C' ? HhRule::GemCyclopropane : HhRule::GemOxirane);
      if (!v) return std::nullopt;
      return value(*v, kind == 'C' ? "geminal, cyclopropane CH2" : "geminal, epoxide CH2");
    }
    const auto *base = need(e, HhRule::GemSp3Base);
    const auto *pi = need(e, HhRule::GemSp3Pi);
    const auto *het = need(e, HhRule::GemSp3Heteroatom);
    if (!base || !pi || !het) return std::nullopt;
    // POPLE-BOTHNER-BY-1965: each pi bond next to the CH2 lowers 2J, each
    // electronegative atom on the carbon raises it.
    int n_pi = 0, n_het = 0;
    for (auto x : e.heavy(c)) {
      if (m.atom(x).atomic_number == 6) n_pi += e.pi_bonds(x);
      if (halogen_or_no(m.atom(x).atomic_number)) ++n_het;
    }
    JEstimate j;
    j.j_hz = base->j_hz + n_pi * pi->j_hz + n_het * het->j_hz;
    j.uncertainty_hz =
        std::sqrt(base->uncertainty_hz * base->uncertainty_hz + n_pi * pi->uncertainty_hz * pi->uncertainty_hz +
                  n_het * het->uncertainty_hz * het->uncertainty_hz);
    j.rule = base->id;
    j.source = base->source;
    j.method = fmt::format("geminal sp3: {} {}", base->id, hz(base->j_hz));
    if (n_pi) j.method += fmt::format(" + {} x {} {}", n_pi, pi->id, hz(pi->j_hz));
    if (n_het) j.method += fmt::format(" + {} x {} {}", n_het, het->id, hz(het->j_hz));
    j.method += fmt::format(" = {}", hz(j.j_hz));
    return j;
  }
  const auto p = e.alkene_partner(c);
  if (p < 0 || e.hydrogens(c).size() != 2) return std::nullopt;
  const auto pc = static_cast<std::size_t>(p);
  const auto subs = others(e, pc, c);
  if (subs.empty()) {
    const auto *v = need(e, HhRule::GemEthylene);
    if (!v) return std::nullopt;
    return value(*v, "geminal =CH2 of ethylene");
  }
  std::vector<const VinylRow *> rows;
  for (auto s : subs) {
    const auto *row = e.vinyl_row(s, pc);
    if (!row) {
      e.warn(fmt::format("no couplings/hh_alkene.tsv row for substituent {} on the C=C {}={}", atom_label(m, s),
                         atom_label(m, pc), atom_label(m, c)));
      return std::nullopt;
    }
    rows.push_back(row);
  }
  JEstimate j;
  j.rule = rows[0]->id;
  j.source = rows[0]->source;
  if (rows.size() == 1) {
    j.j_hz = rows[0]->gem_hz;
    j.uncertainty_hz = rows[0]->uncertainty_hz;
    j.method = fmt::format("geminal =CH2, substituent {} on the other carbon: {} {}", atom_label(m, subs[0]),
                           rows[0]->id, hz(j.j_hz));
  } else {
    j.j_hz = 0.5 * (rows[0]->gem_hz + rows[1]->gem_hz);
    j.uncertainty_hz = quad(std::max(rows[0]->uncertainty_hz, rows[1]->uncertainty_hz), kGemDisubstitutedHz);
    j.method = fmt::format("geminal =CH2, two groups on the other carbon: mean of {} {} and {} {} = {}", rows[0]->id,
                           hz(rows[0]->gem_hz), rows[1]->id, hz(rows[1]->gem_hz), hz(j.j_hz));
  }
  return j;
}

// --- vicinal sp3-sp3 -------------------------------------------------------------

std::optional<JEstimate> free_rotation(Engine &e, std::size_t c1, std::size_t c2) {
  const auto *a = need(e, HhRule::FreeIntercept);
  const auto *b = need(e, HhRule::FreeSlope);
  if (!a || !b) return std::nullopt;
  const double chi_h = e.tab.karplus.chi[1];
  double sum = 0;
  int unknown = 0;
  std::string terms;
  for (auto [c, other] : {std::pair{c1, c2}, std::pair{c2, c1}})
    for (auto s : e.heavy(c)) {
      if (s == other) continue;
      const double d = e.chi(s) - chi_h;
      if (std::isnan(d)) {
        ++unknown;
        terms += fmt::format(" {} ?", Molecule::element_symbol(e.m.atom(s).atomic_number));
        continue;
      }
      sum += d;
      terms += fmt::format(" {} {}", Molecule::element_symbol(e.m.atom(s).atomic_number), hz(d));
    }
  JEstimate j;
  j.j_hz = a->j_hz + b->j_hz * sum;
  j.uncertainty_hz = quad(a->uncertainty_hz, unknown * kUnknownChiHz);
  j.rule = a->id;
  j.source = a->source;
  j.method = fmt::format("vicinal sp3-sp3, freely rotating: {} {} + {} {} x sum(dchi) {} [{} ] = {}", a->id,
                         hz(a->j_hz), b->id, hz(b->j_hz), hz(sum), terms, hz(j.j_hz));
  if (unknown)
    j.method += fmt::format(" ({} substituent{} without an electronegativity in couplings/karplus.tsv left out)",
                            unknown, unknown == 1 ? "" : "s");
  return j;
}

std::optional<JEstimate> ring_sp3(Engine &e, std::size_t h1, std::size_t c1, std::size_t h2, std::size_t c2, int size) {
  const auto *ring = e.bond_ring(c1, c2);
  if (!ring) return std::nullopt;
  if (size == 3) {
    const char kind = three_ring_kind(e, *ring);
    if (kind == '?') {
      e.warn(fmt::format("no vicinal J(H,H) rule for the three-membered ring at {}-{} (N, S or two heteroatoms)",
                         atom_label(e.m, c1), atom_label(e.m, c2)));
      return std::nullopt;
    }
    const Side side = e.ring_faces(*ring, c1, h1, c2, h2);
    const bool c = kind == 'C';
    const HhRule r = side == Side::Cis     ? (c ? HhRule::CyclopropaneCis : HhRule::OxiraneCis)
                     : side == Side::Trans ? (c ? HhRule::CyclopropaneTrans : HhRule::OxiraneTrans)
                                           : (c ? HhRule::CyclopropaneUnresolved : HhRule::OxiraneUnresolved);
    const auto *v = need(e, r);
    if (!v) return std::nullopt;
    auto j = value(*v, fmt::format("vicinal in {} ring, {}", c ? "a cyclopropane" : "an epoxide",
                                   side == Side::Cis     ? "cis"
                                   : side == Side::Trans ? "trans"
                                                         : "faces not known"));
    j.per_proton = true;
    return j;
  }
  HhRule r = HhRule::Ring4Unresolved;
  std::string what = "vicinal in a four-membered ring";
  if (size == 5) r = HhRule::Ring5Unresolved, what = "vicinal in a five-membered ring";
  if (size == 6) {
    const Side side = e.ring_faces(*ring, c1, h1, c2, h2);
    r = side == Side::Cis ? HhRule::Ring6Cis : side == Side::Trans ? HhRule::Ring6Trans : HhRule::Ring6Unresolved;
    what = fmt::format("vicinal in a six-membered ring, {}", side == Side::Cis     ? "cis"
                                                             : side == Side::Trans ? "trans"
                                                                                   : "configuration not known");
  }
  const auto *v = need(e, r);
  if (!v) return std::nullopt;
  auto j = value(*v, what);
  j.per_proton = size == 6;
  return j;
}

// --- alkenes -------------------------------------------------------------------

std::optional<JEstimate> alkene(Engine &e, std::size_t h1, std::size_t c1, std::size_t h2, std::size_t c2) {
  const Molecule &m = e.m;
  const int rs = e.bond_ring_size(c1, c2);
  if (rs >= 3 && rs <= 7) {
    const HhRule r[] = {HhRule::AlkeneRing3, HhRule::AlkeneRing4, HhRule::AlkeneRing5, HhRule::AlkeneRing6,
                        HhRule::AlkeneRing7};
    const auto *v = need(e, r[rs - 3]);
    if (!v) return std::nullopt;
    return value(*v, fmt::format("C=C in a {}-membered ring (cis)", rs));
  }
  const Relation rel = e.relation(c1, c2, h1, h2);
  const auto s1 = others(e, c1, c2), s2 = others(e, c2, c1);
  double cis = 0, trans = 0, unc = 0;
  std::string rule, source, what;
  if (s1.empty() && s2.empty()) {
    const auto *vc = need(e, HhRule::EthyleneCis);
    const auto *vt = need(e, HhRule::EthyleneTrans);
    if (!vc || !vt) return std::nullopt;
    cis = vc->j_hz, trans = vt->j_hz, unc = std::max(vc->uncertainty_hz, vt->uncertainty_hz);
    rule = (rel.side == Side::Trans ? vt : vc)->id, source = vc->source, what = "ethylene";
  } else if (s1.size() + s2.size() == 1) {
    const std::size_t s = s1.empty() ? s2[0] : s1[0];
    const std::size_t on = s1.empty() ? c2 : c1;
    const auto *row = e.vinyl_row(s, on);
    if (!row) {
      e.warn(fmt::format("no couplings/hh_alkene.tsv row for substituent {} on the C=C {}={}", atom_label(m, s),
                         atom_label(m, c1), atom_label(m, c2)));
      return std::nullopt;
    }
    cis = row->cis_hz, trans = row->trans_hz, unc = row->uncertainty_hz;
    rule = row->id, source = row->source, what = fmt::format("vinyl group, substituent {}", atom_label(m, s));
  } else if (s1.size() == 1 && s2.size() == 1) {
    const std::size_t x = s1[0], y = s2[0];
    const bool xc = m.atom(x).atomic_number == 6, yc = m.atom(y).atomic_number == 6;
    if (xc && yc) {
      // Conjugation (an aryl, vinyl, carbonyl or nitrile group) raises both
      // couplings (hh_rules.tsv).
      const bool conj = e.pi_bonds(x) > 0 || e.pi_bonds(y) > 0;
      const auto *vc = need(e, conj ? HhRule::AlkeneCisConj : HhRule::AlkeneCisCC);
      const auto *vt = need(e, conj ? HhRule::AlkeneTransConj : HhRule::AlkeneTransCC);
      if (!vc || !vt) return std::nullopt;
      cis = vc->j_hz, trans = vt->j_hz;
      const auto *used = rel.side == Side::Trans ? vt : vc;
      unc = rel.side == Side::Unknown ? std::max(vc->uncertainty_hz, vt->uncertainty_hz) : used->uncertainty_hz;
      rule = used->id, source = used->source;
      what = conj ? "HC=CH with two carbon groups, conjugated" : "HC=CH with two sp3 carbon groups";
    } else {
      // The heteroatom group dominates (hh_alkene.tsv); with two, the more
      // electronegative one (then the lower atomic number) is used.
      std::size_t s = xc ? y : x, on = xc ? c2 : c1;
      if (!xc && !yc) {
        const double cx = e.chi(x), cy = e.chi(y);
        const bool take_y = (!std::isnan(cy) && (std::isnan(cx) || cy > cx)) ||
                            (cx == cy && m.atom(y).atomic_number < m.atom(x).atomic_number);
        if (take_y)
          s = y, on = c2;
        else
          s = x, on = c1;
      }
      const auto *row = e.vinyl_row(s, on);
      if (!row) {
        e.warn(fmt::format("no couplings/hh_alkene.tsv row for substituent {} on the C=C {}={}", atom_label(m, s),
                           atom_label(m, c1), atom_label(m, c2)));
        return std::nullopt;
      }
      cis = row->cis_hz, trans = row->trans_hz;
      unc = quad(row->uncertainty_hz, (!xc && !yc) ? kTwoHeteroHz : kHeteroDisubstitutedHz);
      rule = row->id, source = row->source;
      what = fmt::format("HC=CH, value of the vinyl row for {} (widened)", atom_label(m, s));
    }
  } else {
    return std::nullopt;  // cumulated or odd valence: not an alkene CH
  }
  JEstimate j;
  j.rule = rule;
  j.source = source;
  j.per_proton = true;
  if (rel.side == Side::Unknown) {
    j.j_hz = 0.5 * (cis + trans);
    j.uncertainty_hz = quad(unc, 0.5 * std::fabs(trans - cis));
    j.method = fmt::format("{}: cis {} and trans {} averaged ({}): {}", what, hz(cis), hz(trans),
                           "the structure does not place the protons", hz(j.j_hz));
    e.warn(fmt::format("C=C {}={}: which proton is cis is not defined by the structure; cis and trans J averaged",
                       atom_label(m, c1), atom_label(m, c2)));
    return j;
  }
  const bool is_cis = rel.side == Side::Cis;
  j.j_hz = is_cis ? cis : trans;
  j.uncertainty_hz = unc;
  j.method = fmt::format("{}, {}: {} {}", what, is_cis ? "cis" : "trans", rule, hz(j.j_hz));
  if (rel.assumed_e) {
    j.uncertainty_hz = quad(j.uncertainty_hz, kAssumedGeometryHz);
    j.method += " (geometry not given; E assumed)";
    e.warn(fmt::format("C=C {}={}: double-bond geometry not given; E assumed for the couplings", atom_label(m, c1),
                       atom_label(m, c2)));
  }
  return j;
}

// --- vicinal -------------------------------------------------------------------

std::optional<JEstimate> vicinal(Engine &e, std::size_t h1, std::size_t c1, std::size_t h2, std::size_t c2) {
  const auto ord = e.order(c1, c2);
  if (ord == BondOrder::Double) {
    if (e.alkene_partner(c1) != static_cast<std::int64_t>(c2) || e.alkene_partner(c2) != static_cast<std::int64_t>(c1))
      return std::nullopt;
    return alkene(e, h1, c1, h2, c2);
  }
  if (ord != BondOrder::Single) return std::nullopt;
  const bool sp3a = e.sp3_carbon(c1), sp3b = e.sp3_carbon(c2);
  if (sp3a && sp3b) {
    // A methyl group rotates freely whatever its coordinates say: its
    // couplings are the rotational average, which the freely rotating rule
    // gives more accurately than the dihedral relation does (ethane 8.0 Hz
    // found, 6.9 from the relation averaged over three staggered positions).
    const bool methyl = e.hydrogens(c1).size() == 3 || e.hydrogens(c2).size() == 3;
    if (e.opt.use_geometry && !methyl)
      if (auto k = karplus_pair(e, h1, c1, h2, c2)) return k;
    const int rs = e.bond_ring_size(c1, c2);
    if (rs >= 3 && rs <= 6) return ring_sp3(e, h1, c1, h2, c2, rs);
    return free_rotation(e, c1, c2);
  }
  auto one = [&](std::size_t a, std::size_t b) -> std::optional<JEstimate> {
    // a sp3, b sp2
    if (e.alkene_partner(b) >= 0) {
      const int rs = e.bond_ring_size(a, b);
      const bool ring = rs >= 3 && rs <= 7;
      const auto *v = need(e, ring ? HhRule::Sp3AlkeneRing : HhRule::Sp3Alkene);
      if (!v) return std::nullopt;
      return value(*v, ring ? "H-C(sp3)-C(sp2)=C in a ring" : "H-C(sp3)-C(sp2)=C");
    }
    if (e.aldehyde_carbon(b)) {
      const auto *v = need(e, HhRule::Sp3Aldehyde);
      if (!v) return std::nullopt;
      return value(*v, "H-C(sp3)-CHO");
    }
    return std::nullopt;
  };
  if (sp3a) return one(c1, c2);
  if (sp3b) return one(c2, c1);
  const bool ald1 = e.aldehyde_carbon(c1), ald2 = e.aldehyde_carbon(c2);
  const bool alk1 = e.alkene_partner(c1) >= 0, alk2 = e.alkene_partner(c2) >= 0;
  if ((ald1 && alk2) || (ald2 && alk1)) {
    const auto *v = need(e, HhRule::Sp2Aldehyde);
    if (!v) return std::nullopt;
    return value(*v, "H-C=C-CHO");
  }
  if (alk1 && alk2 && e.bond_ring_size(c1, c2) == 0) {
    const auto *v = need(e, HhRule::Diene);
    if (!v) return std::nullopt;
    return value(*v, "H-C=C-C=C-H across the single bond");
  }
  return std::nullopt;
}

// Protons on O, N, S: only with CouplingOptions::exchangeable, and only to
// a proton on the sp3 carbon next door.
std::optional<JEstimate> exchangeable(Engine &e, std::size_t c1, std::size_t c2) {
  const unsigned z1 = e.m.atom(c1).atomic_number, z2 = e.m.atom(c2).atomic_number;
  const std::size_t x = z1 == 6 ? c2 : c1, c = z1 == 6 ? c1 : c2;
  const unsigned zx = z1 == 6 ? z2 : z1;
  if ((z1 != 6 && z2 != 6) || !e.sp3_carbon(c) || e.order(x, c) != BondOrder::Single) return std::nullopt;
  if (e.m.atom(x).formal_charge != 0) return std::nullopt;
  const HhRule r = zx == 8 ? HhRule::ExchangeHOCH : zx == 7 ? HhRule::ExchangeHNCH : HhRule::ExchangeHSCH;
  if (zx != 7 && zx != 8 && zx != 16) return std::nullopt;
  const auto *v = need(e, r);
  if (!v) return std::nullopt;
  return value(*v, fmt::format("H-{}-C-H with slow exchange (option)", Molecule::element_symbol(zx)));
}

// --- aromatic rings ------------------------------------------------------------

std::optional<JEstimate> aromatic(Engine &e, int r, std::size_t c1, std::size_t c2) {
  auto &ring = e.aromatic_ring_fitted(r);
  const int n = static_cast<int>(ring.atoms.size());
  const int i = static_cast<int>(std::find(ring.atoms.begin(), ring.atoms.end(), c1) - ring.atoms.begin());
  const int k = static_cast<int>(std::find(ring.atoms.begin(), ring.atoms.end(), c2) - ring.atoms.begin());
  const int gap = std::min(std::abs(i - k), n - std::abs(i - k));
  const int f = e.aromatic_pair_fit(r, i, k);
  if (f >= 0) {
    const auto &fit = ring.fits[static_cast<std::size_t>(f)];
    const auto &row = e.tab.aromatic[fit.row];
    const std::size_t key = 2 * fit.row + (fit.stripped ? 1 : 0);
    for (const auto &done : ring.made)
      if (done.first == key) return done.second;
    JEstimate j = !fit.stripped
                      ? JEstimate{row.j_hz, row.uncertainty_hz, row.id, row.source,
                                  fmt::format("aromatic ring {} ({}), positions {},{}: {} {}", row.ring, ring.text,
                                              row.position_a, row.position_b, row.id, hz(row.j_hz))}
                      : JEstimate{row.j_hz, quad(row.uncertainty_hz, kFusedRingHz), row.id, row.source,
                                  fmt::format("fused aromatic ring ({}) without a row: monocycle row {} {} (widened)",
                                              ring.text, row.id, hz(row.j_hz))};
    ring.made.emplace_back(key, j);
    return j;
  }
  HhRule rule;
  if (n == 6 && gap >= 1 && gap <= 3)
    rule = gap == 1 ? HhRule::Aromatic6Ortho : gap == 2 ? HhRule::Aromatic6Meta : HhRule::Aromatic6Para;
  else if (n == 5 && gap >= 1 && gap <= 2)
    rule = gap == 1 ? HhRule::Aromatic5Vicinal : HhRule::Aromatic5Long;
  else
    return std::nullopt;
  const auto *v = need(e, rule);
  if (!v) return std::nullopt;
  e.warn(fmt::format("no couplings/hh_aromatic.tsv row for {}-bond pairs of the aromatic ring {}: general values used",
                     gap + 2, ring.text));
  return value(*v, fmt::format("aromatic ring {} without a row, {} bonds", ring.text, gap + 2));
}

// --- long range ------------------------------------------------------------------

std::optional<JEstimate> four_bond(Engine &e, std::size_t c1, std::size_t c2) {
  for (auto [a, b] : {std::pair{c1, c2}, std::pair{c2, c1}}) {
    if (!e.sp3_carbon(a)) continue;
    for (auto mid : e.heavy(a)) {
      if (e.m.bond_between(mid, b) < 0 || e.order(a, mid) != BondOrder::Single) continue;
      if (e.alkene_partner(b) == static_cast<std::int64_t>(mid) &&
          e.alkene_partner(mid) == static_cast<std::int64_t>(b)) {
        const auto *v = need(e, HhRule::Allylic);
        if (!v) return std::nullopt;
        return value(*v, "allylic H-C-C=C-H");
      }
      if (e.alkyne_partner(b) == static_cast<std::int64_t>(mid)) {
        const auto *v = need(e, HhRule::Propargylic);
        if (!v) return std::nullopt;
        return value(*v, "propargylic H-C-C#C-H");
      }
    }
  }
  return std::nullopt;
}

std::optional<JEstimate> five_bond(Engine &e, std::size_t c1, std::size_t c2) {
  if (!e.sp3_carbon(c1) || !e.sp3_carbon(c2)) return std::nullopt;
  for (auto x : e.heavy(c1))
    for (auto y : e.heavy(c2)) {
      if (x == y || x == c2 || y == c1 || e.m.bond_between(x, y) < 0) continue;
      if (e.alkene_partner(x) == static_cast<std::int64_t>(y) && e.bond_ring_size(x, y) == 0) {
        const auto *v = need(e, HhRule::Homoallylic);
        if (!v) return std::nullopt;
        return value(*v, "homoallylic H-C-C=C-C-H");
      }
      if (e.alkyne_partner(x) == static_cast<std::int64_t>(y)) {
        const auto *v = need(e, HhRule::Homopropargylic);
        if (!v) return std::nullopt;
        return value(*v, "homopropargylic H-C-C#C-C-H");
      }
    }
  return std::nullopt;
}

}  // namespace

std::optional<JEstimate> proton_pair(Engine &e, std::size_t h1, std::size_t c1, std::size_t h2, std::size_t c2, int d) {
  const Molecule &m = e.m;
  const bool carbons = m.atom(c1).atomic_number == 6 && m.atom(c2).atomic_number == 6;
  if (!carbons) {
    if (d == 1 && e.opt.exchangeable) return exchangeable(e, c1, c2);
    return std::nullopt;
  }
  if (d == 0) return geminal(e, c1);
  if (m.atom(c1).aromatic && m.atom(c2).aromatic) {
    const int r = e.shared_aromatic_ring(c1, c2);
    if (r >= 0) return aromatic(e, r, c1, c2);
  }
  if (d == 1) return vicinal(e, h1, c1, h2, c2);
  if (d == 2) return four_bond(e, c1, c2);
  if (d == 3) return five_bond(e, c1, c2);
  return std::nullopt;
}

}  // namespace nmrpred::detail
