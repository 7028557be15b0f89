// Minimum-cost placement of predicted signals on observed peaks (private to
// matching/). The problem: signal i carries weight[i] units (1H: protons, 13C:
// one line) and goes whole onto one peak or stays unplaced; placing costs
// weight[i] * unit_cost(i, j), leaving it unplaced weight[i] * missing[i]; each
// peak j adds occupancy[j][k] for the k units it receives. Occupancy
// functions must be convex in k (the callers build them so), which makes the
// relaxation that lets a signal's units spread over several peaks an exact
// min-cost flow. Keeping classes whole (a class is never split across peaks)
// turns the problem into a bin packing, NP-hard in general, so a split left
// by the flow is repaired, improved by local moves on the exact cost, and
// then searched by a small branch and bound over the split classes (bounded
// by the relaxation). The root flow's cost is a lower bound; when nothing was
// split, or the search finished, the result is proven optimal.
#ifndef NMRPRED_MATCHING_ASSIGN_HPP
#define NMRPRED_MATCHING_ASSIGN_HPP

#include <cstddef>
#include <vector>

namespace nmrpred::detail {

struct AssignProblem {
  std::size_t signals = 0;
  std::size_t peaks = 0;
  std::vector<int> weight;           ///< per signal, >= 1
  std::vector<double> missing;       ///< per signal, cost per unit when unplaced, >= 0
  std::vector<double> unit_cost;     ///< signals x peaks, row-major, cost per unit, >= 0
  /// Per peak: cost of receiving k units, k = 0..sum(weight); convex in k.
  std::vector<std::vector<double>> occupancy;
};

struct AssignSolution {
  /// Per signal: the peak it sits on, or -1 when unplaced.
  std::vector<long> place;
  double cost = 0;         ///< exact cost of `place`
  double lower_bound = 0;  ///< cost of the relaxed (splittable) optimum
  bool proven_optimal = true;
};

/// Cost of a placement under `problem` (no checks beyond sizes).
double assignment_cost(const AssignProblem &problem, const std::vector<long> &place);

/// Solves `problem`. Sizes must agree (the caller builds them); throws
/// InternalError otherwise. Work per relaxation: U shortest paths over
/// O(n*m + m*U) edges for U total units; at most 1 + 8 relaxations.
AssignSolution solve_assignment(const AssignProblem &problem);

}  // namespace nmrpred::detail

#endif
