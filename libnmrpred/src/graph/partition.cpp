#include "graph/partition.hpp"

#include <algorithm>
#include <numeric>

namespace nmrpred::detail {

namespace {

// A neighbour count per bond kind packed into one key; 16 bits per kind is
// far above any real coordination number.
constexpr std::uint64_t kOrderWeight[5] = {0, 1ull, 1ull << 16, 1ull << 32, 1ull << 48};

inline std::uint64_t mix(std::uint64_t h, std::uint64_t v) {
  h ^= v + 0x9E3779B97F4A7C15ull + (h << 6) + (h >> 2);
  return h * 0x100000001B3ull;
}

void push(RefineScratch &s, std::uint32_t start) {
  const std::uint32_t w = start >> 6;
  const std::uint64_t bit = std::uint64_t{1} << (start & 63);
  if (!(s.pending[w] & bit)) {
    s.pending[w] |= bit;
    ++s.pending_count;
    if (w < s.pending_low) s.pending_low = w;
  }
}

// Index of the lowest set bit of a non-zero word.
inline std::uint32_t lowest_bit(std::uint64_t x) noexcept {
#if defined(__GNUC__) || defined(__clang__)
  return static_cast<std::uint32_t>(__builtin_ctzll(x));
#else
  std::uint32_t b = 0;
  while (!(x & 1u)) {
    x >>= 1;
    ++b;
  }
  return b;
#endif
}

// Removes and returns the lowest pending cell start (there is one).
std::uint32_t pop_lowest(RefineScratch &s) {
  std::uint32_t w = s.pending_low;
  while (s.pending[w] == 0) ++w;
  s.pending_low = w;
  const auto b = lowest_bit(s.pending[w]);
  s.pending[w] &= s.pending[w] - 1;
  --s.pending_count;
  return w * 64 + b;
}

// Sorts the touched atoms by (cell, key, atom). The three go into one
// 128-bit record first, so comparisons read no other array.
void sort_touched(const Partition &p, RefineScratch &s) {
  const std::size_t t = s.touched_atoms.size();
  if (t < 2) return;
  s.sort_buf.resize(t);
  RefineScratch::SortItem *v = s.sort_buf.data();
  for (std::size_t i = 0; i < t; ++i) {
    const std::uint32_t b = s.touched_atoms[i];
    const std::uint64_t key = s.key[b];
    v[i].hi = std::uint64_t{p.cell[b]} << 32 | key >> 32;
    v[i].lo = key << 32 | b;
  }
  auto less = [](const RefineScratch::SortItem &x, const RefineScratch::SortItem &y) {
    return x.hi != y.hi ? x.hi < y.hi : x.lo < y.lo;
  };
  if (t <= 16) {
    for (std::size_t i = 1; i < t; ++i) {
      const RefineScratch::SortItem x = v[i];
      std::size_t j = i;
      for (; j > 0 && less(x, v[j - 1]); --j) v[j] = v[j - 1];
      v[j] = x;
    }
  } else {
    std::sort(v, v + t, less);
  }
  for (std::size_t i = 0; i < t; ++i) s.touched_atoms[i] = static_cast<std::uint32_t>(v[i].lo);
}

// Coarsest equitable refinement (Hopcroft-style: after a cell has served as a
// splitter, only the smaller pieces of its later splits need to serve again).
// The trace is kept only when `Trace`: the partition is the same either way.
template <bool Trace>
std::uint64_t refine(const Graph &g, Partition &p, RefineScratch &s) {
  std::uint64_t trace = 0xCBF29CE484222325ull;
  while (s.pending_count > 0) {
    // Lowest start first keeps the sequence a function of the partition alone.
    const std::uint32_t w = pop_lowest(s);
    const std::uint32_t wend = p.end[w];

    s.touched_atoms.clear();
    for (std::uint32_t k = w; k < wend; ++k) {
      const std::uint32_t a = p.elems[k];
      for (std::uint32_t e = g.off[a]; e < g.off[a + 1]; ++e) {
        const std::uint32_t b = g.nbr[e];
        if (s.key[b] == 0) s.touched_atoms.push_back(b);
        s.key[b] += kOrderWeight[g.order[e]];
      }
    }
    // Atoms of singleton cells cannot split. They leave the list before the
    // sort (late in a refinement most touched atoms are such) and enter the
    // trace as a sum, which needs no order and so stays an invariant.
    std::uint64_t singles = 0;
    std::size_t kept = 0;
    for (std::uint32_t b : s.touched_atoms) {
      const std::uint32_t c = p.cell[b];
      if (p.end[c] - c == 1) {
        if constexpr (Trace) singles += mix(c, s.key[b]);
        s.key[b] = 0;
      } else {
        s.touched_atoms[kept++] = b;
      }
    }
    s.touched_atoms.resize(kept);
    if constexpr (Trace) trace = mix(trace, singles);
    // Group the touched atoms by cell, in key order within a cell; atoms of a
    // cell that were not touched keep key 0 and stay where they are, so a
    // split costs the touched atoms only, not the whole cell.
    sort_touched(p, s);
    if constexpr (Trace) trace = mix(trace, w);
    for (std::size_t g0 = 0; g0 < s.touched_atoms.size();) {
      const std::uint32_t c = p.cell[s.touched_atoms[g0]];
      std::size_t g1 = g0;
      while (g1 < s.touched_atoms.size() && p.cell[s.touched_atoms[g1]] == c) ++g1;
      const std::uint32_t e = p.end[c];
      const std::uint32_t t = static_cast<std::uint32_t>(g1 - g0);
      const std::uint64_t kmin = s.key[s.touched_atoms[g0]], kmax = s.key[s.touched_atoms[g1 - 1]];
      if (e - c == 1 || (t == e - c && kmin == kmax)) {
        if constexpr (Trace) trace = mix(trace, (std::uint64_t(c) << 1) ^ kmin);
        g0 = g1;
        continue;
      }
      // Place the touched atoms, in key order, at the end of the cell.
      const std::uint32_t region = e - t;
      for (std::uint32_t k = 0; k < t; ++k) {
        const std::uint32_t b = s.touched_atoms[g0 + k];
        const std::uint32_t q = region + k;
        const std::uint32_t y = p.elems[q];
        const std::uint32_t from = p.pos[b];
        p.elems[from] = y;
        p.pos[y] = from;
        p.elems[q] = b;
        p.pos[b] = q;
      }
      const bool was_pending = s.is_pending(c);
      std::uint32_t largest_start = c, largest_size = 0;
      auto close_run = [&](std::uint32_t run, std::uint32_t k, std::uint64_t key) {
        p.end[run] = k;
        if (run != c)
          for (std::uint32_t q = run; q < k; ++q) p.cell[p.elems[q]] = run;
        if constexpr (Trace) trace = mix(trace, mix(run, key) ^ (k - run));
        if (k - run > largest_size) {
          largest_size = k - run;
          largest_start = run;
        }
      };
      if (region > c) close_run(c, region, 0);
      std::uint32_t run = region;
      for (std::uint32_t k = region + 1; k <= e; ++k)
        if (k == e || s.key[p.elems[k]] != s.key[p.elems[run]]) {
          close_run(run, k, s.key[p.elems[run]]);
          run = k;
        }
      // Push the new cells; the largest may stay out if the old cell had
      // already been used as a splitter.
      for (std::uint32_t st = c; st < e; st = p.end[st])
        if (was_pending || st != largest_start) push(s, st);
      g0 = g1;
    }
    for (std::uint32_t b : s.touched_atoms) s.key[b] = 0;
  }
  return trace;
}

}  // namespace

std::uint8_t Graph::bond(std::uint32_t a, std::uint32_t b) const {
  auto first = nbr.begin() + off[a], last = nbr.begin() + off[a + 1];
  auto it = std::lower_bound(first, last, b);
  if (it == last || *it != b) return 0;
  return order[static_cast<std::size_t>(it - nbr.begin())];
}

void RefineScratch::reset(std::uint32_t n) {
  key.assign(n, 0);
  pending.assign(n / 64 + 1, 0);
  pending_count = 0;
  pending_low = 0;
  touched_atoms.clear();
  // Each holds at most n entries; growing them push by push costs more
  // allocations than a refinement does work on small molecules.
  touched_atoms.reserve(n);
  sort_buf.reserve(n);
}

void initial_partition(const Graph &g, Partition &p, RefineScratch &s) {
  const std::uint32_t n = g.n;
  p.elems.resize(n);
  std::iota(p.elems.begin(), p.elems.end(), 0u);
  // Not a stable sort, and not to be made one: the order within a colour
  // picks the canonical configuration of unspecified stereo, and with it
  // the classes of some molecules.
  std::sort(p.elems.begin(), p.elems.end(), [&](std::uint32_t a, std::uint32_t b) {
    return g.colour[a] < g.colour[b];
  });
  p.pos.assign(n, 0);
  p.cell.assign(n, 0);
  p.end.assign(n, 0);
  s.reset(n);
  for (std::uint32_t k = 0; k < n;) {
    std::uint32_t j = k;
    while (j < n && g.colour[p.elems[j]] == g.colour[p.elems[k]]) ++j;
    for (std::uint32_t q = k; q < j; ++q) {
      p.pos[p.elems[q]] = q;
      p.cell[p.elems[q]] = k;
    }
    p.end[k] = j;
    push(s, k);
    k = j;
  }
  refine<false>(g, p, s);
}

std::uint64_t individualize(const Graph &g, Partition &p, std::uint32_t atom, RefineScratch &s, bool traced) {
  const std::uint32_t c = p.cell[atom];
  const std::uint32_t e = p.end[c];
  if (e - c == 1) return 0x5555;
  // Move the atom to the front of its cell.
  const std::uint32_t k = p.pos[atom];
  const std::uint32_t other = p.elems[c];
  std::swap(p.elems[c], p.elems[k]);
  p.pos[atom] = c;
  p.pos[other] = k;
  p.end[c] = c + 1;
  p.end[c + 1] = e;
  for (std::uint32_t q = c + 1; q < e; ++q) p.cell[p.elems[q]] = c + 1;
  if (s.is_pending(c)) push(s, c + 1);
  push(s, c);
  if (!traced) {
    refine<false>(g, p, s);
    return 0;
  }
  return mix(c, refine<true>(g, p, s));
}

}  // namespace nmrpred::detail
