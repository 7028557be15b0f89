// SMARTS subset for the rule tables; semantics in smarts.hpp.

#include "graph/smarts.hpp"
#include "graph/union_find.hpp"

#include <nmrpred/error.hpp>

#include <algorithm>
#include <cctype>
#include <cstring>
#include <limits>
#include <map>
#include <numeric>
#include <set>
#include <utility>

#include <fmt/format.h>

namespace nmrpred::detail {

enum class Prim : std::uint8_t {
  True,
  AtomicNumber,
  Aromatic,
  TotalH,
  HeavyDegree,
  Connectivity,
  Charge,
  RingCount,  // value -1: in any ring
  RingSize,   // value -1: in any ring
  Isotope,
  Recursive,
  BondSingle,
  BondDouble,
  BondTriple,
  BondAromatic,
  BondRing,
};

enum class Op : std::uint8_t { Prim, Not, And, Or };

struct ExprNode {
  Op op = Op::Prim;
  Prim prim = Prim::True;
  int value = 0;
  int left = -1;
  int right = -1;
};

struct PatternBond {
  std::uint32_t a = 0, b = 0;
  int expr = -1;  // root node; -1 = single or aromatic (nothing written)
  // Bit o set: a bond of BondOrder o matches. Valid when by_order, that is
  // when the expression asks about the bond order alone (not '@').
  std::uint8_t orders = 0;
  bool by_order = false;
};

// Depth-first order of the pattern atoms from one root (see search_order).
struct SearchOrder {
  std::vector<std::uint32_t> order, parent, rank;
  // Per pattern atom: the pattern bond to its parent, and the bonds to the
  // other atoms placed before it (ring closures), closures[closure_start[q]
  // .. closure_start[q + 1]) as (pattern atom, pattern bond).
  std::vector<std::uint32_t> parent_bond, closure_start;
  std::vector<std::pair<std::uint32_t, std::uint32_t>> closures;
};

// Properties a pattern atom's expression demands through '&' and ';' alone
// (-1: left open). A necessary condition only: the expression still decides.
struct AtomFilter {
  int atomic_number = -1, aromatic = -1, hydrogens = -1, heavy_degree = -1, degree = -1;
  bool has_charge = false;
  int charge = 0;
  bool never = false;  // two demands contradict each other
  // The demands as a test on SmartsTarget::packed(): (packed & mask) == value.
  std::uint64_t mask = 0, value = 0;
  // The expression is a conjunction of demands the mask holds in full, so
  // passing the mask test is matching it: the expression is not walked.
  bool exact = false;
  // The expression holds a recursive part: a search of its own, so worth
  // testing after cheaper tests have had their chance to fail.
  bool costly = false;
};

// Fields of SmartsTarget::packed(), 8 bits each. Counts above 254 are stored
// as 255, and demands above 254 are left to the expression.
constexpr int kPackAtomicNumber = 0, kPackAromatic = 8, kPackHydrogens = 16, kPackHeavyDegree = 24, kPackDegree = 32,
              kPackCharge = 40;

std::uint64_t pack_field(std::uint64_t v, int shift) { return (v & 0xFFu) << shift; }

struct SmartsImpl {
  std::string text;
  // Keys the per-target memo of recursive parts: tables repeat the same
  // part text in many rows, and equal texts have equal answers.
  std::size_t text_hash = 0;
  std::vector<ExprNode> nodes;
  std::vector<int> atom_expr;  // root node per pattern atom
  std::vector<PatternBond> bonds;
  std::vector<std::vector<std::pair<std::uint32_t, std::uint32_t>>> adjacency;  // (atom, bond)
  std::vector<SmartsPattern> recursive;
  // Search order per root atom, made once at compile time: anchored searches
  // run for every carbon of every molecule, and building the order per search
  // cost more than most searches themselves.
  std::vector<SearchOrder> orders;
  // Per root atom, an order that closes the pattern's cycles early
  // (make_closing_order), for the searches whose callers ask what is found,
  // not in which order: all_matches() and the anchored test of match_at().
  std::vector<SearchOrder> closing_orders;
  // Heavy atoms a molecule needs for any match: (atomic number * 4 +
  // aromatic code 0 aliphatic / 1 aromatic / 2 either, count), from the
  // element and aromaticity that each atom's expression demands outright.
  // A molecule short of them is rejected without a search.
  std::vector<std::pair<std::uint32_t, std::uint32_t>> needs;
  // The same per ring system of the pattern (atoms joined by bonds that lie
  // on a cycle of the pattern): a cycle maps onto a cycle, so each system
  // lies within one ring system of the molecule, which must hold its atoms.
  std::vector<std::vector<std::pair<std::uint32_t, std::uint32_t>>> ring_system_needs;
  // Per pattern atom, the plain properties its expression demands outright;
  // a candidate failing them is rejected before the expression is walked.
  std::vector<AtomFilter> filters;
  // The pattern atoms bonded to atom 0 with the bond between (index into
  // bonds). An anchored match needs, for each, a heavy neighbour of the
  // anchor that passes its filter over a matching bond; most anchored
  // searches fail there, and the test costs less than setting one up.
  std::vector<std::pair<std::uint32_t, std::uint32_t>> root_neighbours;
  // Per pattern atom: 1 when it lies on a cycle of the pattern, whose image
  // is then a ring atom of the molecule.
  std::vector<std::uint8_t> on_cycle;
};

namespace {

constexpr std::size_t kMaxPatternLength = 1000;

bool is_digit(char c) { return c >= '0' && c <= '9'; }
bool is_lower(char c) { return c >= 'a' && c <= 'z'; }
bool is_upper(char c) { return c >= 'A' && c <= 'Z'; }

class Parser {
 public:
  Parser(std::string_view text, SmartsImpl &out) : s_(text), out_(out) {}

  void parse() {
    if (s_.empty()) fail("empty pattern");
    // Table patterns are short; a bound keeps the recursive descent shallow
    // whatever a replacement table set holds.
    if (s_.size() > kMaxPatternLength) fail(fmt::format("longer than {} characters", kMaxPatternLength));
    int prev = -1;
    int pending = -2;  // -2: no bond written; else node root
    std::vector<int> branch;
    struct Open {
      int atom;
      int bond;
    };
    std::map<int, Open> open;
    while (pos_ < s_.size()) {
      const char c = s_[pos_];
      if (c == '(') {
        if (prev < 0 || pending != -2) fail("branch without a preceding atom");
        branch.push_back(prev);
        ++pos_;
      } else if (c == ')') {
        if (branch.empty() || pending != -2) fail("unbalanced ')'");
        prev = branch.back();
        branch.pop_back();
        ++pos_;
      } else if (is_bond_char(c)) {
        if (prev < 0 || pending != -2) fail("bond without a preceding atom");
        pending = parse_bond_expr();
      } else if (is_digit(c) || c == '%') {
        if (prev < 0) fail("ring closure without a preceding atom");
        int n = 0;
        if (c == '%') {
          if (pos_ + 2 >= s_.size() || !is_digit(s_[pos_ + 1]) || !is_digit(s_[pos_ + 2]))
            fail("'%' needs two digits");
          n = (s_[pos_ + 1] - '0') * 10 + (s_[pos_ + 2] - '0');
          pos_ += 3;
        } else {
          n = c - '0';
          ++pos_;
        }
        const auto it = open.find(n);
        if (it == open.end()) {
          open[n] = Open{prev, pending};
        } else {
          if (it->second.atom == prev) fail("ring closure onto the same atom");
          const int bond = pending != -2 ? pending : it->second.bond;
          add_bond(static_cast<std::uint32_t>(it->second.atom), static_cast<std::uint32_t>(prev), bond);
          open.erase(it);
        }
        pending = -2;
      } else {
        const int atom = parse_atom();
        if (prev >= 0) add_bond(static_cast<std::uint32_t>(prev), static_cast<std::uint32_t>(atom), pending);
        else if (pending != -2) fail("bond without a preceding atom");
        prev = atom;
        pending = -2;
      }
    }
    if (!branch.empty()) fail("unbalanced '('");
    if (!open.empty()) fail(fmt::format("ring closure {} not closed", open.begin()->first));
    if (pending != -2) fail("pattern ends with a bond");
  }

 private:
  [[noreturn]] void fail(const std::string &why) const {
    throw TablesError(fmt::format("SMARTS '{}': {} (at position {})", s_, why, pos_));
  }
  [[noreturn]] void unsupported(const std::string &what) const {
    throw TablesError(fmt::format("SMARTS '{}': {} is not supported (at position {})", s_, what, pos_));
  }

  static bool is_bond_char(char c) {
    return c == '-' || c == '=' || c == '#' || c == ':' || c == '~' || c == '@' || c == '/' || c == '\\' ||
           c == '!' || c == '&' || c == ',' || c == ';';
  }

  int node(Op op, Prim prim = Prim::True, int value = 0, int left = -1, int right = -1) {
    out_.nodes.push_back(ExprNode{op, prim, value, left, right});
    return static_cast<int>(out_.nodes.size()) - 1;
  }
  int prim(Prim p, int value = 0) { return node(Op::Prim, p, value); }
  int both(int a, int b) { return node(Op::And, Prim::True, 0, a, b); }

  void add_bond(std::uint32_t a, std::uint32_t b, int expr) {
    for (const auto &nb : out_.adjacency[a])
      if (nb.first == b) fail("two bonds between the same atoms");
    const auto id = static_cast<std::uint32_t>(out_.bonds.size());
    out_.bonds.push_back(PatternBond{a, b, expr == -2 ? -1 : expr});
    out_.adjacency[a].emplace_back(b, id);
    out_.adjacency[b].emplace_back(a, id);
  }

  int new_atom(int expr) {
    out_.atom_expr.push_back(expr);
    out_.adjacency.emplace_back();
    return static_cast<int>(out_.atom_expr.size()) - 1;
  }

  // Element with aromaticity constraint; aromatic < 0 means either.
  int element(unsigned z, int aromatic) {
    const int e = prim(Prim::AtomicNumber, static_cast<int>(z));
    return aromatic < 0 ? e : both(e, prim(Prim::Aromatic, aromatic));
  }

  int parse_atom() {
    const char c = s_[pos_];
    if (c == '[') {
      ++pos_;
      bracket_start_ = pos_;
      const int e = parse_low_and(false);
      if (pos_ >= s_.size() || s_[pos_] != ']') fail("unterminated bracket atom");
      const auto &root = out_.nodes[static_cast<std::size_t>(e)];
      // Hydrogens are never matched (smarts.hpp); inside a larger expression
      // #1 is simply false, but an atom that is only #1 could never match.
      if (root.op == Op::Prim && root.prim == Prim::AtomicNumber && root.value == 1)
        unsupported("a hydrogen pattern atom");
      ++pos_;
      return new_atom(e);
    }
    if (c == '*') return ++pos_, new_atom(prim(Prim::True));
    if (c == 'a') return ++pos_, new_atom(prim(Prim::Aromatic, 1));
    if (c == 'A') return ++pos_, new_atom(prim(Prim::Aromatic, 0));
    if (s_.substr(pos_, 2) == "Cl") return pos_ += 2, new_atom(element(17, 0));
    if (s_.substr(pos_, 2) == "Br") return pos_ += 2, new_atom(element(35, 0));
    switch (c) {
      case 'B': return ++pos_, new_atom(element(5, 0));
      case 'C': return ++pos_, new_atom(element(6, 0));
      case 'N': return ++pos_, new_atom(element(7, 0));
      case 'O': return ++pos_, new_atom(element(8, 0));
      case 'P': return ++pos_, new_atom(element(15, 0));
      case 'S': return ++pos_, new_atom(element(16, 0));
      case 'F': return ++pos_, new_atom(element(9, 0));
      case 'I': return ++pos_, new_atom(element(53, 0));
      case 'b': return ++pos_, new_atom(element(5, 1));
      case 'c': return ++pos_, new_atom(element(6, 1));
      case 'n': return ++pos_, new_atom(element(7, 1));
      case 'o': return ++pos_, new_atom(element(8, 1));
      case 'p': return ++pos_, new_atom(element(15, 1));
      case 's': return ++pos_, new_atom(element(16, 1));
      case '.': unsupported("'.' (disconnected pattern)");
      case '>': unsupported("reaction syntax");
      default: break;
    }
    fail(fmt::format("unexpected character '{}'", c));
  }

  // Precedence, lowest first: ';'  ','  '&' (or nothing)  '!'.
  int parse_low_and(bool bond) {
    int e = parse_or(bond);
    while (pos_ < s_.size() && s_[pos_] == ';') {
      ++pos_;
      e = both(e, parse_or(bond));
    }
    return e;
  }
  int parse_or(bool bond) {
    int e = parse_high_and(bond);
    while (pos_ < s_.size() && s_[pos_] == ',') {
      ++pos_;
      e = node(Op::Or, Prim::True, 0, e, parse_high_and(bond));
    }
    return e;
  }
  bool ends_term(bool bond) const {
    if (pos_ >= s_.size()) return true;
    const char c = s_[pos_];
    if (c == ',' || c == ';') return true;
    if (bond) return !is_bond_char(c);
    return c == ']';
  }
  int parse_high_and(bool bond) {
    int e = parse_unary(bond);
    while (!ends_term(bond)) {
      if (s_[pos_] == '&') {
        ++pos_;
        if (ends_term(bond)) fail("'&' without an operand");
      }
      e = both(e, parse_unary(bond));
    }
    return e;
  }
  int parse_unary(bool bond) {
    if (pos_ < s_.size() && s_[pos_] == '!') {
      ++pos_;
      return node(Op::Not, Prim::True, 0, parse_unary(bond));
    }
    if (ends_term(bond)) fail("missing primitive");
    return bond ? parse_bond_primitive() : parse_atom_primitive();
  }

  int parse_bond_expr() { return parse_low_and(true); }

  int parse_bond_primitive() {
    const char c = s_[pos_++];
    switch (c) {
      case '-':
      case '/':
      case '\\': return prim(Prim::BondSingle);
      case '=': return prim(Prim::BondDouble);
      case '#': return prim(Prim::BondTriple);
      case ':': return prim(Prim::BondAromatic);
      case '~': return prim(Prim::True);
      case '@': return prim(Prim::BondRing);
      default: --pos_; fail(fmt::format("unexpected bond character '{}'", c));
    }
  }

  // Reads digits; returns `dflt` when there are none.
  int number(int dflt) {
    if (pos_ >= s_.size() || !is_digit(s_[pos_])) return dflt;
    int n = 0;
    while (pos_ < s_.size() && is_digit(s_[pos_])) {
      n = n * 10 + (s_[pos_] - '0');
      if (n > 1000) fail("number too large");
      ++pos_;
    }
    return n;
  }

  // An upper-case letter followed by a lower-case one that together name an element.
  unsigned two_letter_element() const {
    if (pos_ + 1 >= s_.size() || !is_lower(s_[pos_ + 1])) return 0;
    return Molecule::element_from_symbol(std::string(s_.substr(pos_, 2)));
  }

  int parse_atom_primitive() {
    const char c = s_[pos_];
    if (c == '$') {
      if (pos_ + 1 >= s_.size() || s_[pos_ + 1] != '(') fail("'$' must be followed by '('");
      const std::size_t start = pos_ + 2;
      std::size_t i = start;
      int depth = 1;
      while (i < s_.size() && depth > 0) {
        if (s_[i] == '(') ++depth;
        if (s_[i] == ')') --depth;
        ++i;
      }
      if (depth != 0) fail("unterminated '$('");
      try {
        out_.recursive.emplace_back(s_.substr(start, i - 1 - start));
      } catch (const TablesError &e) {
        fail(fmt::format("in recursive part: {}", e.what()));
      }
      pos_ = i;
      return prim(Prim::Recursive, static_cast<int>(out_.recursive.size()) - 1);
    }
    if (c == '#') {
      ++pos_;
      const int z = number(-1);
      if (z < 1 || z > 118) fail("'#' needs an atomic number 1..118");
      return prim(Prim::AtomicNumber, z);
    }
    if (is_digit(c)) {
      const int isotope = number(0);
      // "[2H]" is a hydrogen atom (deuterium), not "isotope 2 with one H".
      if (pos_ + 1 < s_.size() && s_[pos_] == 'H' &&
          (s_[pos_ + 1] == ']' || s_[pos_ + 1] == '+' || s_[pos_ + 1] == '-'))
        unsupported("a hydrogen pattern atom");
      return prim(Prim::Isotope, isotope);
    }
    if (c == '*') return ++pos_, prim(Prim::True);
    if (c == '+' || c == '-') {
      const int sign = c == '+' ? 1 : -1;
      ++pos_;
      int n = number(-1);
      if (n < 0) {
        n = 1;
        while (pos_ < s_.size() && s_[pos_] == c) ++n, ++pos_;
      }
      return prim(Prim::Charge, sign * n);
    }
    if (c == '@') unsupported("chirality");
    if (c == ':') {
      ++pos_;
      if (number(-1) < 0) fail("':' in a bracket atom needs an atom map number");
      return prim(Prim::True);  // atom maps do not constrain the match
    }
    if (is_lower(c)) {
      const auto two = s_.substr(pos_, 2);
      if (two == "se") return pos_ += 2, element(34, 1);
      if (two == "as") return pos_ += 2, element(33, 1);
      ++pos_;
      switch (c) {
        case 'a': return prim(Prim::Aromatic, 1);
        case 'b': return element(5, 1);
        case 'c': return element(6, 1);
        case 'n': return element(7, 1);
        case 'o': return element(8, 1);
        case 'p': return element(15, 1);
        case 's': return element(16, 1);
        case 'r': return prim(Prim::RingSize, number(-1));
        case 'h': --pos_, unsupported("'h' (implicit hydrogen count)");
        case 'v': --pos_, unsupported("'v' (valence)");
        case 'x': --pos_, unsupported("'x' (ring connectivity)");
        default: --pos_, fail(fmt::format("unknown primitive '{}'", c));
      }
    }
    if (is_upper(c)) {
      if (const unsigned z = two_letter_element()) {
        pos_ += 2;
        return element(z, 0);
      }
      switch (c) {
        case 'H': {
          const bool first = pos_ == bracket_start_;
          ++pos_;
          if (first && (pos_ >= s_.size() || s_[pos_] == ']' || s_[pos_] == '+' || s_[pos_] == '-'))
            --pos_, unsupported("a hydrogen pattern atom");
          return prim(Prim::TotalH, number(1));
        }
        case 'D': return ++pos_, prim(Prim::HeavyDegree, number(1));
        case 'X': return ++pos_, prim(Prim::Connectivity, number(1));
        case 'R': return ++pos_, prim(Prim::RingCount, number(-1));
        case 'A': return ++pos_, prim(Prim::Aromatic, 0);
        default: break;
      }
      const unsigned z = Molecule::element_from_symbol(std::string(1, c));
      if (z == 0) fail(fmt::format("unknown element '{}'", c));
      ++pos_;
      return element(z, 0);
    }
    fail(fmt::format("unexpected character '{}'", c));
  }

  std::string_view s_;
  SmartsImpl &out_;
  std::size_t pos_ = 0;
  std::size_t bracket_start_ = 0;
};

bool eval(const SmartsImpl &p, int n, const SmartsTarget &t, std::size_t atom, std::int64_t bond);

BondOrder bond_order(const SmartsTarget &t, std::int64_t bond) {
  return t.molecule().bonds()[static_cast<std::size_t>(bond)].order;
}

bool eval_prim(const SmartsImpl &p, const ExprNode &e, const SmartsTarget &t, std::size_t atom, std::int64_t bond) {
  switch (e.prim) {
    case Prim::True: return true;
    case Prim::AtomicNumber: return t.facts(atom).atomic_number == e.value;
    case Prim::Aromatic: return t.facts(atom).aromatic == (e.value != 0);
    case Prim::TotalH: return static_cast<int>(t.facts(atom).hydrogens) == e.value;
    case Prim::HeavyDegree: return static_cast<int>(t.heavy_degree(atom)) == e.value;
    case Prim::Connectivity: return static_cast<int>(t.facts(atom).degree) == e.value;
    case Prim::Charge: return t.facts(atom).formal_charge == e.value;
    case Prim::RingCount: return e.value < 0 ? t.ring_count(atom) > 0 : t.ring_count(atom) == e.value;
    case Prim::RingSize: return e.value < 0 ? t.smallest_ring(atom) > 0 : t.smallest_ring(atom) == e.value;
    case Prim::Isotope: return t.facts(atom).isotope == e.value;
    case Prim::Recursive: {
      // The same parts are asked about the same atoms by many rows and
      // carriers; the answer depends on the atom alone.
      const auto &part = p.recursive[static_cast<std::size_t>(e.value)];
      const std::size_t slot = t.recursive_slot(&part.impl());
      std::int8_t known = t.recursive_value(slot, atom);
      if (known < 0) {
        known = match_at(part, t, atom) > 0 ? 1 : 0;
        // Fetched again: nested parts may have grown the pool meanwhile.
        t.recursive_value(slot, atom) = known;
      }
      return known != 0;
    }
    case Prim::BondSingle: return bond_order(t, bond) == BondOrder::Single;
    case Prim::BondDouble: return bond_order(t, bond) == BondOrder::Double;
    case Prim::BondTriple: return bond_order(t, bond) == BondOrder::Triple;
    case Prim::BondAromatic: return bond_order(t, bond) == BondOrder::Aromatic;
    case Prim::BondRing: return t.has_ring_bonds() && t.bond_ring_count(static_cast<std::size_t>(bond)) > 0;
  }
  return false;
}

bool eval(const SmartsImpl &p, int n, const SmartsTarget &t, std::size_t atom, std::int64_t bond) {
  const ExprNode &e = p.nodes[static_cast<std::size_t>(n)];
  switch (e.op) {
    case Op::Prim: return eval_prim(p, e, t, atom, bond);
    case Op::Not: return !eval(p, e.left, t, atom, bond);
    case Op::And: return eval(p, e.left, t, atom, bond) && eval(p, e.right, t, atom, bond);
    case Op::Or: return eval(p, e.left, t, atom, bond) || eval(p, e.right, t, atom, bond);
  }
  return false;
}

bool bond_ok(const SmartsImpl &p, const PatternBond &pb, const SmartsTarget &t, std::int64_t bond) {
  if (pb.by_order) return pb.orders >> static_cast<unsigned>(bond_order(t, bond)) & 1u;
  return eval(p, pb.expr, t, 0, bond);
}

// The bond orders expression `n` accepts as a mask (PatternBond::orders);
// false when it asks about something else.
bool order_mask(const SmartsImpl &p, int n, std::uint8_t &mask) {
  constexpr std::uint8_t kAll = (1u << 1) | (1u << 2) | (1u << 3) | (1u << 4);
  auto bit = [](BondOrder o) { return static_cast<std::uint8_t>(1u << static_cast<unsigned>(o)); };
  const ExprNode &e = p.nodes[static_cast<std::size_t>(n)];
  std::uint8_t l = 0, r = 0;
  switch (e.op) {
    case Op::Not:
      if (!order_mask(p, e.left, l)) return false;
      mask = static_cast<std::uint8_t>(kAll & ~l);
      return true;
    case Op::And:
    case Op::Or:
      if (!order_mask(p, e.left, l) || !order_mask(p, e.right, r)) return false;
      mask = static_cast<std::uint8_t>(e.op == Op::And ? l & r : l | r);
      return true;
    case Op::Prim: break;
  }
  switch (e.prim) {
    case Prim::True: mask = kAll; return true;
    case Prim::BondSingle: mask = bit(BondOrder::Single); return true;
    case Prim::BondDouble: mask = bit(BondOrder::Double); return true;
    case Prim::BondTriple: mask = bit(BondOrder::Triple); return true;
    case Prim::BondAromatic: mask = bit(BondOrder::Aromatic); return true;
    default: return false;
  }
}

void compute_bond_orders(SmartsImpl &p) {
  for (auto &pb : p.bonds) {
    if (pb.expr < 0) {
      pb.orders = static_cast<std::uint8_t>((1u << static_cast<unsigned>(BondOrder::Single)) |
                                            (1u << static_cast<unsigned>(BondOrder::Aromatic)));
      pb.by_order = true;
    } else {
      pb.by_order = order_mask(p, pb.expr, pb.orders);
    }
  }
}

// Collects the demands of expression `n` into `f` (smarts.cpp AtomFilter).
// Returns false when some part of the expression is not such a demand (a
// '!', ',', ring, isotope or recursive part), which the mask cannot decide.
bool demanded(const SmartsImpl &p, int n, AtomFilter &f) {
  const ExprNode &e = p.nodes[static_cast<std::size_t>(n)];
  if (e.op == Op::And) {
    const bool left = demanded(p, e.left, f);
    const bool right = demanded(p, e.right, f);
    return left && right;
  }
  if (e.op != Op::Prim) return false;
  auto demand = [&](int &slot, int value) {
    if (slot >= 0 && slot != value) f.never = true;
    slot = value;
  };
  switch (e.prim) {
    case Prim::AtomicNumber: demand(f.atomic_number, e.value); break;
    case Prim::Aromatic: demand(f.aromatic, e.value != 0 ? 1 : 0); break;
    case Prim::TotalH: demand(f.hydrogens, e.value); break;
    case Prim::HeavyDegree: demand(f.heavy_degree, e.value); break;
    case Prim::Connectivity: demand(f.degree, e.value); break;
    case Prim::Charge:
      if (f.has_charge && f.charge != e.value) f.never = true;
      f.has_charge = true;
      f.charge = e.value;
      break;
    case Prim::True: break;
    default: return false;
  }
  return true;
}

inline bool passes(const AtomFilter &f, const SmartsTarget &t, std::size_t a) {
  return !f.never && (t.packed(a) & f.mask) == f.value;
}

// Fills f.mask and f.value from the demands collected by demanded().
void make_mask(AtomFilter &f) {
  auto demand = [&](int v, int shift, int lo, int hi) {
    if (v < lo || v > hi) return;  // left to the expression
    f.mask |= pack_field(0xFF, shift);
    f.value |= pack_field(static_cast<std::uint64_t>(v), shift);
  };
  if (f.atomic_number > 255) f.never = true;
  demand(f.atomic_number, kPackAtomicNumber, 0, 255);
  demand(f.aromatic, kPackAromatic, 0, 1);
  demand(f.hydrogens, kPackHydrogens, 0, 254);
  // eval compares the stored 8-bit heavy degree itself.
  demand(f.heavy_degree, kPackHeavyDegree, 0, 255);
  demand(f.degree, kPackDegree, 0, 254);
  if (f.has_charge && f.charge >= -128 && f.charge <= 127) {
    f.mask |= pack_field(0xFF, kPackCharge);
    f.value |= pack_field(static_cast<std::uint8_t>(static_cast<std::int8_t>(f.charge)), kPackCharge);
  }
}

// Does the mask test every demand of `f` (none left to the expression)?
bool mask_holds_all(const AtomFilter &f) {
  auto in_mask = [&](int v, int shift) {
    return v < 0 || (f.mask & pack_field(0xFF, shift)) != 0;
  };
  return in_mask(f.atomic_number, kPackAtomicNumber) && in_mask(f.aromatic, kPackAromatic) &&
         in_mask(f.hydrogens, kPackHydrogens) && in_mask(f.heavy_degree, kPackHeavyDegree) &&
         in_mask(f.degree, kPackDegree) && (!f.has_charge || (f.mask & pack_field(0xFF, kPackCharge)) != 0);
}

bool has_recursive(const SmartsImpl &p, int n) {
  const ExprNode &e = p.nodes[static_cast<std::size_t>(n)];
  if (e.op == Op::Prim) return e.prim == Prim::Recursive;
  return has_recursive(p, e.left) || (e.right >= 0 && has_recursive(p, e.right));
}

void compute_filters(SmartsImpl &p) {
  std::map<std::uint32_t, std::uint32_t> count;
  for (int root : p.atom_expr) {
    AtomFilter f;
    const bool plain = demanded(p, root, f);
    make_mask(f);
    f.exact = plain && !f.never && mask_holds_all(f);
    f.costly = has_recursive(p, root);
    p.filters.push_back(f);
    // A contradiction never matches; leaving it out of the element count
    // only keeps that filter on the safe side.
    if (f.never || f.atomic_number < 0 || f.atomic_number >= 128) continue;
    ++count[static_cast<std::uint32_t>(f.atomic_number) * 4 + static_cast<std::uint32_t>(f.aromatic < 0 ? 2 : f.aromatic)];
  }
  p.needs.assign(count.begin(), count.end());
}

// SmartsImpl::ring_system_needs.
void compute_ring_system_needs(SmartsImpl &p) {
  const std::size_t n = p.atom_expr.size();
  // A bond lies on a cycle when its ends stay connected without it.
  auto on_cycle = [&](std::uint32_t bond) {
    std::vector<bool> seen(n, false);
    std::vector<std::uint32_t> stack{p.bonds[bond].a};
    seen[p.bonds[bond].a] = true;
    while (!stack.empty()) {
      const auto q = stack.back();
      stack.pop_back();
      for (const auto &nb : p.adjacency[q])
        if (nb.second != bond && !seen[nb.first]) seen[nb.first] = true, stack.push_back(nb.first);
    }
    return static_cast<bool>(seen[p.bonds[bond].b]);
  };
  UnionFind system(static_cast<std::uint32_t>(n));
  std::vector<bool> in_ring(n, false);
  p.on_cycle.assign(n, 0);
  for (std::uint32_t b = 0; b < p.bonds.size(); ++b)
    if (on_cycle(b)) {
      in_ring[p.bonds[b].a] = in_ring[p.bonds[b].b] = true;
      p.on_cycle[p.bonds[b].a] = p.on_cycle[p.bonds[b].b] = 1;
      system.unite(p.bonds[b].a, p.bonds[b].b);
    }
  std::map<std::uint32_t, std::map<std::uint32_t, std::uint32_t>> counts;  // system root -> needs
  for (std::uint32_t q = 0; q < n; ++q) {
    if (!in_ring[q]) continue;
    auto &count = counts[system.find(q)];
    const auto &f = p.filters[q];
    if (f.never || f.atomic_number < 0 || f.atomic_number >= 128) continue;
    ++count[static_cast<std::uint32_t>(f.atomic_number) * 4 + static_cast<std::uint32_t>(f.aromatic < 0 ? 2 : f.aromatic)];
  }
  for (const auto &c : counts)
    if (!c.second.empty()) p.ring_system_needs.emplace_back(c.second.begin(), c.second.end());
}

// False when the molecule lacks the heavy atoms some pattern atoms demand,
// so that no match can exist.
bool feasible(const SmartsImpl &p, const SmartsTarget &t) {
  for (const auto &need : p.needs) {
    const unsigned z = need.first / 4, code = need.first % 4;
    const std::uint32_t have = code == 2 ? t.element_count(z, false) + t.element_count(z, true)
                                         : t.element_count(z, code == 1);
    if (have < need.second) return false;
  }
  return true;
}

// False when some ring system of the pattern fits in no ring system of the
// molecule (SmartsImpl::ring_system_needs). Asks for ring perception.
bool rings_feasible(const SmartsImpl &p, const SmartsTarget &t) {
  for (const auto &needs : p.ring_system_needs) {
    bool fits = false;
    for (std::size_t sys = 0; sys < t.ring_system_count() && !fits; ++sys) {
      fits = true;
      for (const auto &need : needs) {
        const unsigned z = need.first / 4, code = need.first % 4;
        const std::uint32_t have = code == 2 ? t.ring_system_element_count(sys, z, false) +
                                                   t.ring_system_element_count(sys, z, true)
                                             : t.ring_system_element_count(sys, z, code == 1);
        if (have < need.second) {
          fits = false;
          break;
        }
      }
    }
    if (!fits) return false;
  }
  return true;
}

// Depth-first order of the pattern atoms from `root`, so that each atom after
// the first has an already placed neighbour (its parent) to draw candidates
// from. Returns false for a disconnected pattern (the parser never builds one).
bool make_search_order(const SmartsImpl &p, std::uint32_t root, std::vector<std::uint32_t> &order,
                  std::vector<std::uint32_t> &parent, std::vector<std::uint32_t> &rank) {
  const std::size_t n = p.atom_expr.size();
  order.clear();
  parent.assign(n, 0);
  rank.assign(n, 0);
  std::vector<bool> seen(n, false);
  std::vector<std::uint32_t> stack{root};
  seen[root] = true;
  while (!stack.empty()) {
    const auto q = stack.back();
    stack.pop_back();
    rank[q] = static_cast<std::uint32_t>(order.size());
    order.push_back(q);
    const auto &adj = p.adjacency[q];
    for (auto it = adj.rbegin(); it != adj.rend(); ++it)
      if (!seen[it->first]) {
        seen[it->first] = true;
        parent[it->first] = q;
        stack.push_back(it->first);
      }
  }
  return order.size() == n;
}

// Another order from `root` for searches that need not visit mappings in
// search_order()'s order: next comes the unplaced atom with the most bonds
// to placed atoms, of those the one whose earliest placed neighbour came
// first, then the lowest index. A depth-first order walks a cycle of the
// pattern to its end before the bond that closes it is tested; in a
// molecule of fused aromatic rings, the searches for a fused parent ring
// (c1cccc2ccccc12) then tried every pair of four-atom paths from an atom.
// This one tests most closing bonds a few atoms after the root.
void make_closing_order(const SmartsImpl &p, std::uint32_t root, std::vector<std::uint32_t> &order,
                        std::vector<std::uint32_t> &parent, std::vector<std::uint32_t> &rank) {
  const std::size_t n = p.atom_expr.size();
  constexpr auto kUnplaced = std::numeric_limits<std::uint32_t>::max();
  order.assign(1, root);
  parent.assign(n, 0);
  rank.assign(n, kUnplaced);
  rank[root] = 0;
  while (order.size() < n) {
    std::uint32_t best = kUnplaced, best_bonds = 0, best_first = kUnplaced;
    for (std::uint32_t q = 0; q < n; ++q) {
      if (rank[q] != kUnplaced) continue;
      std::uint32_t bonds = 0, first = kUnplaced;
      for (const auto &nb : p.adjacency[q])
        if (rank[nb.first] != kUnplaced) ++bonds, first = std::min(first, rank[nb.first]);
      if (bonds == 0) continue;
      if (best == kUnplaced || bonds > best_bonds || (bonds == best_bonds && first < best_first))
        best = q, best_bonds = bonds, best_first = first;
    }
    if (best == kUnplaced) return;  // disconnected: make_search_order() has said so
    parent[best] = order[best_first];
    rank[best] = static_cast<std::uint32_t>(order.size());
    order.push_back(best);
  }
}

using Visit = std::function<bool(const std::vector<std::uint32_t> &)>;

class Search {
 public:
  // `root` is searched first; `root_atom` >= 0 puts it on that molecule atom
  // (already known to satisfy its expression when `root_checked`), -1 tries
  // every heavy atom. `fixed` (may be null) pins further pattern atoms;
  // `visit` (may be null: stop at the first match) sees each mapping, in
  // search_order()'s order unless `closing` (SmartsImpl::closing_orders).
  Search(const SmartsImpl &p, const SmartsTarget &t, std::uint32_t root, std::int64_t root_atom, bool root_checked,
         const std::vector<std::int64_t> *fixed, const std::vector<bool> &excluded, const Visit *visit,
         bool closing = false)
      : p_(p), t_(t), root_(root), root_atom_(root_atom), root_checked_(root_checked), fixed_(fixed),
        excluded_(excluded), visit_(visit), closing_(closing) {}
  ~Search() {
    if (stacked_ > 0) t_.pop_map(stacked_);
    else if (map_) t_.return_buffer(std::move(buffer_));
  }
  Search(const Search &) = delete;
  Search &operator=(const Search &) = delete;

  // After run() returned true: the mapping found last (pattern atom ->
  // molecule atom), valid while the search lives.
  const std::uint32_t *mapping() const { return map_; }

  bool run() {
    const std::size_t n = p_.atom_expr.size();
    if (n == 0) return false;
    const SearchOrder &o = (closing_ ? p_.closing_orders : p_.orders)[root_];
    order_ = &o;
    // A visitor is handed the map as a vector; other searches map onto the
    // target's stack while it has room.
    map_ = visit_ ? nullptr : t_.push_map(n);
    if (map_) {
      stacked_ = n;
      std::fill_n(map_, n, 0u);
    } else {
      buffer_ = t_.take_buffer();
      buffer_.assign(n, 0);
      map_ = buffer_.data();
    }
    step(0);
    return found_;
  }

 private:
  bool excluded(std::size_t a) const { return a < excluded_.size() && excluded_[a]; }
  std::int64_t fixed(std::uint32_t q) const { return fixed_ && q < fixed_->size() ? (*fixed_)[q] : -1; }

  // Pattern atom q at search depth i onto molecule atom a, reached through
  // molecule bond `tree_bond` from the image of q's parent (-1 at the root).
  // The tests are a conjunction; the cheapest and most selective come first.
  bool candidate_ok(std::size_t i, std::uint32_t q, std::size_t a, std::int64_t tree_bond) const {
    if (!(i == 0 && root_checked_) && !passes(p_.filters[q], t_, a)) return false;
    if (t_.facts(a).atomic_number == 1 || excluded(a)) return false;
    // Necessary conditions that prune a search before its deeper levels:
    // every pattern neighbour takes a heavy neighbour of its own, and a
    // cycle maps onto a cycle (asked only once the rings are known).
    if (t_.heavy_degree(a) < p_.adjacency[q].size()) return false;
    if (p_.on_cycle[q] && t_.rings_known() && t_.ring_count(a) == 0) return false;
    for (std::size_t j = 0; j < i; ++j)
      if (map_[order_->order[j]] == a) return false;
    const auto f = fixed(q);
    if (f >= 0 && static_cast<std::size_t>(f) != a) return false;
    // Bonds to every placed neighbour (tree bond and ring closures) must exist and match.
    if (i > 0 && !bond_ok(p_, p_.bonds[order_->parent_bond[q]], t_, tree_bond)) return false;
    for (auto c = order_->closure_start[q]; c < order_->closure_start[q + 1]; ++c) {
      const auto &nb = order_->closures[c];
      const auto b = t_.molecule().bond_between(a, map_[nb.first]);
      if (b < 0 || !bond_ok(p_, p_.bonds[nb.second], t_, b)) return false;
    }
    if ((i == 0 && root_checked_) || p_.filters[q].exact) return true;
    return eval(p_, p_.atom_expr[q], t_, a, -1);
  }

  bool try_atom(std::size_t i, std::uint32_t q, std::size_t a, std::int64_t tree_bond) {
    if (!candidate_ok(i, q, a, tree_bond)) return false;
    map_[q] = static_cast<std::uint32_t>(a);
    return step(i + 1);
  }

  // Returns true to stop the whole search.
  bool step(std::size_t i) {
    if (i == p_.atom_expr.size()) {
      found_ = true;
      return visit_ && *visit_ ? (*visit_)(buffer_) : true;
    }
    const auto q = order_->order[i];
    const Molecule &m = t_.molecule();
    if (i == 0) {
      if (root_atom_ >= 0)
        return static_cast<std::size_t>(root_atom_) < m.atom_count() &&
               try_atom(0, q, static_cast<std::size_t>(root_atom_), -1);
      for (std::size_t a = 0; a < m.heavy_atom_count(); ++a)
        if (try_atom(0, q, a, -1)) return true;
      return false;
    }
    const auto from = map_[order_->parent[q]];
    const auto *bid = m.bond_ids_begin(from);
    // Hydrogens, never a candidate, come last in the sorted neighbour list.
    const auto heavy = m.heavy_atom_count();
    for (auto it = m.neighbours_begin(from), end = m.neighbours_end(from); it != end && *it < heavy; ++it, ++bid)
      if (try_atom(i, q, *it, *bid)) return true;
    return false;
  }

  const SmartsImpl &p_;
  const SmartsTarget &t_;
  std::uint32_t root_;
  std::int64_t root_atom_;
  bool root_checked_;
  const std::vector<std::int64_t> *fixed_;
  const std::vector<bool> &excluded_;
  const Visit *visit_;
  bool closing_;
  const SearchOrder *order_ = nullptr;
  std::uint32_t *map_ = nullptr;       // pattern atom -> molecule atom
  std::size_t stacked_ = 0;            // slots map_ holds on the target's stack
  std::vector<std::uint32_t> buffer_;  // holds map_ when not on the stack
  bool found_ = false;
};

}  // namespace

SmartsPattern::SmartsPattern(std::string_view text) {
  auto impl = std::make_shared<SmartsImpl>();
  impl->text = std::string(text);
  impl->text_hash = std::hash<std::string_view>{}(impl->text);
  Parser(impl->text, *impl).parse();
  impl->orders.resize(impl->atom_expr.size());
  impl->closing_orders.resize(impl->atom_expr.size());
  // The bonds of each placed atom to its parent and to atoms placed before it.
  auto link = [&](SearchOrder &o, std::uint32_t root) {
    const std::size_t n = impl->atom_expr.size();
    o.parent_bond.assign(n, 0);
    o.closure_start.assign(n + 1, 0);
    for (std::uint32_t q = 0; q < n; ++q) {
      o.closure_start[q] = static_cast<std::uint32_t>(o.closures.size());
      for (const auto &nb : impl->adjacency[q]) {
        if (o.rank[nb.first] >= o.rank[q]) continue;
        if (q != root && nb.first == o.parent[q]) o.parent_bond[q] = nb.second;
        else o.closures.push_back(nb);
      }
    }
    o.closure_start[n] = static_cast<std::uint32_t>(o.closures.size());
  };
  for (std::uint32_t root = 0; root < impl->orders.size(); ++root) {
    auto &o = impl->orders[root];
    if (!make_search_order(*impl, root, o.order, o.parent, o.rank))
      throw InternalError(fmt::format("SMARTS '{}': disconnected pattern", impl->text));
    link(o, root);
    auto &c = impl->closing_orders[root];
    make_closing_order(*impl, root, c.order, c.parent, c.rank);
    link(c, root);
  }
  compute_filters(*impl);
  compute_ring_system_needs(*impl);
  compute_bond_orders(*impl);
  if (!impl->adjacency.empty())
    for (const auto &nb : impl->adjacency[0]) impl->root_neighbours.push_back(nb);
  if (!impl->filters.empty() && !impl->filters[0].never)
    root_mask_ = impl->filters[0].mask, root_value_ = impl->filters[0].value;
  // What root_neighbours_possible() asks of each neighbour, coarsened to its
  // element (when demanded) and bond orders (when the bond asks for orders
  // alone); a contradiction in its filter leaves no kind at all.
  for (const auto &nb : impl->root_neighbours) {
    const AtomFilter &f = impl->filters[nb.first];
    const PatternBond &pb = impl->bonds[nb.second];
    if (!pb.by_order || neighbour_demands_ == neighbour_kinds_.size()) continue;
    std::uint64_t kinds = 0;
    if (!f.never)
      for (unsigned o = 1; o <= 4; ++o) {
        if (!(pb.orders >> o & 1u)) continue;
        const auto order = static_cast<BondOrder>(o);
        if (f.atomic_number >= 0) {
          kinds |= std::uint64_t{1} << SmartsTarget::kind_bit(static_cast<unsigned>(f.atomic_number), order);
        } else {
          for (unsigned z = 0; z < 128; ++z) kinds |= std::uint64_t{1} << SmartsTarget::kind_bit(z, order);
        }
      }
    neighbour_kinds_[neighbour_demands_++] = kinds;
  }
  impl_ = std::move(impl);
}

std::string_view SmartsPattern::text() const noexcept {
  return impl_ ? std::string_view(impl_->text) : std::string_view();
}

bool SmartsPattern::root_may_be(unsigned atomic_number) const noexcept {
  const std::uint64_t field = pack_field(0xFF, kPackAtomicNumber);
  return (root_mask_ & field) == 0 || (root_value_ & field) == pack_field(atomic_number, kPackAtomicNumber);
}

std::size_t SmartsPattern::atom_count() const noexcept { return impl_ ? impl_->atom_expr.size() : 0; }

const std::vector<std::uint32_t> &SmartsPattern::search_order(std::size_t root) const {
  return impl_->orders.at(root).order;
}

SmartsTarget::SmartsTarget(const Molecule &m) { reset(m); }

void SmartsTarget::reset(const Molecule &m) {
  m_ = &m;
  atoms_.assign(m.atom_count(), AtomRecord{});
  element_count_.fill(0);
  rings_done_ = false;
  rings_.pool_.clear();
  rings_.spans_.clear();
  bond_rings_.clear();
  ring_parts_ = 0;
  systems_done_ = false;
  system_counts_.clear();
  memo_pool_.clear();
  std::fill(memo_slots_.begin(), memo_slots_.end(), std::pair<const SmartsImpl *, std::size_t>{nullptr, 0});
  memo_used_ = 0;
  map_top_ = 0;
  for (const auto &b : m.bonds()) {
    const auto zb = m.atom(b.begin).atomic_number, ze = m.atom(b.end).atomic_number;
    // Molecule::hydrogen_count(), for all atoms in one pass.
    if (zb == 1) ++atoms_[b.end].facts.hydrogens;
    if (ze == 1) ++atoms_[b.begin].facts.hydrogens;
    if (zb != 1 && ze != 1) {
      ++atoms_[b.begin].heavy_degree;
      ++atoms_[b.end].heavy_degree;
      atoms_[b.begin].neighbour_kinds |= std::uint64_t{1} << kind_bit(ze, b.order);
      atoms_[b.end].neighbour_kinds |= std::uint64_t{1} << kind_bit(zb, b.order);
    }
  }
  for (std::size_t a = 0; a < m.atom_count(); ++a) {
    const Atom &at = m.atoms()[a];
    AtomRecord &r = atoms_[a];
    AtomFacts &f = r.facts;
    f.atomic_number = at.atomic_number;
    f.aromatic = at.aromatic;
    f.formal_charge = at.formal_charge;
    f.isotope = at.isotope;
    f.degree = static_cast<std::uint32_t>(m.degree(a));
    r.packed = pack(f, r.heavy_degree);
    if (at.atomic_number != 1 && at.atomic_number < 128) ++element_count_[at.atomic_number * 2u + (at.aromatic ? 1u : 0u)];
  }
}

SmartsTarget::~SmartsTarget() = default;

unsigned SmartsTarget::kind_bit(unsigned atomic_number, BondOrder order) {
  // Sixteen element groups (the elements of organic molecules one each, the
  // rest in one) by four bond orders.
  unsigned group = 15;
  switch (atomic_number) {
    case 6: group = 0; break;
    case 7: group = 1; break;
    case 8: group = 2; break;
    case 16: group = 3; break;
    case 15: group = 4; break;
    case 9: group = 5; break;
    case 17: group = 6; break;
    case 35: group = 7; break;
    case 53: group = 8; break;
    case 5: group = 9; break;
    case 14: group = 10; break;
    case 34: group = 11; break;
    case 33: group = 12; break;
    case 11: group = 13; break;
    case 3: group = 14; break;
    default: break;
  }
  const unsigned o = static_cast<unsigned>(order);
  return group * 4 + (o >= 1 && o <= 4 ? o - 1 : 0);
}

std::uint64_t SmartsTarget::pack(const AtomFacts &f, std::uint8_t heavy_degree) {
  auto capped = [](std::uint32_t v) { return std::uint64_t{v < 255 ? v : 255}; };
  return pack_field(f.atomic_number, kPackAtomicNumber) | pack_field(f.aromatic ? 1 : 0, kPackAromatic) |
         pack_field(capped(f.hydrogens), kPackHydrogens) | pack_field(heavy_degree, kPackHeavyDegree) |
         pack_field(capped(f.degree), kPackDegree) |
         pack_field(static_cast<std::uint8_t>(f.formal_charge), kPackCharge);
}

std::size_t SmartsTarget::recursive_slot(const SmartsImpl *part) const {
  auto hash = [&](const SmartsImpl *key) { return key->text_hash & (memo_slots_.size() - 1); };
  if (2 * (memo_used_ + 1) > memo_slots_.size()) {
    std::vector<std::pair<const SmartsImpl *, std::size_t>> old(std::max<std::size_t>(64, 2 * memo_slots_.size()),
                                                                 {nullptr, 0});
    old.swap(memo_slots_);
    for (const auto &e : old)
      if (e.first) {
        std::size_t i = hash(e.first);
        while (memo_slots_[i].first) i = (i + 1) & (memo_slots_.size() - 1);
        memo_slots_[i] = e;
      }
  }
  std::size_t i = hash(part);
  while (memo_slots_[i].first) {
    const SmartsImpl *held = memo_slots_[i].first;
    if (held == part || (held->text_hash == part->text_hash && held->text == part->text))
      return memo_slots_[i].second;
    i = (i + 1) & (memo_slots_.size() - 1);
  }
  const std::size_t offset = memo_pool_.size();
  // Room for the rows of a typical molecule at once: grown a row at a time,
  // the pool was moved several times per molecule.
  if (offset == 0) memo_pool_.reserve(kMemoRowsReserved * m_->atom_count());
  memo_pool_.resize(offset + m_->atom_count(), -1);
  memo_slots_[i] = {part, offset};
  ++memo_used_;
  return offset;
}

std::vector<std::uint32_t> SmartsTarget::take_buffer() const {
  if (buffers_.empty()) return {};
  auto b = std::move(buffers_.back());
  buffers_.pop_back();
  return b;
}

void SmartsTarget::return_buffer(std::vector<std::uint32_t> &&buffer) const { buffers_.push_back(std::move(buffer)); }


std::size_t SmartsTarget::ring_system_count() const {
  perceive_ring_systems();
  return system_counts_.size() / kSystemCountSize;
}

std::uint32_t SmartsTarget::ring_system_element_count(std::size_t system, unsigned atomic_number,
                                                      bool aromatic) const {
  perceive_ring_systems();
  return atomic_number < 128 ? system_counts_[system * kSystemCountSize + atomic_number * 2 + (aromatic ? 1 : 0)]
                             : 0;
}

// Ring systems: atoms joined by ring bonds, numbered in order of their
// lowest atom, with heavy-atom counts as element_count() keeps them. These
// are the parts perceive_rings() searched: every bond on a cycle of a part
// lies on one of its smallest rings (they span its cycles), so the atoms
// of a part are its ring atoms and its ring bonds join them.
void SmartsTarget::perceive_ring_systems() const {
  if (systems_done_) return;
  systems_done_ = true;
  perceive_rings();
  system_counts_.assign(ring_parts_ * kSystemCountSize, 0);
  for (std::uint32_t a = 0; a < m_->heavy_atom_count(); ++a) {
    const AtomRecord &r = atoms_[a];
    if (r.ring_count == 0) continue;
    const auto z = r.facts.atomic_number;
    if (z < 128)
      ++system_counts_[static_cast<std::size_t>(r.ring_part) * kSystemCountSize + z * 2u + (r.facts.aromatic ? 1u : 0u)];
  }
}

// Rings: Horton's candidate cycles (shortest paths from a root to both ends of
// an edge), shortest first, tested for independence by Gaussian elimination
// over GF(2) on bond sets. The ring bonds fall apart into parts joined by
// bridges (a ring system, spiro rings included) and no cycle crosses a
// bridge, so each part is searched on its own and a part that is one ring
// from one root only: a search over the whole molecule from every ring atom
// cost more than the rest of most molecules' 13C rules. The rings come out
// in the order that whole search found them (see the end).
void SmartsTarget::perceive_rings() const {
  if (rings_done_) return;
  rings_done_ = true;
  const Molecule &m = *m_;
  const std::size_t n = m.heavy_atom_count();
  const std::size_t bond_count = m.bond_count();
  // Ring atoms first, in a block of their own (on the stack for molecules
  // of usual size): a quarter of the molecules has no ring, and for them
  // this is all, with no bond_rings_ (has_ring_bonds() is false).
  constexpr std::size_t kStackAtoms = 128;
  std::array<std::int32_t, 3 * kStackAtoms> strip_on_stack;
  std::vector<std::int32_t> strip_on_heap;
  std::int32_t *strip = strip_on_stack.data();
  if (n > kStackAtoms) strip_on_heap.resize(3 * n), strip = strip_on_heap.data();
  std::int32_t *const deg = strip, *const core = strip + n;
  auto *const queue = reinterpret_cast<std::uint32_t *>(strip + 2 * n);
  std::fill(deg, deg + n, 0);
  std::size_t queued = 0, edge_count = 0;
  // Ring atoms: strip atoms of heavy degree <= 1 until none is left.
  for (std::uint32_t b = 0; b < m.bond_count(); ++b) {
    const auto &bd = m.bond(b);
    if (bd.begin < n && bd.end < n) ++deg[bd.begin], ++deg[bd.end];
  }
  std::fill(core, core + n, 1);
  for (std::uint32_t a = 0; a < n; ++a)
    if (deg[a] <= 1) queue[queued++] = a, core[a] = 0;
  while (queued > 0) {
    const auto a = queue[--queued];
    for (auto it = m.neighbours_begin(a), end = m.neighbours_end(a); it != end; ++it)
      if (*it < n && core[*it] && --deg[*it] <= 1) core[*it] = 0, queue[queued++] = *it;
  }
  // An atom left has two neighbours left: no atom left, no ring bond.
  if (std::find(core, core + n, 1) == core + n) return;
  bond_rings_.assign(bond_count, 0);
  // The rest of the scratch of known size, per heavy atom and per bond, in
  // one block, which the target keeps from one molecule to the next: a
  // dozen allocations cost about as much as the search in a molecule of one
  // or two rings.
  std::vector<std::int32_t> &scratch = ring_scratch_.sized;
  scratch.assign(15 * n + 3 + 5 * bond_count, 0);
  std::int32_t *next_free = scratch.data();
  auto carve = [&](std::size_t size) {
    std::int32_t *const block = next_free;
    next_free += size;
    return block;
  };
  std::int32_t *const found = carve(n), *const low = carve(n), *const part = carve(n), *const dist = carve(n),
                      *const parent_edge = carve(n), *const parent_atom = carve(n),
                      *const edge_of_bond = carve(bond_count);
  auto *const edges = reinterpret_cast<std::uint32_t *>(carve(bond_count));  // core bonds
  for (std::uint32_t b = 0; b < bond_count; ++b) {
    const auto &bd = m.bond(b);
    edge_of_bond[b] = -1;
    if (bd.begin < n && bd.end < n && core[bd.begin] && core[bd.end]) {
      edge_of_bond[b] = static_cast<std::int32_t>(edge_count);
      edges[edge_count++] = b;
    }
  }
  if (edge_count == 0) return;
  // Bridges of the core (bonds on no cycle, such as a chain between two
  // ring systems), by Tarjan's low-link search; the search path is kept as
  // atom, edge from the parent (-1 at a root) and next neighbour to try.
  std::int32_t *const bridge = carve(edge_count);
  std::fill(bridge, bridge + edge_count, 0);
  {
    std::fill(found, found + n, -1);
    int counter = 0;
    std::int32_t *const path_atom = carve(n), *const path_via = carve(n), *const path_next = carve(n);
    std::size_t depth = 0;
    for (std::uint32_t s0 = 0; s0 < n; ++s0) {
      if (!core[s0] || found[s0] >= 0) continue;
      found[s0] = low[s0] = counter++;
      path_atom[0] = static_cast<std::int32_t>(s0), path_via[0] = -1, path_next[0] = 0, depth = 1;
      while (depth > 0) {
        const auto a = static_cast<std::uint32_t>(path_atom[depth - 1]);
        if (static_cast<std::size_t>(path_next[depth - 1]) < m.degree(a)) {
          const auto i = static_cast<std::size_t>(path_next[depth - 1]++);
          const auto b = m.neighbours_begin(a)[i];
          const int e = edge_of_bond[m.bond_ids_begin(a)[i]];
          if (e < 0 || e == path_via[depth - 1]) continue;
          if (found[b] < 0) {
            found[b] = low[b] = counter++;
            path_atom[depth] = static_cast<std::int32_t>(b), path_via[depth] = e, path_next[depth] = 0, ++depth;
          } else {
            low[a] = std::min(low[a], found[b]);
          }
          continue;
        }
        --depth;
        if (depth == 0) continue;
        const auto parent = path_atom[depth - 1];
        low[parent] = std::min(low[parent], low[a]);
        if (low[a] > found[parent]) bridge[path_via[depth]] = 1;
      }
    }
  }
  // The parts: atoms joined by bonds other than bridges, numbered in order
  // of their lowest atom (where the fill of each starts); part -1 for atoms
  // on no cycle. Their atoms and edges ascending, in one list each.
  std::size_t parts = 0;
  std::fill(part, part + n, -1);
  for (std::size_t e = 0; e < edge_count; ++e)
    if (!bridge[e]) part[m.bond(edges[e]).begin] = part[m.bond(edges[e]).end] = -2;  // on a cycle; numbered below
  for (std::uint32_t s0 = 0; s0 < n; ++s0) {
    if (part[s0] != -2) continue;
    const auto id = static_cast<std::int32_t>(parts++);
    part[s0] = id;
    queue[0] = s0;
    queued = 1;
    while (queued > 0) {
      const auto a = queue[--queued];
      const auto *bid = m.bond_ids_begin(a);
      for (auto it = m.neighbours_begin(a), end = m.neighbours_end(a); it != end; ++it, ++bid) {
        const int e = edge_of_bond[*bid];
        if (e >= 0 && !bridge[e] && part[*it] == -2) part[*it] = id, queue[queued++] = *it;
      }
    }
  }
  ring_parts_ = static_cast<std::uint32_t>(parts);
  for (std::uint32_t a = 0; a < n; ++a) atoms_[a].ring_part = part[a];
  auto *const atom_start = reinterpret_cast<std::uint32_t *>(carve(parts + 1));
  auto *const edge_start = reinterpret_cast<std::uint32_t *>(carve(parts + 1));
  auto *const next = reinterpret_cast<std::uint32_t *>(carve(parts + 1));
  auto *const part_atoms = reinterpret_cast<std::uint32_t *>(carve(n));
  auto *const part_edges = reinterpret_cast<std::uint32_t *>(carve(edge_count));
  std::fill(atom_start, atom_start + parts + 1, 0u);
  std::fill(edge_start, edge_start + parts + 1, 0u);
  for (std::uint32_t a = 0; a < n; ++a)
    if (part[a] >= 0) ++atom_start[part[a] + 1];
  for (std::size_t e = 0; e < edge_count; ++e)
    if (!bridge[e]) ++edge_start[part[m.bond(edges[e]).begin] + 1];
  for (std::size_t c = 0; c < parts; ++c) atom_start[c + 1] += atom_start[c], edge_start[c + 1] += edge_start[c];
  std::copy(atom_start, atom_start + parts, next);
  for (std::uint32_t a = 0; a < n; ++a)
    if (part[a] >= 0) part_atoms[next[part[a]]++] = a;
  std::copy(edge_start, edge_start + parts, next);
  for (std::uint32_t e = 0; e < edge_count; ++e)
    if (!bridge[e]) part_edges[next[part[m.bond(edges[e]).begin]]++] = e;
  // Bit of each edge within its part's bond sets.
  auto *const bit_of_edge = reinterpret_cast<std::uint32_t *>(carve(edge_count));
  for (std::size_t c = 0; c < parts; ++c)
    for (auto i = edge_start[c]; i < edge_start[c + 1]; ++i) bit_of_edge[part_edges[i]] = i - edge_start[c];
  // Candidates of one part in the order they are found, their atoms and bond
  // bits in flat pools: a part yields many candidates, mostly copies of one
  // ring found from each of its atoms. Kept rings stay in the atom pool.
  using Cycle = RingScratch::Cycle;
  std::vector<Cycle> &candidates = ring_scratch_.candidates;
  // The rings kept, as spans of the atom pool, are the target's list itself.
  // A span's first atom is its root, and from one root the candidates come
  // in ascending edge order at ascending offsets: the span holds all that
  // the final sort needs.
  std::vector<RingList::Span> &kept = rings_.spans_;
  // Sized for the common case (one candidate per core bond) so that the
  // pools seldom grow step by step; the candidates and their bonds only
  // once a part of more than one ring needs them.
  kept.reserve(edge_count);
  // The target's own pool (reset() emptied it), to keep its capacity.
  std::vector<std::uint32_t> &atom_pool = rings_.pool_;
  atom_pool.reserve(2 * n);
  std::vector<std::uint64_t> &bit_pool = ring_scratch_.bit_pool;
  // Per atom reached from the root, the root's neighbour its tree path
  // passes through: two tree paths share an atom besides the root exactly
  // when they leave it through the same neighbour.
  auto *const branch = reinterpret_cast<std::uint32_t *>(carve(n));
  auto *const bfs = reinterpret_cast<std::uint32_t *>(carve(n));
  std::size_t reached = 0;
  std::fill(dist, dist + n, -1);
  std::vector<std::uint64_t> &basis = ring_scratch_.basis;  // reduced rows, words each, one pivot bit each
  std::vector<std::size_t> &pivots = ring_scratch_.pivots;
  std::vector<std::uint64_t> &v = ring_scratch_.v;
  std::vector<std::uint32_t> &by_bits = ring_scratch_.by_bits, &group = ring_scratch_.group;
  std::vector<char> &copy = ring_scratch_.copy;
  for (std::size_t c = 0; c < parts; ++c) {
    const std::size_t part_edge_count = edge_start[c + 1] - edge_start[c];
    const std::size_t rank = part_edge_count + 1 - (atom_start[c + 1] - atom_start[c]);
    const std::size_t words = (part_edge_count + 63) / 64;
    candidates.clear();
    bit_pool.clear();
    if (rank > 1) candidates.reserve(edge_count), bit_pool.reserve(edge_count);
    // A part that is one ring is found whole from each of its atoms: the
    // first, from its lowest atom, is the copy kept.
    const auto roots_end = rank == 1 ? atom_start[c] + 1 : atom_start[c + 1];
    for (auto ri = atom_start[c]; ri < roots_end; ++ri) {
      const auto r = part_atoms[ri];
      dist[r] = 0;
      parent_edge[r] = -1;
      bfs[0] = r;
      reached = 1;
      for (std::size_t k = 0; k < reached; ++k) {
        const auto a = bfs[k];
        const auto *bid = m.bond_ids_begin(a);
        for (auto it = m.neighbours_begin(a), end = m.neighbours_end(a); it != end; ++it, ++bid) {
          // Within the part, every bond is a core bond and no bridge.
          if (*it >= n || part[*it] != static_cast<std::int32_t>(c) || dist[*it] >= 0) continue;
          dist[*it] = dist[a] + 1;
          parent_edge[*it] = edge_of_bond[*bid];
          parent_atom[*it] = static_cast<int>(a);
          branch[*it] = a == r ? *it : branch[a];
          bfs[reached++] = *it;
        }
      }
      for (auto ei = edge_start[c]; ei < edge_start[c + 1]; ++ei) {
        const auto e = part_edges[ei];
        const auto x = m.bond(edges[e]).begin, y = m.bond(edges[e]).end;
        if (parent_edge[x] == static_cast<int>(e) || parent_edge[y] == static_cast<int>(e)) continue;
        // The tree paths x..r and y..r must share no atom but r.
        if (x != r && y != r && branch[x] == branch[y]) continue;
        // Atoms r ... x, then y ... (before r).
        const auto off = static_cast<std::uint32_t>(atom_pool.size());
        const auto dx = static_cast<std::uint32_t>(dist[x]);
        const auto size = dx + 1 + static_cast<std::uint32_t>(dist[y]);
        atom_pool.resize(off + size);
        std::uint32_t w = x;
        for (std::uint32_t i = dx;; --i) {
          atom_pool[off + i] = w;
          if (i == 0) break;
          w = static_cast<std::uint32_t>(parent_atom[w]);
        }
        std::uint32_t at = off + dx + 1;
        for (w = y; w != r; w = static_cast<std::uint32_t>(parent_atom[w])) atom_pool[at++] = w;
        // A part that is one ring (a simple cycle) has one edge off the
        // tree, so this is its only candidate, kept without its bonds.
        if (rank == 1) {
          kept.push_back(RingList::Span{off, size});
          continue;
        }
        // Its bonds: e and the tree bonds of both paths.
        const auto bits_off = static_cast<std::uint32_t>(bit_pool.size());
        bit_pool.resize(bits_off + words, 0);
        auto set_bit = [&](std::size_t edge) {
          const auto bit = bit_of_edge[edge];
          bit_pool[bits_off + bit / 64] |= std::uint64_t{1} << (bit % 64);
        };
        set_bit(e);
        for (w = x; w != r; w = static_cast<std::uint32_t>(parent_atom[w])) set_bit(static_cast<std::size_t>(parent_edge[w]));
        for (w = y; w != r; w = static_cast<std::uint32_t>(parent_atom[w])) set_bit(static_cast<std::size_t>(parent_edge[w]));
        candidates.push_back(Cycle{off, size, bits_off});
      }
      for (std::size_t k = 0; k < reached; ++k) dist[bfs[k]] = -1;
    }
    if (rank == 1) continue;
    // Smallest first, else as found: the atom pool grows as they are found.
    std::sort(candidates.begin(), candidates.end(), [](const Cycle &a, const Cycle &b) {
      return a.size != b.size ? a.size < b.size : a.atoms_off < b.atoms_off;
    });
    auto bits_of = [&](const Cycle &cy) { return bit_pool.data() + cy.bits_off; };
    basis.clear();
    pivots.clear();
    v.assign(words, 0);
    auto reduce = [&](const std::uint64_t *from) {
      std::copy_n(from, words, v.begin());
      for (std::size_t i = 0; i < pivots.size(); ++i)
        if (v[pivots[i] / 64] >> (pivots[i] % 64) & 1)
          for (std::size_t w = 0; w < words; ++w) v[w] ^= basis[i * words + w];
    };
    auto first_bit = [&]() {
      for (std::size_t w = 0; w < words; ++w)
        if (v[w]) {
          std::size_t bit = 0;
          while (!(v[w] >> bit & 1)) ++bit;
          return w * 64 + bit;
        }
      return words * 64;
    };
    auto add = [&](const std::uint64_t *from) {
      reduce(from);
      const auto pivot = first_bit();
      if (pivot == words * 64) return;
      for (std::size_t i = 0; i < pivots.size(); ++i)
        if (basis[i * words + pivot / 64] >> (pivot % 64) & 1)
          for (std::size_t w = 0; w < words; ++w) basis[i * words + w] ^= v[w];
      basis.insert(basis.end(), v.begin(), v.end());
      pivots.push_back(pivot);
    };
    // A ring is kept when it is not a sum of strictly smaller rings (a
    // relevant cycle). Unlike a plain SSSR this keeps every one of equally
    // small alternatives (both six-rings of pinane, all four of adamantane),
    // as RDKit's symmetrized SSSR does, so R<n> does not depend on atom
    // order. A ring found again (same bonds) counts once, as first found;
    // copies have the same size, so only candidates of one size need
    // comparing.
    std::size_t i = 0;
    while (i < candidates.size() && pivots.size() < rank) {
      std::size_t j = i;
      while (j < candidates.size() && candidates[j].size == candidates[i].size) ++j;
      by_bits.resize(j - i);
      std::iota(by_bits.begin(), by_bits.end(), static_cast<std::uint32_t>(i));
      std::sort(by_bits.begin(), by_bits.end(), [&](std::uint32_t a, std::uint32_t b) {
        const int cmp = std::memcmp(bits_of(candidates[a]), bits_of(candidates[b]), words * sizeof(std::uint64_t));
        return cmp != 0 ? cmp < 0 : a < b;
      });
      copy.assign(j - i, 0);
      for (std::size_t q = 1; q < by_bits.size(); ++q)
        if (std::equal(bits_of(candidates[by_bits[q]]), bits_of(candidates[by_bits[q]]) + words,
                       bits_of(candidates[by_bits[q - 1]])))
          copy[by_bits[q] - i] = 1;
      group.clear();
      for (std::size_t k = i; k < j; ++k) {
        if (copy[k - i]) continue;
        reduce(bits_of(candidates[k]));
        if (first_bit() == words * 64) continue;
        kept.push_back(RingList::Span{candidates[k].atoms_off, candidates[k].size});
        group.push_back(static_cast<std::uint32_t>(k));
      }
      for (auto k : group) add(bits_of(candidates[k]));
      i = j;
    }
  }
  // The order of one search over the whole molecule: smallest first, then
  // as found there, from roots in ascending order and, per root, edges in
  // ascending order. The parts' edge sets are disjoint, so a part's rings
  // and the sums that rule a ring out are the same either way.
  std::sort(kept.begin(), kept.end(), [&](const RingList::Span &a, const RingList::Span &b) {
    const auto root_a = atom_pool[a.offset], root_b = atom_pool[b.offset];
    return a.size != b.size ? a.size < b.size : root_a != root_b ? root_a < root_b : a.offset < b.offset;
  });
  // The kept rings stay where they were found, in the atom pool.
  for (const auto ring : rings_) {
    const int size = static_cast<int>(ring.size());
    for (std::size_t i = 0; i < ring.size(); ++i) {
      AtomRecord &r = atoms_[ring[i]];
      ++r.ring_count;
      if (r.smallest_ring == 0 || size < r.smallest_ring) r.smallest_ring = static_cast<std::uint8_t>(size);
      ++bond_rings_[static_cast<std::size_t>(m.bond_between(ring[i], ring[(i + 1) % ring.size()]))];
    }
  }
}

// Does every pattern neighbour of atom 0 find a candidate among the heavy
// neighbours of `atom` (SmartsImpl::root_neighbours)? Each is tested on its
// own, so two pattern neighbours may name the same atom: a necessary
// condition only, which the search then decides.
bool root_neighbours_possible(const SmartsImpl &p, const SmartsTarget &t, std::size_t atom,
                              const std::vector<bool> &excluded) {
  const Molecule &m = t.molecule();
  // Hydrogens come last in the sorted neighbour list (molecule.hpp), and
  // patterns never place an atom on one.
  const std::size_t degree = m.degree(atom), heavy_atoms = m.heavy_atom_count();
  const auto *nbs = m.neighbours_begin(atom);
  const auto *bids = m.bond_ids_begin(atom);
  for (const auto &nb : p.root_neighbours) {
    const AtomFilter &f = p.filters[nb.first];
    const PatternBond &pb = p.bonds[nb.second];
    bool found = false;
    for (std::size_t i = 0; i < degree && nbs[i] < heavy_atoms && !found; ++i)
      found = passes(f, t, nbs[i]) && !(nbs[i] < excluded.size() && excluded[nbs[i]]) && bond_ok(p, pb, t, bids[i]);
    if (!found) return false;
  }
  return true;
}

// match_at() after its inline test of the root's packed demands.
std::size_t match_at_unscreened(const SmartsPattern &p, const SmartsTarget &t, std::size_t atom,
                                const std::vector<bool> &excluded) {
  if (p.empty() || atom >= t.molecule().atom_count()) return 0;
  // Most table rows fail on the anchor atom itself or its neighbours: test
  // them before setting up a search.
  const auto &impl = p.impl();
  const AtomFilter &root = impl.filters[0];
  // The molecule-wide element count test is cheaper than the neighbour
  // scan and fails for most table rows that pass the root atom (rows for
  // elements the molecule lacks), so it comes first.
  const bool several = impl.atom_expr.size() > 1;
  if (t.facts(atom).atomic_number == 1 || (atom < excluded.size() && excluded[atom]) || !passes(root, t, atom) ||
      (several && !feasible(impl, t)) || !root_neighbours_possible(impl, t, atom, excluded))
    return 0;
  auto root_holds = [&] { return root.exact || eval(impl, impl.atom_expr[0], t, atom, -1); };
  // The root's expression depends on the root atom alone, not on how the
  // rest maps, so it may be tested before or after the search. A recursive
  // part in it is a search of its own, while the rest of a row mostly
  // fails at the first neighbour: such a root is tested last.
  if (!root.costly && !root_holds()) return 0;
  if (several && !Search(impl, t, 0, static_cast<std::int64_t>(atom), true, nullptr, excluded, nullptr, true).run())
    return 0;
  if (root.costly && !root_holds()) return 0;
  return p.atom_count();
}

// Whether pattern atom q may sit on molecule atom a, pinned there: the test
// a search would make first, without setting one up (a pinned root fails on
// its own atom in most calls).
bool pinned_atom_holds(const SmartsImpl &impl, const SmartsTarget &t, std::uint32_t q, std::size_t a,
                       const std::vector<bool> &excluded) {
  return a < t.molecule().atom_count() && t.facts(a).atomic_number != 1 && !(a < excluded.size() && excluded[a]) &&
         passes(impl.filters[q], t, a) && (impl.filters[q].exact || eval(impl, impl.atom_expr[q], t, a, -1));
}

bool for_each_match(const SmartsPattern &p, const SmartsTarget &t, const std::vector<std::int64_t> &fixed,
                    const std::vector<bool> &excluded,
                    const std::function<bool(const std::vector<std::uint32_t> &)> &visit) {
  if (p.empty()) return false;
  const auto &impl = p.impl();
  std::uint32_t root = 0;
  for (std::size_t i = 0; i < fixed.size() && i < impl.atom_expr.size(); ++i)
    if (fixed[i] >= 0) {
      root = static_cast<std::uint32_t>(i);
      break;
    }
  const std::int64_t root_atom = root < fixed.size() ? fixed[root] : -1;
  bool root_checked = false;
  if (root_atom >= 0) {
    if (!pinned_atom_holds(impl, t, root, static_cast<std::size_t>(root_atom), excluded)) return false;
    root_checked = true;
  }
  if (!feasible(impl, t)) return false;
  return Search(impl, t, root, root_atom, root_checked, &fixed, excluded, &visit).run();
}

bool first_match_at(const SmartsPattern &p, const SmartsTarget &t, std::size_t atom, const std::vector<bool> &excluded,
                    std::vector<std::uint32_t> &out) {
  out.clear();
  if (p.empty()) return false;
  const auto &impl = p.impl();
  // for_each_match() with pattern atom 0 fixed on `atom`, stopped at its
  // first mapping: the same tests, the same search (pinning the root alone
  // constrains nothing further), with the mapping read off the search.
  if (!pinned_atom_holds(impl, t, 0, atom, excluded) || !feasible(impl, t)) return false;
  Search search(impl, t, 0, static_cast<std::int64_t>(atom), true, nullptr, excluded, nullptr);
  if (!search.run()) return false;
  out.assign(search.mapping(), search.mapping() + impl.atom_expr.size());
  return true;
}

std::vector<std::vector<std::uint32_t>> all_matches(const SmartsPattern &p, const SmartsTarget &t) {
  std::vector<std::vector<std::uint32_t>> out;
  if (p.empty()) return out;
  const auto &impl = p.impl();
  if (!feasible(impl, t) || !rings_feasible(impl, t)) return out;
  // Every root finds every mapping; the one with the rarest element tries
  // the fewest starting atoms, and of those the one with the most pattern
  // neighbours turns most of them down at once (too few heavy neighbours).
  std::uint32_t root = 0;
  std::size_t fewest = t.molecule().heavy_atom_count() + 1;
  for (std::uint32_t q = 0; q < impl.filters.size(); ++q) {
    const auto &f = impl.filters[q];
    if (f.never) return out;
    std::size_t candidates = t.molecule().heavy_atom_count();
    if (f.atomic_number >= 0) {
      const auto z = static_cast<unsigned>(f.atomic_number);
      candidates = f.aromatic < 0 ? t.element_count(z, false) + t.element_count(z, true)
                                  : t.element_count(z, f.aromatic != 0);
    }
    if (candidates < fewest || (candidates == fewest && impl.adjacency[q].size() > impl.adjacency[root].size()))
      fewest = candidates, root = q;
  }
  const Visit keep = [&](const std::vector<std::uint32_t> &map) {
    out.push_back(map);
    return false;
  };
  const std::vector<bool> none;
  Search(impl, t, root, -1, false, nullptr, none, &keep, true).run();
  return out;
}

}  // namespace nmrpred::detail
