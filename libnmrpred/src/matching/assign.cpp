// Min-cost flow (successive shortest paths) for the relaxed placement, then
// repair of split classes and local moves on the exact cost. See assign.hpp.
#include "matching/assign.hpp"

#include <algorithm>
#include <cmath>
#include <deque>
#include <limits>

#include <fmt/format.h>

#include <nmrpred/error.hpp>

namespace nmrpred::detail {

namespace {

// Relaxations smaller than this are ignored, so rounding in sums of doubles
// can never make the label-correcting search cycle.
constexpr double kEps = 1e-12;

struct Edge {
  std::size_t to = 0;
  int cap = 0;
  double cost = 0;
};

class FlowGraph {
 public:
  explicit FlowGraph(std::size_t nodes) : out_(nodes) {}

  std::size_t add(std::size_t from, std::size_t to, int cap, double cost) {
    const std::size_t id = edges_.size();
    edges_.push_back({to, cap, cost});
    out_[from].push_back(id);
    edges_.push_back({from, 0, -cost});
    out_[to].push_back(id + 1);
    return id;
  }

  /// Sends `amount` units from s to t at minimum cost; returns the cost. The
  /// graph starts without cycles, and successive shortest paths keep the
  /// residual graph free of negative cycles, so Bellman-Ford (queue form)
  /// handles the negative occupancy increments.
  double min_cost_flow(std::size_t s, std::size_t t, int amount) {
    const std::size_t n = out_.size();
    std::vector<double> dist(n);
    std::vector<std::size_t> via(n);
    std::vector<char> queued(n);
    std::vector<std::size_t> visits(n);
    double total = 0;
    while (amount > 0) {
      std::fill(dist.begin(), dist.end(), std::numeric_limits<double>::infinity());
      std::fill(queued.begin(), queued.end(), 0);
      std::fill(visits.begin(), visits.end(), 0);
      dist[s] = 0;
      std::deque<std::size_t> queue{s};
      queued[s] = 1;
      while (!queue.empty()) {
        const std::size_t u = queue.front();
        queue.pop_front();
        queued[u] = 0;
        if (++visits[u] > n) throw InternalError("assignment: negative cycle in the residual graph");
        for (std::size_t id : out_[u]) {
          const Edge &e = edges_[id];
          if (e.cap <= 0) continue;
          const double d = dist[u] + e.cost;
          if (d < dist[e.to] - kEps) {
            dist[e.to] = d;
            via[e.to] = id;
            if (!queued[e.to]) {
              queued[e.to] = 1;
              queue.push_back(e.to);
            }
          }
        }
      }
      if (!std::isfinite(dist[t])) throw InternalError("assignment: no augmenting path left");
      int push = amount;
      for (std::size_t v = t; v != s; v = edges_[via[v] ^ 1].to) push = std::min(push, edges_[via[v]].cap);
      for (std::size_t v = t; v != s; v = edges_[via[v] ^ 1].to) {
        edges_[via[v]].cap -= push;
        edges_[via[v] ^ 1].cap += push;
      }
      total += push * dist[t];
      amount -= push;
    }
    return total;
  }

  /// Units sent along edge `id` (the capacity its reverse edge gained).
  int flow(std::size_t id) const { return edges_[id ^ 1].cap; }

 private:
  std::vector<Edge> edges_;
  std::vector<std::vector<std::size_t>> out_;
};

double place_cost(const AssignProblem &p, std::size_t i, long d) {
  return d < 0 ? p.missing[i] : p.unit_cost[i * p.peaks + static_cast<std::size_t>(d)];
}

}  // namespace

double assignment_cost(const AssignProblem &p, const std::vector<long> &place) {
  std::vector<int> load(p.peaks, 0);
  double cost = 0;
  for (std::size_t i = 0; i < p.signals; ++i) {
    cost += p.weight[i] * place_cost(p, i, place[i]);
    if (place[i] >= 0) load[static_cast<std::size_t>(place[i])] += p.weight[i];
  }
  for (std::size_t j = 0; j < p.peaks; ++j) cost += p.occupancy[j][static_cast<std::size_t>(load[j])];
  return cost;
}

namespace {

// Outcome of the relaxed problem: its cost and where each class's units went.
struct Relaxed {
  double cost = 0;
  std::vector<std::vector<std::pair<long, int>>> parts;  // per class: (destination, units), -1 = unplaced
};

// Min-cost flow of the relaxation with some classes fixed: fix[i] == kFree
// leaves class i free, -1 keeps it unplaced, j >= 0 puts it on peak j.
constexpr long kFree = -2;

Relaxed solve_relaxed(const AssignProblem &p, const std::vector<long> &fix, int units) {
  const std::size_t n = p.signals, m = p.peaks;
  const std::size_t src = 0, sink = n + m + 1;
  FlowGraph g(n + m + 2);
  std::vector<std::size_t> to_peak(n * m, 0), to_missing(n, 0);
  std::vector<char> has_peak(n * m, 0), has_missing(n, 0);
  for (std::size_t i = 0; i < n; ++i) {
    g.add(src, 1 + i, p.weight[i], 0.0);
    for (std::size_t j = 0; j < m; ++j) {
      if (fix[i] != kFree && fix[i] != static_cast<long>(j)) continue;
      to_peak[i * m + j] = g.add(1 + i, 1 + n + j, p.weight[i], p.unit_cost[i * m + j]);
      has_peak[i * m + j] = 1;
    }
    if (fix[i] == kFree || fix[i] == -1) {
      to_missing[i] = g.add(1 + i, sink, p.weight[i], p.missing[i]);
      has_missing[i] = 1;
    }
  }
  for (std::size_t j = 0; j < m; ++j) {
    // Increments of a convex occupancy never decrease, so parallel unit edges
    // are used in order; runs of equal increments share one edge.
    const auto &occ = p.occupancy[j];
    std::size_t k = 1;
    while (k <= static_cast<std::size_t>(units)) {
      const double inc = occ[k] - occ[k - 1];
      std::size_t end = k + 1;
      while (end <= static_cast<std::size_t>(units) && std::fabs((occ[end] - occ[end - 1]) - inc) <= 1e-9) ++end;
      g.add(1 + n + j, sink, static_cast<int>(end - k), inc);
      k = end;
    }
  }
  Relaxed r;
  for (std::size_t j = 0; j < m; ++j) r.cost += p.occupancy[j][0];
  r.cost += g.min_cost_flow(src, sink, units);
  r.parts.resize(n);
  for (std::size_t i = 0; i < n; ++i) {
    if (has_missing[i] && g.flow(to_missing[i]) > 0) r.parts[i].emplace_back(-1, g.flow(to_missing[i]));
    for (std::size_t j = 0; j < m; ++j)
      if (has_peak[i * m + j] && g.flow(to_peak[i * m + j]) > 0)
        r.parts[i].emplace_back(static_cast<long>(j), g.flow(to_peak[i * m + j]));
  }
  return r;
}

// Keeps each class whole: the destination holding most of its units wins
// (ties: the cheaper one).
std::vector<long> round_relaxed(const AssignProblem &p, const Relaxed &r) {
  std::vector<long> place(p.signals, -1);
  for (std::size_t i = 0; i < p.signals; ++i) {
    int best_units = -1;
    for (const auto &[d, f] : r.parts[i]) {
      if (f > best_units || (f == best_units && place_cost(p, i, d) < place_cost(p, i, place[i]))) {
        place[i] = d;
        best_units = f;
      }
    }
  }
  return place;
}

// Local moves on the exact cost: move one class, or swap two. Each accepted
// move lowers the cost by more than 1e-9; the pass cap only bounds the work
// on pathological input.
void improve(const AssignProblem &p, std::vector<long> &place) {
  const std::size_t n = p.signals, m = p.peaks;
  std::vector<int> load(m, 0);
  for (std::size_t i = 0; i < n; ++i)
    if (place[i] >= 0) load[static_cast<std::size_t>(place[i])] += p.weight[i];
  auto occ_delta = [&](long d, int change) {
    if (d < 0) return 0.0;
    const auto j = static_cast<std::size_t>(d);
    return p.occupancy[j][static_cast<std::size_t>(load[j] + change)] - p.occupancy[j][static_cast<std::size_t>(load[j])];
  };
  auto apply = [&](std::size_t i, long d) {
    if (place[i] >= 0) load[static_cast<std::size_t>(place[i])] -= p.weight[i];
    if (d >= 0) load[static_cast<std::size_t>(d)] += p.weight[i];
    place[i] = d;
  };
  for (int pass = 0; pass < 200; ++pass) {
    bool improved = false;
    for (std::size_t i = 0; i < n; ++i) {
      const long cur = place[i];
      const int w = p.weight[i];
      long best = cur;
      double best_delta = -1e-9;
      for (long d = -1; d < static_cast<long>(m); ++d) {
        if (d == cur) continue;
        const double delta = w * (place_cost(p, i, d) - place_cost(p, i, cur)) + occ_delta(cur, -w) + occ_delta(d, w);
        if (delta < best_delta) {
          best_delta = delta;
          best = d;
        }
      }
      if (best != cur) {
        apply(i, best);
        improved = true;
      }
    }
    for (std::size_t a = 0; a < n; ++a) {
      for (std::size_t b = a + 1; b < n; ++b) {
        const long da = place[a], db = place[b];
        if (da == db) continue;
        const int wa = p.weight[a], wb = p.weight[b];
        double delta = wa * (place_cost(p, a, db) - place_cost(p, a, da)) +
                       wb * (place_cost(p, b, da) - place_cost(p, b, db));
        delta += occ_delta(da, wb - wa) + occ_delta(db, wa - wb);
        if (delta < -1e-9) {
          apply(a, db);
          apply(b, da);
          improved = true;
        }
      }
    }
    // Chains of two: class i moves to peak d and one class k already on d
    // makes room by moving anywhere else (reaches what single moves and
    // swaps cannot, e.g. an optional class taking a peak whose occupant
    // belongs one peak over).
    auto chain_from = [&](std::size_t i) {
      const long ci = place[i];
      for (long d = 0; d < static_cast<long>(m); ++d) {
        if (d == ci) continue;
        for (std::size_t k = 0; k < n; ++k) {
          if (k == i || place[k] != d) continue;
          for (long e = -1; e < static_cast<long>(m); ++e) {
            if (e == d) continue;
            // Exact change over the (at most three) peaks involved.
            double delta = p.weight[i] * (place_cost(p, i, d) - place_cost(p, i, ci)) +
                           p.weight[k] * (place_cost(p, k, e) - place_cost(p, k, d));
            long touched[3] = {ci, d, e};
            int change[3] = {-p.weight[i], p.weight[i] - p.weight[k], p.weight[k]};
            if (e == ci) {
              change[0] += change[2];
              touched[2] = -1;
            }
            for (int t = 0; t < 3; ++t)
              if (touched[t] >= 0) delta += occ_delta(touched[t], change[t]);
            if (delta < -1e-9) {
              apply(k, e);
              apply(i, d);
              return true;
            }
          }
        }
      }
      return false;
    };
    for (std::size_t i = 0; i < n; ++i)
      if (chain_from(i)) improved = true;
    if (!improved) break;
  }
}

// Branch and bound over the classes the relaxation splits: a class is fixed
// to each destination in turn (those its units went to first), and a branch
// whose relaxed cost cannot beat the best whole-class placement is dropped.
// The relaxation of every node is a lower bound of its branch, so finishing
// within the node budget proves the result optimal.
struct Search {
  const AssignProblem &p;
  int units;
  std::vector<long> best;
  double best_cost;
  int nodes_left;
  bool complete = true;

  void run(std::vector<long> &fix, const Relaxed &r) {
    if (r.cost >= best_cost - 1e-9) return;
    // The class with most units outside its largest part is branched on first.
    long split = -1;
    int split_units = 0;
    for (std::size_t i = 0; i < p.signals; ++i) {
      if (r.parts[i].size() < 2) continue;
      int largest = 0;
      for (const auto &part : r.parts[i]) largest = std::max(largest, part.second);
      if (p.weight[i] - largest > split_units) {
        split_units = p.weight[i] - largest;
        split = static_cast<long>(i);
      }
    }
    if (split < 0) {
      best = round_relaxed(p, r);
      best_cost = assignment_cost(p, best);
      return;
    }
    const auto i = static_cast<std::size_t>(split);
    std::vector<std::pair<double, long>> order;  // (priority, destination)
    for (long d = -1; d < static_cast<long>(p.peaks); ++d) {
      double priority = place_cost(p, i, d);
      for (const auto &part : r.parts[i])
        if (part.first == d) priority -= 1e6 * part.second;  // the relaxation's own choices first
      order.emplace_back(priority, d);
    }
    std::sort(order.begin(), order.end());
    for (const auto &[priority, d] : order) {
      (void)priority;
      if (nodes_left <= 0) {
        complete = false;
        return;
      }
      --nodes_left;
      fix[i] = d;
      run(fix, solve_relaxed(p, fix, units));
      fix[i] = kFree;
    }
  }
};

// Relaxations solved per spectrum at most; ample for real peak lists, where
// the relaxation splits a class or two, while bounding the work on
// adversarial input.
constexpr int kNodeBudget = 8;

}  // namespace

AssignSolution solve_assignment(const AssignProblem &p) {
  const std::size_t n = p.signals, m = p.peaks;
  int units = 0;
  for (int w : p.weight) units += w;
  if (p.weight.size() != n || p.missing.size() != n || p.unit_cost.size() != n * m || p.occupancy.size() != m)
    throw InternalError("assignment: inconsistent problem sizes");
  for (const auto &g : p.occupancy)
    if (g.size() != static_cast<std::size_t>(units) + 1)
      throw InternalError(fmt::format("assignment: occupancy table of {} entries for {} units", g.size(), units));

  AssignSolution sol;
  std::vector<long> fix(n, kFree);
  const Relaxed root = solve_relaxed(p, fix, units);
  sol.lower_bound = root.cost;
  sol.place = round_relaxed(p, root);
  improve(p, sol.place);
  sol.cost = assignment_cost(p, sol.place);
  if (sol.cost <= sol.lower_bound + 1e-9) {
    sol.proven_optimal = true;
    return sol;
  }
  Search search{p, units, sol.place, sol.cost, kNodeBudget};
  search.run(fix, root);
  if (search.best_cost < sol.cost) {
    sol.place = search.best;
    improve(p, sol.place);
    sol.cost = assignment_cost(p, sol.place);
  }
  sol.proven_optimal = search.complete;
  return sol;
}

}  // namespace nmrpred::detail
