// Last-resort 13C estimate: the typical value of the carbon's class, with an
// uncertainty wide enough to cover the class. Values are the centres of the
// usual 13C shift regions (source: COMMON-PRACTICE, tables/SOURCES.md).

#include <algorithm>

#include <fmt/format.h>

#include "shifts/sources.hpp"

namespace nmrpred::detail {

namespace {

bool hetero(unsigned z) { return z != 6 && z != 1; }

class C13ClassAverage final : public ShiftSource {
 public:
  bool estimate(const ShiftQuery &q, std::size_t atom, ShiftDraft &out) const override {
    const auto &m = q.molecule;
    int n_double_o = 0, n_double_n = 0, n_double_s = 0, n_double_c = 0, n_triple = 0, n_triple_n = 0;
    int n_hetero_single = 0, n_aromatic = 0, n_h = 0, n_o = 0, n_n = 0, n_halogen = 0, n_s = 0;
    bool aromatic_n_neighbour = false;
    const auto *bid = m.bond_ids_begin(atom);
    for (auto it = m.neighbours_begin(atom); it != m.neighbours_end(atom); ++it, ++bid) {
      const auto z = m.atom(*it).atomic_number;
      const auto order = m.bond(*bid).order;
      if (z == 1) {
        ++n_h;
        continue;
      }
      switch (order) {
        case BondOrder::Double:
          n_double_o += z == 8;
          n_double_n += z == 7;
          n_double_s += z == 16;
          n_double_c += z == 6;
          break;
        case BondOrder::Triple:
          ++n_triple;
          n_triple_n += z == 7;
          break;
        case BondOrder::Aromatic:
          ++n_aromatic;
          aromatic_n_neighbour |= z == 7 || z == 8 || z == 16;
          break;
        case BondOrder::Single:
          n_hetero_single += hetero(z);
          break;
      }
      n_o += z == 8;
      n_n += z == 7;
      n_s += z == 16;
      n_halogen += z == 9 || z == 17 || z == 35 || z == 53;
    }
    double ppm = 0, sd = 12;
    const char *cls = "";
    if (n_triple_n) {
      ppm = 118, sd = 6, cls = "nitrile";
    } else if (n_triple) {
      ppm = n_h ? 70 : 82, sd = 10, cls = "alkyne";
    } else if (n_double_o) {
      if (n_hetero_single >= 2) ppm = 155, sd = 8, cls = "carbonate, urea or carbamate C=O";
      else if (n_hetero_single == 1) ppm = 170, sd = 8, cls = "carboxylic acid derivative C=O";
      else ppm = n_h ? 197 : 205, sd = 10, cls = "aldehyde or ketone C=O";
    } else if (n_double_s) {
      ppm = 190, sd = 15, cls = "thiocarbonyl";
    } else if (n_double_n) {
      ppm = 158, sd = 10, cls = "imine C=N";
    } else if (n_double_c >= 2) {
      ppm = 210, sd = 10, cls = "allene centre";
    } else if (n_aromatic) {
      if (n_hetero_single) ppm = 152, sd = 12, cls = "aromatic C bearing a heteroatom";
      else if (aromatic_n_neighbour) ppm = 145, sd = 12, cls = "heteroaromatic C next to a ring heteroatom";
      else ppm = 130, sd = 9, cls = "aromatic C";
    } else if (n_double_c) {
      ppm = n_hetero_single ? 148 : (n_h == 2 ? 115 : 130);
      sd = 14, cls = "alkene C";
    } else {
      // sp3: alkyl value by H count, moved downfield by each heteroatom.
      const double base[] = {40, 35, 30, 20, 0};
      ppm = base[std::min(n_h, 4)] + 38 * std::min(n_o, 2) + 24 * n_n + 12 * n_s + 25 * n_halogen;
      ppm = std::min(ppm, 110.0);
      sd = 12, cls = "sp3 C";
    }
    out.ppm = ppm;
    out.uncertainty_ppm = sd;
    out.source = ShiftSourceKind::ClassAverage;
    out.sphere = 0;
    out.method = fmt::format("class average: {}", cls);
    out.references.clear();
    return true;
  }
};

// Last-resort 1H estimate: the centre of the usual region of the proton's
// class (source: COMMON-PRACTICE), with an uncertainty covering the region.
class H1ClassAverage final : public ShiftSource {
 public:
  bool estimate(const ShiftQuery &q, std::size_t atom, ShiftDraft &out) const override {
    const auto &m = q.molecule;
    const auto heavy = m.attached_to(atom);
    double ppm = 2.0, sd = 2.0;
    const char *cls = "proton on an unusual atom";
    if (heavy >= 0) {
      const auto h = static_cast<std::size_t>(heavy);
      const auto z = m.atom(h).atomic_number;
      if (z == 8 || z == 7 || z == 16) {
        ppm = z == 8 ? 4.0 : (z == 7 ? 3.0 : 2.0), sd = 3.0, cls = "exchangeable proton";
      } else if (z == 6) {
        int hetero = 0, pi = 0, aromatic = 0, dbl_o = 0, triple = 0;
        const auto *bid = m.bond_ids_begin(h);
        for (auto it = m.neighbours_begin(h); it != m.neighbours_end(h); ++it, ++bid) {
          const auto nz = m.atom(*it).atomic_number;
          const auto o = m.bond(*bid).order;
          if (nz == 1) continue;
          if (o == BondOrder::Aromatic) ++aromatic;
          if (o == BondOrder::Triple) ++triple;
          if (o == BondOrder::Double) (nz == 8 ? dbl_o : pi)++;
          // Electronegative neighbours pull the proton downfield; Si, B and
          // metals do not.
          const bool electronegative = nz == 7 || nz == 8 || nz == 9 || nz == 15 || nz == 16 || nz == 17 ||
                                       nz == 35 || nz == 53;
          if (electronegative && o == BondOrder::Single) ++hetero;
        }
        if (dbl_o) ppm = 9.7, sd = 0.6, cls = "aldehyde or formyl C-H";
        else if (triple) ppm = 2.5, sd = 0.6, cls = "alkyne C-H";
        else if (aromatic) ppm = 7.3, sd = 0.6, cls = "aromatic C-H";
        else if (pi) ppm = 5.7, sd = 0.9, cls = "alkene C-H";
        else if (hetero) ppm = std::min(3.6 + 1.5 * (hetero - 1), 7.0), sd = 1.0, cls = "sp3 C-H next to a heteroatom";
        else ppm = 1.4, sd = 0.7, cls = "sp3 C-H";
      }
    }
    out.ppm = ppm;
    out.uncertainty_ppm = sd;
    out.source = ShiftSourceKind::ClassAverage;
    out.sphere = 0;
    out.method = fmt::format("class average: {}", cls);
    out.references.clear();
    return true;
  }
};

// Stateless and immutable: one object of each serves every call.
const C13ClassAverage kC13ClassAverage{};
const H1ClassAverage kH1ClassAverage{};

}  // namespace

const ShiftSource &c13_class_average() { return kC13ClassAverage; }
const ShiftSource &h1_class_average() { return kH1ClassAverage; }

}  // namespace nmrpred::detail
