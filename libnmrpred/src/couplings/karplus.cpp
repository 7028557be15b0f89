// Vicinal J(H,H) across an sp3-sp3 C-C bond from the H-C-C-H dihedral angle
// by the Haasnoot-de Leeuw-Altona relation (source: HAASNOOT-1980, after
// KARPLUS-1959 and KARPLUS-1963), parameters and Huggins electronegativities
// from tables/couplings/karplus.tsv:
//
//   J = p1 cos^2(phi) + p2 cos(phi) + p3
//       + sum_i dchi_i (p4 + p5 cos^2(xi_i phi + p6 |dchi_i|))
//
// over the non-hydrogen substituents i of both carbons, with
// dchi_i = chi(i) - chi(H) - p7 * sum over the atoms bonded to i (other than
// the carbon) of (chi - chi(H)), and xi_i = +1 or -1 by the substituent's
// orientation: -1 where it sits so that, at phi = +60 degrees, it is
// antiperiplanar to the proton on the other carbon (the position in which an
// electronegative substituent lowers J most), +1 otherwise.

#include <cmath>
#include <string>
#include <tuple>

#include <fmt/format.h>

#include "couplings/engine.hpp"

namespace nmrpred::detail {

namespace {

constexpr double kPi = 3.14159265358979323846;
constexpr double kDeg = kPi / 180.0;

// Bond lengths (Angstrom) outside which coordinates are taken as not real:
// generous limits around C-C 1.54 and C-H 1.09.
constexpr double kMinCC = 1.2, kMaxCC = 1.9, kMinCH = 0.8, kMaxCH = 1.3;

struct Vec {
  double x, y, z;
};
Vec sub(const double *a, const double *b) { return {a[0] - b[0], a[1] - b[1], a[2] - b[2]}; }
Vec cross(Vec a, Vec b) { return {a.y * b.z - a.z * b.y, a.z * b.x - a.x * b.z, a.x * b.y - a.y * b.x}; }
double dot(Vec a, Vec b) { return a.x * b.x + a.y * b.y + a.z * b.z; }
double norm(Vec a) { return std::sqrt(dot(a, a)); }

// Dihedral a-b-c-d in degrees, (-180, 180]; NaN when degenerate.
double dihedral(const double *a, const double *b, const double *c, const double *d) {
  const Vec b1 = sub(b, a), b2 = sub(c, b), b3 = sub(d, c);
  const Vec n1 = cross(b1, b2), n2 = cross(b2, b3);
  const double l = norm(b2);
  if (norm(n1) < 1e-6 || norm(n2) < 1e-6 || l < 1e-6) return std::nan("");
  const Vec m1 = cross(n1, Vec{b2.x / l, b2.y / l, b2.z / l});
  return std::atan2(dot(m1, n2), dot(n1, n2)) / kDeg;
}

double wrap(double deg) {
  while (deg > 180) deg -= 360;
  while (deg <= -180) deg += 360;
  return deg;
}

}  // namespace

std::optional<JEstimate> karplus_pair(Engine &e, std::size_t h1, std::size_t c1, std::size_t h2, std::size_t c2) {
  const auto &k = e.tab.karplus;
  if (!k.present) return std::nullopt;
  for (auto a : {h1, c1, h2, c2})
    if (!e.has_position(a)) return std::nullopt;
  const double cc = std::sqrt(dot(sub(e.position(c1), e.position(c2)), sub(e.position(c1), e.position(c2))));
  const double ch1 = norm(sub(e.position(c1), e.position(h1))), ch2 = norm(sub(e.position(c2), e.position(h2)));
  if (cc < kMinCC || cc > kMaxCC || ch1 < kMinCH || ch1 > kMaxCH || ch2 < kMinCH || ch2 > kMaxCH) {
    e.warn("3D coordinates with implausible bond lengths: vicinal couplings from the rules instead of the dihedral");
    return std::nullopt;
  }
  const double phi = dihedral(e.position(h1), e.position(c1), e.position(c2), e.position(h2));
  if (std::isnan(phi)) return std::nullopt;
  const double chi_h = k.chi[1];
  const double c = std::cos(phi * kDeg);
  double j = k.p[0] * c * c + k.p[1] * c + k.p[2];
  int count = 0;
  for (auto [own, other, partner] : {std::tuple{c1, c2, h2}, std::tuple{c2, c1, h1}})
    for (auto s : e.heavy(own)) {
      if (s == other) continue;
      if (!e.has_position(s)) return std::nullopt;
      double d = e.chi(s) - chi_h;
      double beta = 0;
      for (auto t : e.heavy(s))
        if (t != own) beta += e.chi(t) - chi_h;
      if (std::isnan(d) || std::isnan(beta)) return std::nullopt;  // no electronegativity: rules instead
      d -= k.p[6] * beta;
      // Orientation (see the file comment): the substituent's angle from the
      // proton on its own carbon, phi - dihedral(S-C-C-H').
      const double theta = wrap(phi - dihedral(e.position(s), e.position(own), e.position(other), e.position(partner)));
      const double xi = theta >= 0 ? 1.0 : -1.0;
      const double t = std::cos((xi * phi + k.p[5] * std::fabs(d)) * kDeg);
      j += d * (k.p[3] + k.p[4] * t * t);
      ++count;
    }
  JEstimate out;
  out.j_hz = j;
  out.uncertainty_hz = k.sigma_hz;
  out.rule = "hla";
  out.source = k.source;
  out.geometry = true;
  out.per_proton = true;
  out.method = fmt::format(
      "Haasnoot-de Leeuw-Altona relation (couplings/karplus.tsv): dihedral {:.1f} deg, "
      "{} non-hydrogen substituent{}: {:.2f}",
      phi, count, count == 1 ? "" : "s", j);
  return out;
}

}  // namespace nmrpred::detail
