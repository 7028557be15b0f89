// Spin systems: validation, magnetic equivalence, clusters, the assembly of
// exact and first-order parts into one line list, and multiplet descriptions
// (nmrpred/spin.hpp).
#include <nmrpred/spin.hpp>

#include <algorithm>
#include <cmath>
#include <limits>
#include <map>
#include <numeric>
#include <set>
#include <string>
#include <utility>

#include <fmt/format.h>

#include <nmrpred/error.hpp>

#include "simulation/multiplet_reading.hpp"
#include "simulation/spin_exact.hpp"

namespace nmrpred {

namespace {

using simulation::detail::ExactGroup;
using simulation::detail::ExactProblem;
using simulation::detail::ExactSize;
using simulation::detail::RawLine;

/// Couplings that differ by less than this are equal (magnetic equivalence,
/// uniform coupling to a cluster), Hz. Far below any measurable difference.
constexpr double kSameCouplingHz = 1e-4;
/// See kMinLineIntensity (spin.hpp).
constexpr double kMinIntensity = kMinLineIntensity;
/// Largest number of composite product states of one exact problem (the index
/// tables stay small).
constexpr double kMaxStates = 1 << 20;
/// An exact problem may grow by partners (weakly coupled clusters solved with
/// it) up to this cost (sum of block sizes cubed: about a 10-spin cluster), or
/// 16 times the cost of the cluster alone, whichever is larger.
constexpr double kPartnerCost = 4e7;
/// First-order patterns are capped at this many lines, and a cluster's lines
/// times their patterns at kMaxSplitLines; beyond, lines are pooled on a grid
/// of a tenth of the line width (coarser if needed), with a warning.
constexpr std::size_t kMaxPatternLines = 20000;
constexpr std::size_t kMaxSplitLines = 4000000;
/// A coupling partner of the same isotope closer than this many couplings in
/// frequency is strongly coupled: its splitting is not read as a first-order
/// step (the label then comes from how the signal looks). Common practice: at
/// |delta nu / J| below about 3 lines move and change intensity too much for a
/// first-order reading.
constexpr double kSecondOrderRatio = 3.0;

using Line = std::pair<double, double>;  // (Hz, intensity)

bool by_position(const Line &a, const Line &b) { return a.first < b.first; }

/// Merges runs of the position-sorted `lines` whose lines lie within `tol` of
/// the run's first line, at their intensity-weighted position.
void merge_sorted(std::vector<Line> &lines, double tol) {
  std::vector<Line> out;
  out.reserve(lines.size());
  std::size_t i = 0;
  while (i < lines.size()) {
    const double start = lines[i].first;
    double sum = 0, moment = 0;
    std::size_t j = i;
    for (; j < lines.size() && lines[j].first - start <= tol; ++j) {
      sum += lines[j].second;
      moment += lines[j].first * lines[j].second;
    }
    out.emplace_back(sum > 0 ? moment / sum : start, sum);
    i = j;
  }
  lines = std::move(out);
}

/// Sorts `lines` by position, then merge_sorted().
void merge_lines(std::vector<Line> &lines, double tol) {
  std::sort(lines.begin(), lines.end(), by_position);
  merge_sorted(lines, tol);
}

/// Caps a line list at kMaxPatternLines by pooling on a coarser grid; tells
/// whether it had to.
bool cap_lines(std::vector<Line> &lines, double tol, double line_width_hz) {
  merge_lines(lines, tol);
  if (lines.size() <= kMaxPatternLines) return false;
  double grid = line_width_hz / 10;
  while (lines.size() > kMaxPatternLines) {
    merge_lines(lines, grid);
    grid *= 2;
  }
  return true;
}

/// First-order splitting by `count` equivalent spins twice_spin/2 coupled by j_hz.
std::vector<Line> group_pattern(double j_hz, int twice_spin, int count) {
  const std::vector<double> w = simulation::detail::fz_distribution(twice_spin, count);
  std::vector<Line> out;
  const double centre = 0.5 * twice_spin * count;
  for (std::size_t k = 0; k < w.size(); ++k) out.emplace_back(j_hz * (static_cast<double>(k) - centre), w[k]);
  return out;
}

std::vector<Line> convolve(const std::vector<Line> &a, const std::vector<Line> &b) {
  std::vector<Line> out;
  out.reserve(a.size() * b.size());
  for (const Line &x : a)
    for (const Line &y : b) out.emplace_back(x.first + y.first, x.second * y.second);
  return out;
}

struct UnionFind {
  std::vector<std::size_t> parent;
  explicit UnionFind(std::size_t n) : parent(n) { std::iota(parent.begin(), parent.end(), 0); }
  std::size_t find(std::size_t x) {
    while (parent[x] != x) x = parent[x] = parent[parent[x]];
    return x;
  }
};

/// A magnetically equivalent group of spins, handled as one composite spin.
struct Group {
  std::vector<std::size_t> spins;
  SpinNucleus nucleus = SpinNucleus::H1;
  int twice = 1;
  double hz = 0;
  std::size_t chem = 0;  // chemical-equivalence set (signal)
};

/// Block sizes by total K of a product of groups, for the cluster cap.
std::vector<double> multiply_sizes(const std::vector<double> &a, const std::vector<double> &b) {
  std::vector<double> out(a.size() + b.size() - 1, 0.0);
  for (std::size_t i = 0; i < a.size(); ++i)
    for (std::size_t j = 0; j < b.size(); ++j) out[i + j] += a[i] * b[j];
  return out;
}

}  // namespace

const char *spin_nucleus_name(SpinNucleus nucleus) noexcept {
  switch (nucleus) {
    case SpinNucleus::H1: return "1H";
    case SpinNucleus::H2: return "2H";
    case SpinNucleus::C13: return "13C";
    case SpinNucleus::F19: return "19F";
    case SpinNucleus::P31: return "31P";
  }
  return "?";
}

SpinNucleus parse_spin_nucleus(std::string_view name) {
  while (!name.empty() && (name.front() == ' ' || name.front() == '\t')) name.remove_prefix(1);
  while (!name.empty() && (name.back() == ' ' || name.back() == '\t')) name.remove_suffix(1);
  for (SpinNucleus n : {SpinNucleus::H1, SpinNucleus::H2, SpinNucleus::C13, SpinNucleus::F19, SpinNucleus::P31})
    if (name == spin_nucleus_name(n)) return n;
  throw ArgumentError(fmt::format("unknown nucleus '{}': use 1H, 2H, 13C, 19F or 31P", name));
}

double frequency_ratio(SpinNucleus nucleus) noexcept {
  // IUPAC frequency ratios Xi (percent of the 1H frequency of TMS in the same
  // field): Harris et al., Pure Appl. Chem. 2001, 73, 1795, Table 1 (from memory).
  switch (nucleus) {
    case SpinNucleus::H1: return 1.0;
    case SpinNucleus::H2: return 0.15350609;
    case SpinNucleus::C13: return 0.25145020;
    case SpinNucleus::F19: return 0.94094011;
    case SpinNucleus::P31: return 0.40480742;
  }
  return 0;
}

int twice_spin(SpinNucleus nucleus) noexcept {
  switch (nucleus) {
    case SpinNucleus::H2: return 2;
    case SpinNucleus::H1:
    case SpinNucleus::C13:
    case SpinNucleus::F19:
    case SpinNucleus::P31: return 1;
  }
  return 0;
}

void validate(const SimulationOptions &o) {
  if (!std::isfinite(o.field_mhz) || o.field_mhz < 40 || o.field_mhz > 1200)
    throw ArgumentError(fmt::format("field_mhz must be between 40 and 1200 (1H frequency, MHz), got {}", o.field_mhz));
  if (!std::isfinite(o.line_width_hz) || o.line_width_hz <= 0 || o.line_width_hz > 100)
    throw ArgumentError(fmt::format("line_width_hz must be above 0 and at most 100, got {}", o.line_width_hz));
  if (std::isnan(o.weak_coupling_ratio) || o.weak_coupling_ratio < 0)
    throw ArgumentError(fmt::format("weak_coupling_ratio must be 0 or more, got {}", o.weak_coupling_ratio));
  if (!std::isfinite(o.equivalent_shift_tolerance_ppm) || o.equivalent_shift_tolerance_ppm < 0 ||
      o.equivalent_shift_tolerance_ppm > 0.01)
    throw ArgumentError(fmt::format("equivalent_shift_tolerance_ppm must be between 0 and 0.01, got {}",
                                    o.equivalent_shift_tolerance_ppm));
  if (o.max_block_size < 1 || o.max_block_size > 4096)
    throw ArgumentError(fmt::format("max_block_size must be between 1 and 4096, got {}", o.max_block_size));
  if (!std::isfinite(o.merge_tolerance_hz) || o.merge_tolerance_hz < 0 || o.merge_tolerance_hz > 1)
    throw ArgumentError(fmt::format("merge_tolerance_hz must be between 0 and 1, got {}", o.merge_tolerance_hz));
}

void validate(const SpinSystem &system) {
  const std::size_t n = system.spins.size();
  if (n == 0) throw ArgumentError("spin system has no spins");
  if (n > kMaxSpins) throw ArgumentError(fmt::format("spin system has {} spins, at most {} are allowed", n, kMaxSpins));
  for (std::size_t i = 0; i < n; ++i) {
    const Spin &s = system.spins[i];
    if (twice_spin(s.nucleus) == 0)
      throw ArgumentError(fmt::format("spin {}: nucleus {} is not one of 1H, 2H, 13C, 19F, 31P", i,
                                      static_cast<int>(s.nucleus)));
    if (!std::isfinite(s.shift_ppm)) throw ArgumentError(fmt::format("spin {}: shift is not a finite number", i));
    if (std::fabs(s.shift_ppm) > 1e4)
      throw ArgumentError(fmt::format("spin {}: shift {} ppm is out of range (|shift| <= 10000)", i, s.shift_ppm));
  }
  std::map<std::pair<std::size_t, std::size_t>, std::size_t> seen;
  for (std::size_t c = 0; c < system.couplings.size(); ++c) {
    const SpinCoupling &k = system.couplings[c];
    if (k.i >= n || k.j >= n)
      throw ArgumentError(fmt::format("coupling {}: spin index {} is out of range (the system has {} spins)", c,
                                      k.i >= n ? k.i : k.j, n));
    if (k.i == k.j) throw ArgumentError(fmt::format("coupling {}: spin {} is coupled to itself", c, k.i));
    if (!std::isfinite(k.j_hz))
      throw ArgumentError(fmt::format("coupling {} (spins {} and {}): J is not a finite number", c, k.i, k.j));
    if (std::fabs(k.j_hz) > 1e4)
      throw ArgumentError(
          fmt::format("coupling {} (spins {} and {}): J = {} Hz is out of range (|J| <= 10000)", c, k.i, k.j, k.j_hz));
    const auto key = std::minmax(k.i, k.j);
    const auto [it, added] = seen.emplace(std::make_pair(key.first, key.second), c);
    if (!added)
      throw ArgumentError(fmt::format("coupling {} (spins {} and {}) repeats coupling {}: give each pair once", c, k.i,
                                      k.j, it->second));
  }
}

Simulation simulate(const SpinSystem &system, SpinNucleus observe, const SimulationOptions &options) {
  validate(options);
  validate(system);
  if (twice_spin(observe) == 0)
    throw ArgumentError(fmt::format("observed nucleus {} is not one of 1H, 2H, 13C, 19F, 31P", static_cast<int>(observe)));

  Simulation out;
  out.observed = observe;
  out.field_mhz = options.field_mhz;
  out.observed_mhz = options.field_mhz * frequency_ratio(observe);

  const std::size_t n = system.spins.size();
  const auto &spins = system.spins;
  std::vector<double> hz(n);
  for (std::size_t i = 0; i < n; ++i)
    hz[i] = spins[i].shift_ppm * options.field_mhz * frequency_ratio(spins[i].nucleus);

  // Dense coupling table; exchangeable spins couple to nothing.
  std::vector<double> jt(n * n, 0.0);
  std::size_t exchanged = 0;
  for (const SpinCoupling &c : system.couplings) {
    if (spins[c.i].exchangeable || spins[c.j].exchangeable) {
      if (c.j_hz != 0) ++exchanged;
      continue;
    }
    jt[c.i * n + c.j] = jt[c.j * n + c.i] = c.j_hz;
  }
  if (exchanged > 0)
    out.warnings.push_back(fmt::format(
        "{} coupling(s) of exchangeable spins left out: fast exchange averages them to zero", exchanged));

  if (std::none_of(spins.begin(), spins.end(), [&](const Spin &s) { return s.nucleus == observe; })) {
    out.warnings.push_back(fmt::format("the spin system has no {} spin: the spectrum is empty", spin_nucleus_name(observe)));
    return out;
  }

  // Chemical equivalence: same isotope and class, or (classless) same shift.
  UnionFind chem_sets(n);
  for (std::size_t i = 0; i < n; ++i)
    for (std::size_t j = i + 1; j < n; ++j) {
      const Spin &a = spins[i], &b = spins[j];
      if (a.nucleus != b.nucleus || a.exchangeable != b.exchangeable) continue;
      const bool same = a.equivalence_class >= 0
                            ? a.equivalence_class == b.equivalence_class
                            : b.equivalence_class < 0 &&
                                  std::fabs(a.shift_ppm - b.shift_ppm) <= options.equivalent_shift_tolerance_ppm;
      if (same) chem_sets.parent[chem_sets.find(j)] = chem_sets.find(i);
    }
  std::vector<std::size_t> chem(n);
  {
    std::map<std::size_t, std::size_t> ids;
    for (std::size_t i = 0; i < n; ++i) chem[i] = ids.emplace(chem_sets.find(i), ids.size()).first->second;
  }

  // Magnetic equivalence: split each chemical set until every group's members
  // couple identically to every spin outside the group.
  std::vector<std::size_t> group_of = chem;
  std::size_t group_count = *std::max_element(chem.begin(), chem.end()) + 1;
  for (bool changed = true; changed;) {
    changed = false;
    std::vector<std::vector<std::size_t>> members(group_count);
    for (std::size_t i = 0; i < n; ++i) members[group_of[i]].push_back(i);
    for (std::size_t g = 0; g < members.size(); ++g) {
      if (members[g].size() < 2) continue;
      std::vector<std::size_t> reps;  // first member of each subgroup
      std::vector<std::size_t> sub(members[g].size());
      for (std::size_t m = 0; m < members[g].size(); ++m) {
        const std::size_t s = members[g][m];
        std::size_t r = 0;
        for (; r < reps.size(); ++r) {
          bool same = true;
          for (std::size_t k = 0; k < n && same; ++k)
            if (group_of[k] != g && std::fabs(jt[s * n + k] - jt[reps[r] * n + k]) > kSameCouplingHz) same = false;
          if (same) break;
        }
        if (r == reps.size()) reps.push_back(s);
        sub[m] = r;
      }
      if (reps.size() < 2) continue;
      changed = true;
      for (std::size_t m = 0; m < members[g].size(); ++m)
        if (sub[m] > 0) group_of[members[g][m]] = group_count + sub[m] - 1;
      group_count += reps.size() - 1;
    }
  }
  std::vector<Group> groups(group_count);
  for (std::size_t i = 0; i < n; ++i) groups[group_of[i]].spins.push_back(i);
  for (Group &g : groups) {
    g.nucleus = spins[g.spins[0]].nucleus;
    g.twice = twice_spin(g.nucleus);
    g.chem = chem[g.spins[0]];
    for (std::size_t s : g.spins) g.hz += hz[s];
    g.hz /= static_cast<double>(g.spins.size());
  }
  const std::size_t ng = groups.size();
  std::vector<double> jg(ng * ng, 0.0);
  for (std::size_t g = 0; g < ng; ++g)
    for (std::size_t h = g + 1; h < ng; ++h) {
      double sum = 0;
      for (std::size_t a : groups[g].spins)
        for (std::size_t b : groups[h].spins) sum += jt[a * n + b];
      jg[g * ng + h] = jg[h * ng + g] = sum / static_cast<double>(groups[g].spins.size() * groups[h].spins.size());
    }

  // Clusters: join strongly coupled groups of one isotope, strongest first,
  // while the cluster's largest block stays within the cap and its cost (sum
  // of block sizes cubed over every total-spin combination) within 4 cap^3.
  // Chemically equivalent groups go together first (delta nu = 0).
  struct Edge {
    double strength;  // |J| / |delta nu|
    std::size_t g, h;
  };
  std::vector<Edge> edges;
  for (std::size_t g = 0; g < ng; ++g)
    for (std::size_t h = g + 1; h < ng; ++h) {
      if (groups[g].nucleus != groups[h].nucleus) continue;
      const double j = std::fabs(jg[g * ng + h]);
      const double dnu = std::fabs(groups[g].hz - groups[h].hz);
      if (groups[g].chem == groups[h].chem) {
        edges.push_back({std::numeric_limits<double>::infinity(), g, h});
      } else if (j > 0 && dnu < options.weak_coupling_ratio * j) {
        edges.push_back({dnu > 0 ? j / dnu : std::numeric_limits<double>::infinity(), g, h});
      }
    }
  std::stable_sort(edges.begin(), edges.end(), [](const Edge &a, const Edge &b) { return a.strength > b.strength; });
  UnionFind clusters(ng);
  // Per cluster root: block sizes by total K, each group counted as its
  // largest composite spin (whose blocks are the largest).
  std::vector<std::vector<double>> sizes(ng);
  for (std::size_t g = 0; g < ng; ++g)
    sizes[g].assign(static_cast<std::size_t>(groups[g].twice) * groups[g].spins.size() + 1, 1.0);
  std::size_t refused = 0;
  double refused_strongest = 0;
  const double cap = static_cast<double>(options.max_block_size);
  // The cost of all clusters together is bounded too (8 cap^3, a few seconds
  // at the default cap), so that long strongly coupled networks cannot add up
  // to minutes: the strongest couplings get exact treatment first.
  const double total_budget = 8 * cap * cap * cap;
  std::vector<double> cluster_cost(ng, 0.0);
  double total_cost = 0;
  for (const Edge &e : edges) {
    const std::size_t a = clusters.find(e.g), b = clusters.find(e.h);
    if (a == b) continue;
    const std::vector<double> merged = multiply_sizes(sizes[a], sizes[b]);
    const double largest = *std::max_element(merged.begin(), merged.end());
    const double states = std::accumulate(merged.begin(), merged.end(), 0.0);
    bool fits = largest <= cap && states <= kMaxStates;
    if (fits) {
      // Large equivalent groups split into many total-spin combinations,
      // each a problem of its own: count them too.
      std::vector<ExactGroup> trial;
      for (std::size_t g = 0; g < ng; ++g) {
        const std::size_t r = clusters.find(g);
        if (r == a || r == b)
          trial.push_back({groups[g].twice, static_cast<int>(groups[g].spins.size()), groups[g].hz, 0});
      }
      const double cost = simulation::detail::exact_size(trial).cost;
      fits = cost <= 4 * cap * cap * cap && total_cost - cluster_cost[a] - cluster_cost[b] + cost <= total_budget;
      if (fits) {
        total_cost += cost - cluster_cost[a] - cluster_cost[b];
        cluster_cost[a] = cost;
      }
    }
    if (!fits) {
      ++refused;
      refused_strongest = std::max(refused_strongest, e.strength);
      continue;
    }
    clusters.parent[b] = a;
    sizes[a] = merged;
  }
  if (refused > 0)
    out.warnings.push_back(fmt::format(
        "{} strong coupling(s) treated first-order: exact clusters are limited to Fz blocks of {} states "
        "(max_block_size) and a total cost of 8 max_block_size^3; the strongest of them has |delta nu / J| = {:.3g}",
        refused, options.max_block_size, refused_strongest > 0 ? 1.0 / refused_strongest : 0.0));
  std::vector<int> cluster_of(ng);
  std::vector<std::vector<std::size_t>> cluster_groups;
  {
    std::map<std::size_t, int> ids;
    for (std::size_t g = 0; g < ng; ++g) {
      const auto [it, added] = ids.emplace(clusters.find(g), static_cast<int>(cluster_groups.size()));
      if (added) cluster_groups.emplace_back();
      cluster_of[g] = it->second;
      cluster_groups[static_cast<std::size_t>(it->second)].push_back(g);
    }
  }

  // Solve every cluster of the observed isotope.
  std::map<std::size_t, std::vector<Line>> signal_lines;  // chem set -> lines
  std::size_t approximated = 0;
  bool pooled = false;
  for (std::size_t c = 0; c < cluster_groups.size(); ++c) {
    const std::vector<std::size_t> &focal = cluster_groups[c];
    if (groups[focal[0]].nucleus != observe) continue;
    // Outside groups coupled to the cluster, and how unequally.
    std::vector<std::size_t> outside;
    std::vector<double> spread;
    for (std::size_t h = 0; h < ng; ++h) {
      if (cluster_of[h] == static_cast<int>(c)) continue;
      double lo = std::numeric_limits<double>::infinity(), hi = -lo;
      for (std::size_t g : focal) {
        lo = std::min(lo, jg[g * ng + h]);
        hi = std::max(hi, jg[g * ng + h]);
      }
      if (lo == 0 && hi == 0) continue;
      outside.push_back(h);
      spread.push_back(hi - lo);
    }
    // Clusters holding unequally coupled groups join the problem (truncated
    // couplings), most unequal first, while the joint problem stays small.
    std::vector<std::pair<double, int>> candidates;  // (spread, cluster)
    for (std::size_t o = 0; o < outside.size(); ++o) {
      if (spread[o] <= kSameCouplingHz) continue;
      const int pc = cluster_of[outside[o]];
      auto it = std::find_if(candidates.begin(), candidates.end(), [&](const auto &x) { return x.second == pc; });
      if (it == candidates.end())
        candidates.emplace_back(spread[o], pc);
      else
        it->first = std::max(it->first, spread[o]);
    }
    std::stable_sort(candidates.begin(), candidates.end(), [](const auto &x, const auto &y) { return x.first > y.first; });
    ExactProblem problem;
    std::vector<std::size_t> problem_groups;  // problem index -> group
    for (std::size_t g : focal) {
      problem.groups.push_back({groups[g].twice, static_cast<int>(groups[g].spins.size()), groups[g].hz, 0});
      problem_groups.push_back(g);
    }
    const double alone = simulation::detail::exact_size(problem.groups).cost;
    const double budget = std::max(kPartnerCost, 16 * alone);
    int next_cluster = 1;
    for (const auto &cand : candidates) {
      std::vector<ExactGroup> trial = problem.groups;
      for (std::size_t g : cluster_groups[static_cast<std::size_t>(cand.second)])
        trial.push_back({groups[g].twice, static_cast<int>(groups[g].spins.size()), groups[g].hz, next_cluster});
      const ExactSize size = simulation::detail::exact_size(trial);
      if (size.max_block > cap || size.states > kMaxStates || size.cost > budget ||
          total_cost + size.cost > total_budget)
        continue;
      problem.groups = std::move(trial);
      for (std::size_t g : cluster_groups[static_cast<std::size_t>(cand.second)]) problem_groups.push_back(g);
      ++next_cluster;
    }
    const std::size_t np = problem.groups.size();
    problem.j_hz.assign(np * np, 0.0);
    for (std::size_t p = 0; p < np; ++p)
      for (std::size_t q = 0; q < np; ++q)
        if (p != q) problem.j_hz[p * np + q] = jg[problem_groups[p] * ng + problem_groups[q]];
    // Partners add to the total cost the caps bound.
    total_cost += simulation::detail::exact_size(problem.groups).cost - cluster_cost[clusters.find(focal[0])];
    std::vector<RawLine> raw = simulation::detail::solve_exact(problem, kMinIntensity);

    // Remaining outside groups split the lines first-order: all lines alike
    // where the coupling is equal across the cluster (exact), else by the
    // coupling of the group each line belongs to.
    std::vector<Line> common{{0.0, 1.0}};
    std::vector<std::vector<Line>> own(focal.size(), std::vector<Line>{{0.0, 1.0}});
    for (std::size_t o = 0; o < outside.size(); ++o) {
      const std::size_t h = outside[o];
      if (std::find(problem_groups.begin(), problem_groups.end(), h) != problem_groups.end()) continue;
      const int count = static_cast<int>(groups[h].spins.size());
      if (spread[o] <= kSameCouplingHz) {
        common = convolve(common, group_pattern(jg[focal[0] * ng + h], groups[h].twice, count));
        pooled |= cap_lines(common, options.merge_tolerance_hz, options.line_width_hz);
      } else {
        ++approximated;
        for (std::size_t f = 0; f < focal.size(); ++f) {
          own[f] = convolve(own[f], group_pattern(jg[focal[f] * ng + h], groups[h].twice, count));
          pooled |= cap_lines(own[f], options.merge_tolerance_hz, options.line_width_hz);
        }
      }
    }
    for (std::size_t f = 0; f < focal.size(); ++f) {
      own[f] = convolve(own[f], common);
      pooled |= cap_lines(own[f], options.merge_tolerance_hz, options.line_width_hz);
    }
    // Bound the work of splitting: pool the lines of each group, then the
    // patterns, on ever coarser grids until lines x patterns fits.
    const auto split_size = [&] {
      std::size_t total = 0;
      for (const RawLine &r : raw) total += own[r.group].size();
      return total;
    };
    for (double grid = options.line_width_hz / 10; split_size() > kMaxSplitLines; grid *= 2) {
      pooled = true;
      std::vector<RawLine> merged;
      for (std::size_t f = 0; f < focal.size(); ++f) {
        std::vector<Line> lines;
        for (const RawLine &r : raw)
          if (r.group == f) lines.emplace_back(r.hz, r.intensity);
        merge_lines(lines, grid);
        for (const Line &l : lines) merged.push_back({l.first, l.second, static_cast<std::uint32_t>(f)});
        merge_lines(own[f], grid);
      }
      raw = std::move(merged);
    }
    std::map<std::size_t, std::vector<Line>> cluster_lines;
    // Destination of each observed group's lines, looked up once: exact
    // clusters give millions of lines.
    std::vector<std::vector<Line> *> dest_of(focal.size());
    for (std::size_t f = 0; f < focal.size(); ++f) dest_of[f] = &cluster_lines[groups[focal[f]].chem];
    for (const RawLine &r : raw) {
      const std::size_t f = r.group;  // observed groups come first in the problem
      auto &dest = *dest_of[f];
      for (const Line &p : own[f]) {
        const double intensity = r.intensity * p.second;
        if (intensity >= kMinIntensity) dest.emplace_back(r.hz + p.first, intensity);
      }
    }
    for (auto &[set, lines] : cluster_lines) {
      auto &dest = signal_lines[set];
      if (dest.empty())
        dest = std::move(lines);
      else
        dest.insert(dest.end(), lines.begin(), lines.end());
    }
  }
  if (approximated > 0)
    out.warnings.push_back(fmt::format(
        "{} coupling partner(s) couple unequally to the spins of a cluster but would make its exact problem too large: "
        "they split each line by the coupling of the spin the line belongs to",
        approximated));
  if (pooled)
    out.warnings.push_back(fmt::format(
        "first-order splitting would have made too many lines (over {} per pattern or {} per cluster): lines were "
        "pooled on a grid of a tenth of the line width or coarser",
        kMaxPatternLines, kMaxSplitLines));

  // Multiplets, one per chemical set of the observed isotope.
  std::vector<std::vector<std::size_t>> set_spins(*std::max_element(chem.begin(), chem.end()) + 1);
  for (std::size_t i = 0; i < n; ++i) set_spins[chem[i]].push_back(i);
  // One sort of every line, signal attached; each signal's lines come out of
  // it in order. The full list is merged once from the unmerged lines, so
  // that runs of close lines group the same way whichever signals they
  // belong to.
  struct Tagged {
    double hz, intensity;
    std::size_t set;
  };
  std::vector<Tagged> tagged;
  std::size_t total = 0;
  for (const auto &[set, lines] : signal_lines) total += lines.size();
  tagged.reserve(total);
  for (const auto &[set, lines] : signal_lines)
    for (const Line &l : lines) tagged.push_back({l.first, l.second, set});
  std::sort(tagged.begin(), tagged.end(), [](const Tagged &a, const Tagged &b) { return a.hz < b.hz; });
  std::vector<Line> all;
  all.reserve(tagged.size());
  std::vector<std::vector<Line> *> by_set(n, nullptr);
  for (auto &[set, lines] : signal_lines) {
    lines.clear();
    by_set[set] = &lines;
  }
  for (const Tagged &t : tagged) {
    all.emplace_back(t.hz, t.intensity);
    by_set[t.set]->emplace_back(t.hz, t.intensity);
  }
  tagged = {};
  const double mhz = out.observed_mhz;
  for (auto &[set, lines] : signal_lines) {
    merge_sorted(lines, options.merge_tolerance_hz);
    if (lines.empty()) continue;
    const std::vector<std::size_t> &members = set_spins[set];
    Multiplet m;
    m.isotope = observe;
    if (observe == SpinNucleus::C13) m.nucleus = Nucleus::C13;
    m.atoms = members;
    m.integral = static_cast<double>(members.size());
    double sum = 0, moment = 0, strongest = 0;
    for (const Line &l : lines) {
      sum += l.second;
      moment += l.first * l.second;
      strongest = std::max(strongest, l.second);
      m.lines.push_back({l.first / mhz, l.first, l.second});
    }
    m.ppm = moment / sum / mhz;
    // The range covers lines of at least 1% of the strongest: the trade quotes
    // where a multiplet visibly starts and ends.
    m.ppm_low = std::numeric_limits<double>::infinity();
    m.ppm_high = -m.ppm_low;
    for (const Line &l : lines)
      if (l.second >= 0.01 * strongest) {
        m.ppm_low = std::min(m.ppm_low, l.first / mhz);
        m.ppm_high = std::max(m.ppm_high, l.first / mhz);
      }

    // The label describes the signal as drawn at the line width: the
    // first-order pattern of the representative spin's couplings to partners
    // it is weakly coupled to (a strongly coupled partner's splitting does
    // not show as such) is compared with it (multiplet_reading.hpp).
    // Chemically equivalent spins that couple differently (AA'XX') and strong
    // coupling thus read "m" only when the signal looks it.
    const double resolution = options.line_width_hz;
    const std::size_t rep = members[0];
    if (std::all_of(members.begin(), members.end(), [&](std::size_t s) { return spins[s].exchangeable; })) {
      m.label = "br s";
    } else {
      std::vector<std::pair<double, int>> partners;  // (|J|, 2I) of weakly coupled partners
      for (std::size_t k = 0; k < n; ++k) {
        if (chem[k] == set) continue;
        const double j = std::fabs(jt[rep * n + k]);
        if (j < resolution) continue;
        if (spins[k].nucleus == spins[rep].nucleus && std::fabs(hz[rep] - hz[k]) < kSecondOrderRatio * j) continue;
        partners.emplace_back(j, twice_spin(spins[k].nucleus));
      }
      std::stable_sort(partners.begin(), partners.end(), [](const auto &a, const auto &b) { return a.first > b.first; });
      // Couplings within one line width of the step's largest look equal.
      std::vector<simulation::detail::SplitStep> steps;
      double first = 0, sum = 0;
      for (const auto &[j, twice] : partners) {
        if (steps.empty() || first - j >= resolution) {
          if (!steps.empty()) steps.back().j_hz = sum / static_cast<double>(steps.back().partner_twice.size());
          steps.emplace_back();
          first = j;
          sum = 0;
        }
        steps.back().partner_twice.push_back(twice);
        sum += j;
      }
      if (!steps.empty()) steps.back().j_hz = sum / static_cast<double>(steps.back().partner_twice.size());
      simulation::detail::Reading reading = simulation::detail::read_multiplet(lines, {steps}, resolution);
      m.label = std::move(reading.label);
      m.j_hz = std::move(reading.j_hz);
    }
    out.multiplets.push_back(std::move(m));
  }
  std::stable_sort(out.multiplets.begin(), out.multiplets.end(),
                   [](const Multiplet &a, const Multiplet &b) { return a.ppm > b.ppm; });
  merge_sorted(all, options.merge_tolerance_hz);
  out.lines.reserve(all.size());
  for (const Line &l : all) out.lines.push_back({l.first / mhz, l.first, l.second});
  return out;
}

}  // namespace nmrpred
